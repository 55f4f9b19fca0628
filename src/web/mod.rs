//! HTML pages, server-rendered from the same engine results as the API.

pub mod scenarios;

use askama::Template;
use axum::http::header;
use axum::response::{Html, IntoResponse, Response};
use axum::routing::get;
use axum::Router;

use crate::engine::schedule::CAUTION;
use crate::server::AppState;

/// The home page.
#[derive(Template)]
#[template(path = "home.html")]
pub struct HomePage {
    pub caution: &'static str,
    /// The demo scenarios, each with its plain URLs.
    pub scenarios: Vec<ScenarioLink>,
}

/// A scenario as the home page lists it.
pub struct ScenarioLink {
    pub title: String,
    pub story: String,
    pub json_url: String,
    pub csv_url: String,
}

fn render<T: Template>(page: &T) -> Response {
    match page.render() {
        Ok(html) => Html(html).into_response(),
        Err(_) => crate::api::problem::ApiError::new(
            crate::api::problem::ProblemKind::Internal,
            "the page could not be rendered",
        )
        .into_response(),
    }
}

async fn home() -> Response {
    let scenarios = scenarios::all()
        .unwrap_or_default()
        .into_iter()
        .map(|s| {
            let q = s.query();
            ScenarioLink {
                title: s.title,
                story: s.story,
                json_url: format!("/api/v1/loans/schedule?{q}"),
                csv_url: format!("/api/v1/loans/schedule.csv?{q}"),
            }
        })
        .collect();
    render(&HomePage {
        caution: CAUTION,
        scenarios,
    })
}

async fn stylesheet() -> Response {
    (
        [(header::CONTENT_TYPE, "text/css; charset=utf-8")],
        include_str!("../../static/residue.css"),
    )
        .into_response()
}

/// The page routes.
pub fn routes() -> Router<AppState> {
    Router::new()
        .route("/", get(home))
        .route("/static/residue.css", get(stylesheet))
}
