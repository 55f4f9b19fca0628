//! Readiness and the graceful hand-over, on the real binary and a real SIGTERM:
//! `/readyz` turns 503 at once while `/healthz` and the operations keep answering
//! for `--shutdown-delay-secs`, then the process exits.

use std::io::{Read, Write};
use std::net::{SocketAddr, TcpListener, TcpStream};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

/// A free port on 127.0.0.1 (bound, then released for the child to take).
fn free_addr() -> SocketAddr {
    TcpListener::bind("127.0.0.1:0")
        .and_then(|l| l.local_addr())
        .expect("a free port")
}

fn status_of(addr: SocketAddr, path: &str) -> Option<u16> {
    let mut s = TcpStream::connect_timeout(&addr, Duration::from_millis(200)).ok()?;
    s.set_read_timeout(Some(Duration::from_secs(2))).ok()?;
    write!(
        s,
        "GET {path} HTTP/1.1\r\nHost: {addr}\r\nConnection: close\r\n\r\n"
    )
    .ok()?;
    let mut answer = String::new();
    s.read_to_string(&mut answer).ok()?;
    answer.split(' ').nth(1)?.parse().ok()
}

fn start(delay_secs: u32) -> (Child, SocketAddr) {
    let addr = free_addr();
    let child = Command::new(env!("CARGO_BIN_EXE_residue"))
        .args([
            "--addr",
            &addr.to_string(),
            "--shutdown-delay-secs",
            &delay_secs.to_string(),
        ])
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .expect("the residue binary starts");
    let started = Instant::now();
    while status_of(addr, "/healthz") != Some(200) {
        assert!(
            started.elapsed() < Duration::from_secs(20),
            "the server answers /healthz"
        );
        std::thread::sleep(Duration::from_millis(20));
    }
    (child, addr)
}

fn sigterm(child: &Child) {
    let ok = Command::new("kill")
        .args(["-TERM", &child.id().to_string()])
        .status()
        .expect("kill runs")
        .success();
    assert!(ok, "SIGTERM is sent");
}

#[test]
fn readyz_turns_503_at_once_on_sigterm_while_healthz_and_operations_answer_until_exit() {
    // Arrange
    let (mut child, addr) = start(2);
    assert_eq!(status_of(addr, "/readyz"), Some(200));

    // Act
    sigterm(&child);
    let signalled = Instant::now();
    let mut unready_after = None;
    while signalled.elapsed() < Duration::from_secs(1) {
        if status_of(addr, "/readyz") == Some(503) {
            unready_after = Some(signalled.elapsed());
            break;
        }
    }

    // Assert: unready within 100 ms; alive and answering during the delay.
    let unready_after = unready_after.expect("/readyz answers 503 after SIGTERM");
    assert!(
        unready_after <= Duration::from_millis(100),
        "{unready_after:?}"
    );
    assert_eq!(status_of(addr, "/healthz"), Some(200));
    assert_eq!(
        status_of(
            addr,
            "/api/v1/loans/schedule?principal=1000&annual_rate_percent=5&term_months=12"
        ),
        Some(200)
    );
    let exit = loop {
        if let Some(code) = child.try_wait().expect("the child can be waited on") {
            break code;
        }
        assert!(
            signalled.elapsed() < Duration::from_secs(30),
            "the server exits"
        );
        assert!(matches!(status_of(addr, "/healthz"), Some(200) | None));
        std::thread::sleep(Duration::from_millis(50));
    };
    assert!(exit.success(), "{exit:?}");
    assert!(
        signalled.elapsed() >= Duration::from_secs(2),
        "the delay is kept"
    );
}
