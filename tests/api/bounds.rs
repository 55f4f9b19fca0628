//! Bounds an outside probe tested: answers of a bounded size for the largest
//! plans, a store of answers no header or made-up query can poison or flush,
//! guarded CSV cells, plain-text labels, and bodies whose framing breaks.
//! Each request is the probe's own, or its shape with invented figures.

use serde_json::{json, Value};

use crate::helpers::{
    assert_problem, pointers, shared_app, spawn_app, spawn_app_with, TestApp, SCHEDULE,
};

/// Recurring extras every 2nd to 121st payment and 120 rate changes on 6,000
/// weekly payments: nearly every payment starts a segment.
fn maximal_loan() -> Value {
    let extras: Vec<Value> = (0..120)
        .map(|k| json!({"amount": "1", "from": 1 + k, "to": 6000, "every": 2 + k}))
        .collect();
    let changes: Vec<Value> = (0..120)
        .map(|k| json!({"at": 26 + 50 * k, "annual_rate_percent": format!("{}", 5 + k % 7)}))
        .collect();
    json!({
        "principal": "900000", "annual_rate_percent": "6.25", "term_payments": 6000,
        "payment_frequency": "weekly", "compounding": "daily",
        "funding_date": "2027-01-04", "first_payment_date": "2027-01-15",
        "extra_payments": extras, "rate_changes": changes,
    })
}

fn store_hits(app: &TestApp) -> u64 {
    let text = app.get("/metrics").text().to_string();
    text.lines()
        .find_map(|l| l.strip_prefix("residue_answer_cache_hits_total "))
        .and_then(|v| v.trim().parse().ok())
        .expect("the store's hit counter")
}

#[test]
fn a_plan_of_thousands_of_segments_lists_the_first_in_full_and_stays_small() {
    let app = shared_app();
    let r = app.post_json(SCHEDULE, &maximal_loan());
    assert_eq!(r.status, 200, "{}", r.text());
    // Was 12.9 MB with every segment's derivation; rows alone are about 0.7 MB.
    assert!(r.body.len() < 2_000_000, "{} bytes", r.body.len());
    let s = r.json();
    let segments = s["derivation"]["segments"].as_array().unwrap();
    let total = s["derivation"]["segments_total"].as_u64().unwrap();
    assert!(total > 600, "{total}");
    assert_eq!(segments.len(), 600);
    assert!(segments[..24].iter().all(|g| g["derivation"].is_object()));
    assert!(segments[24..].iter().all(|g| g.get("derivation").is_none()));
    assert_eq!(
        s["schedule"].as_array().unwrap().len() as u64,
        s["summary"]["number_of_payments"].as_u64().unwrap()
    );
    assert!(s["notes"]
        .to_string()
        .contains("the first 24 are shown with their whole derivation"));
    // A plan of a few segments is listed whole, without a total.
    let r = app.get(&format!(
        "{SCHEDULE}?principal=100000&annual_rate_percent=6&term_months=360&rate_changes=61:7"
    ));
    let s = r.json();
    assert_eq!(s["derivation"]["segments"].as_array().unwrap().len(), 2);
    assert!(s["derivation"].get("segments_total").is_none());
}

#[test]
fn a_host_header_never_reaches_the_guide_and_made_up_queries_share_one_stored_answer() {
    let app = spawn_app();
    let browser = [("Accept", "text/html,application/xhtml+xml")];
    // Act: the probe's poisoning request first.
    let poisoned = app.get_with("/api", &[("Host", "evil.example:443"), browser[0]]);
    let later = app.get_with("/api", &browser);

    // Assert: neither names the other host; both use the server's own address.
    for r in [&poisoned, &later] {
        assert_eq!(r.status, 200);
        assert!(!r.text().contains("evil.example"));
        assert!(r.text().contains(&format!("http://{}/api/v1/", app.addr)));
    }
    // Made-up queries and Accept headers on a document: one stored answer.
    let before = store_hits(&app);
    for k in 0..5 {
        let r = app.get_with(
            &format!("/api/openapi.json?nonce={k}"),
            &[("Accept", &format!("application/json;x={k}"))],
        );
        assert_eq!(r.status, 200);
    }
    assert!(
        store_hits(&app) >= before + 4,
        "the later four come from the store"
    );
}

#[test]
fn a_label_with_control_characters_is_refused_and_a_formula_behind_blanks_is_guarded() {
    let app = shared_app();
    let base = "principal=100000&annual_rate_percent=6&term_months=360";
    for bad in ["a%00b", "x%1B%5B31m", "del%7F"] {
        let r = app.get(&format!("{SCHEDULE}?{base}&label={bad}"));
        assert_eq!(
            pointers(&assert_problem(&r, 422, "invalid-fields")),
            ["label"],
            "{bad}"
        );
    }
    // ` =1+1`, no-break space, zero-width space: each cell starts with a quote.
    let r = app.post_json(
        "/api/v1/loans/compare",
        &json!({"base": {"principal": "100000", "annual_rate_percent": "6", "term_months": 360, "label": " =1+1"},
                "variants": [{"label": "\u{a0}+2", "term_months": 180}, {"label": "\u{200b}@SUM(A1)", "term_months": 240}]}),
    );
    assert_eq!(r.status, 200, "{}", r.text());
    let r = app.request(
        "POST",
        "/api/v1/loans/compare",
        &[("Content-Type", "application/json"), ("Accept", "text/csv")],
        Some(
            json!({"base": {"principal": "100000", "annual_rate_percent": "6", "term_months": 360, "label": " =1+1"},
                   "variants": [{"label": "\u{a0}+2", "term_months": 180}, {"label": "\u{200b}@SUM(A1)", "term_months": 240}]})
            .to_string()
            .as_bytes(),
        ),
    );
    assert_eq!(r.status, 200, "{}", r.text());
    let rows: Vec<&str> = r.text().lines().skip(1).collect();
    assert_eq!(rows.len(), 3);
    for row in rows {
        assert!(row.starts_with('\''), "{row:?}");
    }
}

#[test]
fn a_malformed_chunk_is_a_400_and_a_batch_cut_short_says_so() {
    let app = spawn_app();
    for size in ["zz", "-2", "123456789abcdef012"] {
        let raw = format!(
            "POST {SCHEDULE} HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\nTransfer-Encoding: chunked\r\nConnection: close\r\n\r\n{size}\r\n{{}}\r\n0\r\n\r\n"
        );
        let r = app.request_raw(raw.as_bytes());
        assert_problem(&r, 400, "malformed-json");
    }
    // Two good lines, then a bad chunk size.
    let line =
        r#"{"id":1,"job":"apy","request":{"annual_rate_percent":"5","compounding":"daily"}}"#;
    let chunk = format!("{line}\n{line}\n");
    let raw = format!(
        "POST /api/v1/batch HTTP/1.1\r\nHost: x\r\nContent-Type: application/x-ndjson\r\nTransfer-Encoding: chunked\r\nConnection: close\r\n\r\n{:x}\r\n{chunk}\r\nzz\r\n",
        chunk.len()
    );
    let r = app.request_raw(raw.as_bytes());
    assert_eq!(r.status, 200);
    let lines: Vec<Value> = r
        .text()
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(lines.len(), 3, "{lines:?}");
    assert_eq!(lines[0]["ok"], true);
    assert_eq!(lines[2]["ok"], false);
    assert!(lines[2]["problem"]["detail"]
        .as_str()
        .unwrap()
        .contains("broke off after line 2"));
}

#[test]
fn numbers_follow_one_grammar_in_json_and_query() {
    // The guide: digits, an optional point, an optional exponent; a count is such
    // a number without a fraction, as a JSON number or a string.
    let app = shared_app();
    let by_query = app.get(&format!(
        "{SCHEDULE}?principal=1e5&annual_rate_percent=6&term_months=3.6e2"
    ));
    let by_json = app.post_json(
        SCHEDULE,
        &json!({"principal": "1e5", "annual_rate_percent": 6, "term_months": "360"}),
    );
    assert_eq!(by_query.status, 200, "{}", by_query.text());
    assert_eq!(by_json.status, 200, "{}", by_json.text());
    assert_eq!(by_query.json()["summary"]["payment"], "599.55");
    assert_eq!(by_json.json()["summary"]["payment"], "599.55");
    // One range message for a term, whatever its size.
    for term in ["0", "7000", "99999999999"] {
        let r = app.get(&format!(
            "{SCHEDULE}?principal=1000&annual_rate_percent=6&term_months={term}"
        ));
        let p = assert_problem(&r, 422, "invalid-fields");
        assert_eq!(
            p["errors"][0]["message"], "the term must give 1 to 6000 payments",
            "{term}"
        );
    }
}

#[test]
fn sixteen_maximal_plans_at_once_are_weighed_not_all_computed() {
    // Each maximal plan takes half the in-flight limit: of sixteen sent together
    // at most two run at a time, the rest are refused at once (503, Retry-After).
    let app = spawn_app_with(residue::server::Config::default());
    let body = maximal_loan();
    let handles: Vec<_> = (0..16)
        .map(|_| {
            let body = body.clone();
            std::thread::spawn(move || app.post_json(SCHEDULE, &body).status)
        })
        .collect();
    let statuses: Vec<u16> = handles.into_iter().map(|h| h.join().unwrap()).collect();
    assert!(
        statuses.iter().all(|s| *s == 200 || *s == 503),
        "{statuses:?}"
    );
    assert!(statuses.contains(&200), "{statuses:?}");
    assert!(statuses.contains(&503), "{statuses:?}");
}

#[test]
fn the_recurrence_states_the_precision_and_range_it_really_keeps_near_close_poles() {
    let app = shared_app();
    let ask = |ratio: &str, k: u32| {
        app.post_json(
            "/api/v1/recurrence",
            &json!({"a": "1.5", "x0": "0", "inputs": [{"kind": "geometric", "amount": "1", "ratio": ratio}], "evaluate_at": [k]}),
        )
    };
    // Poles 1e-13 apart: the value at k = 10 keeps about 15 digits, and says so.
    // (Exact stepping with Python's fractions, by hand: x[10] = 384.4335937501153…)
    let r = ask("1.5000000000001", 10);
    assert_eq!(r.status, 200, "{}", r.text());
    let v = r.json();
    assert!(v["values"][0]["value"]
        .as_str()
        .unwrap()
        .starts_with("384.433593750115"));
    assert!(
        v["notes"]
            .to_string()
            .contains("keep about 15 significant digits"),
        "{}",
        v["notes"]
    );
    // At k = 100 the value (about 2.71e19, exact stepping) fits but the modes do
    // not: the overflow problem explains why.
    let r = ask("1.5000000000001", 100);
    let p = assert_problem(&r, 422, "overflow");
    assert!(
        p["detail"]
            .as_str()
            .unwrap()
            .contains("reported as an overflow even when it would fit"),
        "{p}"
    );
    // Poles closer than 1e-14 are merged, and the note says what that costs.
    let r = ask("1.5000000000000001", 10);
    assert_eq!(r.status, 200);
    assert!(r.json()["notes"]
        .to_string()
        .contains("were merged into one repeated pole"));
}

#[test]
fn the_page_of_a_plan_of_thousands_of_segments_folds_its_years_and_stays_small() {
    let app = shared_app();
    let loan = maximal_loan();
    let mut query = vec![
        "principal=900000".to_string(),
        "annual_rate_percent=6.25".into(),
        "term_payments=6000".into(),
        "payment_frequency=weekly".into(),
        "compounding=daily".into(),
    ];
    let extras: Vec<String> = loan["extra_payments"]
        .as_array()
        .unwrap()
        .iter()
        .map(|e| format!("1@{}-6000/{}", e["from"], e["every"]))
        .collect();
    query.push(format!("extra_payments={}", extras.join(",")));
    let r = app.get(&format!("/loan?{}", query.join("&")));
    assert_eq!(r.status, 200);
    // Was 7.2 MB with every segment's derivation.
    assert!(r.body.len() < 1_500_000, "{} bytes", r.body.len());
    let html = r.text();
    assert!(html.matches("<details class=\"year\"").count() > 20);
    assert_eq!(html.matches("<details class=\"year\" open").count(), 1);
    assert!(html.contains("the first 24 are shown with their whole derivation"));
}
