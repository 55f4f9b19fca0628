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
}

#[tokio::main]
async fn main() -> std::io::Result<()> {
    tracing_subscriber::fmt()
        .with_env_filter(
            tracing_subscriber::EnvFilter::try_from_env("RESIDUE_LOG")
                .unwrap_or_else(|_| "info".into()),
        )
        .init();
    let args = Args::parse();
    let config = Config {
        addr: args.addr,
        max_body_bytes: args.max_body_bytes,
        max_in_flight: args.max_in_flight,
        request_timeout: Duration::from_secs(args.request_timeout_secs.max(1)),
    };
    let (listener, local) = bind(config.addr).await?;
    tracing::info!("residue listening on http://{local}");
    serve(listener, config).await
}
