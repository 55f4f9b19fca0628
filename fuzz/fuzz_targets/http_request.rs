//! Whole HTTP/1.1 requests as bytes, through hyper's parser (Content-Length and
//! chunked bodies, bad chunk sizes, early ends) into the service: any bytes get
//! either no answer (a connection hyper refuses) or one that starts with a status
//! line and is never a 500, and a POST's JSON body is read within its limit.
#![no_main]

use std::sync::OnceLock;
use std::time::Duration;

use hyper_util::rt::TokioIo;
use hyper_util::service::TowerToHyperService;
use libfuzzer_sys::fuzz_target;
use residue::server::{app, AppState, Config};
use tokio::io::{AsyncReadExt, AsyncWriteExt};
use tower::ServiceExt;

fn runtime() -> &'static tokio::runtime::Runtime {
    static RT: OnceLock<tokio::runtime::Runtime> = OnceLock::new();
    RT.get_or_init(|| {
        tokio::runtime::Builder::new_multi_thread()
            .worker_threads(1)
            .enable_all()
            .build()
            .expect("a runtime")
    })
}

fuzz_target!(|data: &[u8]| {
    // A prefix that reaches the body readers most of the time; the fuzzer's bytes
    // choose the framing and the body.
    let mut raw = b"POST /api/v1/loans/schedule HTTP/1.1\r\nHost: f\r\nContent-Type: application/json\r\n".to_vec();
    raw.extend_from_slice(data);
    let answer = runtime().block_on(async move {
        let config = Config {
            max_body_bytes: 4096,
            request_timeout: Duration::from_secs(2),
            header_read_timeout: Duration::from_secs(2),
            ..Config::default()
        };
        let router = app(AppState::new(config));
        let (mut client, server) = tokio::io::duplex(1 << 16);
        let service = TowerToHyperService::new(router.map_request(
            |req: axum::http::Request<hyper::body::Incoming>| req.map(axum::body::Body::new),
        ));
        let serving = tokio::spawn(async move {
            let _ = hyper::server::conn::http1::Builder::new()
                .serve_connection(TokioIo::new(server), service)
                .await;
        });
        let _ = client.write_all(&raw).await;
        let _ = client.shutdown().await;
        let mut out = Vec::new();
        let _ = tokio::time::timeout(Duration::from_secs(5), client.read_to_end(&mut out)).await;
        serving.abort();
        out
    });
    if answer.is_empty() {
        return;
    }
    assert!(answer.starts_with(b"HTTP/1.1 "), "a status line first");
    let status = &answer[9..12];
    assert_ne!(status, b"500", "{}", String::from_utf8_lossy(&answer));
});
