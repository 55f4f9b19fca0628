//! Solve any first-order recurrence with inputs from the transform table.
//!
//! This is the method laid bare: a reader can check Residue's closed forms
//! against any other tool by posting the same recurrence here.

use serde::Serialize;

use crate::answer::derivation::{full, DerivationDto};
use crate::engine::recurrence::Recurrence;
use crate::engine::schedule::CAUTION;
use crate::input::problem::ApiError;

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
