//! Plans that change over time: extra payments, interest-only periods,
//! balloons and rate steps, each against the reference ledger.

use rust_decimal::Decimal;
use serde_json::json;

use super::reference::{
    assert_matches_reference, level_payment, monthly_interest, RefLedger, RefLoan,
};
use super::{
    extras_json, has_note, loan_250k, notes, rate_step_json, rows, schedule_by_query, schedule_of,
};
use crate::helpers::{dec, dec_of, shared_app, with};

fn extras_reference() -> RefLoan {
    RefLoan {
        extras: vec![(13, None, dec("150")), (36, Some(36), dec("5000"))],
        ..RefLoan::new("250000", "6.5", 360)
    }
}

#[test]
fn extra_payments_post_like_an_independent_ledger_and_save_the_difference_of_two_ledgers() {
    // Arrange
    let app = shared_app();
    let reference_with = extras_reference().post();
    let reference_without = RefLoan::new("250000", "6.5", 360).post();
    assert_eq!(
        reference_without.payment,
        dec("1580.17"),
        "the textbook payment"
    );

    // Act
    let s = schedule_of(
        &app,
        &with(&loan_250k(), json!({"extra_payments": extras_json()})),
    );
    let plain = schedule_of(&app, &loan_250k());

    // Assert
    assert_matches_reference(&s, &reference_with);
    assert_matches_reference(&plain, &reference_without);
    let summary = &s["summary"];
    assert_eq!(summary["payment"], "1580.17", "the regular payment stays");
    assert_eq!(rows(&s)[12]["extra"], "150.00");
    assert_eq!(rows(&s)[11]["extra"], "0.00");
    assert_eq!(rows(&s)[35]["extra"], "5150.00");
    assert_eq!(
        dec_of(&summary["interest_saved"]),
        reference_without.total_interest - reference_with.total_interest,
        "interest saved = difference of the two ledgers"
    );
    assert_eq!(
        summary["payments_saved"],
        reference_without.rows.len() - reference_with.rows.len(),
        "payments saved = difference of the two ledgers"
    );
    assert!(dec_of(&summary["interest_saved"]) > Decimal::ZERO);
    assert!(
        plain["summary"]["interest_saved"].is_null(),
        "no savings without extras"
    );
    // Each row: principal = payment + extra − interest.
    for row in rows(&s) {
        assert_eq!(
            dec_of(&row["principal"]),
            dec_of(&row["payment"]) + dec_of(&row["extra"]) - dec_of(&row["interest"]),
            "{row}"
        );
    }
}

#[test]
fn an_extra_payment_on_a_date_goes_with_the_payment_due_on_or_after_it() {
    // Arrange: payments fall due on the 1st from 2027-03-01, so 2030-02-01 is payment 36.
    let app = shared_app();
    let dated = with(&loan_250k(), json!({"first_payment_date": "2027-03-01"}));
    let by_number = |at: u32| {
        schedule_of(
            &app,
            &with(
                &dated,
                json!({"extra_payments": [{"amount": "5000", "at": at}]}),
            ),
        )
    };
    let cases = [("2030-02-01", 36), ("2030-01-15", 36), ("2030-02-02", 37)];

    for (date, number) in cases {
        // Act
        let s = schedule_of(
            &app,
            &with(
                &dated,
                json!({"extra_payments": [{"amount": "5000", "at": date}]}),
            ),
        );

        // Assert
        assert_eq!(s, by_number(number), "{date} goes with payment {number}");
        let row = &rows(&s)[number as usize - 1];
        assert_eq!(row["extra"], "5000.00", "{date}: {row}");
        assert!(row["date"].as_str().unwrap() >= date, "{row}");
    }
    let query = schedule_by_query(
        &app,
        "principal=250000&annual_rate_percent=6.5&term_months=360\
         &first_payment_date=2027-03-01&extra_payments=5000@2030-02-01",
    );
    assert_eq!(query, by_number(36), "the query form AMOUNT@YYYY-MM-DD");
}

#[test]
fn extra_payments_after_payoff_are_ignored_with_a_note_not_refused() {
    // Arrange
    let app = shared_app();
    let mut reference = extras_reference();
    reference.extras.push((340, Some(340), dec("1000")));
    let reference = reference.post();
    assert!(
        reference.rows.len() < 340,
        "the reference loan is repaid before 340"
    );
    let body = with(
        &loan_250k(),
        json!({"extra_payments": [
            {"amount": "150", "from": 13},
            {"amount": "5000", "at": 36},
            {"amount": "1000", "at": 340}
        ]}),
    );

    // Act
    let s = schedule_of(&app, &body);
    let beyond_term = schedule_by_query(
        &app,
        "principal=100000&annual_rate_percent=6&term_months=360&extra_payments=1000@400",
    );

    // Assert
    assert_matches_reference(&s, &reference);
    assert!(has_note(&s, "ignored"), "a note says so: {:?}", notes(&s));
    assert_eq!(beyond_term["summary"]["number_of_payments"], 360);
    assert_eq!(beyond_term["summary"]["total_extra"], "0.00");
    assert!(
        has_note(&beyond_term, "ignored"),
        "a note says so: {:?}",
        notes(&beyond_term)
    );
}

// ---------------------------------------------------------------------------
// Interest-only, balloons, rate steps
// ---------------------------------------------------------------------------

#[test]
fn an_interest_only_year_pays_the_interest_then_amortizes_over_the_remaining_348_payments() {
    // Arrange: 120,000 at 7.2 %: 0.6 % a month, 720.00 of interest.
    let app = shared_app();
    let reference = RefLoan {
        interest_only: 12,
        ..RefLoan::new("120000", "7.2", 360)
    }
    .post();

    // Act
    let s = schedule_of(
        &app,
        &json!({"principal": "120000", "annual_rate_percent": "7.2", "term_months": 360,
                "interest_only_payments": 12}),
    );

    // Assert
    assert_matches_reference(&s, &reference);
    for row in &rows(&s)[..12] {
        assert_eq!(row["payment"], "720.00", "{row}");
        assert_eq!(row["interest"], "720.00", "{row}");
        assert_eq!(row["principal"], "0.00", "{row}");
        assert_eq!(row["balance"], "120000.00", "{row}");
    }
    let amortizing = level_payment(dec("120000"), dec("7.2"), 348);
    assert_eq!(dec_of(&rows(&s)[12]["payment"]), amortizing);
    assert_eq!(dec_of(&s["summary"]["payment"]), amortizing);
    assert_eq!(rows(&s).len(), 360);
}

#[test]
fn a_balloon_after_84_of_300_payments_falls_due_with_the_84th_payment() {
    // Arrange: amortized over 25 years, due after 7.
    let app = shared_app();
    let reference = RefLoan {
        balloon_after: Some(84),
        ..RefLoan::new("500000", "7", 300)
    }
    .post();

    // Act
    let s = schedule_of(
        &app,
        &json!({"principal": "500000", "annual_rate_percent": "7", "term_months": 300,
                "balloon_after_payments": 84}),
    );

    // Assert
    assert_matches_reference(&s, &reference);
    let summary = &s["summary"];
    let balloon = dec_of(&summary["balloon"]);
    assert_eq!(Some(balloon), reference.balloon);
    assert_eq!(rows(&s).len(), 84);
    let last = &rows(&s)[83];
    assert_eq!(
        dec_of(&last["payment"]),
        dec_of(&summary["payment"]) + balloon,
        "the last payment is the regular one plus the balloon: {last}"
    );
    assert_eq!(last["balance"], "0.00");
    assert_eq!(
        balloon + dec_of(&summary["payment"]),
        dec_of(&rows(&s)[82]["balance"])
            + monthly_interest(dec_of(&rows(&s)[82]["balance"]), dec("7")),
        "the 84th payment is what is owed then"
    );
    assert!(has_note(&s, "balloon"), "{:?}", notes(&s));
}

/// 100,000 at 6 % over 360, stepping to 7 % from payment 61.
fn rate_step_reference(keep_payment: bool) -> RefLedger {
    RefLoan {
        rate_change: Some((61, dec("7"))),
        keep_payment,
        ..RefLoan::new("100000", "6", 360)
    }
    .post()
}

#[test]
fn a_rate_step_at_payment_61_re_amortizes_the_balance_over_the_remaining_300_payments() {
    // Arrange
    let app = shared_app();
    let reference = rate_step_reference(false);

    // Act
    let s = schedule_of(&app, &rate_step_json());

    // Assert
    assert_matches_reference(&s, &reference);
    let r = rows(&s);
    assert_eq!(r.len(), 360);
    assert_eq!(r[59]["payment"], "599.55");
    let stepped = level_payment(dec_of(&r[59]["balance"]), dec("7"), 300);
    assert_eq!(dec_of(&r[60]["payment"]), stepped);
    assert!(stepped > dec("599.55"));
    assert_eq!(
        dec_of(&r[60]["interest"]),
        monthly_interest(dec_of(&r[59]["balance"]), dec("7")),
        "7 % from payment 61"
    );
}

#[test]
fn a_rate_step_keeping_the_payment_lengthens_the_term() {
    // Arrange
    let app = shared_app();
    let reference = rate_step_reference(true);
    assert!(reference.rows.len() > 360);

    // Act
    let s = schedule_of(
        &app,
        &with(&rate_step_json(), json!({"rate_change_keeps": "payment"})),
    );

    // Assert
    assert_matches_reference(&s, &reference);
    let r = rows(&s);
    assert!(r.len() > 360, "the term grows: {} payments", r.len());
    for row in &r[..r.len() - 1] {
        assert_eq!(row["payment"], "599.55", "the payment stays: {row}");
    }
}
