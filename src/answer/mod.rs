//! Answers apart from their encodings: what an operation found, with its notes,
//! derivation and disclosure rounding, in a form the API serializes (JSON, CSV)
//! and the pages render (HTML), so that both come from one computation.

pub mod check;
pub mod compare;
pub mod derivation;
pub mod pipeline;
pub mod savings;
pub mod text;
