//! Liveness and the headers every answer carries.

use serde_json::json;

use crate::helpers::{
    config_with_body_limit, shared_app, spawn_app_with, Response, RECURRENCE, SCHEDULE,
    SCHEDULE_CSV,
};

#[test]
fn healthz_answers_200_with_status_ok_as_json() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.get("/healthz");

    // Assert
    assert_eq!(r.status, 200);
    assert_eq!(r.media_type(), "application/json");
    assert_eq!(r.json(), json!({"status": "ok"}));
}

fn assert_security_headers(what: &str, r: &Response) {
    let csp = r
        .header("content-security-policy")
        .unwrap_or_else(|| panic!("{what}: no content-security-policy"));
    assert!(
        csp.contains("default-src 'none'"),
        "{what}: the policy denies by default: {csp}"
    );
    assert_eq!(
        r.header("x-content-type-options"),
        Some("nosniff"),
        "{what}: x-content-type-options"
    );
}

#[test]
fn every_answer_carries_the_security_headers_success_or_failure() {
    // Arrange
    let app = spawn_app_with(config_with_body_limit(256));
    let loan = json!({"principal": "100000", "annual_rate_percent": "6", "term_months": 120});
    let query = "principal=100000&annual_rate_percent=6&term_months=120";
    let too_large = vec![b' '; 1024];

    // Act
    let answers = [
        ("healthz", app.get("/healthz")),
        ("home page", app.get("/")),
        ("schedule JSON", app.post_json(SCHEDULE, &loan)),
        ("schedule GET", app.get(&format!("{SCHEDULE}?{query}"))),
        ("schedule CSV", app.get(&format!("{SCHEDULE_CSV}?{query}"))),
        (
            "recurrence",
            app.post_json(RECURRENCE, &json!({"a": "1", "x0": "1"})),
        ),
        ("422", app.post_json(SCHEDULE, &json!({"principal": "-1"}))),
        ("400", app.post(SCHEDULE, "application/json", b"{")),
        ("404", app.get("/no/such/page")),
        ("405", app.request("DELETE", SCHEDULE, &[], None)),
        ("413", app.post(SCHEDULE, "application/json", &too_large)),
        ("415", app.post(SCHEDULE, "text/plain", b"principal=1")),
    ];

    // Assert
    for (what, r) in &answers {
        assert_security_headers(what, r);
    }
}
