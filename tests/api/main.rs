//! Black-box tests of the HTTP interface: the real server on a socket of 127.0.0.1.
//!
//! The tests that only ask share one server (`helpers::shared_app`), started
//! once on a free port; a test that changes the server's state, needs limits of
//! its own, shuts it down, overloads it, counts its metrics or runs batches
//! starts its own (`helpers::spawn_app`, `helpers::spawn_app_with`). Each talks
//! to its server with a tiny HTTP/1.1 client, so the tests see exactly the bytes
//! a client sees: status line, headers and body.

mod adjustable;
mod batch;
mod bounds;
mod catalogue;
mod checks;
mod choices;
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
