//! Residue: loan and savings schedules solved in closed form from the
//! z-transform of their recurrence, posted to the minor unit, reconciled.
//!
//! - [`engine`]: pure computation (no HTTP, no I/O, no clock).
//! - [`api`]: the JSON and CSV interface over the engine.
//! - [`web`]: the HTML pages over the same engine results.
//! - [`server`]: router, middleware and shutdown.
//! - [`weight`]: the in-flight limit weighed by a request's expected work.

pub mod api;
pub mod cache;
pub mod engine;
pub mod metrics;
pub mod server;
pub mod web;
pub mod weight;
