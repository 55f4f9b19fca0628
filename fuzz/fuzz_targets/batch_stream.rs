//! The batch reader: NDJSON lines arriving in chunks cut anywhere (inside a line,
//! inside a UTF-8 character, between CR and LF), with blank lines, long lines and
//! bytes that are not JSON. Whatever arrives, every answer line is a JSON object
//! with `ok`, and each non-blank input line gets exactly one answer, in order
//! (a line's answer carries its id when the line had one).
#![no_main]

use std::sync::OnceLock;

use axum::body::Body;
use axum::http::Request;
use libfuzzer_sys::fuzz_target;
use residue::server::{app, AppState, Config};
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
    // The first byte picks the chunk sizes; the rest is the body. A few job
    // lines are mixed in so that real answers are exercised too.
    let Some((&cut, rest)) = data.split_first() else {
        return;
    };
    let mut body = rest.to_vec();
    if cut & 1 == 1 {
        body.extend_from_slice(
            b"\n{\"id\":7,\"job\":\"apy\",\"request\":{\"annual_rate_percent\":\"5\",\"compounding\":\"daily\"}}\n",
        );
    }
    let size = usize::from(cut >> 1).max(1);
    let chunks: Vec<Result<Vec<u8>, std::io::Error>> =
        body.chunks(size).map(|c| Ok(c.to_vec())).collect();
    let expected = body
        .split(|b| *b == b'\n')
        .filter(|l| !l.iter().all(u8::is_ascii_whitespace))
        .count();
    let answer = runtime().block_on(async {
        let router = app(AppState::new(Config::default()));
        let request = Request::post("/api/v1/batch")
            .header("content-type", "application/x-ndjson")
            .body(Body::from_stream(futures_util::stream::iter(chunks)))
            .expect("a request");
        let response = router.oneshot(request).await.expect("an answer");
        assert_eq!(response.status(), 200);
        axum::body::to_bytes(response.into_body(), usize::MAX)
            .await
            .expect("the whole answer")
    });
    let text = std::str::from_utf8(&answer).expect("answers are UTF-8");
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.len(), expected, "one answer a non-blank line");
    for line in lines {
        let v: serde_json::Value = serde_json::from_str(line).expect("each answer is JSON");
        assert!(v["ok"].is_boolean(), "{line}");
    }
});
