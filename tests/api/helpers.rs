//! A tiny HTTP/1.1 client over `std::net::TcpStream` and an in-process server.
//!
//! Every request is sent with `Connection: close` and the answer is read to the
//! end of the stream, so one request is one connection: nothing is pooled and
//! nothing leaks between tests.

use std::io::{ErrorKind, Read, Write};
use std::net::{SocketAddr, TcpStream};
use std::sync::{mpsc, OnceLock};
use std::time::Duration;

use residue::server::Config;
use rust_decimal::Decimal;
use serde_json::Value;

/// How long a test waits for an answer before it fails instead of hanging.
const IO_TIMEOUT: Duration = Duration::from_secs(30);

/// A running server on a free port of 127.0.0.1.
#[derive(Debug, Clone, Copy)]
pub struct TestApp {
    pub addr: SocketAddr,
}

/// Starts a server of its own with the default limits, for a test that changes
/// the server's state, shuts it down, overloads it, counts its metrics or runs
/// batches (of which a server runs two at once); a test that only asks takes
/// [`shared_app`].
pub fn spawn_app() -> TestApp {
    spawn_app_with(Config::default())
}

/// The shared server's in-flight limit. Every test thread asks it at the same
/// time, one request each, weighed by its expected work (a maximal plan of 6,000
/// payments and 240 rules takes 15 permits), where each test had a server of
/// 16 permits to itself before: with 1,024, even 68 test threads asking for
/// maximal plans at once are not answered 503 for each other's requests. The
/// limit shapes no answer, only whether one is 503.
const SHARED_IN_FLIGHT: usize = 1024;

/// The server the read-only tests share: the default limits but a larger
/// in-flight limit ([`SHARED_IN_FLIGHT`]), started once by the first test that
/// asks, on its own thread and tokio runtime, and serving until the test binary
/// exits. Its answers depend on the request alone (stored GET answers carry
/// the hash of their bytes as their ETag), so tests cannot see each other.
pub fn shared_app() -> TestApp {
    static SHARED: OnceLock<TestApp> = OnceLock::new();
    *SHARED.get_or_init(|| {
        spawn_app_with(Config {
            max_in_flight: SHARED_IN_FLIGHT,
            ..Config::default()
        })
    })
}

/// Starts the server with the given limits (its `addr` is replaced by 127.0.0.1:0).
///
/// The server runs on its own tokio runtime on a background thread, which lives
/// until the test binary exits.
pub fn spawn_app_with(config: Config) -> TestApp {
    let (tx, rx) = mpsc::channel();
    std::thread::Builder::new()
        .name("residue-test-server".into())
        .spawn(move || {
            let runtime = tokio::runtime::Builder::new_multi_thread()
                .worker_threads(2)
                .enable_all()
                .build()
                .expect("a tokio runtime for the test server");
            runtime.block_on(async move {
                let (listener, addr) =
                    residue::server::bind("127.0.0.1:0".parse().expect("an address"))
                        .await
                        .expect("a free port on 127.0.0.1");
                tx.send(addr).expect("the test waits for the address");
                let config = Config { addr, ..config };
                residue::server::serve(listener, config)
                    .await
                    .expect("the server runs");
            });
        })
        .expect("a thread for the test server");
    let addr = rx
        .recv_timeout(IO_TIMEOUT)
        .expect("the server reports its address");
    TestApp { addr }
}

/// A limits configuration whose bodies may be at most `max_body_bytes` long.
pub fn config_with_body_limit(max_body_bytes: usize) -> Config {
    Config {
        max_body_bytes,
        ..Config::default()
    }
}

/// One parsed answer.
#[derive(Debug, Clone)]
pub struct Response {
    pub status: u16,
    pub reason: String,
    /// Header names as sent; look them up with [`Response::header`].
    pub headers: Vec<(String, String)>,
    /// The body, de-chunked when it came chunked.
    pub body: Vec<u8>,
}

impl Response {
    /// The first value of a header, by case-insensitive name.
    pub fn header(&self, name: &str) -> Option<&str> {
        self.headers
            .iter()
            .find(|(k, _)| k.eq_ignore_ascii_case(name))
            .map(|(_, v)| v.as_str())
    }

    /// The media type without parameters, lower case ("application/json").
    pub fn media_type(&self) -> String {
        self.header("content-type")
            .unwrap_or("")
            .split(';')
            .next()
            .unwrap_or("")
            .trim()
            .to_ascii_lowercase()
    }

    /// The body as UTF-8 text.
    pub fn text(&self) -> &str {
        std::str::from_utf8(&self.body).expect("the body is UTF-8")
    }

    /// The body parsed as JSON.
    pub fn json(&self) -> Value {
        serde_json::from_slice(&self.body).unwrap_or_else(|e| {
            panic!(
                "the body is not JSON ({e}); status {}, body: {}",
                self.status,
                String::from_utf8_lossy(&self.body)
            )
        })
    }
}

impl TestApp {
    /// `GET path`.
    pub fn get(&self, path: &str) -> Response {
        self.request("GET", path, &[], None)
    }

    /// `GET path` with extra headers.
    pub fn get_with(&self, path: &str, headers: &[(&str, &str)]) -> Response {
        self.request("GET", path, headers, None)
    }

    /// `POST path` with a JSON body.
    pub fn post_json(&self, path: &str, body: &Value) -> Response {
        let bytes = serde_json::to_vec(body).expect("a JSON value serializes");
        self.post(path, "application/json", &bytes)
    }

    /// `POST path` with a JSON body; the answer must be 200 JSON, and is returned parsed.
    pub fn post_ok(&self, path: &str, body: &Value) -> Value {
        let r = self.post_json(path, body);
        assert_eq!(r.status, 200, "POST {path} {body}: {}", r.text());
        assert_eq!(r.media_type(), "application/json", "POST {path} {body}");
        r.json()
    }

    /// `GET path`; the answer must be 200 JSON, and is returned parsed.
    pub fn get_ok(&self, path: &str) -> Value {
        let r = self.get(path);
        assert_eq!(r.status, 200, "GET {path}: {}", r.text());
        assert_eq!(r.media_type(), "application/json", "GET {path}");
        r.json()
    }

    /// `POST path` with any media type and body bytes.
    pub fn post(&self, path: &str, content_type: &str, body: &[u8]) -> Response {
        self.request("POST", path, &[("Content-Type", content_type)], Some(body))
    }

    /// Any method, with extra headers and an optional body (Content-Length is added).
    pub fn request(
        &self,
        method: &str,
        path: &str,
        headers: &[(&str, &str)],
        body: Option<&[u8]>,
    ) -> Response {
        let mut head = format!(
            "{method} {path} HTTP/1.1\r\nHost: {}\r\nConnection: close\r\n",
            self.addr
        );
        for (name, value) in headers {
            head.push_str(&format!("{name}: {value}\r\n"));
        }
        if let Some(b) = body {
            head.push_str(&format!("Content-Length: {}\r\n", b.len()));
        }
        head.push_str("\r\n");
        let mut bytes = head.into_bytes();
        if let Some(b) = body {
            bytes.extend_from_slice(b);
        }
        self.request_raw(&bytes)
    }

    /// Sends these exact bytes and parses whatever comes back.
    pub fn request_raw(&self, bytes: &[u8]) -> Response {
        let mut stream = TcpStream::connect(self.addr).expect("the server accepts");
        stream
            .set_read_timeout(Some(IO_TIMEOUT))
            .expect("a read timeout");
        stream
            .set_write_timeout(Some(IO_TIMEOUT))
            .expect("a write timeout");
        stream.write_all(bytes).expect("the request is sent");
        stream.flush().expect("the request is flushed");
        let mut raw = Vec::new();
        let mut buf = [0u8; 16 * 1024];
        loop {
            match stream.read(&mut buf) {
                Ok(0) => break,
                Ok(n) => raw.extend_from_slice(&buf[..n]),
                Err(e) if e.kind() == ErrorKind::Interrupted => {}
                // A server that answers before reading all of a refused body may
                // reset the connection after its answer: keep what arrived.
                Err(e) if e.kind() == ErrorKind::ConnectionReset && !raw.is_empty() => break,
                Err(e) => panic!("reading the answer failed: {e}"),
            }
        }
        parse_response(&raw)
    }
}

/// Parses a whole HTTP/1.1 answer read to EOF.
pub fn parse_response(raw: &[u8]) -> Response {
    let end = raw
        .windows(4)
        .position(|w| w == b"\r\n\r\n")
        .unwrap_or_else(|| {
            panic!(
                "no end of headers in the answer: {:?}",
                String::from_utf8_lossy(raw)
            )
        });
    let head = std::str::from_utf8(&raw[..end]).expect("the head is ASCII");
    let mut lines = head.split("\r\n");
    let status_line = lines.next().expect("a status line");
    let mut parts = status_line.splitn(3, ' ');
    let version = parts.next().unwrap_or("");
    assert!(
        version.starts_with("HTTP/1."),
        "not an HTTP/1.x status line: {status_line}"
    );
    let status: u16 = parts
        .next()
        .and_then(|s| s.parse().ok())
        .unwrap_or_else(|| panic!("no status code in {status_line:?}"));
    let reason = parts.next().unwrap_or("").to_string();
    let headers: Vec<(String, String)> = lines
        .map(|line| {
            let (name, value) = line
                .split_once(':')
                .unwrap_or_else(|| panic!("a header line without ':': {line:?}"));
            (name.trim().to_string(), value.trim().to_string())
        })
        .collect();
    let rest = &raw[end + 4..];
    let chunked = headers.iter().any(|(k, v)| {
        k.eq_ignore_ascii_case("transfer-encoding") && v.to_ascii_lowercase().contains("chunked")
    });
    let body = if chunked {
        decode_chunked(rest)
    } else if let Some(length) = headers
        .iter()
        .find(|(k, _)| k.eq_ignore_ascii_case("content-length"))
        .map(|(_, v)| v.parse::<usize>().expect("a numeric Content-Length"))
    {
        assert!(
            rest.len() >= length,
            "the body is shorter ({}) than its Content-Length ({length})",
            rest.len()
        );
        rest[..length].to_vec()
    } else {
        rest.to_vec()
    };
    Response {
        status,
        reason,
        headers,
        body,
    }
}

/// Decodes a `Transfer-Encoding: chunked` body (chunk extensions and trailers ignored).
pub fn decode_chunked(mut data: &[u8]) -> Vec<u8> {
    let mut out = Vec::new();
    loop {
        let line_end = data
            .windows(2)
            .position(|w| w == b"\r\n")
            .expect("a chunk size line");
        let line = std::str::from_utf8(&data[..line_end]).expect("an ASCII chunk size");
        let size_text = line.split(';').next().unwrap_or("").trim();
        let size = usize::from_str_radix(size_text, 16)
            .unwrap_or_else(|_| panic!("a hexadecimal chunk size, not {size_text:?}"));
        data = &data[line_end + 2..];
        if size == 0 {
            return out;
        }
        assert!(data.len() >= size + 2, "a chunk is cut short");
        out.extend_from_slice(&data[..size]);
        assert_eq!(&data[size..size + 2], b"\r\n", "a chunk ends with CRLF");
        data = &data[size + 2..];
    }
}

/// A decimal from text (panics on anything else: the test's own figures).
pub fn dec(text: &str) -> Decimal {
    text.parse()
        .unwrap_or_else(|e| panic!("{text:?} is not a decimal: {e}"))
}

/// A JSON value that must be a string holding a decimal.
pub fn dec_of(v: &Value) -> Decimal {
    dec(v
        .as_str()
        .unwrap_or_else(|| panic!("expected a decimal string, got {v}")))
}

/// Asserts a problem-details answer: status, media type, `type`, `title`, `status`.
pub fn assert_problem(r: &Response, status: u16, slug: &str) -> Value {
    assert_problem_of("the answer", r, status, slug)
}

/// [`assert_problem`], its messages naming `what` was asked.
pub fn assert_problem_of(what: &str, r: &Response, status: u16, slug: &str) -> Value {
    assert_eq!(
        r.status,
        status,
        "{what}: unexpected status; body: {}",
        String::from_utf8_lossy(&r.body)
    );
    assert_eq!(
        r.header("content-type"),
        Some("application/problem+json"),
        "{what}: a problem is application/problem+json"
    );
    let p = r.json();
    assert_eq!(
        p["type"],
        format!("/api#problem-{slug}"),
        "{what}: problem: {p}"
    );
    assert!(
        p["title"].as_str().is_some_and(|t| !t.is_empty()),
        "{what}: a problem has a title: {p}"
    );
    assert_eq!(
        p["status"], status,
        "{what}: the body's status matches: {p}"
    );
    assert!(
        p["detail"].as_str().is_some_and(|t| !t.is_empty()),
        "{what}: a problem has a detail: {p}"
    );
    p
}

/// The pointers of a problem's `errors`.
pub fn pointers(problem: &Value) -> Vec<String> {
    problem["errors"]
        .as_array()
        .map(|errors| {
            errors
                .iter()
                .map(|e| {
                    assert!(
                        e["message"].as_str().is_some_and(|m| !m.is_empty()),
                        "each field error has a message: {e}"
                    );
                    e["pointer"]
                        .as_str()
                        .unwrap_or_else(|| panic!("a field error has a pointer: {e}"))
                        .to_string()
                })
                .collect()
        })
        .unwrap_or_default()
}

/// Asserts a field problem (422 invalid-fields unless said otherwise) naming `pointer`.
pub fn assert_field_problem(r: &Response, status: u16, slug: &str, pointer: &str) -> Value {
    let p = assert_problem(r, status, slug);
    let found = pointers(&p);
    assert!(
        found.iter().any(|f| f == pointer),
        "expected an error at pointer {pointer:?}, got {found:?}: {p}"
    );
    p
}

/// `base` with `changes` merged in (a `null` removes a field).
pub fn with(base: &Value, changes: Value) -> Value {
    let mut body = base.clone();
    for (k, v) in changes.as_object().expect("an object of changes") {
        if v.is_null() {
            body.as_object_mut().unwrap().remove(k);
        } else {
            body[k] = v.clone();
        }
    }
    body
}

/// What a case of a table asks.
#[derive(Debug)]
pub enum Ask {
    /// `POST path` with this JSON body.
    Json(&'static str, Value),
    /// `POST path` with these bytes as `application/json`.
    Bytes(&'static str, &'static [u8]),
    /// `GET path?query`.
    Get(String),
}

impl Ask {
    pub fn send(&self, app: &TestApp) -> Response {
        match self {
            Ask::Json(path, body) => app.post_json(path, body),
            Ask::Bytes(path, bytes) => app.post(path, "application/json", bytes),
            Ask::Get(target) => app.get(target),
        }
    }

    /// The request as a failure message names it.
    pub fn describe(&self) -> String {
        match self {
            Ask::Json(path, body) => format!("POST {path} {body}"),
            Ask::Bytes(path, bytes) => {
                format!("POST {path} {:?}", String::from_utf8_lossy(bytes))
            }
            Ask::Get(target) => format!("GET {target}"),
        }
    }
}

/// A refusal a table expects: the status, the problem type, the pointers the
/// problem must name (JSON Pointers for a body, parameter names for a query)
/// and, if given, words of its first field error's message.
#[derive(Debug)]
pub struct Refusal {
    pub ask: Ask,
    pub status: u16,
    pub slug: &'static str,
    pub pointers: Vec<&'static str>,
    pub message: Option<&'static str>,
}

impl Refusal {
    /// `ask` refused with `status` and the problem type `slug`.
    pub fn new(ask: Ask, status: u16, slug: &'static str) -> Self {
        Self {
            ask,
            status,
            slug,
            pointers: Vec::new(),
            message: None,
        }
    }

    /// `ask` refused 422 invalid-fields, naming `pointer`.
    pub fn invalid(ask: Ask, pointer: &'static str) -> Self {
        Self::new(ask, 422, "invalid-fields").at(pointer)
    }

    /// The problem also names `pointer`.
    pub fn at(mut self, pointer: &'static str) -> Self {
        self.pointers.push(pointer);
        self
    }

    /// The first field error's message holds `words`.
    pub fn saying(mut self, words: &'static str) -> Self {
        self.message = Some(words);
        self
    }
}

/// Sends every case of a table and asserts its refusal; after each, the server
/// still answers `/healthz`.
pub fn assert_refusals(app: &TestApp, cases: &[Refusal]) {
    for case in cases {
        let what = case.ask.describe();
        let p = assert_problem_of(&what, &case.ask.send(app), case.status, case.slug);
        let found = pointers(&p);
        for pointer in &case.pointers {
            assert!(
                found.iter().any(|f| f == pointer),
                "{what}: expected an error at pointer {pointer:?}, got {found:?}: {p}"
            );
        }
        if let Some(words) = case.message {
            let message = p["errors"][0]["message"].as_str().unwrap_or("");
            assert!(message.contains(words), "{what}: {words:?} in {p}");
        }
        assert_still_healthy(app);
    }
}

/// Asserts the server still answers `/healthz` (a bad request did not break it).
pub fn assert_still_healthy(app: &TestApp) {
    let r = app.get("/healthz");
    assert_eq!(r.status, 200, "the server still answers /healthz");
    assert_eq!(r.json()["status"], "ok");
}

/// The schedule path.
pub const SCHEDULE: &str = "/api/v1/loans/schedule";
/// The CSV schedule path.
pub const SCHEDULE_CSV: &str = "/api/v1/loans/schedule.csv";
/// The recurrence path.
pub const RECURRENCE: &str = "/api/v1/recurrence";

#[test]
fn the_test_client_decodes_a_chunked_answer_and_finds_headers_in_any_case() {
    // Arrange
    let raw = b"HTTP/1.1 200 OK\r\nTransfer-Encoding: chunked\r\nX-Thing: a\r\n\r\n\
                4;ext=1\r\nWiki\r\n6\r\npedia \r\nE\r\nin \r\n\r\nchunks.\r\n0\r\nTrailer: x\r\n\r\n";

    // Act
    let r = parse_response(raw);

    // Assert
    assert_eq!(r.status, 200);
    assert_eq!(r.reason, "OK");
    assert_eq!(r.header("x-thing"), Some("a"));
    assert_eq!(r.header("TRANSFER-ENCODING"), Some("chunked"));
    assert_eq!(r.text(), "Wikipedia in \r\n\r\nchunks.");
}
