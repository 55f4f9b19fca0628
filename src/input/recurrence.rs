//! The recurrence request: x[k+1] = a·x[k] + f[k] with inputs from the transform table.

use crate::engine::recurrence::{Input, Recurrence};
use crate::input::fields::{Fields, Source};
use crate::input::json::Json;
use crate::input::problem::{ApiError, FieldError};
use rust_decimal::Decimal;

use super::table::{choice, Choice, Field, Kind, Table};

const KINDS: &[Choice] = &[
    choice("impulse", ""),
    choice("step", ""),
    choice("geometric", ""),
    choice("ramp", ""),
];

/// The recurrence request.
pub const RECURRENCE: Table = Table {
    schema: "RecurrenceRequest",
    doc: "x[k+1] = a·x[k] + f[k], x[0] = x0, evaluated at the chosen k.",
    groups: &[&[
        Field::new("a", Kind::Decimal, "More than 0 and at most 11.")
            .required()
            .example("1.005"),
        Field::new("x0", Kind::Decimal, "The value at k = 0 (default 0).").example("100000"),
        Field::new(
            "inputs",
            Kind::List {
                item: &INPUT,
                min: 0,
                max: MAX_ITEMS,
            },
            "",
        ),
        Field::new(
            "evaluate_at",
            Kind::Numbers {
                max: MAX_K,
                max_items: MAX_ITEMS,
            },
            "",
        ),
    ]],
    except: &[],
    all_optional: false,
};

/// The fields of one input term.
pub const INPUT_FIELDS: &[Field] = &[
    Field::new(
        "kind",
        Kind::Choice {
            choices: KINDS,
            default: "",
        },
        "The kind of the input (its z-transform from the table).",
    )
    .required(),
    Field::new("amount", Kind::Decimal, "").required(),
    Field::new(
        "ratio",
        Kind::Decimal,
        "For `geometric`: more than 0 and at most 11.",
    ),
];

/// One input term f[k]: amount·δ[k], amount·u[k], amount·ratio^k, or amount·k.
pub const INPUT: Table = Table {
    schema: "RecurrenceInput",
    doc: "One input term f[k]: amount·δ[k], amount·u[k], amount·ratio^k, or amount·k.",
    groups: &[INPUT_FIELDS],
    except: &[],
    all_optional: false,
};

/// The most inputs, and the most evaluation points, a request may have.
pub const MAX_ITEMS: usize = 16;

/// The largest k that may be evaluated.
pub const MAX_K: u32 = 6000;

fn finish_into(f: Fields<'_>, errors: &mut Vec<FieldError>) {
    if let Err(e) = f.finish() {
        errors.extend(e);
    }
}

/// Reads {a, x0, inputs: [{kind, amount, ratio?}], evaluate_at: [k, …]}.
///
/// # Errors
/// Every bad field, with its pointer.
pub fn read_recurrence(body: &Json) -> Result<(Recurrence, Vec<u32>), ApiError> {
    let Json::Object(members) = body else {
        return Err(ApiError::fields(vec![FieldError::new(
            String::new(),
            "the body must be a JSON object".into(),
        )]));
    };
    let mut errors = Vec::new();
    let mut f = Fields::new(Source::Json {
        members,
        pointer: "",
    });
    let a = f.decimal("a");
    let x0 = f.decimal("x0");
    if a.is_none() && !f.errors.iter().any(|e| e.pointer == "/a") {
        f.error("a", "is required");
    }
    if let Some(a) = a {
        if a <= Decimal::ZERO || a > Decimal::from(11) {
            f.error(
                "a",
                "must be more than 0 and at most 11 (a rate of up to 1000 % a period)",
            );
        }
    }
    let mut inputs = Vec::new();
    if let Some(raw) = f.raw("inputs") {
        match raw {
            crate::input::fields::Raw::Json(Json::Array(items)) if items.len() <= MAX_ITEMS => {
                for (index, item) in items.iter().enumerate() {
                    let pointer = format!("/inputs/{index}");
                    let Json::Object(m) = item else {
                        errors.push(FieldError::new(
                            pointer,
                            format!("must be an object, not {}", item.kind()),
                        ));
                        continue;
                    };
                    let mut g = Fields::new(Source::Json {
                        members: m,
                        pointer: &pointer,
                    });
                    let kind = g.pick(INPUT_FIELDS, "kind", |s| {
                        Some(s.to_string()).filter(|s| {
                            ["impulse", "step", "geometric", "ramp"].contains(&s.as_str())
                        })
                    });
                    let amount = g.decimal("amount");
                    if amount.is_none() && !g.errors.iter().any(|e| e.pointer.ends_with("/amount"))
                    {
                        g.error("amount", "is required");
                    }
                    let ratio = if kind.as_deref() == Some("geometric") {
                        let r = g.decimal("ratio");
                        match r {
                            Some(r) if r <= Decimal::ZERO || r > Decimal::from(11) => {
                                g.error("ratio", "must be more than 0 and at most 11");
                                None
                            }
                            None if !g.errors.iter().any(|e| e.pointer.ends_with("/ratio")) => {
                                g.error("ratio", "is required for a geometric input");
                                None
                            }
                            r => r,
                        }
                    } else {
                        None
                    };
                    if let (Some(kind), Some(amount)) = (kind, amount) {
                        match (kind.as_str(), ratio) {
                            ("impulse", _) => inputs.push(Input::Impulse { amount }),
                            ("step", _) => inputs.push(Input::Step { amount }),
                            ("ramp", _) => inputs.push(Input::Ramp { amount }),
                            ("geometric", Some(ratio)) => {
                                inputs.push(Input::Geometric { amount, ratio })
                            }
                            _ => {}
                        }
                    }
                    finish_into(g, &mut errors);
                }
            }
            crate::input::fields::Raw::Json(Json::Array(_)) => {
                f.error("inputs", format!("may hold at most {MAX_ITEMS} inputs"))
            }
            crate::input::fields::Raw::Json(other) => {
                f.error("inputs", format!("must be an array, not {}", other.kind()))
            }
            crate::input::fields::Raw::Text(_) => f.error("inputs", "must be an array"),
        }
    }
    let mut ks = Vec::new();
    if let Some(raw) = f.raw("evaluate_at") {
        match raw {
            crate::input::fields::Raw::Json(Json::Array(items)) if items.len() <= MAX_ITEMS => {
                for (index, item) in items.iter().enumerate() {
                    let ok = match item {
                        Json::Number(t) => t.parse::<u32>().ok().filter(|k| *k <= MAX_K),
                        _ => None,
                    };
                    match ok {
                        Some(k) => ks.push(k),
                        None => errors.push(FieldError::new(
                            format!("/evaluate_at/{index}"),
                            format!("must be a whole number from 0 to {MAX_K}"),
                        )),
                    }
                }
            }
            _ => f.error(
                "evaluate_at",
                format!("must be an array of at most {MAX_ITEMS} whole numbers"),
            ),
        }
    }
    let mut all = std::mem::take(&mut f.errors);
    if let Err(e) = f.finish() {
        all.extend(e);
    }
    all.extend(errors);
    if !all.is_empty() {
        return Err(ApiError::fields(all));
    }
    let (Some(a), x0) = (a, x0.unwrap_or(Decimal::ZERO)) else {
        return Err(ApiError::fields(vec![FieldError::new(
            "/a".into(),
            "is required".into(),
        )]));
    };
    Ok((Recurrence { a, x0, inputs }, ks))
}
