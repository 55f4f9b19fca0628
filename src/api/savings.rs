//! The savings plan operation: request fields in, JSON or CSV out.
//!
//! `POST /api/v1/savings/plan` (JSON body), `GET /api/v1/savings/plan?…` and
//! `GET /api/v1/savings/plan.csv?…` read the same fields with the same
//! [`Fields`] reader, so a plan posted as JSON and fetched as a plain URL gives
//! the same answer.
//!
//! What is solved follows from what is given (exactly enough of it):
//!
//! | given                          | solved                                       |
//! |--------------------------------|----------------------------------------------|
//! | `deposit` and a term           | the final balance                            |
//! | `deposit` and `goal`           | the number of periods to reach the goal      |
//! | a term and `goal`              | the deposit that reaches the goal            |
//! | `withdrawal` and a term        | the final balance of the drawdown            |
//! | `withdrawal` alone             | how many withdrawals the balance supports    |
//! | a term alone                   | the withdrawal that exhausts the balance     |
//!
//! A term is `term_months` or `term_periods`.

use axum::extract::RawQuery;
use axum::http::HeaderMap;
use axum::response::Response;

use super::handlers::{csv_answer, json_answer, JsonBody};
use crate::answer::savings::{overflow_named, SavingsPlanDto};
use crate::engine::savings::plan;
use crate::input::fields::{Fields, Source};
use crate::input::http::{query_pairs, wants_csv};
use crate::input::json::Json;
use crate::input::problem::ApiError;
use crate::input::savings::savings_terms_from;

fn savings_answer(fields: Fields<'_>, csv: bool) -> Result<Response, ApiError> {
    let prefix = fields.pointer("");
    let terms = savings_terms_from(fields)?;
    let p = plan(&terms).map_err(|e| overflow_named(ApiError::from_engine(e, &prefix), &prefix))?;
    Ok(if csv {
        csv_answer(super::csv::savings_csv(&p), "savings-plan.csv")
    } else {
        json_answer(&SavingsPlanDto::from_plan(&p))
    })
}

/// `POST /api/v1/savings/plan`
pub async fn plan_post(headers: HeaderMap, JsonBody(body): JsonBody) -> Result<Response, ApiError> {
    let Json::Object(members) = &body else {
        unreachable!("parse_object checks")
    };
    savings_answer(
        Fields::new(Source::Json {
            members,
            pointer: "",
        }),
        wants_csv(&headers),
    )
}

/// `GET /api/v1/savings/plan?…`
pub async fn plan_get(headers: HeaderMap, RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    savings_answer(Fields::new(Source::Query(&pairs)), wants_csv(&headers))
}

/// `GET /api/v1/savings/plan.csv?…`
pub async fn plan_get_csv(RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    savings_answer(Fields::new(Source::Query(&pairs)), true)
}
