//! `POST /api/v1/loans/check` and `GET /api/v1/loans/check?…`: a quoted payment,
//! APR and finance charge checked against the posted loan, with its disclosure
//! figures (Regulation Z, 12 CFR 1026; see [`crate::engine::disclosure`]).
//!
//! # Request
//!
//! The fields of the schedule request (`principal`, `annual_rate_percent`,
//! `term_months` | `term_payments` | `payment`, `payment_frequency`,
//! `compounding`, `currency`, `payment_rounding`, `interest_rounding`), and:
//!
//! - `quoted_payment`: money; compared with the posted payment to the minor unit;
//! - `quoted_apr_percent`: compared with the computed APR within the tolerance
//!   of §1026.22(a)(2)–(3);
//! - `quoted_finance_charge`: money; compared within the tolerance of §1026.18(d);
//! - `prepaid_finance_charges`: in JSON `[{"name": "origination", "amount": "1250.00"}, …]`;
//!   in a query `prepaid_finance_charges=origination:1250.00,points:2500`
//!   (name, a colon, the amount; items separated by commas; names without commas);
//! - `mortgage`: `true` (default) or `false`, selecting the finance-charge
//!   tolerance of §1026.18(d)(1) or (d)(2);
//! - the plan fields of the schedule request that shape the scheduled payments:
//!   `funding_date` and `first_payment_date` (with `day_count` and
//!   `odd_days_interest`: an odd first period), `interest_only_payments`,
//!   `balloon_after_payments`, `rate_changes` and `rate_change_keeps`. With a
//!   funding date and a first payment date the APR is found from the dates.
//!   `extra_payments` are refused: a disclosure counts scheduled payments only.
//!
//! Every quote is optional; without one the answer gives the figures alone.
//!
//! # Answer
//!
//! `computed_payment`, `payment_difference` (quoted − computed), `payment_matches`,
//! `implied_annual_rate_percent`, `apr_percent` (two decimals) and `apr_percent_full`,
//! `apr_difference_points` (quoted − computed, unrounded), `apr_tolerance_points`,
//! `apr_transaction`, `apr_tolerance_reason`, `apr_within_tolerance`,
//! `amount_financed`, `finance_charge`, `total_of_payments`, `total_interest`,
//! `total_interest_percentage` (three decimals, trailing zeros dropped) and
//! `total_interest_percentage_full`, `in_five_years`, `finance_charge_tolerance`
//! (`null` without a quoted finance charge), `disclosure_rounding`, and `notes`.
//! Figures that compare a quote are `null` when that quote is not given.

use axum::extract::RawQuery;
use axum::response::Response;

use super::handlers::{json_answer, JsonBody};
use crate::answer::check::check_answer;
use crate::input::fields::{Fields, Source};
use crate::input::http::query_pairs;
use crate::input::json::Json;
use crate::input::problem::ApiError;

/// `POST /api/v1/loans/check`
pub async fn check_post(JsonBody(body): JsonBody) -> Result<Response, ApiError> {
    let Json::Object(members) = &body else {
        unreachable!("parse_object checks")
    };
    Ok(json_answer(&check_answer(Fields::new(Source::Json {
        members,
        pointer: "",
    }))?))
}

/// `GET /api/v1/loans/check?…`
pub async fn check_get(RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    Ok(json_answer(&check_answer(Fields::new(Source::Query(
        &pairs,
    )))?))
}
