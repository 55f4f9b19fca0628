//! Comparing plans: a base loan and variants that change some of its fields.
//!
//! `POST /api/v1/loans/compare` takes {`base`: {schedule fields}, `variants`:
//! [{`label`, fields it changes}]} (at most four plans in all).
//! `GET /api/v1/loans/compare?principal=…&annual_rate_percent=…&term_months=180,240,360`
//! compares quickly: exactly one field may hold a comma-separated (or repeated)
//! list, and each value makes one plan; the first is the base.

use rust_decimal::Decimal;
use serde::Serialize;

use super::loans::{schedule_request_from, ScheduleRequest};
use crate::engine::schedule::{schedule_for_comparison, LoanSchedule, CAUTION};
use crate::input::fields::{Fields, Source};
use crate::input::json::Json;
use crate::input::problem::{ApiError, FieldError};

/// The most plans a comparison may hold.
pub const MAX_PLANS: usize = 4;

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct CompareRowDto {
    pub label: String,
    pub payment: String,
    pub number_of_payments: u32,
    pub total_interest: String,
    pub total_paid: String,
    pub payoff_date: Option<String>,
    /// Against the base plan (negative: this plan costs more).
    pub interest_saved: String,
    /// Against the base plan; null when this plan's payments fall at another
    /// frequency than the base's (counts of unlike payments are not compared).
    pub payments_saved: Option<i64>,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct CompareDto {
    pub currency: &'static str,
    pub rows: Vec<CompareRowDto>,
    pub notes: Vec<String>,
}

/// The computed plans of a comparison, base first, with their labels.
pub struct Comparison {
    pub plans: Vec<(String, LoanSchedule)>,
}

fn compute(requests: Vec<(ScheduleRequest, String)>) -> Result<Comparison, ApiError> {
    // Savings are differences of amounts: every plan in the base's currency.
    let base_currency = requests.first().map(|(r, _)| r.terms.currency);
    let errors: Vec<FieldError> = requests
        .iter()
        .filter(|(r, _)| Some(r.terms.currency) != base_currency)
        .map(|(r, pointer)| FieldError {
            pointer: format!("{pointer}currency"),
            message: format!(
                "must be the base plan's currency ({}), not {}: savings are compared in one currency",
                base_currency.map_or("", |c| c.code()),
                r.terms.currency.code()
            ),
        })
        .collect();
    if !errors.is_empty() {
        return Err(ApiError::fields(errors));
    }
    let work = requests
        .iter()
        .map(|(r, _)| crate::engine::plan::expected_work(&r.terms, &r.options))
        .sum();
    let _weight = crate::weight::weigh(work)?;
    let mut plans = Vec::with_capacity(requests.len());
    for (index, (r, pointer)) in requests.into_iter().enumerate() {
        let s =
            schedule_for_comparison(&r.terms, &r.options).map_err(|e| r.problem(e, &pointer))?;
        let label = r.label.unwrap_or_else(|| {
            if index == 0 {
                "base".into()
            } else {
                format!("plan {}", index + 1)
            }
        });
        plans.push((label, s));
    }
    Ok(Comparison { plans })
}

/// Reads and computes a JSON comparison.
///
/// # Errors
/// The problem to answer, pointing into `base` or `variants/N`.
pub fn from_json(body: &Json) -> Result<Comparison, ApiError> {
    let Json::Object(members) = body else {
        unreachable!("checked by the extractor")
    };
    let mut errors = Vec::new();
    for (k, _) in members {
        if k != "base" && k != "variants" {
            errors.push(FieldError {
                pointer: format!("/{}", crate::input::json::escape_pointer(k)),
                message: "is not a known field".into(),
            });
        }
    }
    let base = match body.get("base") {
        Some(Json::Object(m)) => m.clone(),
        Some(other) => {
            errors.push(FieldError {
                pointer: "/base".into(),
                message: format!("must be an object, not {}", other.kind()),
            });
            vec![]
        }
        None => {
            errors.push(FieldError {
                pointer: "/base".into(),
                message: "is required".into(),
            });
            vec![]
        }
    };
    let variants: Vec<Vec<(String, Json)>> = match body.get("variants") {
        None => vec![],
        Some(Json::Array(items)) if items.len() < MAX_PLANS => items
            .iter()
            .enumerate()
            .filter_map(|(i, v)| match v {
                Json::Object(m) => Some(m.clone()),
                other => {
                    errors.push(FieldError {
                        pointer: format!("/variants/{i}"),
                        message: format!("must be an object, not {}", other.kind()),
                    });
                    None
                }
            })
            .collect(),
        Some(_) => {
            errors.push(FieldError {
                pointer: "/variants".into(),
                message: format!("must be an array of at most {} variants", MAX_PLANS - 1),
            });
            vec![]
        }
    };
    if !errors.is_empty() {
        return Err(ApiError::fields(errors));
    }
    let mut requests = Vec::new();
    let base_request = schedule_request_from(Fields::new(Source::Json {
        members: &base,
        pointer: "/base",
    }))?;
    requests.push((base_request, "/base/".to_string()));
    for (i, v) in variants.iter().enumerate() {
        // A variant is the base with its own fields put over it; errors point into the variant
        // for its own fields and into the base for the rest.
        let mut merged: Vec<(String, Json)> = base
            .iter()
            .filter(|(k, _)| !v.iter().any(|(vk, _)| vk == k) && k != "label")
            .cloned()
            .collect();
        merged.extend(v.iter().cloned());
        // A variant giving a term or a payment replaces the base's choice of the two.
        let gives_term = v
            .iter()
            .any(|(k, _)| ["term_months", "term_payments", "payment"].contains(&k.as_str()));
        if gives_term {
            merged.retain(|(k, _)| {
                !["term_months", "term_payments", "payment"].contains(&k.as_str())
                    || v.iter().any(|(vk, _)| vk == k)
            });
        }
        let pointer = format!("/variants/{i}");
        let r = schedule_request_from(Fields::new(Source::Json {
            members: &merged,
            pointer: &pointer,
        }))?;
        requests.push((r, format!("{pointer}/")));
    }
    compute(requests)
}

/// Reads and computes a query comparison.
///
/// # Errors
/// The problem to answer.
pub fn from_query(pairs: &[(String, String)]) -> Result<Comparison, ApiError> {
    from_query_with(pairs, false)
}

/// As [`from_query`]; with `lenient`, each plan's fields are read as a person
/// types them ("6.5%", "$1,250"), as the pages read them.
///
/// # Errors
/// The problem to answer.
pub fn from_query_with(pairs: &[(String, String)], lenient: bool) -> Result<Comparison, ApiError> {
    let reader = |p: &[(String, String)]| {
        let mut f = Fields::new(Source::Query(p));
        f.lenient = lenient;
        schedule_request_from(f)
    };
    let mut listed: Option<(String, Vec<String>)> = None;
    let mut errors = Vec::new();
    let mut names: Vec<&str> = Vec::new();
    for (k, _) in pairs {
        if !names.contains(&k.as_str()) {
            names.push(k.as_str());
        }
    }
    for name in names {
        if name == "extra_payments" || name == "rate_changes" {
            continue; // lists of their own
        }
        let values: Vec<String> = pairs
            .iter()
            .filter(|(k, _)| k == name)
            .flat_map(|(_, v)| v.split(','))
            .map(|v| v.trim().to_string())
            .collect();
        if values.len() > 1 {
            if listed.is_some() {
                errors.push(FieldError {
                    pointer: name.into(),
                    message: "only one field may list several values to compare".into(),
                });
            } else if values.len() > MAX_PLANS {
                errors.push(FieldError {
                    pointer: name.into(),
                    message: format!("may list at most {MAX_PLANS} values"),
                });
            } else {
                listed = Some((name.to_string(), values));
            }
        }
    }
    if !errors.is_empty() {
        return Err(ApiError::fields(errors));
    }
    let mut requests = Vec::new();
    match listed {
        None => requests.push((reader(pairs)?, String::new())),
        Some((name, values)) => {
            for value in values {
                let mut p: Vec<(String, String)> =
                    pairs.iter().filter(|(k, _)| *k != name).cloned().collect();
                p.push((name.clone(), value.clone()));
                let mut r = reader(&p)?;
                if r.label.is_none() {
                    r.label = Some(format!("{name} {value}"));
                }
                requests.push((r, String::new()));
            }
        }
    }
    compute(requests)
}

impl CompareDto {
    pub fn from_comparison(c: &Comparison) -> Self {
        let base = &c.plans[0].1;
        let currency = base.terms.currency;
        let rows = c
            .plans
            .iter()
            .map(|(label, s)| {
                let money = |d: Decimal| s.terms.currency.format(d);
                CompareRowDto {
                    label: label.clone(),
                    payment: money(s.payment),
                    number_of_payments: s.number_of_payments,
                    total_interest: money(s.ledger.total_interest),
                    total_paid: money(s.ledger.total_paid),
                    payoff_date: s.payoff_date.map(|d| d.to_string()),
                    interest_saved: money(base.ledger.total_interest - s.ledger.total_interest),
                    payments_saved: (s.terms.payment_frequency == base.terms.payment_frequency)
                        .then(|| {
                            i64::from(base.number_of_payments) - i64::from(s.number_of_payments)
                        }),
                }
            })
            .collect();
        let mut notes = vec![
            CAUTION.to_string(),
            "Savings are measured against the first plan (the base).".to_string(),
        ];
        if c.plans
            .iter()
            .any(|(_, s)| s.terms.payment_frequency != base.terms.payment_frequency)
        {
            notes.push(format!(
                "Plans paid at another frequency than the base ({}) leave payments saved empty: their payments are not alike, so their counts are not compared; compare their interest and payoff instead.",
                base.terms.payment_frequency.name()
            ));
        }
        CompareDto {
            currency: currency.code(),
            rows,
            notes,
        }
    }
}

/// The comparison as CSV (RFC 4180).
pub fn compare_csv(c: &CompareDto) -> String {
    let mut out = String::from("label,payment,number_of_payments,total_interest,total_paid,payoff_date,interest_saved,payments_saved\r\n");
    for r in &c.rows {
        out.push_str(&format!(
            "{},{},{},{},{},{},{},{}\r\n",
            csv_field(&r.label),
            r.payment,
            r.number_of_payments,
            r.total_interest,
            r.total_paid,
            r.payoff_date.as_deref().unwrap_or(""),
            r.interest_saved,
            r.payments_saved.map_or(String::new(), |v| v.to_string())
        ));
    }
    out
}

/// A text field (a label) quoted per RFC 4180 when it holds a comma, quote or
/// line break. Text that a spreadsheet would take for a formula (a first
/// character `=`, `+`, `-`, `@`, after any leading spaces, zero-width or control
/// characters, or a first tab or carriage return) gets a leading `'`, so
/// an imported label is shown, never evaluated (the OWASP advice on CSV
/// injection). Only labels are text here; the figures are plain numbers.
pub fn csv_field(s: &str) -> String {
    // A spreadsheet may skip leading spaces (no-break, ideographic and zero-width
    // ones too) before it looks for a formula: the guard looks past them.
    let start = s.trim_start_matches(|c: char| {
        c.is_whitespace()
            || c.is_control()
            || matches!(c, '\u{200b}'..='\u{200d}' | '\u{2060}' | '\u{feff}')
    });
    let s = if start.starts_with(['=', '+', '-', '@']) || s.starts_with(['\t', '\r']) {
        std::borrow::Cow::Owned(format!("'{s}"))
    } else {
        std::borrow::Cow::Borrowed(s)
    };
    if s.contains([',', '"', '\r', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.into_owned()
    }
}

#[cfg(test)]
mod tests {
    use super::csv_field;

    #[test]
    fn a_formula_behind_spaces_or_invisible_characters_is_guarded() {
        // The OWASP advice on CSV injection (from memory): a cell a spreadsheet
        // would evaluate gets a leading quote, whatever blank comes first.
        for label in [
            "=1+1",
            " =1+1",
            "\u{a0}=1+1",
            "\u{3000}+1",
            "\u{200b}@SUM(A1)",
            "\u{feff}-2",
            "\t=1",
        ] {
            assert!(csv_field(label).starts_with('\''), "{label:?}");
        }
        for label in ["15 years", " 15 years", "extra 200"] {
            assert_eq!(csv_field(label), label);
        }
    }
}
