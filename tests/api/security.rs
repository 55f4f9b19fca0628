//! Security review: escaping of user text, the Content-Security-Policy of every
//! page, and no file outside `static/` reachable.

use serde_json::json;

use crate::helpers::{assert_still_healthy, shared_app};

const MARKUP: &str = "<script>alert(1)</script>";
const PAGES: [&str; 7] = [
    "/",
    "/loan?principal=100000&annual_rate_percent=6&term_months=120",
    "/compare?principal=278000&annual_rate_percent=6.375&term_months=180,360",
    "/check?principal=100000&annual_rate_percent=6&term_months=360",
    "/savings?deposit=350&annual_rate_percent=4.1&term_months=96",
    "/about",
    "/api",
];

#[test]
fn path_traversal_on_static_never_serves_a_file_outside_static() {
    // Arrange
    let app = shared_app();
    let attempts = [
        "/static/../Cargo.toml",
        "/static/%2e%2e/Cargo.toml",
        "/static/..%2fCargo.toml",
        "/static/%2e%2e%2fCargo.toml",
        "/static/..%5cCargo.toml",
        "/static/....//Cargo.toml",
        "/static/%252e%252e%252fCargo.toml",
        "/static//etc/passwd",
        "/static/../src/main.rs",
        "/static/residue.css/../../Cargo.toml",
        "/static/residue.css%00.toml",
    ];

    for path in attempts {
        // Act
        let r = app.get(path);

        // Assert
        let body = String::from_utf8_lossy(&r.body);
        assert!(r.status < 500, "{path}: {}", r.status);
        assert_ne!(r.status, 200, "{path} answered 200: {body:.200}");
        for secret in ["[package]", "root:", "fn main"] {
            assert!(!body.contains(secret), "{path} leaked a file: {body:.200}");
        }
    }
    assert_eq!(
        app.get("/static/residue.css").status,
        200,
        "static files still serve"
    );
    assert_still_healthy(&app);
}

#[test]
fn markup_in_a_compare_label_is_escaped_on_the_page() {
    // Arrange
    let app = shared_app();
    let label = "%3Cscript%3Ealert(1)%3C%2Fscript%3E%22%3E%3Cimg%20src%3Dx%20onerror%3Dalert(2)%3E";

    // Act
    let r = app.get(&format!(
        "/compare?principal=278000&annual_rate_percent=6.375&term_months=360&label={label}"
    ));

    // Assert
    assert_eq!(r.status, 200);
    let body = r.text();
    assert!(!body.contains(MARKUP), "raw markup on the page");
    assert!(!body.contains("<img src=x"), "raw markup on the page");
    assert!(
        body.contains("&lt;script&gt;") || body.contains("&#60;script&#62;"),
        "the label is shown as text"
    );
}

#[test]
fn markup_in_json_labels_comes_back_as_the_same_plain_string() {
    // Arrange
    let app = shared_app();
    let body = json!({
        "base": {"principal": "278000", "annual_rate_percent": "6.375", "term_months": 360, "label": MARKUP},
        "variants": [{"label": format!("{MARKUP}\"'&"), "term_months": 180}]
    });

    // Act
    let r = app.post_json("/api/v1/loans/compare", &body);
    let s = app.post_json(
        "/api/v1/loans/schedule",
        &json!({"principal": "1000", "annual_rate_percent": "6", "term_months": 12, "label": MARKUP}),
    );

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    assert_eq!(r.media_type(), "application/json");
    let rows = r.json()["rows"].as_array().expect("rows").clone();
    assert_eq!(rows[0]["label"], MARKUP);
    assert_eq!(rows[1]["label"], format!("{MARKUP}\"'&"));
    assert_eq!(s.status, 200, "{}", s.text());
    assert_eq!(s.media_type(), "application/json");
}

#[test]
fn every_page_has_a_csp_that_forbids_inline_scripts_and_outside_origins() {
    // Arrange
    let app = shared_app();

    for path in PAGES {
        // Act
        let r = app.get(path);

        // Assert
        assert_eq!(r.status, 200, "{path}");
        let csp = r
            .header("content-security-policy")
            .unwrap_or_else(|| panic!("{path} has no CSP"));
        let directives: Vec<&str> = csp.split(';').map(str::trim).collect();
        assert!(directives.contains(&"default-src 'none'"), "{path}: {csp}");
        assert!(directives.contains(&"script-src 'self'"), "{path}: {csp}");
        for banned in [
            "'unsafe-inline'",
            "'unsafe-eval'",
            "http:",
            "https:",
            "*",
            "data: 'self' script",
        ] {
            assert!(
                !directives
                    .iter()
                    .filter(|d| d.starts_with("script-src") || d.starts_with("default-src"))
                    .any(|d| d.contains(banned)),
                "{path}: {banned} in {csp}"
            );
        }
        assert!(!csp.contains("://"), "{path}: an outside origin in {csp}");
        assert_eq!(r.header("x-content-type-options"), Some("nosniff"));
        // No inline script element: every <script> loads a file of our origin.
        let body = r.text();
        for (i, _) in body.match_indices("<script") {
            let tag = &body[i..body[i..].find('>').map_or(body.len(), |e| i + e)];
            assert!(
                tag.contains("src=\"/static/"),
                "{path}: an inline script {tag}"
            );
        }
        assert!(
            !body.contains(" onclick=") && !body.contains(" onload="),
            "{path}: an inline handler"
        );
    }
}
