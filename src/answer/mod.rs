//! Answers apart from their encodings: what an operation found, with its notes,
//! derivation and disclosure rounding, in a form the API serializes (JSON, CSV)
//! and the pages render (HTML), so that both come from one computation.

pub mod adjustable;
pub mod check;
pub mod compare;
pub mod derivation;
pub mod grid;
pub mod pipeline;
pub mod points;
pub mod refinance;
pub mod savings;
pub mod text;
