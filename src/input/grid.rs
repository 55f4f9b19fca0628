//! The payment grid request (a query only): principals, rates as a list or a
//! range with a step, and terms in months.

use rust_decimal::Decimal;

use crate::engine::choices::grid::MAX_CELLS;
use crate::engine::money::Currency;
use crate::engine::rate::{AnnualRate, Frequency};
use crate::engine::terms::{check_principal, payments_in_months};
use crate::input::fields::{parse_decimal, Fields, Source};
use crate::input::problem::{ApiError, FieldError};

use super::table::{Field, Kind, Table, CURRENCY, PAYMENT_FREQUENCIES};

/// The most principals, rates and terms a grid lists.
pub const MAX_PRINCIPALS: usize = 20;
/// The most rates (a range gives at most this many).
pub const MAX_RATES: usize = 400;
/// The most terms.
pub const MAX_TERMS: usize = 24;

/// The grid's fields.
pub const GRID_FIELDS: &[Field] = &[
    Field::new("principal", Kind::Text { max: 400 }, "The principal, or several separated by commas (at most 20).")
        .required()
        .example("300000")
        .form("Loan amount", "One amount, or several separated by commas: 250000, 300000.", "300,000"),
    Field::new("rates", Kind::Text { max: 400 }, "Annual rates in percent: a list (6.25,6.5,6.75) or a range with a step (6.000..7.500/0.125), at most 400.")
        .required()
        .example("6.000..7.500/0.125")
        .form("Rates (% a year)", "A list such as 6.25, 6.5, 6.75, or a range with a step: 6.000..7.500/0.125.", "6.000..7.500/0.125"),
    Field::new("terms", Kind::Text { max: 200 }, "Terms in months, separated by commas (at most 24).")
        .required()
        .example("120,180,240,300,360")
        .form("Terms in months", "Separated by commas: 180, 240, 360.", "120, 180, 240, 300, 360"),
    Field::new("payment_frequency", Kind::Choice { choices: PAYMENT_FREQUENCIES, default: "Monthly (default)" }, "How often payments fall due (default monthly); the terms stay in months.")
        .example("monthly")
        .form("Payments made", "", ""),
    CURRENCY,
];

/// The grid request (query parameters).
pub const GRID: Table = Table {
    schema: "PaymentGridRequest",
    doc: "A payment grid: every principal × rate × term, at most 2,000 cells.",
    groups: &[GRID_FIELDS],
    except: &[],
    all_optional: false,
};

/// A grid request read.
pub struct GridRequest {
    pub principals: Vec<Decimal>,
    pub rates: Vec<AnnualRate>,
    pub terms: Vec<u32>,
    pub frequency: Frequency,
    pub currency: Currency,
}

fn split(text: &str) -> impl Iterator<Item = &str> {
    text.split(',').map(str::trim).filter(|s| !s.is_empty())
}

/// The rates of a list or of a range `FROM..TO/STEP` (both ends included).
///
/// # Errors
/// The words of the problem.
pub fn parse_rates(text: &str, lenient: bool) -> Result<Vec<Decimal>, String> {
    let t = text.trim();
    if let Some((from, rest)) = t.split_once("..") {
        let (to, step) = rest
            .split_once('/')
            .ok_or_else(|| "a range needs a step: 6.000..7.500/0.125".to_string())?;
        let from =
            parse_decimal(from.trim(), lenient).map_err(|e| format!("the range's start {e}"))?;
        let to = parse_decimal(to.trim(), lenient).map_err(|e| format!("the range's end {e}"))?;
        let step =
            parse_decimal(step.trim(), lenient).map_err(|e| format!("the range's step {e}"))?;
        if step <= Decimal::ZERO {
            return Err(format!(
                "the range's step must be more than zero, not {step}: 6.000..7.500/0.125"
            ));
        }
        if to < from {
            return Err(format!(
                "the range's end ({to}) is below its start ({from})"
            ));
        }
        let count = ((to - from) / step).floor();
        if count >= Decimal::from(MAX_RATES) {
            return Err(format!(
                "the range gives more than {MAX_RATES} rates; use a larger step"
            ));
        }
        let mut out = Vec::new();
        let mut r = from;
        while r <= to {
            out.push(r);
            r += step;
        }
        return Ok(out);
    }
    let out: Vec<Decimal> = split(t)
        .map(|v| parse_decimal(v, lenient).map_err(|e| format!("\"{v}\" {e}")))
        .collect::<Result<_, _>>()?;
    if out.is_empty() {
        return Err("is required: a list of rates or a range 6.000..7.500/0.125".into());
    }
    if out.len() > MAX_RATES {
        return Err(format!("may list at most {MAX_RATES} rates"));
    }
    Ok(out)
}

/// Reads a grid request.
///
/// # Errors
/// Every bad field at once; a grid over [`MAX_CELLS`] cells names `rates`.
pub fn read_query(pairs: &[(String, String)], lenient: bool) -> Result<GridRequest, ApiError> {
    let mut f = Fields::new(Source::Query(pairs));
    f.lenient = lenient;
    let currency = f.currency(Currency::USD);
    let frequency = f
        .pick(GRID_FIELDS, "payment_frequency", |s| {
            Frequency::parse(s).filter(|f| *f != Frequency::Daily)
        })
        .or_else(|| {
            (!f.errors.iter().any(|e| e.pointer == "payment_frequency"))
                .then_some(Frequency::Monthly)
        });
    let amounts_in = currency.unwrap_or(Currency::USD);
    let mut principals = Vec::new();
    match f.text("principal") {
        None => f.error(
            "principal",
            "is required: an amount such as 300000, or several separated by commas",
        ),
        Some(t) => {
            for v in split(t) {
                match parse_decimal(v, lenient) {
                    Ok(p) => match check_principal(p, amounts_in) {
                        Ok(()) => principals.push(p),
                        Err(e) => f.error("principal", format!("{v}: {}", e.message)),
                    },
                    Err(e) => f.error("principal", format!("\"{v}\" {e}")),
                }
            }
            if principals.len() > MAX_PRINCIPALS {
                f.error(
                    "principal",
                    format!("may list at most {MAX_PRINCIPALS} amounts"),
                );
            }
        }
    }
    let mut rates = Vec::new();
    match f.text("rates") {
        None => f.error(
            "rates",
            "is required: a list such as 6.25,6.5 or a range 6.000..7.500/0.125",
        ),
        Some(t) => match parse_rates(t, lenient) {
            Ok(list) => {
                for r in list {
                    match AnnualRate::from_percent(r) {
                        Ok(a) => rates.push(a),
                        Err(e) => f.error("rates", format!("{r}: {}", e.message)),
                    }
                }
            }
            Err(e) => f.error("rates", e),
        },
    }
    let mut terms = Vec::new();
    match f.text("terms") {
        None => f.error(
            "terms",
            "is required: months separated by commas, such as 180,240,360",
        ),
        Some(t) => {
            for v in split(t) {
                match v.parse::<u32>() {
                    Ok(m) => match frequency.map(|fr| payments_in_months(m, fr)) {
                        Some(Err(e)) => f.error("terms", format!("{v}: {}", e.message)),
                        _ => terms.push(m),
                    },
                    Err(_) => f.error(
                        "terms",
                        format!("\"{v}\" is not a whole number of months: 360 is 30 years"),
                    ),
                }
            }
            if terms.len() > MAX_TERMS {
                f.error("terms", format!("may list at most {MAX_TERMS} terms"));
            }
        }
    }
    if f.errors.is_empty() {
        let cells = principals.len() * rates.len() * terms.len();
        if cells > MAX_CELLS {
            f.error(
                "rates",
                format!(
                    "the grid would have {cells} cells ({} amounts × {} rates × {} terms); it may have at most {MAX_CELLS}",
                    principals.len(),
                    rates.len(),
                    terms.len()
                ),
            );
        }
    }
    let errors: Vec<FieldError> = match f.finish() {
        Ok(()) => vec![],
        Err(e) => e,
    };
    match (currency, frequency) {
        (Some(currency), Some(frequency)) if errors.is_empty() => Ok(GridRequest {
            principals,
            rates,
            terms,
            frequency,
            currency,
        }),
        _ => Err(ApiError::fields(errors)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_range_includes_both_ends_and_refuses_a_step_of_zero() {
        let r = parse_rates("6.000..7.500/0.125", false).unwrap();
        assert_eq!(r.len(), 13);
        assert_eq!(r[12].to_string(), "7.500");
        assert!(parse_rates("6..7/0", false).unwrap_err().contains("step"));
        assert!(parse_rates("6..7/-0.5", false)
            .unwrap_err()
            .contains("step"));
        assert_eq!(parse_rates("6.25, 6.5", false).unwrap().len(), 2);
    }
}
