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
pub mod adjustable;
pub mod api_guide;
pub mod charts;
pub mod check;
pub mod compare;
pub mod error;
pub mod form;
pub mod grid;
pub mod home;
pub mod loan;
pub mod mathml;
pub mod page;
pub mod pipeline;
pub mod points;
pub mod refinance;
pub mod rows;
pub mod savings;
pub mod scenarios;
pub mod view;

use axum::http::header;
use axum::response::{IntoResponse, Response};
use axum::routing::get;
use axum::Router;

use crate::state::AppState;

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

async fn grid_print() -> Response {
    (
        [
            (header::CONTENT_TYPE, "text/css; charset=utf-8"),
            (header::CACHE_CONTROL, "public, max-age=300"),
        ],
        include_str!("../../static/grid-print.css"),
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
        .route("/refinance", get(refinance::page))
        .route("/options", get(points::page))
        .route("/grid", get(grid::page))
        .route("/pipeline", get(pipeline::page).post(pipeline::post))
        .route("/pipeline/template.csv", get(pipeline::template))
        .route("/about", get(about::page))
        .route("/api", get(api_guide::page))
        .route("/static/residue.css", get(stylesheet))
        .route("/static/residue.js", get(script))
        .route("/static/grid-print.css", get(grid_print))
}
