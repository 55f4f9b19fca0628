//! `POST /api/v1/loans/checks`: a CSV file of quotes in, one verdict a row out,
//! in order, as CSV or NDJSON; a bad row fails alone; a bad header fails whole.

use std::io::{Read, Write};
use std::net::TcpStream;

use serde_json::Value;

use crate::helpers::{assert_problem, pointers, shared_app, spawn_app};

const PATH: &str = "/api/v1/loans/checks";

/// 100,000 at 6 % a year over 360 months: the level payment is 599.55
/// (P·i/(1 − (1 + i)^−n) with i = 0.005 is 599.5505…; common practice, no source).
const FILE: &str =
    "id,principal,annual_rate_percent,term_months,quoted_payment,quoted_apr_percent\r\n\
a-1,100000,6,360,599.55,6\r\n\
a-2,100000,6,360,600.55,6\r\n\
a-3,100000,6,360,599.55,6.126\r\n\
a-4,100000,6,360,599.55,6.124\r\n\
a-5,abc,6,360,599.55,6\r\n\
a-6,100000,6,360,599.55,6,extra\r\n";

fn ndjson(body: &str) -> Vec<Value> {
    body.lines()
        .map(|l| serde_json::from_str(l).expect("every answer line is JSON"))
        .collect()
}

#[test]
fn every_row_gets_its_verdict_in_order_as_csv_and_as_ndjson() {
    let app = shared_app();
    let csv = app.post(PATH, "text/csv", FILE.as_bytes());
    assert_eq!(csv.status, 200, "{}", csv.text());
    assert_eq!(csv.media_type(), "text/csv");
    assert_eq!(csv.header("residue-rows"), Some("6"));
    assert!(csv.header("residue-caution").is_some());
    let lines: Vec<&str> = csv.text().split("\r\n").filter(|l| !l.is_empty()).collect();
    assert!(lines[0].starts_with("id,line,status,computed_payment,"));
    let statuses: Vec<(&str, &str, &str)> = lines[1..]
        .iter()
        .map(|l| {
            let mut c = l.split(',');
            (c.next().unwrap(), c.next().unwrap(), c.next().unwrap())
        })
        .collect();
    // Regulation Z, 12 CFR 1026.22(a)(2): a regular transaction's APR is accurate
    // within 1/8 of a percentage point, so 0.124 off holds and 0.126 does not.
    assert_eq!(
        statuses,
        [
            ("a-1", "2", "ok"),
            ("a-2", "3", "differs"),
            ("a-3", "4", "differs"),
            ("a-4", "5", "ok"),
            ("a-5", "6", "error"),
            ("a-6", "7", "error"),
        ]
    );
    let r = app.request(
        "POST",
        PATH,
        &[
            ("Content-Type", "text/csv"),
            ("Accept", "application/x-ndjson"),
        ],
        Some(FILE.as_bytes()),
    );
    assert_eq!(r.media_type(), "application/x-ndjson");
    let out = ndjson(r.text());
    assert_eq!(out.len(), 6);
    assert_eq!(out[1]["payment_difference"], "1.00");
    assert_eq!(out[1]["payment_matches"], false);
    assert!(out[4]["reason"]
        .as_str()
        .unwrap()
        .starts_with("principal: "));
    assert!(out[5]["reason"].as_str().unwrap().contains("7 cells"));
    assert!(out[0]["caution"].as_str().unwrap().contains("not an offer"));
    // Each verdict is the single check's: the same figures for the same fields.
    for v in &out[..4] {
        let url = v["check_url"].as_str().unwrap();
        let single = app.get_ok(&url.replace("/check?", "/api/v1/loans/check?"));
        for key in [
            "computed_payment",
            "apr_percent",
            "payment_difference",
            "apr_within_tolerance",
            "finance_charge",
        ] {
            assert_eq!(v[key], single[key], "{key} of {}", v["id"]);
        }
    }
}

#[test]
fn a_spreadsheets_semicolons_bom_quotes_and_line_breaks_are_read() {
    let app = shared_app();
    let file = "\u{feff}id;principal;annual_rate_percent;term_months;quoted_payment\r\n\
\"Larkspur; unit 4\nback door\";\"100,000.00\";6;360;599.55\r\n\
;;;;\r\n\
=cmd;\"1,5\";6;360;1\r\n";
    let r = app.post(PATH, "text/csv; charset=utf-8", file.as_bytes());
    assert_eq!(r.status, 200, "{}", r.text());
    assert_eq!(
        r.header("residue-rows"),
        Some("2"),
        "the all-empty row is no row"
    );
    let body = r.text();
    assert!(
        body.contains("\"Larkspur; unit 4\nback door\",2,ok,599.55,"),
        "{body}"
    );
    // A formula-like id comes back as text, never a formula (OWASP, CSV injection).
    assert!(body.contains("'=cmd,5,error,"), "{body}");
    assert!(body.contains("decimal with a point"), "{body}");
    let header_only = app.post(PATH, "text/csv", b"id,principal\r\n");
    assert_eq!(header_only.status, 200);
    assert_eq!(header_only.text().lines().count(), 1);
}

#[test]
fn a_bad_header_or_body_is_refused_before_any_row() {
    let app = shared_app();
    let r = app.post(PATH, "text/csv", b"id,principal,colour\r\n1,2,3\r\n");
    let p = assert_problem(&r, 422, "invalid-fields");
    assert_eq!(pointers(&p), ["colour"]);
    assert!(p["detail"].as_str().unwrap().contains("quoted_apr_percent"));
    let p = assert_problem(&app.post(PATH, "text/csv", b""), 422, "invalid-fields");
    assert!(p["detail"].as_str().unwrap().contains("empty"));
    let p = assert_problem(
        &app.post(PATH, "text/csv", b"principal\r\n1\r\n"),
        422,
        "invalid-fields",
    );
    assert_eq!(pointers(&p), ["id"]);
    assert_problem(
        &app.post(PATH, "application/json", b"{}"),
        415,
        "unsupported-media-type",
    );
    let r = app.request(
        "POST",
        PATH,
        &[("Content-Type", "text/csv"), ("Accept", "application/json")],
        Some(b"id\r\n1\r\n"),
    );
    assert_problem(&r, 406, "not-acceptable");
}

#[test]
fn a_file_over_the_limit_is_refused_naming_it() {
    let app = spawn_app();
    let mut file = b"id,principal\r\n".to_vec();
    while file.len() <= 32 * 1024 * 1024 {
        file.extend_from_slice(&[b'7'; 64 * 1024]);
    }
    let r = app.post(PATH, "text/csv", &file);
    let p = assert_problem(&r, 413, "too-large");
    assert!(p["detail"].as_str().unwrap().contains("32 MiB"), "{p}");
}

fn pipeline_rows(app: &crate::helpers::TestApp) -> u64 {
    app.get("/metrics")
        .text()
        .lines()
        .filter(|l| l.starts_with("residue_pipeline_rows_total{"))
        .map(|l| l.rsplit(' ').next().unwrap().parse::<u64>().unwrap())
        .sum()
}

#[test]
fn a_client_that_goes_away_stops_the_work() {
    let app = spawn_app();
    let rows = 100_000;
    let mut file = String::from("id,principal,annual_rate_percent,term_months,quoted_payment\r\n");
    for i in 0..rows {
        file.push_str(&format!("r{i},100000,6,360,599.55\r\n"));
    }
    let mut stream = TcpStream::connect(app.addr).unwrap();
    let head = format!(
        "POST {PATH} HTTP/1.1\r\nHost: x\r\nContent-Type: text/csv\r\nContent-Length: {}\r\n\r\n",
        file.len()
    );
    stream.write_all(head.as_bytes()).unwrap();
    stream.write_all(file.as_bytes()).unwrap();
    let mut first = [0u8; 4096];
    let n = stream.read(&mut first).unwrap();
    assert!(String::from_utf8_lossy(&first[..n]).starts_with("HTTP/1.1 200"));
    drop(stream);
    // The groups already running finish; no more start once the answer cannot
    // be sent. The count settles far below the file's rows.
    let mut settled = pipeline_rows(&app);
    for _ in 0..50 {
        std::thread::sleep(std::time::Duration::from_millis(100));
        let now = pipeline_rows(&app);
        if now == settled {
            break;
        }
        settled = now;
    }
    assert!(
        settled < rows / 2,
        "{settled} of {rows} rows were checked after the client left"
    );
    let metrics = app.get("/metrics");
    assert!(metrics
        .text()
        .contains("residue_pipeline_rows_total{status=\"ok\"}"));
}
