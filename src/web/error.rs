//! Error pages: a browser asking for a page gets the problem as a page in the
//! site's own look, with a way home; programs keep problem details (JSON).

use askama::Template;
use axum::http::{HeaderMap, StatusCode};
use axum::response::Response;

use super::page::{render, Layout};

/// `templates/error.html`.
#[derive(Template)]
#[template(path = "error.html")]
pub struct ErrorPage {
    pub layout: Layout,
    /// The status code, e.g. 404.
    pub status: u16,
    /// The problem's title.
    pub title: String,
    /// What happened, in a sentence.
    pub detail: String,
}

/// The headline of a page for `status`, in plain words.
fn headline(status: StatusCode) -> &'static str {
    match status.as_u16() {
        404 => "There is no page at this address",
        405 => "This address does not take that kind of request",
        413 => "What was sent is too large",
        503 => "Residue is busy: try again in a moment",
        500..=599 => "Something went wrong on our side",
        _ => "This request could not be answered",
    }
}

/// The problem as an HTML page with the same status.
pub fn page(status: StatusCode, title: &str, detail: &str) -> Response {
    let page = ErrorPage {
        layout: Layout::new(headline(status), ""),
        status: status.as_u16(),
        title: title.to_string(),
        detail: capitalised(detail),
    };
    let mut response = render(&page);
    *response.status_mut() = status;
    response
}

fn capitalised(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(first) => format!(
            "{}{}.",
            first.to_uppercase(),
            c.as_str().trim_end_matches('.')
        ),
        None => String::new(),
    }
}

/// True when the Accept header ranks HTML above JSON (a browser's does).
pub fn prefers_html(headers: &HeaderMap) -> bool {
    let Some(accept) = headers
        .get(axum::http::header::ACCEPT)
        .and_then(|v| v.to_str().ok())
    else {
        return false;
    };
    let q = |media: &str| crate::input::http::weight_of(accept, media);
    let html = q("text/html");
    html > 0.0 && html > q("application/json").max(q("application/problem+json"))
}
