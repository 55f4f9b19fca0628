//! Level-payment loans solved from the closed form of their recurrence.
//!
//! A loan's balance after payment k obeys x[k+1] = a·x[k] − P, x[0] = principal,
//! a = 1 + i. Its closed form (from [`Recurrence::solve`]) is linear in the
//! principal and in P: x[k] = principal·h[k] − P·u[k], where h is the
//! closed form with a unit principal and no payment and u the one with a unit
//! payment and no principal. Every solution below comes from those two.

use rust_decimal::Decimal;

use super::error::{EngineError, OrOverflow, Result};
use super::recurrence::{Input, Recurrence, Solution};
use super::search::{first_whole, narrow, Side, Trial};
use super::zdomain::ClosedForm;

pub use super::terms::MAX_PAYMENTS;

/// The closed forms h[k] (unit principal) and u[k] (unit payment) of a rate.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct UnitResponses {
    /// The interest factor a = 1 + i.
    pub a: Decimal,
    /// h[k]: a unit principal after k periods with no payment, a^k.
    pub principal_response: ClosedForm,
    /// u[k]: a unit payment each period accumulated over k periods, Σ_{j<k} a^j.
    pub payment_response: ClosedForm,
}

impl UnitResponses {
    /// # Errors
    /// An overflow.
    pub fn for_rate(periodic_rate: Decimal) -> Result<Self> {
        let a = Decimal::ONE
            .checked_add(periodic_rate)
            .or_overflow("the interest factor")?;
        let h = Recurrence::homogeneous(a, Decimal::ONE).closed_form()?;
        let u = Recurrence {
            a,
            x0: Decimal::ZERO,
            inputs: vec![Input::Step {
                amount: Decimal::ONE,
            }],
        }
        .closed_form()?;
        Ok(Self {
            a,
            principal_response: h,
            payment_response: u,
        })
    }

    /// (h[n]/a^n, u[n]/a^n): the ratio of the two is all a solution needs.
    pub fn at_scaled(&self, n: u32) -> Result<(Decimal, Decimal)> {
        let s = self.a.max(Decimal::ONE);
        Ok((
            self.principal_response.eval_scaled(n, s)?,
            self.payment_response.eval_scaled(n, s)?,
        ))
    }
}

/// The balance recurrence of a level loan, solved.
///
/// # Errors
/// An overflow.
pub fn solve_balance(
    principal: Decimal,
    periodic_rate: Decimal,
    payment: Decimal,
) -> Result<Solution> {
    let a = Decimal::ONE
        .checked_add(periodic_rate)
        .or_overflow("the interest factor")?;
    Recurrence {
        a,
        x0: principal,
        inputs: vec![Input::Step { amount: -payment }],
    }
    .solve()
}

/// The exact (unrounded) level payment that repays `principal` in `n` payments:
/// x[n] = 0 gives P = principal·h[n] / u[n]. Both are evaluated divided by a^n
/// ([`ClosedForm::eval_scaled`]), so long terms at high rates do not overflow.
///
/// # Errors
/// `n` of zero or above [`MAX_PAYMENTS`], or an overflow.
///
/// # Example
/// ```
/// // 100,000 at 6 % a year, 0.5 % a month, over 360 months: 599.55 a month
/// // (the handbook figure for a 30-year loan at 6 %; common practice, no source).
/// use residue::engine::loan::payment_for_term;
/// let p = payment_for_term("100000".parse().unwrap(), "0.005".parse().unwrap(), 360).unwrap();
/// assert_eq!(p.round_dp(2).to_string(), "599.55");
/// ```
pub fn payment_for_term(principal: Decimal, periodic_rate: Decimal, n: u32) -> Result<Decimal> {
    check_term(n)?;
    let r = UnitResponses::for_rate(periodic_rate)?;
    let (h, u) = r.at_scaled(n)?;
    principal
        .checked_mul(h)
        .and_then(|v| v.checked_div(u))
        .or_overflow("the payment")
}

/// The principal that `n` payments of `payment` repay: x[n] = 0 gives principal = P·u[n]/h[n].
///
/// # Errors
/// `n` out of range, or an overflow.
pub fn principal_for_payment(payment: Decimal, periodic_rate: Decimal, n: u32) -> Result<Decimal> {
    check_term(n)?;
    let r = UnitResponses::for_rate(periodic_rate)?;
    let (h, u) = r.at_scaled(n)?;
    payment
        .checked_mul(u)
        .and_then(|v| v.checked_div(h))
        .or_overflow("the principal")
}

fn check_term(n: u32) -> Result<()> {
    if n == 0 || n > MAX_PAYMENTS {
        return Err(EngineError::out_of_range(
            "term_payments",
            format!("the number of payments must be 1 to {MAX_PAYMENTS}"),
        ));
    }
    Ok(())
}

/// The balance after payment `k`, in O(1): the closed form evaluated at k.
///
/// # Errors
/// An overflow.
pub fn balance_after(
    principal: Decimal,
    periodic_rate: Decimal,
    payment: Decimal,
    k: u32,
) -> Result<Decimal> {
    solve_balance(principal, periodic_rate, payment)?
        .closed_form
        .eval(k)
}

/// The number of payments `payment` needs: the smallest n with x[n] ≤ 0.
///
/// The closed form gives n through a logarithm; a binary-floating-point estimate
/// of that logarithm picks the candidate and the decimal closed form confirms it
/// exactly at n − 1 and n (moving the candidate until both agree), so no money
/// figure depends on the estimate.
///
/// # Errors
/// A payment that does not exceed the first period's interest, a term longer
/// than [`MAX_PAYMENTS`], or an overflow.
pub fn term_for_payment(
    principal: Decimal,
    periodic_rate: Decimal,
    payment: Decimal,
) -> Result<u32> {
    let interest = principal
        .checked_mul(periodic_rate)
        .or_overflow("the first period's interest")?;
    if payment <= interest {
        return Err(EngineError::no_solution(
            Some("payment"),
            format!("the payment must exceed the first period's interest ({}) or the balance never falls", interest.round_dp(4)),
        ));
    }
    let cf = solve_balance(principal, periodic_rate, payment)?.closed_form;
    let above = |n: u32| -> Result<bool> { Ok(cf.eval(n)? > Decimal::ZERO) };
    let estimate = estimate_term(principal, periodic_rate, payment);
    let mut n = estimate.clamp(1, MAX_PAYMENTS + 1);
    // Walk to the exact answer; the estimate is off by at most a step or two.
    let mut guard = 0;
    loop {
        guard += 1;
        if guard > 64 {
            // Fall back on bisection over the whole range (never reached in tests).
            return bisect_term(&cf);
        }
        if n > MAX_PAYMENTS {
            if above(MAX_PAYMENTS)? {
                return Err(too_long());
            }
            n = MAX_PAYMENTS;
            continue;
        }
        if above(n)? {
            n += 1;
        } else if n > 1 && !above(n - 1)? {
            n -= 1;
        } else {
            return Ok(n);
        }
    }
}

fn too_long() -> EngineError {
    EngineError::no_solution(
        Some("payment"),
        format!("the payment would need more than {MAX_PAYMENTS} payments to repay the loan"),
    )
}

fn bisect_term(cf: &ClosedForm) -> Result<u32> {
    if cf.eval(MAX_PAYMENTS)? > Decimal::ZERO {
        return Err(too_long());
    }
    // x[0] > 0 ≥ x[MAX_PAYMENTS]: the first n with x[n] ≤ 0.
    let (n, _) = first_whole(0, MAX_PAYMENTS, |n| Ok(cf.eval(n)? <= Decimal::ZERO))?;
    Ok(n)
}

/// n ≈ −ln(1 − x0·i/P)/ln(1 + i), or x0/P at 0 %; an estimate only.
fn estimate_term(principal: Decimal, periodic_rate: Decimal, payment: Decimal) -> u32 {
    use rust_decimal::prelude::ToPrimitive;
    let (x0, i, p) = (principal.to_f64(), periodic_rate.to_f64(), payment.to_f64());
    let (Some(x0), Some(i), Some(p)) = (x0, i, p) else {
        return 1;
    };
    let n = if i == 0.0 {
        x0 / p
    } else {
        -(1.0 - x0 * i / p).ln() / i.ln_1p()
    };
    if n.is_finite() && n > 0.0 {
        n.ceil().min(f64::from(MAX_PAYMENTS + 1)) as u32
    } else {
        1
    }
}

/// The periodic rate at which `n` payments of `payment` repay `principal`.
///
/// Dividing x[n] = 0 by a^n gives g(i) = principal − P·(1 − v^n)/i with v = 1/(1 + i),
/// which rises with i: g(0) = principal − n·P < 0 and g(P/principal) = principal·v^n > 0
/// bracket the root. Newton's method runs inside that bracket and bisects whenever a
/// step would leave it, so it always converges; it stops below 1e-24 in the rate.
///
/// # Errors
/// Payments that total less than the principal (no rate of 0 % or more repays it),
/// `n` out of range, or an overflow.
pub fn rate_for_payment(principal: Decimal, payment: Decimal, n: u32) -> Result<Decimal> {
    check_term(n)?;
    let nd = Decimal::from(n);
    let total = payment
        .checked_mul(nd)
        .or_overflow("the total of payments")?;
    if total < principal {
        return Err(EngineError::no_solution(
            Some("payment"),
            "the payments total less than the principal: no rate of 0 % or more repays it",
        ));
    }
    if total == principal {
        return Ok(Decimal::ZERO);
    }
    let g = |i: Decimal| -> Result<(Decimal, Decimal)> {
        let v = Decimal::ONE
            .checked_div(Decimal::ONE + i)
            .or_overflow("the discount factor")?;
        let vn = super::power::pow(v, n).or_overflow("the discount factor")?;
        let factor = (Decimal::ONE - vn)
            .checked_div(i)
            .or_overflow("the annuity factor")?;
        let value = principal
            - payment
                .checked_mul(factor)
                .or_overflow("the rate equation")?;
        // g'(i) = P·[(1 − v^n)/i − n·v^(n+1)] / i
        let slope = payment
            .checked_mul(factor - nd.checked_mul(vn * v).or_overflow("the slope")?)
            .and_then(|s| s.checked_div(i))
            .or_overflow("the slope")?;
        Ok((value, slope))
    };
    let lo = Decimal::ZERO;
    let hi = payment
        .checked_div(principal)
        .or_overflow("the rate bracket")?;
    // Start from the first-order expansion of the annuity factor: i ≈ 2(nP − x0)/(P·n(n+1)).
    let first = (total - principal) * Decimal::TWO;
    let mut i = first
        .checked_div(payment * nd * (nd + Decimal::ONE))
        .unwrap_or(hi / Decimal::TWO);
    if i <= lo || i >= hi {
        i = hi / Decimal::TWO;
    }
    let tolerance = Decimal::new(1, 24);
    let found = narrow(
        lo,
        hi,
        i,
        200,
        |i| {
            let (value, slope) = g(i)?;
            // g rises through its root: a value above zero is above it.
            let side = if value.is_zero() {
                Side::Root
            } else if value > Decimal::ZERO {
                Side::Above
            } else {
                Side::Below
            };
            let next = if slope.is_zero() {
                None
            } else {
                value.checked_div(slope).map(|s| i - s)
            };
            Ok(Trial { side, next })
        },
        |lo, hi, i, next| (next - i).abs() < tolerance || hi - lo < tolerance,
    )?;
    Ok(found.at)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    fn cents(x: Decimal) -> Decimal {
        x.round_dp_with_strategy(2, rust_decimal::RoundingStrategy::MidpointAwayFromZero)
    }

    #[test]
    fn known_payments_on_a_six_percent_loan() {
        // 100,000 at 6 % nominal, monthly: 1,110.21 over 120 and 599.55 over 360
        // (common practice, no source).
        assert_eq!(
            cents(payment_for_term(d("100000"), d("0.005"), 120).unwrap()),
            d("1110.21")
        );
        assert_eq!(
            cents(payment_for_term(d("100000"), d("0.005"), 360).unwrap()),
            d("599.55")
        );
    }

    #[test]
    fn amortization_factors_printed_in_7_cfr_1942_19() {
        // 7 CFR 1942.19(e)(2): 100,000 at 5 %; factors per $1, rounded up to five places:
        // .05929 for 38 annual payments, .02952 for 76 semiannual, .00491 for 456 monthly.
        let up5 =
            |x: Decimal| x.round_dp_with_strategy(5, rust_decimal::RoundingStrategy::AwayFromZero);
        assert_eq!(
            up5(payment_for_term(d("1"), d("0.05"), 38).unwrap()),
            d("0.05929")
        );
        assert_eq!(
            up5(payment_for_term(d("1"), d("0.025"), 76).unwrap()),
            d("0.02952")
        );
        let monthly = d("0.05") / d("12");
        assert_eq!(
            up5(payment_for_term(d("1"), monthly, 456).unwrap()),
            d("0.00491")
        );
    }

    #[test]
    fn a_zero_rate_loan_divides_evenly() {
        assert_eq!(payment_for_term(d("12000"), d("0"), 48).unwrap(), d("250"));
        assert_eq!(term_for_payment(d("12000"), d("0"), d("250")).unwrap(), 48);
        assert_eq!(
            term_for_payment(d("12000"), d("0"), d("249.99")).unwrap(),
            49
        );
    }

    #[test]
    fn term_for_payment_is_the_first_payment_that_clears_the_balance() {
        assert_eq!(
            term_for_payment(d("100000"), d("0.005"), d("599.55")).unwrap(),
            361
        );
        assert_eq!(
            term_for_payment(d("100000"), d("0.005"), d("599.56")).unwrap(),
            360
        );
        assert!(term_for_payment(d("100000"), d("0.005"), d("500")).is_err());
        assert!(
            term_for_payment(d("100000"), d("0.005"), d("500.00000000001")).is_err(),
            "over 6,000 payments"
        );
    }

    #[test]
    fn rate_for_payment_inverts_payment_for_term() {
        for (rate, n) in [
            ("0.005", 360u32),
            ("0.0059375", 180),
            ("0.0001", 12),
            ("0.08", 6000),
            ("0.3", 24),
        ] {
            let i = d(rate);
            let p = payment_for_term(d("250000"), i, n).unwrap();
            let back = rate_for_payment(d("250000"), p, n).unwrap();
            assert!((back - i).abs() < d("1e-20"), "{rate}: {back}");
        }
        assert_eq!(
            rate_for_payment(d("1200"), d("100"), 12).unwrap(),
            Decimal::ZERO
        );
        assert!(rate_for_payment(d("1200"), d("99.99"), 12).is_err());
    }

    #[test]
    fn principal_for_payment_inverts_payment_for_term() {
        let p = payment_for_term(d("180000"), d("0.00625"), 240).unwrap();
        let back = principal_for_payment(p, d("0.00625"), 240).unwrap();
        assert!((back - d("180000")).abs() < d("1e-18"));
    }

    #[test]
    fn balance_after_a_payment_without_stepping() {
        // After 120 of 360 payments of 599.55 on 100,000 at 0.5 %:
        // (100000 − 119910)·1.005^120 + 119910, evaluated with Python's decimal at 50 digits.
        let b = balance_after(d("100000"), d("0.005"), d("599.55"), 120).unwrap();
        let want = (d("100000") - d("119910"))
            * rust_decimal::MathematicalOps::powi(&d("1.005"), 120)
            + d("119910");
        assert!((b - want).abs() < d("1e-18"));
    }
}
