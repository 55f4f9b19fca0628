//! The searches for a number of periods on the closed form, one for each question
//! that asks for one: the periods a deposit needs to reach a goal, and the
//! withdrawals a balance supports. Level flows start from a logarithm's estimate;
//! growing deposits are bisected; growing withdrawals are scanned.

use rust_decimal::prelude::ToPrimitive;
use rust_decimal::Decimal;

use super::closed_form::PlanForm;
use super::terms::MAX_PERIODS;
use crate::engine::error::{ErrorKind, OrOverflow, Result};
use crate::engine::search::{first_whole, widen, Side, Widened};

/// How the number of periods was found from the closed form.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PeriodSearch {
    /// Level flows: a logarithm (estimated in binary floating point), confirmed exactly.
    Logarithm {
        /// The estimate the walk started from.
        estimate: u32,
    },
    /// Growing deposits: bisection over whole periods on the O(1) closed form (in
    /// binary floating point, confirmed in decimal at n − 1 and n).
    Bisection {
        /// Evaluations of the closed form.
        evaluations: u32,
    },
    /// Growing withdrawals (the balance may rise before it falls): a scan of the closed form.
    Scan,
}

/// The number of periods from the closed form, and the balances around it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PeriodsDerivation {
    /// How n was found.
    pub method: PeriodSearch,
    /// The first n whose closed-form balance reaches the target.
    pub n: u32,
    /// The goal, or zero for a drawdown.
    pub target: Decimal,
    /// x[n − 1] and x[n] from the closed form.
    pub before: Decimal,
    /// x[n] from the closed form (the largest or smallest decimal past its range).
    pub at: Decimal,
}

/// Overflow of a balance means a balance far beyond any goal or far below zero:
/// the monotone searches treat it as reached (deposits toward a goal only raise the
/// balance; level withdrawals above the interest only lower it).
fn reached(v: Result<Decimal>, test: impl Fn(Decimal) -> bool) -> Result<bool> {
    match v {
        Ok(v) => Ok(test(v)),
        Err(e) if e.kind == ErrorKind::Overflow => Ok(true),
        Err(e) => Err(e),
    }
}

/// The smallest n in 1..=MAX_PERIODS with done(n), for done monotone, walking from an
/// estimate (off by a step or two) and bisecting should the walk not settle.
fn walk_from(estimate: u32, done: &dyn Fn(u32) -> Result<bool>) -> Result<Option<u32>> {
    if !done(MAX_PERIODS)? {
        return Ok(None);
    }
    let mut n = estimate.clamp(1, MAX_PERIODS);
    for _ in 0..64 {
        if !done(n)? {
            n += 1;
        } else if n > 1 && done(n - 1)? {
            n -= 1;
        } else {
            return Ok(Some(n));
        }
    }
    Ok(bisect(done)?.map(|(n, _)| n))
}

/// [`bisect`] over a binary-floating-point test: the estimate and its evaluations.
fn bisect_estimate(done: &dyn Fn(u32) -> bool) -> Option<(u32, u32)> {
    bisect(&|n| Ok(done(n))).ok().flatten()
}

/// The smallest n with done(n) near an estimate, confirmed exactly: done(n) and
/// not done(n − 1), walking a few periods when the estimate is off; `None` when
/// the walk does not settle (the caller then bisects in decimal).
fn confirm_from(estimate: u32, done: &dyn Fn(u32) -> Result<bool>) -> Result<Option<u32>> {
    let mut n = estimate.clamp(1, MAX_PERIODS);
    for _ in 0..16 {
        if !done(n)? {
            if n == MAX_PERIODS {
                return Ok(None);
            }
            n += 1;
        } else if n > 1 && done(n - 1)? {
            n -= 1;
        } else {
            return Ok(Some(n));
        }
    }
    Ok(None)
}

/// The smallest n in 1..=MAX_PERIODS with done(n) by bisection (done monotone, false at 0),
/// with the number of evaluations.
///
/// The bracket is found by doubling from 16 periods (most goals are reached long
/// before the 6,000-period limit, and early periods have cheaper powers), then
/// bisected.
fn bisect(done: &dyn Fn(u32) -> Result<bool>) -> Result<Option<(u32, u32)>> {
    let side = |n: u32| Ok(if done(n)? { Side::Above } else { Side::Below });
    let wider = |n: u32| Ok((n < MAX_PERIODS).then(|| (n * 2).min(MAX_PERIODS)));
    let (lo, hi, doubling) = match widen(0, 16, u32::MAX, side, wider)? {
        Widened::Bracket { low, high, trials } => (low, high, trials),
        Widened::Root { at, trials } => return Ok(Some((at, trials))),
        Widened::Unbounded => return Ok(None),
    };
    let (n, halving) = first_whole(lo, hi, done)?;
    Ok(Some((n, doubling + halving)))
}

/// The first k ≥ 1 whose closed-form balance is at or below zero, scanning in growing
/// chunks (growing withdrawals can let the balance rise before it falls).
fn first_at_or_below_zero(form: &PlanForm) -> Result<Option<u32>> {
    let mut n = 64u32;
    let mut scanned = 0u32; // every k ≤ scanned is above zero
    loop {
        let upto = n.min(MAX_PERIODS);
        let values = match form.balances(upto) {
            Ok(v) => v,
            Err(e) if e.kind == ErrorKind::Overflow => {
                // Beyond the decimal range somewhere after the last chunk: one period
                // at a time from there. The balance may have grown past the range
                // (interest outrunning the withdrawals) as well as fallen: an overflow
                // before it reaches zero stays an overflow.
                for k in scanned + 1..=upto {
                    if form.balance_at(k)? <= Decimal::ZERO {
                        return Ok(Some(k));
                    }
                }
                return Err(e);
            }
            Err(e) => return Err(e),
        };
        if let Some(k) = values
            .iter()
            .enumerate()
            .skip(1)
            .find(|(_, v)| **v <= Decimal::ZERO)
            .map(|(k, _)| k as u32)
        {
            return Ok(Some(k));
        }
        if upto == MAX_PERIODS {
            return Ok(None);
        }
        scanned = upto;
        n = n.saturating_mul(4);
    }
}

fn f64_of(d: Decimal) -> f64 {
    d.to_f64().unwrap_or(f64::NAN)
}

/// n ≈ ln((G·i + c)/(x0·i + c))/ln(1 + i), or (G − x0)/c at 0 %: an estimate only.
fn estimate_periods_to_goal(x0: Decimal, i: Decimal, c: Decimal, goal: Decimal) -> u32 {
    let (x0, i, c, g) = (f64_of(x0), f64_of(i), f64_of(c), f64_of(goal));
    let n = if i == 0.0 {
        (g - x0) / c
    } else {
        ((g * i + c) / (x0 * i + c)).ln() / i.ln_1p()
    };
    clamp_estimate(n)
}

/// n ≈ −ln(1 − x0·i/c)/ln(1 + i), or x0/c at 0 %: an estimate only.
fn estimate_withdrawals(x0: Decimal, i: Decimal, c: Decimal) -> u32 {
    let (x0, i, c) = (f64_of(x0), f64_of(i), f64_of(c));
    let n = if i == 0.0 {
        x0 / c
    } else {
        -(1.0 - x0 * i / c).ln() / i.ln_1p()
    };
    clamp_estimate(n)
}

fn clamp_estimate(n: f64) -> u32 {
    if n.is_finite() && n > 0.0 {
        n.ceil().min(f64::from(MAX_PERIODS)) as u32
    } else {
        1
    }
}

/// The first period whose closed-form balance reaches `goal` (`None` beyond
/// [`MAX_PERIODS`]), and how it was found: for a level `deposit` (as made; `x0`
/// the opening balance, `i` the periodic rate) a walk from the logarithm's
/// estimate; for growing deposits a bisection in binary floating point whose
/// answer the decimal closed form confirms at n − 1 and n (walking should they
/// disagree, bisecting in decimal should the walk not settle).
///
/// # Errors
/// An overflow other than of a balance far past the goal.
pub(super) fn periods_to_reach(
    form: &PlanForm,
    x0: Decimal,
    i: Decimal,
    deposit: Decimal,
    goal: Decimal,
) -> Result<(Option<u32>, PeriodSearch)> {
    let done = |n: u32| reached(form.balance_at(n), |v| v >= goal);
    if form.shape.is_level() {
        let c = deposit
            .checked_mul(form.shape.timing_factor())
            .or_overflow("the deposit")?;
        let estimate = estimate_periods_to_goal(x0, i, c, goal);
        return Ok((
            walk_from(estimate, &done)?,
            PeriodSearch::Logarithm { estimate },
        ));
    }
    let target = f64_of(goal);
    let screened = bisect_estimate(&|n| form.estimate_at(n) >= target);
    let confirmed = match screened {
        Some((estimate, _)) => confirm_from(estimate, &done)?,
        None => None,
    };
    Ok(match (confirmed, screened) {
        (Some(n), Some((_, evaluations))) => (Some(n), PeriodSearch::Bisection { evaluations }),
        _ => match bisect(&done)? {
            Some((n, evaluations)) => (Some(n), PeriodSearch::Bisection { evaluations }),
            None => (None, PeriodSearch::Bisection { evaluations: 1 }),
        },
    })
}

/// The first period whose closed-form balance is at or below zero (`None`
/// beyond [`MAX_PERIODS`]), and how it was found: for level withdrawals of `c`
/// a period (as the recurrence sees them, `x0` the opening balance, `i` the
/// periodic rate) a walk from the logarithm's estimate; for growing ones a scan.
///
/// # Errors
/// An overflow of the scan, or one other than of a balance far below zero.
pub(super) fn periods_to_exhaust(
    form: &PlanForm,
    x0: Decimal,
    i: Decimal,
    c: Decimal,
) -> Result<(Option<u32>, PeriodSearch)> {
    if form.shape.is_level() {
        let done = |n: u32| reached(form.balance_at(n), |v| v <= Decimal::ZERO);
        let estimate = estimate_withdrawals(x0, i, c);
        Ok((
            walk_from(estimate, &done)?,
            PeriodSearch::Logarithm { estimate },
        ))
    } else {
        Ok((first_at_or_below_zero(form)?, PeriodSearch::Scan))
    }
}
