//! Bad requests: each is answered with problem details (RFC 9457) naming what is
//! wrong, and the server keeps answering afterwards.

use serde_json::{json, Value};

use crate::helpers::{
    assert_field_problem, assert_problem, assert_still_healthy, config_with_body_limit, pointers,
    shared_app, spawn_app_with, with, Response, TestApp, SCHEDULE, SCHEDULE_CSV,
};

/// A valid 10-year loan with `changes` merged in (a `null` removes a field).
fn loan_with(changes: Value) -> Value {
    with(
        &json!({"principal": "100000", "annual_rate_percent": "6", "term_months": 120}),
        changes,
    )
}

/// Posts the loan with `changes` and returns the answer.
fn post_loan(app: &TestApp, changes: Value) -> Response {
    app.post_json(SCHEDULE, &loan_with(changes))
}

/// Asserts a 422 invalid-fields problem naming `pointer`, then that the server still answers.
fn assert_invalid_field(app: &TestApp, r: &Response, pointer: &str) -> Value {
    let p = assert_field_problem(r, 422, "invalid-fields", pointer);
    assert_still_healthy(app);
    p
}

#[test]

fn a_negative_principal_is_refused_at_principal() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"principal": "-1000"}));

    // Assert
    assert_invalid_field(&app, &r, "/principal");
}

#[test]

fn a_zero_principal_is_refused_at_principal() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"principal": "0"}));

    // Assert
    assert_invalid_field(&app, &r, "/principal");
}

#[test]
fn a_negative_rate_is_refused_at_annual_rate_percent() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"annual_rate_percent": "-0.5"}));

    // Assert
    assert_invalid_field(&app, &r, "/annual_rate_percent");
}

#[test]
fn a_rate_just_above_1000_percent_is_refused_at_annual_rate_percent() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"annual_rate_percent": "1000.0001"}));

    // Assert
    assert_invalid_field(&app, &r, "/annual_rate_percent");
}

#[test]
fn a_rate_that_is_not_a_number_is_refused_at_annual_rate_percent() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"annual_rate_percent": "abc"}));

    // Assert
    assert_invalid_field(&app, &r, "/annual_rate_percent");
}

#[test]
fn a_principal_with_a_thousands_separator_is_refused_in_json() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"principal": "1,000"}));

    // Assert
    let p = assert_invalid_field(&app, &r, "/principal");
    assert!(
        p["errors"][0]["message"]
            .as_str()
            .unwrap()
            .contains("thousands"),
        "the message says why: {p}"
    );
}

#[test]

fn a_usd_principal_with_three_decimals_is_refused_at_principal() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"principal": "100.001"}));

    // Assert
    assert_invalid_field(&app, &r, "/principal");
}

#[test]
fn a_jpy_principal_in_whole_yen_is_accepted() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"principal": "1000000", "currency": "JPY"}));

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
}

#[test]

fn a_jpy_principal_with_a_fraction_of_a_yen_is_refused_at_principal() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"principal": "1000000.5", "currency": "JPY"}));

    // Assert
    assert_invalid_field(&app, &r, "/principal");
}

#[test]
fn a_term_of_zero_months_is_refused_at_term_months() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"term_months": 0}));

    // Assert
    assert_invalid_field(&app, &r, "/term_months");
}

#[test]
fn a_term_of_6001_months_is_refused_at_term_months() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"term_months": 6001}));

    // Assert
    assert_invalid_field(&app, &r, "/term_months");
}

#[test]
fn a_term_and_a_payment_together_are_refused_at_payment() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"payment": "1110.21"}));

    // Assert
    assert_invalid_field(&app, &r, "/payment");
}

#[test]
fn neither_a_term_nor_a_payment_is_refused_at_term_months() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"term_months": null}));

    // Assert
    assert_invalid_field(&app, &r, "/term_months");
}

#[test]

fn schedule_returns_422_when_the_payment_never_repays() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"term_months": null, "payment": "500.00"}));

    // Assert
    assert_field_problem(&r, 422, "no-solution", "/payment");
    assert_still_healthy(&app);
}

#[test]
fn an_unknown_currency_is_refused_at_currency() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"currency": "XYZ"}));

    // Assert
    assert_invalid_field(&app, &r, "/currency");
}

#[test]
fn an_unknown_payment_frequency_is_refused_at_payment_frequency() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"payment_frequency": "fortnightly"}));

    // Assert
    assert_invalid_field(&app, &r, "/payment_frequency");
}

#[test]
fn an_unknown_field_is_refused_at_its_own_pointer() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"principal": null, "princpal": "100000"}));

    // Assert
    let p = assert_invalid_field(&app, &r, "/princpal");
    assert!(
        pointers(&p).contains(&"/principal".to_string()),
        "the missing principal is named too: {p}"
    );
}

#[test]
fn malformed_json_is_a_400_malformed_json_problem() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.post(SCHEDULE, "application/json", br#"{"principal": "100000","#);

    // Assert
    assert_problem(&r, 400, "malformed-json");
    assert_still_healthy(&app);
}

#[test]
fn a_bare_nan_token_is_malformed_json() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.post(
        SCHEDULE,
        "application/json",
        br#"{"principal": NaN, "annual_rate_percent": 6, "term_months": 120}"#,
    );

    // Assert
    assert_problem(&r, 400, "malformed-json");
    assert_still_healthy(&app);
}

#[test]
fn a_duplicate_key_is_a_400_malformed_json_problem() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.post(
        SCHEDULE,
        "application/json",
        br#"{"principal": "100000", "principal": "1", "annual_rate_percent": "6", "term_months": 120}"#,
    );

    // Assert
    let p = assert_problem(&r, 400, "malformed-json");
    assert!(
        p["detail"].as_str().unwrap().contains("twice"),
        "the detail names the duplicate: {p}"
    );
    assert_still_healthy(&app);
}

#[test]
fn a_text_plain_body_is_a_415_unsupported_media_type_problem() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.post(
        SCHEDULE,
        "text/plain",
        br#"{"principal": "100000", "annual_rate_percent": "6", "term_months": 120}"#,
    );

    // Assert
    assert_problem(&r, 415, "unsupported-media-type");
    assert_still_healthy(&app);
}

#[test]
fn a_body_over_the_limit_is_a_413_too_large_problem() {
    // Arrange
    let app = spawn_app_with(config_with_body_limit(64));
    let body = json!({
        "principal": "100000",
        "annual_rate_percent": "6",
        "term_months": 120,
        "currency": "USD",
        "payment_frequency": "monthly"
    });
    let bytes = serde_json::to_vec(&body).unwrap();
    assert!(bytes.len() > 64, "the body is over the limit");

    // Act
    let r = app.post(SCHEDULE, "application/json", &bytes);

    // Assert
    assert_problem(&r, 413, "too-large");
    assert_still_healthy(&app);
}

#[test]
fn a_body_within_the_limit_is_accepted_by_a_small_limit() {
    // Arrange
    let app = spawn_app_with(config_with_body_limit(128));
    let bytes = br#"{"principal":"100000","annual_rate_percent":"6","term_months":120}"#;

    // Act
    let r = app.post(SCHEDULE, "application/json", bytes);

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
}

#[test]
fn deeply_nested_json_is_a_400_malformed_json_problem() {
    // Arrange
    let app = shared_app();
    let body = format!(
        r#"{{"principal": {}1{}}}"#,
        "[".repeat(10_000),
        "]".repeat(10_000)
    );

    // Act
    let r = app.post(SCHEDULE, "application/json", body.as_bytes());

    // Assert
    assert_problem(&r, 400, "malformed-json");
    assert_still_healthy(&app);
}

#[test]
fn a_json_array_body_is_refused_at_the_empty_pointer() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.post_json(
        SCHEDULE,
        &json!([{"principal": "100000", "annual_rate_percent": "6", "term_months": 120}]),
    );

    // Assert
    assert_invalid_field(&app, &r, "");
}

#[test]
fn nan_as_a_string_is_refused_at_principal() {
    // Arrange
    let app = shared_app();

    // Act
    let r = post_loan(&app, json!({"principal": "NaN"}));

    // Assert
    assert_invalid_field(&app, &r, "/principal");
}

#[test]
fn a_number_beyond_decimal_range_like_1e400_is_refused_at_principal() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.post(
        SCHEDULE,
        "application/json",
        br#"{"principal": 1e400, "annual_rate_percent": 6, "term_months": 120}"#,
    );

    // Assert
    assert_invalid_field(&app, &r, "/principal");
}

#[test]
fn a_repeated_query_parameter_is_refused_by_name() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.get(&format!(
        "{SCHEDULE}?principal=100000&principal=200000&annual_rate_percent=6&term_months=120"
    ));

    // Assert
    assert_invalid_field(&app, &r, "principal");
}

#[test]
fn a_query_with_bad_percent_encoding_is_a_400_malformed_query_problem() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.get(&format!(
        "{SCHEDULE}?principal=%FF&annual_rate_percent=6&term_months=120"
    ));

    // Assert
    assert_problem(&r, 400, "malformed-query");
    assert_still_healthy(&app);
}

#[test]
fn an_unknown_path_is_a_404_not_found_problem() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.get("/api/v1/loans/nothing-here");

    // Assert
    assert_problem(&r, 404, "not-found");
    assert_still_healthy(&app);
}

#[test]
fn delete_on_the_schedule_is_a_405_method_not_allowed_problem() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.request("DELETE", SCHEDULE, &[], None);

    // Assert
    assert_problem(&r, 405, "method-not-allowed");
    let allow = r.header("allow").unwrap_or("");
    assert!(
        allow.contains("GET") && allow.contains("POST"),
        "Allow lists the methods: {allow:?}"
    );
    assert_still_healthy(&app);
}

#[test]
fn range_errors_in_a_query_string_are_named_by_the_parameter() {
    // Arrange
    let app = shared_app();
    let cases = [
        (
            "principal=-1000&annual_rate_percent=6&term_months=120",
            "invalid-fields",
            "principal",
        ),
        (
            "principal=0&annual_rate_percent=6&term_months=120",
            "invalid-fields",
            "principal",
        ),
        (
            "principal=100.001&annual_rate_percent=6&term_months=120",
            "invalid-fields",
            "principal",
        ),
        (
            "principal=1000000.5&annual_rate_percent=6&term_months=120&currency=JPY",
            "invalid-fields",
            "principal",
        ),
        (
            "principal=999999999999999999999999&annual_rate_percent=6&term_months=120",
            "invalid-fields",
            "principal",
        ),
        (
            "principal=100000&annual_rate_percent=6&payment=500.00",
            "no-solution",
            "payment",
        ),
        (
            "principal=100000&annual_rate_percent=1000.0001&term_months=120",
            "invalid-fields",
            "annual_rate_percent",
        ),
        (
            "principal=100000&annual_rate_percent=6&term_months=6001",
            "invalid-fields",
            "term_months",
        ),
        (
            "principal=100000&annual_rate_percent=6&term_months=120&princpal=1",
            "invalid-fields",
            "princpal",
        ),
    ];

    for (query, slug, pointer) in cases {
        // Act
        let r = app.get(&format!("{SCHEDULE}?{query}"));

        // Assert
        let p = assert_problem(&r, 422, slug);
        assert!(
            pointers(&p).iter().any(|q| q == pointer),
            "{query}: expected {pointer:?}: {p}"
        );
    }
    assert_still_healthy(&app);
}

#[test]
fn the_csv_operation_answers_bad_fields_with_problem_json_not_csv() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.get(&format!(
        "{SCHEDULE_CSV}?principal=abc&annual_rate_percent=6&term_months=120"
    ));

    // Assert
    assert_field_problem(&r, 422, "invalid-fields", "principal");
}

#[test]
fn a_chunked_request_body_is_read_like_any_other() {
    // Arrange
    let app = shared_app();
    let body = br#"{"principal":"100000","annual_rate_percent":"6","term_months":120}"#;
    let (first, second) = body.split_at(20);
    let mut raw = format!(
        "POST {SCHEDULE} HTTP/1.1\r\nHost: {}\r\nConnection: close\r\n\
         Content-Type: application/json\r\nTransfer-Encoding: chunked\r\n\r\n",
        app.addr
    )
    .into_bytes();
    for chunk in [first, second] {
        raw.extend_from_slice(format!("{:x}\r\n", chunk.len()).as_bytes());
        raw.extend_from_slice(chunk);
        raw.extend_from_slice(b"\r\n");
    }
    raw.extend_from_slice(b"0\r\n\r\n");

    // Act
    let r = app.request_raw(&raw);

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    assert_eq!(r.json()["summary"]["payment"], "1110.21");
}

#[test]
fn a_chunked_body_over_the_limit_is_a_413_too_large_problem() {
    // Arrange
    let app = spawn_app_with(config_with_body_limit(64));
    let chunk = [b' '; 50];
    let mut raw = format!(
        "POST {SCHEDULE} HTTP/1.1\r\nHost: {}\r\nConnection: close\r\n\
         Content-Type: application/json\r\nTransfer-Encoding: chunked\r\n\r\n",
        app.addr
    )
    .into_bytes();
    for _ in 0..3 {
        raw.extend_from_slice(format!("{:x}\r\n", chunk.len()).as_bytes());
        raw.extend_from_slice(&chunk);
        raw.extend_from_slice(b"\r\n");
    }
    raw.extend_from_slice(b"0\r\n\r\n");

    // Act
    let r = app.request_raw(&raw);

    // Assert
    assert_problem(&r, 413, "too-large");
    assert_still_healthy(&app);
}

#[test]

fn huge_principals_are_refused_with_422_and_never_500() {
    // Arrange
    let app = shared_app();
    let huge = [
        json!("999999999999999999999999"),
        json!("1000000000000.01"),
        json!("79228162514264337593543950335"),
        json!("79228162514264337593543950336"),
        json!("1e28"),
        json!("-999999999999999999999999"),
        json!("0.0000000000000000000000000001"),
    ];

    for principal in huge {
        // Act
        let r = post_loan(&app, json!({"principal": principal}));

        // Assert
        let p = assert_problem(&r, 422, "invalid-fields");
        assert!(
            pointers(&p).iter().any(|q| q == "/principal"),
            "{principal}: names /principal: {p}"
        );
    }
    assert_still_healthy(&app);
}

#[test]
fn extreme_but_valid_terms_are_answered_without_a_server_error() {
    // Arrange
    let app = shared_app();
    let extremes = [
        json!({"principal": "1000000000000", "annual_rate_percent": "1000", "term_months": 6000}),
        json!({"principal": "1000000000000", "annual_rate_percent": "1000", "term_months": 6000,
               "compounding": "daily"}),
        json!({"principal": "0.01", "annual_rate_percent": "0", "term_months": 6000}),
        json!({"principal": "1000000000000", "annual_rate_percent": "0.0001", "payment": "0.01"}),
        json!({"principal": "1000000000000", "annual_rate_percent": "1000",
               "payment": "99999999999999999999999999"}),
    ];

    for body in extremes {
        // Act
        let r = app.post_json(SCHEDULE, &body);

        // Assert
        assert!(
            r.status == 200 || r.status == 422,
            "{body}: {} {}",
            r.status,
            r.text()
        );
        if r.status == 422 {
            assert_eq!(r.header("content-type"), Some("application/problem+json"));
        }
    }
    assert_still_healthy(&app);
}

#[test]
fn an_accept_header_taking_none_of_the_media_types_gets_406() {
    // RFC 9110 §12.5.1: the media ranges with their weights; q=0 is "not acceptable".
    let app = shared_app();
    let schedule = "/api/v1/loans/schedule?principal=1000&annual_rate_percent=6&term_months=12";
    let apy = "/api/v1/apy?principal=1000&interest=61.68&days=365";
    let csv = "/api/v1/loans/schedule.csv?principal=1000&annual_rate_percent=6&term_months=12";
    for (path, accept, want) in [
        (schedule, "image/png", "406"),
        (schedule, "application/json;q=0", "406"),
        (apy, "text/csv", "406"),
        (csv, "application/json", "406"),
        (
            schedule,
            "text/csv;q=0, application/json",
            "application/json",
        ),
        (schedule, "application/json;q=0.5, text/csv", "text/csv"),
        (schedule, "text/*", "text/csv"),
        (schedule, "*/*", "application/json"),
        (apy, "application/*;q=0.2", "application/json"),
        // The most specific range decides: an explicit q=0 is not undone by */*.
        (
            "/api/v1/apr?principal=1000&annual_rate_percent=6&term_months=12",
            "application/json;q=0, */*",
            "406",
        ),
        (csv, "text/csv;q=0, */*", "406"),
        (schedule, "text/csv;q=0.5, */*", "application/json"),
        (schedule, "text/*;q=0.9, application/json;q=0.8", "text/csv"),
    ] {
        let r = app.get_with(path, &[("Accept", accept)]);
        if want == "406" {
            assert_problem(&r, 406, "not-acceptable");
        } else {
            assert_eq!(r.status, 200, "{path} {accept}: {}", r.text());
            assert_eq!(r.media_type(), want, "{path} {accept}");
        }
    }
}
