//! `/pipeline`: a whole pipeline of quotes checked from a CSV file. The page
//! twin of `POST /api/v1/loans/checks`, with the same reader and the same
//! verdicts ([`crate::answer::pipeline`]).
//!
//! With JavaScript, the page posts the file to the API and shows the verdicts
//! as they stream in, with a progress bar. Without it, the form posts here and
//! the whole result page comes back. Nothing is stored: the file lives only for
//! the request.

use askama::Template;
use axum::extract::Request;
use axum::http::{header, StatusCode};
use axum::response::{IntoResponse, Response};

use super::page::{render, render_form, Layout};
use crate::answer::pipeline::{check_row, RowVerdict, Status};
use crate::input::csv::{known_columns, read_sheet, MAX_FILE_BYTES, MAX_ROWS};
use crate::input::multipart::file_of;
use crate::input::problem::{ApiError, ProblemKind};

/// The rows that hold shown on the page at most (every differing and failing
/// row is shown; the download has every row).
pub const SHOWN_OK_ROWS: usize = 500;

/// The template file: the header and two invented rows.
pub const TEMPLATE_CSV: &str = "id,principal,annual_rate_percent,term_months,quoted_payment,quoted_apr_percent,prepaid_finance_charges.origination,funding_date,first_payment_date\r\n\
Fenwick-0412,100000,6,360,599.55,6.1,1000,,\r\n\
Alder Row 9,240000,6.5,360,1516.96,6.624,2400,2027-03-10,2027-05-01\r\n";

#[derive(Template)]
#[template(path = "pipeline.html")]
pub struct PipelinePage {
    pub layout: Layout,
    pub columns: Vec<String>,
    pub max_rows: usize,
    pub result: Option<Outcome>,
    pub problem: Option<ApiError>,
}

/// The verdicts of one file, failures first.
pub struct Outcome {
    pub rows: usize,
    pub matched: usize,
    pub differing: usize,
    pub errors: usize,
    /// Differing rows, then failing ones, then up to [`SHOWN_OK_ROWS`] that hold.
    pub shown: Vec<RowVerdict>,
    pub hidden_ok: usize,
}

impl Outcome {
    fn of(mut verdicts: Vec<RowVerdict>) -> Self {
        let count = |s| verdicts.iter().filter(|v| v.status == s).count();
        let (matched, differing, errors) = (
            count(Status::Ok),
            count(Status::Differs),
            count(Status::Error),
        );
        let rows = verdicts.len();
        verdicts.sort_by_key(|v| (v.status, v.line));
        let keep = differing + errors + matched.min(SHOWN_OK_ROWS);
        verdicts.truncate(keep);
        Self {
            rows,
            matched,
            differing,
            errors,
            shown: verdicts,
            hidden_ok: matched.saturating_sub(SHOWN_OK_ROWS),
        }
    }
}

fn page_with(result: Option<Outcome>, problem: Option<ApiError>) -> PipelinePage {
    PipelinePage {
        layout: Layout::new("Check a pipeline of quotes", "/pipeline"),
        columns: known_columns(),
        max_rows: MAX_ROWS,
        result,
        problem,
    }
}

/// `GET /pipeline`
pub async fn page() -> Response {
    render(&page_with(None, None))
}

/// `GET /pipeline/template.csv`
pub async fn template() -> Response {
    (
        [
            (
                header::CONTENT_TYPE,
                "text/csv; charset=utf-8; header=present",
            ),
            (
                header::CONTENT_DISPOSITION,
                "attachment; filename=\"pipeline-template.csv\"",
            ),
        ],
        TEMPLATE_CSV,
    )
        .into_response()
}

/// `POST /pipeline`: the form without JavaScript; the whole result page.
pub async fn post(req: Request) -> Response {
    let content_type = req
        .headers()
        .get(header::CONTENT_TYPE)
        .and_then(|v| v.to_str().ok())
        .unwrap_or("")
        .to_string();
    let outcome = async {
        let body = axum::body::to_bytes(req.into_body(), MAX_FILE_BYTES)
            .await
            .map_err(|_| {
                ApiError::new(
                    ProblemKind::TooLarge,
                    format!(
                        "a file may be at most {} MiB: split it and check the parts",
                        MAX_FILE_BYTES / (1024 * 1024)
                    ),
                )
            })?;
        let file = file_of(&content_type, body)?;
        tokio::task::spawn_blocking(move || {
            let (sheet, _) = read_sheet(&file)?;
            let verdicts = sheet
                .rows
                .iter()
                .map(|r| {
                    let record = std::str::from_utf8(&file[r.start..r.end]).unwrap_or("");
                    check_row(&sheet.header, record, r.line)
                })
                .collect();
            Ok::<_, ApiError>(Outcome::of(verdicts))
        })
        .await
        .map_err(|_| ApiError::new(ProblemKind::Internal, "the file could not be checked"))?
    }
    .await;
    match outcome {
        Ok(o) => render(&page_with(Some(o), None)),
        Err(e) => {
            let status: StatusCode = e.kind.status();
            render_form(&page_with(None, Some(e)), status)
        }
    }
}
