//! Test inputs shared by the APR tests: decimals from text, a single advance,
//! dated flows and payment series.

use jiff::civil::Date;
use rust_decimal::Decimal;

use super::flows::{DatedFlow, PaymentSeries, UnitFlow};
use crate::engine::rate::Frequency;

/// A decimal from its text.
pub(super) fn d(s: &str) -> Decimal {
    s.parse().unwrap()
}

/// Asserts that `x` lies within `tolerance` of `want`.
pub(super) fn close(x: Decimal, want: &str, tolerance: &str) {
    assert!(
        (x - d(want)).abs() < d(tolerance),
        "{x} is not within {tolerance} of {want}"
    );
}

/// One advance of `amount` at the start of the term.
pub(super) fn advance(amount: &str) -> Vec<UnitFlow> {
    vec![UnitFlow::single(d(amount), 0, Decimal::ZERO)]
}

/// A flow of `amount` on `on`.
pub(super) fn flow(amount: &str, on: Date) -> DatedFlow {
    DatedFlow {
        amount: d(amount),
        date: on,
    }
}

/// The dated payments of a [`PaymentSeries`].
pub(super) fn series(
    amount: &str,
    count: u32,
    first: Date,
    frequency: Frequency,
) -> Vec<DatedFlow> {
    PaymentSeries {
        amount: d(amount),
        count,
        first_date: first,
        frequency,
    }
    .flows()
    .unwrap()
}
