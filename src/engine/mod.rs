//! The engine: pure computation over decimal arithmetic. No HTTP, no I/O, no clock.
//!
//! Precision: every figure is a `rust_decimal::Decimal` (28 significant digits).
//! Powers a^k of the interest factor keep about 26 significant digits for
//! k ≤ 6,000 (rust_decimal's `powi` rounds at each squaring); the closed forms
//! therefore agree with exact rational stepping to about 1e-22 relative to the
//! size of the terms, and money is always rounded with an explicit rule.

pub mod apr;
pub mod apy;
pub mod calendar;
pub mod disclosure;
pub mod error;
pub mod ledger;
pub mod loan;
pub mod money;
pub mod plan;
pub mod poly;
pub mod rate;
pub mod recurrence;
pub mod savings;
pub mod schedule;
pub mod zdomain;

pub use error::{EngineError, ErrorKind, Result};
