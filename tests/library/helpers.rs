//! What the library's tests share: an exact decimal for references in big
//! integers, `d()` for the tests' own figures, and the property tests'
//! configuration and strategies for rates and amounts.

use num_bigint::BigInt;
use num_traits::{Signed, Zero};
use proptest::prelude::{prop_oneof, Just, Strategy};
use proptest::test_runner::{Config, FileFailurePersistence};
use rust_decimal::Decimal;

/// A decimal from text (panics on anything else: the test's own figures).
pub fn d(text: &str) -> Decimal {
    text.parse()
        .unwrap_or_else(|e| panic!("{text:?} is not a decimal: {e}"))
}

/// A property test's configuration: `cases` cases, and the seeds of past
/// failures kept beside the test's source file
/// (`tests/library/NAME.proptest-regressions`), read before any new case.
///
/// Stated here because proptest's default looks upwards from the source file
/// for a folder holding `main.rs` and would find this binary's own: it would
/// keep the seeds in `tests/proptest-regressions/NAME.txt` instead.
pub fn proptest_config(cases: u32) -> Config {
    Config {
        cases,
        failure_persistence: Some(Box::new(FileFailurePersistence::WithSource(
            "proptest-regressions",
        ))),
        ..Config::default()
    }
}

/// Periodic rates from 0 to about 2 % with up to 7 decimals, plus exact 0.
pub fn rate() -> impl Strategy<Value = Decimal> {
    prop_oneof![
        Just(Decimal::ZERO),
        (1u64..200_000).prop_map(|m| Decimal::new(m as i64, 7))
    ]
}

/// Amounts of money from 0.01 to `max_units` (exclusive), in cents.
pub fn money(max_units: i64) -> impl Strategy<Value = Decimal> {
    (1i64..max_units * 100).prop_map(|c| Decimal::new(c, 2))
}

/// An exact decimal: num / 10^scale (big integers, no rounding, no gcd).
#[derive(Debug, Clone)]
pub struct Exact {
    num: BigInt,
    scale: u32,
}

impl Exact {
    pub fn of(d: Decimal) -> Self {
        Self {
            num: BigInt::from(d.mantissa()),
            scale: d.scale(),
        }
    }
    pub fn zero() -> Self {
        Self {
            num: BigInt::zero(),
            scale: 0,
        }
    }
    pub fn one() -> Self {
        Self::of(Decimal::ONE)
    }
    /// The numerator over 10^`scale` (`scale` at least the value's own).
    pub fn at_scale(&self, scale: u32) -> BigInt {
        &self.num * BigInt::from(10).pow(scale - self.scale)
    }
    pub fn add(&self, o: &Self) -> Self {
        let s = self.scale.max(o.scale);
        Self {
            num: self.at_scale(s) + o.at_scale(s),
            scale: s,
        }
    }
    pub fn sub(&self, o: &Self) -> Self {
        let s = self.scale.max(o.scale);
        Self {
            num: self.at_scale(s) - o.at_scale(s),
            scale: s,
        }
    }
    pub fn mul(&self, o: &Self) -> Self {
        Self {
            num: &self.num * &o.num,
            scale: self.scale + o.scale,
        }
    }
    pub fn abs(&self) -> Self {
        Self {
            num: self.num.abs(),
            scale: self.scale,
        }
    }
    pub fn le(&self, o: &Self) -> bool {
        let s = self.scale.max(o.scale);
        self.at_scale(s) <= o.at_scale(s)
    }
}
