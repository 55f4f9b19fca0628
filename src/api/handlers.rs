//! HTTP handlers and extractors of the API: each one reads, calls the engine, writes.

use axum::body::Bytes;
use axum::extract::{FromRequest, RawQuery, Request, State};
use axum::http::{header, HeaderMap, HeaderValue};
use axum::response::{IntoResponse, Response};
use axum::{Extension, Json as JsonResponse};
use serde::Serialize;

use super::csv::schedule_csv;
use super::loans::LoanScheduleDto;
use super::recurrence;
use crate::engine::plan::{PlanOptions, RateChangeKeeps};
use crate::engine::schedule::{schedule_with, LoanTerm};
use crate::input::fields::{Fields, Source};
use crate::input::http::{query_pairs, wants_csv};
use crate::input::json::{self, Json};
use crate::input::loan::schedule_request_from;
use crate::input::problem::{ApiError, FieldError, ProblemKind};
use crate::state::{AppState, InFlight};

/// A request body that is a JSON object, read within the size limit.
pub struct JsonBody(pub Json);

impl FromRequest<AppState> for JsonBody {
    type Rejection = ApiError;

    async fn from_request(req: Request, state: &AppState) -> Result<Self, Self::Rejection> {
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
        if essence != "application/json"
            && !(essence.starts_with("application/") && essence.ends_with("+json"))
        {
            return Err(ApiError::new(
                ProblemKind::UnsupportedMediaType,
                format!(
                    "send the body as application/json (it came as \"{}\")",
                    content_type.chars().take(60).collect::<String>()
                ),
            ));
        }
        let limit = state.config.max_body_bytes;
        let bytes = read_body(req, limit).await?;
        parse_object(&bytes).map(JsonBody)
    }
}

/// The most bytes past the limit read and thrown away before a 413 is answered.
pub const DRAIN_BYTES: usize = 16 * 1024 * 1024;
/// The longest time spent throwing away a body past the limit.
pub const DRAIN_TIME: std::time::Duration = std::time::Duration::from_secs(5);

/// Reads a body of at most `limit` bytes.
///
/// A body past the limit is answered 413. Many clients write the whole body before
/// they read any answer (they do not send `Expect: 100-continue`); closing the
/// connection under them would leave them a broken pipe instead of the problem.
/// So the rest is read and thrown away, up to [`DRAIN_BYTES`] and [`DRAIN_TIME`],
/// before the 413 goes out with `Connection: close`. A client that asked for
/// `100-continue`, or whose `Content-Length` is beyond what would be drained, is
/// answered at once.
///
/// # Errors
/// 413 past the limit; 400 for a body that is not valid HTTP framing (a bad chunk).
pub async fn read_body(req: Request, limit: usize) -> Result<Bytes, ApiError> {
    use futures_util::StreamExt;
    let waits_for_continue = req
        .headers()
        .get(header::EXPECT)
        .is_some_and(|v| v.as_bytes().eq_ignore_ascii_case(b"100-continue"));
    let declared = req
        .headers()
        .get(header::CONTENT_LENGTH)
        .and_then(|v| v.to_str().ok())
        .and_then(|v| v.parse::<u64>().ok());
    let too_large = || {
        ApiError::new(
            ProblemKind::TooLarge,
            format!("the body may be at most {limit} bytes"),
        )
    };
    let malformed = || {
        ApiError::new(
            ProblemKind::MalformedJson,
            "the body could not be read: its HTTP framing is malformed (a bad chunk size or an early end)",
        )
    };
    if declared.is_some_and(|n| n > limit as u64)
        && (waits_for_continue || declared.is_some_and(|n| n > (limit + DRAIN_BYTES) as u64))
    {
        return Err(too_large());
    }
    let mut stream = req.into_body().into_data_stream();
    let mut body = Vec::new();
    while let Some(chunk) = stream.next().await {
        let chunk = chunk.map_err(|_| malformed())?;
        if body.len() + chunk.len() > limit {
            if !waits_for_continue {
                let mut drained = body.len() + chunk.len();
                let _ = tokio::time::timeout(DRAIN_TIME, async {
                    while let Some(Ok(c)) = stream.next().await {
                        drained += c.len();
                        if drained > limit + DRAIN_BYTES {
                            break;
                        }
                    }
                })
                .await;
            }
            return Err(too_large());
        }
        body.extend_from_slice(&chunk);
    }
    Ok(Bytes::from(body))
}

/// Parses a body that must be a JSON object.
///
/// # Errors
/// Malformed JSON (400), or a value that is not an object (422).
pub fn parse_object(bytes: &Bytes) -> Result<Json, ApiError> {
    let v = json::parse(bytes).map_err(|e| ApiError::malformed_json(&e, e.to_string()))?;
    if !matches!(v, Json::Object(_)) {
        return Err(ApiError::fields(vec![FieldError::new(
            String::new(),
            format!("the body must be a JSON object, not {}", v.kind()),
        )]));
    }
    Ok(v)
}

/// A JSON answer with the right media type.
pub fn json_answer<T: Serialize>(value: &T) -> Response {
    // Room for a 360-row schedule at once: growing a small buffer copies it each time.
    let mut body = Vec::with_capacity(64 * 1024);
    match super::emit::to_writer(&mut body, value) {
        Ok(()) => (
            [(
                header::CONTENT_TYPE,
                HeaderValue::from_static("application/json"),
            )],
            body,
        )
            .into_response(),
        Err(_) => JsonResponse(value).into_response(),
    }
}

/// JSON already written, with the right media type.
pub fn json_bytes_answer(body: Vec<u8>) -> Response {
    (
        [(
            header::CONTENT_TYPE,
            HeaderValue::from_static("application/json"),
        )],
        body,
    )
        .into_response()
}

/// The header that carries the caution with a CSV answer: a line of text in the
/// file itself would break the table a spreadsheet imports.
pub const CAUTION_HEADER: &str = "residue-caution";

/// A CSV answer (RFC 4180), offered as a download with a file name, with the
/// caution in the [`CAUTION_HEADER`].
pub fn csv_answer(body: String, filename: &str) -> Response {
    let mut r = body.into_response();
    r.headers_mut().insert(
        header::HeaderName::from_static(CAUTION_HEADER),
        HeaderValue::from_static(crate::engine::schedule::CAUTION),
    );
    r.headers_mut().insert(
        header::CONTENT_TYPE,
        HeaderValue::from_static("text/csv; charset=utf-8; header=present"),
    );
    if let Ok(v) = HeaderValue::from_str(&format!("inline; filename=\"{filename}\"")) {
        r.headers_mut().insert(header::CONTENT_DISPOSITION, v);
    }
    r
}

/// The most payments a schedule may have to be computed on the runtime's own
/// thread (a 360-payment answer takes about 0.1 ms); longer or unknown terms
/// (a term solved from a payment) go to a blocking thread.
pub const INLINE_PAYMENTS: u32 = 1_200;

/// The most extra payments and rate changes together of a schedule computed on
/// the runtime's own thread (each is looked up at every payment).
pub const INLINE_CHANGES: usize = 16;

/// True when the schedule is short enough to compute where its request is read:
/// a known term of at most [`INLINE_PAYMENTS`], at most [`INLINE_CHANGES`]
/// extras and rate changes, and no rate change that keeps the payment (the term
/// would then follow from the payment, up to the longest schedule).
fn short_schedule(terms: &crate::engine::schedule::LoanTerms, o: &PlanOptions) -> bool {
    matches!(terms.term, LoanTerm::Payments(n) if n <= INLINE_PAYMENTS)
        && o.extras.len() + o.rate_changes.len() <= INLINE_CHANGES
        && (o.rate_changes.is_empty() || o.rate_change_keeps == RateChangeKeeps::Term)
}

/// Runs `job` here when `short`, else on a blocking thread that holds a share of
/// the request's in-flight permit (`held`) until the job ends, even when the
/// request itself has timed out and gone.
///
/// # Errors
/// The job's own, or an internal problem if its thread panicked.
pub async fn offload<T: Send + 'static>(
    short: bool,
    held: Option<InFlight>,
    job: impl FnOnce() -> Result<T, ApiError> + Send + 'static,
) -> Result<T, ApiError> {
    if short {
        return job();
    }
    tokio::task::spawn_blocking(move || {
        let _held = held;
        job()
    })
    .await
    .map_err(|_| ApiError::new(ProblemKind::Internal, "the request could not be computed"))?
}

async fn loan_answer(
    fields: Fields<'_>,
    csv: bool,
    held: Option<InFlight>,
) -> Result<Response, ApiError> {
    let prefix = fields.pointer("");
    let request = schedule_request_from(fields)?;
    let short = short_schedule(&request.terms, &request.options);
    let weight = crate::weight::weigh(crate::engine::plan::expected_work(
        &request.terms,
        &request.options,
    ))?;
    offload(short, held, move || {
        let _weight = weight;
        let s = schedule_with(&request.terms, &request.options)
            .map_err(|e| request.problem(e, &prefix))?;
        Ok(if csv {
            csv_answer(schedule_csv(&s), "schedule.csv")
        } else {
            json_bytes_answer(LoanScheduleDto::answer_json(&s))
        })
    })
    .await
}

/// `POST /api/v1/loans/schedule`
pub async fn schedule_post(
    headers: HeaderMap,
    held: Option<Extension<InFlight>>,
    JsonBody(body): JsonBody,
) -> Result<Response, ApiError> {
    let Json::Object(members) = &body else {
        unreachable!("parse_object checks")
    };
    loan_answer(
        Fields::new(Source::Json {
            members,
            pointer: "",
        }),
        wants_csv(&headers),
        held.map(|Extension(h)| h),
    )
    .await
}

/// `GET /api/v1/loans/schedule?…`
pub async fn schedule_get(
    headers: HeaderMap,
    held: Option<Extension<InFlight>>,
    RawQuery(q): RawQuery,
) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    let held = held.map(|Extension(h)| h);
    loan_answer(
        Fields::new(Source::Query(&pairs)),
        wants_csv(&headers),
        held,
    )
    .await
}

/// `GET /api/v1/loans/schedule.csv?…`
pub async fn schedule_get_csv(
    held: Option<Extension<InFlight>>,
    RawQuery(q): RawQuery,
) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    let held = held.map(|Extension(h)| h);
    loan_answer(Fields::new(Source::Query(&pairs)), true, held).await
}

fn compare_answer(c: &crate::answer::compare::Comparison, csv: bool) -> Response {
    let dto = crate::answer::compare::CompareDto::from_comparison(c);
    if csv {
        csv_answer(super::csv::compare_csv(&dto), "comparison.csv")
    } else {
        json_answer(&dto)
    }
}

/// `POST /api/v1/loans/compare`
pub async fn compare_post(
    headers: HeaderMap,
    JsonBody(body): JsonBody,
) -> Result<Response, ApiError> {
    Ok(compare_answer(
        &crate::answer::compare::from_json(&body)?,
        wants_csv(&headers),
    ))
}

/// `GET /api/v1/loans/compare?…`
pub async fn compare_get(headers: HeaderMap, RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    Ok(compare_answer(
        &crate::answer::compare::from_query(&pairs)?,
        wants_csv(&headers),
    ))
}

/// `GET /api/v1/loans/compare.csv?…`
pub async fn compare_get_csv(RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    Ok(compare_answer(
        &crate::answer::compare::from_query(&pairs)?,
        true,
    ))
}

/// `POST /api/v1/recurrence`
pub async fn recurrence_post(JsonBody(body): JsonBody) -> Result<Response, ApiError> {
    let (r, ks) = crate::input::recurrence::read_recurrence(&body)?;
    Ok(json_answer(&recurrence::answer(&r, &ks)?))
}

/// `GET /healthz`: the process is alive (200 until it exits).
pub async fn healthz(State(_): State<AppState>) -> Response {
    json_answer(&serde_json::json!({"status": "ok"}))
}

/// `GET /readyz`: 200 while the server takes new work; 503 from the moment a
/// shutdown signal arrives, so that load balancers move traffic away while the
/// requests in flight finish.
pub async fn readyz(State(state): State<AppState>) -> Response {
    if state.ready.load(std::sync::atomic::Ordering::Acquire) {
        json_answer(&serde_json::json!({"status": "ready"}))
    } else {
        let mut r = json_answer(&serde_json::json!({"status": "shutting down"}));
        *r.status_mut() = axum::http::StatusCode::SERVICE_UNAVAILABLE;
        r
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::plan::{Extra, RateChange};
    use crate::engine::rate::AnnualRate;
    use crate::engine::schedule::LoanTerms;
    use rust_decimal::Decimal;

    fn terms(term: LoanTerm) -> LoanTerms {
        crate::engine::testing::loan_terms("100000", "6", term)
    }

    #[test]
    fn only_short_schedules_are_computed_where_they_are_read() {
        let plain = PlanOptions::default();
        assert!(short_schedule(&terms(LoanTerm::Payments(360)), &plain));
        assert!(short_schedule(
            &terms(LoanTerm::Payments(INLINE_PAYMENTS)),
            &plain
        ));
        assert!(!short_schedule(
            &terms(LoanTerm::Payments(INLINE_PAYMENTS + 1)),
            &plain
        ));
        // A term solved from a payment may run to the longest schedule.
        assert!(!short_schedule(
            &terms(LoanTerm::Payment(Decimal::new(600, 0))),
            &plain
        ));
        let extra = |at| Extra::Lump {
            amount: Decimal::ONE,
            at,
        };
        let some = PlanOptions {
            extras: (1..=INLINE_CHANGES as u32).map(extra).collect(),
            ..PlanOptions::default()
        };
        assert!(short_schedule(&terms(LoanTerm::Payments(360)), &some));
        let many = PlanOptions {
            extras: (1..=INLINE_CHANGES as u32 + 1).map(extra).collect(),
            ..PlanOptions::default()
        };
        assert!(!short_schedule(&terms(LoanTerm::Payments(360)), &many));
        let step = vec![RateChange {
            at: 61,
            rate: AnnualRate::from_percent(Decimal::new(9, 0)).unwrap(),
        }];
        let keeps_term = PlanOptions {
            rate_changes: step.clone(),
            rate_change_keeps: RateChangeKeeps::Term,
            ..PlanOptions::default()
        };
        assert!(short_schedule(&terms(LoanTerm::Payments(360)), &keeps_term));
        // Keeping the payment, the term follows from it.
        let keeps_payment = PlanOptions {
            rate_changes: step,
            rate_change_keeps: RateChangeKeeps::Payment,
            ..PlanOptions::default()
        };
        assert!(!short_schedule(
            &terms(LoanTerm::Payments(360)),
            &keeps_payment
        ));
    }
}
