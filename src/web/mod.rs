//! HTML pages, server-rendered from the same engine results as the API.
//!
//! One handler file per page (`home`, `loan`, `compare`, `check`, `savings`,
//! `about`, `api_guide`), each with one page struct per template under
//! `templates/`. Every page reads the same query parameters as its API twin,
//! with the same reader (made lenient, so "250,000" and "6.5%" are accepted), and
//! computes through the same engine call: one computation, one place.
//!
//! Charts ([`charts`]) and the typeset derivation ([`mathml`]) are built here as
//! markup with every piece of text escaped; they are the only strings a template
//! inserts unescaped.

pub mod about;
pub mod api_guide;
pub mod charts;
pub mod check;
pub mod compare;
pub mod error;
pub mod form;
pub mod home;
pub mod loan;
pub mod mathml;
pub mod savings;
pub mod scenarios;
pub mod view;

use askama::Template;
use axum::http::header;
use axum::response::{Html, IntoResponse, Response};
use axum::routing::get;
use axum::Router;

use crate::engine::schedule::CAUTION;
use crate::state::AppState;

/// The pages in the navigation, in order: (path, name).
pub const NAV: [(&str, &str); 7] = [
    ("/", "Home"),
    ("/loan", "Loan schedule"),
    ("/compare", "Compare plans"),
    ("/check", "Check a quote"),
    ("/savings", "Savings plan"),
    ("/about", "The method"),
    ("/api", "API guide"),
];

/// What the shared layout (`templates/base.html`) needs from every page.
pub struct Layout {
    /// The page's title (the `<title>` and the first heading).
    pub title: String,
    /// The path of the page, to mark it in the navigation.
    pub current: &'static str,
    /// The caution shown on every page and printout.
    pub caution: &'static str,
    /// Today's date (UTC) for the printed "prepared on" line; the figures themselves
    /// never depend on the clock.
    pub prepared_on: String,
}

impl Layout {
    pub fn new(title: impl Into<String>, current: &'static str) -> Self {
        Self {
            title: title.into(),
            current,
            caution: CAUTION,
            prepared_on: today(),
        }
    }

    /// The navigation entries: (path, name, is this page).
    pub fn nav(&self) -> Vec<(&'static str, &'static str, bool)> {
        NAV.iter()
            .map(|(p, n)| (*p, *n, *p == self.current))
            .collect()
    }
}

/// Today's date in UTC, written ISO 8601; only the printed "prepared on" line uses it.
fn today() -> String {
    jiff::tz::Offset::UTC
        .to_datetime(jiff::Timestamp::now())
        .date()
        .to_string()
}

/// Renders a page, or answers a generic problem when the template fails.
pub fn render<T: Template>(page: &T) -> Response {
    match page.render() {
        Ok(html) => Html(html).into_response(),
        Err(_) => crate::input::problem::ApiError::new(
            crate::input::problem::ProblemKind::Internal,
            "the page could not be rendered",
        )
        .into_response(),
    }
}

/// Renders a form page with its form's status: the page itself (the form
/// with each error next to its field) answers a bad query with 400 or 422.
pub fn render_form<T: Template>(page: &T, status: axum::http::StatusCode) -> Response {
    let mut response = render(page);
    if response.status() == axum::http::StatusCode::OK {
        *response.status_mut() = status;
    }
    response
}

async fn stylesheet() -> Response {
    (
        [
            (header::CONTENT_TYPE, "text/css; charset=utf-8"),
            (header::CACHE_CONTROL, "public, max-age=300"),
        ],
        include_str!("../../static/residue.css"),
    )
        .into_response()
}

async fn script() -> Response {
    (
        [
            (header::CONTENT_TYPE, "text/javascript; charset=utf-8"),
            (header::CACHE_CONTROL, "public, max-age=300"),
        ],
        include_str!("../../static/residue.js"),
    )
        .into_response()
}

/// The page routes and the static files.
pub fn routes() -> Router<AppState> {
    Router::new()
        .route("/", get(home::page))
        .route("/loan", get(loan::page))
        .route("/compare", get(compare::page))
        .route("/check", get(check::page))
        .route("/savings", get(savings::page))
        .route("/about", get(about::page))
        .route("/api", get(api_guide::page))
        .route("/static/residue.css", get(stylesheet))
        .route("/static/residue.js", get(script))
}
