//! Black-box tests of the HTTP interface: the real server on a socket of 127.0.0.1.
//!
//! Each test starts its own server (`helpers::spawn_app`) on a free port and
//! talks to it with a tiny HTTP/1.1 client, so the tests see exactly the bytes a
//! client sees: status line, headers and body.

mod batch;
mod bounds;
mod catalogue;
mod conventions;
mod disclosure;
mod errors;
mod health;
mod helpers;
mod openapi;
mod operations;
mod plans;
mod readiness;
mod recurrence;
mod savings;
mod schedule;
mod security;
