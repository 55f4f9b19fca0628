//! `POST /api/v1/batch`: NDJSON jobs in, NDJSON answers out, in order; a bad line fails alone.

use serde_json::{json, Value};

use crate::helpers::{assert_problem, assert_still_healthy, spawn_app};

fn lines(body: &str) -> Vec<Value> {
    body.lines()
        .map(|l| serde_json::from_str(l).expect("every answer line is JSON"))
        .collect()
}

fn loan_line(id: usize, principal: &str) -> String {
    json!({"id": id, "job": "loan_schedule", "request": {"principal": principal, "annual_rate_percent": "6", "term_months": 360}}).to_string()
}

#[test]
fn a_batch_answers_every_line_in_order_and_a_bad_line_fails_alone() {
    // Arrange
    let app = spawn_app();
    let body = [
        loan_line(1, "100000"),
        loan_line(2, "-5"),
        "this is not json".to_string(),
        json!({"id": "apy", "job": "apy", "request": {"principal": "1000", "interest": "61.68", "days": 365}}).to_string(),
        json!({"id": 5, "job": "no_such_job", "request": {}}).to_string(),
        loan_line(6, "250000"),
    ]
    .join("\n");
    // Act
    let r = app.post("/api/v1/batch", "application/x-ndjson", body.as_bytes());
    // Assert
    assert_eq!(r.status, 200);
    assert_eq!(r.media_type(), "application/x-ndjson");
    let out = lines(r.text());
    assert_eq!(out.len(), 6);
    assert_eq!(out[0]["id"], 1);
    assert_eq!(out[0]["ok"], true);
    // 100,000 at 6 % over 360 months: 599.55 (common practice, no source).
    assert_eq!(out[0]["result"]["summary"]["payment"], "599.55");
    assert!(
        out[0]["result"].get("schedule").is_none(),
        "summary detail by default"
    );
    assert_eq!(out[1]["ok"], false);
    assert_eq!(out[1]["problem"]["errors"][0]["pointer"], "/principal");
    assert_eq!(out[2]["ok"], false);
    assert_eq!(out[2]["problem"]["type"], "/api#problem-malformed-json");
    // Regulation DD Appendix A Part I.A: 61.68 on 1,000 over 365 days is 6.17 %.
    assert_eq!(out[3]["id"], "apy");
    assert_eq!(out[3]["result"]["apy_percent"], "6.17");
    assert_eq!(out[4]["problem"]["errors"][0]["pointer"], "/job");
    assert_eq!(out[5]["id"], 6);
    assert_eq!(out[5]["ok"], true);
    assert_still_healthy(&app);
}

#[test]
fn full_detail_includes_the_schedule() {
    let app = spawn_app();
    let line = json!({"id": "x", "job": "loan_schedule", "detail": "full", "request": {"principal": "12000", "annual_rate_percent": "0", "term_months": 12}});
    let r = app.post(
        "/api/v1/batch",
        "application/x-ndjson",
        format!("{line}\n").as_bytes(),
    );
    let out = lines(r.text());
    assert_eq!(out[0]["result"]["schedule"].as_array().unwrap().len(), 12);
}

#[test]
fn thousands_of_lines_stream_back_in_order() {
    let app = spawn_app();
    let body: String = (0..3000)
        .map(|i| loan_line(i, &format!("{}", 10_000 + i)) + "\n")
        .collect();
    let r = app.post("/api/v1/batch", "application/x-ndjson", body.as_bytes());
    let out = lines(r.text());
    assert_eq!(out.len(), 3000);
    for (i, v) in out.iter().enumerate() {
        assert_eq!(v["id"], i);
        assert_eq!(v["ok"], true, "{v}");
    }
}

#[test]
fn a_batch_must_be_sent_as_ndjson() {
    let app = spawn_app();
    let r = app.post("/api/v1/batch", "application/json", b"{}");
    assert_problem(&r, 415, "unsupported-media-type");
}

#[test]
fn metrics_count_requests_batch_lines_and_problems() {
    let app = spawn_app();
    app.post(
        "/api/v1/batch",
        "application/x-ndjson",
        (loan_line(1, "1000") + "\n").as_bytes(),
    );
    app.get("/api/v1/loans/schedule?principal=-1&annual_rate_percent=6&term_months=12");
    let r = app.get("/metrics");
    assert_eq!(r.status, 200);
    assert!(r.media_type().starts_with("text/plain"));
    let text = r.text();
    assert!(
        text.contains("residue_requests_total{route=\"/api/v1/batch\",status=\"200\"} 1"),
        "{text}"
    );
    assert!(text.contains("residue_batch_lines_total 1"), "{text}");
    assert!(
        text.contains("residue_problems_total{type=\"invalid-fields\"} 1"),
        "{text}"
    );
    assert!(
        text.contains("residue_request_duration_seconds_count{route=\"/api/v1/loans/schedule\"} 1"),
        "{text}"
    );
}

#[test]
fn each_line_is_answered_before_the_client_sends_the_next() {
    // A client that sends a line and waits for its answer before the next (a
    // conversation over one batch) must get each answer while the batch is open.
    use std::io::{Read, Write};
    use std::time::{Duration, Instant};
    let app = spawn_app();
    let sent: Vec<String> = (1..=3)
        .map(|i| format!("{}\n", loan_line(i, &format!("{}", 100_000 + i))))
        .collect();
    let length: usize = sent.iter().map(String::len).sum();
    let mut s = std::net::TcpStream::connect(app.addr).unwrap();
    s.set_read_timeout(Some(Duration::from_secs(10))).unwrap();
    let head = format!(
        "POST /api/v1/batch HTTP/1.1\r\nHost: x\r\nContent-Type: application/x-ndjson\r\nContent-Length: {length}\r\nConnection: close\r\n\r\n"
    );
    s.write_all(head.as_bytes()).unwrap();
    let mut seen = Vec::new();
    for (i, line) in sent.iter().enumerate() {
        s.write_all(line.as_bytes()).unwrap();
        s.flush().unwrap();
        let want = format!("{{\"id\":{},\"ok\":true", i + 1);
        let started = Instant::now();
        while !String::from_utf8_lossy(&seen).contains(&want) {
            let mut buf = [0u8; 65536];
            let n = s
                .read(&mut buf)
                .expect("the answer comes while the batch is open");
            assert!(n > 0, "the connection closed before line {}", i + 1);
            seen.extend_from_slice(&buf[..n]);
            assert!(started.elapsed() < Duration::from_secs(10));
        }
        // Not the next line's answer: it has not been sent.
        let next = format!("{{\"id\":{},", i + 2);
        assert!(!String::from_utf8_lossy(&seen).contains(&next));
    }
    let mut rest = Vec::new();
    let _ = s.read_to_end(&mut rest);
    seen.extend_from_slice(&rest);
    assert!(String::from_utf8_lossy(&seen).contains("{\"id\":3,\"ok\":true"));
}

#[test]
fn ids_are_required_and_echoed_exactly_and_a_whole_long_line_fails_alone() {
    // Arrange: an id beyond 64 bits and one beyond binary floating point must
    // come back as sent (compared as text: a JSON reader would round them);
    // a line without an id fails alone; a 70 KB line sent whole fails alone.
    let app = spawn_app();
    let request = r#""job":"apy","request":{"principal":"1000","interest":"61.68","days":365}"#;
    let long = format!(
        r#"{{"id":4,"job":"apy","request":{{"principal":"1000","interest":"61.68","days":365}},"detail":"summary"{}}}"#,
        " ".repeat(70 * 1024)
    );
    let body = [
        format!(r#"{{"id":123456789012345678901234567890,{request}}}"#),
        format!(r#"{{"id":1e400,{request}}}"#),
        format!(r#"{{{request}}}"#),
        long,
        format!(r#"{{"id":[1,"x"],{request}}}"#),
    ]
    .join("\n");
    // Act
    let r = app.post("/api/v1/batch", "application/x-ndjson", body.as_bytes());
    // Assert
    assert_eq!(r.status, 200);
    let raw: Vec<&str> = r.text().lines().collect();
    assert_eq!(raw.len(), 5, "{}", r.text());
    assert!(
        raw[0].starts_with(r#"{"id":123456789012345678901234567890,"ok":true"#),
        "{}",
        raw[0]
    );
    assert!(raw[1].starts_with(r#"{"id":1e400,"ok":true"#), "{}", raw[1]);
    // (1e400 is valid JSON that serde_json refuses to read: the rest only.)
    let out = lines(&raw[2..].join("\n"));
    assert_eq!(out[0]["ok"], false);
    assert_eq!(out[0]["problem"]["errors"][0]["pointer"], "/id");
    assert_eq!(out[1]["ok"], false);
    assert_eq!(out[1]["problem"]["type"], "/api#problem-too-large");
    assert_eq!(out[2]["id"], json!([1, "x"]));
    assert_eq!(out[2]["ok"], true);
    assert_still_healthy(&app);
}
