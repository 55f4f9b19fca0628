//! Solve any first-order recurrence with inputs from the transform table.
//!
//! This is the method laid bare: a reader can check Residue's closed forms
//! against any other tool by posting the same recurrence here.

use rust_decimal::Decimal;
use serde::Serialize;

use crate::answer::derivation::{full, DerivationDto};
use crate::engine::recurrence::{Input, Recurrence};
use crate::engine::schedule::CAUTION;
use crate::input::fields::{Fields, Source};
use crate::input::json::Json;
use crate::input::problem::{ApiError, FieldError};

/// The most inputs, and the most evaluation points, a request may have.
pub const MAX_ITEMS: usize = 16;
/// The largest k that may be evaluated.
pub const MAX_K: u32 = 6000;

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct ValueDto {
    pub k: u32,
    pub value: String,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct RecurrenceAnswer {
    pub derivation: DerivationDto,
    pub values: Vec<ValueDto>,
    pub notes: Vec<String>,
}

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
        return Err(ApiError::fields(vec![FieldError {
            pointer: String::new(),
            message: "the body must be a JSON object".into(),
        }]));
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
                        errors.push(FieldError {
                            pointer,
                            message: format!("must be an object, not {}", item.kind()),
                        });
                        continue;
                    };
                    let mut g = Fields::new(Source::Json {
                        members: m,
                        pointer: &pointer,
                    });
                    let kind = g.choice(
                        "kind",
                        |s| {
                            Some(s.to_string()).filter(|s| {
                                ["impulse", "step", "geometric", "ramp"].contains(&s.as_str())
                            })
                        },
                        &["impulse", "step", "geometric", "ramp"],
                    );
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
                        None => errors.push(FieldError {
                            pointer: format!("/evaluate_at/{index}"),
                            message: format!("must be a whole number from 0 to {MAX_K}"),
                        }),
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
        return Err(ApiError::fields(vec![FieldError {
            pointer: "/a".into(),
            message: "is required".into(),
        }]));
    };
    Ok((Recurrence { a, x0, inputs }, ks))
}

/// Solves and evaluates.
///
/// # Errors
/// An overflow, as a problem.
pub fn answer(r: &Recurrence, ks: &[u32]) -> Result<RecurrenceAnswer, ApiError> {
    let s = r
        .solve()
        .map_err(|e| ApiError::from_engine(e, "/").naming("/", &["a"]))?;
    let values = ks
        .iter()
        .map(|k| {
            s.closed_form.eval(*k).map(|v| ValueDto {
                k: *k,
                value: full(v),
            })
        })
        .collect::<Result<Vec<_>, _>>()
        .map_err(|e| {
            let mut problem = ApiError::from_engine(e, "/").naming("/", &["a", "evaluate_at"]);
            // Close poles: the modes overflow before the value does; say so.
            if let Some(note) = precision_note(&s) {
                problem.detail = format!("{}. {note}", problem.detail);
            }
            problem
        })?;
    let mut notes = vec![
        CAUTION.to_string(),
        "Figures carry 28 significant digits; powers of a keep about 26 (see the guide)."
            .to_string(),
    ];
    notes.extend(precision_note(&s));
    Ok(RecurrenceAnswer {
        derivation: DerivationDto::from_solution(&s),
        values,
        notes,
    })
}

/// The precision a solution really keeps when two of its poles are close: each
/// of the two modes is about value / separation, so the sum that gives the value
/// cancels about log10(1 / separation) of the 28 digits; poles closer than
/// [`POLE_MERGE_DISTANCE`] are merged, which answers a problem whose values
/// differ by about k·separation relatively. A value can also be reported as an
/// overflow while it fits, when the modes (value / separation) do not.
fn precision_note(s: &crate::engine::recurrence::Solution) -> Option<String> {
    use crate::engine::recurrence::POLE_MERGE_DISTANCE;
    if let Some((p, q)) = s.merged.first() {
        return Some(format!(
            "Poles {} and {} are closer than {POLE_MERGE_DISTANCE} and were merged into one repeated pole: the values answer that merged problem, within about k × {} relatively of the one asked (some 13 to 14 digits at k in the hundreds), not 26 digits.",
            full(*p),
            full(*q),
            full((*p - *q).abs())
        ));
    }
    let poles: Vec<rust_decimal::Decimal> = s.fractions.iter().map(|f| f.pole).collect();
    let mut closest: Option<rust_decimal::Decimal> = None;
    for (i, p) in poles.iter().enumerate() {
        for q in &poles[i + 1..] {
            let d = (*p - *q).abs();
            if !d.is_zero() && closest.is_none_or(|c| d < c) {
                closest = Some(d);
            }
        }
    }
    let d = closest.filter(|d| *d < rust_decimal::Decimal::new(1, 4))?;
    // About log10(1/d) digits cancel (1e-6 apart keeps about 22 of 28): the
    // zeros after the point, counted from the scale and the mantissa's digits.
    let mantissa_digits = d.mantissa().unsigned_abs().to_string().len() as i64;
    let lost = i64::from(d.scale()) - mantissa_digits + 1;
    Some(format!(
        "Two poles are {} apart: their modes are each about the value ÷ {}, and their sum cancels about {lost} digits, so the values keep about {} significant digits, not 26; a value whose modes leave the decimal range (about 7.9e28) is reported as an overflow even when it would fit.",
        full(d),
        full(d),
        (28 - lost).max(1)
    ))
}
