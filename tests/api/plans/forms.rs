//! A plan asked in either form (a JSON body or a query) and answered in either
//! (JSON or CSV); the plans refused, at their fields.

use rust_decimal::Decimal;
use serde_json::{json, Value};

use super::reference::parse_csv;
use super::{
    dated_100k, extras_json, loan_100k, loan_250k, rate_step_json, rows, schedule_by_query,
    schedule_of,
};
use crate::helpers::{
    assert_refusals, dec_of, shared_app, with, Ask, Refusal, SCHEDULE, SCHEDULE_CSV,
};

#[test]
fn a_plan_asked_by_query_gets_the_answer_of_the_same_plan_asked_by_json() {
    // Arrange
    let app = shared_app();
    let base = "principal=100000&annual_rate_percent=6&term_months=360";
    let rate_step = format!("{base}&rate_changes=61:7");
    // (the query, the same plan as JSON, a summary figure that must be above zero)
    let cases: [(String, Value, Option<&str>); 4] = [
        // A dated schedule with its day count.
        (
            format!(
                "{base}&funding_date=2027-01-10&first_payment_date=2027-03-01&day_count=actual_360"
            ),
            with(&dated_100k(), json!({"day_count": "actual_360"})),
            None,
        ),
        // Extra payments: a recurring one (AMOUNT@FROM-) and a lump sum (AMOUNT@AT).
        (
            "principal=250000&annual_rate_percent=6.5&term_months=360\
             &extra_payments=150@13-,5000@36"
                .to_string(),
            with(&loan_250k(), json!({"extra_payments": extras_json()})),
            Some("total_extra"),
        ),
        // A rate step (AT:PERCENT), re-amortized or keeping the payment.
        (rate_step.clone(), rate_step_json(), None),
        (
            format!("{rate_step}&rate_change_keeps=payment"),
            with(&rate_step_json(), json!({"rate_change_keeps": "payment"})),
            None,
        ),
    ];

    for (query, body, above_zero) in cases {
        // Act
        let got = schedule_by_query(&app, &query);
        let posted = schedule_of(&app, &body);

        // Assert
        assert_eq!(got, posted, "{query}");
        if let Some(figure) = above_zero {
            assert!(
                dec_of(&got["summary"][figure]) > Decimal::ZERO,
                "{query}: {figure}"
            );
        }
    }
}

#[test]
fn bad_plans_are_refused_at_their_fields_in_json_and_in_a_query() {
    // Arrange
    let app = shared_app();
    let posted = |changes: Value| Ask::Json(SCHEDULE, with(&loan_100k(), changes));
    let query = |rest: &str| {
        Ask::Get(format!(
            "{SCHEDULE}?principal=100000&annual_rate_percent=6&term_months=360&{rest}"
        ))
    };
    let mut cases = Vec::new();
    // A first payment on or before funding.
    for (funding, first) in [("2027-03-01", "2027-02-01"), ("2027-03-01", "2027-03-01")] {
        cases.push(Refusal::invalid(
            posted(json!({"funding_date": funding, "first_payment_date": first})),
            "/first_payment_date",
        ));
        cases.push(Refusal::invalid(
            query(&format!(
                "funding_date={funding}&first_payment_date={first}"
            )),
            "first_payment_date",
        ));
    }
    cases.extend([
        // A first period longer than a year.
        Refusal::invalid(
            posted(json!({"funding_date": "2026-01-01", "first_payment_date": "2027-02-01"})),
            "/first_payment_date",
        ),
        // Two rate changes at the same payment.
        Refusal::invalid(
            posted(json!({"rate_changes": [
                {"at": 61, "annual_rate_percent": "7"},
                {"at": 61, "annual_rate_percent": "8"}
            ]})),
            "/rate_changes",
        ),
        Refusal::invalid(query("rate_changes=61:7,61:8"), "rate_changes"),
        // An interest-only period as long as the term.
        Refusal::invalid(
            posted(json!({"interest_only_payments": 360})),
            "/interest_only_payments",
        ),
        // A balloon after as many payments as the term, or more.
        Refusal::invalid(
            posted(json!({"balloon_after_payments": 400})),
            "/balloon_after_payments",
        ),
        Refusal::invalid(
            posted(json!({"balloon_after_payments": 360})),
            "/balloon_after_payments",
        ),
        // February 30th.
        Refusal::invalid(
            posted(json!({"funding_date": "2027-02-30", "first_payment_date": "2027-04-01"})),
            "/funding_date",
        ),
        Refusal::invalid(
            query("funding_date=2027-02-30&first_payment_date=2027-04-01"),
            "funding_date",
        ),
        // The year 10000.
        Refusal::invalid(
            posted(json!({"first_payment_date": "10000-01-01"})),
            "/first_payment_date",
        ),
        Refusal::invalid(
            query("first_payment_date=10000-01-01"),
            "first_payment_date",
        ),
        // An extra payment with both `at` and `from`: at its `at`.
        Refusal::invalid(
            posted(json!({"extra_payments": [{"amount": "100", "at": 12, "from": 13}]})),
            "/extra_payments/0/at",
        ),
        // An unknown member inside an extra payment: at its own pointer.
        Refusal::invalid(
            posted(json!({"extra_payments": [{"amount": "100", "from": 13, "foo": 1}]})),
            "/extra_payments/0/foo",
        ),
        // An extra payment on a date without a first payment date.
        Refusal::invalid(
            posted(json!({"extra_payments": [{"amount": "100", "at": "2030-02-01"}]})),
            "/extra_payments/0/at",
        ),
        Refusal::invalid(query("extra_payments=100@2030-02-01"), "extra_payments"),
    ]);
    // Extra payment items that cannot be read.
    for item in ["150", "150@abc", "abc@13", "150@13-x", "150@13-/0x"] {
        cases.push(Refusal::invalid(
            query(&format!("extra_payments={item}")),
            "extra_payments",
        ));
    }

    // Act and assert
    assert_refusals(&app, &cases);
}

// ---------------------------------------------------------------------------
// CSV schedule with dates and extras
// ---------------------------------------------------------------------------

#[test]
fn the_dated_csv_schedule_with_extras_carries_every_json_figure() {
    // Arrange
    let app = shared_app();
    let query = "principal=250000&annual_rate_percent=6.5&term_months=360\
                 &first_payment_date=2027-01-31&extra_payments=150@13-,5000@36";
    let s = schedule_by_query(&app, query);

    // Act
    let r = app.get(&format!("{SCHEDULE_CSV}?{query}"));

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    assert_eq!(r.media_type(), "text/csv");
    let records = parse_csv(r.text());
    assert_eq!(
        records[0],
        [
            "number",
            "date",
            "payment",
            "extra",
            "interest",
            "principal",
            "balance"
        ]
    );
    assert_eq!(records.len() - 1, rows(&s).len());
    for (record, row) in records[1..].iter().zip(rows(&s)) {
        let expected = vec![
            row["number"].to_string(),
            row["date"].as_str().unwrap().to_string(),
            row["payment"].as_str().unwrap().to_string(),
            row["extra"].as_str().unwrap().to_string(),
            row["interest"].as_str().unwrap().to_string(),
            row["principal"].as_str().unwrap().to_string(),
            row["balance"].as_str().unwrap().to_string(),
        ];
        assert_eq!(*record, expected);
    }
}
