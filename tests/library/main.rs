//! The library's tests, in process and without a socket: one test binary
//! (`cargo test --test library`).
//!
//! - `engine_properties`, `plan_properties`, `savings_properties`,
//!   `adjustable_properties`: the engine's
//!   closed forms and posted ledgers against exact big-integer arithmetic;
//! - `answer_properties`: the hand-written JSON and CSV writers against serde_json;
//! - `pages`: every page driven through the router;
//! - `scenarios`: every demo scenario through its job's reader and engine call.
//!
//! `helpers` holds what they share: the exact decimal, `d()` and the property
//! tests' configuration (which keeps each file's regression seeds beside it).

mod adjustable_properties;
mod answer_properties;
mod engine_properties;
mod helpers;
mod pages;
mod plan_properties;
mod savings_properties;
mod scenarios;
