//! The choices between loans over HTTP: the payment grid (`/api/v1/loans/grid`),
//! rate-and-points options (`/api/v1/loans/options`) and the refinance
//! (`/api/v1/refinance`), each as JSON and as CSV.
//!
//! The published factors of 7 CFR 1942.19(e)(2), the hand-worked points case,
//! and every cost path checked against a ledger posted here in `rust_decimal`,
//! independently of the engine: each month's interest is round(balance × rate/12)
//! to the cent, halves away from zero, the level payment is paid, and the last
//! payment is whatever repays the balance (common practice, no source).
//!
//! One file a choice: `grid`, `options`, `refinance`; what all three share is here.

mod grid;
mod options;
mod refinance;

use rust_decimal::{Decimal, RoundingStrategy};
use serde_json::Value;

use crate::helpers::{assert_problem, shared_app, Response, TestApp};

const GRID: &str = "/api/v1/loans/grid";
const GRID_CSV: &str = "/api/v1/loans/grid.csv";
const OPTIONS: &str = "/api/v1/loans/options";
const OPTIONS_CSV: &str = "/api/v1/loans/options.csv";
const REFINANCE: &str = "/api/v1/refinance";
const REFINANCE_CSV: &str = "/api/v1/refinance.csv";

/// How the caution every answer carries first begins.
const CAUTION: &str = "Estimates for discussion only";

/// 300,000 at 6 % to 7.5 % by eighths of a point, over 10 to 30 years.
const GRID_QUERY: &str = "principal=300000&rates=6.000..7.500/0.125&terms=120,180,240,300,360";

/// The points case (par at 6.75 % against 2 points at 6.25 %) as a query: each
/// option's four fields, repeated in order (the n-th value of each field is the
/// n-th option's).
const POINTS_QUERY: &str = "principal=200000&term_months=360\
    &option_label=Par&option_rate_percent=6.75&option_points_percent=0&option_other_costs=0\
    &option_label=Two%20points&option_rate_percent=6.25&option_points_percent=2&option_other_costs=0";

/// 187,500 owed at 7.25 % with 312 payments left, refinanced at 6.125 % over 30
/// years with 3,200 of closing costs and 1 point.
const REFI_QUERY: &str = "current.balance=187500&current.annual_rate_percent=7.25\
    &current.remaining_payments=312&annual_rate_percent=6.125&term_months=360\
    &closing_costs=3200&points_percent=1";

// ---------------------------------------------------------------------------
// Reading answers
// ---------------------------------------------------------------------------

/// The caution comes first among an answer's notes.
fn assert_cautioned(answer: &Value) {
    let first = answer["notes"][0]
        .as_str()
        .unwrap_or_else(|| panic!("notes[0] is text: {answer}"));
    assert!(
        first.starts_with(CAUTION),
        "the caution comes first: {}",
        answer["notes"]
    );
}

fn array<'a>(v: &'a Value, name: &str) -> &'a Vec<Value> {
    v[name]
        .as_array()
        .unwrap_or_else(|| panic!("{name} is an array: {v}"))
}

/// A member as CSV writes it: text as is, a number in digits, null as nothing.
fn cell_text(v: &Value) -> String {
    match v {
        Value::Null => String::new(),
        Value::String(s) => s.clone(),
        other => other.to_string(),
    }
}

fn months_of(v: &Value) -> u32 {
    v["months"]
        .as_u64()
        .and_then(|m| u32::try_from(m).ok())
        .unwrap_or_else(|| panic!("months is a whole number: {v}"))
}

/// Asserts a CSV answer (200, text/csv, the caution header, every record ended by
/// CRLF, the header row) and returns its records, the header first.
fn csv_records<'a>(r: &'a Response, header: &str) -> Vec<&'a str> {
    assert_eq!(r.status, 200, "{}", r.text());
    assert_eq!(r.media_type(), "text/csv");
    let caution = r
        .header("residue-caution")
        .expect("a CSV answer carries the caution in a header");
    assert!(caution.starts_with(CAUTION), "{caution}");
    let text = r.text();
    assert_eq!(
        text.matches('\n').count(),
        text.matches("\r\n").count(),
        "every line ends with CRLF"
    );
    let records: Vec<&str> = text
        .strip_suffix("\r\n")
        .expect("the last record ends with CRLF")
        .split("\r\n")
        .collect();
    assert_eq!(records[0], header);
    records
}

/// `POST path` with a JSON body, asking for CSV.
fn post_for_csv(app: &TestApp, path: &str, body: &Value) -> Response {
    let bytes = serde_json::to_vec(body).expect("a JSON body serializes");
    app.request(
        "POST",
        path,
        &[("Content-Type", "application/json"), ("Accept", "text/csv")],
        Some(bytes.as_slice()),
    )
}

// ---------------------------------------------------------------------------
// A ledger posted here
// ---------------------------------------------------------------------------

/// Rounds to the cent, halves away from zero.
fn cents(x: Decimal) -> Decimal {
    x.round_dp_with_strategy(2, RoundingStrategy::MidpointAwayFromZero)
}

/// (1 + i)^n by repeated multiplication.
fn growth(i: Decimal, n: u32) -> Decimal {
    let mut g = Decimal::ONE;
    for _ in 0..n {
        g *= Decimal::ONE + i;
    }
    g
}

/// The level payment factor per 1 borrowed, i·(1 + i)^n / ((1 + i)^n − 1), i > 0.
fn factor(i: Decimal, n: u32) -> Decimal {
    let g = growth(i, n);
    i * g / (g - Decimal::ONE)
}

/// The level monthly payment that repays `principal` in `n` months at `percent`
/// a year, rounded to the cent (common practice, no source).
fn level_payment(principal: Decimal, percent: Decimal, n: u32) -> Decimal {
    if percent.is_zero() {
        return cents(principal / Decimal::from(n));
    }
    cents(principal * factor(percent / Decimal::from(1200), n))
}

/// The payment per 1,000 borrowed: the factor per 1 rounded up to five places,
/// times 1,000, as 7 CFR 1942.19(e)(2) prints its factors.
fn per_thousand(percent: Decimal, n: u32) -> Decimal {
    factor(percent / Decimal::from(1200), n)
        .round_dp_with_strategy(5, RoundingStrategy::AwayFromZero)
        * Decimal::from(1000)
}

/// A monthly loan posted to the cent and what it has cost by each month: what was
/// paid upfront plus payments 1 to m, and the balance still owed after payment m.
struct CostPath {
    payment: Decimal,
    /// Index m: upfront + payments 1 to m.
    paid: Vec<Decimal>,
    /// Index m: the balance after payment m.
    owed: Vec<Decimal>,
}

impl CostPath {
    fn post(principal: Decimal, percent: Decimal, n: u32, upfront: Decimal) -> Self {
        let payment = level_payment(principal, percent, n);
        let mut paid = vec![upfront];
        let mut owed = vec![principal];
        let mut balance = principal;
        let mut total = upfront;
        for k in 1..=n {
            let due = balance + cents(balance * percent / Decimal::from(1200));
            let pay = if due <= payment || k == n {
                due
            } else {
                payment
            };
            balance = due - pay;
            total += pay;
            paid.push(total);
            owed.push(balance);
        }
        Self {
            payment,
            paid,
            owed,
        }
    }

    /// Month m, or the last month once the loan is repaid.
    fn month_index(&self, m: u32) -> usize {
        usize::try_from(m)
            .expect("a month fits")
            .min(self.paid.len() - 1)
    }

    fn paid(&self, m: u32) -> Decimal {
        self.paid[self.month_index(m)]
    }

    fn owed(&self, m: u32) -> Decimal {
        self.owed[self.month_index(m)]
    }

    fn cost(&self, m: u32) -> Decimal {
        self.paid(m) + self.owed(m)
    }
}

// ---------------------------------------------------------------------------
// All three
// ---------------------------------------------------------------------------

#[test]
fn each_choice_answers_csv_at_its_json_address_when_accept_asks_for_it() {
    // Arrange
    let app = shared_app();
    let choices = [
        (GRID, GRID_CSV, GRID_QUERY),
        (OPTIONS, OPTIONS_CSV, POINTS_QUERY),
        (REFINANCE, REFINANCE_CSV, REFI_QUERY),
    ];

    for (path, csv_path, query) in choices {
        // Act
        let by_accept = app.get_with(&format!("{path}?{query}"), &[("Accept", "text/csv")]);
        let by_suffix = app.get(&format!("{csv_path}?{query}"));
        let preferring_json = app.get_with(
            &format!("{path}?{query}"),
            &[("Accept", "application/json, text/csv;q=0.5")],
        );

        // Assert
        for r in [&by_accept, &by_suffix] {
            assert_eq!(r.status, 200, "{path}: {}", r.text());
            assert_eq!(r.media_type(), "text/csv", "{path}");
            assert!(
                r.header("residue-caution")
                    .is_some_and(|c| c.starts_with(CAUTION)),
                "{path}"
            );
        }
        assert_eq!(by_accept.text(), by_suffix.text(), "{path}");
        assert_eq!(preferring_json.status, 200, "{path}");
        assert_eq!(preferring_json.media_type(), "application/json", "{path}");
        assert_cautioned(&preferring_json.json());
    }
}

/// A stored GET answer must not skip content negotiation. Today it does: the
/// answer store (`limit_and_time` in src/server.rs) wraps the `negotiate`
/// layer, so once an answer is stored, a request whose Accept header takes
/// neither JSON nor CSV gets the stored 200 instead of 406.
#[test]
fn an_accept_header_taking_neither_json_nor_csv_is_refused_even_once_the_answer_is_stored() {
    // Arrange
    let app = shared_app();
    let targets = [
        format!("{GRID}?{GRID_QUERY}"),
        format!("{OPTIONS}?{POINTS_QUERY}"),
        format!("{REFINANCE}?{REFI_QUERY}"),
    ];

    for target in &targets {
        let stored = app.get(target);
        assert_eq!(stored.status, 200, "{target}: {}", stored.text());

        // Act
        let r = app.get_with(target, &[("Accept", "application/xml")]);

        // Assert
        assert_problem(&r, 406, "not-acceptable");
    }
}
