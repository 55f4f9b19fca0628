//! The `residue` command: serves the web pages and the API.

use std::net::SocketAddr;
use std::time::Duration;

use clap::Parser;
use residue::server::{bind, serve, Config};

/// Residue: loan and savings schedules in closed form, posted to the cent.
#[derive(Debug, Parser)]
#[command(version, about)]
struct Args {
    /// Address to listen on.
    #[arg(long, env = "RESIDUE_ADDR", default_value = "127.0.0.1:8080")]
    addr: SocketAddr,
    /// Largest request body, in bytes.
    #[arg(long, env = "RESIDUE_MAX_BODY_BYTES", default_value_t = 1024 * 1024)]
    max_body_bytes: usize,
    /// Requests computed at once; more are answered 503 with Retry-After.
    #[arg(long, env = "RESIDUE_MAX_IN_FLIGHT", default_value_t = 16)]
    max_in_flight: usize,
    /// Longest time a request may take, in seconds.
    #[arg(long, env = "RESIDUE_REQUEST_TIMEOUT_SECS", default_value_t = 10)]
    request_timeout_secs: u64,
    /// Longest time a client may take to send its request headers (or keep an idle
    /// connection open), in seconds.
    #[arg(long, env = "RESIDUE_HEADER_TIMEOUT_SECS", default_value_t = 10)]
    header_timeout_secs: u64,
    /// Megabytes of computed GET answers kept for repeated requests (0 turns the store off).
    #[arg(long, env = "RESIDUE_ANSWER_CACHE_MB", default_value_t = 32)]
    answer_cache_mb: usize,
    /// Origins whose browser scripts may read the answers (CORS), comma-separated;
    /// `*` allows any. None by default.
    #[arg(
        long = "cors-origin",
        env = "RESIDUE_CORS_ORIGINS",
        value_delimiter = ','
    )]
    cors_origins: Vec<String>,
    /// After SIGTERM, seconds during which /readyz answers 503 while the server
    /// still accepts and answers; then it stops accepting and drains.
    #[arg(long, env = "RESIDUE_SHUTDOWN_DELAY_SECS", default_value_t = 0)]
    shutdown_delay_secs: u64,
    /// The address clients reach the service at (e.g. `https://residue.example.org`),
    /// used in the API guide's examples; by default `http://` and the listen address.
    #[arg(long, env = "RESIDUE_PUBLIC_URL", value_parser = public_url)]
    public_url: Option<String>,
    /// Log lines as `text` (colours only on a terminal) or `json`, one object a
    /// line, for log collectors.
    #[arg(long, env = "RESIDUE_LOG_FORMAT", default_value = "text", value_parser = ["text", "json"])]
    log_format: String,
}

/// An `http://` or `https://` address of printable characters without spaces.
fn public_url(text: &str) -> Result<String, String> {
    let t = text.trim();
    let scheme_ok = t.starts_with("http://") || t.starts_with("https://");
    if scheme_ok && t.len() <= 200 && t.chars().all(|c| c.is_ascii_graphic()) {
        Ok(t.trim_end_matches('/').to_string())
    } else {
        Err("give an http:// or https:// address, e.g. https://residue.example.org".into())
    }
}

/// glibc's allocator serves a large answer's buffer from its heaps once it has
/// freed a mapped one (its mmap threshold grows), and keeps those pages after:
/// after a batch of maximal schedules the server stayed 60 MB above its start.
/// With the threshold fixed at 256 KiB, buffers that large are mapped and given
/// back at once (docs/performance.md has the figures). glibc reads the setting
/// only at start, so the process sets it and executes itself again, once; an
/// operator's own `MALLOC_MMAP_THRESHOLD_` or `GLIBC_TUNABLES` is left alone.
#[cfg(all(target_os = "linux", target_env = "gnu"))]
fn with_allocator_settings() {
    use std::os::unix::process::CommandExt;
    const SETTING: &str = "MALLOC_MMAP_THRESHOLD_";
    if std::env::var_os(SETTING).is_some() || std::env::var_os("GLIBC_TUNABLES").is_some() {
        return;
    }
    let Ok(me) = std::env::current_exe() else {
        return;
    };
    let error = std::process::Command::new(me)
        .args(std::env::args_os().skip(1))
        .env(SETTING, "262144")
        .exec();
    // Only reached when the exec failed: go on with the defaults.
    eprintln!("residue: could not apply the allocator settings ({error}); going on without them");
}

#[cfg(not(all(target_os = "linux", target_env = "gnu")))]
fn with_allocator_settings() {}

fn main() -> std::io::Result<()> {
    with_allocator_settings();
    tokio::runtime::Builder::new_multi_thread()
        .enable_all()
        .build()?
        .block_on(run())
}

async fn run() -> std::io::Result<()> {
    use std::io::IsTerminal;
    let args = Args::parse();
    let filter = tracing_subscriber::EnvFilter::try_from_env("RESIDUE_LOG")
        .unwrap_or_else(|_| "info".into());
    let logs = tracing_subscriber::fmt().with_env_filter(filter);
    if args.log_format == "json" {
        logs.json()
            .flatten_event(true)
            .with_current_span(false)
            .with_ansi(false)
            .init();
    } else {
        logs.with_ansi(std::io::stdout().is_terminal()).init();
    }
    let mut config = Config {
        addr: args.addr,
        max_body_bytes: args.max_body_bytes,
        max_in_flight: args.max_in_flight,
        request_timeout: Duration::from_secs(args.request_timeout_secs.max(1)),
        header_read_timeout: Duration::from_secs(args.header_timeout_secs.max(1)),
        answer_cache_bytes: args.answer_cache_mb.saturating_mul(1024 * 1024),
        cors_origins: args
            .cors_origins
            .into_iter()
            .map(|o| o.trim().trim_end_matches('/').to_string())
            .filter(|o| !o.is_empty())
            .collect(),
        shutdown_delay: Duration::from_secs(args.shutdown_delay_secs),
        public_url: args
            .public_url
            .map(|u| u.trim().trim_end_matches('/').to_string())
            .filter(|u| !u.is_empty()),
    };
    let (listener, local) = bind(config.addr).await?;
    config.addr = local;
    tracing::info!("residue listening on http://{local}");
    serve(listener, config).await
}
