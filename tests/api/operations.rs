//! The answer store (repeated GETs, ETags and 304), CORS when configured, and the
//! loan check with plan fields (funding and first payment dates, prepaid interest).

use std::time::Duration;

use serde_json::{json, Value};

use crate::helpers::{
    assert_field_problem, dec, dec_of, shared_app, spawn_app, spawn_app_with, TestApp,
};
use residue::server::Config;

const SCHEDULE_GET: &str =
    "/api/v1/loans/schedule?principal=184500&annual_rate_percent=5.875&term_months=360";

#[test]
fn a_repeated_get_gets_the_same_bytes_and_tag_and_a_304_when_the_client_holds_them() {
    let app = shared_app();
    let first = app.get(SCHEDULE_GET);
    let second = app.get(SCHEDULE_GET);
    assert_eq!(first.status, 200);
    assert_eq!(second.status, 200);
    let tag = first.header("etag").expect("an ETag").to_string();
    assert_eq!(second.header("etag"), Some(tag.as_str()));
    assert_eq!(first.body, second.body);
    assert_eq!(second.media_type(), "application/json");
    // The security headers are added to stored answers too.
    assert_eq!(second.header("x-content-type-options"), Some("nosniff"));

    let held = app.get_with(SCHEDULE_GET, &[("If-None-Match", &tag)]);
    assert_eq!(held.status, 304);
    assert!(held.body.is_empty());
    let stale = app.get_with(SCHEDULE_GET, &[("If-None-Match", "\"0000\"")]);
    assert_eq!(stale.status, 200);
}

#[test]
fn the_store_keeps_json_and_csv_apart_and_different_loans_apart() {
    let app = shared_app();
    let json = app.get(SCHEDULE_GET);
    let csv = app.get_with(SCHEDULE_GET, &[("Accept", "text/csv")]);
    assert!(
        csv.media_type().starts_with("text/csv"),
        "{}",
        csv.media_type()
    );
    assert_ne!(json.header("etag"), csv.header("etag"));
    let other = app.get(&SCHEDULE_GET.replace("184500", "194500"));
    assert_ne!(
        other.json()["summary"]["payment"],
        json.json()["summary"]["payment"]
    );
}

#[test]
fn problems_and_posts_are_not_stored() {
    let app = shared_app();
    let bad = "/api/v1/loans/schedule?principal=abc&annual_rate_percent=6&term_months=360";
    assert_eq!(app.get(bad).status, 422);
    assert!(app.get(bad).header("etag").is_none());
    let posted = app.post_json(
        "/api/v1/loans/schedule",
        &json!({"principal": "184500", "annual_rate_percent": "5.875", "term_months": 360}),
    );
    assert_eq!(posted.status, 200);
    assert!(posted.header("etag").is_none());
}

#[test]
fn a_store_of_zero_bytes_computes_every_answer() {
    let app = spawn_app_with(Config {
        answer_cache_bytes: 0,
        ..Config::default()
    });
    let r = app.get(SCHEDULE_GET);
    assert_eq!(r.status, 200);
    assert!(r.header("etag").is_none());
}

fn cors_app() -> TestApp {
    spawn_app_with(Config {
        cors_origins: vec!["https://desk.example".into()],
        ..Config::default()
    })
}

#[test]
fn cors_is_off_by_default() {
    let app = shared_app();
    let r = app.get_with(SCHEDULE_GET, &[("Origin", "https://desk.example")]);
    assert_eq!(r.status, 200);
    assert!(r.header("access-control-allow-origin").is_none());
}

#[test]
fn a_configured_origin_may_read_answers_and_others_may_not() {
    let app = cors_app();
    let allowed = app.get_with(SCHEDULE_GET, &[("Origin", "https://desk.example")]);
    assert_eq!(
        allowed.header("access-control-allow-origin"),
        Some("https://desk.example")
    );
    let exposed: Vec<&str> = allowed
        .header("access-control-expose-headers")
        .unwrap_or("")
        .split(',')
        .map(str::trim)
        .collect();
    for name in ["etag", "retry-after", "x-request-id", "residue-caution"] {
        assert!(exposed.contains(&name), "{name} not in {exposed:?}");
    }
    let other = app.get_with(SCHEDULE_GET, &[("Origin", "https://elsewhere.example")]);
    assert!(other.header("access-control-allow-origin").is_none());

    let preflight = app.request(
        "OPTIONS",
        "/api/v1/loans/check",
        &[
            ("Origin", "https://desk.example"),
            ("Access-Control-Request-Method", "POST"),
            ("Access-Control-Request-Headers", "content-type"),
        ],
        None,
    );
    assert_eq!(preflight.status, 204);
    assert!(preflight
        .header("access-control-allow-methods")
        .is_some_and(|m| m.contains("POST")));
    // A preflight from an origin not configured is not answered as one.
    let refused = app.request(
        "OPTIONS",
        "/api/v1/loans/check",
        &[
            ("Origin", "https://elsewhere.example"),
            ("Access-Control-Request-Method", "POST"),
        ],
        None,
    );
    assert_eq!(refused.status, 405);
}

const CHECK: &str = "/api/v1/loans/check";

fn check(app: &TestApp, body: &Value) -> Value {
    let r = app.post_json(CHECK, body);
    assert_eq!(r.status, 200, "{}", r.text());
    r.json()
}

#[test]
fn a_check_with_a_regular_first_period_by_dates_gives_the_undated_apr() {
    let app = shared_app();
    let terms = json!({"principal": "212000", "annual_rate_percent": "6.25", "term_months": 360,
        "prepaid_finance_charges": [{"name": "origination", "amount": "2120.00"}]});
    let undated = check(&app, &terms);
    let mut dated_body = terms.clone();
    dated_body["funding_date"] = json!("2027-03-01");
    dated_body["first_payment_date"] = json!("2027-04-01");
    let dated = check(&app, &dated_body);
    assert_eq!(dated["computed_payment"], undated["computed_payment"]);
    assert_eq!(dated["amount_financed"], undated["amount_financed"]);
    // Appendix J (b)(5)(iv): all months are equal, so a month from the 1st to the
    // 1st is one unit-period whatever its days: the same equation, the same APR.
    let gap = (dec_of(&dated["apr_percent_full"]) - dec_of(&undated["apr_percent_full"])).abs();
    assert!(gap < dec("1e-18"), "{gap}");
}

#[test]
fn a_checks_dated_apr_is_the_apr_of_its_own_dated_flows() {
    // An odd first period of 45 days, its interest added to the first payment:
    // the check's APR must be the APR endpoint's answer for the amount financed
    // on the funding date and the schedule's payments on their due dates.
    let app = shared_app();
    let body = json!({"principal": "98000", "annual_rate_percent": "7.1", "term_months": 120,
        "funding_date": "2027-05-17", "first_payment_date": "2027-07-01",
        "prepaid_finance_charges": [{"name": "points", "amount": "980"}]});
    let checked = check(&app, &body);
    let mut schedule_body = body.clone();
    schedule_body
        .as_object_mut()
        .unwrap()
        .remove("prepaid_finance_charges");
    let s = app.post_json("/api/v1/loans/schedule", &schedule_body);
    assert_eq!(s.status, 200, "{}", s.text());
    let rows = s.json()["schedule"].as_array().unwrap().clone();
    let payments: Vec<Value> = rows
        .iter()
        .map(|r| json!({"amount": r["payment"], "date": r["date"]}))
        .collect();
    let apr = app.post_json(
        "/api/v1/apr",
        &json!({"advances": [{"amount": checked["amount_financed"], "date": "2027-05-17"}],
                "payments": payments}),
    );
    assert_eq!(apr.status, 200, "{}", apr.text());
    let apr = apr.json();
    let gap = (dec_of(&apr["apr_percent_full"]) - dec_of(&checked["apr_percent_full"])).abs();
    assert!(gap < dec("1e-18"), "{gap}");
    assert_eq!(dec_of(&checked["amount_financed"]), dec("97020.00"));
    assert!(checked["notes"]
        .as_array()
        .unwrap()
        .iter()
        .any(|n| n.as_str().unwrap().contains("funding date 2027-05-17")));
}

#[test]
fn prepaid_interest_is_a_prepaid_finance_charge_and_counts_in_the_tip() {
    let app = shared_app();
    let body = json!({"principal": "150000", "annual_rate_percent": "6", "term_months": 360,
        "funding_date": "2027-05-20", "first_payment_date": "2027-07-01",
        "odd_days_interest": "prepaid", "day_count": "actual_365"});
    let checked = check(&app, &body);
    let charges = checked["prepaid_finance_charges"].as_array().unwrap();
    let prepaid = charges
        .iter()
        .find(|c| c["name"].as_str().unwrap().starts_with("prepaid interest"))
        .expect("prepaid interest listed");
    // Odd days 2027-05-20 → 2027-06-01: 12 days; 150000 × 6 % × 12/365 = 295.89
    // (worked by hand, actual/365; common practice, no source for the rounding).
    assert_eq!(prepaid["amount"], "295.89");
    assert_eq!(dec_of(&checked["amount_financed"]), dec("149704.11"));
    let tip = dec_of(&checked["total_interest_percentage_full"]);
    let want = (dec_of(&checked["total_interest"]) + dec("295.89")) * dec("100") / dec("150000");
    assert!((tip - want).abs() < dec("1e-20"), "{tip} vs {want}");
    // Prepaid interest is not a loan cost of the in-5-years figure.
    assert_eq!(checked["in_five_years"]["loan_costs"], "0.00");
}

#[test]
fn a_check_refuses_extra_payments() {
    let app = shared_app();
    let r = app.post_json(
        CHECK,
        &json!({"principal": "150000", "annual_rate_percent": "6", "term_months": 360,
                "extra_payments": [{"amount": "100", "from": 1}]}),
    );
    assert_field_problem(&r, 422, "invalid-fields", "/extra_payments");
}

#[test]
fn a_batch_sent_with_expect_100_continue_is_answered_without_waiting() {
    // A client that sends `Expect: 100-continue` waits for "100 Continue" before
    // its body; the server must send it rather than answer first.
    use std::io::{Read, Write};
    let app = spawn_app();
    let line = b"{\"id\":1,\"job\":\"apy\",\"request\":{\"annual_rate_percent\":\"4\",\"compounding\":\"monthly\"}}\n";
    let mut s = std::net::TcpStream::connect(app.addr).unwrap();
    s.set_read_timeout(Some(Duration::from_secs(5))).unwrap();
    let head = format!(
        "POST /api/v1/batch HTTP/1.1\r\nHost: x\r\nContent-Type: application/x-ndjson\r\nContent-Length: {}\r\nExpect: 100-continue\r\nConnection: close\r\n\r\n",
        line.len()
    );
    s.write_all(head.as_bytes()).unwrap();
    let mut buf = [0u8; 64];
    let n = s.read(&mut buf).unwrap();
    let first = String::from_utf8_lossy(&buf[..n]);
    assert!(first.starts_with("HTTP/1.1 100"), "{first}");
    s.write_all(line).unwrap();
    let mut rest = Vec::new();
    let _ = s.read_to_end(&mut rest);
    let text = String::from_utf8_lossy(&rest);
    assert!(text.contains("\"ok\":true"), "{text}");
}

/// The caution cannot be a line of the CSV file (a spreadsheet would import it as
/// a row of the table): every CSV answer carries it in its `Residue-Caution`
/// header, the same words the JSON answer leads its notes with.
#[test]
fn every_csv_answer_carries_the_caution_the_json_answer_leads_its_notes_with() {
    // Arrange
    let app = shared_app();
    let loan = "principal=27400&annual_rate_percent=7.2&term_months=60";
    let plan = "deposit=125&annual_rate_percent=3.5&term_months=36";
    let compare = "principal=27400&annual_rate_percent=7.2&term_months=60,72";
    let caution = app.get(&format!("/api/v1/loans/schedule?{loan}")).json()["notes"][0]
        .as_str()
        .expect("the JSON answer's first note")
        .to_string();
    let csv = [("Accept", "text/csv")];

    // Act
    let answers = [
        app.get(&format!("/api/v1/loans/schedule.csv?{loan}")),
        app.get_with(&format!("/api/v1/loans/schedule?{loan}"), &csv),
        app.get(&format!("/api/v1/loans/compare.csv?{compare}")),
        app.get_with(&format!("/api/v1/loans/compare?{compare}"), &csv),
        app.get(&format!("/api/v1/savings/plan.csv?{plan}")),
        app.get_with(&format!("/api/v1/savings/plan?{plan}"), &csv),
    ];

    // Assert
    assert!(caution.contains("not an offer"), "{caution}");
    for r in &answers {
        assert_eq!(r.status, 200, "{}", String::from_utf8_lossy(&r.body));
        assert_eq!(r.media_type(), "text/csv");
        assert_eq!(r.header("residue-caution"), Some(caution.as_str()));
        assert!(
            !String::from_utf8_lossy(&r.body).contains("not an offer"),
            "the caution stays out of the table"
        );
    }
    let json = app.get(&format!("/api/v1/loans/schedule?{loan}"));
    assert!(
        json.header("residue-caution").is_none(),
        "JSON carries it in its notes"
    );
}
