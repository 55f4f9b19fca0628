//! The adjustable-rate terms of a loan request (the `adjustable` object in
//! JSON; in a query, compact `KEY:VALUE` pairs or `adjustable.NAME`
//! parameters), the rate path, and the full payment's escrow and mortgage
//! insurance.

use rust_decimal::Decimal;
use serde_json::{json, Value};

use super::fields::{money_in, Fields, Raw, Source};
use super::json::Json;
use super::problem::FieldError;
use super::table::{choice, Choice, Field, Kind, Table, MAX_LIST_ITEMS};
use crate::engine::adjustable::{AdjustableRate, MortgageInsurance, RatePath, RateRounding};
use crate::engine::loan::MAX_PAYMENTS;
use crate::engine::money::Currency;
use crate::engine::plan::PlanOptions;

/// The rate paths, in the order messages list them.
pub const RATE_PATHS: &[Choice] = &[
    choice(
        "composite",
        "Composite: the initial rate, then index + margin today",
    ),
    choice("highest", "Highest: every change takes its full cap up"),
    choice("lowest", "Lowest: every change takes its full cap down"),
    choice("index_values", "The index values given"),
];

const ROUNDINGS: &[Choice] = &[
    choice("none", "Not rounded"),
    choice("nearest_eighth", "To the nearest 1/8 point"),
    choice("up_eighth", "Up to the next 1/8 point"),
    choice("down_eighth", "Down to the 1/8 point below"),
];

/// The adjustable-rate terms' fields, in the order the guide lists them.
pub const ADJUSTABLE_FIELDS: &[Field] = &[
    Field::new("index_percent", Kind::Percent, "The index value at consummation, in percent.")
        .required()
        .example("4.25")
        .form("Index today (%)", "The index value at closing.", "4.25"),
    Field::new("margin_percent", Kind::Percent, "The margin added to the index, in percent points.")
        .required()
        .example("2.75")
        .form("Margin (points)", "Added to the index at each change.", "2.75"),
    Field::new("first_change_payment", Kind::Whole { min: 2, max: Some(MAX_PAYMENTS) }, "The number of the first payment at a new rate (61: after five years of monthly payments).")
        .required()
        .example("61")
        .form("First payment at a new rate", "61 is the first payment of year 6.", "61"),
    Field::new("change_every", Kind::Whole { min: 1, max: Some(MAX_PAYMENTS) }, "The number of payments between rate changes (12: yearly).")
        .required()
        .example("12")
        .form("Payments between changes", "12 for a change each year.", "12"),
    Field::new("first_change_cap_percent", Kind::Percent, "The most the rate may move at the first change, in points (default: the periodic cap).")
        .example("2")
        .form("Cap at the first change (points)", "Leave blank to use the cap on later changes.", "2"),
    Field::new("periodic_cap_percent", Kind::Percent, "The most the rate may move at each later change, in points (default: no limit).")
        .example("2")
        .form("Cap on later changes (points)", "", "2"),
    Field::new("lifetime_max_percent", Kind::Percent, "The highest rate the note allows, in percent (required: §1026.30).")
        .required()
        .example("11")
        .form("Highest rate allowed (%)", "The note's lifetime maximum.", "11"),
    Field::new("floor_percent", Kind::Percent, "The lowest rate, in percent (default: the margin).")
        .example("2.75")
        .form("Lowest rate (%)", "Leave blank for the margin.", ""),
    Field::new("rounding", Kind::Choice { choices: ROUNDINGS, default: "Not rounded (default)" }, "How index + margin is rounded before the caps: none (default), nearest_eighth, up_eighth or down_eighth.")
        .example("nearest_eighth")
        .form("Index + margin rounded", "", ""),
    Field::new("payment_cap_percent", Kind::Percent, "The most the payment may rise at a change, in percent of the payment before it; unpaid interest is added to the balance, and the payment is recast every 60 payments.")
        .example("7.5")
        .form("Payment cap (%)", "Optional: limits each payment rise; unpaid interest is added to the balance.", ""),
];

/// The `adjustable` object of a JSON request.
pub const ADJUSTABLE: Table = Table {
    schema: "AdjustableRate",
    doc: "Adjustable-rate terms. The loan's annual_rate_percent is the initial rate. At each change the rate moves toward its target (index + margin, rounded; the maximum on the highest path; the floor on the lowest) by at most the change's cap, within the floor and the maximum, and the balance is re-amortised over the remaining term.",
    groups: &[ADJUSTABLE_FIELDS],
    except: &[],
    all_optional: false,
};

/// The JSON Schema of `index_values`.
pub fn index_values_schema() -> Value {
    json!({"type": "array", "maxItems": MAX_LIST_ITEMS,
           "items": {"type": ["string", "number"], "pattern": "^-?[0-9]+(\\.[0-9]+)?$"},
           "examples": [["4.8", "5.6", "6.1"]]})
}

/// The JSON name of a compact query key.
fn full_name(key: &str) -> Option<&'static str> {
    let short = match key {
        "index" => "index_percent",
        "margin" => "margin_percent",
        "first_change" => "first_change_payment",
        "every" => "change_every",
        "first_cap" => "first_change_cap_percent",
        "cap" => "periodic_cap_percent",
        "max" => "lifetime_max_percent",
        "floor" => "floor_percent",
        "payment_cap" => "payment_cap_percent",
        _ => "",
    };
    if !short.is_empty() {
        return Some(short);
    }
    ADJUSTABLE_FIELDS.iter().map(|f| f.name).find(|n| *n == key)
}

/// Reads `adjustable` into plan options; errors point at `adjustable.NAME` in
/// a query and `/adjustable/NAME` in JSON.
fn read_terms(f: &mut Fields<'_>) -> Option<AdjustableRate> {
    let base = f.pointer("");
    let mut errors = Vec::new();
    let read = |mut g: Fields<'_>| -> (Option<AdjustableRate>, Vec<FieldError>) {
        let index = g.decimal("index_percent");
        let margin = g.decimal("margin_percent");
        let first = g.count("first_change_payment", MAX_PAYMENTS);
        let every = g.count("change_every", MAX_PAYMENTS);
        let first_cap = g.decimal("first_change_cap_percent");
        let cap = g.decimal("periodic_cap_percent");
        let max = g.decimal("lifetime_max_percent");
        let floor = g.decimal("floor_percent");
        let rounding = g.pick(ADJUSTABLE_FIELDS, "rounding", RateRounding::parse);
        let payment_cap = g.decimal("payment_cap_percent");
        for (name, given) in [
            ("index_percent", index.is_some()),
            ("margin_percent", margin.is_some()),
            ("first_change_payment", first.is_some()),
            ("change_every", every.is_some()),
            ("lifetime_max_percent", max.is_some()),
        ] {
            let bad = g.errors.iter().any(|e| e.pointer.ends_with(name));
            if !given && !bad {
                g.error(name, "is required for an adjustable-rate loan");
            }
        }
        let terms = match (index, margin, first, every, max) {
            (Some(index), Some(margin), Some(first), Some(every), Some(max)) => {
                let a = AdjustableRate {
                    index_percent: index,
                    margin_percent: margin,
                    first_change_payment: first,
                    change_every: every,
                    first_change_cap_percent: first_cap,
                    periodic_cap_percent: cap,
                    lifetime_max_percent: max,
                    floor_percent: floor,
                    rounding: rounding.unwrap_or_default(),
                    payment_cap_percent: payment_cap,
                };
                let problems = a.problems();
                let ok = problems.is_empty();
                for e in problems {
                    g.in_range(Err(e));
                }
                ok.then_some(a)
            }
            _ => None,
        };
        let errors = match g.finish() {
            Ok(()) => vec![],
            Err(e) => e,
        };
        (terms.filter(|_| errors.is_empty()), errors)
    };
    let (terms, local) = if f.is_query() {
        let mut pairs = f.prefixed("adjustable");
        if let Some(compact) = f.text("adjustable") {
            for item in compact.split(',').map(str::trim).filter(|i| !i.is_empty()) {
                match item.split_once(':').map(|(k, v)| (full_name(k.trim()), v.trim())) {
                    Some((Some(name), value)) => pairs.push((name.to_string(), value.to_string())),
                    _ => errors.push(FieldError::new(
                        "adjustable".into(),
                        format!(
                            "write the terms as KEY:VALUE pairs separated by commas (index:4.25,margin:2.75,first_change:61,every:12,cap:2,max:11), not \"{}\"",
                            item.chars().take(40).collect::<String>()
                        ),
                    )),
                }
            }
        }
        if pairs.is_empty() {
            f.errors.extend(errors);
            return None;
        }
        let (terms, local) = read(Fields::new(Source::Query(&pairs)));
        let local: Vec<FieldError> = local
            .into_iter()
            .map(|mut e| {
                e.pointer = format!("adjustable.{}", e.pointer);
                e
            })
            .collect();
        (terms, local)
    } else {
        match f.raw("adjustable") {
            None | Some(Raw::Json(Json::Null)) => return None,
            Some(Raw::Json(Json::Object(m))) => {
                let pointer = format!("{base}adjustable");
                read(Fields::new(Source::Json {
                    members: m,
                    pointer: &pointer,
                }))
            }
            Some(Raw::Json(other)) => {
                f.error(
                    "adjustable",
                    format!("must be an object, not {}", other.kind()),
                );
                return None;
            }
            Some(Raw::Text(_)) => {
                f.error("adjustable", "must be an object");
                return None;
            }
        }
    };
    f.errors.extend(errors);
    f.errors.extend(local);
    terms
}

/// The index values: a query list, or a JSON array of numbers or strings.
fn read_index_values(f: &mut Fields<'_>) -> Option<Vec<Decimal>> {
    let base = f.pointer("");
    let texts: Vec<(String, String)> = if f.is_query() {
        let items = f.query_list("index_values")?;
        items
            .into_iter()
            .map(|v| ("index_values".to_string(), v.to_string()))
            .collect()
    } else {
        match f.raw("index_values")? {
            Raw::Json(Json::Array(items)) => items
                .iter()
                .enumerate()
                .map(|(k, v)| {
                    let text = match v {
                        Json::Number(n) => n.as_str().to_string(),
                        Json::String(s) => s.clone(),
                        other => format!("\u{0}{}", other.kind()),
                    };
                    (format!("{base}index_values/{k}"), text)
                })
                .collect(),
            Raw::Json(other) => {
                f.error(
                    "index_values",
                    format!("must be an array, not {}", other.kind()),
                );
                return None;
            }
            Raw::Text(_) => {
                f.error("index_values", "must be an array");
                return None;
            }
        }
    };
    if texts.len() > MAX_LIST_ITEMS {
        f.error(
            "index_values",
            format!(
                "may hold at most {MAX_LIST_ITEMS} values, not {}",
                texts.len()
            ),
        );
        return None;
    }
    let mut values = Vec::with_capacity(texts.len());
    let mut ok = true;
    for (pointer, text) in texts {
        match text.strip_prefix('\u{0}') {
            Some(kind) => {
                f.errors.push(FieldError::new(
                    pointer,
                    format!("must be a number, not {kind}"),
                ));
                ok = false;
            }
            None => match super::fields::parse_decimal(&text, f.lenient) {
                Ok(v) => values.push(v),
                Err(m) => {
                    f.errors.push(FieldError::new(
                        pointer,
                        format!(
                            "\"{}\" {m}: give each index in percent, e.g. 4.8",
                            text.chars().take(40).collect::<String>()
                        ),
                    ));
                    ok = false;
                }
            },
        }
    }
    ok.then_some(values)
}

/// Reads the adjustable terms, the rate path and the full payment's escrow
/// and mortgage insurance into `o`.
pub fn read_adjustable(f: &mut Fields<'_>, o: &mut PlanOptions, currency: Currency) {
    o.escrow_monthly = money_in(f, "escrow_monthly", currency);
    let insurance = money_in(f, "mortgage_insurance_monthly", currency);
    let insurance_payments = f.count("mortgage_insurance_payments", MAX_PAYMENTS);
    match (insurance, insurance_payments) {
        (Some(monthly), payments) => {
            o.mortgage_insurance = Some(MortgageInsurance { monthly, payments });
        }
        (None, Some(_)) => f.error(
            "mortgage_insurance_payments",
            "needs mortgage_insurance_monthly, the premium paid with each payment",
        ),
        (None, None) => {}
    }
    if insurance_payments == Some(0) {
        f.error(
            "mortgage_insurance_payments",
            "must be a number of payments from 1, e.g. 84",
        );
    }
    for (name, v) in [
        ("escrow_monthly", o.escrow_monthly),
        ("mortgage_insurance_monthly", insurance),
    ] {
        if v.is_some_and(|v| v.is_sign_negative() && !v.is_zero()) {
            f.error(name, "cannot be below zero, e.g. 410");
        }
    }
    let names: Vec<&str> = RATE_PATHS.iter().map(|c| c.value).collect();
    let path = f.choice(
        "rate_path",
        |s| match s {
            "composite" => Some(RatePath::Composite),
            "highest" => Some(RatePath::Highest),
            "lowest" => Some(RatePath::Lowest),
            "index_values" => Some(RatePath::IndexValues(Vec::new())),
            _ => None,
        },
        &names,
    );
    let given_path = f.has("rate_path");
    let values = read_index_values(f);
    o.adjustable = read_terms(f);
    let adjustable_given = f.has("adjustable")
        || o.adjustable.is_some()
        || f.errors.iter().any(|e| e.pointer.contains("adjustable"));
    o.rate_path = match (path, values) {
        (Some(RatePath::IndexValues(_)) | None, Some(v)) => RatePath::IndexValues(v),
        (Some(RatePath::IndexValues(_)), None) => {
            if !f.errors.iter().any(|e| e.pointer.contains("index_values")) {
                f.error(
                    "index_values",
                    "is required when rate_path is index_values: the index at each change, e.g. 4.8,5.6,6.1",
                );
            }
            RatePath::Composite
        }
        (Some(p), Some(_)) => {
            f.error(
                "index_values",
                format!("applies to rate_path index_values, not {}", p.name()),
            );
            p
        }
        (Some(p), None) => p,
        (None, None) => RatePath::Composite,
    };
    if (given_path || f.has("index_values")) && !adjustable_given {
        f.error(
            "rate_path",
            "applies to an adjustable-rate loan: give its terms in adjustable",
        );
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn read(q: &str) -> (PlanOptions, Vec<FieldError>) {
        let pairs: Vec<(String, String)> =
            form_urlencoded::parse(q.as_bytes()).into_owned().collect();
        let mut f = Fields::new(Source::Query(&pairs));
        let mut o = PlanOptions::default();
        read_adjustable(&mut f, &mut o, Currency::USD);
        let errors = match f.finish() {
            Ok(()) => vec![],
            Err(e) => e,
        };
        (o, errors)
    }

    #[test]
    fn the_compact_and_the_prefixed_query_read_alike() {
        let (a, e) = read("adjustable=index:4.25,margin:2.75,first_change:61,every:12,cap:2,max:11,rounding:nearest_eighth");
        assert!(e.is_empty(), "{e:?}");
        let (b, e) = read("adjustable.index_percent=4.25&adjustable.margin_percent=2.75&adjustable.first_change_payment=61&adjustable.change_every=12&adjustable.periodic_cap_percent=2&adjustable.lifetime_max_percent=11&adjustable.rounding=nearest_eighth");
        assert!(e.is_empty(), "{e:?}");
        assert_eq!(a.adjustable, b.adjustable);
        assert_eq!(a.adjustable.unwrap().rounding, RateRounding::NearestEighth);
    }

    #[test]
    fn every_bad_term_is_named_at_once() {
        let (_, e) = read("adjustable=index:x,margin:2.75,every:12,cap:-1,max:11,colour:red");
        let pointers: Vec<&str> = e.iter().map(|e| e.pointer.as_str()).collect();
        assert!(pointers.contains(&"adjustable"), "{pointers:?}"); // the unknown key
        assert!(
            pointers.contains(&"adjustable.index_percent"),
            "{pointers:?}"
        );
        assert!(
            pointers.contains(&"adjustable.first_change_payment"),
            "{pointers:?}"
        );
    }

    #[test]
    fn a_path_without_adjustable_terms_is_refused() {
        let (_, e) = read("rate_path=highest");
        assert_eq!(e[0].pointer, "rate_path");
        let (o, e) = read(
            "adjustable=index:4,margin:2,first_change:13,every:12,max:12&index_values=4.8,5.6",
        );
        assert!(e.is_empty(), "{e:?}");
        assert_eq!(o.rate_path.name(), "index_values");
    }
}
