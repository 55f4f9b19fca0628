//! `/api/v1/loans/schedule` (JSON, GET and POST) and `/api/v1/loans/schedule.csv`.

use rust_decimal::Decimal;
use serde_json::{json, Value};

use crate::helpers::{dec, dec_of, shared_app, TestApp, SCHEDULE, SCHEDULE_CSV};

/// The schedule of these terms, posted as JSON; the answer must be 200 JSON.
fn schedule_of(app: &TestApp, body: Value) -> Value {
    let r = app.post_json(SCHEDULE, &body);
    assert_eq!(r.status, 200, "body: {}", r.text());
    assert_eq!(r.media_type(), "application/json");
    r.json()
}

fn rows(s: &Value) -> &Vec<Value> {
    s["schedule"].as_array().expect("a schedule array")
}

/// Checks what every posted schedule must satisfy: rows numbered 1..n, each row
/// adding up, the balance ending at zero, the principal parts summing to the
/// principal and the summary agreeing with the rows.
fn assert_ledger_adds_up(s: &Value, principal: &str) {
    let rows = rows(s);
    assert!(!rows.is_empty(), "a schedule has rows");
    let mut balance = dec(principal);
    let (mut paid, mut interest_total, mut principal_total) =
        (Decimal::ZERO, Decimal::ZERO, Decimal::ZERO);
    for (index, row) in rows.iter().enumerate() {
        assert_eq!(row["number"], index + 1, "rows are numbered from 1: {row}");
        let (payment, interest, part) = (
            dec_of(&row["payment"]),
            dec_of(&row["interest"]),
            dec_of(&row["principal"]),
        );
        assert_eq!(
            payment,
            interest + part,
            "payment = interest + principal: {row}"
        );
        balance -= part;
        assert_eq!(
            dec_of(&row["balance"]),
            balance,
            "the balance falls by the principal: {row}"
        );
        paid += payment;
        interest_total += interest;
        principal_total += part;
    }
    let last = rows.last().expect("a last row");
    assert_eq!(
        dec_of(&last["balance"]),
        Decimal::ZERO,
        "the loan is repaid"
    );
    assert_eq!(principal_total, dec(principal), "Σ principal = principal");
    let summary = &s["summary"];
    assert_eq!(summary["number_of_payments"], rows.len());
    assert_eq!(summary["final_payment"], last["payment"]);
    assert_eq!(
        dec_of(&summary["total_paid"]),
        paid,
        "total paid = Σ payments"
    );
    assert_eq!(
        dec_of(&summary["total_interest"]),
        interest_total,
        "total interest = Σ interest"
    );
}

/// Digits after the decimal point of a money figure as written.
fn decimals_of(text: &str) -> usize {
    text.split_once('.').map_or(0, |(_, f)| f.len())
}

/// Every money figure of the answer (summary and rows), as written.
fn money_figures(s: &Value) -> Vec<String> {
    let summary = &s["summary"];
    let mut out: Vec<String> = ["payment", "final_payment", "total_paid", "total_interest"]
        .iter()
        .map(|k| summary[*k].as_str().expect("a money string").to_string())
        .collect();
    for row in rows(s) {
        for k in ["payment", "interest", "principal", "balance"] {
            out.push(row[k].as_str().expect("a money string").to_string());
        }
    }
    out
}

#[test]
fn post_and_get_give_identical_json_for_the_same_fields() {
    // Arrange
    let app = shared_app();
    let body = json!({
        "principal": "250000",
        "annual_rate_percent": "6.5",
        "term_months": 360,
        "currency": "EUR",
        "payment_frequency": "monthly",
        "compounding": "monthly",
        "payment_rounding": "up",
        "interest_rounding": "half_even"
    });
    let query = "principal=250000&annual_rate_percent=6.5&term_months=360&currency=EUR\
                 &payment_frequency=monthly&compounding=monthly&payment_rounding=up\
                 &interest_rounding=half_even";

    // Act
    let posted = app.post_json(SCHEDULE, &body);
    let got = app.get(&format!("{SCHEDULE}?{query}"));

    // Assert
    assert_eq!(posted.status, 200, "{}", posted.text());
    assert_eq!(got.status, 200, "{}", got.text());
    assert_eq!(got.media_type(), "application/json");
    assert_eq!(posted.json(), got.json());
}

#[test]
fn post_and_get_give_identical_json_when_the_payment_is_solved() {
    // Arrange
    let app = shared_app();
    let body = json!({"principal": "100000", "annual_rate_percent": "6", "payment": "1110.21"});
    let query = "principal=100000&annual_rate_percent=6&payment=1110.21";

    // Act
    let posted = app.post_json(SCHEDULE, &body);
    let got = app.get(&format!("{SCHEDULE}?{query}"));

    // Assert
    assert_eq!(posted.status, 200, "{}", posted.text());
    assert_eq!(posted.json(), got.json());
}

// The expected payments are the level-payment annuity figures of common
// practice (no source): 100,000 at 6 %/12 a month.

#[test]
fn a_ten_year_loan_of_100000_at_6_percent_pays_1110_21_a_month() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule_of(
        &app,
        json!({"principal": "100000", "annual_rate_percent": "6", "term_months": 120}),
    );

    // Assert
    assert_eq!(s["summary"]["payment"], "1110.21");
    assert_eq!(s["summary"]["number_of_payments"], 120);
    assert_eq!(s["summary"]["currency"], "USD");
    assert_eq!(s["summary"]["payment_frequency"], "monthly");
    assert_eq!(dec_of(&s["summary"]["periodic_rate"]), dec("0.005"));
    assert_eq!(rows(&s)[0]["payment"], "1110.21");
    assert_eq!(rows(&s)[0]["interest"], "500.00");
}

#[test]
fn a_thirty_year_loan_of_100000_at_6_percent_pays_599_55_a_month() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule_of(
        &app,
        json!({"principal": "100000", "annual_rate_percent": "6", "term_months": 360}),
    );

    // Assert
    assert_eq!(s["summary"]["payment"], "599.55");
    assert_eq!(s["summary"]["number_of_payments"], 360);
    assert_eq!(rows(&s).len(), 360);
}

#[test]
fn the_final_balance_is_zero_and_the_principal_parts_add_up_to_the_principal() {
    // Arrange
    let app = shared_app();

    for months in [120, 360] {
        // Act
        let s = schedule_of(
            &app,
            json!({"principal": "100000", "annual_rate_percent": "6", "term_months": months}),
        );

        // Assert
        assert_eq!(
            rows(&s).last().unwrap()["balance"],
            "0.00",
            "{months} months"
        );
        assert_ledger_adds_up(&s, "100000");
    }
}

#[test]
fn the_csv_schedule_has_a_header_crlf_lines_and_the_json_figures() {
    // Arrange
    let app = shared_app();
    let query = "principal=100000&annual_rate_percent=6&term_months=120";
    let s = app.get(&format!("{SCHEDULE}?{query}")).json();

    // Act
    let r = app.get(&format!("{SCHEDULE_CSV}?{query}"));

    // Assert
    assert_eq!(r.status, 200);
    assert_eq!(r.media_type(), "text/csv");
    let body = r.text();
    assert!(body.ends_with("\r\n"), "the last line ends with CRLF");
    assert_eq!(
        body.matches('\n').count(),
        body.matches("\r\n").count(),
        "every line ends with CRLF"
    );
    let lines: Vec<&str> = body.trim_end_matches("\r\n").split("\r\n").collect();
    assert_eq!(
        lines[0],
        "number,date,payment,extra,interest,principal,balance"
    );
    let json_rows = rows(&s);
    assert_eq!(lines.len() - 1, json_rows.len(), "one row per payment");
    for (line, row) in lines[1..].iter().zip(json_rows) {
        assert!(
            row["date"].is_null(),
            "an undated row has a null date: {row}"
        );
        let expected = format!(
            "{},{},{},{},{},{},{}",
            row["number"],
            row["date"].as_str().unwrap_or(""), // null: an empty field
            row["payment"].as_str().unwrap(),
            row["extra"].as_str().unwrap(),
            row["interest"].as_str().unwrap(),
            row["principal"].as_str().unwrap(),
            row["balance"].as_str().unwrap()
        );
        assert_eq!(*line, expected);
    }
}

#[test]
fn accept_text_csv_on_the_plain_get_gives_the_csv_schedule() {
    // Arrange
    let app = shared_app();
    let query = "principal=100000&annual_rate_percent=6&term_months=360";
    let csv = app.get(&format!("{SCHEDULE_CSV}?{query}"));

    // Act
    let r = app.get_with(&format!("{SCHEDULE}?{query}"), &[("Accept", "text/csv")]);

    // Assert
    assert_eq!(r.status, 200);
    assert_eq!(r.media_type(), "text/csv");
    assert_eq!(r.text(), csv.text());
}

#[test]
fn accept_preferring_json_over_csv_on_the_plain_get_gives_json() {
    // Arrange
    let app = shared_app();
    let query = "principal=100000&annual_rate_percent=6&term_months=360";

    // Act
    let r = app.get_with(
        &format!("{SCHEDULE}?{query}"),
        &[("Accept", "application/json, text/csv;q=0.5")],
    );

    // Assert
    assert_eq!(r.status, 200);
    assert_eq!(r.media_type(), "application/json");
    assert_eq!(r.json()["summary"]["payment"], "599.55");
}

#[test]
fn a_zero_percent_loan_repays_in_level_payments_without_interest() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule_of(
        &app,
        json!({"principal": "12000", "annual_rate_percent": "0", "term_months": 48}),
    );

    // Assert
    assert_eq!(s["summary"]["payment"], "250.00");
    assert_eq!(s["summary"]["total_interest"], "0.00");
    assert_eq!(s["summary"]["total_paid"], "12000.00");
    assert_eq!(rows(&s).len(), 48);
    for row in rows(&s) {
        assert_eq!(row["payment"], "250.00", "{row}");
        assert_eq!(row["interest"], "0.00", "{row}");
    }
    assert_ledger_adds_up(&s, "12000");
}

/// The posted ledger, simulated independently: interest rounded half up to the
/// cent each month; a payment that would repay the balance is the balance plus
/// its interest. Returns the number of payments and the last one.
fn simulate(principal: Decimal, monthly_rate: Decimal, payment: Decimal) -> (usize, Decimal) {
    let mut balance = principal;
    let mut n = 0;
    loop {
        n += 1;
        let interest = (balance * monthly_rate)
            .round_dp_with_strategy(2, rust_decimal::RoundingStrategy::MidpointAwayFromZero);
        let owed = balance + interest;
        if owed <= payment {
            return (n, owed);
        }
        balance = owed - payment;
        assert!(n < 10_000, "the simulation repays");
    }
}

#[test]
fn a_given_payment_solves_the_number_of_payments() {
    // Arrange
    let app = shared_app();
    let (expected_n, expected_last) = simulate(dec("100000"), dec("0.005"), dec("1110.21"));

    // Act
    let s = schedule_of(
        &app,
        json!({"principal": "100000", "annual_rate_percent": "6", "payment": "1110.21"}),
    );

    // Assert
    let summary = &s["summary"];
    assert_eq!(summary["payment"], "1110.21");
    let n = summary["number_of_payments"].as_u64().expect("a count");
    assert!(n == 120 || n == 121, "120 or 121 payments, not {n}");
    assert_eq!(n as usize, expected_n, "the posted ledger's count");
    assert_eq!(rows(&s).len() as u64, n);
    let last = dec_of(&summary["final_payment"]);
    assert!(
        last <= dec("1110.21"),
        "the last payment {last} ≤ the regular one"
    );
    assert!(last > Decimal::ZERO);
    assert_eq!(last, expected_last);
    for row in &rows(&s)[..rows(&s).len() - 1] {
        assert_eq!(row["payment"], "1110.21", "the regular payment: {row}");
    }
    assert!(
        s["derivation"].get("payment").is_none(),
        "no payment derivation when the payment is given"
    );
    assert_ledger_adds_up(&s, "100000");
}

#[test]
fn a_given_payment_that_leaves_a_small_last_payment_keeps_it_below_the_regular_one() {
    // Arrange
    let app = shared_app();
    let (expected_n, expected_last) = simulate(dec("100000"), dec("0.005"), dec("2000.00"));

    // Act
    let s = schedule_of(
        &app,
        json!({"principal": "100000", "annual_rate_percent": "6", "payment": "2000.00"}),
    );

    // Assert
    let summary = &s["summary"];
    assert_eq!(summary["number_of_payments"], expected_n);
    let last = dec_of(&summary["final_payment"]);
    assert_eq!(last, expected_last);
    assert!(last <= dec("2000.00"));
    assert_ledger_adds_up(&s, "100000");
}

#[test]

fn a_given_payment_posts_until_repaid_and_never_ends_above_the_regular_payment() {
    // Arrange
    let app = shared_app();

    for payment in ["10.01", "10.02", "10.50", "11.00"] {
        let (expected_n, expected_last) = simulate(dec("1000"), dec("0.01"), dec(payment));

        // Act
        let s = schedule_of(
            &app,
            json!({"principal": "1000", "annual_rate_percent": "12", "payment": payment}),
        );

        // Assert
        let summary = &s["summary"];
        let last = dec_of(&summary["final_payment"]);
        assert!(
            last <= dec(payment),
            "payment {payment}: the last payment {last} is above the regular one ({} payments)",
            summary["number_of_payments"]
        );
        assert_eq!(
            summary["number_of_payments"], expected_n,
            "payment {payment}"
        );
        assert_eq!(last, expected_last, "payment {payment}");
        assert_ledger_adds_up(&s, "1000");
    }
}

#[test]
fn jpy_amounts_are_whole_yen() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule_of(
        &app,
        json!({"principal": "1000000", "annual_rate_percent": "3", "term_months": 60, "currency": "JPY"}),
    );

    // Assert
    assert_eq!(s["summary"]["currency"], "JPY");
    for figure in money_figures(&s) {
        assert_eq!(decimals_of(&figure), 0, "JPY has no decimals: {figure}");
    }
    assert_eq!(rows(&s).last().unwrap()["balance"], "0");
    assert_ledger_adds_up(&s, "1000000");
}

#[test]
fn kwd_amounts_have_three_decimals() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule_of(
        &app,
        json!({"principal": "10000.125", "annual_rate_percent": "5", "term_months": 24, "currency": "KWD"}),
    );

    // Assert
    assert_eq!(s["summary"]["currency"], "KWD");
    for figure in money_figures(&s) {
        assert_eq!(decimals_of(&figure), 3, "KWD has 3 decimals: {figure}");
    }
    assert_eq!(rows(&s).last().unwrap()["balance"], "0.000");
    assert_ledger_adds_up(&s, "10000.125");
}

#[test]
fn biweekly_payments_with_monthly_compounding_use_the_equivalent_periodic_rate() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule_of(
        &app,
        json!({
            "principal": "100000",
            "annual_rate_percent": "6",
            "term_months": 360,
            "payment_frequency": "biweekly",
            "compounding": "monthly"
        }),
    );

    // Assert
    let summary = &s["summary"];
    assert_eq!(summary["payment_frequency"], "biweekly");
    assert_eq!(
        summary["number_of_payments"], 780,
        "30 years of 26 payments"
    );
    let i = dec_of(&summary["periodic_rate"]);
    assert_ne!(
        i,
        dec("0.06") / Decimal::from(26),
        "not the nominal rate / 26"
    );
    // (1 + 0.06/12)^(12/26) − 1, to the precision of f64.
    let expected = 1.005_f64.powf(12.0 / 26.0) - 1.0;
    let got: f64 = summary["periodic_rate"].as_str().unwrap().parse().unwrap();
    assert!((got - expected).abs() < 1e-15, "{got} vs {expected}");
    let notes: Vec<&str> = s["notes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|n| n.as_str().unwrap())
        .collect();
    assert!(
        notes.iter().any(|n| n.contains("equivalent rate")),
        "a note explains the equivalent rate: {notes:?}"
    );
    assert_ledger_adds_up(&s, "100000");
}

#[test]
fn every_json_result_says_first_that_it_is_not_an_offer() {
    // Arrange
    let app = shared_app();
    let requests = [
        json!({"principal": "100000", "annual_rate_percent": "6", "term_months": 120}),
        json!({"principal": "100000", "annual_rate_percent": "6", "payment": "1110.21"}),
        json!({"principal": "12000", "annual_rate_percent": "0", "term_payments": 48}),
        json!({"principal": "1000000", "annual_rate_percent": "3", "term_months": 12, "currency": "JPY"}),
        json!({"principal": "5000", "annual_rate_percent": "8", "term_months": 12,
               "payment_frequency": "weekly", "compounding": "daily"}),
    ];

    for body in requests {
        // Act
        let s = schedule_of(&app, body.clone());

        // Assert
        let first = s["notes"][0].as_str().unwrap_or("");
        assert!(
            first.contains("not an offer"),
            "{body}: notes[0] = {first:?}"
        );
    }
}
