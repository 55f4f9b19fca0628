//! The JSON and CSV interface: thin translations over the engine.

pub mod compare;
pub mod derivation;
pub mod fields;
pub mod handlers;
pub mod json;
pub mod loans;
pub mod problem;
pub mod recurrence;
