//! The router, its middleware (limits, timeouts, headers, logs) and graceful shutdown.

use std::net::SocketAddr;
use std::sync::atomic::{AtomicU8, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};

use axum::extract::{Request, State};
use axum::http::{header, HeaderValue, Method, StatusCode};
use axum::middleware::{self, Next};
use axum::response::{IntoResponse, Response};
use axum::routing::{get, post};
use axum::Router;
use tokio::net::TcpListener;

use crate::api::handlers;
use crate::cache::Stored;
use crate::input::problem::{ApiError, ProblemKind};
pub use crate::state::{AppState, Config, InFlight};
use crate::web;

/// A fresh application with the default configuration, which the OpenAPI
/// document sends its examples to, so that they are real answers.
fn example_app() -> Router {
    app(AppState::new(Config::default()))
}

/// The whole application as one router (tests drive it without a socket).
pub fn app(state: AppState) -> Router {
    let api = Router::new()
        .route(
            "/api/v1/loans/schedule",
            get(handlers::schedule_get).post(handlers::schedule_post),
        )
        .route(
            "/api/v1/loans/schedule.csv",
            get(handlers::schedule_get_csv),
        )
        .route(
            "/api/v1/loans/compare",
            get(handlers::compare_get).post(handlers::compare_post),
        )
        .route("/api/v1/loans/compare.csv", get(handlers::compare_get_csv))
        .route(
            "/api/v1/refinance",
            get(crate::api::choices::refinance_get).post(crate::api::choices::refinance_post),
        )
        .route(
            "/api/v1/refinance.csv",
            get(crate::api::choices::refinance_get_csv),
        )
        .route(
            "/api/v1/loans/options",
            get(crate::api::choices::options_get).post(crate::api::choices::options_post),
        )
        .route(
            "/api/v1/loans/options.csv",
            get(crate::api::choices::options_get_csv),
        )
        .route("/api/v1/loans/grid", get(crate::api::choices::grid_get))
        .route(
            "/api/v1/loans/grid.csv",
            get(crate::api::choices::grid_get_csv),
        )
        .route("/api/v1/recurrence", post(handlers::recurrence_post))
        .route(
            "/api/v1/apr",
            get(crate::api::apr::apr_get).post(crate::api::apr::apr_post),
        )
        .route(
            "/api/v1/apy",
            get(crate::api::apy::apy_get).post(crate::api::apy::apy_post),
        )
        .route(
            "/api/v1/loans/check",
            get(crate::api::check::check_get).post(crate::api::check::check_post),
        )
        .route(
            "/api/v1/savings/plan",
            get(crate::api::savings::plan_get).post(crate::api::savings::plan_post),
        )
        .route(
            "/api/v1/savings/plan.csv",
            get(crate::api::savings::plan_get_csv),
        )
        // The operations above answer only the media types they offer.
        .layer(middleware::from_fn(negotiate))
        .route(
            "/api/openapi.json",
            get(|| crate::api::openapi::openapi_json(example_app)),
        )
        .merge(web::routes())
        .fallback(not_found)
        .layer(middleware::from_fn_with_state(
            state.clone(),
            limit_and_time,
        ))
        // Outside the in-flight limit: batches have their own, health and metrics none.
        .route("/api/v1/batch", post(crate::api::batch::batch_post))
        .route(
            "/api/v1/loans/checks",
            post(crate::api::checks::checks_post),
        )
        .route("/healthz", get(handlers::healthz))
        .route("/readyz", get(handlers::readyz))
        .route("/metrics", get(metrics))
        // Last, so that it covers every route above.
        .method_not_allowed_fallback(method_not_allowed);
    api.layer(middleware::from_fn_with_state(
        state.clone(),
        log_and_secure,
    ))
    .with_state(state)
}

/// Operations that answer a table, as JSON or CSV.
const TABLES: [&str; 6] = [
    "/api/v1/loans/schedule",
    "/api/v1/loans/compare",
    "/api/v1/savings/plan",
    "/api/v1/refinance",
    "/api/v1/loans/options",
    "/api/v1/loans/grid",
];

/// The media types an operation at `path` answers.
fn offered(path: &str) -> &'static [&'static str] {
    if path.ends_with(".csv") {
        &["text/csv"]
    } else if TABLES.contains(&path) {
        &["application/json", "text/csv"]
    } else {
        &["application/json"]
    }
}

/// 406 (a problem) when the Accept header takes none of the operation's media
/// types: JSON, CSV too for a table, CSV alone at a `.csv` address.
async fn negotiate(req: Request, next: Next) -> Response {
    let offered = offered(req.uri().path());
    if !crate::input::http::acceptable(req.headers(), offered) {
        return ApiError::new(
            ProblemKind::NotAcceptable,
            format!(
                "this operation answers {}; the Accept header takes none of them",
                offered.join(" or ")
            ),
        )
        .into_response();
    }
    next.run(req).await
}

async fn metrics(State(state): State<AppState>) -> Response {
    (
        [(
            header::CONTENT_TYPE,
            "text/plain; version=0.0.4; charset=utf-8",
        )],
        state.metrics.render(),
    )
        .into_response()
}

async fn not_found() -> ApiError {
    ApiError::new(
        ProblemKind::NotFound,
        "no page or operation has this address",
    )
}

async fn method_not_allowed(method: Method) -> ApiError {
    ApiError::new(
        ProblemKind::MethodNotAllowed,
        format!("{method} is not allowed at this address"),
    )
}

/// Refuses work beyond the in-flight limit (503, Retry-After) and bounds each request's time.
///
/// The computation runs on a blocking thread, holding its permit, so the runtime's
/// threads stay free to accept connections and to refuse the excess at once
/// (otherwise CPU-bound requests would queue inside the runtime without bound).
/// The time limit is applied on that thread too, so an abandoned request ends there.
/// Short schedules (at most [`crate::api::handlers::INLINE_PAYMENTS`] payments, well
/// under a millisecond) are the exception: see [`SELF_OFFLOADING`].
async fn limit_and_time(State(state): State<AppState>, req: Request, next: Next) -> Response {
    let key = cache_key(&state, &req);
    let if_none_match = req.headers().get(header::IF_NONE_MATCH).cloned();
    if let Some(hit) = key.as_deref().and_then(|k| state.cache.get(k)) {
        state.metrics.add_cache_hit();
        return stored_answer(&hit, if_none_match.as_ref());
    }
    let response = compute(&state, req, next).await;
    match key {
        Some(key) if response.status() == StatusCode::OK => {
            let (parts, body) = response.into_parts();
            let Ok(bytes) = axum::body::to_bytes(body, usize::MAX).await else {
                return ApiError::new(ProblemKind::Internal, "the answer could not be read")
                    .into_response();
            };
            let caution = header::HeaderName::from_static(handlers::CAUTION_HEADER);
            let headers = [header::CONTENT_TYPE, header::CONTENT_DISPOSITION, caution]
                .into_iter()
                .filter_map(|name| parts.headers.get(&name).map(|v| (name, v.clone())))
                .collect();
            // A copy of exactly the body's size: the buffer it was written into is larger.
            let stored = state
                .cache
                .put(key, headers, axum::body::Bytes::copy_from_slice(&bytes));
            stored_answer(&stored, if_none_match.as_ref())
        }
        _ => response,
    }
}

/// Addresses whose answer reads nothing of the request: their stored answer is
/// keyed by the path alone, so a query made up by a client cannot add entries.
const DOCUMENTS: [&str; 4] = ["/", "/about", "/api", "/api/openapi.json"];

/// The key of a GET answer that may be stored: the address with its query (the
/// path alone for [`DOCUMENTS`]) and the representation the Accept header
/// chooses (CSV or JSON: an operation's table can be asked for as CSV by
/// Accept), never the header's own text, so varied headers cannot flush the
/// store. Nothing else of the request, Host included, shapes an answer. Static
/// files are served with their own validators and are not stored.
fn cache_key(state: &AppState, req: &Request) -> Option<String> {
    if !state.cache.enabled()
        || req.method() != Method::GET
        || req.uri().path().starts_with("/static/")
    {
        return None;
    }
    let path = req.uri().path();
    if DOCUMENTS.contains(&path) {
        return Some(path.to_string());
    }
    // An operation asked for in a media type it does not answer is refused
    // (406) by the router, never served from the store.
    if path.starts_with("/api/v1/") && !crate::input::http::acceptable(req.headers(), offered(path))
    {
        return None;
    }
    let representation = if crate::input::http::wants_csv(req.headers()) {
        "csv"
    } else {
        "json"
    };
    let target = req
        .uri()
        .path_and_query()
        .map_or("/", axum::http::uri::PathAndQuery::as_str);
    Some(format!("{target}\n{representation}"))
}

/// A stored answer, or 304 when the client already holds it.
fn stored_answer(stored: &Stored, if_none_match: Option<&HeaderValue>) -> Response {
    let held = if_none_match
        .and_then(|v| v.to_str().ok())
        .is_some_and(|v| {
            v.split(',')
                .any(|t| t.trim() == "*" || t.trim() == stored.etag.to_str().unwrap_or(""))
        });
    let mut response = if held {
        StatusCode::NOT_MODIFIED.into_response()
    } else {
        let mut r = Response::new(axum::body::Body::from(stored.body.clone()));
        for (name, value) in &stored.headers {
            r.headers_mut().insert(name.clone(), value.clone());
        }
        r
    };
    response
        .headers_mut()
        .insert(header::ETAG, stored.etag.clone());
    response
}

/// Routes whose handlers weigh their own work: they compute a short job on the
/// runtime's thread and hand a long one to a blocking thread themselves
/// (`api::handlers::offload`). Every other route runs wholly on a blocking thread.
const SELF_OFFLOADING: [&str; 2] = ["/api/v1/loans/schedule", "/api/v1/loans/schedule.csv"];

async fn compute(state: &AppState, req: Request, next: Next) -> Response {
    let Ok(permit) = state.in_flight.clone().try_acquire_owned() else {
        return ApiError::new(
            ProblemKind::Overloaded,
            "too many requests are being computed; try again in a moment",
        )
        .into_response();
    };
    let limit = state.config.request_timeout;
    let weights = crate::weight::Limit::new(
        state.in_flight.clone(),
        u32::try_from(state.config.max_in_flight.max(1)).unwrap_or(u32::MAX),
    );
    let (req, body) = watch_body(req);
    let inline = req
        .extensions()
        .get::<axum::extract::MatchedPath>()
        .is_some_and(|m| SELF_OFFLOADING.contains(&m.as_str()));
    let computed = if inline {
        // Handing a short job to another thread and back costs about as much as
        // the job (two thread wake-ups): it is computed here, holding its permit.
        // A long one is handed off by the handler with a share of the permit, so
        // the permit is released when both the request and its job have ended
        // (a request timed out does not free it while its job still runs).
        let mut req = req;
        let permit = Arc::new(permit);
        req.extensions_mut().insert(InFlight(permit.clone()));
        let answer =
            tokio::time::timeout(limit, crate::weight::scoped(weights, next.run(req))).await;
        drop(permit);
        Ok(answer)
    } else {
        let work = crate::weight::scoped(weights, next.run(req));
        let handle = tokio::runtime::Handle::current();
        tokio::task::spawn_blocking(move || {
            let _permit = permit;
            handle.block_on(tokio::time::timeout(limit, work))
        })
        .await
    };
    match computed {
        Ok(Ok(response)) => response,
        Ok(Err(_))
            if body
                .as_ref()
                .is_some_and(|b| b.load(Ordering::Acquire) == BODY_READING) =>
        {
            ApiError::new(
                ProblemKind::BodyTimeout,
                format!(
                    "the request's body did not arrive within {} s; send it whole, without pauses",
                    state.config.request_timeout.as_secs_f64()
                ),
            )
            .into_response()
        }
        Ok(Err(_)) => with_cause(
            ApiError::new(
                ProblemKind::Timeout,
                format!(
                    "the request took longer than {} s",
                    state.config.request_timeout.as_secs_f64()
                ),
            )
            .into_response(),
            format!(
                "the computation was still running after {:?}",
                state.config.request_timeout
            ),
        ),
        Err(e) => with_cause(
            ApiError::new(ProblemKind::Internal, "the request could not be computed")
                .into_response(),
            format!("the computing thread failed: {e}"),
        ),
    }
}

/// The internal cause of a 5xx or a timeout, kept for the request's log line and
/// never sent to the client.
#[derive(Debug, Clone)]
pub struct Cause(pub String);

fn with_cause(mut response: Response, cause: String) -> Response {
    response.extensions_mut().insert(Cause(cause));
    response
}

/// Where a request's body is: not asked for yet, being read, or read to its end.
const BODY_UNREAD: u8 = 0;
const BODY_READING: u8 = 1;
const BODY_ARRIVED: u8 = 2;

/// A request that declares a body gets it wrapped so that its reading is seen.
/// A request timed out while its handler was still waiting for the body was
/// waiting for its client (408), not for its computation (503); one whose
/// handler never asked for the body, or had it whole, was not. A request
/// without a body is passed on untouched, with no state.
fn watch_body(req: Request) -> (Request, Option<Arc<AtomicU8>>) {
    use futures_util::StreamExt;
    let declared = req
        .headers()
        .get(header::CONTENT_LENGTH)
        .is_some_and(|v| v.as_bytes() != b"0")
        || req.headers().contains_key(header::TRANSFER_ENCODING);
    if !declared {
        return (req, None);
    }
    let state = Arc::new(AtomicU8::new(BODY_UNREAD));
    let seen = state.clone();
    let req = req.map(move |body| {
        let mut inner = body.into_data_stream();
        axum::body::Body::from_stream(futures_util::stream::poll_fn(move |cx| {
            let next = inner.poll_next_unpin(cx);
            let now = if matches!(next, std::task::Poll::Ready(None)) {
                BODY_ARRIVED
            } else {
                BODY_READING
            };
            seen.store(now, Ordering::Release);
            next
        }))
    });
    (req, Some(state))
}

/// Security headers on every answer; one log line per request with its id.
async fn log_and_secure(State(state): State<AppState>, req: Request, next: Next) -> Response {
    let id = state.next_request_id.fetch_add(1, Ordering::Relaxed);
    let origin = allowed_origin(&state.config, &req);
    if let Some(origin) = &origin {
        if req.method() == Method::OPTIONS
            && req
                .headers()
                .contains_key(header::ACCESS_CONTROL_REQUEST_METHOD)
        {
            return preflight(origin);
        }
    }
    let method = req.method().clone();
    let path = req.uri().path().to_string();
    let route = req
        .extensions()
        .get::<axum::extract::MatchedPath>()
        .map_or_else(|| "unmatched".to_string(), |m| m.as_str().to_string());
    let started = Instant::now();
    let html_problem = !path.starts_with("/api/")
        && !["/healthz", "/readyz", "/metrics"].contains(&path.as_str())
        && web::error::prefers_html(req.headers());
    let mut response = next.run(req).await;
    if html_problem {
        response = as_html_problem(response);
    }
    let h = response.headers_mut();
    set_static(
        h,
        &[
            (
                header::CONTENT_SECURITY_POLICY,
                "default-src 'none'; style-src 'self'; img-src 'self' data:; script-src 'self'; connect-src 'self'; form-action 'self'; base-uri 'none'; frame-ancestors 'none'",
            ),
            (header::X_CONTENT_TYPE_OPTIONS, "nosniff"),
            (header::REFERRER_POLICY, "no-referrer"),
            (header::X_FRAME_OPTIONS, "DENY"),
        ],
    );
    if let Some(origin) = origin {
        h.insert(header::ACCESS_CONTROL_ALLOW_ORIGIN, origin);
        h.insert(
            header::ACCESS_CONTROL_EXPOSE_HEADERS,
            HeaderValue::from_static("etag, retry-after, x-request-id, residue-caution"),
        );
        h.append(header::VARY, HeaderValue::from_static("origin"));
    }
    if let Ok(v) = HeaderValue::from_str(&id.to_string()) {
        h.insert("x-request-id", v);
    }
    let status = response.status().as_u16();
    state.metrics.record(&route, status, started.elapsed());
    let problem = response.extensions().get::<ProblemKind>().copied();
    if let Some(kind) = problem {
        state.metrics.record_problem(kind.slug());
    }
    let problem = problem.map_or("", ProblemKind::slug);
    let micros = started.elapsed().as_micros() as u64;
    match response.extensions().get::<Cause>() {
        Some(Cause(cause)) => {
            tracing::warn!(request_id = id, %method, path, route, status, micros, problem, cause, "request");
        }
        // A 5xx with a problem (overloaded, timed out, failed) is worth a warning;
        // /readyz's 503 while shutting down is not.
        None if status >= 500 && !problem.is_empty() => {
            tracing::warn!(request_id = id, %method, path, route, status, micros, problem, "request");
        }
        None => {
            tracing::info!(request_id = id, %method, path, route, status, micros, problem, "request");
        }
    }
    response
}

/// A problem answer turned into an HTML error page with the same status (the
/// problem type and headers such as Retry-After kept).
fn as_html_problem(response: Response) -> Response {
    let Some(kind) = response.extensions().get::<ProblemKind>().copied() else {
        return response;
    };
    let detail = response
        .extensions()
        .get::<crate::input::problem::ProblemDetail>()
        .map_or_else(String::new, |d| d.0.clone());
    let mut page = web::error::page(response.status(), kind.title(), &detail);
    for name in [header::RETRY_AFTER, header::CONNECTION, header::ALLOW] {
        if let Some(v) = response.headers().get(&name) {
            page.headers_mut().insert(name, v.clone());
        }
    }
    page.extensions_mut().insert(kind);
    page
}

/// The request's Origin when the configuration lets it read answers.
fn allowed_origin(config: &Config, req: &Request) -> Option<HeaderValue> {
    if config.cors_origins.is_empty() {
        return None;
    }
    let origin = req.headers().get(header::ORIGIN)?;
    let text = origin.to_str().ok()?;
    config
        .cors_origins
        .iter()
        .any(|o| o == "*" || o.eq_ignore_ascii_case(text))
        .then(|| origin.clone())
}

/// The answer to a CORS preflight from an allowed origin.
fn preflight(origin: &HeaderValue) -> Response {
    let mut r = StatusCode::NO_CONTENT.into_response();
    let h = r.headers_mut();
    h.insert(header::ACCESS_CONTROL_ALLOW_ORIGIN, origin.clone());
    set_static(
        h,
        &[
            (header::ACCESS_CONTROL_ALLOW_METHODS, "GET, POST"),
            (
                header::ACCESS_CONTROL_ALLOW_HEADERS,
                "content-type, accept, if-none-match",
            ),
            (header::ACCESS_CONTROL_MAX_AGE, "600"),
            (header::VARY, "origin"),
        ],
    );
    r
}

fn set_static(h: &mut axum::http::HeaderMap, pairs: &[(header::HeaderName, &'static str)]) {
    for (name, value) in pairs {
        h.insert(name.clone(), HeaderValue::from_static(value));
    }
}

/// Binds the listener (port 0 picks a free one) and returns it with its address.
///
/// # Errors
/// The address cannot be bound.
pub async fn bind(addr: SocketAddr) -> std::io::Result<(TcpListener, SocketAddr)> {
    let listener = TcpListener::bind(addr).await?;
    let local = listener.local_addr()?;
    Ok((listener, local))
}

/// Serves until SIGTERM or Ctrl-C, then finishes the requests in flight and returns.
///
/// Each connection is served by HTTP/1.1 with a header read timeout: a client that
/// does not finish its request headers in time (or leaves a kept-alive connection
/// idle that long) is disconnected, so slow or idle clients cannot hold
/// connections for ever. On the signal the listener closes, idle connections
/// close, and requests in flight are answered before the function returns (at
/// most the request timeout plus the header timeout later).
///
/// # Errors
/// The server fails to run.
pub async fn serve(listener: TcpListener, config: Config) -> std::io::Result<()> {
    use hyper_util::rt::{TokioIo, TokioTimer};
    use hyper_util::service::TowerToHyperService;
    use tower::ServiceExt;

    let header_timeout = config.header_read_timeout;
    let drain_limit = config.request_timeout + config.header_read_timeout;
    let delay = config.shutdown_delay;
    let state = AppState::new(config);
    let ready = state.ready.clone();
    let app = app(state);
    let graceful = hyper_util::server::graceful::GracefulShutdown::new();
    // On the signal, unready at once; keep accepting and answering for the delay
    // (a load balancer's checks or an endpoint update move traffic away); then
    // stop accepting and drain.
    let mut shutdown = std::pin::pin!(async move {
        shutdown_signal().await;
        ready.store(false, Ordering::Release);
        if !delay.is_zero() {
            tracing::info!(
                delay_secs = delay.as_secs_f64(),
                "shutdown: unready, still answering for the delay"
            );
            tokio::time::sleep(delay).await;
        }
        tracing::info!("shutting down: finishing requests in flight");
    });
    loop {
        let (stream, _peer) = tokio::select! {
            accepted = listener.accept() => match accepted {
                Ok(pair) => pair,
                Err(e) => {
                    // Out of file descriptors and the like: wait a little, go on.
                    tracing::warn!(error = %e, "accept failed");
                    tokio::time::sleep(Duration::from_millis(20)).await;
                    continue;
                }
            },
            () = &mut shutdown => break,
        };
        let _ = stream.set_nodelay(true);
        let service = TowerToHyperService::new(
            app.clone()
                .map_request(|req: Request<hyper::body::Incoming>| req.map(axum::body::Body::new)),
        );
        let mut builder = hyper::server::conn::http1::Builder::new();
        builder
            .timer(TokioTimer::new())
            .header_read_timeout(header_timeout)
            .keep_alive(true);
        let connection = graceful.watch(builder.serve_connection(TokioIo::new(stream), service));
        tokio::spawn(async move {
            if let Err(e) = connection.await {
                tracing::debug!(error = %e, "connection ended");
            }
        });
    }
    drop(listener);
    if tokio::time::timeout(drain_limit, graceful.shutdown())
        .await
        .is_err()
    {
        tracing::warn!("shutdown: some connections were still open after {drain_limit:?}");
    }
    Ok(())
}

async fn shutdown_signal() {
    let ctrl_c = async {
        let _ = tokio::signal::ctrl_c().await;
    };
    #[cfg(unix)]
    let term = async {
        match tokio::signal::unix::signal(tokio::signal::unix::SignalKind::terminate()) {
            Ok(mut s) => {
                s.recv().await;
            }
            Err(_) => std::future::pending::<()>().await,
        }
    };
    #[cfg(not(unix))]
    let term = std::future::pending::<()>();
    tokio::select! {
        () = ctrl_c => {},
        () = term => {},
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use futures_util::StreamExt;

    fn request(headers: &[(header::HeaderName, &str)], body: axum::body::Body) -> Request {
        let mut req = Request::new(body);
        for (name, value) in headers {
            req.headers_mut()
                .insert(name.clone(), HeaderValue::from_str(value).unwrap());
        }
        req
    }

    fn now_or_never<F: std::future::Future>(f: F) -> Option<F::Output> {
        futures_util::FutureExt::now_or_never(f)
    }

    #[test]
    fn a_request_without_a_body_is_not_watched() {
        for headers in [vec![], vec![(header::CONTENT_LENGTH, "0")]] {
            let (_, state) = watch_body(request(&headers, axum::body::Body::empty()));
            assert!(state.is_none());
        }
    }

    #[test]
    fn a_body_read_to_its_end_has_arrived_and_one_never_asked_for_is_unread() {
        let headers = [(header::CONTENT_LENGTH, "3")];
        let (req, state) = watch_body(request(&headers, axum::body::Body::from("abc")));
        let state = state.expect("a declared body is watched");
        assert_eq!(state.load(Ordering::Acquire), BODY_UNREAD);

        let bytes = now_or_never(axum::body::to_bytes(req.into_body(), 16))
            .expect("a body in memory is read at once")
            .unwrap();

        assert_eq!(&bytes[..], b"abc");
        assert_eq!(state.load(Ordering::Acquire), BODY_ARRIVED);
    }

    #[test]
    fn a_body_still_awaited_is_being_read() {
        // A chunk, then a client that sends nothing more.
        let chunks = futures_util::stream::iter([Ok::<_, std::io::Error>(
            axum::body::Bytes::from_static(b"{\"principal\":"),
        )])
        .chain(futures_util::stream::pending());
        let headers = [(header::TRANSFER_ENCODING, "chunked")];
        let (req, state) = watch_body(request(&headers, axum::body::Body::from_stream(chunks)));
        let state = state.expect("a declared body is watched");

        let read = now_or_never(axum::body::to_bytes(req.into_body(), 1024));

        assert!(read.is_none(), "the rest of the body never comes");
        assert_eq!(state.load(Ordering::Acquire), BODY_READING);
    }
}
