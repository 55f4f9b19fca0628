//! Loan plans over HTTP: dates and an odd first period, extra payments,
//! interest-only periods, balloons, rate steps, milestones and comparisons.
//!
//! Every figure is checked against arithmetic written here, independently of
//! the engine (`reference`): a posted ledger stepped in `rust_decimal` (interest
//! rounded half away from zero to the cent each month), calendar-month addition
//! done by hand, and odd-days interest worked by hand.

use serde_json::{json, Value};

use crate::helpers::{
    assert_field_problem, assert_still_healthy, with, Response, TestApp, SCHEDULE,
};

mod changes;
mod compare;
mod dates;
mod forms;
mod milestones;
mod reference;

/// The comparison path.
pub const COMPARE: &str = "/api/v1/loans/compare";
/// The CSV comparison path.
pub const COMPARE_CSV: &str = "/api/v1/loans/compare.csv";

// ---------------------------------------------------------------------------
// Requests
// ---------------------------------------------------------------------------

/// Posts a schedule request; the answer must be 200 JSON.
pub fn schedule_of(app: &TestApp, body: &Value) -> Value {
    app.post_ok(SCHEDULE, body)
}

/// GETs a schedule by query; the answer must be 200 JSON.
pub fn schedule_by_query(app: &TestApp, query: &str) -> Value {
    app.get_ok(&format!("{SCHEDULE}?{query}"))
}

/// 100,000 at 6 % over 360 months: 599.55 a month.
pub fn loan_100k() -> Value {
    json!({"principal": "100000", "annual_rate_percent": "6", "term_months": 360})
}

/// 250,000 at 6.5 % over 360 months.
pub fn loan_250k() -> Value {
    json!({"principal": "250000", "annual_rate_percent": "6.5", "term_months": 360})
}

pub fn rows(s: &Value) -> &Vec<Value> {
    s["schedule"].as_array().expect("a schedule array")
}

pub fn notes(s: &Value) -> Vec<&str> {
    s["notes"]
        .as_array()
        .expect("a notes array")
        .iter()
        .map(|n| n.as_str().expect("a note is text"))
        .collect()
}

pub fn has_note(s: &Value, words: &str) -> bool {
    notes(s).iter().any(|n| n.contains(words))
}

/// A 422 invalid-fields problem naming `pointer`; the server still answers after it.
pub fn assert_invalid(app: &TestApp, r: &Response, pointer: &str) -> Value {
    let p = assert_field_problem(r, 422, "invalid-fields", pointer);
    assert_still_healthy(app);
    p
}

/// 100,000 at 6 % over 360, funded 2027-01-10, first paying 2027-03-01: the
/// regular month before the first payment starts 2027-02-01, so the odd period
/// runs 2027-01-10 to 2027-02-01 (worked by hand in `dates`).
pub fn dated_100k() -> Value {
    with(
        &loan_100k(),
        json!({"funding_date": "2027-01-10", "first_payment_date": "2027-03-01"}),
    )
}

/// 150 a month from payment 13 and a 5,000 lump sum with payment 36.
pub fn extras_json() -> Value {
    json!([{"amount": "150", "from": 13}, {"amount": "5000", "at": 36}])
}

/// 100,000 at 6 % over 360, stepping to 7 % from payment 61.
pub fn rate_step_json() -> Value {
    with(
        &loan_100k(),
        json!({"rate_changes": [{"at": 61, "annual_rate_percent": "7"}]}),
    )
}
