//! The solver of Appendix J (b)(8): the unit-period rate that balances the
//! equation, by Newton's method kept inside a bracket from a binary estimate,
//! and the APR it gives. The EU APRC uses the same bracketed iteration.

use rust_decimal::prelude::{FromPrimitive, ToPrimitive};
use rust_decimal::{Decimal, RoundingStrategy};

use super::equation::{check_unit_flows, unit_equation, unit_value, BinaryFlows};
use super::flows::UnitFlow;
use super::unit_period::UnitPeriod;
use crate::engine::error::{EngineError, OrOverflow, Result};
use crate::engine::search::{narrow, widen, Midpoint, Side, Trial, Widened};

/// Steps of the decimal iteration stop below this change in the rate.
const TOLERANCE: Decimal = Decimal::from_parts(1, 0, 0, false, 22); // 1e-22

/// Newton/bisection steps allowed; bisection alone narrows a bracket of width
/// 2^40 to 1e-22 in about 200.
const MAX_ITERATIONS: u32 = 300;

/// The bracket's upper end is doubled from 1 at most this often (i ≤ 2^40).
const MAX_DOUBLINGS: u32 = 40;

/// The APR found by the actuarial method.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AprResult {
    /// The APR in percent, unrounded (i × unit-periods per year × 100).
    pub apr_percent: Decimal,
    /// The APR in percent rounded to two decimals, halves up ((b)(9) asks for
    /// the two decimals to be certain; the rounding of halves is common practice).
    pub apr_percent_rounded: Decimal,
    /// The unit-period rate i.
    pub periodic_rate: Decimal,
    /// Unit-periods per year.
    pub unit_periods_per_year: Decimal,
    /// Newton/bisection steps of the decimal iteration (after the binary estimate);
    /// 0 when the payments equal the advances and the rate is exactly zero.
    pub iterations: u32,
}

/// Solves the general equation of Appendix J (b)(8) for the unit-period rate and
/// the APR.
///
/// The rate is sought at 0 or above. When no payment comes before an advance
/// the root is unique: divided by the discount factor of the last advance, every
/// advance's term rises with i and every payment's falls.
///
/// # Errors
/// No advances or no payments, a negative amount, a count of zero, a fraction
/// outside [0, 1), flows beyond [`MAX_UNIT_PERIODS`], a unit-period over a year or
/// of zero length, payments that total less than the advances (the APR would be
/// negative), no rate that balances the equation, or an overflow.
pub fn solve_apr(
    advances: &[UnitFlow],
    payments: &[UnitFlow],
    unit: UnitPeriod,
) -> Result<AprResult> {
    unit.check()?;
    let total_advanced = check_unit_flows(advances, "advances")?;
    let total_paid = check_unit_flows(payments, "payments")?;
    let (num, den) = unit.per_year_ratio();
    let per_year = unit.per_year();
    let result = |i: Decimal, iterations: u32| -> Result<AprResult> {
        let apr_percent = i
            .checked_mul(Decimal::from(num) * Decimal::ONE_HUNDRED)
            .and_then(|x| x.checked_div(Decimal::from(den)))
            .or_overflow("the APR")?;
        Ok(AprResult {
            apr_percent,
            apr_percent_rounded: apr_percent
                .round_dp_with_strategy(2, RoundingStrategy::MidpointAwayFromZero),
            periodic_rate: i,
            unit_periods_per_year: per_year,
            iterations,
        })
    };
    if total_paid < total_advanced {
        return Err(EngineError::no_solution(
            Some("payments"),
            "the payments total less than the advances: the APR would be negative",
        ));
    }
    if total_paid == total_advanced {
        return result(Decimal::ZERO, 0);
    }
    let binary = BinaryFlows::new(advances, payments);
    let estimate = binary
        .as_ref()
        .and_then(|b| estimate_rate(|i| b.equation(i)));
    // The binary estimate polished by Newton steps on the decimal equation alone
    // (its slope taken in binary floating point: a slope off by 1e-15 of itself
    // changes each step by as little, not the root); the full bracketed iteration
    // should the polish not settle.
    if let (Some(b), Some(e)) = (&binary, estimate) {
        if let Some(found) = polish(
            |i| unit_equation(advances, payments, i),
            |i| unit_value(advances, payments, i),
            b,
            e,
        )? {
            return result(found.0, found.1);
        }
    }
    let (i, iterations) = solve_falling(
        |i| unit_equation(advances, payments, i),
        estimate,
        "payments",
    )?;
    result(i, iterations)
}

/// Newton steps x ← x − G(x)/G'(x) from `estimate`; the root once a step is
/// below [`TOLERANCE`], or once the first step is proven close enough (below),
/// with the number of decimal evaluations; `None` when the steps do not settle
/// within four.
///
/// The first step takes G and G' in decimal (`equation`). Its error follows from
/// Taylor's theorem: with e0 = x − root, G(x) = G'(x)·e0 − ½G''(ξ)·e0² for some ξ
/// between them, so the step δ = G(x)/G'(x) leaves e1 = ρ·e0 + ½(G''(ξ)/G'(x))·e0²,
/// ρ the relative error of the computed slope. Every flow a·v^t/(1 + f·i) has
/// |d/di| ≤ |a|·(t + 1) and |d²/di²| ≤ |a|·(t + 2)² for i ≥ 0 ([`BinaryFlows::bounds`]),
/// so with q = H/|G'| and p = A/|G'|: when q·|δ| ≤ 1/4, |e0| ≤ 2|δ| and
/// |e1| ≤ 2ρ|δ| + 2q·δ². The step is the root when that is below a tenth of
/// [`TOLERANCE`], taking ρ = 1e-20·p (a 28-digit sum of terms as large as A);
/// otherwise the later steps (G in decimal, G' in binary floating point) go on
/// until a step is below [`TOLERANCE`].
fn polish(
    equation: impl Fn(Decimal) -> Result<(Decimal, Decimal)>,
    value: impl Fn(Decimal) -> Result<Decimal>,
    binary: &BinaryFlows,
    estimate: Decimal,
) -> Result<Option<(Decimal, u32)>> {
    let Some(start) = estimate.to_f64() else {
        return Ok(None);
    };
    let Some(slope) = binary
        .equation(start)
        .map(|(_, s)| s)
        .filter(|s| s.is_finite() && *s < 0.0)
        .and_then(Decimal::from_f64)
    else {
        return Ok(None);
    };
    if estimate <= Decimal::ZERO {
        return Ok(None);
    }
    let mut x = estimate;
    let (g, exact_slope) = equation(x)?;
    if g.is_zero() {
        return Ok(Some((x, 1)));
    }
    if exact_slope < Decimal::ZERO {
        if let Some(delta) = g.checked_div(exact_slope) {
            let next = x - delta;
            let (first, second) = binary.bounds();
            if let (Some(d), Some(s)) = (delta.abs().to_f64(), exact_slope.abs().to_f64()) {
                let (p, q) = (first / s, second / s);
                let bound = 2.0 * 1e-20 * p * d + 2.0 * q * d * d;
                // TOLERANCE / 10, with room for the rounding of the bound itself.
                if next > Decimal::ZERO && q * d <= 0.25 && bound.is_finite() && bound <= 0.9e-23 {
                    return Ok(Some((next, 1)));
                }
            }
        }
    }
    for step in 1..=4 {
        let g = if step == 1 { g } else { value(x)? };
        if g.is_zero() {
            return Ok(Some((x, step)));
        }
        let Some(delta) = g.checked_div(slope) else {
            return Ok(None);
        };
        let next = x - delta;
        if next <= Decimal::ZERO {
            return Ok(None);
        }
        if delta.abs() < TOLERANCE {
            return Ok(Some((next, step)));
        }
        x = next;
    }
    Ok(None)
}

/// A first estimate of the root of a falling equation with g(0) > 0, in binary
/// floating point: the bracketed Newton iteration of [`solve_falling`] to about
/// 1e-13. `None` when the arithmetic fails; the decimal solver then starts from
/// the middle of its bracket.
pub(super) fn estimate_rate(g: impl Fn(f64) -> Option<(f64, f64)>) -> Option<Decimal> {
    let side = |x: f64| g(x).map(|(value, _)| falling(value)).ok_or(());
    let (lo, hi) = match widen(0.0, 1.0, MAX_DOUBLINGS, side, |hi| Ok(Some(hi * 2.0))).ok()? {
        Widened::Bracket { low, high, .. } => (low, high),
        Widened::Root { at, .. } => return Decimal::from_f64(at),
        Widened::Unbounded => return None,
    };
    // Newton's step from 0 where it lands inside the bracket: g is falling and,
    // for the flows of a loan, convex, so the step stays below the root and the
    // steps after it climb to it; the middle of the bracket otherwise.
    let mut x = f64::midpoint(lo, hi);
    if let Some((g0, s0)) = g(0.0) {
        let from_zero = -g0 / s0;
        if from_zero.is_finite() && from_zero > lo && from_zero < hi {
            x = from_zero;
        }
    }
    let found = narrow::<f64, ()>(
        lo,
        hi,
        x,
        200,
        |x| {
            let (value, slope) = g(x).ok_or(())?;
            Ok(Trial {
                side: falling(value),
                next: Some(x - value / slope).filter(|n| n.is_finite()),
            })
        },
        |_, _, x, next| (next - x).abs() <= 1e-13 * x.abs().max(1e-9),
    )
    .ok()?;
    Decimal::from_f64(found.at)
}

/// Where a point lies for an equation that falls through its root: a value
/// above zero is below the root. (The equations' values are finite: their
/// evaluations fail otherwise.)
fn falling<T: PartialOrd + Default>(value: T) -> Side {
    let zero = T::default();
    if value > zero {
        Side::Below
    } else if value == zero {
        Side::Root
    } else {
        Side::Above
    }
}

/// The root at or above 0 of an equation g with g(0) > 0, by Newton's method kept
/// inside a bracket [lo, hi] with g(lo) > 0 > g(hi): a step that would leave the
/// bracket is replaced by a bisection, so the iteration always converges. The
/// bracket's upper end is found by doubling from 1. Stops when a step changes the
/// rate by less than 1e-22, or the bracket is narrower than that.
///
/// Returns the root and the number of steps.
pub(super) fn solve_falling(
    g: impl Fn(Decimal) -> Result<(Decimal, Decimal)>,
    estimate: Option<Decimal>,
    field: &'static str,
) -> Result<(Decimal, u32)> {
    // The binary estimate comes from the same bracketed iteration, so a Newton
    // step from it that converges (a step below the tolerance) has polished that
    // root; two or three evaluations then suffice. Otherwise, the full bracket.
    if let Some(e) = estimate.filter(|e| *e > Decimal::ZERO) {
        let mut x = e;
        for step in 1..=3 {
            let (value, slope) = g(x)?;
            if value.is_zero() {
                return Ok((x, step));
            }
            let Some(next) = value
                .checked_div(slope)
                .and_then(|q| x.checked_sub(q))
                .filter(|n| *n > Decimal::ZERO)
            else {
                break;
            };
            if (next - x).abs() < TOLERANCE {
                return Ok((next, step));
            }
            x = next;
        }
    }
    let side = |x: Decimal| Ok(falling(g(x)?.0));
    let wider = |hi: Decimal| {
        hi.checked_mul(Decimal::TWO)
            .or_overflow("the rate bracket")
            .map(Some)
    };
    let (lo, hi) = match widen(Decimal::ZERO, Decimal::ONE, MAX_DOUBLINGS, side, wider)? {
        Widened::Bracket { low, high, .. } => (low, high),
        Widened::Root { at, .. } => return Ok((at, 0)),
        Widened::Unbounded => {
            return Err(EngineError::no_solution(
                Some(field),
                "no rate makes the payments' present value equal the advances'",
            ))
        }
    };
    let start = match estimate {
        Some(e) if e > lo && e < hi => e,
        _ => Decimal::midpoint(lo, hi),
    };
    let found = narrow(
        lo,
        hi,
        start,
        MAX_ITERATIONS,
        |x| {
            let (value, slope) = g(x)?;
            let next = if slope.is_zero() {
                None
            } else {
                value.checked_div(slope).and_then(|s| x.checked_sub(s))
            };
            Ok(Trial {
                side: falling(value),
                next,
            })
        },
        |lo, hi, x, next| (next - x).abs() < TOLERANCE || hi - lo < TOLERANCE,
    )?;
    // Bisection alone closes the bracket well within the steps allowed.
    Ok((found.at, found.trials))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::apr::equation::MAX_UNIT_PERIODS;
    use crate::engine::apr::testing::{advance, close, d};
    use crate::engine::error::ErrorKind;
    use crate::engine::loan::payment_for_term;

    // Reference rates below: Python's decimal module at 50 digits, bisecting the
    // same equation of (b)(8) (the figure after "i =" in each comment).

    #[test]
    fn appendix_j_c_1_i_monthly_payments_from_unit_flows() {
        // 12 CFR 1026 Appendix J (c)(1)(i): $5,000 advanced 1-10-78; 24 monthly
        // payments of $230 from 2-10-78: 9.69 %. i = 0.0080714233852339729075831461
        let r = solve_apr(
            &advance("5000"),
            &[UnitFlow::run(d("230"), 1, Decimal::ZERO, 24)],
            UnitPeriod::Month,
        )
        .unwrap();
        close(r.periodic_rate, "0.0080714233852339729075831461", "1e-20");
        close(r.apr_percent, "9.6857080622807674890997753103", "1e-18");
        assert_eq!(r.apr_percent_rounded, d("9.69"));
        assert_eq!(r.unit_periods_per_year, d("12"));
        // From the binary estimate, Newton's method needs only a few decimal steps.
        assert!(r.iterations <= 4, "{} steps", r.iterations);
    }

    #[test]
    fn appendix_j_c_1_ii_odd_first_period_from_unit_flows() {
        // 12 CFR 1026 Appendix J (c)(1)(ii): $6,000 advanced 2-10-78; 36 monthly
        // payments of $200 from 4-1-78 (t = 1, f = 19/30): 11.82 %.
        // i = 0.0098470902423550229128265613
        let f = Decimal::from(19) / Decimal::from(30);
        let r = solve_apr(
            &advance("6000"),
            &[UnitFlow::run(d("200"), 1, f, 36)],
            UnitPeriod::Month,
        )
        .unwrap();
        close(r.periodic_rate, "0.0098470902423550229128265613", "1e-20");
        close(r.apr_percent, "11.816508290826027495391873613", "1e-18");
        assert_eq!(r.apr_percent_rounded, d("11.82"));
    }

    #[test]
    fn appendix_j_c_1_iii_semimonthly_from_unit_flows() {
        // 12 CFR 1026 Appendix J (c)(1)(iii): $5,000 advanced 2-23-78; 24 semimonthly
        // payments of $219.17 on the 1st and 16th from 3-1-78 (t = 0, f = 6/15): 10.34 %.
        // i = 0.0043074595463029554736780516
        let r = solve_apr(
            &advance("5000"),
            &[UnitFlow::run(d("219.17"), 0, d("0.4"), 24)],
            UnitPeriod::Semimonth,
        )
        .unwrap();
        close(r.periodic_rate, "0.0043074595463029554736780516", "1e-20");
        close(r.apr_percent, "10.337902911127093136827323786", "1e-18");
        assert_eq!(r.apr_percent_rounded, d("10.34"));
        assert_eq!(r.unit_periods_per_year, d("24"));
    }

    #[test]
    fn a_level_loan_without_fees_has_its_note_rate_as_apr() {
        // 100,000 at 6 % nominal, 360 monthly payments, the exact (unrounded) payment:
        // the APR is the note rate.
        let payment = payment_for_term(d("100000"), d("0.005"), 360).unwrap();
        let r = solve_apr(
            &advance("100000"),
            &[UnitFlow::run(payment, 1, Decimal::ZERO, 360)],
            UnitPeriod::Month,
        )
        .unwrap();
        close(r.periodic_rate, "0.005", "1e-20");
        close(r.apr_percent, "6", "1e-17");
        assert_eq!(r.apr_percent_rounded, d("6.00"));
        // The payment rounded to the cent (599.55) falls just short:
        // i = 0.0049999931931192170393239771 (mpmath, 50 digits).
        let rounded = solve_apr(
            &advance("100000"),
            &[UnitFlow::run(d("599.55"), 1, Decimal::ZERO, 360)],
            UnitPeriod::Month,
        )
        .unwrap();
        close(
            rounded.periodic_rate,
            "0.0049999931931192170393239771",
            "1e-20",
        );
        assert_eq!(rounded.apr_percent_rounded, d("6.00"));
    }

    #[test]
    fn a_first_step_taken_as_the_root_agrees_with_the_bracketed_iteration() {
        // Level loans with fees, as a check posts them: the polished root (often
        // after one proven step) against the bracketed Newton iteration run until
        // its step is below 1e-22, both solving the same decimal equation.
        let mut one_step = 0;
        let mut cases = 0;
        for (principal, rate, n) in [
            ("100000", "0.005", 360u32),
            ("4200", "0.0249916666666666666666666667", 24),
            ("640000", "0.0002083333333333333333333333", 480),
            ("9999.99", "0.0104166666666666666666666667", 6),
            ("1500", "0.0165833333333333333333333333", 1),
            ("42000", "0.0000008333333333333333333333", 60),
            ("250000", "0.0057291666666666666666666667", 360),
            ("75000", "0.06", 120),
        ] {
            for fee in ["0", "0.01", "395", "4375.50"] {
                if d(fee) * Decimal::TWO >= d(principal) {
                    continue;
                }
                let payment = (payment_for_term(d(principal), d(rate), n).unwrap()).round_dp(2);
                let af = d(principal) - d(fee);
                let mut payments = vec![UnitFlow::run(payment, 1, Decimal::ZERO, n)];
                payments.push(UnitFlow::single(d("0.37"), n + 1, Decimal::ZERO));
                let advances = [UnitFlow::single(af, 0, Decimal::ZERO)];
                let r = solve_apr(&advances, &payments, UnitPeriod::Month).unwrap();
                let (reference, _) =
                    solve_falling(|i| unit_equation(&advances, &payments, i), None, "payments")
                        .unwrap();
                assert!(
                    (r.periodic_rate - reference).abs() < d("2e-22"),
                    "{principal} at {rate} over {n}, fee {fee}: {} against {reference}",
                    r.periodic_rate
                );
                cases += 1;
                if r.iterations == 1 {
                    one_step += 1;
                }
                // From a start 1e-6 (relative) off, one step leaves ~1e-14 of
                // error: it must not be taken as the root; from 1e-16 off it is.
                let b = BinaryFlows::new(&advances, &payments).unwrap();
                for (off, one) in [("1e-6", false), ("1e-16", true)] {
                    let start = reference * (Decimal::ONE + d(off));
                    let (x, steps) = polish(
                        |i| unit_equation(&advances, &payments, i),
                        |i| unit_value(&advances, &payments, i),
                        &b,
                        start,
                    )
                    .unwrap()
                    .unwrap();
                    assert!((x - reference).abs() < d("2e-22"), "{off}: {x}");
                    if reference > d("1e-5") {
                        assert_eq!(steps == 1, one, "{principal} at {rate}, {off}: {steps}");
                    }
                }
            }
        }
        // The proven first step is the common case, so it is what was compared.
        assert!(one_step * 2 > cases, "{one_step} of {cases}");
    }

    #[test]
    fn a_tiny_finance_charge_is_solved_term_by_term() {
        // 36,000 repaid by 360 monthly payments of 100.0001: i = 5.5401643684964510793687931e-9
        // (mpmath, 50 digits), below the closed form's cancellation threshold.
        let r = solve_apr(
            &advance("36000"),
            &[UnitFlow::run(d("100.0001"), 1, Decimal::ZERO, 360)],
            UnitPeriod::Month,
        )
        .unwrap();
        close(r.periodic_rate, "0.0000000055401643684964510794", "1e-22");
        assert_eq!(r.apr_percent_rounded, d("0.00"));
    }

    #[test]
    fn payments_equal_to_the_advances_give_zero() {
        let r = solve_apr(
            &advance("1200"),
            &[UnitFlow::run(d("100"), 1, Decimal::ZERO, 12)],
            UnitPeriod::Month,
        )
        .unwrap();
        assert_eq!(r.periodic_rate, Decimal::ZERO);
        assert_eq!(r.apr_percent_rounded, d("0"));
        assert_eq!(r.iterations, 0);
    }

    #[test]
    fn several_advances_balance_the_equation() {
        // 1,000 at the start and 1,000 three months later; 24 monthly payments of 95.
        // i = 0.012296459350978073825535978294 (mpmath, 50 digits).
        let r = solve_apr(
            &[
                UnitFlow::single(d("1000"), 0, Decimal::ZERO),
                UnitFlow::single(d("1000"), 3, Decimal::ZERO),
            ],
            &[UnitFlow::run(d("95"), 1, Decimal::ZERO, 24)],
            UnitPeriod::Month,
        )
        .unwrap();
        close(r.periodic_rate, "0.012296459350978073825535978", "1e-20");
        assert_eq!(r.apr_percent_rounded, d("14.76"));
    }

    #[test]
    fn refusals() {
        let pay = [UnitFlow::run(d("100"), 1, Decimal::ZERO, 12)];
        let kind = |r: Result<AprResult>| r.unwrap_err();
        let e = kind(solve_apr(&[], &pay, UnitPeriod::Month));
        assert_eq!((e.kind, e.field), (ErrorKind::OutOfRange, Some("advances")));
        let e = kind(solve_apr(&advance("1000"), &[], UnitPeriod::Month));
        assert_eq!((e.kind, e.field), (ErrorKind::OutOfRange, Some("payments")));
        let e = kind(solve_apr(&advance("-1"), &pay, UnitPeriod::Month));
        assert_eq!(e.field, Some("advances"));
        let e = kind(solve_apr(
            &advance("1000"),
            &[UnitFlow::run(d("100"), 1, Decimal::ONE, 12)],
            UnitPeriod::Month,
        ));
        assert_eq!((e.kind, e.field), (ErrorKind::OutOfRange, Some("payments")));
        let e = kind(solve_apr(
            &advance("1000"),
            &[UnitFlow::run(d("100"), 1, Decimal::ZERO, 0)],
            UnitPeriod::Month,
        ));
        assert_eq!(e.field, Some("payments"));
        let e = kind(solve_apr(&advance("1000"), &pay, UnitPeriod::Months(0)));
        assert_eq!(e.field, Some("unit_period"));
        let e = kind(solve_apr(&advance("1000"), &pay, UnitPeriod::Weeks(53)));
        assert_eq!(e.field, Some("unit_period"));
        let e = kind(solve_apr(
            &advance("1000"),
            &[UnitFlow::run(d("100"), MAX_UNIT_PERIODS, Decimal::ZERO, 12)],
            UnitPeriod::Day,
        ));
        assert_eq!(e.field, Some("payments"));
        // Payments short of the advances: the APR would be negative.
        let e = kind(solve_apr(&advance("1201"), &pay, UnitPeriod::Month));
        assert_eq!((e.kind, e.field), (ErrorKind::NoSolution, Some("payments")));
        // A payment at the start larger than the advance: no rate balances.
        let e = kind(solve_apr(
            &advance("100"),
            &[
                UnitFlow::single(d("150"), 0, Decimal::ZERO),
                UnitFlow::single(d("10"), 1, Decimal::ZERO),
            ],
            UnitPeriod::Month,
        ));
        assert_eq!(e.kind, ErrorKind::NoSolution);
    }
}
