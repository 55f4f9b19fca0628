//! The JSON and CSV interface: thin translations over the engine.

pub mod apr;
pub mod apy;
pub mod batch;
pub mod check;
pub mod checks;
pub mod choices;
pub mod csv;

pub mod emit;
pub mod handlers;
pub mod loans;
pub mod openapi;
pub mod recurrence;
pub mod savings;
pub mod text;
