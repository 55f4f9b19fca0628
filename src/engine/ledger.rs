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
    /// The payment number, from 1.
    pub number: u32,
    /// The due date, when the loan is dated.
    pub date: Option<jiff::civil::Date>,
    /// The scheduled payment (odd-days interest included on the first, a balloon on the last).
    pub payment: Decimal,
    /// Extra principal paid with it.
    pub extra: Decimal,
    /// The period's interest (odd-days interest included on the first), rounded
    /// to the minor unit.
    pub interest: Decimal,
    /// The principal repaid: payment plus extra less interest.
    pub principal: Decimal,
    /// The balance after the payment.
    pub balance: Decimal,
}

/// A posted schedule and its totals.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Ledger {
    /// The posted payments, in order.
    pub rows: Vec<Row>,
    /// Everything paid: payments, extra payments and odd-days interest.
    pub total_paid: Decimal,
    /// Every period's interest, odd-days interest included.
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
    /// Leading zeros of |mantissa|.
    mantissa_leading_zeros: u32,
    divisor: i128,
    /// mantissa / divisor in binary floating point, for the quotient's estimate.
    rate_f64: f64,
    minor_units: u32,
    rounding: InterestRounding,
}

impl InterestPoster {
    /// A poster of `rate` (the periodic rate), rounding to the minor units of `currency` by `rounding`.
    pub fn new(rate: Decimal, currency: Currency, rounding: InterestRounding) -> Self {
        Self {
            rate,
            mantissa: rate.mantissa(),
            mantissa_leading_zeros: rate.mantissa().unsigned_abs().leading_zeros(),
            divisor: POW10[rate.scale() as usize],
            rate_f64: rate.mantissa() as f64 / POW10[rate.scale() as usize] as f64,
            minor_units: currency.minor_units(),
            rounding,
        }
    }

    /// The same poster multiplying by the exact ratio `numerator/denominator`
    /// (denominator > 0) that `rate` rounds, when there is one (see
    /// [`AnnualRate::periodic_ratio`](super::rate::AnnualRate::periodic_ratio)):
    /// a balance times the ratio is a tie exactly when it is one. A product
    /// beyond 128 bits, far past any amount accepted, still takes the decimal.
    #[must_use]
    pub fn exactly(mut self, ratio: Option<(i128, i128)>) -> Self {
        if let Some((numerator, denominator)) = ratio.filter(|&(_, d)| d > 0) {
            self.mantissa = numerator;
            self.mantissa_leading_zeros = numerator.unsigned_abs().leading_zeros();
            self.divisor = denominator;
            self.rate_f64 = numerator as f64 / denominator as f64;
        }
        self
    }

    /// `balance` (minor units, ≥ 0) times the rate, rounded to the minor unit by
    /// `rule` (payment rounding: halves away from zero, or always up); `None` if
    /// the product does not fit 128 bits.
    pub fn times_rate(&self, balance: i128, rule: super::money::PaymentRounding) -> Option<i128> {
        let product = balance.checked_mul(self.mantissa)?;
        let (q, r) = (product / self.divisor, product % self.divisor);
        let up = match rule {
            super::money::PaymentRounding::Nearest => 2 * r.abs() >= self.divisor,
            super::money::PaymentRounding::Up => r != 0,
        };
        Some(if up { q + product.signum() } else { q })
    }

    /// The interest on `balance` minor units, in minor units.
    #[inline(always)]
    pub fn interest(&self, balance: i128) -> Result<i128> {
        // The common case, inlined into the posting loops: a balance below 2^62
        // and a rate of zero or more whose product fits 126 bits, and interest
        // below 2·10^15 minor units, where the binary-floating-point estimate
        // of the quotient is within a unit or two of it; one multiplication
        // and a correction make it exact.
        if (0..1 << 62).contains(&balance)
            && self.mantissa >= 0
            && 256 - balance.leading_zeros() - self.mantissa_leading_zeros <= 126
        {
            let product = balance * self.mantissa;
            let estimate = balance as i64 as f64 * self.rate_f64;
            if estimate < 2.0e15 {
                let mut q = i128::from(estimate as i64);
                let mut r = product - q * self.divisor;
                while r < 0 {
                    q -= 1;
                    r += self.divisor;
                }
                while r >= self.divisor {
                    q += 1;
                    r -= self.divisor;
                }
                let twice = 2 * r;
                let up = match self.rounding {
                    InterestRounding::HalfUp => twice >= self.divisor,
                    InterestRounding::HalfEven => {
                        twice > self.divisor || (twice == self.divisor && q & 1 == 1)
                    }
                };
                return Ok(q + i128::from(up));
            }
        }
        self.interest_general(balance)
    }

    /// [`Self::interest`] for any balance and rate.
    #[inline(never)]
    fn interest_general(&self, balance: i128) -> Result<i128> {
        // Bits of |balance| plus bits of |mantissa| at most 126: the product fits
        // i128 and is taken without the overflow-checking multiplication (a
        // library call); larger operands take the checked one.
        let bits = 256 - balance.unsigned_abs().leading_zeros() - self.mantissa_leading_zeros;
        let product = if bits <= 126 {
            Some(balance * self.mantissa)
        } else {
            balance.checked_mul(self.mantissa)
        };
        if let Some(product) = product {
            // balance × rate in binary floating point, within a unit or two of q.
            let estimate = i64::try_from(balance).map_or(f64::NAN, |b| b as f64 * self.rate_f64);
            let (q, r) = divide(product, self.divisor, estimate);
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

/// (product / divisor, product % divisor) as Rust's `/` and `%` give them (the
/// quotient truncated toward zero), for divisor > 0.
///
/// A 128-bit division is a slow library call; a binary-floating-point quotient is
/// within a unit or two of the exact one whenever it is below 2^52, and one
/// multiplication and a correction make it exact. Larger quotients take the
/// library division.
fn divide(product: i128, divisor: i128, estimate: f64) -> (i128, i128) {
    // Both within 64 bits (a rate of few decimals): the hardware divides.
    if let (Ok(p), Ok(d)) = (
        u64::try_from(product.unsigned_abs()),
        u64::try_from(divisor),
    ) {
        let (q, r) = (i128::from(p / d), i128::from(p % d));
        return if product < 0 { (-q, -r) } else { (q, r) };
    }
    if estimate.is_nan() || estimate.abs() >= 4.0e15 {
        return (product / divisor, product % divisor);
    }
    // Below 2^52 the estimate converts through i64 (one instruction each way).
    let mut q = i128::from(estimate as i64);
    let mut r = product - q * divisor;
    // Truncation toward zero: r carries the sign of product, |r| < divisor.
    while r.signum() * product.signum() < 0 {
        q -= product.signum();
        r += product.signum() * divisor;
    }
    while r.abs() >= divisor {
        q += product.signum();
        r -= product.signum() * divisor;
    }
    (q, r)
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

#[inline(always)]
/// An integer of minor units back to an amount.
pub fn from_minor(amount: i128, minor_units: u32) -> Decimal {
    let magnitude = amount.unsigned_abs();
    if magnitude < (1u128 << 96) && minor_units <= 28 {
        // The 96-bit mantissa as three words: what the checked constructor does,
        // without its checks (both hold here).
        return Decimal::from_parts(
            magnitude as u32,
            (magnitude >> 32) as u32,
            (magnitude >> 64) as u32,
            amount < 0,
            minor_units,
        );
    }
    from_minor_wide(amount, minor_units)
}

/// [`from_minor`] beyond 96 bits or 28 decimals: the checked constructor.
#[cold]
#[inline(never)]
fn from_minor_wide(amount: i128, minor_units: u32) -> Decimal {
    Decimal::from_i128_with_scale(amount, minor_units)
}

/// Posts a level-payment loan: at most `max_payments` payments of `payment`, the
/// last one absorbing the residue. Stops early when a payment would repay the balance.
/// Interest is `periodic_rate` times the balance, or `exact_rate` times it when
/// the rate is that ratio ([`InterestPoster::exactly`]).
///
/// # Errors
/// A payment that does not cover the interest of a period (the balance would never
/// fall), or an overflow.
pub fn post_level(
    principal: Decimal,
    periodic_rate: Decimal,
    exact_rate: Option<(i128, i128)>,
    payment: Decimal,
    max_payments: u32,
    currency: Currency,
    rounding: InterestRounding,
) -> Result<Ledger> {
    let e = currency.minor_units();
    let poster = InterestPoster::new(periodic_rate, currency, rounding).exactly(exact_rate);
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
    fn minor_units_read_as_the_decimal_constructor_reads_them() {
        // The decimal crate's checked constructor is the reference.
        for amount in [
            0i128,
            1,
            -1,
            99_955,
            -123_456_789,
            (1 << 96) - 1,
            -((1 << 96) - 1),
            1 << 70,
        ] {
            for e in [0, 2, 3] {
                assert_eq!(
                    from_minor(amount, e),
                    Decimal::from_i128_with_scale(amount, e)
                );
                assert_eq!(
                    from_minor(amount, e).to_string(),
                    Decimal::from_i128_with_scale(amount, e).to_string()
                );
            }
        }
    }

    #[test]
    fn the_quick_division_agrees_with_the_integer_division() {
        // Rust's own i128 `/` and `%` are the reference.
        let divisors = [
            1i128,
            7,
            1000,
            10i128.pow(18),
            10i128.pow(28),
            3 * 10i128.pow(27) + 1,
        ];
        let mut x: i128 = 0x1234_5678_9abc_def0;
        for _ in 0..20_000 {
            // A 128-bit linear congruential walk over products of every size.
            x = x
                .wrapping_mul(0x2545_f491_4f6c_dd1d)
                .wrapping_add(0x9e37_79b9_7f4a_7c15);
            let shift = (x as u128 % 120) as u32;
            let product = x >> shift;
            for d in divisors {
                let estimate = product as f64 / d as f64;
                assert_eq!(
                    divide(product, d, estimate),
                    (product / d, product % d),
                    "{product} / {d}"
                );
            }
        }
        for product in [
            0i128,
            1,
            -1,
            i128::MAX,
            i128::MIN + 1,
            10i128.pow(28) - 1,
            -(10i128.pow(28)),
        ] {
            for d in divisors {
                let estimate = product as f64 / d as f64;
                assert_eq!(
                    divide(product, d, estimate),
                    (product / d, product % d),
                    "{product} / {d}"
                );
            }
        }
    }

    /// The reference: product / divisor (both ≥ 0) by Rust's exact i128
    /// division, rounded by the remainder.
    fn rounded_quotient(product: i128, divisor: i128, rounding: InterestRounding) -> i128 {
        let (q, r) = (product / divisor, product % divisor);
        let up = match rounding {
            InterestRounding::HalfUp => 2 * r >= divisor,
            InterestRounding::HalfEven => 2 * r > divisor || (2 * r == divisor && q % 2 == 1),
        };
        q + i128::from(up)
    }

    #[test]
    fn interest_equals_exact_integer_division_rounded() {
        // Reference: Rust's exact i128 division of balance × mantissa by 10^scale.
        let rates = [
            "0.0059375",
            "0.005",
            "0.0055833333333333333333333333",
            "0.0004166666666666666666666667",
            "0.8333333333333333333333333333",
            "0",
            "0.0000000000000000000000000001",
        ];
        let mut seed: u64 = 0x2545_f491_4f6c_dd1d;
        let mut balances: Vec<i128> = vec![0, 1, 2, 5, 50, 99, 100, 101, (1 << 62) - 1, 1 << 62];
        for _ in 0..3000 {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            balances.push(i128::from(seed >> (seed % 50 + 14)));
        }
        for text in rates {
            let rate = d(text);
            let divisor = 10i128.pow(rate.scale());
            for rounding in [InterestRounding::HalfUp, InterestRounding::HalfEven] {
                let p = InterestPoster::new(rate, Currency::USD, rounding);
                for &b in &balances {
                    let Some(product) = b.checked_mul(rate.mantissa()) else {
                        // Beyond i128: the decimal path answers or refuses, never panics.
                        let _ = p.interest(b);
                        continue;
                    };
                    let want = rounded_quotient(product, divisor, rounding);
                    assert_eq!(p.interest(b).unwrap(), want, "{text} × {b}");
                    assert_eq!(p.interest(-b).unwrap(), -want, "{text} × −{b}");
                }
            }
        }
        // Exact ratios (nominal rates over their periods a year, in lowest
        // terms: 3.25 %/12, 4 %/12, 5 %/12, 4.42 %/26, 0, 6.125 %/365): the same
        // reference with the ratio's denominator for 10^scale.
        let ratios = [
            (13, 4800),
            (1, 300),
            (1, 240),
            (221, 130_000),
            (0, 1),
            (49, 292_000),
        ];
        for (numerator, divisor) in ratios {
            // The decimal the ratio rounds, as the periodic rate gives it.
            let rate = Decimal::from(numerator) / Decimal::from(divisor);
            for rounding in [InterestRounding::HalfUp, InterestRounding::HalfEven] {
                let p = InterestPoster::new(rate, Currency::USD, rounding)
                    .exactly(Some((numerator, divisor)));
                for &b in &balances {
                    let want = rounded_quotient(b * numerator, divisor, rounding);
                    assert_eq!(p.interest(b).unwrap(), want, "{numerator}/{divisor} × {b}");
                    assert_eq!(
                        p.interest(-b).unwrap(),
                        -want,
                        "{numerator}/{divisor} × −{b}"
                    );
                }
            }
        }
        // Exact halves: 1 × 0.5 rounds up (half up) or to even (0).
        let half = InterestPoster::new(d("0.5"), Currency::USD, InterestRounding::HalfEven);
        assert_eq!(half.interest(1).unwrap(), 0);
        assert_eq!(half.interest(3).unwrap(), 2);
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
            Some((1, 100)),
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
