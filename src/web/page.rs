//! What every page shares: the navigation, the layout's fields, and rendering
//! a page (or a form page with the status its errors call for).

use askama::Template;
use axum::response::{Html, IntoResponse, Response};

use crate::engine::schedule::CAUTION;

/// The pages in the navigation, in order: (path, name).
pub const NAV: [(&str, &str); 11] = [
    ("/", "Home"),
    ("/loan", "Loan schedule"),
    ("/compare", "Compare plans"),
    ("/refinance", "Refinance"),
    ("/options", "Rate and points"),
    ("/grid", "Payment grid"),
    ("/check", "Check a quote"),
    ("/pipeline", "Check a pipeline"),
    ("/savings", "Savings plan"),
    ("/about", "How the figures are worked out"),
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
    /// The page shows a result, with the caution at its head: the page's own
    /// caution at the foot is then left out, so it is read once.
    pub result_shown: bool,
}

impl Layout {
    pub fn new(title: impl Into<String>, current: &'static str) -> Self {
        Self {
            title: title.into(),
            current,
            caution: CAUTION,
            prepared_on: today(),
            result_shown: false,
        }
    }

    /// The layout of a page that may show a result.
    #[must_use]
    pub fn with_result(mut self, shown: bool) -> Self {
        self.result_shown = shown;
        self
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
