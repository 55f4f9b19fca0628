//! Dates and the odd first period.

use serde_json::json;

use super::reference::{assert_monthly_dates, Ymd};
use super::{dated_100k, has_note, loan_100k, notes, rows, schedule_of};
use crate::helpers::{dec, dec_of, shared_app, with, SCHEDULE};

// Funded 2027-01-10, first payment 2027-03-01: the regular month before the first
// payment starts 2027-02-01, so the odd period runs 2027-01-10 to 2027-02-01.
// Worked by hand: actual days 31 − 10 + 1 = 22; 30/360 (ISDA 2006 Definitions,
// section 4.16(f), from memory) 30 × (2 − 1) + (1 − 10) = 21. Interest on 100,000
// at 6 %: 6,000 × 22/365 = 361.6438… → 361.64; 6,000 × 22/360 = 366.666… → 366.67;
// 6,000 × 21/360 = 350.00 (halves rounded up).

#[test]
fn a_loan_funded_january_10th_paying_from_march_1st_adds_22_days_of_interest_to_the_first_payment()
{
    // Arrange
    let app = shared_app();
    let undated = schedule_of(&app, &loan_100k());

    // Act
    let s = schedule_of(&app, &dated_100k());

    // Assert
    let summary = &s["summary"];
    assert_eq!(summary["payment"], "599.55");
    assert_eq!(summary["odd_days"], 22);
    assert_eq!(summary["odd_days_interest"], "361.64");
    assert_eq!(summary["prepaid_interest"], "0.00");
    assert_eq!(rows(&s).len(), 360);
    assert_eq!(rows(&s)[0]["date"], "2027-03-01");
    assert_eq!(rows(&s)[359]["date"], "2057-02-01");
    assert_eq!(summary["payoff_date"], "2057-02-01");
    assert_monthly_dates(&s, Ymd(2027, 3, 1));
    let first = &rows(&s)[0];
    assert_eq!(
        dec_of(&first["payment"]),
        dec("599.55") + dec("361.64"),
        "the first payment carries the odd days' interest: {first}"
    );
    // The odd days' interest is paid, not amortized: every balance is the undated one.
    for (dated, plain) in rows(&s).iter().zip(rows(&undated)) {
        assert_eq!(dated["balance"], plain["balance"], "{dated} vs {plain}");
        assert_eq!(dated["principal"], plain["principal"], "{dated} vs {plain}");
    }
    assert_eq!(
        dec_of(&summary["total_interest"]),
        dec_of(&undated["summary"]["total_interest"]) + dec("361.64")
    );
    assert!(
        undated["schedule"][0]["date"].is_null(),
        "undated rows have a null date"
    );
    assert!(undated["summary"]["payoff_date"].is_null());
    assert!(
        has_note(&s, "22 days longer than a regular one"),
        "a note explains the odd period: {:?}",
        notes(&s)
    );
}

#[test]
fn thirty_360_counts_21_odd_days_and_actual_360_divides_22_days_by_360() {
    // Arrange
    let app = shared_app();
    let cases = [
        ("actual_365", 22, "361.64"),
        ("actual_360", 22, "366.67"),
        ("thirty_360", 21, "350.00"),
    ];

    for (day_count, days, interest) in cases {
        // Act
        let s = schedule_of(&app, &with(&dated_100k(), json!({"day_count": day_count})));

        // Assert
        let summary = &s["summary"];
        assert_eq!(summary["odd_days"], days, "{day_count}");
        assert_eq!(summary["odd_days_interest"], interest, "{day_count}");
        assert_eq!(
            dec_of(&rows(&s)[0]["payment"]),
            dec_of(&summary["payment"]) + dec(interest),
            "{day_count}: the first payment is the regular one plus the odd days' interest"
        );
        assert_eq!(rows(&s)[1]["payment"], "599.55", "{day_count}");
    }
}

#[test]
fn prepaid_odd_days_interest_leaves_the_first_payment_regular() {
    // Arrange
    let app = shared_app();
    let body = with(
        &dated_100k(),
        json!({"day_count": "thirty_360", "odd_days_interest": "prepaid"}),
    );

    // Act
    let s = schedule_of(&app, &body);

    // Assert
    let summary = &s["summary"];
    assert_eq!(summary["prepaid_interest"], "350.00");
    assert_eq!(summary["odd_days"], 21);
    assert_eq!(rows(&s)[0]["payment"], "599.55");
    assert_eq!(rows(&s)[0]["payment"], summary["payment"]);
    assert_eq!(
        rows(&s)[0]["interest"],
        "500.00",
        "one regular month at 0.5 %"
    );
    assert!(has_note(&s, "prepaid interest"), "{:?}", notes(&s));
}

#[test]
fn due_dates_from_month_ends_and_leap_day_follow_calendar_month_addition_for_all_payments() {
    // Arrange
    let app = shared_app();
    // The first due date, the due dates of some payments (by index from 0), the payoff date.
    type Case = (Ymd, &'static [(usize, &'static str)], Option<&'static str>);
    let cases: [Case; 6] = [
        // Paying on the 31st: on the last day of shorter months (2028 is a leap year).
        (
            Ymd(2027, 1, 31),
            &[
                (0, "2027-01-31"),
                (1, "2027-02-28"),
                (2, "2027-03-31"),
                (3, "2027-04-30"),
                (4, "2027-05-31"),
                (13, "2028-02-29"),
            ],
            Some("2056-12-31"),
        ),
        (Ymd(2027, 1, 30), &[], None),
        (Ymd(2027, 1, 29), &[], None),
        // First paying on leap day: on February 28th in common years, and the 29th
        // comes back after February.
        (
            Ymd(2028, 2, 29),
            &[
                (1, "2028-03-29"),
                (12, "2029-02-28"),
                (13, "2029-03-29"),
                (48, "2032-02-29"),
            ],
            None,
        ),
        (Ymd(2027, 8, 31), &[], None),
        (Ymd(2099, 12, 31), &[], None), // 2100 is not a leap year
    ];

    for (first, due, payoff) in cases {
        // Act
        let s = schedule_of(
            &app,
            &with(
                &loan_100k(),
                json!({"first_payment_date": first.to_string()}),
            ),
        );

        // Assert
        assert_eq!(rows(&s).len(), 360, "{first}");
        assert_monthly_dates(&s, first);
        for (index, date) in due {
            assert_eq!(
                rows(&s)[*index]["date"],
                *date,
                "{first}: payment {}",
                index + 1
            );
        }
        if let Some(payoff) = payoff {
            assert_eq!(s["summary"]["payoff_date"], payoff, "{first}");
        }
    }
}

#[test]
fn a_short_first_period_charges_a_full_period_less_a_credit_and_says_so() {
    // Funded 2026-03-25, first payment 2026-04-01: the regular period runs from
    // 2026-03-01, 24 days before funding. By hand: a full month's interest is
    // 250,000 × 0.06/12 = 1,250.00; the credit 250,000 × 0.06 × 24/365 =
    // 986.301… = 986.30 (actual/365); the first interest 1,250.00 − 986.30 = 263.70.
    let app = shared_app();
    let s = app
        .get(&format!(
            "{SCHEDULE}?principal=250000&annual_rate_percent=6&term_months=360&funding_date=2026-03-25&first_payment_date=2026-04-01"
        ))
        .json();
    assert_eq!(
        s["schedule"][0]["interest"], "263.70",
        "{}",
        s["schedule"][0]
    );
    assert!(
        has_note(&s, "24 days shorter than a regular one")
            && has_note(
                &s,
                "986.30 of interest for the days before funding is taken off the first payment"
            ),
        "{:?}",
        notes(&s)
    );
}
