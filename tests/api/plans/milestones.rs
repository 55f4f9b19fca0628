//! Milestones (Homeowners Protection Act of 1998, 12 U.S.C. 4901–4902, cited
//! from memory: borrower-requested cancellation when the balance is first
//! scheduled to reach 80 % of the original value, automatic termination at 78 %,
//! both on the initial amortization schedule; final termination under 4902(c) on
//! the first day of the month after the midpoint of the amortization period).

use rust_decimal::Decimal;
use serde_json::{json, Value};

use super::reference::{first_of_next_month, reference_add_months, Ymd};
use super::{
    dated_100k, extras_json, has_note, loan_100k, loan_250k, notes, rate_step_json, rows,
    schedule_of,
};
use crate::helpers::{dec, dec_of, shared_app, with};

/// 225,000 at 6 % over 360 on a property worth 250,000, first due 2027-01-15,
/// with 150 a month extra from payment 13.
fn milestone_loan(with_extras: bool) -> Value {
    let mut body = json!({
        "principal": "225000", "annual_rate_percent": "6", "term_months": 360,
        "first_payment_date": "2027-01-15", "property_value": "250000"
    });
    if with_extras {
        body["extra_payments"] = json!([{"amount": "150", "from": 13}]);
    }
    body
}

/// The first row whose balance is at or below `threshold`, as (number, date).
fn first_row_at_or_below(s: &Value, threshold: Decimal) -> (u64, String) {
    let row = rows(s)
        .iter()
        .find(|r| dec_of(&r["balance"]) <= threshold)
        .expect("the balance reaches the threshold");
    (
        row["number"].as_u64().unwrap(),
        row["date"].as_str().unwrap().to_string(),
    )
}

#[test]
fn hpa_milestones_are_read_from_the_schedule_without_extras() {
    // Arrange
    let app = shared_app();
    let initial = schedule_of(&app, &milestone_loan(false));

    // Act
    let s = schedule_of(&app, &milestone_loan(true));

    // Assert
    let m = &s["summary"]["milestones"];
    // 80 % of 250,000 = 200,000; 78 % = 195,000: scanned on the initial schedule.
    for (name, threshold) in [
        ("balance_80_percent_of_value", dec("200000")),
        ("balance_78_percent_of_value", dec("195000")),
    ] {
        let (number, date) = first_row_at_or_below(&initial, threshold);
        assert_eq!(m[name]["payment"], number, "{name}: {m}");
        assert_eq!(m[name]["date"], date.as_str(), "{name}: {m}");
        let (with_extras, _) = first_row_at_or_below(&s, threshold);
        assert!(
            with_extras < number,
            "the extras reach {threshold} sooner ({with_extras}), but the milestone keeps the initial schedule"
        );
    }
    assert!(
        m["balance_78_percent_of_value"]["payment"].as_u64()
            > m["balance_80_percent_of_value"]["payment"].as_u64()
    );
    // The midpoint of 360 payments is payment 180, due 179 months after 2027-01-15.
    let midpoint = reference_add_months(Ymd(2027, 1, 15), 179);
    assert_eq!(midpoint, Ymd(2041, 12, 15));
    assert_eq!(m["amortization_midpoint"]["payment"], 180);
    assert_eq!(m["amortization_midpoint"]["date"], midpoint.to_string());
    assert_eq!(
        m["final_termination_date"],
        first_of_next_month(midpoint).to_string(),
        "12 U.S.C. 4902(c): the first day of the month after the midpoint"
    );
    assert_eq!(m["final_termination_date"], "2042-01-01");
    // The principal part (less any extra) first exceeds the interest part.
    let crossing = rows(&s)
        .iter()
        .find(|r| dec_of(&r["principal"]) - dec_of(&r["extra"]) > dec_of(&r["interest"]))
        .expect("the principal part overtakes the interest");
    assert_eq!(
        m["principal_exceeds_interest"]["payment"], crossing["number"],
        "{m}"
    );
    assert_eq!(m["principal_exceeds_interest"]["date"], crossing["date"]);
    // Totals through payment 60.
    let first_60 = &rows(&s)[..60];
    assert_eq!(m["payments_counted"], 60);
    assert_eq!(
        dec_of(&m["total_paid_through_60"]),
        first_60
            .iter()
            .map(|r| dec_of(&r["payment"]) + dec_of(&r["extra"]))
            .sum::<Decimal>()
    );
    assert_eq!(
        dec_of(&m["principal_paid_through_60"]),
        first_60
            .iter()
            .map(|r| dec_of(&r["principal"]))
            .sum::<Decimal>()
    );
    assert!(
        has_note(&s, "lender and investor rules"),
        "the caution about lender and investor rules: {:?}",
        notes(&s)
    );
}

#[test]
fn the_principal_part_first_exceeds_the_interest_part_at_the_first_such_row_of_any_plan() {
    // Arrange
    let app = shared_app();
    let plans = [
        loan_100k(),
        loan_250k(),
        milestone_loan(false),
        milestone_loan(true),
        dated_100k(),
        with(
            &dated_100k(),
            json!({"day_count": "thirty_360", "odd_days_interest": "prepaid"}),
        ),
        with(&loan_250k(), json!({"extra_payments": extras_json()})),
        with(
            &loan_100k(),
            json!({"extra_payments": [{"amount": "1000", "from": 1}]}),
        ),
        with(&loan_100k(), json!({"interest_only_payments": 24})),
        rate_step_json(),
        with(
            &loan_100k(),
            json!({"rate_changes": [{"at": 61, "annual_rate_percent": "2"}]}),
        ),
        with(&rate_step_json(), json!({"rate_change_keeps": "payment"})),
        json!({"principal": "500000", "annual_rate_percent": "3", "term_months": 120}),
    ];

    for body in plans {
        // Act
        let s = schedule_of(&app, &body);

        // Assert
        let crossing = rows(&s)
            .iter()
            .find(|r| dec_of(&r["principal"]) - dec_of(&r["extra"]) > dec_of(&r["interest"]));
        let milestone = &s["summary"]["milestones"]["principal_exceeds_interest"];
        match crossing {
            Some(row) => {
                assert_eq!(milestone["payment"], row["number"], "{body}: {milestone}");
                assert_eq!(milestone["date"], row["date"], "{body}: {milestone}");
            }
            None => assert!(milestone.is_null(), "{body}: {milestone}"),
        }
    }
}

#[test]
fn hpa_80_and_78_percent_points_are_the_first_rows_of_the_initial_schedule_of_any_plan() {
    // Arrange
    let app = shared_app();
    let value = json!({"property_value": "125000", "first_payment_date": "2027-01-01"});
    let plans = [
        with(&loan_100k(), value.clone()),
        with(
            &with(&loan_100k(), value.clone()),
            json!({"interest_only_payments": 24}),
        ),
        with(&rate_step_json(), value.clone()),
        with(
            &with(&loan_100k(), value.clone()),
            json!({"rate_changes": [{"at": 61, "annual_rate_percent": "2"}]}),
        ),
        with(
            &with(&loan_100k(), value.clone()),
            json!({"rate_changes": [{"at": 13, "annual_rate_percent": "9"},
                                    {"at": 121, "annual_rate_percent": "3"}]}),
        ),
        with(&loan_100k(), json!({"property_value": "126000"})),
        // 80 % of 200,000 is 160,000: reached with the first payment.
        with(&loan_100k(), json!({"property_value": "200000"})),
    ];

    for body in plans {
        let initial = schedule_of(&app, &body);

        // Act
        let s = schedule_of(
            &app,
            &with(
                &body,
                json!({"extra_payments": [{"amount": "300", "from": 2}]}),
            ),
        );

        // Assert
        let m = &s["summary"]["milestones"];
        let value = dec_of(&body["property_value"]);
        for (name, share) in [
            ("balance_80_percent_of_value", dec("0.80")),
            ("balance_78_percent_of_value", dec("0.78")),
        ] {
            let threshold = value * share;
            let row = rows(&initial)
                .iter()
                .find(|r| dec_of(&r["balance"]) <= threshold)
                .expect("the initial schedule reaches the threshold");
            assert_eq!(m[name]["payment"], row["number"], "{body}: {name}: {m}");
            assert_eq!(m[name]["date"], row["date"], "{body}: {name}: {m}");
        }
    }
}

#[test]
fn a_property_value_below_the_principal_gives_a_note_not_an_error() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule_of(
        &app,
        &with(
            &loan_100k(),
            json!({"property_value": "90000", "first_payment_date": "2027-01-01"}),
        ),
    );

    // Assert
    assert!(
        has_note(&s, "below the principal"),
        "a note says so: {:?}",
        notes(&s)
    );
    let m = &s["summary"]["milestones"];
    let (number, _) = first_row_at_or_below(&s, dec("72000"));
    assert_eq!(m["balance_80_percent_of_value"]["payment"], number);
    assert_eq!(m["amortization_midpoint"]["payment"], 180);
}
