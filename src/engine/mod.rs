#![warn(missing_docs)]
//! The engine: pure computation over decimal arithmetic. No HTTP, no I/O, no clock.
//!
//! Precision: every figure is a `rust_decimal::Decimal` (28 significant digits).
//! Powers a^k of the interest factor are the exact power rounded once to a
//! decimal's precision (28–29 significant digits; [`power`] works through a
//! 128-bit binary mantissa, its error below 1e-34 of the value for k ≤ 6,000);
//! the closed forms agree with exact rational stepping to within 1e-20 of the
//! size of the terms (the property tests' bound), and money is always rounded
//! with an explicit rule.

pub mod adjustable;
pub mod apr;
pub mod apy;
pub mod calendar;
pub mod choices;
pub mod disclosure;
pub mod error;
pub mod ledger;
pub mod loan;
pub mod money;
pub mod plan;
pub mod poly;
pub mod power;
pub mod rate;
pub mod recurrence;
pub mod savings;
pub mod schedule;
pub mod search;

pub mod terms;
#[cfg(test)]
pub(crate) mod testing;
pub mod zdomain;

pub use error::{EngineError, ErrorKind, Result};
