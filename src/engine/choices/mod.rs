//! Choosing between loans: refinancing ([`refinance`]), rate-and-points options
//! ([`points`]) and a payment grid ([`grid`]).
//!
//! A choice between two ways of paying is a comparison of two posted loans month
//! by month. Each way is a [`CostPath`]: the cash paid at the start, then each
//! month's payments, and the balance still owed. What a way has cost the
//! borrower by month m is
//!
//! > cost(m) = upfront + payments 1..m + balance after payment m,
//!
//! what the borrower would have paid had the loan been closed out that month. Two
//! break-evens are drawn from the paths:
//!
//! - the simple one, upfront costs ÷ monthly saving rounded up (common practice,
//!   no source: consumer booklets use it);
//! - the balance-aware one, the first month at which the way that cost more at the
//!   start costs no more, counting what each still owes, so that a longer term
//!   (a lower payment that repays more slowly) cannot look like a saving.
//!
//! Both paths are posted ledgers (the same postings as a schedule), so every
//! figure is to the minor unit what a servicing system would post.

pub mod grid;
pub mod points;
pub mod refinance;

use rust_decimal::{Decimal, RoundingStrategy};

use super::error::{OrOverflow, Result};
use super::ledger::Row;

/// The horizons every choice is costed at, in months: 5, 7 and 10 years.
pub const HORIZONS: [u32; 3] = [60, 84, 120];

/// What one way of paying has cost by each month.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CostPath {
    /// Paid at the start (costs paid in cash, less cash received); may be negative.
    pub upfront: Decimal,
    /// `paid[m]`: the payments 1 to m, extra payments included; `paid[0]` is zero.
    paid: Vec<Decimal>,
    /// `owed[m]`: the balance after payment m; `owed[0]` is the principal.
    owed: Vec<Decimal>,
}

impl CostPath {
    /// The path of a posted loan of `principal` whose rows are `rows`.
    ///
    /// # Errors
    /// An overflow of the running sum.
    pub fn posted(upfront: Decimal, principal: Decimal, rows: &[Row]) -> Result<Self> {
        let mut paid = Vec::with_capacity(rows.len() + 1);
        let mut owed = Vec::with_capacity(rows.len() + 1);
        paid.push(Decimal::ZERO);
        owed.push(principal);
        let mut sum = Decimal::ZERO;
        for r in rows {
            sum = sum
                .checked_add(r.payment)
                .and_then(|s| s.checked_add(r.extra))
                .or_overflow("the payments' sum")?;
            paid.push(sum);
            owed.push(r.balance);
        }
        Ok(Self {
            upfront,
            paid,
            owed,
        })
    }

    /// The number of payments.
    pub fn months(&self) -> u32 {
        (self.paid.len() - 1) as u32
    }

    /// The payments 1 to m (all of them after the last).
    pub fn paid(&self, m: u32) -> Decimal {
        self.paid[(m as usize).min(self.paid.len() - 1)]
    }

    /// The balance after payment m (zero after the last).
    pub fn owed(&self, m: u32) -> Decimal {
        self.owed.get(m as usize).copied().unwrap_or(Decimal::ZERO)
    }

    /// What this way has cost by month m: upfront + paid(m) + owed(m).
    pub fn cost(&self, m: u32) -> Decimal {
        self.upfront + self.paid(m) + self.owed(m)
    }
}

/// The simple break-even: `extra_upfront` ÷ `monthly_saving`, rounded up to a
/// whole month (common practice, no source). Zero when nothing extra is paid
/// upfront; `None` when there is something to recover and no saving to recover it.
pub fn simple_break_even(extra_upfront: Decimal, monthly_saving: Decimal) -> Option<u32> {
    if extra_upfront <= Decimal::ZERO {
        return Some(0);
    }
    if monthly_saving <= Decimal::ZERO {
        return None;
    }
    let months = (extra_upfront / monthly_saving)
        .round_dp_with_strategy(0, RoundingStrategy::ToPositiveInfinity);
    u32::try_from(months.mantissa() / 10i128.pow(months.scale())).ok()
}

/// The balance-aware break-even of `later` against `earlier`: the first month m
/// (from 0 to the end of the longer path) at which `later` has cost no more than
/// `earlier`, counting what each still owes. `None` when it never has.
pub fn balance_break_even(earlier: &CostPath, later: &CostPath) -> Option<u32> {
    let end = earlier.months().max(later.months());
    (0..=end).find(|&m| later.cost(m) <= earlier.cost(m))
}

/// The first month after `from` at which `later` again costs more than `earlier`
/// (its costs recovered, then lost again: a longer term's further interest).
pub fn falls_back_after(earlier: &CostPath, later: &CostPath, from: u32) -> Option<u32> {
    let end = earlier.months().max(later.months());
    (from + 1..=end).find(|&m| later.cost(m) > earlier.cost(m))
}

/// The horizons costed, in order: 5, 7 and 10 years, and the one asked for.
pub fn horizons(chosen: Option<u32>) -> Vec<u32> {
    let mut h = HORIZONS.to_vec();
    if let Some(c) = chosen {
        if !h.contains(&c) {
            h.push(c);
            h.sort_unstable();
        }
    }
    h
}

/// A simple break-even within `months` (the loan that recovers the costs ends
/// by then): a later month is no break-even.
pub fn within(break_even: Option<u32>, months: u32) -> Option<u32> {
    break_even.filter(|&m| m <= months)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(number: u32, payment: &str, balance: &str) -> Row {
        Row {
            number,
            date: None,
            payment: payment.parse().unwrap(),
            extra: Decimal::ZERO,
            interest: Decimal::ZERO,
            principal: Decimal::ZERO,
            balance: balance.parse().unwrap(),
        }
    }

    #[test]
    fn simple_break_even_rounds_up_and_is_zero_without_costs() {
        // 4,000 of points recovered at 65.77 a month: 4000 / 65.77 = 60.8…, so 61
        // months (common practice, no source).
        assert_eq!(
            simple_break_even("4000".parse().unwrap(), "65.77".parse().unwrap()),
            Some(61)
        );
        assert_eq!(
            simple_break_even("600".parse().unwrap(), "50".parse().unwrap()),
            Some(12)
        );
        assert_eq!(simple_break_even(Decimal::ZERO, Decimal::ZERO), Some(0));
        assert_eq!(simple_break_even("1".parse().unwrap(), Decimal::ZERO), None);
        assert_eq!(
            simple_break_even("1".parse().unwrap(), "-3".parse().unwrap()),
            None
        );
    }

    #[test]
    fn a_path_costs_its_payments_and_what_is_still_owed() {
        let p = CostPath::posted(
            "10".parse().unwrap(),
            "200".parse().unwrap(),
            &[row(1, "101", "100"), row(2, "101", "0")],
        )
        .unwrap();
        assert_eq!(p.months(), 2);
        assert_eq!(p.cost(0).to_string(), "210");
        assert_eq!(p.cost(1).to_string(), "211");
        assert_eq!(p.cost(2).to_string(), "212");
        assert_eq!(p.cost(9).to_string(), "212");
        let q =
            CostPath::posted(Decimal::ZERO, "200".parse().unwrap(), &[row(1, "205", "0")]).unwrap();
        // q costs 200 at the start against p's 210, then 205 for good against 211 and 212.
        assert_eq!(balance_break_even(&p, &q), Some(0));
        assert_eq!(balance_break_even(&q, &p), None);
        assert_eq!(falls_back_after(&p, &q, 0), None);
    }
}
