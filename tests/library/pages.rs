//! The pages, driven through the router without a socket: every page answers,
//! shows the same figures as its API twin, escapes what it is given, keeps the
//! form with its errors next to the fields, and carries the caution.

use axum::body::{to_bytes, Body};
use axum::http::{header, Request, StatusCode};
use residue::engine::schedule::CAUTION;
use residue::input::problem::ProblemKind;
use residue::server::{app, AppState, Config};
use residue::web::scenarios;
use serde_json::Value;
use tower::ServiceExt;

/// The caution as the templates write it (askama escapes the apostrophe).
fn caution_html() -> String {
    CAUTION.replace('\'', "&#39;")
}

async fn get(path: &str) -> (StatusCode, String, String) {
    request("GET", path, None).await
}

/// Any method, with an optional Accept header: (status, content type, body).
async fn request(method: &str, path: &str, accept: Option<&str>) -> (StatusCode, String, String) {
    let mut builder = Request::builder()
        .method(method)
        .uri(path)
        .header(header::HOST, "127.0.0.1:8080");
    if let Some(accept) = accept {
        builder = builder.header(header::ACCEPT, accept);
    }
    let response = app(AppState::new(Config::default()))
        .oneshot(builder.body(Body::empty()).unwrap())
        .await
        .unwrap();
    let status = response.status();
    let content_type = response
        .headers()
        .get(header::CONTENT_TYPE)
        .map(|v| v.to_str().unwrap().to_string())
        .unwrap_or_default();
    let body = to_bytes(response.into_body(), 16 * 1024 * 1024)
        .await
        .unwrap();
    (
        status,
        content_type,
        String::from_utf8(body.to_vec()).unwrap(),
    )
}

/// An HTML page answered with `want`.
async fn html_page(path: &str, want: StatusCode) -> String {
    let (status, content_type, body) = get(path).await;
    assert_eq!(status, want, "{path}: {body}");
    assert!(
        content_type.starts_with("text/html"),
        "{path}: {content_type}"
    );
    body
}

async fn page(path: &str) -> String {
    html_page(path, StatusCode::OK).await
}

/// A form page refusing its query: the page itself, with 422 (fields that
/// are invalid, terms with no solution).
async fn refused_page(path: &str) -> String {
    html_page(path, StatusCode::UNPROCESSABLE_ENTITY).await
}

async fn json(path: &str) -> Value {
    let (status, _, body) = get(path).await;
    assert_eq!(status, StatusCode::OK, "{path}: {body}");
    serde_json::from_str(&body).unwrap()
}

/// True when `text` appears escaped, as askama (`&#60;`) or the charts (`&lt;`) write it.
fn shows_escaped(html: &str, text: &str) -> bool {
    let named = text
        .replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;");
    let numeric = text
        .replace('&', "&#38;")
        .replace('<', "&#60;")
        .replace('>', "&#62;");
    html.contains(&named) || html.contains(&numeric)
}

/// "1684.30" as the page shows it: "1,684.30".
fn grouped(s: &str) -> String {
    residue::web::view::group_thousands(s)
}

/// Every `href="…"` of a page, HTML-unescaped.
fn links(html: &str) -> Vec<String> {
    html.split("href=\"")
        .skip(1)
        .filter_map(|rest| rest.split('"').next())
        .map(|h| {
            h.replace("&#38;", "&")
                .replace("&amp;", "&")
                .replace("&#43;", "+")
        })
        .collect()
}

const LOAN: &str = "principal=250000&annual_rate_percent=7.125&term_months=360";

#[tokio::test]
async fn every_page_answers_its_empty_form_with_the_caution_and_no_error() {
    for path in [
        "/", "/loan", "/compare", "/check", "/savings", "/about", "/api",
    ] {
        let html = page(path).await;
        assert!(html.contains(&caution_html()), "{path}");
        assert!(html.contains("<html lang=\"en\">"), "{path}");
        assert!(html.contains("class=\"skip\""), "{path}");
        assert!(!html.contains("error-summary"), "{path} shows an error");
    }
}

#[tokio::test]
async fn the_loan_page_shows_what_the_schedule_api_answers() {
    let api = json(&format!("/api/v1/loans/schedule?{LOAN}")).await;
    let html = page(&format!("/loan?{LOAN}")).await;
    let summary = &api["summary"];
    for figure in ["payment", "total_interest", "total_paid"] {
        let value = summary[figure].as_str().unwrap();
        assert!(
            html.contains(&format!("data-value=\"{value}\"")),
            "{figure} {value}"
        );
        assert!(html.contains(&grouped(value)), "{figure} {value}");
    }
    assert_eq!(summary["payment"], "1684.30");
    assert!(html.contains(&format!("data-value=\"{}\"", summary["number_of_payments"])));
    // The last row of the schedule, and the caution beside the result.
    let last = api["schedule"].as_array().unwrap().last().unwrap();
    assert!(html.contains(&grouped(last["payment"].as_str().unwrap())));
    assert!(html.matches(&caution_html()).count() >= 2);
    // Charts with text alternatives, the derivation in MathML, and the links.
    // Each chart is drawn wide (desk) and narrow (phone); the stylesheet shows one.
    assert!(html.contains("<svg") && html.contains("<title id=\"balance-wide-t\">"));
    assert!(html.contains("<title id=\"balance-narrow-t\">"));
    assert!(html.contains("<desc id=\"yearly-wide-d\">"));
    assert!(html.contains("<math display=\"block\">"));
    assert!(html.contains("<details class=\"year\""));
    let hrefs = links(&html);
    assert!(hrefs.contains(&format!("/api/v1/loans/schedule?{LOAN}")));
    assert!(hrefs.contains(&format!("/api/v1/loans/schedule.csv?{LOAN}")));
}

#[tokio::test]
async fn the_loan_page_reads_numbers_as_a_person_types_them() {
    let html = page("/loan?principal=250%2C000&annual_rate_percent=7.125%25&term_months=360").await;
    assert!(html.contains("data-value=\"1684.30\""));
    // The form keeps what was typed; the JSON link carries the plain figures.
    assert!(html.contains("value=\"250,000\""));
    assert!(links(&html).contains(&format!("/api/v1/loans/schedule.csv?{LOAN}")));
}

#[tokio::test]
async fn a_360_payment_schedule_page_is_under_150_kb() {
    let html = page(&format!("/loan?{LOAN}")).await;
    assert!(html.len() < 150 * 1024, "{} bytes", html.len());
}

#[tokio::test]
async fn extra_payments_show_what_changed_against_the_base() {
    let q = format!("{LOAN}&extra_payments=150@13-&first_payment_date=2026-05-01");
    let api = json(&format!("/api/v1/loans/schedule?{q}")).await;
    let html = page(&format!("/loan?{q}")).await;
    let saved = api["summary"]["interest_saved"].as_str().unwrap();
    assert!(html.contains("Interest saved"));
    assert!(html.contains(&format!("data-value=\"{saved}\"")));
    let payoff = api["summary"]["payoff_date"].as_str().unwrap();
    assert!(html.contains(&format!("data-value=\"{payoff}\"")));
    assert!(html.contains("Each segment"), "segments of the plan");
}

#[tokio::test]
async fn errors_are_shown_next_to_their_field_with_the_form_kept() {
    let html = refused_page("/loan?principal=&annual_rate_percent=six&term_months=360").await;
    assert!(html.contains("error-summary"));
    assert!(html.contains("id=\"e-annual_rate_percent\""));
    assert!(html.contains("id=\"e-principal\""));
    assert!(html.contains("Loan amount is required (for example 250,000)."));
    assert!(html.contains("value=\"six\""), "the typed value is kept");
    assert!(html.contains("aria-invalid=\"true\""));
    assert!(!html.contains("data-value"), "no result is shown");
    // An engine refusal lands on its field too.
    let html = refused_page("/loan?principal=100000&annual_rate_percent=6&payment=500").await;
    assert!(html.contains("id=\"e-payment\""), "{html}");
}

#[tokio::test]
async fn labels_with_markup_are_shown_as_text() {
    let html = page(&format!("/loan?{LOAN}&label=%3Cb%3Ex%3C%2Fb%3E")).await;
    assert!(shows_escaped(&html, "<b>x</b>"));
    assert!(!html.contains("<b>x</b>"));
    let html = page(
        "/compare?principal=278000&annual_rate_percent=6.375&term_months=360&label=%3Cscript%3Ealert(1)%3C%2Fscript%3E",
    )
    .await;
    assert!(shows_escaped(&html, "<script>alert(1)</script>"));
    assert!(
        html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"),
        "the chart's legend"
    );
    assert!(!html.contains("<script>alert"));
}

#[tokio::test]
async fn the_compare_page_shows_what_the_compare_api_answers() {
    let q = "principal=278000&annual_rate_percent=6.375&term_months=180,240,360";
    let api = json(&format!("/api/v1/loans/compare?{q}")).await;
    let html = page(&format!("/compare?{q}")).await;
    let rows = api["rows"].as_array().unwrap();
    assert_eq!(rows.len(), 3);
    for r in rows {
        let payment = r["payment"].as_str().unwrap();
        assert!(
            html.contains(&format!("data-value=\"{payment}\"")),
            "{payment}"
        );
        assert!(html.contains(&grouped(r["total_interest"].as_str().unwrap())));
    }
    assert_eq!(
        html.matches("<polyline").count(),
        6,
        "one line per plan, in the wide and the narrow drawing"
    );
    assert!(links(&html).contains(&format!("/api/v1/loans/compare.csv?{q}")));
    // Typed as a person types, with thousands separators.
    let typed = page(
        "/compare?principal=278%2C000&annual_rate_percent=6.375%25&term_months=180%2C+240%2C+360",
    )
    .await;
    for r in rows {
        assert!(typed.contains(&format!(
            "data-value=\"{}\"",
            r["payment"].as_str().unwrap()
        )));
    }
}

#[tokio::test]
async fn the_check_page_takes_the_dates_of_an_odd_first_period() {
    // The page and the API read the same fields: the dated APR and the prepaid
    // interest of the page are the API's.
    let q = "principal=150000&annual_rate_percent=6&term_months=360&funding_date=2027-05-20&first_payment_date=2027-07-01&odd_days_interest=prepaid&quoted_apr_percent=6.1";
    let api = json(&format!("/api/v1/loans/check?{q}")).await;
    let html = page(&format!("/check?{q}")).await;
    let apr = api["apr_percent"].as_str().unwrap();
    assert!(html.contains(&format!("data-value=\"{apr}\"")));
    assert!(html.contains(&grouped(api["amount_financed"].as_str().unwrap())));
    assert!(html.contains("name=\"funding_date\""));
    assert!(html.contains("2027-05-20"));
}

#[tokio::test]
async fn the_check_page_gives_the_verdicts_of_the_check_api() {
    let q = "principal=250000&annual_rate_percent=7.125&term_months=360&quoted_payment=1684.30&quoted_apr_percent=7.25&prepaid_finance_charges=origination%3A2500";
    let api = json(&format!("/api/v1/loans/check?{q}")).await;
    let html = page(&format!("/check?{q}")).await;
    assert_eq!(api["payment_matches"], true);
    assert!(html.contains("Matches the quote"));
    let apr = api["apr_percent"].as_str().unwrap();
    assert!(html.contains(&format!("data-value=\"{apr}\"")));
    let within = api["apr_within_tolerance"].as_bool().unwrap();
    assert!(html.contains(if within {
        "Within the tolerance"
    } else {
        "Outside the tolerance"
    }));
    assert!(html.contains(&grouped(api["amount_financed"].as_str().unwrap())));
    let html = page(
        "/check?principal=250000&annual_rate_percent=7.125&term_months=360&quoted_payment=1700",
    )
    .await;
    assert!(html.contains("fits a note rate of"));
    let html = refused_page(
        "/check?principal=250000&annual_rate_percent=7.125&term_months=360&mortgage=maybe",
    )
    .await;
    assert!(html.contains("id=\"e-mortgage\""));
}

#[tokio::test]
async fn the_savings_page_shows_what_the_savings_api_answers() {
    let q = "deposit=300&annual_rate_percent=4&term_months=120&deposit_growth_percent=3";
    let api = json(&format!("/api/v1/savings/plan?{q}")).await;
    let html = page(&format!("/savings?{q}")).await;
    for figure in ["final_balance", "total_interest", "total_deposited"] {
        let v = api["summary"][figure].as_str().unwrap();
        assert!(
            html.contains(&format!("data-value=\"{v}\"")),
            "{figure} {v}"
        );
    }
    assert!(html.contains("<math display=\"block\">"));
    assert!(links(&html).contains(&format!("/api/v1/savings/plan.csv?{q}")));
    let html =
        refused_page("/savings?deposit=300&withdrawal=200&annual_rate_percent=4&term_months=120")
            .await;
    assert!(html.contains("id=\"e-withdrawal\""));
}

#[tokio::test]
async fn every_demo_scenario_is_one_click_from_home_and_renders() {
    let home = page("/").await;
    let all = scenarios::all().unwrap();
    let pages: Vec<String> = links(&home)
        .into_iter()
        .filter(|h| h.contains('?') && !h.starts_with("/api/"))
        .collect();
    assert_eq!(pages.len(), all.len(), "{pages:?}");
    for s in &all {
        let (path, ..) = residue::web::home::job_paths(&s.job);
        let url = format!("{path}?{}", s.query());
        assert!(pages.contains(&url), "{} is not linked: {url}", s.id);
    }
    // Every scenario link on the home page, followed as a person would click it.
    let mut paths: Vec<&str> = Vec::new();
    for url in &pages {
        let (status, content_type, html) = get(url).await;
        assert_eq!(status, StatusCode::OK, "{url}: {html}");
        assert!(
            content_type.starts_with("text/html"),
            "{url}: {content_type}"
        );
        assert!(!html.contains("error-summary"), "{url}: {html}");
        assert!(
            html.contains("<section class=\"result\""),
            "{url}: no result"
        );
        assert!(html.contains("data-figure=\""), "{url} shows no figures");
        assert!(html.contains(&caution_html()), "{url}: no caution");
        paths.push(url.split('?').next().unwrap());
    }
    for path in ["/loan", "/compare", "/check", "/savings"] {
        assert!(paths.contains(&path), "no scenario opens {path}: {pages:?}");
    }
    for job in [
        "loan_schedule",
        "compare",
        "quote_check",
        "savings_plan",
        "loan_compare",
        "loan_check",
    ] {
        let (path, ..) = residue::web::home::job_paths(job);
        assert_eq!(
            path,
            match job {
                "compare" | "loan_compare" => "/compare",
                "quote_check" | "loan_check" => "/check",
                "savings_plan" => "/savings",
                _ => "/loan",
            }
        );
    }
}

#[tokio::test]
async fn the_about_page_computes_its_worked_example_live() {
    let html = page("/about").await;
    let api =
        json("/api/v1/loans/schedule?principal=2400&annual_rate_percent=0&term_months=18").await;
    let payment = api["summary"]["payment"].as_str().unwrap();
    assert!(html.contains(payment));
    assert!(html.contains("double"));
    assert!(html.contains("<math display=\"block\">"));
}

#[tokio::test]
async fn the_api_guide_has_a_section_for_every_problem_type() {
    let html = page("/api").await;
    for kind in ProblemKind::ALL {
        let anchor = kind.type_uri();
        let id = anchor.trim_start_matches("/api#");
        assert!(html.contains(&format!("id=\"{id}\"")), "{id}");
    }
    // Every path of the OpenAPI document (itself tested to cover every route the
    // router serves) is named on the guide.
    let doc = residue::api::openapi::document();
    let paths = doc["paths"].as_object().unwrap();
    assert!(paths.len() >= 10, "{:?}", paths.keys());
    for op in paths.keys() {
        assert!(html.contains(op.as_str()), "the guide does not name {op}");
    }
    assert!(html.contains("http://127.0.0.1:8080/api/v1/loans/schedule.csv"));
    assert!(html.matches("curl ").count() >= 7);
}

/// Each page template and the route that renders it.
const TEMPLATE_ROUTES: [(&str, &str); 11] = [
    ("home.html", "/"),
    (
        "refinance.html",
        "/refinance?current.balance=150000&current.annual_rate_percent=7&current.remaining_payments=240&annual_rate_percent=6&term_months=240&closing_costs=2000",
    ),
    (
        "options.html",
        "/options?principal=200000&term_months=360&option_rate_percent=6.75&option_rate_percent=6.25&option_points_percent=0&option_points_percent=2",
    ),
    (
        "grid.html",
        "/grid?principal=300000&rates=6,6.5&terms=180,360",
    ),
    ("pipeline.html", "/pipeline"),
    (
        "loan.html",
        "/loan?principal=1000&annual_rate_percent=5&term_months=12",
    ),
    (
        "compare.html",
        "/compare?principal=1000&annual_rate_percent=5&term_months=12,24",
    ),
    (
        "check.html",
        "/check?principal=1000&annual_rate_percent=5&term_months=12",
    ),
    (
        "savings.html",
        "/savings?deposit=100&annual_rate_percent=5&term_months=12",
    ),
    ("about.html", "/about"),
    ("api_guide.html", "/api"),
];

#[tokio::test]
async fn every_template_is_reachable_from_a_route() {
    let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/templates");
    let mut on_disk: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".html"))
        .collect();
    on_disk.sort();
    let sources: Vec<String> = on_disk
        .iter()
        .map(|n| std::fs::read_to_string(format!("{dir}/{n}")).unwrap())
        .collect();
    for name in &on_disk {
        if name == "error.html" {
            // Rendered for a problem on a page route; see the test of error pages.
            continue;
        }
        if name == "base.html" || name.starts_with('_') {
            // A layout or a partial: some page template must use it.
            assert!(
                sources.iter().any(|s| s.contains(&format!("\"{name}\""))),
                "{name} is used by no template"
            );
        } else {
            let route = TEMPLATE_ROUTES
                .iter()
                .find(|(t, _)| t == name)
                .unwrap_or_else(|| panic!("{name} has no route in this test"));
            let html = page(route.1).await;
            assert!(
                html.contains("data-value") || !route.1.contains('?'),
                "{}",
                route.1
            );
        }
    }
    assert_eq!(
        on_disk
            .iter()
            .filter(|n| *n != "base.html" && *n != "error.html" && !n.starts_with('_'))
            .count(),
        TEMPLATE_ROUTES.len()
    );
}

/// A request as a browser sends it (Accept ranks HTML first).
async fn browser_get(method: &str, path: &str) -> (StatusCode, String, String) {
    let accept = "text/html,application/xhtml+xml,application/xml;q=0.9,*/*;q=0.8";
    request(method, path, Some(accept)).await
}

#[tokio::test]
async fn a_browser_gets_page_routes_problems_as_pages_and_programs_keep_problem_details() {
    for (method, path, status) in [
        ("GET", "/no-such-page", StatusCode::NOT_FOUND),
        ("GET", "/loans", StatusCode::NOT_FOUND),
        ("POST", "/loan", StatusCode::METHOD_NOT_ALLOWED),
    ] {
        let (got, content_type, html) = browser_get(method, path).await;
        assert_eq!(got, status, "{method} {path}");
        assert!(content_type.starts_with("text/html"), "{content_type}");
        assert!(html.contains("href=\"/\""), "a way home");
        assert!(html.contains("class=\"caution\""));
        assert!(html.contains(&format!("Answer {}", status.as_u16())));
    }
    // The API keeps problem details, whatever the Accept header.
    let (got, content_type, _) = browser_get("GET", "/api/v1/no-such-operation").await;
    assert_eq!(got, StatusCode::NOT_FOUND);
    assert_eq!(content_type, "application/problem+json");
    // A program asking for a page address without HTML in Accept keeps them too.
    let (got, content_type, _) = get("/no-such-page").await;
    assert_eq!(got, StatusCode::NOT_FOUND);
    assert_eq!(content_type, "application/problem+json");
}

#[tokio::test]
async fn static_files_are_served_with_their_types() {
    let (status, content_type, css) = get("/static/residue.css").await;
    assert_eq!(status, StatusCode::OK);
    assert!(content_type.starts_with("text/css"));
    assert!(css.contains("@media print") && css.contains("tabular-nums"));
    let (status, content_type, _) = get("/static/residue.js").await;
    assert_eq!(status, StatusCode::OK);
    assert!(content_type.starts_with("text/javascript"));
}

#[tokio::test]
async fn pages_hold_no_inline_script_or_style() {
    for (_, route) in TEMPLATE_ROUTES {
        let html = page(route).await;
        assert!(!html.contains("<style"), "{route}");
        assert!(!html.contains(" style=\""), "{route}");
        assert_eq!(html.matches("<script").count(), 1, "{route}");
        assert!(html.contains("<script src=\"/static/residue.js\" defer></script>"));
    }
}
