//! What every part of the service shares: its configuration, the in-flight
//! limit, the answer store, the metrics and the readiness flag. Below the API,
//! the pages and the router, so that none of them imports another's start-up.

use std::net::SocketAddr;
use std::sync::atomic::{AtomicBool, AtomicU64};
use std::sync::Arc;
use std::time::Duration;

use tokio::sync::Semaphore;

use crate::cache::AnswerCache;

/// Limits and addresses, from flags or environment variables (see `main.rs`).
#[derive(Debug, Clone)]
pub struct Config {
    pub addr: SocketAddr,
    /// The largest request body accepted.
    pub max_body_bytes: usize,
    /// Requests computed at once; more are answered 503 with Retry-After.
    pub max_in_flight: usize,
    /// The longest a request may take before it is answered 503.
    pub request_timeout: Duration,
    /// The longest a client may take to send a request's headers (and the longest
    /// an open connection may sit idle before its next request).
    pub header_read_timeout: Duration,
    /// Bytes of computed GET answers kept for repeated requests (0: none).
    pub answer_cache_bytes: usize,
    /// Origins allowed to read answers from a browser (CORS); empty: none, `*`: any.
    pub cors_origins: Vec<String>,
    /// After SIGTERM, how long `/readyz` answers 503 while the listener still
    /// accepts and answers, before it closes and the requests in flight drain.
    pub shutdown_delay: Duration,
    /// The address clients reach the service at (`http://host:port`, no trailing
    /// slash), for the examples of the API guide; `None`: the listen address.
    /// Never taken from a request's Host header, which any client can set.
    pub public_url: Option<String>,
}

impl Config {
    /// [`Config::public_url`], or `http://` and the listen address.
    pub fn public_url(&self) -> String {
        self.public_url
            .clone()
            .unwrap_or_else(|| format!("http://{}", self.addr))
    }
}

impl Default for Config {
    fn default() -> Self {
        Self {
            addr: SocketAddr::from(([127, 0, 0, 1], 8080)),
            max_body_bytes: 1024 * 1024,
            max_in_flight: 16,
            request_timeout: Duration::from_secs(10),
            header_read_timeout: Duration::from_secs(10),
            answer_cache_bytes: 32 * 1024 * 1024,
            cors_origins: Vec::new(),
            shutdown_delay: Duration::ZERO,
            public_url: None,
        }
    }
}

/// What every handler shares.
#[derive(Debug, Clone)]
pub struct AppState {
    pub config: Arc<Config>,
    pub(crate) in_flight: Arc<Semaphore>,
    /// Batches running at once (each streams many jobs).
    pub batches: Arc<Semaphore>,
    pub metrics: Arc<crate::metrics::Metrics>,
    pub cache: Arc<AnswerCache>,
    pub(crate) next_request_id: Arc<AtomicU64>,
    /// False from the moment a shutdown signal arrives: `/readyz` then answers 503.
    pub ready: Arc<AtomicBool>,
}

impl AppState {
    pub fn new(config: Config) -> Self {
        let permits = config.max_in_flight.max(1);
        let cache = Arc::new(AnswerCache::new(config.answer_cache_bytes));
        Self {
            cache,
            config: Arc::new(config),
            in_flight: Arc::new(Semaphore::new(permits)),
            batches: Arc::new(Semaphore::new(2)),
            metrics: Arc::new(crate::metrics::Metrics::default()),
            next_request_id: Arc::new(AtomicU64::new(1)),
            ready: Arc::new(AtomicBool::new(true)),
        }
    }
}

/// A share of a request's in-flight permit, for a job the handler hands to a
/// blocking thread (see [`crate::api::handlers::offload`]).
#[derive(Clone)]
pub struct InFlight(#[allow(dead_code)] pub(crate) Arc<tokio::sync::OwnedSemaphorePermit>);
