//! Comparisons of plans: by query and by post, as JSON and as CSV.

use rust_decimal::Decimal;
use serde_json::{json, Value};

use super::reference::assert_compare_csv_matches;
use super::{assert_invalid, schedule_by_query, schedule_of, COMPARE, COMPARE_CSV};
use crate::helpers::{
    assert_problem, assert_refusals, assert_still_healthy, dec_of, pointers, shared_app, with, Ask,
    Refusal,
};

/// The figures a comparison's row shares with the schedule of its plan.
const SCHEDULE_FIGURES: [&str; 5] = [
    "payment",
    "number_of_payments",
    "total_interest",
    "total_paid",
    "payoff_date",
];

const TERMS_QUERY: &str = "principal=278000&annual_rate_percent=6.375&term_months=180,240,360";

#[test]
fn compare_by_query_gives_one_row_per_term_with_the_figures_of_separate_schedules() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.get(&format!("{COMPARE}?{TERMS_QUERY}"));

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    assert_eq!(r.media_type(), "application/json");
    let c = r.json();
    assert_eq!(c["currency"], "USD");
    let rows = c["rows"].as_array().expect("rows");
    assert_eq!(rows.len(), 3);
    let base_interest = {
        let s = schedule_by_query(
            &app,
            "principal=278000&annual_rate_percent=6.375&term_months=180",
        );
        dec_of(&s["summary"]["total_interest"])
    };
    for (row, months) in rows.iter().zip([180u32, 240, 360]) {
        let s = schedule_by_query(
            &app,
            &format!("principal=278000&annual_rate_percent=6.375&term_months={months}"),
        );
        let summary = &s["summary"];
        assert_eq!(row["label"], format!("term_months {months}"), "{row}");
        for k in SCHEDULE_FIGURES {
            assert_eq!(row[k], summary[k], "{months} months: {k}");
        }
        assert_eq!(
            dec_of(&row["interest_saved"]),
            base_interest - dec_of(&summary["total_interest"]),
            "{row}"
        );
        assert_eq!(row["payments_saved"], 180 - i64::from(months), "{row}");
    }
    assert!(
        c["notes"][0].as_str().unwrap().contains("not an offer"),
        "{c}"
    );
}

#[test]
fn compare_as_csv_by_suffix_or_by_accept_gives_rfc_4180_records_with_the_json_figures() {
    // Arrange
    let app = shared_app();
    let json_rows = app.get(&format!("{COMPARE}?{TERMS_QUERY}")).json()["rows"]
        .as_array()
        .unwrap()
        .clone();

    // Act
    let by_suffix = app.get(&format!("{COMPARE_CSV}?{TERMS_QUERY}"));
    let by_accept = app.get_with(
        &format!("{COMPARE}?{TERMS_QUERY}"),
        &[("Accept", "text/csv")],
    );

    // Assert
    for r in [&by_suffix, &by_accept] {
        assert_eq!(r.status, 200, "{}", r.text());
        assert_eq!(r.media_type(), "text/csv");
        assert_eq!(
            r.text().matches('\n').count(),
            r.text().matches("\r\n").count(),
            "every line ends with CRLF"
        );
        assert_compare_csv_matches(r.text(), &json_rows);
    }
    assert_eq!(by_suffix.text(), by_accept.text());
    assert!(by_suffix
        .text()
        .contains("\r\nterm_months 240,2052.29,240,"));
}

/// A 30-year base and two variants: 15 years, and 200 a month extra.
fn compare_body() -> Value {
    json!({
        "base": {"principal": "278000", "annual_rate_percent": "6.375", "term_months": 360,
                 "first_payment_date": "2027-01-01", "label": "30 years"},
        "variants": [
            {"label": "15 years", "term_months": 180},
            {"label": "30 years, \"200 extra\"", "extra_payments": [{"amount": "200", "from": 1}]}
        ]
    })
}

#[test]
fn compare_by_post_measures_each_variant_against_the_base() {
    // Arrange
    let app = shared_app();
    let base = json!({"principal": "278000", "annual_rate_percent": "6.375",
                      "term_months": 360, "first_payment_date": "2027-01-01"});
    let separate = [
        schedule_of(&app, &base),
        schedule_of(&app, &with(&base, json!({"term_months": 180}))),
        schedule_of(
            &app,
            &with(
                &base,
                json!({"extra_payments": [{"amount": "200", "from": 1}]}),
            ),
        ),
    ];

    // Act
    let r = app.post_json(COMPARE, &compare_body());

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    let c = r.json();
    let rows = c["rows"].as_array().expect("rows");
    let labels: Vec<&str> = rows.iter().map(|r| r["label"].as_str().unwrap()).collect();
    assert_eq!(labels, ["30 years", "15 years", "30 years, \"200 extra\""]);
    let base_interest = dec_of(&separate[0]["summary"]["total_interest"]);
    for (row, s) in rows.iter().zip(&separate) {
        let summary = &s["summary"];
        for k in SCHEDULE_FIGURES {
            assert_eq!(row[k], summary[k], "{}: {k}", row["label"]);
        }
        assert_eq!(
            dec_of(&row["interest_saved"]),
            base_interest - dec_of(&row["total_interest"]),
            "{row}"
        );
        assert_eq!(
            row["payments_saved"].as_i64().unwrap(),
            360 - summary["number_of_payments"].as_i64().unwrap(),
            "{row}"
        );
    }
    assert_eq!(rows[0]["interest_saved"], "0.00");
    assert_eq!(rows[0]["payoff_date"], "2056-12-01");
    let extra = &rows[2];
    assert!(dec_of(&extra["interest_saved"]) > Decimal::ZERO, "{extra}");
    assert_eq!(
        extra["interest_saved"], separate[2]["summary"]["interest_saved"],
        "the same saving as the schedule with extras reports"
    );
    assert!(extra["payments_saved"].as_i64().unwrap() > 0, "{extra}");
    assert!(
        dec_of(&rows[1]["interest_saved"]) > Decimal::ZERO,
        "15 years cost less interest"
    );
}

#[test]
fn compare_csv_quotes_labels_holding_commas_or_quotes() {
    // Arrange
    let app = shared_app();
    let json_rows = app.post_json(COMPARE, &compare_body()).json()["rows"]
        .as_array()
        .unwrap()
        .clone();

    // Act
    let r = app.request(
        "POST",
        COMPARE,
        &[("Content-Type", "application/json"), ("Accept", "text/csv")],
        Some(&serde_json::to_vec(&compare_body()).unwrap()),
    );

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    assert_eq!(r.media_type(), "text/csv");
    let lines: Vec<&str> = r.text().split("\r\n").collect();
    assert!(lines[1].starts_with("30 years,"), "{}", lines[1]);
    assert!(lines[2].starts_with("15 years,"), "{}", lines[2]);
    assert!(
        lines[3].starts_with("\"30 years, \"\"200 extra\"\"\","),
        "RFC 4180: quoted, inner quotes doubled: {}",
        lines[3]
    );
    assert_compare_csv_matches(r.text(), &json_rows);
}

#[test]
fn more_than_four_plans_are_refused_with_422() {
    // Arrange
    let app = shared_app();
    let mut body = compare_body();
    body["variants"] = json!([
        {"term_months": 120}, {"term_months": 180}, {"term_months": 240}, {"term_months": 300}
    ]);

    // Act
    let posted = app.post_json(COMPARE, &body);
    let got = app.get(&format!(
        "{COMPARE}?principal=278000&annual_rate_percent=6.375&term_months=120,180,240,300,360"
    ));
    let four = app.get(&format!(
        "{COMPARE}?principal=278000&annual_rate_percent=6.375&term_months=180,240,300,360"
    ));

    // Assert
    assert_invalid(&app, &posted, "/variants");
    assert_invalid(&app, &got, "term_months");
    assert_eq!(four.status, 200, "four plans are allowed: {}", four.text());
    assert_eq!(four.json()["rows"].as_array().unwrap().len(), 4);
}

#[test]
fn a_bad_field_of_a_variant_is_refused_at_its_pointer_inside_the_variant() {
    let app = shared_app();
    let variant = |variant: Value| {
        let mut body = compare_body();
        body["variants"] = json!([variant]);
        Ask::Json(COMPARE, body)
    };
    let cases = [
        Refusal::invalid(
            variant(json!({"label": "none", "term_months": 0})),
            "/variants/0/term_months",
        ),
        Refusal::invalid(
            variant(json!({"label": "all interest", "interest_only_payments": 360})),
            "/variants/0/interest_only_payments",
        ),
        Refusal::invalid(
            variant(json!({"label": "typo", "term_monts": 180})),
            "/variants/0/term_monts",
        ),
        // A compare across currencies is refused at the variant's currency.
        Refusal::invalid(
            Ask::Json(
                COMPARE,
                json!({
                    "base": {"principal": "250000", "annual_rate_percent": "6", "term_months": 360},
                    "variants": [{"currency": "JPY"}]
                }),
            ),
            "/variants/0/currency",
        ),
        Refusal::invalid(
            Ask::Get(format!(
                "{COMPARE}?principal=250000&annual_rate_percent=6&term_months=360&currency=USD,JPY"
            )),
            "currency",
        ),
    ];

    assert_refusals(&app, &cases);
}

#[test]
fn two_listed_fields_in_a_query_comparison_are_refused_with_422() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.get(&format!(
        "{COMPARE}?principal=278000&annual_rate_percent=6,7&term_months=180,360"
    ));

    // Assert
    let p = assert_problem(&r, 422, "invalid-fields");
    let found = pointers(&p);
    assert!(
        found
            .iter()
            .any(|q| q == "term_months" || q == "annual_rate_percent"),
        "names a listed field: {found:?}"
    );
    assert_still_healthy(&app);
}

#[test]

fn a_query_comparison_may_list_values_by_repeating_the_field_anywhere() {
    // Arrange: the module documents "a comma-separated (or repeated) list".
    let app = shared_app();
    let adjacent = app.get(&format!(
        "{COMPARE}?principal=278000&annual_rate_percent=6.375&term_months=180&term_months=360"
    ));
    assert_eq!(adjacent.status, 200, "{}", adjacent.text());

    // Act
    let apart = app.get(&format!(
        "{COMPARE}?term_months=180&principal=278000&annual_rate_percent=6.375&term_months=360"
    ));

    // Assert
    assert_eq!(apart.status, 200, "{}", apart.text());
    assert_eq!(apart.json()["rows"], adjacent.json()["rows"]);
}

#[test]
fn a_compare_csv_label_that_reads_as_a_formula_is_neutralized() {
    // Arrange: labels a spreadsheet would evaluate on import (the OWASP advice on
    // CSV injection: a leading =, +, -, @ is made text with a leading ').
    let app = shared_app();
    let body = json!({
        "base": {"principal": "1000", "annual_rate_percent": "6", "term_months": 12,
                 "label": "=HYPERLINK(\"http://example.invalid\")"},
        "variants": [{"label": "@SUM(A1)", "term_months": 6}, {"label": "-1+2", "term_months": 9}]
    });

    // Act
    let r = app.request(
        "POST",
        COMPARE,
        &[("Content-Type", "application/json"), ("Accept", "text/csv")],
        Some(&serde_json::to_vec(&body).unwrap()),
    );

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    let lines: Vec<&str> = r.text().split("\r\n").collect();
    assert!(
        lines[1].starts_with("\"'=HYPERLINK(\"\"http://example.invalid\"\")\","),
        "{}",
        lines[1]
    );
    assert!(lines[2].starts_with("'@SUM(A1),"), "{}", lines[2]);
    assert!(lines[3].starts_with("'-1+2,"), "{}", lines[3]);
    // The JSON keeps the labels as given.
    let json = app.post_json(COMPARE, &body).json();
    assert_eq!(json["rows"][1]["label"], "@SUM(A1)");
}

#[test]
fn payments_saved_is_left_empty_for_a_plan_paid_at_another_frequency() {
    // A biweekly plan has 780 scheduled payments against the monthly base's 360;
    // their difference counts unlike payments, so it is not given (null, an empty
    // CSV cell); the interest saved still is.
    let app = shared_app();
    let body = json!({
        "base": {"principal": "278000", "annual_rate_percent": "6.375", "term_months": 360},
        "variants": [{"label": "biweekly", "payment_frequency": "biweekly"}, {"label": "25 years", "term_months": 300}]
    });
    let r = app.post_json(COMPARE, &body);
    assert_eq!(r.status, 200, "{}", r.text());
    let c = r.json();
    assert_eq!(c["rows"][1]["payments_saved"], Value::Null, "{c}");
    assert!(
        dec_of(&c["rows"][1]["interest_saved"]) > Decimal::ZERO,
        "{c}"
    );
    assert_eq!(c["rows"][2]["payments_saved"], 60, "{c}");
    assert!(
        c["notes"]
            .as_array()
            .unwrap()
            .iter()
            .any(|n| n.as_str().unwrap().contains("another frequency")),
        "{c}"
    );
    let csv = app.request(
        "POST",
        COMPARE,
        &[("Content-Type", "application/json"), ("Accept", "text/csv")],
        Some(&serde_json::to_vec(&body).unwrap()),
    );
    let lines: Vec<&str> = csv.text().split("\r\n").collect();
    assert!(
        lines[2].starts_with("biweekly,") && lines[2].ends_with(','),
        "{}",
        lines[2]
    );
    assert!(lines[3].ends_with(",60"), "{}", lines[3]);
}
