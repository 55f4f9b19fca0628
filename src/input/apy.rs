//! The APY request in one of its three forms (Regulation DD Appendix A).

use crate::engine::apy::{check_balance, check_days, check_interest};
use crate::engine::money::Currency;
use crate::engine::rate::Frequency;
use crate::input::fields::Fields;
use crate::input::problem::{ApiError, FieldError};
use rust_decimal::Decimal;

use super::table::{Field, Kind, Table, COMPOUNDINGS, CURRENCY};

/// The fields of the three forms of an APY request.
pub const APY_FIELDS: &[Field] = &[
    CURRENCY,
    Field::new("principal", Kind::Money, "Part I.A: the principal.").example("1000"),
    Field::new(
        "interest",
        Kind::Money,
        "Part I.A: the interest earned over the term.",
    )
    .example("30.37"),
    Field::new(
        "days",
        Kind::Whole { min: 0, max: None },
        "Part I.A: the days of the term.",
    )
    .example("182"),
    Field::new(
        "annual_rate_percent",
        Kind::Percent,
        "A nominal rate compounded as `compounding` says.",
    )
    .example("5"),
    Field::new(
        "compounding",
        Kind::Choice {
            choices: COMPOUNDINGS,
            default: "",
        },
        "How often the nominal rate compounds.",
    )
    .example("daily"),
    Field::new(
        "interest_earned",
        Kind::Money,
        "Part II.A: the interest earned in the period.",
    )
    .example("25"),
    Field::new(
        "average_daily_balance",
        Kind::Money,
        "Part II.A: the average daily balance.",
    )
    .example("10000"),
    Field::new(
        "days_in_period",
        Kind::Whole { min: 0, max: None },
        "Part II.A: the days of the period.",
    )
    .example("30"),
];

/// The APY request, in one of three forms.
pub const APY: Table = Table {
    schema: "ApyRequest",
    doc: "One of three forms: principal, interest, days (Part I.A); annual_rate_percent, compounding; or interest_earned, average_daily_balance, days_in_period (Part II.A).",
    groups: &[APY_FIELDS],
    except: &[],
    all_optional: false,
};

const FORMS: [(&str, [&str; 3]); 3] = [
    ("general", ["principal", "interest", "days"]),
    ("nominal_rate", ["annual_rate_percent", "compounding", ""]),
    (
        "earned",
        ["interest_earned", "average_daily_balance", "days_in_period"],
    ),
];

/// A parsed APY request.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ApyRequest {
    /// Part I.A.
    General {
        principal: Decimal,
        interest: Decimal,
        days: u32,
    },
    /// A nominal rate compounded m times a year.
    NominalRate {
        annual_rate_percent: Decimal,
        compounding: Frequency,
    },
    /// Part II.A.
    Earned {
        interest_earned: Decimal,
        average_daily_balance: Decimal,
        days_in_period: u32,
    },
}

fn required<T>(f: &mut Fields<'_>, name: &'static str, value: Option<T>) -> Option<T> {
    if value.is_none() && !f.errors.iter().any(|e| e.pointer.ends_with(name)) {
        f.error(name, "is required");
    }
    value
}

fn money(f: &mut Fields<'_>, name: &'static str, currency: Currency) -> Option<Decimal> {
    let v = super::fields::money_in(f, name, currency);
    required(f, name, v)
}

/// Reads the request's fields.
///
/// # Errors
/// Every bad field with its pointer (or parameter name).
pub fn read_apy(mut f: Fields<'_>) -> Result<ApyRequest, ApiError> {
    let currency = f.currency(Currency::USD);
    let present: Vec<usize> = FORMS
        .iter()
        .enumerate()
        .filter(|(_, (_, names))| names.iter().any(|n| !n.is_empty() && f.has(n)))
        .map(|(i, _)| i)
        .collect();
    let mut request = None;
    match present.as_slice() {
        [] => f.error(
            "principal",
            "give principal, interest and days (Part I.A); or annual_rate_percent and compounding; or interest_earned, average_daily_balance and days_in_period (Part II.A)",
        ),
        [_, second, ..] => {
            let name = FORMS[*second].1[0];
            f.error(
                name,
                format!(
                    "mixes the fields of two forms ({} and {}): give one",
                    FORMS[present[0]].0, FORMS[*second].0
                ),
            );
        }
        [form] => {
            let currency = currency.unwrap_or(Currency::USD);
            request = match *form {
                0 => {
                    let principal = money(&mut f, "principal", currency)
                        .filter(|v| f.in_range(check_balance(*v, "principal")));
                    let interest = money(&mut f, "interest", currency)
                        .filter(|v| f.in_range(check_interest(*v, "interest")));
                    let days = f.whole("days", "90");
                    let days = required(&mut f, "days", days)
                        .filter(|v| f.in_range(check_days(*v, "days")));
                    match (principal, interest, days) {
                        (Some(principal), Some(interest), Some(days)) => {
                            Some(ApyRequest::General {
                                principal,
                                interest,
                                days,
                            })
                        }
                        _ => None,
                    }
                }
                1 => {
                    let rate = f.decimal("annual_rate_percent");
                    let rate = required(&mut f, "annual_rate_percent", rate);
                    let compounding = f.pick(APY_FIELDS, "compounding", Frequency::parse);
                    let compounding = required(&mut f, "compounding", compounding);
                    match (rate, compounding) {
                        (Some(annual_rate_percent), Some(compounding)) => {
                            Some(ApyRequest::NominalRate {
                                annual_rate_percent,
                                compounding,
                            })
                        }
                        _ => None,
                    }
                }
                _ => {
                    let interest_earned = money(&mut f, "interest_earned", currency)
                        .filter(|v| f.in_range(check_interest(*v, "interest_earned")));
                    let balance = f.decimal("average_daily_balance");
                    let balance = required(&mut f, "average_daily_balance", balance)
                        .filter(|v| f.in_range(check_balance(*v, "average_daily_balance")));
                    let days = f.whole("days_in_period", "30");
                    let days = required(&mut f, "days_in_period", days)
                        .filter(|v| f.in_range(check_days(*v, "days_in_period")));
                    match (interest_earned, balance, days) {
                        (Some(interest_earned), Some(average_daily_balance), Some(days_in_period)) => {
                            Some(ApyRequest::Earned {
                                interest_earned,
                                average_daily_balance,
                                days_in_period,
                            })
                        }
                        _ => None,
                    }
                }
            };
        }
    }
    let mut errors: Vec<FieldError> = std::mem::take(&mut f.errors);
    if let Err(e) = f.finish() {
        errors.extend(e);
    }
    match request {
        Some(r) if errors.is_empty() => Ok(r),
        _ => Err(ApiError::fields(errors)),
    }
}
