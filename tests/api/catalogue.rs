//! The bad-input catalogue: every endpoint and page sent what a careless or
//! hostile client sends. Each case names the status, the problem type and the
//! field (JSON Pointer, query parameter, or the page's `e-FIELD` message), never
//! the wording; after each case the server still answers `/healthz`, and no
//! answer carries a panic message or a stack trace.

use std::io::{ErrorKind, Read, Write};
use std::net::TcpStream;
use std::time::{Duration, Instant};

use residue::server::Config;
use serde_json::{json, Value};

use crate::helpers::{
    assert_still_healthy, parse_response, pointers, shared_app, spawn_app, spawn_app_with,
    Response, TestApp,
};

const SCHEDULE: &str = "/api/v1/loans/schedule";
const COMPARE: &str = "/api/v1/loans/compare";
const CHECK: &str = "/api/v1/loans/check";
const APR: &str = "/api/v1/apr";
const APY: &str = "/api/v1/apy";
const PLAN: &str = "/api/v1/savings/plan";
const RECURRENCE: &str = "/api/v1/recurrence";
const BATCH: &str = "/api/v1/batch";

/// Text that would betray a panic or an internal error in an answer.
const LEAKS: [&str; 5] = [
    "panicked",
    "RUST_BACKTRACE",
    "src/",
    "stack backtrace",
    "called `Option::unwrap()`",
];

/// What a case sends.
enum Req {
    /// A POST with this media type and these exact body bytes.
    Post(&'static str, &'static str, Vec<u8>),
    /// A GET of this path and query.
    Get(String),
}

/// What a case expects.
enum Want {
    /// 200 and a JSON (or CSV) answer.
    Ok,
    /// Problem details: status, type slug, and the pointer that must be named (if any).
    Problem(u16, &'static str, Option<&'static str>),
    /// A page: HTML, no 5xx, and (if given) the error shown next to this field.
    Page(Option<&'static str>),
    /// A bare status from the HTTP layer (e.g. 414 for a 100 KB URI), nothing else checked.
    Status(u16),
    /// A batch: 200 NDJSON, one answer a line; `None` is a success, else (slug, pointer).
    Batch(Vec<Option<(&'static str, Option<&'static str>)>>),
}

struct Case {
    name: &'static str,
    req: Req,
    want: Want,
}

fn post(path: &'static str, body: impl Into<Vec<u8>>) -> Req {
    Req::Post(path, "application/json", body.into())
}

fn get(path_and_query: impl Into<String>) -> Req {
    Req::Get(path_and_query.into())
}

fn loan(changes: Value) -> Vec<u8> {
    merge(
        json!({"principal": "100000", "annual_rate_percent": "6", "term_months": 120}),
        changes,
    )
}

fn savings(changes: Value) -> Vec<u8> {
    merge(
        json!({"deposit": "350", "annual_rate_percent": "4.1", "term_months": 96}),
        changes,
    )
}

fn apr_dated(changes: Value) -> Vec<u8> {
    merge(
        json!({
            "advances": [{"amount": "5000", "date": "1978-01-10"}],
            "payments": [{"amount": "230", "count": 24, "first_date": "1978-02-10", "frequency": "monthly"}]
        }),
        changes,
    )
}

fn recurrence(changes: Value) -> Vec<u8> {
    merge(
        json!({"a": "1.005", "x0": "1200", "inputs": [{"kind": "step", "amount": "-100"}], "evaluate_at": [0, 5, 12]}),
        changes,
    )
}

fn compare(variants: Value) -> Vec<u8> {
    serde_json::to_vec(&json!({
        "base": {"principal": "278000", "annual_rate_percent": "6.375", "term_months": 360},
        "variants": variants
    }))
    .expect("JSON")
}

/// `base` with `changes` merged in (a `null` removes a field), as bytes.
fn merge(mut base: Value, changes: Value) -> Vec<u8> {
    for (k, v) in changes.as_object().expect("an object of changes") {
        if v.is_null() {
            base.as_object_mut().expect("an object").remove(k);
        } else {
            base[k] = v.clone();
        }
    }
    serde_json::to_vec(&base).expect("JSON")
}

/// A loan body with one field's raw JSON text (to send what serde_json would not write).
fn loan_raw(field: &str, raw: &str) -> Vec<u8> {
    let mut fields = vec![
        ("principal", "\"100000\"".to_string()),
        ("annual_rate_percent", "\"6\"".to_string()),
        ("term_months", "120".to_string()),
    ];
    match fields.iter_mut().find(|(k, _)| *k == field) {
        Some(f) => f.1 = raw.to_string(),
        None => fields.push((
            Box::leak(field.to_string().into_boxed_str()),
            raw.to_string(),
        )),
    }
    let inner: Vec<String> = fields.iter().map(|(k, v)| format!("\"{k}\":{v}")).collect();
    format!("{{{}}}", inner.join(",")).into_bytes()
}

const LOAN_Q: &str = "principal=100000&annual_rate_percent=6&term_months=120";

fn ndjson(lines: &[Value]) -> Vec<u8> {
    let mut out = String::new();
    for l in lines {
        out.push_str(&l.to_string());
        out.push('\n');
    }
    out.into_bytes()
}

fn job(id: u32, job: &str, request: Value) -> Value {
    json!({"id": id, "job": job, "request": request})
}

fn good_loan() -> Value {
    json!({"principal": "1000", "annual_rate_percent": "6", "term_months": 12})
}

#[allow(clippy::too_many_lines)]
fn cases() -> Vec<Case> {
    let invalid = |p| Want::Problem(422, "invalid-fields", Some(p));
    let malformed = Want::Problem(400, "malformed-json", None);
    let hundred_kb = "1".repeat(100 * 1024);
    let deep = format!("{}1{}", "[".repeat(10_000), "]".repeat(10_000));
    let ten_mb = {
        let mut b = b"{\"principal\":\"".to_vec();
        b.extend(std::iter::repeat_n(b'9', 10 * 1024 * 1024));
        b.extend_from_slice(b"\",\"annual_rate_percent\":\"6\",\"term_months\":120}");
        b
    };
    let big_batch_line = {
        let mut b = b"{\"id\":1,\"job\":\"apy\",\"request\":{\"principal\":\"".to_vec();
        b.extend(std::iter::repeat_n(b'1', 10 * 1024 * 1024));
        b.extend_from_slice(b"\"}}\n");
        b
    };
    let c = |name, req, want| Case { name, req, want };
    vec![
        // --- the schedule, JSON ---
        c("schedule: a valid loan", post(SCHEDULE, loan(json!({}))), Want::Ok),
        c("schedule: a non-number principal", post(SCHEDULE, loan(json!({"principal": "abc"}))), invalid("/principal")),
        c("schedule: thousands separators in JSON", post(SCHEDULE, loan(json!({"principal": "100,000"}))), invalid("/principal")),
        c("schedule: a JSON number 1e400", post(SCHEDULE, loan_raw("principal", "1e400")), invalid("/principal")),
        c("schedule: a JSON number 1e-400", post(SCHEDULE, loan_raw("principal", "1e-400")), invalid("/principal")),
        c("schedule: the string \"1e400\"", post(SCHEDULE, loan(json!({"principal": "1e400"}))), invalid("/principal")),
        c("schedule: the rate 1e-400", post(SCHEDULE, loan(json!({"annual_rate_percent": "1e-400"}))), invalid("/annual_rate_percent")),
        c("schedule: 29 significant digits", post(SCHEDULE, loan(json!({"principal": "12345678901234567890123456789"}))), invalid("/principal")),
        c("schedule: 29 digits of rate", post(SCHEDULE, loan(json!({"annual_rate_percent": "8.0000000000000000000000000001"}))), invalid("/annual_rate_percent")),
        c("schedule: a negative-zero principal", post(SCHEDULE, loan(json!({"principal": "-0"}))), invalid("/principal")),
        c("schedule: a negative-zero rate is a 0 % loan", post(SCHEDULE, loan(json!({"annual_rate_percent": "-0"}))), Want::Ok),
        c("schedule: NaN spelled as a string", post(SCHEDULE, loan(json!({"principal": "NaN"}))), invalid("/principal")),
        c("schedule: Infinity spelled as a string", post(SCHEDULE, loan(json!({"principal": "Infinity"}))), invalid("/principal")),
        c("schedule: -Infinity as a rate", post(SCHEDULE, loan(json!({"annual_rate_percent": "-Infinity"}))), invalid("/annual_rate_percent")),
        c("schedule: a bare NaN token", post(SCHEDULE, loan_raw("principal", "NaN")), malformed.clone_problem()),
        c("schedule: a bare Infinity token", post(SCHEDULE, loan_raw("principal", "Infinity")), malformed.clone_problem()),
        c("schedule: an empty principal", post(SCHEDULE, loan(json!({"principal": ""}))), invalid("/principal")),
        c("schedule: an empty currency", post(SCHEDULE, loan(json!({"currency": ""}))), invalid("/currency")),
        c("schedule: a missing principal", post(SCHEDULE, loan(json!({"principal": null}))), invalid("/principal")),
        c("schedule: a missing rate", post(SCHEDULE, loan(json!({"annual_rate_percent": null}))), invalid("/annual_rate_percent")),
        c("schedule: a duplicate field", post(SCHEDULE, &b"{\"principal\":\"1\",\"principal\":\"2\",\"annual_rate_percent\":\"6\",\"term_months\":12}"[..]), Want::Problem(400, "malformed-json", Some("/principal"))),
        c("schedule: a duplicate field inside an extra payment", post(SCHEDULE, &br#"{"principal":"1000","annual_rate_percent":"6","term_months":12,"extra_payments":[{"amount":"1","at":2},{"amount":"1","amount":"2","at":3}]}"#[..]), Want::Problem(400, "malformed-json", Some("/extra_payments/1/amount"))),
        c("schedule: an unknown field", post(SCHEDULE, loan(json!({"colour": "red"}))), invalid("/colour")),
        c("schedule: a boolean principal", post(SCHEDULE, loan(json!({"principal": true}))), invalid("/principal")),
        c("schedule: a null principal", post(SCHEDULE, loan_raw("principal", "null")), invalid("/principal")),
        c("schedule: a fractional term", post(SCHEDULE, loan(json!({"term_months": 120.5}))), invalid("/term_months")),
        c("schedule: an object as principal", post(SCHEDULE, loan(json!({"principal": {"value": 1}}))), invalid("/principal")),
        c("schedule: an array as principal", post(SCHEDULE, loan(json!({"principal": ["100000"]}))), invalid("/principal")),
        c("schedule: an array where the object belongs", post(SCHEDULE, &b"[{\"principal\":\"100000\"}]"[..]), invalid("")),
        c("schedule: a bare string body", post(SCHEDULE, &b"\"100000\""[..]), invalid("")),
        c("schedule: extra payments as an object", post(SCHEDULE, loan(json!({"extra_payments": {"amount": "100", "at": 5}}))), invalid("/extra_payments")),
        c("schedule: deeply nested JSON", post(SCHEDULE, loan_raw("principal", &deep)), malformed.clone_problem()),
        c("schedule: a 100 KB principal", post(SCHEDULE, loan(json!({"principal": hundred_kb.clone()}))), invalid("/principal")),
        c("schedule: a 100 KB label", post(SCHEDULE, loan(json!({"label": "a".repeat(100 * 1024)}))), Want::Ok),
        c("schedule: a 100 KB currency", post(SCHEDULE, loan(json!({"currency": "U".repeat(100 * 1024)}))), invalid("/currency")),
        c("schedule: a 100 KB field name", post(SCHEDULE, loan(json!({"k".repeat(100 * 1024): 1}))), Want::Problem(422, "invalid-fields", None)),
        c("schedule: full-width digits", post(SCHEDULE, loan(json!({"principal": "１２３"}))), invalid("/principal")),
        c("schedule: Arabic-Indic digits", post(SCHEDULE, loan(json!({"principal": "١٢٣"}))), invalid("/principal")),
        c("schedule: Devanagari digits in the rate", post(SCHEDULE, loan(json!({"annual_rate_percent": "६"}))), invalid("/annual_rate_percent")),
        c("schedule: a NUL in a number", post(SCHEDULE, loan(json!({"principal": "100\u{0}"}))), invalid("/principal")),
        c("schedule: a raw control character in a string", post(SCHEDULE, loan_raw("principal", "\"100\u{1}\"")), malformed.clone_problem()),
        c("schedule: a zero-width space in a number", post(SCHEDULE, loan(json!({"principal": "100\u{200b}000"}))), invalid("/principal")),
        c("schedule: invalid UTF-8", post(SCHEDULE, &b"{\"principal\":\"\xff\xfe\"}"[..]), malformed.clone_problem()),
        c("schedule: a lone surrogate escape", post(SCHEDULE, loan_raw("principal", "\"\\ud800\"")), malformed.clone_problem()),
        c("schedule: an empty body", post(SCHEDULE, Vec::new()), malformed.clone_problem()),
        c("schedule: 2027-02-30", post(SCHEDULE, loan(json!({"first_payment_date": "2027-02-30"}))), invalid("/first_payment_date")),
        c("schedule: the year 10000", post(SCHEDULE, loan(json!({"first_payment_date": "10000-01-01"}))), invalid("/first_payment_date")),
        c("schedule: a date with a time", post(SCHEDULE, loan(json!({"funding_date": "2027-01-01T00:00:00Z"}))), invalid("/funding_date")),
        c("schedule: a term of 0", post(SCHEDULE, loan(json!({"term_months": 0}))), invalid("/term_months")),
        c("schedule: a term of 6001", post(SCHEDULE, loan(json!({"term_months": 6001}))), invalid("/term_months")),
        c("schedule: a term of 2^64", post(SCHEDULE, loan_raw("term_months", "18446744073709551616")), invalid("/term_months")),
        c("schedule: a negative term", post(SCHEDULE, loan(json!({"term_months": -1}))), invalid("/term_months")),
        c("schedule: a rate of 0 is valid", post(SCHEDULE, loan(json!({"annual_rate_percent": "0"}))), Want::Ok),
        c("schedule: a rate of 1000 over 12 months is valid", post(SCHEDULE, loan(json!({"annual_rate_percent": "1000", "term_months": 12}))), Want::Ok),
        c("schedule: 1000 % over 120 months rounds to interest only: the term is named, no payment was sent", post(SCHEDULE, loan(json!({"annual_rate_percent": "1000"}))), Want::Problem(422, "no-solution", Some("/term_months"))),
        c("schedule: a rate of 1000.0001", post(SCHEDULE, loan(json!({"annual_rate_percent": "1000.0001"}))), invalid("/annual_rate_percent")),
        c("schedule: a payment one cent too small", post(SCHEDULE, loan(json!({"term_months": null, "payment": "500.00"}))), Want::Problem(422, "no-solution", Some("/payment"))),
        c("schedule: the smallest payment that repays", post(SCHEDULE, loan(json!({"term_months": null, "payment": "500.01"}))), Want::Ok),
        c("schedule: a payment with a tenth of a cent", post(SCHEDULE, loan(json!({"term_months": null, "payment": "500.001"}))), invalid("/payment")),
        c("schedule: an extra payment after payoff", post(SCHEDULE, loan(json!({"extra_payments": [{"amount": "100", "at": 500}]}))), Want::Ok),
        c("schedule: a rate change at payment 0", post(SCHEDULE, loan(json!({"rate_changes": [{"at": 0, "annual_rate_percent": "7"}]}))), invalid("/rate_changes")),
        c("schedule: 6000 payments at 1000 %", post(SCHEDULE, loan(json!({"term_months": 6000, "annual_rate_percent": "1000"}))), Want::Problem(422, "no-solution", Some("/term_months"))),
        c("schedule: 6000 payments at 1 %", post(SCHEDULE, loan(json!({"term_months": 6000, "annual_rate_percent": "1"}))), Want::Ok),
        c("schedule: a 10 MB body", post(SCHEDULE, ten_mb), Want::Problem(413, "too-large", None)),
        c("schedule: text/plain", Req::Post(SCHEDULE, "text/plain", loan(json!({}))), Want::Problem(415, "unsupported-media-type", None)),
        // --- the schedule, query ---
        c("schedule query: thousands separators", get(format!("{SCHEDULE}?principal=100%2C000&annual_rate_percent=6&term_months=120")), invalid("principal")),
        c("schedule query: a repeated parameter", get(format!("{SCHEDULE}?{LOAN_Q}&principal=5")), invalid("principal")),
        c("schedule query: bad percent-encoding", get(format!("{SCHEDULE}?principal=%FF&annual_rate_percent=6&term_months=120")), Want::Problem(400, "malformed-query", None)),
        c("schedule query: NaN", get(format!("{SCHEDULE}?principal=100000&annual_rate_percent=NaN&term_months=120")), invalid("annual_rate_percent")),
        c("schedule query: an unknown parameter", get(format!("{SCHEDULE}?{LOAN_Q}&colour=red")), invalid("colour")),
        c("schedule query: extra payments not parsed", get(format!("{SCHEDULE}?{LOAN_Q}&extra_payments=abc")), invalid("extra_payments")),
        c("schedule query: an extra at payment 2^40", get(format!("{SCHEDULE}?{LOAN_Q}&extra_payments=100@1099511627776")), invalid("extra_payments")),
        c("schedule query: an extra at payment 6001 (past the longest term)", get(format!("{SCHEDULE}?{LOAN_Q}&extra_payments=150@6001")), invalid("extra_payments")),
        c("schedule query: 121 extra payments (a JSON array holds 120)", get(format!("{SCHEDULE}?{LOAN_Q}&extra_payments={}", (1..=121).map(|k| format!("1@{k}")).collect::<Vec<_>>().join(","))), invalid("extra_payments")),
        c("schedule query: 121 rate changes", get(format!("{SCHEDULE}?{LOAN_Q}&rate_changes={}", (1..=121).map(|k| format!("{k}:5")).collect::<Vec<_>>().join(","))), invalid("rate_changes")),
        c("schedule query: a rate change at payment 6001", get(format!("{SCHEDULE}?{LOAN_Q}&rate_changes=6001:5")), invalid("rate_changes")),
        c("schedule query: an extra range backwards", get(format!("{SCHEDULE}?{LOAN_Q}&extra_payments=100@5-3")), invalid("extra_payments")),
        c("schedule query: an extra every 0", get(format!("{SCHEDULE}?{LOAN_Q}&extra_payments=100@1-/0")), invalid("extra_payments")),
        c("schedule query: an extra on 2027-02-30", get(format!("{SCHEDULE}?{LOAN_Q}&extra_payments=100@2027-02-30")), invalid("extra_payments")),
        c("schedule query: a rate change not parsed", get(format!("{SCHEDULE}?{LOAN_Q}&rate_changes=61:abc")), invalid("rate_changes")),
        c("schedule csv: a bad principal is still problem JSON", get(format!("{SCHEDULE}.csv?principal=abc&annual_rate_percent=6&term_months=120")), invalid("principal")),
        // --- compare ---
        c("compare: a valid comparison", post(COMPARE, compare(json!([{"label": "15", "term_months": 180}]))), Want::Ok),
        c("compare: a variant term of 0", post(COMPARE, compare(json!([{"label": "x", "term_months": 0}]))), invalid("/variants/0/term_months")),
        c("compare: a bad base principal", post(COMPARE, br#"{"base":{"principal":"abc","annual_rate_percent":"6","term_months":360},"variants":[]}"#.to_vec()), invalid("/base/principal")),
        c("compare: an array as base", post(COMPARE, br#"{"base":[1,2],"variants":[]}"#.to_vec()), invalid("/base")),
        c("compare: an object as variants", post(COMPARE, compare(json!({"label": "x"}))), invalid("/variants")),
        c("compare: five variants", post(COMPARE, compare(json!([{"label": "a", "term_months": 1}, {"label": "b", "term_months": 2}, {"label": "c", "term_months": 3}, {"label": "d", "term_months": 4}, {"label": "e", "term_months": 5}]))), invalid("/variants")),
        c("compare: an unknown variant field", post(COMPARE, compare(json!([{"label": "x", "bogus": 1}]))), invalid("/variants/0/bogus")),
        c("compare query: a list with a non-number", get(format!("{COMPARE}?principal=278000&annual_rate_percent=6.375&term_months=180,abc")), invalid("term_months")),
        // --- check ---
        c("check: thousands separators in a quote", post(CHECK, loan(json!({"quoted_payment": "1,000"}))), invalid("/quoted_payment")),
        c("check: NaN as the quoted APR", post(CHECK, loan(json!({"quoted_apr_percent": "NaN"}))), invalid("/quoted_apr_percent")),
        c("check: a quote with a tenth of a cent", post(CHECK, loan(json!({"quoted_payment": "599.555"}))), invalid("/quoted_payment")),
        c("check: a string as prepaid charges", post(CHECK, loan(json!({"prepaid_finance_charges": "x"}))), invalid("/prepaid_finance_charges")),
        c("check: a term of 6001", post(CHECK, loan(json!({"term_months": 6001}))), invalid("/term_months")),
        // --- APR ---
        c("apr: a valid dated APR", post(APR, apr_dated(json!({}))), Want::Ok),
        c("apr: an advance on 2027-02-30", post(APR, apr_dated(json!({"advances": [{"amount": "5000", "date": "2027-02-30"}]}))), invalid("/advances/0/date")),
        c("apr: payments from the year 10000", post(APR, apr_dated(json!({"payments": [{"amount": "230", "count": 24, "first_date": "10000-02-10", "frequency": "monthly"}]}))), invalid("/payments/0/first_date")),
        c("apr: a count of 0", post(APR, apr_dated(json!({"payments": [{"amount": "230", "count": 0, "first_date": "1978-02-10", "frequency": "monthly"}]}))), invalid("/payments/0/count")),
        c("apr: a count of 100,000,000", post(APR, apr_dated(json!({"payments": [{"amount": "230", "count": 100_000_000, "first_date": "1978-02-10", "frequency": "monthly"}]}))), invalid("/payments/0/count")),
        c("apr: an object as advances", post(APR, apr_dated(json!({"advances": {"amount": "5000"}}))), invalid("/advances")),
        c("apr: payments that never repay", post(APR, apr_dated(json!({"payments": [{"amount": "1", "count": 24, "first_date": "1978-02-10", "frequency": "monthly"}]}))), Want::Problem(422, "no-solution", Some("/payments"))),
        c("apr: a negative unit-period", post(APR, br#"{"unit_period":"month","advances":[{"amount":"5000","periods":-1}],"payments":[{"amount":"230","periods":1,"count":24}]}"#.to_vec()), invalid("/advances/0/periods")),
        c("apr: 1e400 as an amount", post(APR, apr_dated(json!({"advances": [{"amount": "1e400", "date": "1978-01-10"}]}))), invalid("/advances/0/amount")),
        c("apr query: an unknown parameter", get(format!("{APR}?advance=5000")), invalid("advance")),
        // --- APY ---
        c("apy: a valid general APY", post(APY, br#"{"principal":"1000","interest":"61.68","days":365}"#.to_vec()), Want::Ok),
        c("apy: a term of 0 days", post(APY, br#"{"principal":"1000","interest":"61.68","days":0}"#.to_vec()), invalid("/days")),
        c("apy: a principal of 0", post(APY, br#"{"principal":"0","interest":"61.68","days":365}"#.to_vec()), invalid("/principal")),
        c("apy: a principal of 1e400", post(APY, br#"{"principal":1e400,"interest":"61.68","days":365}"#.to_vec()), invalid("/principal")),
        c("apy: a rate of 1000.0001", post(APY, br#"{"annual_rate_percent":"1000.0001","compounding":"daily"}"#.to_vec()), invalid("/annual_rate_percent")),
        c("apy: a missing compounding", post(APY, br#"{"annual_rate_percent":"5"}"#.to_vec()), invalid("/compounding")),
        c("apy query: a non-number of days", get(format!("{APY}?principal=1000&interest=61.68&days=abc")), invalid("days")),
        // --- savings ---
        c("savings: a valid plan", post(PLAN, savings(json!({}))), Want::Ok),
        c("savings: a rate of 0 is valid", post(PLAN, savings(json!({"annual_rate_percent": "0"}))), Want::Ok),
        c("savings: a term of 0", post(PLAN, savings(json!({"term_months": 0}))), invalid("/term_months")),
        c("savings: a term of 6001", post(PLAN, savings(json!({"term_months": 6001}))), invalid("/term_months")),
        c("savings: full-width digits", post(PLAN, savings(json!({"deposit": "３５０"}))), invalid("/deposit")),
        c("savings: a rate of 1000.0001", post(PLAN, savings(json!({"annual_rate_percent": "1000.0001"}))), invalid("/annual_rate_percent")),
        c("savings: a start on 2027-02-30", post(PLAN, savings(json!({"start_date": "2027-02-30"}))), invalid("/start_date")),
        c("savings: a growth of 1e400", post(PLAN, savings(json!({"deposit_growth_percent": "1e400"}))), invalid("/deposit_growth_percent")),
        c("savings: an array body", post(PLAN, &b"[]"[..]), invalid("")),
        c("savings query: an unknown parameter", get(format!("{PLAN}?deposit=350&annual_rate_percent=4.1&term_months=96&x=1")), invalid("x")),
        // --- recurrence ---
        c("recurrence: a valid recurrence", post(RECURRENCE, recurrence(json!({}))), Want::Ok),
        c("recurrence: a non-number a", post(RECURRENCE, recurrence(json!({"a": "abc"}))), invalid("/a")),
        c("recurrence: an unknown input kind", post(RECURRENCE, recurrence(json!({"inputs": [{"kind": "sine", "amount": "1"}]}))), invalid("/inputs/0/kind")),
        c("recurrence: k = -1", post(RECURRENCE, recurrence(json!({"evaluate_at": [-1]}))), invalid("/evaluate_at/0")),
        c("recurrence: k beyond range", post(RECURRENCE, recurrence(json!({"evaluate_at": [99_999_999_999_u64]}))), invalid("/evaluate_at/0")),
        c("recurrence: an object as inputs", post(RECURRENCE, recurrence(json!({"inputs": {"kind": "step"}}))), invalid("/inputs")),
        c("recurrence: a power past the decimal range", post(RECURRENCE, recurrence(json!({"a": "1.5", "inputs": [{"kind": "geometric", "amount": "1", "ratio": "1.5"}], "evaluate_at": [6000]}))), Want::Problem(422, "overflow", Some("/a"))),
        c("apy: interest a billion times the principal over one day (overflow names the field)", get(format!("{APY}?principal=1000&interest=1e12&days=1")), Want::Problem(422, "overflow", Some("interest"))),
        c("apy earned: the same overflow names the earned form's own field", get(format!("{APY}?interest_earned=1e12&average_daily_balance=1000&days_in_period=1")), Want::Problem(422, "overflow", Some("interest_earned"))),
        c("schedule query: an extra every 0 payments", get(format!("{SCHEDULE}?{LOAN_Q}&extra_payments=100@1-/0")), invalid("extra_payments")),
        // --- batch ---
        c("batch: a bad line in the middle fails alone", Req::Post(BATCH, "application/x-ndjson", {
            let mut b = ndjson(&[job(1, "loan_schedule", good_loan()), job(2, "loan_schedule", json!({"principal": "abc", "annual_rate_percent": "6", "term_months": 12}))]);
            b.extend_from_slice(b"{not json\n");
            b.extend(ndjson(&[job(4, "no_such_job", json!({})), job(5, "apy", json!({"principal": "1000", "interest": "61.68", "days": 365}))]));
            b
        }), Want::Batch(vec![None, Some(("invalid-fields", Some("/principal"))), Some(("malformed-json", None)), Some(("invalid-fields", Some("/job"))), None])),
        c("batch: a line of 10 MB fails alone, dropped as it arrives", Req::Post(BATCH, "application/x-ndjson", {
            let mut b = ndjson(&[job(1, "loan_schedule", good_loan())]);
            b.extend(big_batch_line);
            b.extend(ndjson(&[job(3, "loan_schedule", good_loan())]));
            b
        }), Want::Batch(vec![None, Some(("too-large", None)), None])),
        c("batch: as application/json", Req::Post(BATCH, "application/json", b"{}".to_vec()), Want::Problem(415, "unsupported-media-type", None)),
        // --- pages ---
        c("page /loan: a non-number", get("/loan?principal=abc&annual_rate_percent=6&term_months=120"), Want::Page(Some("principal"))),
        c("page /loan: full-width digits", get("/loan?principal=%EF%BC%91%EF%BC%92%EF%BC%93&annual_rate_percent=6&term_months=120"), Want::Page(Some("principal"))),
        c("page /loan: 1e400", get("/loan?principal=1e400&annual_rate_percent=6&term_months=120"), Want::Page(Some("principal"))),
        c("page /loan: a term of 6001", get("/loan?principal=100000&annual_rate_percent=6&term_months=6001"), Want::Page(Some("term_months"))),
        c("page /loan: 2027-02-30", get("/loan?principal=100000&annual_rate_percent=6&term_months=12&first_payment_date=2027-02-30"), Want::Page(Some("first_payment_date"))),
        c("page /loan: a decimal comma in the rate (not 65 %)", get("/loan?principal=250000&annual_rate_percent=6,5&term_months=12"), Want::Page(Some("annual_rate_percent"))),
        c("page /loan: a comma that groups no thousands", get("/loan?principal=1,5&annual_rate_percent=6&term_months=12"), Want::Page(Some("principal"))),
        c("page /savings: a decimal comma in the rate", get("/savings?deposit=350&annual_rate_percent=4,25&term_months=96"), Want::Page(Some("annual_rate_percent"))),
        c("page /check: a decimal comma in the quoted APR", get("/check?principal=100000&annual_rate_percent=6&term_months=360&quoted_apr_percent=6,17"), Want::Page(Some("quoted_apr_percent"))),
        c("page /loan: a repeated field", get("/loan?principal=1&principal=2&annual_rate_percent=6&term_months=12"), Want::Page(Some("principal"))),
        c("page /loan: bad percent-encoding", get("/loan?principal=%FF"), Want::Page(None)),
        c("page /loan: a 100 KB value", get(format!("/loan?principal={}&annual_rate_percent=6&term_months=12", "9".repeat(100 * 1024))), Want::Status(414)),
        c("page /loan: a 10 KB value", get(format!("/loan?principal={}&annual_rate_percent=6&term_months=12", "9".repeat(10 * 1024))), Want::Page(Some("principal"))),
        c("page /loan: a control character", get("/loan?principal=100%00000&annual_rate_percent=6&term_months=12"), Want::Page(Some("principal"))),
        c("page /compare: a term list with a non-number", get("/compare?principal=278000&annual_rate_percent=6.375&term_months=180,abc"), Want::Page(Some("term_months"))),
        c("page /check: NaN", get("/check?principal=100000&annual_rate_percent=NaN&term_months=360"), Want::Page(Some("annual_rate_percent"))),
        c("page /check: a rate of 1000.0001", get("/check?principal=100000&annual_rate_percent=1000.0001&term_months=360"), Want::Page(Some("annual_rate_percent"))),
        c("page /savings: a term of 0", get("/savings?deposit=350&annual_rate_percent=4.1&term_months=0"), Want::Page(Some("term_months"))),
        c("page /savings: Arabic-Indic digits", get("/savings?deposit=%D9%A3%D9%A5%D9%A0&annual_rate_percent=4.1&term_months=96"), Want::Page(Some("deposit"))),
        // --- static files ---
        c("static: ../Cargo.toml", get("/static/../Cargo.toml"), Want::Problem(404, "not-found", None)),
        c("static: %2e%2e/Cargo.toml", get("/static/%2e%2e/Cargo.toml"), Want::Problem(404, "not-found", None)),
        c("static: ..%2fCargo.toml", get("/static/..%2fCargo.toml"), Want::Problem(404, "not-found", None)),
        c("static: ..%2f..%2fsrc%2fmain.rs", get("/static/..%2f..%2fsrc%2fmain.rs"), Want::Problem(404, "not-found", None)),
        c("static: %252e%252e", get("/static/%252e%252e/Cargo.toml"), Want::Problem(404, "not-found", None)),
    ]
}

trait CloneProblem {
    fn clone_problem(&self) -> Want;
}

impl CloneProblem for Want {
    fn clone_problem(&self) -> Want {
        match self {
            Want::Problem(s, slug, p) => Want::Problem(*s, slug, *p),
            _ => unreachable!("only problems are cloned"),
        }
    }
}

/// Sends a request on its own connection, tolerating a server that answers
/// (and closes) before it has read the whole body.
fn send(app: &TestApp, req: &Req) -> Response {
    let bytes = match req {
        Req::Post(path, ct, body) => {
            let mut b = format!(
                "POST {path} HTTP/1.1\r\nHost: {}\r\nConnection: close\r\nContent-Type: {ct}\r\nContent-Length: {}\r\n\r\n",
                app.addr,
                body.len()
            )
            .into_bytes();
            b.extend_from_slice(body);
            b
        }
        Req::Get(pq) => format!(
            "GET {pq} HTTP/1.1\r\nHost: {}\r\nConnection: close\r\n\r\n",
            app.addr
        )
        .into_bytes(),
    };
    let mut s = TcpStream::connect(app.addr).expect("the server accepts");
    s.set_read_timeout(Some(Duration::from_secs(30))).unwrap();
    s.set_write_timeout(Some(Duration::from_secs(30))).unwrap();
    // A refused body may be cut short by the server: what matters is its answer.
    let _ = s.write_all(&bytes);
    read_to_end(&mut s)
}

fn read_to_end(s: &mut TcpStream) -> Response {
    let mut raw = Vec::new();
    let mut buf = [0u8; 64 * 1024];
    loop {
        match s.read(&mut buf) {
            Ok(0) => break,
            Ok(n) => raw.extend_from_slice(&buf[..n]),
            Err(e) if e.kind() == ErrorKind::Interrupted => {}
            Err(e) if !raw.is_empty() && e.kind() == ErrorKind::ConnectionReset => break,
            Err(e) => panic!("reading the answer failed: {e}"),
        }
    }
    parse_response(&raw)
}

/// Checks one answer against its expectation; returns what is wrong, if anything.
fn check(case: &Case, r: &Response) -> Result<(), String> {
    let body = String::from_utf8_lossy(&r.body);
    if r.status >= 500 {
        return Err(format!("a server error {}: {body:.300}", r.status));
    }
    for leak in LEAKS {
        if body.contains(leak) {
            return Err(format!("the answer contains {leak:?}: {body:.300}"));
        }
    }
    match &case.want {
        Want::Ok => {
            if r.status != 200 {
                return Err(format!("expected 200, got {}: {body:.300}", r.status));
            }
        }
        Want::Problem(status, slug, pointer) => {
            if r.status != *status {
                return Err(format!("expected {status}, got {}: {body:.300}", r.status));
            }
            if r.header("content-type") != Some("application/problem+json") {
                return Err(format!("not problem+json: {:?}", r.header("content-type")));
            }
            let p: Value =
                serde_json::from_slice(&r.body).map_err(|e| format!("{e}: {body:.300}"))?;
            check_problem(&p, *status, slug, *pointer)?;
        }
        Want::Status(status) => {
            if r.status != *status {
                return Err(format!("expected {status}, got {}: {body:.300}", r.status));
            }
        }
        Want::Page(field) => {
            if r.media_type() != "text/html" {
                return Err(format!("a page is HTML, got {:?}", r.media_type()));
            }
            // The form page itself answers, with the problem's status.
            if !(400..500).contains(&r.status) {
                return Err(format!(
                    "a page refusing its query answers 4xx, got {}",
                    r.status
                ));
            }
            if let Some(f) = field {
                let marker = format!("id=\"e-{f}\"");
                if !body.contains(&marker) {
                    return Err(format!("no error shown next to {f} ({marker})"));
                }
            }
        }
        Want::Batch(lines) => {
            if r.status != 200 || r.media_type() != "application/x-ndjson" {
                return Err(format!(
                    "expected 200 NDJSON, got {} {:?}",
                    r.status,
                    r.media_type()
                ));
            }
            let got: Vec<Value> = body
                .lines()
                .map(|l| serde_json::from_str(l).map_err(|e| format!("{e}: {l:.200}")))
                .collect::<Result<_, _>>()?;
            if got.len() != lines.len() {
                return Err(format!(
                    "expected {} answer lines, got {}: {body:.600}",
                    lines.len(),
                    got.len()
                ));
            }
            for (i, (want, line)) in lines.iter().zip(&got).enumerate() {
                match want {
                    None if line["ok"] == true => {}
                    None => return Err(format!("line {}: expected ok, got {line}", i + 1)),
                    Some((slug, pointer)) => {
                        if line["ok"] != false {
                            return Err(format!("line {}: expected a problem, got {line}", i + 1));
                        }
                        let p = &line["problem"];
                        let status = p["status"].as_u64().unwrap_or(0) as u16;
                        check_problem(p, status, slug, *pointer)
                            .map_err(|e| format!("line {}: {e}", i + 1))?;
                    }
                }
            }
        }
    }
    Ok(())
}

fn check_problem(p: &Value, status: u16, slug: &str, pointer: Option<&str>) -> Result<(), String> {
    if p["type"] != format!("/api#problem-{slug}") {
        return Err(format!("expected type {slug}, got {}", p["type"]));
    }
    if p["status"] != status || p["title"].as_str().is_none_or(str::is_empty) {
        return Err(format!("a problem has its status and a title: {p}"));
    }
    if let Some(ptr) = pointer {
        let found = pointers(p);
        if !found.iter().any(|f| f == ptr) {
            return Err(format!("expected pointer {ptr:?}, got {found:?}"));
        }
    }
    Ok(())
}

#[test]
fn every_catalogued_bad_input_gets_its_status_problem_and_pointer_and_the_server_stays_healthy() {
    // Arrange
    let app = spawn_app();
    let cases = cases();
    assert!(cases.len() >= 60, "the catalogue has {} cases", cases.len());
    let mut failures = Vec::new();

    // Act
    for case in &cases {
        let r = send(&app, &case.req);
        if let Err(e) = check(case, &r) {
            failures.push(format!("{}: {e}", case.name));
        }
        let h = app.get("/healthz");
        if h.status != 200 {
            failures.push(format!(
                "{}: /healthz answered {} afterwards",
                case.name, h.status
            ));
        }
    }

    // Assert
    assert!(
        failures.is_empty(),
        "{} of {} cases failed:\n{}",
        failures.len(),
        cases.len(),
        failures.join("\n")
    );
}

#[test]
fn an_extra_payment_after_payoff_is_answered_200_with_one_more_note() {
    // Arrange
    let app = shared_app();

    // Act
    let plain = app.post(SCHEDULE, "application/json", &loan(json!({})));
    let late = app.post(
        SCHEDULE,
        "application/json",
        &loan(json!({"extra_payments": [{"amount": "100", "at": 500}]})),
    );

    // Assert
    assert_eq!(plain.status, 200);
    assert_eq!(late.status, 200, "{}", late.text());
    let (plain, late) = (plain.json(), late.json());
    for k in [
        "payment",
        "number_of_payments",
        "total_paid",
        "total_interest",
    ] {
        assert_eq!(
            plain["summary"][k], late["summary"][k],
            "the extra changes no {k}"
        );
    }
    let notes = |v: &Value| v["notes"].as_array().cloned().unwrap_or_default();
    let (plain_notes, late_notes) = (notes(&plain), notes(&late));
    assert!(
        late_notes.iter().any(|n| !plain_notes.contains(n)),
        "a note says the extra is ignored: {late_notes:?}"
    );
    assert_still_healthy(&app);
}

// ---------------------------------------------------------------------------
// Slow clients: a small request timeout, and the server keeps serving others.
// ---------------------------------------------------------------------------

fn app_with_timeout(secs: u64) -> TestApp {
    spawn_app_with(Config {
        request_timeout: Duration::from_secs(secs),
        header_read_timeout: Duration::from_secs(secs),
        ..Config::default()
    })
}

/// Opens a connection and sends only the head of a JSON POST declaring `length` bytes.
fn open_post(app: &TestApp, path: &str, ct: &str, length: usize) -> TcpStream {
    let mut s = TcpStream::connect(app.addr).expect("the server accepts");
    s.set_read_timeout(Some(Duration::from_secs(20))).unwrap();
    let head = format!(
        "POST {path} HTTP/1.1\r\nHost: {}\r\nConnection: close\r\nContent-Type: {ct}\r\nContent-Length: {length}\r\n\r\n",
        app.addr
    );
    s.write_all(head.as_bytes()).expect("the head is sent");
    s
}

/// Asserts a 408 body-timeout problem: the client's pause, so no Retry-After.
fn assert_body_timeout(r: &Response) {
    assert_eq!(r.status, 408, "{}", String::from_utf8_lossy(&r.body));
    let p: Value = serde_json::from_slice(&r.body).unwrap();
    assert_eq!(p["type"], "/api#problem-body-timeout");
    assert!(
        r.header("retry-after").is_none(),
        "the client's pause, not the server's load"
    );
}

/// Asserts other requests are answered promptly while a slow client is connected.
fn assert_others_answered(app: &TestApp) {
    let started = Instant::now();
    assert_still_healthy(app);
    let r = app.post(SCHEDULE, "application/json", &loan(json!({})));
    assert_eq!(r.status, 200);
    assert!(
        started.elapsed() < Duration::from_secs(2),
        "others waited {:?} behind a slow client",
        started.elapsed()
    );
}

#[test]
fn a_client_that_stalls_mid_body_is_answered_408_within_the_timeout() {
    // Arrange
    let app = app_with_timeout(1);
    let mut slow = open_post(&app, SCHEDULE, "application/json", 100);
    slow.write_all(b"{\"principal\":").unwrap();
    let started = Instant::now();

    // Act
    assert_others_answered(&app);
    let r = read_to_end(&mut slow);

    // Assert
    assert!(
        started.elapsed() < Duration::from_secs(5),
        "answered after {:?}",
        started.elapsed()
    );
    assert_body_timeout(&r);
    assert_still_healthy(&app);
}

#[test]
fn a_client_that_trickles_its_body_is_cut_off_at_the_timeout() {
    // Arrange
    let app = app_with_timeout(1);
    let body = loan(json!({}));
    let mut slow = open_post(&app, SCHEDULE, "application/json", body.len());
    let started = Instant::now();

    // Act: one byte every 100 ms, about 8 s for the whole body, far past the timeout.
    let mut answered_early = false;
    for b in &body {
        if slow.write_all(&[*b]).is_err() {
            answered_early = true;
            break;
        }
        std::thread::sleep(Duration::from_millis(100));
        if started.elapsed() > Duration::from_secs(3) {
            break;
        }
    }
    assert_others_answered(&app);
    let r = read_to_end(&mut slow);

    // Assert
    assert!(
        started.elapsed() < Duration::from_secs(6),
        "answered after {:?} (write refused early: {answered_early})",
        started.elapsed()
    );
    assert_body_timeout(&r);
    assert_still_healthy(&app);
}

#[test]
fn many_stalled_clients_do_not_hold_the_in_flight_permits_past_the_timeout() {
    // Arrange: every permit taken by a stalled body.
    let app = spawn_app_with(Config {
        request_timeout: Duration::from_secs(1),
        max_in_flight: 2,
        ..Config::default()
    });
    let mut stalled: Vec<TcpStream> = (0..4)
        .map(|_| {
            let mut s = open_post(&app, SCHEDULE, "application/json", 100);
            s.write_all(b"{").unwrap();
            s
        })
        .collect();

    // Act
    let answers: Vec<Response> = stalled.iter_mut().map(read_to_end).collect();
    let after = app.post(SCHEDULE, "application/json", &loan(json!({})));

    // Assert
    let statuses: Vec<u16> = answers.iter().map(|r| r.status).collect();
    for r in &answers {
        let p: Value = serde_json::from_slice(&r.body).unwrap();
        match r.status {
            503 => {
                assert_eq!(p["type"], "/api#problem-overloaded");
                assert!(r.header("retry-after").is_some());
            }
            408 => assert_eq!(p["type"], "/api#problem-body-timeout"),
            other => panic!("a stalled client got {other}: {statuses:?}"),
        }
    }
    assert_eq!(
        statuses.iter().filter(|s| **s == 408).count(),
        2,
        "the two holding a permit wait out the timeout: {statuses:?}"
    );
    assert_eq!(
        after.status, 200,
        "permits are free again after the timeout"
    );
}

#[test]
fn a_client_that_stalls_in_its_headers_does_not_block_others() {
    // Arrange
    let app = app_with_timeout(1);
    let mut slow = TcpStream::connect(app.addr).unwrap();
    slow.write_all(b"POST /api/v1/loans/schedule HTTP/1.1\r\nHost: x\r\n")
        .unwrap();

    // Act and assert
    assert_others_answered(&app);
    drop(slow);
    assert_still_healthy(&app);
}

/// Slowloris: a client that never finishes its headers is disconnected once the
/// header read timeout (1 s here) has passed.
#[test]
fn a_client_that_stalls_in_its_headers_is_closed_within_a_bounded_time() {
    let app = app_with_timeout(1);
    let mut slow = TcpStream::connect(app.addr).unwrap();
    slow.set_read_timeout(Some(Duration::from_secs(40)))
        .unwrap();
    slow.write_all(b"GET /healthz HTTP/1.1\r\nHost: x\r\n")
        .unwrap();
    let started = Instant::now();
    let mut buf = [0u8; 256];
    let closed = slow.read(&mut buf).is_ok();
    assert!(
        closed && started.elapsed() < Duration::from_secs(35),
        "the stalled connection is still open after {:?}",
        started.elapsed()
    );
}

#[test]
fn a_connection_that_sends_nothing_is_closed_within_a_bounded_time() {
    let app = app_with_timeout(1);
    let mut idle = TcpStream::connect(app.addr).unwrap();
    idle.set_read_timeout(Some(Duration::from_secs(20)))
        .unwrap();
    let started = Instant::now();
    let mut buf = [0u8; 256];
    let outcome = idle.read(&mut buf);
    assert!(
        outcome.is_ok() && started.elapsed() < Duration::from_secs(10),
        "the idle connection is still open after {:?} ({outcome:?})",
        started.elapsed()
    );
    assert_still_healthy(&app);
}

#[test]
fn stalled_batch_uploads_end_with_a_body_timeout_line_and_free_the_batch_permits() {
    // Arrange: two batches (the most that run at once) stall after one line.
    let app = app_with_timeout(1);
    let first = ndjson(&[job(1, "loan_schedule", good_loan())]);
    let mut stalled: Vec<TcpStream> = (0..2)
        .map(|_| {
            let mut s = open_post(&app, BATCH, "application/x-ndjson", 10_000);
            s.write_all(&first).unwrap();
            s
        })
        .collect();
    let started = Instant::now();

    // Act
    let answers: Vec<Response> = stalled.iter_mut().map(read_to_end).collect();
    let after = app.post(BATCH, "application/x-ndjson", &first);

    // Assert
    assert!(
        started.elapsed() < Duration::from_secs(5),
        "the stalled batches ended after {:?}",
        started.elapsed()
    );
    for r in &answers {
        let lines: Vec<Value> = r
            .text()
            .lines()
            .map(|l| serde_json::from_str(l).expect("an NDJSON line"))
            .collect();
        assert_eq!(
            lines.len(),
            2,
            "the answered line, then the closing problem"
        );
        assert_eq!(lines[0]["ok"], true);
        assert_eq!(lines[1]["problem"]["type"], "/api#problem-body-timeout");
    }
    assert_eq!(after.status, 200, "a new batch runs: {}", after.text());
    assert_eq!(after.text().lines().count(), 1);
}
