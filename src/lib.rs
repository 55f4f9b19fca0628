//! Residue: loan and savings schedules solved in closed form from the
//! z-transform of their recurrence, posted to the minor unit, reconciled.
//!
//! - [`engine`]: pure computation (no HTTP, no I/O, no clock).
//! - [`api`]: the JSON and CSV interface over the engine.
//! - [`web`]: the HTML pages over the same engine results.
//! - [`input`]: the request-reading layer shared by the API and the pages.
//! - [`state`]: what every part of the service shares (configuration, limits, store).
//! - [`server`]: router, middleware and shutdown.
//! - [`weight`]: the in-flight limit weighed by a request's expected work.

pub mod answer;
pub mod api;
pub mod cache;
pub mod engine;
pub mod input;
pub mod metrics;
pub mod server;
pub mod state;
pub mod web;
pub mod weight;
