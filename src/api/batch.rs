//! Batch runs: NDJSON in, NDJSON out, line by line, in order.
//!
//! `POST /api/v1/batch` with `Content-Type: application/x-ndjson`, one job a line:
//! `{"id": …, "job": "loan_schedule" | "loan_check" | "apr" | "apy" | "savings_plan",
//! "request": {…}, "detail": "summary" | "full"}`. Each line is answered, in the
//! same order, by `{"id": …, "ok": true, "result": {…}}` or
//! `{"id": …, "ok": false, "problem": {…}}`; a bad line fails alone. Pointers in a
//! line's problem are relative to its `request` object (or to the line itself for
//! `id`, `job` and `detail`).
//!
//! The body is read as a stream and the answer written as one: groups of lines
//! are answered in two parts on blocking threads while the next lines are read,
//! and the parts go out in order. Memory stays bounded by the parts in flight
//! ([`IN_FLIGHT`]) and the channel to the client, not by the number of lines.

use axum::body::{Body, Bytes};
use axum::extract::{Request, State};
use axum::http::{header, HeaderValue};
use axum::response::{IntoResponse, Response};
use std::collections::VecDeque;

use futures_util::{FutureExt, StreamExt};
use serde::Serialize;

use crate::input::fields::{Fields, Source};
use crate::input::json::{self, Json};
use crate::input::problem::{ApiError, FieldError, ProblemKind};
use crate::state::AppState;

/// The most lines one batch may hold.
pub const MAX_LINES: usize = 100_000;
/// The longest line, in bytes.
pub const MAX_LINE_BYTES: usize = 64 * 1024;
/// Lines answered together at most, once they have arrived.
const GROUP: usize = 512;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Detail {
    Summary,
    Full,
}

/// Appends `v` as JSON to `out` (left as it was on an error).
fn write<T: Serialize>(out: &mut Vec<u8>, v: &T) -> Result<(), ApiError> {
    super::emit::to_writer(out, v)
        .map_err(|_| ApiError::new(ProblemKind::Internal, "the answer could not be written"))
}

/// The summary and the notes of a full answer, in that order.
#[derive(Serialize)]
struct SummaryOnly<'a, S: Serialize> {
    summary: &'a S,
    notes: &'a [String],
}

fn members(request: &Json) -> Result<&[(String, Json)], ApiError> {
    match request {
        Json::Object(m) => Ok(m),
        other => Err(ApiError::fields(vec![FieldError::new(
            "/request".into(),
            format!("must be an object, not {}", other.kind()),
        )])),
    }
}

/// Runs one job and appends its result as JSON to `out` (nothing on an error).
fn run_job(job: &str, request: &Json, detail: Detail, out: &mut Vec<u8>) -> Result<(), ApiError> {
    let fields = |m| {
        Fields::new(Source::Json {
            members: m,
            pointer: "",
        })
    };
    match job {
        "loan_schedule" => {
            let r = crate::input::loan::schedule_request_from(fields(members(request)?))?;
            let s = crate::engine::schedule::schedule_with(&r.terms, &r.options)
                .map_err(|e| r.problem(e, "/"))?;
            if detail == Detail::Summary {
                let dto = super::loans::LoanScheduleDto::build(&s, false);
                write(
                    out,
                    &SummaryOnly {
                        summary: &dto.summary,
                        notes: &dto.notes,
                    },
                )
            } else {
                out.extend_from_slice(&super::loans::LoanScheduleDto::answer_json(&s));
                Ok(())
            }
        }
        "loan_check" => {
            // Every figure and note stays in a summary; the form-rounding table is in `full`.
            let answer = crate::answer::check::check_answer_with(
                fields(members(request)?),
                detail == Detail::Full,
            )?;
            write(out, &answer)
        }
        "apr" => write(
            out,
            &super::apr::answer(&crate::input::apr::read_json(request)?)?,
        ),
        "apy" => write(
            out,
            &super::apy::answer(
                &crate::input::apy::read_apy(fields(members(request)?))?,
                "/",
            )?,
        ),
        "savings_plan" => {
            let terms = crate::input::savings::savings_terms_from(fields(members(request)?))?;
            let p = crate::engine::savings::plan(&terms).map_err(|e| {
                crate::answer::savings::overflow_named(ApiError::from_engine(e, "/"), "/")
            })?;
            let dto = crate::answer::savings::SavingsPlanDto::from_plan(&p);
            if detail == Detail::Summary {
                write(
                    out,
                    &SummaryOnly {
                        summary: &dto.summary,
                        notes: &dto.notes,
                    },
                )
            } else {
                write(out, &dto)
            }
        }
        _ => unreachable!("the job name is checked before"),
    }
}

const JOBS: [&str; 5] = ["loan_schedule", "loan_check", "apr", "apy", "savings_plan"];

/// Writes `j` as JSON with each number as its own text, so an id is echoed
/// exactly as it was sent (20 digits, 1e400 and all).
fn write_json(out: &mut Vec<u8>, j: &Json) {
    match j {
        Json::Null => out.extend_from_slice(b"null"),
        Json::Bool(b) => out.extend_from_slice(if *b { b"true" } else { b"false" }),
        Json::Number(n) => out.extend_from_slice(n.as_bytes()),
        Json::String(s) => write_string(out, s),
        Json::Array(items) => {
            out.push(b'[');
            for (i, item) in items.iter().enumerate() {
                if i > 0 {
                    out.push(b',');
                }
                write_json(out, item);
            }
            out.push(b']');
        }
        Json::Object(members) => {
            out.push(b'{');
            for (i, (k, v)) in members.iter().enumerate() {
                if i > 0 {
                    out.push(b',');
                }
                write_string(out, k);
                out.push(b':');
                write_json(out, v);
            }
            out.push(b'}');
        }
    }
}

fn write_string(out: &mut Vec<u8>, s: &str) {
    if super::emit::to_writer(out, s).is_err() {
        out.extend_from_slice(b"null");
    }
}

/// Part of a group of lines, answered on a blocking thread that hands its answers
/// on in chunks through a channel of [`PART_CHUNKS`]: a part whose answers are not
/// yet wanted (an earlier part is still being sent, or the client reads slowly)
/// waits with at most that many chunks, so a batch holds its work, not its memory.
struct InFlight {
    /// Chunks of answers with the number of lines each completes.
    chunks: tokio::sync::mpsc::Receiver<(Vec<u8>, usize)>,
    done: tokio::task::JoinHandle<()>,
    /// The part's line numbers, for a problem line each should the part fail.
    numbers: Vec<usize>,
    /// Lines whose answers were sent on.
    sent: usize,
}

/// Parts of answers being computed at most, beyond those already finished: with
/// two parts a group, two groups' worth. Bounds the memory a batch holds.
const IN_FLIGHT: usize = 4;

/// A part's answers are handed on in chunks of about this many bytes (a chunk
/// holds whole lines: one line's answer may be longer, up to an answer's size).
const CHUNK_BYTES: usize = 64 * 1024;

/// Chunks a part may have waiting before its thread waits for them to go out.
const PART_CHUNKS: usize = 2;

/// The most bytes of answers one batch gives: later lines get a problem line.
pub const MAX_ANSWER_BYTES: usize = 512 * 1024 * 1024;

/// The longest a batch may compute: later lines get a problem line.
pub const MAX_BATCH_SECS: u64 = 300;

/// What every part of one batch shares: the bytes answered so far and the
/// deadline, against the batch's budget.
#[derive(Clone)]
struct Budget {
    answered: std::sync::Arc<std::sync::atomic::AtomicUsize>,
    deadline: std::time::Instant,
}

impl Budget {
    fn new() -> Self {
        Self {
            answered: std::sync::Arc::new(std::sync::atomic::AtomicUsize::new(0)),
            deadline: std::time::Instant::now() + std::time::Duration::from_secs(MAX_BATCH_SECS),
        }
    }

    /// The problem of a line past the budget, if it is.
    fn spent(&self, number: usize) -> Option<ApiError> {
        use std::sync::atomic::Ordering;
        if self.answered.load(Ordering::Relaxed) > MAX_ANSWER_BYTES {
            return Some(ApiError::new(
                ProblemKind::TooLarge,
                format!(
                    "line {number} is not computed: the batch's answers passed {} MiB, the most one batch gives; send the rest as another batch",
                    MAX_ANSWER_BYTES / (1024 * 1024)
                ),
            ));
        }
        if std::time::Instant::now() > self.deadline {
            return Some(ApiError::new(
                ProblemKind::Timeout,
                format!(
                    "line {number} is not computed: the batch has computed for {MAX_BATCH_SECS} s, the most one batch may; send the rest as another batch"
                ),
            ));
        }
        None
    }
}

/// Starts answering the lines `jobs` (start, end, line number) of `text`: in two
/// parts on blocking threads (one for a handful of lines), so a batch keeps both
/// cores busy while its next lines are read and its earlier answers written.
fn dispatch(
    text: &[u8],
    jobs: &[(usize, usize, usize)],
    parts: &mut VecDeque<InFlight>,
    budget: &Budget,
) {
    if jobs.is_empty() {
        return;
    }
    let halves = if jobs.len() < 8 { 1 } else { 2 };
    for chunk in jobs.chunks(jobs.len().div_ceil(halves)) {
        let from = chunk[0].0;
        let part_text = text[from..chunk[chunk.len() - 1].1].to_vec();
        let part_jobs: Vec<(usize, usize, usize)> = chunk
            .iter()
            .map(|(f, t, n)| (f - from, t - from, *n))
            .collect();
        let numbers = chunk.iter().map(|j| j.2).collect();
        let (out, chunks) = tokio::sync::mpsc::channel(PART_CHUNKS);
        let budget = budget.clone();
        let done = tokio::task::spawn_blocking(move || {
            let mut buffer = Vec::with_capacity(CHUNK_BYTES + 4096);
            let mut lines = 0usize;
            for (f, t, n) in &part_jobs {
                let before = buffer.len();
                match budget.spent(*n) {
                    Some(problem) => problem_line(&mut buffer, &part_text[*f..*t], &problem),
                    None => answer_line_into(&mut buffer, &part_text[*f..*t], *n),
                }
                budget
                    .answered
                    .fetch_add(buffer.len() - before, std::sync::atomic::Ordering::Relaxed);
                lines += 1;
                if buffer.len() >= CHUNK_BYTES {
                    let full =
                        std::mem::replace(&mut buffer, Vec::with_capacity(CHUNK_BYTES + 4096));
                    if out.blocking_send((full, lines)).is_err() {
                        return; // the batch has ended (the client went away)
                    }
                    lines = 0;
                }
            }
            if lines > 0 {
                let _ = out.blocking_send((buffer, lines));
            }
        });
        parts.push_back(InFlight {
            chunks,
            done,
            numbers,
            sent: 0,
        });
    }
}

/// The answer of a line not computed: its id when it can be read, and `problem`.
fn problem_line(out: &mut Vec<u8>, line: &[u8], problem: &ApiError) {
    out.extend_from_slice(b"{\"id\":");
    match json::parse(line).ok().as_ref().and_then(|v| v.get("id")) {
        Some(id) => write_json(out, id),
        None => out.extend_from_slice(b"null"),
    }
    out.extend_from_slice(b",\"ok\":false,\"problem\":");
    if super::emit::to_writer(out, &problem.problem()).is_err() {
        out.extend_from_slice(b"{}");
    }
    out.extend_from_slice(b"}\n");
}

/// Sends the front part's chunks that are ready; with more than [`IN_FLIGHT`]
/// parts, or `all`, waits for parts to finish. False once the client has gone.
async fn forward(
    tx: &tokio::sync::mpsc::Sender<Bytes>,
    parts: &mut VecDeque<InFlight>,
    all: bool,
) -> bool {
    use tokio::sync::mpsc::error::TryRecvError;
    loop {
        let wait = all || parts.len() > IN_FLIGHT;
        let Some(front) = parts.front_mut() else {
            return true;
        };
        let next = if wait {
            front.chunks.recv().await.ok_or(TryRecvError::Disconnected)
        } else {
            front.chunks.try_recv()
        };
        match next {
            Ok((chunk, lines)) => {
                front.sent += lines;
                if tx.send(Bytes::from(chunk)).await.is_err() {
                    return false;
                }
            }
            Err(TryRecvError::Empty) => return true,
            Err(TryRecvError::Disconnected) => {
                let Some(part) = parts.pop_front() else {
                    return true;
                };
                if let Some(failed) = failed_lines(part).await {
                    if tx.send(Bytes::from(failed)).await.is_err() {
                        return false;
                    }
                }
            }
        }
    }
}

/// A problem line for each line of a part whose thread failed before answering
/// it; `None` when the part answered every line.
async fn failed_lines(part: InFlight) -> Option<Vec<u8>> {
    if part.done.await.is_ok() && part.sent == part.numbers.len() {
        return None;
    }
    let mut out = Vec::new();
    for n in &part.numbers[part.sent.min(part.numbers.len())..] {
        let p = ApiError::new(
            ProblemKind::Internal,
            format!("line {n} could not be answered"),
        );
        out.extend_from_slice(b"{\"id\":null,\"ok\":false,\"problem\":");
        if super::emit::to_writer(&mut out, &p.problem()).is_err() {
            out.extend_from_slice(b"{}");
        }
        out.extend_from_slice(b"}\n");
    }
    Some(out)
}

/// Answers one line (never fails: a failure is the line's problem).
pub fn answer_line(line: &[u8], number: usize) -> Vec<u8> {
    let mut bytes = Vec::with_capacity(2560);
    answer_line_into(&mut bytes, line, number);
    bytes
}

/// [`answer_line`], appended to `bytes`.
pub fn answer_line_into(bytes: &mut Vec<u8>, line: &[u8], number: usize) {
    bytes.extend_from_slice(b"{\"id\":");
    // A line longer than the limit fails alone: whole (read in one piece), or
    // marked by an empty range when it was dropped as it arrived.
    if line.len() > MAX_LINE_BYTES || line.is_empty() {
        bytes.extend_from_slice(b"null,\"ok\":false,\"problem\":");
        let p = ApiError::new(
            ProblemKind::TooLarge,
            format!("line {number} is longer than {MAX_LINE_BYTES} bytes"),
        );
        if super::emit::to_writer(bytes, &p.problem()).is_err() {
            bytes.extend_from_slice(b"{}");
        }
        bytes.extend_from_slice(b"}\n");
        return;
    }
    let outcome = match json::parse(line) {
        Err(e) => {
            bytes.extend_from_slice(b"null");
            Err(ApiError::malformed_json(&e, format!("line {number}: {e}")))
        }
        Ok(v) => {
            match v.get("id") {
                Some(id) => write_json(bytes, id),
                None => bytes.extend_from_slice(b"null"),
            }
            let after_id = bytes.len();
            bytes.extend_from_slice(b",\"ok\":true,\"result\":");
            let outcome = answer_parsed(&v, bytes);
            if outcome.is_err() {
                bytes.truncate(after_id);
            }
            outcome
        }
    };
    if let Err(problem) = outcome {
        bytes.extend_from_slice(b",\"ok\":false,\"problem\":");
        if super::emit::to_writer(bytes, &problem.problem()).is_err() {
            bytes.extend_from_slice(b"{}");
        }
    }
    bytes.extend_from_slice(b"}\n");
}

fn answer_parsed(v: &Json, out: &mut Vec<u8>) -> Result<(), ApiError> {
    let Json::Object(m) = v else {
        return Err(ApiError::fields(vec![FieldError::new(
            String::new(),
            format!("each line must be a JSON object, not {}", v.kind()),
        )]));
    };
    let mut errors = Vec::new();
    if v.get("id").is_none() {
        errors.push(FieldError::new(
            "/id".into(),
            "is required: any JSON value, echoed in the line's answer".into(),
        ));
    }
    for (k, _) in m {
        if !["id", "job", "request", "detail"].contains(&k.as_str()) {
            errors.push(FieldError::unknown(format!(
                "/{}",
                crate::input::json::escape_pointer(k)
            )));
        }
    }
    let job = match v.get("job") {
        Some(Json::String(s)) if JOBS.contains(&s.as_str()) => Some(s.as_str()),
        _ => {
            errors.push(FieldError::new(
                "/job".into(),
                format!("must be one of: {}", JOBS.join(", ")),
            ));
            None
        }
    };
    let detail = match v.get("detail") {
        None => Detail::Summary,
        Some(Json::String(s)) if s == "summary" => Detail::Summary,
        Some(Json::String(s)) if s == "full" => Detail::Full,
        Some(_) => {
            errors.push(FieldError::new(
                "/detail".into(),
                "must be summary or full".into(),
            ));
            Detail::Summary
        }
    };
    let request = v.get("request");
    if request.is_none() {
        errors.push(FieldError::new("/request".into(), "is required".into()));
    }
    if !errors.is_empty() {
        return Err(ApiError::fields(errors));
    }
    match (job, request) {
        (Some(job), Some(request)) => run_job(job, request, detail, out),
        _ => unreachable!("errors were returned above"),
    }
}

/// `POST /api/v1/batch`
pub async fn batch_post(State(state): State<AppState>, req: Request) -> Response {
    let content_type = req
        .headers()
        .get(header::CONTENT_TYPE)
        .and_then(|v| v.to_str().ok())
        .unwrap_or("");
    let essence = content_type
        .split(';')
        .next()
        .unwrap_or("")
        .trim()
        .to_ascii_lowercase();
    if essence != "application/x-ndjson" {
        return ApiError::new(
            ProblemKind::UnsupportedMediaType,
            "send the batch as application/x-ndjson, one JSON job a line",
        )
        .into_response();
    }
    let Ok(permit) = state.batches.clone().try_acquire_owned() else {
        return ApiError::new(
            ProblemKind::Overloaded,
            "too many batches are running; try again in a moment",
        )
        .into_response();
    };
    // Chunks of about CHUNK_BYTES on their way to the client: with the parts'
    // own chunks, what a batch holds in memory is bounded whatever it asks.
    let (tx, rx) = tokio::sync::mpsc::channel::<Bytes>(8);
    let budget = Budget::new();
    let metrics = state.metrics.clone();
    let idle_timeout = state.config.request_timeout;
    let mut body = req.into_body().into_data_stream();
    // Reading the first chunk before answering lets the server send
    // "100 Continue" to a client that waits for it (Expect: 100-continue).
    let first = tokio::time::timeout(idle_timeout, body.next()).await.ok();
    tokio::spawn(async move {
        let _permit = permit;
        let mut pending: Vec<u8> = Vec::new();
        // pending[..start] holds whole lines not yet answered (`jobs`: start, end,
        // number); pending[start..scanned] is a line still incomplete.
        let (mut start, mut scanned) = (0usize, 0usize);
        let mut jobs: Vec<(usize, usize, usize)> = Vec::new();
        let mut lines = 0usize;
        let mut finished = false;
        // True while the rest of a line already answered as too long is
        // arriving: its bytes are dropped up to its newline.
        let mut skipping = false;
        let mut over = false;
        let mut stalled = first.is_none();
        // The body broke off: a malformed chunk, or a connection closed early.
        let mut broken = false;
        let mut early = first;
        let mut parts: VecDeque<InFlight> = VecDeque::new();
        'reading: while !stalled {
            // A client that stalls longer than the request timeout between two
            // chunks loses the rest of its batch (and frees the batch permit).
            // While it waits for the client, the task sends each part of the
            // answers as it is done.
            let item = match early.take() {
                Some(item) => item,
                None => {
                    let deadline = tokio::time::Instant::now() + idle_timeout;
                    loop {
                        let next = tokio::time::timeout_at(deadline, body.next());
                        let Some(front) = parts.front_mut() else {
                            match next.await {
                                Ok(item) => break item,
                                Err(_) => {
                                    stalled = true;
                                    break 'reading;
                                }
                            }
                        };
                        tokio::select! {
                            biased;
                            chunk = front.chunks.recv() => match chunk {
                                Some((chunk, lines)) => {
                                    front.sent += lines;
                                    if tx.send(Bytes::from(chunk)).await.is_err() {
                                        return; // the client went away
                                    }
                                }
                                None => {
                                    let Some(part) = parts.pop_front() else { continue };
                                    if let Some(failed) = failed_lines(part).await {
                                        if tx.send(Bytes::from(failed)).await.is_err() {
                                            return;
                                        }
                                    }
                                }
                            },
                            item = next => match item {
                                Ok(item) => break item,
                                Err(_) => {
                                    stalled = true;
                                    break 'reading;
                                }
                            },
                        }
                    }
                }
            };
            match item {
                Some(Ok(chunk)) => pending.extend_from_slice(&chunk),
                Some(Err(_)) => {
                    broken = true;
                    break;
                }
                None => finished = true,
            }
            if skipping {
                match pending[start..].iter().position(|b| *b == b'\n') {
                    Some(p) => {
                        pending.drain(start..=start + p);
                        skipping = false;
                    }
                    None => pending.truncate(start),
                }
                scanned = start;
            }
            while let Some(pos) = pending[scanned..]
                .iter()
                .position(|b| *b == b'\n')
                .map(|p| p + scanned)
            {
                let from = start;
                start = pos + 1;
                scanned = start;
                if pending[from..pos].iter().all(|b| b.is_ascii_whitespace()) {
                    continue;
                }
                lines += 1;
                if lines > MAX_LINES {
                    over = true;
                    break;
                }
                jobs.push((from, pos, lines));
            }
            scanned = pending.len();
            if finished && !over && !pending[start..].iter().all(|b| b.is_ascii_whitespace()) {
                lines += 1;
                if lines > MAX_LINES {
                    over = true;
                } else {
                    jobs.push((start, pending.len(), lines));
                    start = pending.len();
                }
            }
            if !over && !skipping && pending.len() - start > MAX_LINE_BYTES {
                // A line past the limit still arriving fails alone, as a whole
                // one does (`answer_line_into`): it is answered as too long (an
                // empty range marks it) and its bytes are dropped as they come,
                // so no line is held whole however long it is.
                lines += 1;
                if lines > MAX_LINES {
                    over = true;
                } else {
                    jobs.push((start, start, lines));
                    pending.truncate(start);
                    scanned = start;
                    skipping = true;
                }
            }
            // Lines already here are answered together; a slow client still gets
            // each answer as soon as its line is in (the wait above sends it).
            if !(finished || over) && jobs.len() < GROUP {
                if let Some(item) = body.next().now_or_never() {
                    early = Some(item);
                    continue;
                }
            }
            dispatch(&pending[..start], &jobs, &mut parts, &budget);
            tracing::debug!(lines = jobs.len(), "batch group started");
            metrics.add_batch_lines(jobs.len() as u64);
            jobs.clear();
            pending.drain(..start);
            scanned -= start;
            start = 0;
            // The answers go out in order as they are ready; with too many parts
            // running, the oldest is waited for.
            if !forward(&tx, &mut parts, false).await {
                return;
            }
            if finished || over {
                break;
            }
        }
        dispatch(&pending[..start], &jobs, &mut parts, &budget);
        metrics.add_batch_lines(jobs.len() as u64);
        if !forward(&tx, &mut parts, true).await {
            return;
        }
        let closing = if broken {
            Some((
                ProblemKind::MalformedJson,
                format!(
                    "the body broke off after line {lines} (a malformed chunk, or the connection closed early): the batch stops here, and the lines after it were not read"
                ),
            ))
        } else if stalled {
            Some((
                ProblemKind::BodyTimeout,
                format!(
                    "no data for {} s after line {lines}: the batch stops here",
                    idle_timeout.as_secs_f64()
                ),
            ))
        } else if over {
            Some((
                ProblemKind::TooLarge,
                format!("a batch may hold at most {MAX_LINES} lines: the batch stops here"),
            ))
        } else {
            None
        };
        if let Some((kind, message)) = closing {
            let p = ApiError::new(kind, message);
            let mut v = serde_json::to_vec(
                &serde_json::json!({"id": null, "ok": false, "problem": p.problem()}),
            )
            .unwrap_or_default();
            v.push(b'\n');
            let _ = tx.send(Bytes::from(v)).await;
        }
    });
    let stream = futures_util::stream::unfold(rx, |mut rx| async move {
        rx.recv()
            .await
            .map(|b| (Ok::<Bytes, std::io::Error>(b), rx))
    });
    let mut response = Body::from_stream(stream).into_response();
    response.headers_mut().insert(
        header::CONTENT_TYPE,
        HeaderValue::from_static("application/x-ndjson"),
    );
    response
}

#[cfg(test)]
mod budget_tests {
    use super::*;

    #[test]
    fn lines_past_the_byte_budget_or_the_time_budget_are_refused_by_name() {
        let budget = Budget::new();
        assert!(budget.spent(1).is_none());
        budget
            .answered
            .store(MAX_ANSWER_BYTES + 1, std::sync::atomic::Ordering::Relaxed);
        let p = budget.spent(7).expect("past the byte budget");
        assert_eq!(p.kind, ProblemKind::TooLarge);
        assert!(
            p.detail.contains("line 7") && p.detail.contains("512 MiB"),
            "{}",
            p.detail
        );
        let late = Budget {
            answered: Default::default(),
            deadline: std::time::Instant::now() - std::time::Duration::from_secs(1),
        };
        let p = late.spent(9).expect("past the time budget");
        assert_eq!(p.kind, ProblemKind::Timeout);
        assert!(p.detail.contains("300 s"), "{}", p.detail);
        // The line keeps its id in the answer.
        let mut out = Vec::new();
        problem_line(&mut out, br#"{"id":"q-9","job":"apy"}"#, &p);
        let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
        assert_eq!(v["id"], "q-9");
        assert_eq!(v["ok"], false);
    }
}
