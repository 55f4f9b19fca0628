//! The conventions that outside references pin down: the regular due date before a
//! semimonthly first payment, the named 30/360 variants, the EU APRC's time basis,
//! every bad field named at once, and a 413 a client that writes its whole body
//! first can read.
//!
//! The odd-day counts here are worked by hand on a calendar from the rules the API
//! guide states; the Python cross-check (`tests/crosscheck/conventions.py`) holds
//! the same rules to QuantLib's `Schedule` and `Thirty360` day counters.

use std::io::{Read, Write};
use std::net::TcpStream;
use std::time::Duration;

use serde_json::{json, Value};

use crate::helpers::{
    assert_problem, config_with_body_limit, dec, pointers, shared_app, spawn_app_with, TestApp,
    SCHEDULE,
};

const APR: &str = "/api/v1/apr";

fn schedule(app: &TestApp, query: &str) -> Value {
    let r = app.get(&format!("{SCHEDULE}?{query}"));
    assert_eq!(r.status, 200, "{query}: {}", r.text());
    r.json()
}

fn semimonthly(funding: &str, first: &str, extra: &str) -> String {
    format!(
        "principal=187500&annual_rate_percent=6.875&term_payments=30&payment_frequency=semimonthly&funding_date={funding}&first_payment_date={first}{extra}"
    )
}

#[test]
fn a_semimonthly_loan_funded_on_its_previous_due_date_has_no_odd_days() {
    // Arrange: a 5th/20th schedule; the due date before 5 March is 20 February, and
    // the one before 5 April is 20 March (calendar, by hand).
    let app = shared_app();
    for (funding, first) in [("2027-02-20", "2027-03-05"), ("2027-03-20", "2027-04-05")] {
        // Act
        let s = schedule(&app, &semimonthly(funding, first, ""));

        // Assert
        assert_eq!(s["summary"]["odd_days"], 0, "{funding} → {first}");
        assert_eq!(s["summary"]["odd_days_interest"], "0.00");
        assert_eq!(s["schedule"][0]["date"], first);
        assert_eq!(
            s["schedule"][1]["date"],
            if first == "2027-03-05" {
                "2027-03-20"
            } else {
                "2027-04-20"
            }
        );
    }
}

#[test]
fn a_semimonthly_odd_period_counts_from_the_schedules_own_previous_due_date() {
    // Arrange: 15th/30th; the due date before 15 February 2027 is 30 January, so
    // funding on 3 January leaves 27 days by 30/360 (30·0 + 30 − 3) and 27 actual days.
    let app = shared_app();
    for day_count in ["thirty_360", "thirty_360_bond_basis", "actual_365"] {
        // Act
        let s = schedule(
            &app,
            &semimonthly(
                "2027-01-03",
                "2027-02-15",
                &format!("&day_count={day_count}"),
            ),
        );

        // Assert
        assert_eq!(s["summary"]["odd_days"], 27, "{day_count}");
        let note = s["notes"]
            .as_array()
            .unwrap()
            .iter()
            .filter_map(Value::as_str)
            .find(|n| n.contains("27 days longer"))
            .unwrap_or_else(|| panic!("{day_count}: a note on the odd days: {}", s["notes"]));
        assert!(note.contains("2027-01-30"), "{note}");
    }
    // 187,500 × 6.875 % × 27 / 360 = 966.796875 → 966.80 (30/360); × 27 / 365 → 953.55.
    let s = schedule(
        &app,
        &semimonthly("2027-01-03", "2027-02-15", "&day_count=thirty_360_us"),
    );
    assert_eq!(s["summary"]["odd_days_interest"], "966.80");
    let s = schedule(&app, &semimonthly("2027-01-03", "2027-02-15", ""));
    assert_eq!(s["summary"]["odd_days_interest"], "953.55");
}

#[test]
fn each_thirty_360_variant_is_offered_under_its_own_name() {
    // Arrange: funded 28 February 2027 (February's last day), monthly payments from
    // 30 April, so the regular period starts on 30 March. By hand from each rule:
    // bond basis 30·1 + (30 − 28) = 32; US 30 (D1, February's last day, becomes 30);
    // 30E/360 32 (February is not adjusted).
    let app = shared_app();
    let base = "principal=100000&annual_rate_percent=6&term_months=360&funding_date=2027-02-28&first_payment_date=2027-04-30";
    for (day_count, days) in [
        ("thirty_360_bond_basis", 32),
        ("thirty_360", 32),
        ("thirty_360_us", 30),
        ("thirty_e_360", 32),
        ("actual_360", 30),
    ] {
        // Act
        let s = schedule(&app, &format!("{base}&day_count={day_count}"));

        // Assert
        assert_eq!(s["summary"]["odd_days"], days, "{day_count}");
    }
    // Payments on the 31st from 31 May: the regular period before starts on 30 April
    // (the 31st clamped). From 15 January that is 30·3 + (30 − 15) = 105 days by every
    // variant (no 31st and no February end involved).
    let base = "principal=100000&annual_rate_percent=6&term_months=360&funding_date=2027-01-15&first_payment_date=2027-05-31";
    for day_count in ["thirty_360_bond_basis", "thirty_360_us", "thirty_e_360"] {
        let s = schedule(&app, &format!("{base}&day_count={day_count}"));
        assert_eq!(s["summary"]["odd_days"], 105, "{day_count}");
    }
    // An unknown name lists the variants.
    let r = app.get(&format!("{SCHEDULE}?{base}&day_count=thirty_360_isda"));
    let p = assert_problem(&r, 422, "invalid-fields");
    let message = p["errors"][0]["message"].as_str().unwrap();
    for name in ["thirty_360_bond_basis", "thirty_360_us", "thirty_e_360"] {
        assert!(message.contains(name), "{message}");
    }
}

fn aprc(app: &TestApp, body: Value) -> Value {
    let r = app.post_json(APR, &body);
    assert_eq!(r.status, 200, "{body}: {}", r.text());
    r.json()
}

#[test]
fn the_annex_iii_examples_of_98_7_ec_hold_on_the_days_basis_in_the_full_figure() {
    // Directive 98/7/EC Annex III examples 1-3 (as summarised in REGULATIONS.md):
    // 12.96 %, 16.90 %, 13.07 %.
    let app = shared_app();
    let cases = [
        (
            json!([{"amount": "1000", "date": "1994-01-01"}]),
            json!([{"amount": "1200", "date": "1995-07-01"}]),
            "12.96",
        ),
        (
            json!([{"amount": "950", "date": "1994-01-01"}]),
            json!([{"amount": "1200", "date": "1995-07-01"}]),
            "16.90",
        ),
        (
            json!([{"amount": "1000", "date": "1994-01-01"}]),
            json!([{"amount": "600", "date": "1995-01-01"}, {"amount": "600", "date": "1996-01-01"}]),
            "13.07",
        ),
    ];
    for (advances, payments, want) in cases {
        let a = aprc(
            &app,
            json!({"method": "eu_aprc", "time_basis": "days", "advances": advances, "payments": payments}),
        );
        assert_eq!(a["time_basis"], "days");
        let full = dec(a["apr_percent_full"].as_str().unwrap());
        assert_eq!(
            full.round_dp_with_strategy(2, rust_decimal::RoundingStrategy::MidpointAwayFromZero)
                .to_string(),
            want
        );
        let notes = a["notes"].to_string();
        assert!(notes.contains("chosen by the request"), "{notes}");
    }
}

#[test]
fn the_time_basis_may_be_chosen_and_auto_says_why_it_chose() {
    let app = shared_app();
    // Whole months after the drawdown: auto takes equal months and says so.
    let flows = "advance=1000@2027-01-10&payment=520@2027-02-10,520@2027-03-10";
    let r = app.get(&format!("{APR}?method=eu_aprc&{flows}"));
    assert_eq!(r.status, 200, "{}", r.text());
    let auto = r.json();
    assert_eq!(auto["time_basis"], "equal_months");
    assert!(auto["notes"].to_string().contains("monthly anniversary"));
    // The same flows on a days basis: 31 and 59 days of a 365-day year.
    let r = app.get(&format!("{APR}?method=eu_aprc&time_basis=days&{flows}"));
    assert_eq!(r.status, 200, "{}", r.text());
    let days = r.json();
    assert_eq!(days["time_basis"], "days");
    assert_ne!(days["apr_percent_full"], auto["apr_percent_full"]);
    // Not a basis, and not for the US method.
    let r = app.get(&format!("{APR}?method=eu_aprc&time_basis=months&{flows}"));
    assert_eq!(
        pointers(&assert_problem(&r, 422, "invalid-fields")),
        ["time_basis"]
    );
    let r = app.get(&format!("{APR}?time_basis=days&{flows}"));
    assert_eq!(
        pointers(&assert_problem(&r, 422, "invalid-fields")),
        ["time_basis"]
    );
}

#[test]
fn every_bad_field_is_named_at_once_in_a_query_and_in_a_body() {
    let app = shared_app();
    // Act: the query of the report.
    let r = app.get(&format!(
        "{SCHEDULE}?principal=-5&annual_rate_percent=x&term_months=0"
    ));

    // Assert: each field once, the rate's example a percentage.
    let p = assert_problem(&r, 422, "invalid-fields");
    let mut named = pointers(&p);
    named.sort();
    assert_eq!(
        named,
        ["annual_rate_percent", "principal", "term_months"],
        "{p}"
    );
    let rate = p["errors"]
        .as_array()
        .unwrap()
        .iter()
        .find(|e| e["pointer"] == "annual_rate_percent")
        .unwrap();
    assert!(
        rate["message"].as_str().unwrap().contains("e.g. 6.5"),
        "{rate}"
    );

    // The same in JSON, with a payment count too large and a bad currency.
    let r = app.post_json(
        SCHEDULE,
        &json!({"principal": "-5", "annual_rate_percent": "x", "term_payments": 7000, "payment_frequency": "fortnightly"}),
    );
    let p = assert_problem(&r, 422, "invalid-fields");
    let mut named = pointers(&p);
    named.sort();
    assert_eq!(
        named,
        [
            "/annual_rate_percent",
            "/payment_frequency",
            "/principal",
            "/term_payments"
        ],
        "{p}"
    );
    // The order is stable: the same request names them in the same order.
    let again = app.post_json(
        SCHEDULE,
        &json!({"principal": "-5", "annual_rate_percent": "x", "term_payments": 7000, "payment_frequency": "fortnightly"}),
    );
    assert_eq!(again.json()["errors"], p["errors"]);

    // A rule across fields waits for the fields themselves: a bad principal and no
    // term name the principal only.
    let r = app.get(&format!("{SCHEDULE}?principal=0&annual_rate_percent=6"));
    assert_eq!(
        pointers(&assert_problem(&r, 422, "invalid-fields")),
        ["principal"]
    );
    let r = app.get(&format!("{SCHEDULE}?principal=1000&annual_rate_percent=6"));
    assert_eq!(
        pointers(&assert_problem(&r, 422, "invalid-fields")),
        ["term_months"]
    );
}

#[test]
fn a_client_that_writes_an_oversized_body_before_reading_gets_the_413_problem() {
    // Arrange: a 64 KiB limit and a 12 MiB body sent whole, without Expect:
    // 100-continue, before a single byte is read (as Python's urllib does).
    let app = spawn_app_with(config_with_body_limit(64 * 1024));
    let body = vec![b' '; 12 * 1024 * 1024];
    let mut stream = TcpStream::connect(app.addr).unwrap();
    stream
        .set_read_timeout(Some(Duration::from_secs(20)))
        .unwrap();
    stream
        .set_write_timeout(Some(Duration::from_secs(20)))
        .unwrap();
    let head = format!(
        "POST {SCHEDULE} HTTP/1.1\r\nHost: {}\r\nContent-Type: application/json\r\nContent-Length: {}\r\n\r\n",
        app.addr,
        body.len()
    );

    // Act
    stream.write_all(head.as_bytes()).unwrap();
    stream
        .write_all(&body)
        .expect("the server reads the whole body before closing");
    let mut answer = Vec::new();
    let _ = stream.read_to_end(&mut answer);

    // Assert
    let r = crate::helpers::parse_response(&answer);
    assert_problem(&r, 413, "too-large");
    assert_eq!(r.header("connection"), Some("close"));
}

#[test]
fn a_body_declared_far_beyond_the_limit_or_waiting_for_continue_is_refused_at_once() {
    let app = spawn_app_with(config_with_body_limit(1024));
    for headers in [
        "Content-Length: 900000000\r\n".to_string(),
        "Content-Length: 4096\r\nExpect: 100-continue\r\n".to_string(),
    ] {
        let mut stream = TcpStream::connect(app.addr).unwrap();
        stream
            .set_read_timeout(Some(Duration::from_secs(10)))
            .unwrap();
        let head = format!(
            "POST {SCHEDULE} HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\n{headers}\r\n"
        );
        stream.write_all(head.as_bytes()).unwrap();
        let mut answer = Vec::new();
        let _ = stream.read_to_end(&mut answer);
        let r = crate::helpers::parse_response(&answer);
        assert_problem(&r, 413, "too-large");
    }
}

#[test]
fn the_savings_check_and_apy_operations_name_every_bad_field_at_once_too() {
    let app = shared_app();
    for (path, query, mut want) in [
        (
            "/api/v1/savings/plan",
            "deposit=-5&annual_rate_percent=x&term_months=0&opening_balance=-3",
            vec!["annual_rate_percent", "deposit", "opening_balance", "term_months"],
        ),
        (
            "/api/v1/loans/check",
            "principal=-5&annual_rate_percent=5&term_months=12&quoted_payment=-1&quoted_apr_percent=-2",
            vec!["principal", "quoted_apr_percent", "quoted_payment"],
        ),
        (
            "/api/v1/apy",
            "principal=-5&interest=-3&days=0",
            vec!["days", "interest", "principal"],
        ),
    ] {
        let r = app.get(&format!("{path}?{query}"));
        let p = assert_problem(&r, 422, "invalid-fields");
        let mut named = pointers(&p);
        named.sort();
        want.sort();
        assert_eq!(named, want, "{path}?{query}: {p}");
    }
}
