//! `POST /api/v1/loans/checks`: a whole file of quotes checked, one verdict a
//! row, streamed back in order as CSV (the default) or NDJSON.
//!
//! The file comes as `text/csv`, or as a page's form (`multipart/form-data`
//! with a `file` part or a `rows` part of pasted text). It is read whole, up to
//! [`MAX_FILE_BYTES`], and its header checked before any answer starts, so an
//! unknown column is a 422 with nothing half-done. The rows are then checked in
//! groups on blocking threads, two or three groups at a time, and each group's
//! verdicts go out as soon as the ones before them have: the first verdicts
//! leave within milliseconds. Nothing is kept once the answer ends.
//!
//! A client that goes away stops the work (the threads look at a flag before
//! each row). Work cut short (the time budget, or a fault) ends the answer with
//! a last row saying how many rows were answered of how many.

use std::collections::VecDeque;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

use axum::body::{Body, Bytes};
use axum::extract::{Request, State};
use axum::http::{header, HeaderMap, HeaderValue};
use axum::response::{IntoResponse, Response};
use serde::Serialize;

use super::csv::csv_field;
use super::handlers::{read_body, CAUTION_HEADER};
use crate::answer::pipeline::{check_row, RowVerdict, Status};
use crate::input::csv::{read_sheet, Sheet, MAX_FILE_BYTES};
use crate::input::http::weight_of;
use crate::input::multipart::file_of;
use crate::input::problem::{ApiError, ProblemKind};
use crate::state::AppState;

/// The longest one file may compute; the rows after it are not answered.
pub const MAX_SECONDS: u64 = 120;

/// Rows checked together on one blocking thread.
const GROUP: usize = 256;

/// Groups being checked at once (both cores busy, one group ahead).
const IN_FLIGHT: usize = 3;

/// The header that says how many rows the file holds, for a progress bar.
pub const ROWS_HEADER: &str = "residue-rows";

/// The answer's columns, in order.
pub const COLUMNS: [&str; 19] = [
    "id",
    "line",
    "status",
    "computed_payment",
    "quoted_payment",
    "payment_difference",
    "payment_matches",
    "apr_percent",
    "quoted_apr_percent",
    "apr_difference_points",
    "apr_tolerance_points",
    "apr_within_tolerance",
    "finance_charge",
    "quoted_finance_charge",
    "finance_charge_difference",
    "finance_charge_tolerance",
    "finance_charge_within_tolerance",
    "reason",
    "check_url",
];

/// How the verdicts are written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Encoding {
    Csv,
    Ndjson,
}

/// The encoding the Accept header asks for: CSV unless NDJSON weighs more.
///
/// # Errors
/// 406 when it takes neither.
pub fn encoding(headers: &HeaderMap) -> Result<Encoding, ApiError> {
    let Some(accept) = headers
        .get(header::ACCEPT)
        .and_then(|v| v.to_str().ok())
        .filter(|a| !a.trim().is_empty())
    else {
        return Ok(Encoding::Csv);
    };
    let (csv, ndjson) = (
        weight_of(accept, "text/csv"),
        weight_of(accept, "application/x-ndjson"),
    );
    if csv == 0.0 && ndjson == 0.0 {
        return Err(ApiError::new(
            ProblemKind::NotAcceptable,
            "the verdicts come as text/csv or application/x-ndjson",
        ));
    }
    Ok(if ndjson > csv {
        Encoding::Ndjson
    } else {
        Encoding::Csv
    })
}

fn flag(v: Option<bool>) -> &'static str {
    match v {
        Some(true) => "true",
        Some(false) => "false",
        None => "",
    }
}

/// One CSV cell: a plain number as it is, any other text through the formula
/// guard and RFC 4180 quoting ([`csv_field`]).
fn cell(out: &mut Vec<u8>, s: &str) {
    let body = s.strip_prefix('-').unwrap_or(s);
    let (int, frac) = body.split_once('.').unwrap_or((body, "0"));
    let digits = |t: &str| !t.is_empty() && t.bytes().all(|b| b.is_ascii_digit());
    if digits(int) && digits(frac) {
        out.extend_from_slice(s.as_bytes());
    } else {
        out.extend_from_slice(csv_field(s).as_bytes());
    }
}

/// The CSV header row.
pub fn csv_header() -> String {
    let mut h = COLUMNS.join(",");
    h.push_str("\r\n");
    h
}

/// One verdict as a CSV row.
pub fn write_csv(out: &mut Vec<u8>, v: &RowVerdict) {
    let o = |x: &Option<String>| x.clone().unwrap_or_default();
    let line = if v.line == 0 {
        String::new()
    } else {
        v.line.to_string()
    };
    let cells: [String; 19] = [
        v.id.clone(),
        line,
        v.status.name().into(),
        o(&v.computed_payment),
        o(&v.quoted_payment),
        o(&v.payment_difference),
        flag(v.payment_matches).into(),
        o(&v.apr_percent),
        o(&v.quoted_apr_percent),
        o(&v.apr_difference_points),
        o(&v.apr_tolerance_points),
        flag(v.apr_within_tolerance).into(),
        o(&v.finance_charge),
        o(&v.quoted_finance_charge),
        o(&v.finance_charge_difference),
        o(&v.finance_charge_tolerance),
        flag(v.finance_charge_within_tolerance).into(),
        v.reason.clone(),
        v.check_url.clone(),
    ];
    for (i, c) in cells.iter().enumerate() {
        if i > 0 {
            out.push(b',');
        }
        cell(out, c);
    }
    out.extend_from_slice(b"\r\n");
}

#[derive(Serialize)]
struct VerdictLine<'a> {
    id: Option<&'a str>,
    line: Option<usize>,
    status: &'static str,
    computed_payment: Option<&'a str>,
    quoted_payment: Option<&'a str>,
    payment_difference: Option<&'a str>,
    payment_matches: Option<bool>,
    apr_percent: Option<&'a str>,
    quoted_apr_percent: Option<&'a str>,
    apr_difference_points: Option<&'a str>,
    apr_tolerance_points: Option<&'a str>,
    apr_within_tolerance: Option<bool>,
    finance_charge: Option<&'a str>,
    quoted_finance_charge: Option<&'a str>,
    finance_charge_difference: Option<&'a str>,
    finance_charge_tolerance: Option<&'a str>,
    finance_charge_within_tolerance: Option<bool>,
    reason: &'a str,
    check_url: Option<&'a str>,
    caution: &'static str,
}

/// One verdict as an NDJSON line.
pub fn write_ndjson(out: &mut Vec<u8>, v: &RowVerdict) {
    fn s(x: &Option<String>) -> Option<&str> {
        x.as_deref()
    }
    let line = VerdictLine {
        id: (v.line != 0).then_some(v.id.as_str()),
        line: (v.line != 0).then_some(v.line),
        status: v.status.name(),
        computed_payment: s(&v.computed_payment),
        quoted_payment: s(&v.quoted_payment),
        payment_difference: s(&v.payment_difference),
        payment_matches: v.payment_matches,
        apr_percent: s(&v.apr_percent),
        quoted_apr_percent: s(&v.quoted_apr_percent),
        apr_difference_points: s(&v.apr_difference_points),
        apr_tolerance_points: s(&v.apr_tolerance_points),
        apr_within_tolerance: v.apr_within_tolerance,
        finance_charge: s(&v.finance_charge),
        quoted_finance_charge: s(&v.quoted_finance_charge),
        finance_charge_difference: s(&v.finance_charge_difference),
        finance_charge_tolerance: s(&v.finance_charge_tolerance),
        finance_charge_within_tolerance: v.finance_charge_within_tolerance,
        reason: &v.reason,
        check_url: (!v.check_url.is_empty()).then_some(v.check_url.as_str()),
        caution: crate::engine::schedule::CAUTION,
    };
    if super::emit::to_writer(out, &line).is_ok() {
        out.push(b'\n');
    }
}

/// The rows of `sheet` from `from` to `to` checked, written in `encoding`, with
/// the count of each verdict. Stops early when `stop` is set or the deadline
/// passes; returns how many rows it answered.
fn check_group(
    text: &[u8],
    sheet: &Sheet,
    range: std::ops::Range<usize>,
    encoding: Encoding,
    stop: &AtomicBool,
    deadline: std::time::Instant,
) -> (Vec<u8>, [u64; 3], usize) {
    let mut out = Vec::with_capacity(range.len() * 400);
    let mut counts = [0u64; 3];
    let mut answered = 0;
    for span in &sheet.rows[range] {
        if stop.load(Ordering::Relaxed) || std::time::Instant::now() > deadline {
            break;
        }
        let record = std::str::from_utf8(&text[span.start..span.end]).unwrap_or("");
        let v = check_row(&sheet.header, record, span.line);
        let slot = Status::ALL.iter().position(|s| *s == v.status).unwrap_or(2);
        counts[slot] += 1;
        match encoding {
            Encoding::Csv => write_csv(&mut out, &v),
            Encoding::Ndjson => write_ndjson(&mut out, &v),
        }
        answered += 1;
    }
    (out, counts, answered)
}

/// `POST /api/v1/loans/checks`
pub async fn checks_post(State(state): State<AppState>, req: Request) -> Response {
    match start(state, req).await {
        Ok(r) => r,
        Err(e) => e.into_response(),
    }
}

async fn start(state: AppState, req: Request) -> Result<Response, ApiError> {
    let content_type = req
        .headers()
        .get(header::CONTENT_TYPE)
        .and_then(|v| v.to_str().ok())
        .unwrap_or("")
        .to_string();
    let encoding = encoding(req.headers())?;
    let Ok(permit) = state.batches.clone().try_acquire_owned() else {
        return Err(ApiError::new(
            ProblemKind::Overloaded,
            "too many files and batches are being checked; try again in a moment",
        ));
    };
    let body = read_body(req, MAX_FILE_BYTES).await.map_err(|mut e| {
        if e.kind == ProblemKind::TooLarge {
            e.detail = format!(
                "a file may be at most {MAX_FILE_BYTES} bytes ({} MiB): split it and send the parts",
                MAX_FILE_BYTES / (1024 * 1024)
            );
        }
        e
    })?;
    let file = file_of(&content_type, body)?;
    let parsed = {
        let file = file.clone();
        tokio::task::spawn_blocking(move || read_sheet(&file))
            .await
            .map_err(|_| ApiError::new(ProblemKind::Internal, "the file could not be read"))??
    };
    let (sheet, _) = parsed;
    let sheet = Arc::new(sheet);
    let total = sheet.rows.len();
    let (tx, rx) = tokio::sync::mpsc::channel::<Bytes>(4);
    let stop = Arc::new(AtomicBool::new(false));
    let deadline = std::time::Instant::now() + std::time::Duration::from_secs(MAX_SECONDS);
    let metrics = state.metrics.clone();
    if encoding == Encoding::Csv {
        let _ = tx.try_send(Bytes::from(csv_header()));
    }
    tokio::spawn(async move {
        let _permit = permit;
        let mut next = 0usize;
        let mut running = VecDeque::new();
        let mut answered = 0usize;
        let mut fault = false;
        loop {
            while running.len() < IN_FLIGHT && next < total {
                let range = next..(next + GROUP).min(total);
                next = range.end;
                let (file, sheet, stop) = (file.clone(), sheet.clone(), stop.clone());
                running.push_back(tokio::task::spawn_blocking(move || {
                    check_group(&file, &sheet, range, encoding, &stop, deadline)
                }));
            }
            let Some(group) = running.pop_front() else {
                break;
            };
            match group.await {
                Ok((bytes, counts, n)) => {
                    metrics.add_pipeline_rows(counts);
                    answered += n;
                    if !bytes.is_empty() && tx.send(Bytes::from(bytes)).await.is_err() {
                        stop.store(true, Ordering::Relaxed); // the client went away
                        return;
                    }
                }
                Err(_) => {
                    fault = true;
                    stop.store(true, Ordering::Relaxed);
                }
            }
        }
        if answered < total {
            let why = if fault {
                "an internal fault stopped the checks"
            } else {
                "the file passed the time one file may compute"
            };
            let closing = RowVerdict::closing(format!(
                "the answer stops here: {answered} of {total} rows answered ({why}); send the rows after the last answered line again"
            ));
            let mut out = Vec::new();
            match encoding {
                Encoding::Csv => write_csv(&mut out, &closing),
                Encoding::Ndjson => write_ndjson(&mut out, &closing),
            }
            let _ = tx.send(Bytes::from(out)).await;
        }
    });
    let stream = futures_util::stream::unfold(rx, |mut rx| async move {
        rx.recv()
            .await
            .map(|b| (Ok::<Bytes, std::io::Error>(b), rx))
    });
    let mut response = Body::from_stream(stream).into_response();
    let h = response.headers_mut();
    h.insert(
        header::CONTENT_TYPE,
        HeaderValue::from_static(match encoding {
            Encoding::Csv => "text/csv; charset=utf-8; header=present",
            Encoding::Ndjson => "application/x-ndjson",
        }),
    );
    if encoding == Encoding::Csv {
        h.insert(
            header::CONTENT_DISPOSITION,
            HeaderValue::from_static("attachment; filename=\"verdicts.csv\""),
        );
    }
    h.insert(
        header::HeaderName::from_static(CAUTION_HEADER),
        HeaderValue::from_static(crate::engine::schedule::CAUTION),
    );
    h.insert(
        header::HeaderName::from_static(ROWS_HEADER),
        HeaderValue::from(total),
    );
    h.insert(header::CACHE_CONTROL, HeaderValue::from_static("no-store"));
    Ok(response)
}
