//! The posted ledger: what a servicing system books, period by period, to the minor unit.
//!
//! Each period: interest = balance × periodic rate, rounded to the minor unit;
//! principal = payment − interest; the balance falls by the principal. The
//! last payment is the balance plus its interest, so the balance ends at exactly
//! zero. The loop runs on integers of minor units (i128) and falls back to
//! decimal arithmetic in the rare period whose product would not fit; both give
//! the same rounding of the same exact product.

use rust_decimal::Decimal;

use super::error::{EngineError, OrOverflow, Result};
use super::money::{Currency, InterestRounding};
use super::zdomain::ClosedForm;

/// One posted period.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Row {
    pub number: u32,
    /// The due date, when the loan is dated.
    pub date: Option<jiff::civil::Date>,
    /// The scheduled payment (odd-days interest included on the first, a balloon on the last).
    pub payment: Decimal,
    /// Extra principal paid with it.
    pub extra: Decimal,
    pub interest: Decimal,
    pub principal: Decimal,
    pub balance: Decimal,
}

/// A posted schedule and its totals.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Ledger {
    pub rows: Vec<Row>,
    pub total_paid: Decimal,
    pub total_interest: Decimal,
}

const POW10: [i128; 29] = {
    let mut t = [1i128; 29];
    let mut i = 1;
    while i < 29 {
        t[i] = t[i - 1] * 10;
        i += 1;
    }
    t
};

/// Rounds balance × rate (balance in minor units) to whole minor units.
#[derive(Debug, Clone, Copy)]
pub struct InterestPoster {
    rate: Decimal,
    mantissa: i128,
    divisor: i128,
    minor_units: u32,
    rounding: InterestRounding,
}

impl InterestPoster {
    pub fn new(rate: Decimal, currency: Currency, rounding: InterestRounding) -> Self {
        Self {
            rate,
            mantissa: rate.mantissa(),
            divisor: POW10[rate.scale() as usize],
            minor_units: currency.minor_units(),
            rounding,
        }
    }

    /// The interest on `balance` minor units, in minor units.
    pub fn interest(&self, balance: i128) -> Result<i128> {
        if let Some(product) = balance.checked_mul(self.mantissa) {
            let (q, r) = (product / self.divisor, product % self.divisor);
            let twice = r.abs() * 2;
            let up = match self.rounding {
                InterestRounding::HalfUp => twice >= self.divisor,
                InterestRounding::HalfEven => {
                    twice > self.divisor || (twice == self.divisor && q % 2 != 0)
                }
            };
            return Ok(if up { q + product.signum() } else { q });
        }
        // A balance beyond 96 bits of mantissa is beyond decimal arithmetic too.
        let b = Decimal::try_from_i128_with_scale(balance, self.minor_units)
            .map_err(|_| EngineError::overflow("a balance"))?;
        let exact = b
            .checked_mul(self.rate)
            .or_overflow("a period's interest")?;
        let rounded = exact.round_dp_with_strategy(self.minor_units, self.rounding.strategy());
        to_minor(rounded, self.minor_units)
    }
}

/// An amount as an integer of minor units (it must already fit the currency).
pub fn to_minor(amount: Decimal, minor_units: u32) -> Result<i128> {
    let mut a = amount;
    a.rescale(minor_units);
    if a.scale() != minor_units {
        return Err(EngineError::overflow("an amount in minor units"));
    }
    Ok(a.mantissa())
}

pub fn from_minor(amount: i128, minor_units: u32) -> Decimal {
    Decimal::from_i128_with_scale(amount, minor_units)
}

/// Posts a level-payment loan: at most `max_payments` payments of `payment`, the
/// last one absorbing the residue. Stops early when a payment would repay the balance.
///
/// # Errors
/// A payment that does not cover the interest of a period (the balance would never
/// fall), or an overflow.
pub fn post_level(
    principal: Decimal,
    periodic_rate: Decimal,
    payment: Decimal,
    max_payments: u32,
    currency: Currency,
    rounding: InterestRounding,
) -> Result<Ledger> {
    let e = currency.minor_units();
    let poster = InterestPoster::new(periodic_rate, currency, rounding);
    let mut balance = to_minor(principal, e)?;
    let pay = to_minor(payment, e)?;
    let mut rows = Vec::with_capacity(max_payments as usize);
    let (mut total_paid, mut total_interest) = (0i128, 0i128);
    for number in 1..=max_payments {
        let interest = poster.interest(balance)?;
        let owed = balance + interest;
        let this = if owed <= pay || number == max_payments {
            owed
        } else {
            pay
        };
        let principal_part = this - interest;
        balance -= principal_part;
        total_paid += this;
        total_interest += interest;
        rows.push(Row {
            number,
            date: None,
            payment: from_minor(this, e),
            extra: Decimal::ZERO,
            interest: from_minor(interest, e),
            principal: from_minor(principal_part, e),
            balance: from_minor(balance, e),
        });
        if balance == 0 {
            break;
        }
    }
    Ok(Ledger {
        rows,
        total_paid: from_minor(total_paid, e),
        total_interest: from_minor(total_interest, e),
    })
}

/// How far the posted ledger strays from the closed form with the same posted payment.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Reconciliation {
    /// The largest |ledger balance − closed-form balance| over the regular payments.
    pub largest_drift: Decimal,
    /// The payment number where it occurs (0 when there is no regular payment).
    pub at_payment: u32,
    /// The final posted payment less the closed form's a·x[n−1] (what it would be unrounded).
    pub final_payment_drift: Decimal,
    /// The bound ½ minor unit × Σ_{j<k} a^j on the drift at that payment (rounding can do no more).
    pub bound: Decimal,
}

/// Compares every posted balance with the closed form (screened in binary floating
/// point, the largest gaps measured in decimal: [`ClosedForm::largest_gap`]).
pub fn reconcile(
    ledger: &Ledger,
    closed_form: &ClosedForm,
    a: Decimal,
    currency: Currency,
) -> Result<Reconciliation> {
    let n = ledger.rows.len() as u32;
    // Every row but the last (which takes the residue) is compared.
    let compared = n.saturating_sub(1);
    let (largest, at) = closed_form
        .largest_gap(compared, |m| ledger.rows[m as usize - 1].balance)?
        .unwrap_or((Decimal::ZERO, 0));
    let final_drift = match ledger.rows.last() {
        Some(last) => {
            last.payment
                - a.checked_mul(closed_form.eval(n - 1)?)
                    .or_overflow("the final payment")?
        }
        None => Decimal::ZERO,
    };
    // Σ_{j<at} a^j = (a^at − 1)/(a − 1), or `at` when a = 1 (a bound for the report).
    let sum = if a == Decimal::ONE {
        Decimal::from(at)
    } else {
        (super::zdomain::pow(a, at)? - Decimal::ONE)
            .checked_div(a - Decimal::ONE)
            .or_overflow("the drift bound")?
    };
    let bound = currency.minor_unit() / Decimal::TWO * sum;
    Ok(Reconciliation {
        largest_drift: largest,
        at_payment: at,
        final_payment_drift: final_drift,
        bound,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn integer_rounding_matches_decimal_rounding() {
        let rate = d("0.0059375");
        for rounding in [InterestRounding::HalfUp, InterestRounding::HalfEven] {
            let p = InterestPoster::new(rate, Currency::USD, rounding);
            for b in [1i128, 200, 8421, 123_456_789, 25_000_000] {
                let exact = Decimal::from_i128_with_scale(b, 2) * rate;
                let want =
                    to_minor(exact.round_dp_with_strategy(2, rounding.strategy()), 2).unwrap();
                assert_eq!(p.interest(b).unwrap(), want, "b = {b}");
            }
        }
    }

    #[test]
    fn a_short_ledger_posted_by_hand() {
        // 1,000 at 1 % a period, three payments of 340.02 (worked by hand):
        // 10.00/330.02/669.98; 6.70/333.32/336.66; 3.37 + 336.66 = 340.03 final.
        let l = post_level(
            d("1000"),
            d("0.01"),
            d("340.02"),
            3,
            Currency::USD,
            InterestRounding::HalfUp,
        )
        .unwrap();
        assert_eq!(l.rows[0].interest, d("10.00"));
        assert_eq!(l.rows[1].balance, d("336.66"));
        assert_eq!(l.rows[2].payment, d("340.03"));
        assert_eq!(l.rows[2].balance, d("0.00"));
        assert_eq!(l.total_interest, d("20.07"));
    }
}
