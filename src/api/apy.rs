//! `POST /api/v1/apy` and `GET /api/v1/apy?…`: the annual percentage yield of
//! Regulation DD (12 CFR 1030 Appendix A).
//!
//! One of three forms, told apart by their fields (the same names in JSON and
//! in the query string):
//!
//! - `principal`, `interest`, `days`: the general formula of Part I.A,
//!   100 [(1 + interest/principal)^(365/days) − 1] (use 365 days for an account
//!   without a maturity); e.g. `?principal=1000&interest=30.37&days=182`;
//! - `annual_rate_percent`, `compounding`: the APY of a nominal rate compounded
//!   m times in a 365-day year, 100 [(1 + j/m)^m − 1], `compounding` one of
//!   `annual`, `semiannual`, `quarterly`, `monthly`, `semimonthly`, `biweekly`,
//!   `weekly`, `daily` (365); e.g. `?annual_rate_percent=5&compounding=daily`;
//! - `interest_earned`, `average_daily_balance`, `days_in_period`: the APY earned
//!   in a statement period, Part II.A; e.g.
//!   `?interest_earned=5.25&average_daily_balance=1000&days_in_period=30`.
//!
//! `currency` (default USD) sets the decimals `principal`, `interest` and
//! `interest_earned` may have; an average daily balance may have more.
//!
//! The answer: `apy_percent` rounded to 0.01 % (§1030.3(f)), `apy_percent_full`,
//! `formula` (the formula with the figures put in), `form`, and `notes`.

use axum::extract::RawQuery;
use axum::response::Response;
use rust_decimal::Decimal;
use serde::Serialize;

use super::handlers::{json_answer, JsonBody};
use crate::answer::derivation::full;
use crate::engine::apy::{apy_earned, apy_general, apy_of_rate, ApyResult};
use crate::engine::schedule::CAUTION;
use crate::input::apy::{read_apy, ApyRequest};
use crate::input::fields::{Fields, Source};
use crate::input::http::query_pairs;
use crate::input::json::Json;
use crate::input::problem::ApiError;

/// The JSON answer of the APY operation.
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct ApyAnswer {
    /// `general`, `nominal_rate` or `earned`.
    pub form: &'static str,
    /// Rounded to 0.01 %, halves up (§1030.3(f)).
    pub apy_percent: String,
    pub apy_percent_full: String,
    pub formula: String,
    pub notes: Vec<String>,
}

fn rounded(r: &ApyResult) -> String {
    let mut x = r.apy_percent_rounded;
    x.rescale(2);
    x.to_string()
}

/// Computes the APY.
///
/// # Errors
/// The engine's refusal (a zero balance, days out of range, an overflow), pointed at its field.
pub fn answer(req: &ApyRequest, prefix: &str) -> Result<ApyAnswer, ApiError> {
    let err = |e| ApiError::from_engine(e, prefix);
    let mut notes = vec![CAUTION.to_string()];
    let (form, result, formula) = match *req {
        ApyRequest::General {
            principal,
            interest,
            days,
        } => {
            let r = apy_general(principal, interest, days)
                .map_err(|e| err(e).naming(prefix, &["interest", "days"]))?;
            let formula = if days == 365 {
                format!(
                    "APY = 100 (Interest/Principal) = 100 × ({}/{}) = {} (12 CFR 1030 Appendix A, Part I.A, a term of 365 days)",
                    full(interest),
                    full(principal),
                    full(r.apy_percent)
                )
            } else {
                format!(
                    "APY = 100 [(1 + Interest/Principal)^(365/Days in term) − 1] = 100 [(1 + {}/{})^(365/{days}) − 1] = {} (12 CFR 1030 Appendix A, Part I.A)",
                    full(interest),
                    full(principal),
                    full(r.apy_percent)
                )
            };
            ("general", r, formula)
        }
        ApyRequest::NominalRate {
            annual_rate_percent,
            compounding,
        } => {
            let m = compounding.per_year();
            let r = apy_of_rate(annual_rate_percent, m).map_err(|e| {
                let e = if e.field == Some("compounding_per_year") {
                    crate::engine::EngineError {
                        field: Some("compounding"),
                        ..e
                    }
                } else {
                    e
                };
                ApiError::from_engine(e, prefix).naming(prefix, &["annual_rate_percent"])
            })?;
            notes.push(format!(
                "A 365-day year: interest compounded {} is compounded {m} times a year.",
                compounding.name()
            ));
            let formula = format!(
                "APY = 100 [(1 + j/m)^m − 1] = 100 [(1 + {}/{m})^{m} − 1] = {} (j = {} % compounded {}; Part I.A applied to a year's interest)",
                full(annual_rate_percent / Decimal::ONE_HUNDRED),
                full(r.apy_percent),
                full(annual_rate_percent),
                compounding.name()
            );
            ("nominal_rate", r, formula)
        }
        ApyRequest::Earned {
            interest_earned,
            average_daily_balance,
            days_in_period,
        } => {
            let r = apy_earned(interest_earned, average_daily_balance, days_in_period)
                .map_err(|e| err(e).naming(prefix, &["interest_earned", "days_in_period"]))?;
            let formula = format!(
                "APY earned = 100 [(1 + Interest earned/Balance)^(365/Days in period) − 1] = 100 [(1 + {}/{})^(365/{days_in_period}) − 1] = {} (12 CFR 1030 Appendix A, Part II.A; Balance is the average daily balance)",
                full(interest_earned),
                full(average_daily_balance),
                full(r.apy_percent)
            );
            ("earned", r, formula)
        }
    };
    notes.push("Rounded to the nearest 0.01 percentage point, halves up (§1030.3(f) names no rule for halves); the APY is accurate within 0.05 point of the figure shown.".into());
    Ok(ApyAnswer {
        form,
        apy_percent: rounded(&result),
        apy_percent_full: full(result.apy_percent),
        formula,
        notes,
    })
}

/// `POST /api/v1/apy`
pub async fn apy_post(JsonBody(body): JsonBody) -> Result<Response, ApiError> {
    let Json::Object(members) = &body else {
        unreachable!("parse_object checks")
    };
    let req = read_apy(Fields::new(Source::Json {
        members,
        pointer: "",
    }))?;
    Ok(json_answer(&answer(&req, "/")?))
}

/// `GET /api/v1/apy?…`
pub async fn apy_get(RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    let req = read_apy(Fields::new(Source::Query(&pairs)))?;
    Ok(json_answer(&answer(&req, "")?))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn query(q: &str) -> Result<ApyAnswer, ApiError> {
        let pairs: Vec<(String, String)> =
            form_urlencoded::parse(q.as_bytes()).into_owned().collect();
        let req = read_apy(Fields::new(Source::Query(&pairs)))?;
        answer(&req, "")
    }

    #[test]
    fn each_form_of_appendix_a() {
        // 12 CFR 1030 Appendix A, Part I.A: $61.68 on $1,000 in 365 days: 6.17 %.
        let a = query("principal=1000&interest=61.68&days=365").unwrap();
        assert_eq!((a.form, a.apy_percent.as_str()), ("general", "6.17"));
        assert_eq!(a.apy_percent_full, "6.168");
        // Part II.A: $5.25 on an average daily balance of $1,000 over 30 days: 6.58 %.
        let a = query("interest_earned=5.25&average_daily_balance=1000&days_in_period=30").unwrap();
        assert_eq!((a.form, a.apy_percent.as_str()), ("earned", "6.58"));
        // 5 % compounded daily: 5.1267… (Python decimal at 40 digits, see engine::apy).
        let a = query("annual_rate_percent=5&compounding=daily").unwrap();
        assert_eq!((a.form, a.apy_percent.as_str()), ("nominal_rate", "5.13"));
    }

    #[test]
    fn mixed_or_missing_forms_are_refused_by_name() {
        let pointer = |q: &str| query(q).unwrap_err().errors[0].pointer.clone();
        assert_eq!(pointer(""), "principal");
        assert_eq!(
            pointer("principal=1000&interest=1&days=365&annual_rate_percent=5"),
            "annual_rate_percent"
        );
        assert_eq!(pointer("principal=1000&interest=1"), "days");
        assert_eq!(pointer("principal=1000&interest=1.001&days=3"), "interest");
        assert_eq!(
            pointer("annual_rate_percent=5&compounding=hourly"),
            "compounding"
        );
        assert_eq!(pointer("principal=0&interest=1&days=30"), "principal");
        assert_eq!(pointer("principal=10&interest=1&days=0"), "days");
    }
}
