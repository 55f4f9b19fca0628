//! Test inputs shared by unit tests: random decimals of every size, loan terms.

use rust_decimal::Decimal;

use super::money::{Currency, InterestRounding, PaymentRounding};
use super::rate::{AnnualRate, Frequency};
use super::terms::{LoanTerm, LoanTerms};

/// A decimal from its text.
pub fn d(s: &str) -> Decimal {
    s.parse().unwrap()
}

/// A monthly USD loan of `n` payments with the default roundings.
pub fn level_loan(principal: &str, percent: &str, n: u32) -> LoanTerms {
    loan_terms(principal, percent, LoanTerm::Payments(n))
}

/// A monthly USD loan with the default roundings.
pub fn loan_terms(principal: &str, percent: &str, term: LoanTerm) -> LoanTerms {
    LoanTerms {
        principal: principal.parse().unwrap(),
        currency: Currency::USD,
        rate: AnnualRate::from_percent(percent.parse().unwrap()).unwrap(),
        payment_frequency: Frequency::Monthly,
        compounding: None,
        term,
        payment_rounding: PaymentRounding::Nearest,
        interest_rounding: InterestRounding::HalfUp,
    }
}

/// `count` decimals from a xorshift generator started at `seed`: mantissas of
/// every size from 0 to 96 bits in turn, both signs, and a scale from 0 to 28
/// (or `scale` for all when given).
pub fn random_decimals(seed: u64, count: u32, scale: Option<u32>) -> Vec<Decimal> {
    let mut state = seed;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    (0..count)
        .map(|i| {
            let bits = i % 97;
            let wide = (u128::from(next()) << 64) | u128::from(next());
            let magnitude = if bits == 0 {
                0
            } else {
                (wide >> (128 - bits)) as i128
            };
            let sign = if next() & 1 == 1 { -1 } else { 1 };
            let scale = scale.unwrap_or((next() % 29) as u32);
            Decimal::from_i128_with_scale(sign * magnitude, scale)
        })
        .collect()
}
