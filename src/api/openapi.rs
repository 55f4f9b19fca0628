//! The OpenAPI 3.1 document of the API, served at `GET /api/openapi.json`.
//!
//! Generated from the code's own types so that it cannot drift:
//!
//! - every answer's schema is derived (`utoipa::ToSchema`) from the DTO the
//!   handler serializes (`LoanScheduleDto`, `CheckAnswer`, `Problem`, …);
//! - every request's schema is generated from its field table
//!   ([`crate::input::table`]), the table its reader reads by; unit tests hold
//!   the document to the tables and every table's fields to their readers;
//! - the operations are the table [`OPERATIONS`]; a black-box test compares it
//!   with the routes of `src/server.rs`;
//! - each operation's request example is in the table, and its answer example
//!   is computed once, at the first request of the document, by sending that
//!   example to the application itself: the examples are real answers.
//!
//! GET operations take the same fields as query parameters (derived from the
//! JSON request schema: lists in their compact query syntax).

use axum::body::Body;
use axum::http::{header, Request};
use axum::response::{IntoResponse, Response};
use axum::Router;
use serde_json::{json, Map, Value};
use utoipa::{OpenApi, ToSchema};

/// One answer line of a batch, in the order of the request's lines.
#[derive(ToSchema)]
#[allow(dead_code)]
pub struct BatchAnswerLine {
    #[schema(value_type = Value)]
    pub id: Option<serde_json::Value>,
    pub ok: bool,
    /// With `ok: true`: the job's answer (for `summary`, its summary and notes).
    #[schema(value_type = Option<Object>)]
    pub result: Option<serde_json::Value>,
    /// With `ok: false`: what went wrong, pointers relative to the line's `request`.
    pub problem: Option<crate::input::problem::Problem>,
}

/// The answer of `GET /healthz`.
#[derive(ToSchema)]
#[allow(dead_code)]
pub struct Health {
    #[schema(example = "ok")]
    pub status: String,
}

#[derive(OpenApi)]
#[openapi(
    info(
        title = "Residue",
        description = "Loan and savings schedules solved in closed form from their z-domain partial fractions, posted to the cent. Money goes out as strings with the currency's minor units; rates are percent per year; dates ISO 8601; errors RFC 9457 problem details. Every figure is an estimate for discussion, not an offer, a disclosure or advice."
    ),
    components(schemas(
        BatchAnswerLine,
        Health,
        super::loans::LoanScheduleDto,
        crate::answer::compare::CompareDto,
        crate::answer::check::CheckAnswer,
        super::apr::AprAnswer,
        super::apy::ApyAnswer,
        super::recurrence::RecurrenceAnswer,
        crate::answer::savings::SavingsPlanDto,
        crate::answer::refinance::RefinanceDto,
        crate::answer::points::OptionsDto,
        crate::answer::grid::GridDto,
        crate::input::problem::Problem,
    ))
)]
struct ApiDoc;

/// What an operation answers with 200.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Answer {
    /// `application/json` with this schema.
    Json(&'static str),
    /// `application/json` with this schema, or `text/csv` (`Accept: text/csv`).
    JsonOrCsv(&'static str),
    /// `text/csv` only.
    Csv,
    /// `application/x-ndjson`, one [`BatchAnswerLine`] a line.
    Ndjson,
    /// A file's verdicts: `text/csv` (default) or `application/x-ndjson`.
    Verdicts,
    /// Prometheus text.
    Prometheus,
    /// The OpenAPI document.
    OpenApi,
}

/// The example request of an operation.
#[derive(Debug, Clone, Copy)]
pub enum Example {
    None,
    /// A query string (without `?`).
    Query(&'static str),
    /// A JSON body.
    Body(fn() -> Value),
    /// NDJSON lines.
    Ndjson(&'static str),
    /// A CSV file.
    Csv(&'static str),
}

/// One operation of the API.
#[derive(Debug, Clone, Copy)]
pub struct Operation {
    pub method: &'static str,
    pub path: &'static str,
    pub id: &'static str,
    pub summary: &'static str,
    /// The schema of the JSON body (POST) or of the query parameters (GET).
    pub request: Option<&'static str>,
    pub answer: Answer,
    pub example: Example,
}

const SCHEDULE_QUERY: &str = "principal=100000&annual_rate_percent=6&term_months=12";
const CHECK_QUERY: &str = "principal=100000&annual_rate_percent=6&term_months=360&quoted_payment=599.55&quoted_apr_percent=6.1&prepaid_finance_charges=points:1000&mortgage=true";
const SAVINGS_QUERY: &str = "annual_rate_percent=4&deposit=100&term_months=12";
const REFINANCE_QUERY: &str = "current.balance=187500&current.annual_rate_percent=7.25&current.remaining_payments=312&annual_rate_percent=6.125&term_months=360&closing_costs=3200&points_percent=1";
const OPTIONS_QUERY: &str = "principal=200000&term_months=360&option_label=No%20points&option_rate_percent=6.75&option_points_percent=0&option_other_costs=0&option_label=Two%20points&option_rate_percent=6.25&option_points_percent=2&option_other_costs=0";
const GRID_QUERY: &str = "principal=300000&rates=6.000..6.500/0.25&terms=180,360";

fn refinance_body() -> Value {
    json!({"current": {"balance": "187500", "annual_rate_percent": "7.25", "remaining_payments": 312},
           "new": {"annual_rate_percent": "6.125", "term_months": 360},
           "closing_costs": "3200", "points_percent": "1", "financed_costs": "0"})
}
fn options_body() -> Value {
    json!({"principal": "200000", "term_months": 360,
           "options": [{"label": "No points", "annual_rate_percent": "6.75"},
                       {"label": "Two points", "annual_rate_percent": "6.25", "points_percent": "2"}]})
}

fn schedule_body() -> Value {
    json!({"principal": "250000", "annual_rate_percent": "7.125", "term_months": 12,
           "first_payment_date": "2027-03-01", "extra_payments": [{"amount": "500", "at": 6}]})
}
fn compare_body() -> Value {
    json!({"base": {"principal": "278000", "annual_rate_percent": "6.375", "term_months": 360},
           "variants": [{"label": "15 years", "term_months": 180},
                        {"label": "extra 200", "extra_payments": [{"amount": "200", "from": 1}]}]})
}
fn check_body() -> Value {
    json!({"principal": "100000", "annual_rate_percent": "6", "term_months": 360,
           "quoted_payment": "599.55", "quoted_apr_percent": "6.1",
           "prepaid_finance_charges": [{"name": "points", "amount": "1000"}]})
}
fn apr_body() -> Value {
    json!({"advances": [{"amount": "5000", "date": "1978-01-10"}],
           "payments": [{"amount": "230", "count": 24, "first_date": "1978-02-10", "frequency": "monthly"}]})
}
fn apy_body() -> Value {
    json!({"principal": "1000", "interest": "30.37", "days": 182})
}
fn recurrence_body() -> Value {
    json!({"a": "1.005", "x0": "100000", "inputs": [{"kind": "step", "amount": "-599.55"}],
           "evaluate_at": [0, 12, 360]})
}
fn savings_body() -> Value {
    json!({"annual_rate_percent": "4", "goal": "10000", "term_months": 12, "start_date": "2027-01-01"})
}

const CHECKS_EXAMPLE: &str = "id,principal,annual_rate_percent,term_months,quoted_payment,quoted_apr_percent,prepaid_finance_charges.origination\r\nWillowmere-17,100000,6,360,599.55,6.1,1000\r\nQuarry Lane 4,240000,6.5,360,1517.40,6.5,\r\n";

const BATCH_EXAMPLE: &str = concat!(
    r#"{"id": 1, "job": "loan_check", "request": {"principal": "100000", "annual_rate_percent": "6", "term_months": 360, "quoted_payment": "599.55"}}"#,
    "\n",
    r#"{"id": "b", "job": "apy", "request": {"annual_rate_percent": "5", "compounding": "daily"}}"#,
    "\n",
);

/// Every operation the API serves, in the order of the guide.
pub const OPERATIONS: &[Operation] = &[
    Operation {
        method: "post",
        path: "/api/v1/loans/schedule",
        id: "schedule_post",
        summary: "A level-payment loan (and its plan options): the payment or the term, the posted schedule, the derivation (at most 600 segments listed, the first 24 with their derivation; a plan's size weighs on the in-flight limit: 503 with Retry-After when it cannot run now)",
        request: Some("LoanScheduleRequest"),
        answer: Answer::JsonOrCsv("LoanScheduleDto"),
        example: Example::Body(schedule_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/schedule",
        id: "schedule_get",
        summary: "The loan schedule from query parameters",
        request: Some("LoanScheduleRequest"),
        answer: Answer::JsonOrCsv("LoanScheduleDto"),
        example: Example::Query(SCHEDULE_QUERY),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/schedule.csv",
        id: "schedule_get_csv",
        summary: "The loan schedule as CSV (RFC 4180, header row, plain decimals)",
        request: Some("LoanScheduleRequest"),
        answer: Answer::Csv,
        example: Example::Query(SCHEDULE_QUERY),
    },
    Operation {
        method: "post",
        path: "/api/v1/loans/compare",
        id: "compare_post",
        summary: "A base loan and up to three variants, one row each",
        request: Some("CompareRequest"),
        answer: Answer::JsonOrCsv("CompareDto"),
        example: Example::Body(compare_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/compare",
        id: "compare_get",
        summary: "A quick comparison: one field lists several values (comma-separated or repeated), one plan each",
        request: Some("LoanScheduleRequest"),
        answer: Answer::JsonOrCsv("CompareDto"),
        example: Example::Query("principal=278000&annual_rate_percent=6.375&term_months=180,240,360"),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/compare.csv",
        id: "compare_get_csv",
        summary: "The comparison as CSV",
        request: Some("LoanScheduleRequest"),
        answer: Answer::Csv,
        example: Example::Query("principal=278000&annual_rate_percent=6.375&term_months=180,240,360"),
    },
    Operation {
        method: "post",
        path: "/api/v1/refinance",
        id: "refinance_post",
        summary: "Does refinancing pay, and when: both payments, the simple and the balance-aware break-even, each way's cost at 5, 7 and 10 years, a chosen horizon and to the end, and \"In 5 years\" (§1026.37(l)(1))",
        request: Some("RefinanceRequest"),
        answer: Answer::JsonOrCsv("RefinanceDto"),
        example: Example::Body(refinance_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/refinance",
        id: "refinance_get",
        summary: "The refinance from query parameters (the current loan's fields as current.NAME)",
        request: Some("RefinanceQuery"),
        answer: Answer::JsonOrCsv("RefinanceDto"),
        example: Example::Query(REFINANCE_QUERY),
    },
    Operation {
        method: "get",
        path: "/api/v1/refinance.csv",
        id: "refinance_get_csv",
        summary: "The refinance as CSV, one row a figure",
        request: Some("RefinanceQuery"),
        answer: Answer::Csv,
        example: Example::Query(REFINANCE_QUERY),
    },
    Operation {
        method: "post",
        path: "/api/v1/loans/options",
        id: "options_post",
        summary: "Is it worth paying points: one loan at two to six rate-and-points options, each with its payment, upfront cost, break-evens against the first, and costs at each horizon; the cheapest at each",
        request: Some("RateOptionsRequest"),
        answer: Answer::JsonOrCsv("OptionsDto"),
        example: Example::Body(options_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/options",
        id: "options_get",
        summary: "The rate-and-points options from query parameters (each option's fields repeated in order)",
        request: Some("RateOptionsQuery"),
        answer: Answer::JsonOrCsv("OptionsDto"),
        example: Example::Query(OPTIONS_QUERY),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/options.csv",
        id: "options_get_csv",
        summary: "The rate-and-points options as CSV, one row an option",
        request: Some("RateOptionsQuery"),
        answer: Answer::Csv,
        example: Example::Query(OPTIONS_QUERY),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/grid",
        id: "grid_get",
        summary: "A payment grid: the payment and the payment per 1,000 at every principal, rate and term (at most 2,000 cells)",
        request: Some("PaymentGridRequest"),
        answer: Answer::JsonOrCsv("GridDto"),
        example: Example::Query(GRID_QUERY),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/grid.csv",
        id: "grid_get_csv",
        summary: "The payment grid as CSV, one row a cell",
        request: Some("PaymentGridRequest"),
        answer: Answer::Csv,
        example: Example::Query(GRID_QUERY),
    },
    Operation {
        method: "post",
        path: "/api/v1/loans/check",
        id: "check_post",
        summary: "A quoted payment, APR and finance charge checked against the posted loan, with its disclosure figures",
        request: Some("LoanCheckRequest"),
        answer: Answer::Json("CheckAnswer"),
        example: Example::Body(check_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/loans/check",
        id: "check_get",
        summary: "The loan check from query parameters",
        request: Some("LoanCheckRequest"),
        answer: Answer::Json("CheckAnswer"),
        example: Example::Query(CHECK_QUERY),
    },
    Operation {
        method: "post",
        path: "/api/v1/apr",
        id: "apr_post",
        summary: "The APR of any stream of advances and payments (Regulation Z Appendix J, or the EU APRC)",
        request: Some("AprRequest"),
        answer: Answer::Json("AprAnswer"),
        example: Example::Body(apr_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/apr",
        id: "apr_get",
        summary: "The APR from query parameters (flows in their compact syntax)",
        request: Some("AprQuery"),
        answer: Answer::Json("AprAnswer"),
        example: Example::Query("advance=5000@1978-01-10&payment=230x24@1978-02-10/monthly"),
    },
    Operation {
        method: "post",
        path: "/api/v1/apy",
        id: "apy_post",
        summary: "The annual percentage yield (Regulation DD, 12 CFR 1030 Appendix A)",
        request: Some("ApyRequest"),
        answer: Answer::Json("ApyAnswer"),
        example: Example::Body(apy_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/apy",
        id: "apy_get",
        summary: "The APY from query parameters",
        request: Some("ApyRequest"),
        answer: Answer::Json("ApyAnswer"),
        example: Example::Query("annual_rate_percent=5&compounding=daily"),
    },
    Operation {
        method: "post",
        path: "/api/v1/savings/plan",
        id: "savings_post",
        summary: "A savings or drawdown plan: the balance, the deposit, the number of periods or the withdrawal",
        request: Some("SavingsPlanRequest"),
        answer: Answer::JsonOrCsv("SavingsPlanDto"),
        example: Example::Body(savings_body),
    },
    Operation {
        method: "get",
        path: "/api/v1/savings/plan",
        id: "savings_get",
        summary: "The savings plan from query parameters",
        request: Some("SavingsPlanRequest"),
        answer: Answer::JsonOrCsv("SavingsPlanDto"),
        example: Example::Query(SAVINGS_QUERY),
    },
    Operation {
        method: "get",
        path: "/api/v1/savings/plan.csv",
        id: "savings_get_csv",
        summary: "The savings plan's schedule as CSV",
        request: Some("SavingsPlanRequest"),
        answer: Answer::Csv,
        example: Example::Query(SAVINGS_QUERY),
    },
    Operation {
        method: "post",
        path: "/api/v1/recurrence",
        id: "recurrence_post",
        summary: "Any first-order recurrence x[k+1] = a·x[k] + f[k], solved through the z-transform and evaluated",
        request: Some("RecurrenceRequest"),
        answer: Answer::Json("RecurrenceAnswer"),
        example: Example::Body(recurrence_body),
    },
    Operation {
        method: "post",
        path: "/api/v1/batch",
        id: "batch_post",
        summary: "Many jobs at once: NDJSON in (one BatchLine a line), NDJSON out in the same order (one BatchAnswerLine a line). Limits: 100,000 lines of at most 64 KiB; 512 MiB of answers and 300 s of computing a batch (later lines get a problem line naming the limit); two batches at once",
        request: Some("BatchLine"),
        answer: Answer::Ndjson,
        example: Example::Ndjson(BATCH_EXAMPLE),
    },
    Operation {
        method: "post",
        path: "/api/v1/loans/checks",
        id: "checks_post",
        summary: "A whole file of quotes checked: CSV in (RFC 4180, UTF-8, comma or semicolon separated; a header of `id` and the LoanCheckRequest fields, as in the check's query string, plus `prepaid_finance_charges.NAME` columns; an empty cell is a field not given), one verdict a row out in order, as CSV (default) or NDJSON (`Accept: application/x-ndjson`). Unknown columns are refused up front (422). Limits: 100,000 rows, 32 MiB, 120 s of computing (an answer cut short ends with a row saying how many rows were answered). The header residue-rows gives the count of rows; nothing is stored",
        request: Some("LoanCheckRequest"),
        answer: Answer::Verdicts,
        example: Example::Csv(CHECKS_EXAMPLE),
    },
    Operation {
        method: "get",
        path: "/api/openapi.json",
        id: "openapi",
        summary: "This document",
        request: None,
        answer: Answer::OpenApi,
        example: Example::None,
    },
    Operation {
        method: "get",
        path: "/healthz",
        id: "healthz",
        summary: "Health: 200 while the process runs, until it exits",
        request: None,
        answer: Answer::Json("Health"),
        example: Example::None,
    },
    Operation {
        method: "get",
        path: "/readyz",
        id: "readyz",
        summary: "Readiness: 200 while new work is taken; 503 from the moment a shutdown signal arrives (the requests in flight still finish)",
        request: None,
        answer: Answer::Json("Health"),
        example: Example::None,
    },
    Operation {
        method: "get",
        path: "/metrics",
        id: "metrics",
        summary: "Prometheus metrics (requests and latencies per route, batch lines, problems by type)",
        request: None,
        answer: Answer::Prometheus,
        example: Example::None,
    },
];

/// True when the query-string field takes several values (repeated or
/// comma-separated): a list in its field table.
fn is_list_parameter(schema: &str, field: &str) -> bool {
    crate::input::tables()
        .iter()
        .filter(|t| t.schema == schema)
        .filter_map(|t| t.field(field))
        .any(|f| matches!(f.kind, crate::input::table::Kind::List { .. }))
}

/// The query parameters a request spells out of a JSON object or list: the
/// refinance's current loan (`current.NAME`) and the options' repeated fields.
fn expanded_parameters(request: &str, example: &[(String, String)]) -> Vec<Value> {
    let fields: Vec<(String, &crate::input::table::Field, bool)> = match request {
        "RefinanceQuery" => crate::input::refinance::CURRENT_FIELDS
            .iter()
            .map(|f| {
                (
                    format!("{}{}", crate::input::refinance::CURRENT_PREFIX, f.name),
                    f,
                    false,
                )
            })
            .collect(),
        "RateOptionsQuery" => crate::input::points::QUERY_NAMES
            .iter()
            .zip(crate::input::points::OPTION_FIELDS)
            .map(|(n, f)| ((*n).to_string(), f, true))
            .collect(),
        _ => vec![],
    };
    fields
        .into_iter()
        .map(|(name, f, repeated)| {
            let mut schema = crate::input::table::field_schema(f);
            let description = schema.get("description").cloned();
            if let Some(m) = schema.as_object_mut() {
                m.remove("description");
            }
            if repeated {
                schema = json!({"type": "array", "items": schema});
            }
            let mut p = json!({"name": name, "in": "query", "required": false, "schema": schema});
            if let Some(d) = description {
                p["description"] = d;
            }
            if repeated {
                p["style"] = json!("form");
                p["explode"] = json!(true);
            }
            let values: Vec<&str> = example
                .iter()
                .filter(|(k, _)| *k == name)
                .map(|(_, v)| v.as_str())
                .collect();
            if repeated && !values.is_empty() {
                p["example"] = json!(values);
            } else if let [one] = values.as_slice() {
                p["example"] = json!(one);
            }
            p
        })
        .collect()
}

fn problem_response(description: &str) -> Value {
    json!({
        "description": description,
        "content": {"application/problem+json": {"schema": {"$ref": "#/components/schemas/Problem"}}}
    })
}

fn responses(op: &Operation) -> Value {
    let json_content =
        |schema: &str| json!({"schema": {"$ref": format!("#/components/schemas/{schema}")}});
    let csv_content = || json!({"schema": {"type": "string", "description": "RFC 4180: a header row, one row a period, plain decimal numbers, ISO 8601 dates, CRLF line ends"}});
    let content = match op.answer {
        Answer::Json(s) => json!({"application/json": json_content(s)}),
        Answer::JsonOrCsv(s) => {
            json!({"application/json": json_content(s), "text/csv": csv_content()})
        }
        Answer::Csv => json!({"text/csv": csv_content()}),
        Answer::Ndjson => json!({"application/x-ndjson": {
            "schema": {"type": "string", "description": "One BatchAnswerLine a line"},
            "x-line-schema": {"$ref": "#/components/schemas/BatchAnswerLine"}
        }}),
        Answer::Verdicts => json!({
            "text/csv": {"schema": {"type": "string", "description": format!("RFC 4180, CRLF line ends, a header row then one row a file row: {}. status is ok, differs or error; booleans true/false; empty where a figure does not apply; a text cell a spreadsheet would take for a formula starts with '", crate::api::checks::COLUMNS.join(", "))}},
            "application/x-ndjson": {"schema": {"type": "string", "description": "One object a file row, with the CSV's columns as members (figures as strings, booleans, null where a figure does not apply) and the caution"}}
        }),
        Answer::Prometheus => json!({"text/plain": {"schema": {"type": "string"}}}),
        Answer::OpenApi => json!({"application/json": {"schema": {"type": "object"}}}),
    };
    let mut ok = json!({"description": "The answer", "content": content});
    if matches!(
        op.answer,
        Answer::JsonOrCsv(_) | Answer::Csv | Answer::Verdicts
    ) {
        // A line of text in the file would be imported as a row of the table.
        ok["headers"] = json!({crate::api::handlers::CAUTION_HEADER: {
            "description": "With a CSV answer: the caution (estimates, not an offer, disclosure or advice) that a JSON answer leads its notes with",
            "schema": {"type": "string"}
        }});
    }
    let mut r = Map::new();
    r.insert("200".into(), ok);
    if op.request.is_some() {
        r.insert(
            "400".into(),
            problem_response(if op.method == "post" {
                "Malformed JSON (or NDJSON framing)"
            } else {
                "A query string that cannot be read"
            }),
        );
        if op.method == "post" {
            // A batch has answered 200 before its body ends: a stalled upload
            // ends its stream with a body-timeout line instead.
            if op.answer != Answer::Ndjson {
                r.insert(
                    "408".into(),
                    problem_response("The body did not arrive whole within the request timeout"),
                );
            }
            r.insert("413".into(), problem_response("The body is too large"));
            r.insert(
                "415".into(),
                problem_response("The body is not of the media type the operation takes"),
            );
        }
        if op.answer != Answer::Ndjson {
            r.insert(
                "422".into(),
                problem_response("Fields missing, unknown, out of range, or without a solution; errors[].pointer names each"),
            );
        }
    }
    r.insert(
        "404".into(),
        problem_response("No operation has this address"),
    );
    r.insert(
        "405".into(),
        problem_response("The method is not allowed here"),
    );
    let mut busy = problem_response("Too many requests in flight, or the request took too long");
    busy["headers"] =
        json!({"Retry-After": {"description": "Seconds to wait", "schema": {"type": "integer"}}});
    r.insert("503".into(), busy);
    Value::Object(r)
}

/// The query parameters of a GET operation, from the properties of its request schema.
fn parameters(op: &Operation, schemas: &Map<String, Value>) -> Vec<Value> {
    let Some(name) = op.request else {
        return vec![];
    };
    let Some(schema) = schemas.get(name) else {
        return vec![];
    };
    let required: Vec<&str> = schema["required"]
        .as_array()
        .map(|a| a.iter().filter_map(Value::as_str).collect())
        .unwrap_or_default();
    let example_pairs: Vec<(String, String)> = match op.example {
        Example::Query(q) => form_urlencoded::parse(q.as_bytes()).into_owned().collect(),
        _ => vec![],
    };
    let compare = op.path.starts_with("/api/v1/loans/compare");
    let mut out = Vec::new();
    for (field, property) in schema["properties"].as_object().into_iter().flatten() {
        let description = property["description"].clone();
        let is_list = is_list_parameter(name, field);
        let structured = property.get("type").is_some_and(|t| {
            t == "array"
                || t == "object"
                || t.as_array().is_some_and(|a| a.contains(&json!("array")))
        }) || property.get("oneOf").is_some() && property.get("$ref").is_none()
            || property.get("$ref").is_some();
        let mut schema = if is_list {
            json!({"type": "array", "items": {"type": "string"}})
        } else if structured || field == "unit_period" {
            json!({"type": "string"})
        } else {
            let mut p = property.clone();
            if let Some(m) = p.as_object_mut() {
                m.remove("description");
            }
            p
        };
        if compare && !is_list {
            schema = json!({"anyOf": [schema, {"type": "string", "description": "several values separated by commas, one plan each (one field at most)"}]});
        }
        let mut p = json!({
            "name": field,
            "in": "query",
            "required": required.contains(&field.as_str()),
            "schema": schema,
        });
        if !description.is_null() {
            p["description"] = description;
        }
        if is_list {
            p["style"] = json!("form");
            p["explode"] = json!(true);
        }
        let values: Vec<&str> = example_pairs
            .iter()
            .filter(|(k, _)| k == field)
            .map(|(_, v)| v.as_str())
            .collect();
        if let [one] = values.as_slice() {
            p["example"] = if is_list { json!([one]) } else { json!(one) };
        } else if !values.is_empty() {
            p["example"] = json!(values);
        }
        out.push(p);
    }
    out.extend(expanded_parameters(name, &example_pairs));
    out
}

/// The document without answer examples (they need the running application).
pub fn document() -> Value {
    let mut doc = serde_json::to_value(ApiDoc::openapi()).unwrap_or_default();
    let schemas = doc["components"]["schemas"]
        .as_object()
        .cloned()
        .unwrap_or_default();
    // The request schemas, from the field tables the readers read by.
    let mut schemas = schemas;
    if let Some(all) = doc["components"]["schemas"].as_object_mut() {
        for table in crate::input::tables() {
            let schema = crate::input::table::schema(table);
            all.insert(table.schema.to_string(), schema.clone());
            schemas.insert(table.schema.to_string(), schema);
        }
    }
    let mut paths = Map::new();
    for op in OPERATIONS {
        let mut o = json!({
            "operationId": op.id,
            "summary": op.summary,
            "responses": responses(op),
        });
        if op.method == "get" {
            let params = parameters(op, &schemas);
            if !params.is_empty() {
                o["parameters"] = Value::Array(params);
            }
        } else if let Some(schema) = op.request {
            let (media, mut content) = if op.answer == Answer::Verdicts {
                (
                    "text/csv",
                    json!({"schema": {"type": "string", "description": format!("RFC 4180: a header row of id and {schema} fields, then one row a quote")},
                           "x-row-schema": {"$ref": format!("#/components/schemas/{schema}")}}),
                )
            } else if op.answer == Answer::Ndjson {
                (
                    "application/x-ndjson",
                    json!({"schema": {"type": "string", "description": "One BatchLine a line"},
                           "x-line-schema": {"$ref": format!("#/components/schemas/{schema}")}}),
                )
            } else {
                (
                    "application/json",
                    json!({"schema": {"$ref": format!("#/components/schemas/{schema}")}}),
                )
            };
            match op.example {
                Example::Body(f) => content["example"] = f(),
                Example::Ndjson(text) | Example::Csv(text) => content["example"] = json!(text),
                _ => {}
            }
            o["requestBody"] = json!({"required": true, "content": {media: content}});
        }
        let item = paths
            .entry(op.path.to_string())
            .or_insert_with(|| json!({}));
        item[op.method] = o;
    }
    doc["paths"] = Value::Object(paths);
    doc
}

/// The example request of an operation as an HTTP request to the application.
fn example_request(op: &Operation, csv: bool) -> Option<Request<Body>> {
    let builder = Request::builder().method(op.method.to_ascii_uppercase().as_str());
    let builder = if csv {
        builder.header(header::ACCEPT, "text/csv")
    } else {
        builder
    };
    match op.example {
        Example::None if op.answer == Answer::OpenApi => None,
        Example::None => builder.uri(op.path).body(Body::empty()).ok(),
        Example::Query(q) => builder
            .uri(format!("{}?{q}", op.path))
            .body(Body::empty())
            .ok(),
        Example::Body(f) => builder
            .uri(op.path)
            .header(header::CONTENT_TYPE, "application/json")
            .body(Body::from(f().to_string()))
            .ok(),
        Example::Ndjson(text) => builder
            .uri(op.path)
            .header(header::CONTENT_TYPE, "application/x-ndjson")
            .body(Body::from(text))
            .ok(),
        Example::Csv(text) => builder
            .uri(op.path)
            .header(header::CONTENT_TYPE, "text/csv")
            .body(Body::from(text))
            .ok(),
    }
}

async fn answer_text(op: &Operation, csv: bool, app: &Router) -> Option<String> {
    use tower::ServiceExt;
    let request = example_request(op, csv)?;
    let response = app.clone().oneshot(request).await.ok()?;
    if !response.status().is_success() {
        tracing::warn!(
            operation = op.id,
            status = response.status().as_u16(),
            "an OpenAPI example does not answer 200"
        );
        return None;
    }
    let bytes = axum::body::to_bytes(response.into_body(), 16 * 1024 * 1024)
        .await
        .ok()?;
    String::from_utf8(bytes.to_vec()).ok()
}

/// The document with every operation's answer example, computed by the
/// application itself (`app`, handed in by the router that serves it).
pub async fn document_with_examples(app: Router) -> Value {
    let mut doc = document();
    for op in OPERATIONS {
        let content = &mut doc["paths"][op.path][op.method]["responses"]["200"]["content"];
        match op.answer {
            Answer::Json(_) | Answer::JsonOrCsv(_) => {
                if let Some(text) = answer_text(op, false, &app).await {
                    if let Ok(v) = serde_json::from_str::<Value>(&text) {
                        content["application/json"]["example"] = v;
                    }
                }
                if matches!(op.answer, Answer::JsonOrCsv(_)) {
                    if let Some(text) = answer_text(op, true, &app).await {
                        content["text/csv"]["example"] = json!(text);
                    }
                }
            }
            Answer::Csv => {
                if let Some(text) = answer_text(op, false, &app).await {
                    content["text/csv"]["example"] = json!(text);
                }
            }
            Answer::Ndjson => {
                if let Some(text) = answer_text(op, false, &app).await {
                    content["application/x-ndjson"]["example"] = json!(text);
                }
            }
            Answer::Verdicts => {
                if let Some(text) = answer_text(op, true, &app).await {
                    content["text/csv"]["example"] = json!(text);
                }
            }
            Answer::Prometheus => {
                content["text/plain"]["example"] =
                    json!("# TYPE residue_requests_total counter\nresidue_requests_total{route=\"/healthz\",status=\"200\"} 1\n");
            }
            Answer::OpenApi => {
                content["application/json"]["example"] =
                    json!({"openapi": "3.1.0", "info": {"title": "Residue"}, "paths": {}});
            }
        }
    }
    doc
}

static DOCUMENT: tokio::sync::OnceCell<Vec<u8>> = tokio::sync::OnceCell::const_new();

/// `GET /api/openapi.json`; `app` builds the application that computes the
/// answer examples, once.
pub async fn openapi_json(app: fn() -> Router) -> Response {
    let bytes = DOCUMENT
        .get_or_init(|| async {
            serde_json::to_vec_pretty(&document_with_examples(app()).await).unwrap_or_default()
        })
        .await;
    ([(header::CONTENT_TYPE, "application/json")], bytes.clone()).into_response()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::fields::{Fields, Source};
    use crate::input::json::Json;

    fn properties(doc: &Value, schema: &str) -> Vec<String> {
        doc["components"]["schemas"][schema]["properties"]
            .as_object()
            .unwrap_or_else(|| panic!("{schema} has properties"))
            .keys()
            .cloned()
            .collect()
    }

    #[test]
    fn request_schemas_are_the_field_tables() {
        // The document's request schemas are the tables' own, field by field,
        // in the tables' order.
        let doc = document();
        for table in crate::input::tables() {
            assert_eq!(
                doc["components"]["schemas"][table.schema],
                crate::input::table::schema(table),
                "{}",
                table.schema
            );
            let mut names: Vec<String> = table.names().iter().map(|n| n.to_string()).collect();
            let mut listed = properties(&doc, table.schema);
            names.sort();
            listed.sort();
            assert_eq!(listed, names, "{}", table.schema);
        }
        // The check takes the schedule's fields but extra payments and a label.
        let schedule = crate::input::loan::SCHEDULE.names();
        let check = crate::input::check::CHECK.names();
        for name in &schedule {
            assert_eq!(
                check.contains(name),
                !["extra_payments", "label"].contains(name),
                "{name}"
            );
        }
    }

    /// Every property of a request schema is a field its reader knows: an object
    /// holding it (with a placeholder value) draws no "is not a known field".
    /// Reads a request's members and returns the pointers of its unknown fields.
    type Reader<'a> = dyn Fn(&[(String, Json)]) -> Vec<String> + 'a;

    #[test]
    fn every_schema_property_is_a_field_the_reader_knows() {
        let doc = document();
        let unknown = |schema: &str, read: &Reader<'_>| {
            // One property at a time: a reader may stop reading a form it finds mixed.
            for name in properties(&doc, schema) {
                let members = vec![(name.clone(), Json::String("1".into()))];
                let pointers = read(&members);
                assert!(
                    pointers.is_empty(),
                    "{schema}.{name}: unknown to the reader: {pointers:?}"
                );
            }
        };
        let of = |e: crate::input::problem::ApiError| -> Vec<String> {
            e.errors
                .into_iter()
                .filter(|e| e.code == crate::input::problem::FieldCode::Unknown)
                .map(|e| e.pointer)
                .collect()
        };
        let source = |m: &[(String, Json)]| -> Vec<(String, Json)> { m.to_vec() };
        unknown("LoanScheduleRequest", &|m| {
            let m = source(m);
            crate::input::loan::schedule_request_from(Fields::new(Source::Json {
                members: &m,
                pointer: "",
            }))
            .err()
            .map(of)
            .unwrap_or_default()
        });
        unknown("LoanCheckRequest", &|m| {
            crate::input::check::read_check(Fields::new(Source::Json {
                members: m,
                pointer: "",
            }))
            .err()
            .map(of)
            .unwrap_or_default()
        });
        unknown("ApyRequest", &|m| {
            crate::input::apy::read_apy(Fields::new(Source::Json {
                members: m,
                pointer: "",
            }))
            .err()
            .map(of)
            .unwrap_or_default()
        });
        unknown("SavingsPlanRequest", &|m| {
            crate::input::savings::savings_terms_from(Fields::new(Source::Json {
                members: m,
                pointer: "",
            }))
            .err()
            .map(of)
            .unwrap_or_default()
        });
        unknown("AprRequest", &|m| {
            crate::input::apr::read_json(&Json::Object(m.to_vec()))
                .err()
                .map(of)
                .unwrap_or_default()
        });
        unknown("RecurrenceRequest", &|m| {
            crate::input::recurrence::read_recurrence(&Json::Object(m.to_vec()))
                .err()
                .map(of)
                .unwrap_or_default()
        });
    }

    #[test]
    fn the_document_is_openapi_3_1_with_every_operation() {
        let doc = document();
        assert_eq!(doc["openapi"], "3.1.0");
        for op in OPERATIONS {
            let o = &doc["paths"][op.path][op.method];
            assert!(o.is_object(), "{} {}", op.method, op.path);
            if op.method == "post" {
                let content = o["requestBody"]["content"].as_object().unwrap();
                assert!(
                    content.values().all(|c| c.get("example").is_some()),
                    "{}",
                    op.id
                );
            }
        }
    }
}
