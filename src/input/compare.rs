//! The comparison request: a base loan and variants over it (JSON), or one field
//! listing several values, one plan each (query string).

use crate::input::fields::{Fields, Source};
use crate::input::json::Json;
use crate::input::loan::{schedule_request_from, ScheduleRequest};
use crate::input::problem::{ApiError, FieldError};

use super::loan::{LOAN, PLAN};
use super::table::{Field, Kind, Table};

/// The JSON comparison: a base loan and up to three variants.
pub const COMPARE: Table = Table {
    schema: "CompareRequest",
    doc: "A base loan and up to three variants (four plans at most).",
    groups: &[&[
        Field::new("base", Kind::Object(&super::loan::SCHEDULE), "").required(),
        Field::new(
            "variants",
            Kind::List {
                item: &VARIANT,
                min: 0,
                max: MAX_PLANS - 1,
            },
            "",
        ),
    ]],
    except: &[],
    all_optional: false,
};

/// A plan of a comparison: the base with these fields put over it.
pub const VARIANT: Table = Table {
    schema: "CompareVariant",
    doc: "A plan of a comparison: the base with these fields put over it (any schedule field, and label).",
    groups: &[LOAN, PLAN],
    except: &[],
    all_optional: true,
};

/// The most plans a comparison may hold.
pub const MAX_PLANS: usize = 4;

/// Reads a JSON comparison: each plan's request with the pointer prefix of its fields.
///
/// # Errors
/// The problem to answer, pointing into `base` or `variants/N`.
pub fn read_json(body: &Json) -> Result<Vec<(ScheduleRequest, String)>, ApiError> {
    let Json::Object(members) = body else {
        unreachable!("checked by the extractor")
    };
    let mut errors = Vec::new();
    for (k, _) in members {
        if k != "base" && k != "variants" {
            errors.push(FieldError::unknown(format!(
                "/{}",
                crate::input::json::escape_pointer(k)
            )));
        }
    }
    let base = match body.get("base") {
        Some(Json::Object(m)) => m.clone(),
        Some(other) => {
            errors.push(FieldError::new(
                "/base".into(),
                format!("must be an object, not {}", other.kind()),
            ));
            vec![]
        }
        None => {
            errors.push(FieldError::new("/base".into(), "is required".into()));
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
                    errors.push(FieldError::new(
                        format!("/variants/{i}"),
                        format!("must be an object, not {}", other.kind()),
                    ));
                    None
                }
            })
            .collect(),
        Some(_) => {
            errors.push(FieldError::new(
                "/variants".into(),
                format!("must be an array of at most {} variants", MAX_PLANS - 1),
            ));
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
    Ok(requests)
}

/// Reads a query comparison: one plan per value of the listed field.
///
/// # Errors
/// The problem to answer.
pub fn read_query(pairs: &[(String, String)]) -> Result<Vec<(ScheduleRequest, String)>, ApiError> {
    read_query_with(pairs, false)
}

/// As [`read_query`]; with `lenient`, each plan's fields are read as a person
/// types them ("6.5%", "$1,250"), as the pages read them.
///
/// # Errors
/// The problem to answer.
pub fn read_query_with(
    pairs: &[(String, String)],
    lenient: bool,
) -> Result<Vec<(ScheduleRequest, String)>, ApiError> {
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
    // Adjustable terms are compared by repeating `adjustable` (its compact
    // form has commas of its own), `fixed` standing for a fixed-rate plan;
    // the initial rates may then be listed beside them, one a plan.
    let adjustable: Vec<String> = pairs
        .iter()
        .filter(|(k, _)| k == "adjustable")
        .map(|(_, v)| v.trim().to_string())
        .collect();
    let paired_rates = adjustable.len() > 1;
    for name in names {
        if matches!(
            name,
            "extra_payments" | "rate_changes" | "index_values" | "adjustable"
        ) || name.starts_with("adjustable.")
        {
            continue; // lists of their own
        }
        let values: Vec<String> = pairs
            .iter()
            .filter(|(k, _)| k == name)
            .flat_map(|(_, v)| v.split(','))
            .map(|v| v.trim().to_string())
            .collect();
        if paired_rates && name == "annual_rate_percent" && values.len() > 1 {
            if values.len() != adjustable.len() {
                errors.push(FieldError::new(
                    name.into(),
                    format!(
                        "lists {} rates for {} plans given by adjustable: give one rate a plan, or one for all",
                        values.len(),
                        adjustable.len()
                    ),
                ));
            }
            continue;
        }
        if values.len() > 1 && paired_rates {
            errors.push(FieldError::new(
                name.into(),
                "only one field may list several values to compare (adjustable is listed; annual_rate_percent may be listed beside it)".into(),
            ));
        } else if values.len() > 1 {
            if listed.is_some() {
                errors.push(FieldError::new(
                    name.into(),
                    "only one field may list several values to compare".into(),
                ));
            } else if values.len() > MAX_PLANS {
                errors.push(FieldError::new(
                    name.into(),
                    format!("may list at most {MAX_PLANS} values"),
                ));
            } else {
                listed = Some((name.to_string(), values));
            }
        }
    }
    if !errors.is_empty() {
        return Err(ApiError::fields(errors));
    }
    if paired_rates {
        if adjustable.len() > MAX_PLANS {
            return Err(ApiError::fields(vec![FieldError::new(
                "adjustable".into(),
                format!("may be given for at most {MAX_PLANS} plans"),
            )]));
        }
        let rates: Vec<String> = pairs
            .iter()
            .filter(|(k, _)| k == "annual_rate_percent")
            .flat_map(|(_, v)| v.split(','))
            .map(|v| v.trim().to_string())
            .collect();
        let mut requests = Vec::new();
        for (k, terms) in adjustable.iter().enumerate() {
            let mut p: Vec<(String, String)> = pairs
                .iter()
                .filter(|(n, _)| n != "adjustable" && n != "annual_rate_percent")
                .cloned()
                .collect();
            let fixed = terms.is_empty() || terms == "fixed";
            if !fixed {
                p.push(("adjustable".into(), terms.clone()));
            }
            let rate = rates.get(k).or(rates.first());
            if let Some(rate) = rate {
                p.push(("annual_rate_percent".into(), rate.clone()));
            }
            let mut r = reader(&p)?;
            if r.label.is_none() {
                r.label = Some(match (fixed, rate) {
                    (true, Some(rate)) => format!("Fixed {rate} %"),
                    (true, None) => "Fixed".into(),
                    (false, Some(rate)) => format!("Adjustable from {rate} %"),
                    (false, None) => "Adjustable".into(),
                });
            }
            requests.push((r, String::new()));
        }
        return Ok(requests);
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
    Ok(requests)
}
