//! Annual percentage rates: the actuarial method of Regulation Z (12 CFR 1026)
//! Appendix J, and the EU annual percentage rate of charge (Directive 2008/48/EC
//! Annex I).
//!
//! # Appendix J
//!
//! Every advance and payment is placed in unit-periods from the start of the term:
//! `periods` full unit-periods (q or t) and a `fraction` (e or f) of one, which earns
//! simple interest ((b)(6)). The unit-period rate i solves the general equation (b)(8)
//!
//! ```text
//! Σ_k A_k / [(1 + e_k·i)(1 + i)^q_k]  =  Σ_j P_j / [(1 + f_j·i)(1 + i)^t_j]
//! ```
//!
//! and the APR is i × unit-periods per year ((b)(1)). The equation is solved by
//! Newton's method kept inside a bracket (a bisection whenever a step would leave
//! it), from a binary-floating-point estimate, and carried to about 1e-22 in i:
//! far beyond the two decimals of the APR that (b)(9) asks to be certain.
//!
//! A run of `count` equal flows one unit-period apart is summed in closed form,
//! Σ_{m=0}^{n−1} v^m = (1 − v^n)/(1 − v) with v = 1/(1 + i), so a 360-payment
//! level loan costs the same per iteration as a single payment.
//!
//! From dated flows, [`apr_from_dates`] finds the unit-period by (b)(4) and counts
//! each flow's (t, f) by (b)(5), with the month rules of (b)(3).
//!
//! # EU APRC
//!
//! [`solve_aprc`] solves Σ C_k (1 + X)^(−t_k) = Σ D_l (1 + X)^(−s_l) with times
//! in years from the first drawdown, and rounds X to one decimal half up
//! (Annex I, remark (d)).
//!
//! Every function here is pure: no I/O, no clock. Money and rates are
//! `rust_decimal::Decimal`; `f64` is used only for the first estimate of a rate,
//! which the decimal iteration then refines (no result depends on it).

use jiff::civil::Date;
use jiff::Span;
use rust_decimal::prelude::{FromPrimitive, ToPrimitive};
use rust_decimal::{Decimal, MathematicalOps, RoundingStrategy};

use super::calendar::{self, add_months};
use super::error::{EngineError, OrOverflow, Result};
use super::loan::MAX_PAYMENTS;
use super::rate::Frequency;

/// The most unit-periods from the start of the term to the last flow
/// (t + count − 1): a century of daily unit-periods.
pub const MAX_UNIT_PERIODS: u32 = 36_525;

/// The longest time from the first drawdown to a flow in the APRC, in years.
pub const MAX_APRC_YEARS: u32 = 100;

/// Steps of the decimal iteration stop below this change in the rate.
const TOLERANCE: Decimal = Decimal::from_parts(1, 0, 0, false, 22); // 1e-22

/// Below this unit-period rate a run of flows is summed term by term: the closed
/// form's 1 − v^n would lose about log10(1/i) of the 28 digits to cancellation.
const SMALL_RATE: Decimal = Decimal::from_parts(1, 0, 0, false, 6); // 1e-6

/// Newton/bisection steps allowed; bisection alone narrows a bracket of width
/// 2^40 to 1e-22 in about 200.
const MAX_ITERATIONS: u32 = 300;

/// The bracket's upper end is doubled from 1 at most this often (i ≤ 2^40).
const MAX_DOUBLINGS: u32 = 40;

// ---------------------------------------------------------------------------
// Unit-periods
// ---------------------------------------------------------------------------

/// The unit-period of Appendix J (b)(3)–(b)(5): a standard interval (a day, a
/// week, a semimonth, a month, or a multiple of a week or a month up to a year),
/// or, for a single advance and single payment, a term of so many days.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum UnitPeriod {
    Day,
    /// n days: the term of a single-advance, single-payment transaction that is
    /// not a whole number of months ((b)(5)(vii)), or a common period of n days
    /// that is not a multiple of a week (counted by days, 365/n per year: the
    /// reading of (b)(5)(iv) extended to it).
    Days(u32),
    Week,
    Weeks(u32),
    Semimonth,
    Month,
    Months(u32),
    /// The same as `Months(3)`.
    Quarter,
    Year,
}

impl UnitPeriod {
    /// Unit-periods per year as an exact ratio (numerator, denominator):
    /// (b)(5)(ii)–(vii): 365 for a day, 365/n for n days, 52 for a week, 52/n for
    /// n weeks, 24 for a semimonth, 12 for a month, 12/n for n months, 1 for a year.
    pub fn per_year_ratio(self) -> (u32, u32) {
        match self {
            UnitPeriod::Day => (365, 1),
            UnitPeriod::Days(n) => (365, n),
            UnitPeriod::Week => (52, 1),
            UnitPeriod::Weeks(n) => (52, n),
            UnitPeriod::Semimonth => (24, 1),
            UnitPeriod::Month => (12, 1),
            UnitPeriod::Months(n) => (12, n),
            UnitPeriod::Quarter => (4, 1),
            UnitPeriod::Year => (1, 1),
        }
    }

    /// Unit-periods per year (365/255 = 1.4313… for a 255-day term). Zero for a
    /// unit of zero length (`Days(0)`, `Weeks(0)`, `Months(0)`), which the solver refuses.
    pub fn per_year(self) -> Decimal {
        let (a, b) = self.per_year_ratio();
        if b == 0 {
            return Decimal::ZERO;
        }
        Decimal::from(a) / Decimal::from(b)
    }

    /// The same unit written one way: `Months(1)` → `Month`, `Months(3)` →
    /// `Quarter`, `Months(12)` → `Year`, `Weeks(1)` → `Week`, `Days(1)` → `Day`.
    /// (`Days(7)` stays: 365/7 a year is not a week's 52.)
    pub fn canonical(self) -> UnitPeriod {
        match self {
            UnitPeriod::Days(1) => UnitPeriod::Day,
            UnitPeriod::Weeks(1) => UnitPeriod::Week,
            UnitPeriod::Months(1) => UnitPeriod::Month,
            UnitPeriod::Months(3) => UnitPeriod::Quarter,
            UnitPeriod::Months(12) => UnitPeriod::Year,
            other => other,
        }
    }

    /// The nominal length in days as an exact ratio, for comparing units and for
    /// the average rule of (b)(4): days and weeks at their length, months at
    /// 365/12 days, a semimonth at 365/24, a year at 365.
    fn nominal_days_ratio(self) -> (u64, u64) {
        match self {
            UnitPeriod::Day => (1, 1),
            UnitPeriod::Days(n) => (u64::from(n), 1),
            UnitPeriod::Week => (7, 1),
            UnitPeriod::Weeks(n) => (7 * u64::from(n), 1),
            UnitPeriod::Semimonth => (365, 24),
            UnitPeriod::Month => (365, 12),
            UnitPeriod::Months(n) => (365 * u64::from(n), 12),
            UnitPeriod::Quarter => (365, 4),
            UnitPeriod::Year => (365, 1),
        }
    }

    /// True when `self` is shorter than `other` (nominal lengths, compared exactly).
    fn shorter_than(self, other: UnitPeriod) -> bool {
        let (a, b) = self.nominal_days_ratio();
        let (c, d) = other.nominal_days_ratio();
        u128::from(a) * u128::from(d) < u128::from(c) * u128::from(b)
    }

    /// The unit is at least one day and at most a year ((b)(4): "not to exceed 1 year").
    fn check(self) -> Result<()> {
        let ok = match self {
            UnitPeriod::Days(n) => (1..=366).contains(&n),
            UnitPeriod::Weeks(n) => (1..=52).contains(&n),
            UnitPeriod::Months(n) => (1..=12).contains(&n),
            _ => true,
        };
        if ok {
            Ok(())
        } else {
            Err(EngineError::out_of_range(
                "unit_period",
                "a unit-period must be 1 to 366 days, 1 to 52 weeks or 1 to 12 months",
            ))
        }
    }
}

impl std::fmt::Display for UnitPeriod {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            UnitPeriod::Day => f.write_str("day"),
            UnitPeriod::Days(n) => write!(f, "{n} days"),
            UnitPeriod::Week => f.write_str("week"),
            UnitPeriod::Weeks(n) => write!(f, "{n} weeks"),
            UnitPeriod::Semimonth => f.write_str("semimonth"),
            UnitPeriod::Month => f.write_str("month"),
            UnitPeriod::Months(n) => write!(f, "{n} months"),
            UnitPeriod::Quarter => f.write_str("quarter"),
            UnitPeriod::Year => f.write_str("year"),
        }
    }
}

// ---------------------------------------------------------------------------
// Flows in unit-periods, and the solver of (b)(8)
// ---------------------------------------------------------------------------

/// An advance or a payment placed in unit-periods from the start of the term;
/// with `count` > 1, a run of `count` equal flows one unit-period apart, the
/// first at (`periods`, `fraction`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct UnitFlow {
    pub amount: Decimal,
    /// Full unit-periods from the start of the term (t or q of (b)(8)).
    pub periods: u32,
    /// The remaining fraction of a unit-period (f or e of (b)(8)), 0 ≤ f < 1.
    pub fraction: Decimal,
    /// How many equal flows, one unit-period apart (at least 1).
    pub count: u32,
}

impl UnitFlow {
    /// One flow at `periods` + `fraction` unit-periods.
    pub fn single(amount: Decimal, periods: u32, fraction: Decimal) -> Self {
        Self {
            amount,
            periods,
            fraction,
            count: 1,
        }
    }

    /// `count` flows of `amount`, the first at `periods` + `fraction`, then one unit-period apart.
    pub fn run(amount: Decimal, periods: u32, fraction: Decimal, count: u32) -> Self {
        Self {
            amount,
            periods,
            fraction,
            count,
        }
    }
}

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

/// G(i) alone (no slope): Σ payments' present values − Σ advances'.
fn unit_value(advances: &[UnitFlow], payments: &[UnitFlow], i: Decimal) -> Result<Decimal> {
    let what = "the rate equation";
    let one_plus = Decimal::ONE.checked_add(i).or_overflow(what)?;
    let v = Decimal::ONE.checked_div(one_plus).or_overflow(what)?;
    let mut powers = Powers::new(v);
    let mut total = Decimal::ZERO;
    for (flows, paid) in [(payments, true), (advances, false)] {
        for flow in flows {
            let vt = powers.get(flow.periods)?;
            let base = if flow.fraction.is_zero() {
                vt
            } else {
                vt.checked_mul(powers.inverse_simple(flow.fraction, i)?)
                    .or_overflow(what)?
            };
            let mut discounted = flow.amount.checked_mul(base).or_overflow(what)?;
            if flow.count > 1 {
                let (s, _) = annuity_factor(i, v, flow.count, &mut powers)?;
                discounted = discounted.checked_mul(s).or_overflow(what)?;
            }
            total = if paid {
                total.checked_add(discounted)
            } else {
                total.checked_sub(discounted)
            }
            .or_overflow(what)?;
        }
    }
    Ok(total)
}

/// Checks a list of flows and returns the total of their amounts.
fn check_unit_flows(flows: &[UnitFlow], field: &'static str) -> Result<Decimal> {
    if flows.is_empty() {
        return Err(EngineError::out_of_range(field, "at least one is needed"));
    }
    let mut total = Decimal::ZERO;
    for flow in flows {
        if flow.amount.is_sign_negative() && !flow.amount.is_zero() {
            return Err(EngineError::out_of_range(
                field,
                "an amount cannot be negative",
            ));
        }
        if flow.count == 0 {
            return Err(EngineError::out_of_range(
                field,
                "a run of flows needs a count of at least 1",
            ));
        }
        if flow.fraction.is_sign_negative() && !flow.fraction.is_zero()
            || flow.fraction >= Decimal::ONE
        {
            return Err(EngineError::out_of_range(
                field,
                "a fraction of a unit-period must be at least 0 and less than 1",
            ));
        }
        let last = u64::from(flow.periods) + u64::from(flow.count) - 1;
        if last > u64::from(MAX_UNIT_PERIODS) {
            return Err(EngineError::out_of_range(
                field,
                format!("a flow lies more than {MAX_UNIT_PERIODS} unit-periods from the start"),
            ));
        }
        let run_total = flow
            .amount
            .checked_mul(Decimal::from(flow.count))
            .or_overflow("the total of the flows")?;
        total = total
            .checked_add(run_total)
            .or_overflow("the total of the flows")?;
    }
    if total.is_zero() {
        return Err(EngineError::out_of_range(
            field,
            "the amounts must total more than zero",
        ));
    }
    Ok(total)
}

/// G(i) = Σ payments' present values − Σ advances' present values, and G'(i).
fn unit_equation(
    advances: &[UnitFlow],
    payments: &[UnitFlow],
    i: Decimal,
) -> Result<(Decimal, Decimal)> {
    let one_plus = Decimal::ONE
        .checked_add(i)
        .or_overflow("the interest factor")?;
    let v = Decimal::ONE
        .checked_div(one_plus)
        .or_overflow("the discount factor")?;
    let mut powers = Powers::new(v);
    let mut value = Decimal::ZERO;
    let mut slope = Decimal::ZERO;
    for (flows, sign) in [(payments, Decimal::ONE), (advances, Decimal::NEGATIVE_ONE)] {
        for flow in flows {
            let (discounted, discounted_slope) = flow_present_value(flow, i, v, &mut powers)?;
            let (d, ds) = if sign.is_sign_negative() {
                (-discounted, -discounted_slope)
            } else {
                (discounted, discounted_slope)
            };
            value = value.checked_add(d).or_overflow("the rate equation")?;
            slope = slope
                .checked_add(ds)
                .or_overflow("the slope of the rate equation")?;
        }
    }
    Ok((value, slope))
}

/// The powers v^t one evaluation of the equation needs, each taken from the
/// nearest lower power already known: flows in time order cost one product each,
/// not a fresh exponentiation.
struct Powers {
    v: Decimal,
    /// (t, v^t), ascending in t; starts with (0, 1).
    known: Vec<(u32, Decimal)>,
    /// (f, 1/(1 + f·i)) for the fractions met so far (dated flows share few).
    simple: Vec<(Decimal, Decimal)>,
}

impl Powers {
    fn new(v: Decimal) -> Self {
        Self {
            v,
            known: vec![(0, Decimal::ONE)],
            simple: Vec::new(),
        }
    }

    /// 1/(1 + f·i), computed once per fraction.
    fn inverse_simple(&mut self, f: Decimal, i: Decimal) -> Result<Decimal> {
        let what = "a present value";
        if f.is_zero() {
            return Ok(Decimal::ONE);
        }
        if let Some((_, inv)) = self.simple.iter().find(|(g, _)| *g == f) {
            return Ok(*inv);
        }
        let inv = Decimal::ONE
            .checked_div(
                Decimal::ONE
                    .checked_add(f.checked_mul(i).or_overflow(what)?)
                    .or_overflow(what)?,
            )
            .or_overflow(what)?;
        if self.simple.len() < 64 {
            self.simple.push((f, inv));
        }
        Ok(inv)
    }

    fn get(&mut self, t: u32) -> Result<Decimal> {
        let what = "a present value";
        let at = match self.known.binary_search_by_key(&t, |(k, _)| *k) {
            Ok(at) => return Ok(self.known[at].1),
            Err(at) => at,
        };
        let (below, base) = self.known[at - 1];
        let gap = t - below;
        let step = if gap == 1 {
            self.v
        } else {
            super::power::pow(self.v, gap).or_overflow(what)?
        };
        let value = base.checked_mul(step).or_overflow(what)?;
        self.known.insert(at, (t, value));
        Ok(value)
    }
}

/// amount × v^t / (1 + f·i) × S_n(i), and its derivative in i, where
/// S_n = Σ_{m=0}^{n−1} v^m is the run's annuity factor.
fn flow_present_value(
    flow: &UnitFlow,
    i: Decimal,
    v: Decimal,
    powers: &mut Powers,
) -> Result<(Decimal, Decimal)> {
    let what = "a present value";
    let vt = powers.get(flow.periods)?;
    // 1/(1 + f·i), one division shared by the value and the slope.
    let inverse_simple = powers.inverse_simple(flow.fraction, i)?;
    let base = vt.checked_mul(inverse_simple).or_overflow(what)?;
    // d(v^t)/di = −t·v^(t+1); d(1/(1 + f·i))/di = −f/(1 + f·i)².
    let log_slope = -(Decimal::from(flow.periods)
        .checked_mul(v)
        .or_overflow(what)?)
        - flow
            .fraction
            .checked_mul(inverse_simple)
            .or_overflow(what)?;
    let scaled = flow.amount.checked_mul(base).or_overflow(what)?;
    if flow.count == 1 {
        // S = 1, S' = 0.
        let slope = scaled.checked_mul(log_slope).or_overflow(what)?;
        return Ok((scaled, slope));
    }
    let (s, ds) = annuity_factor(i, v, flow.count, powers)?;
    let value = scaled.checked_mul(s).or_overflow(what)?;
    let slope = scaled
        .checked_mul(
            log_slope
                .checked_mul(s)
                .and_then(|x| x.checked_add(ds))
                .or_overflow(what)?,
        )
        .or_overflow(what)?;
    Ok((value, slope))
}

/// S_n(i) = Σ_{m=0}^{n−1} v^m and S_n'(i).
///
/// Closed form: S = (1 − v^n)/(1 − v) = (1 + i)(1 − v^n)/i, and
/// S' = [n·v^n − (1 − v^n)/i]/i. At i = 0: S = n, S' = −n(n − 1)/2. Below
/// [`SMALL_RATE`] the sum is taken term by term (S' = −Σ m·v^(m+1)) to avoid the
/// cancellation in 1 − v^n.
fn annuity_factor(
    i: Decimal,
    v: Decimal,
    n: u32,
    powers: &mut Powers,
) -> Result<(Decimal, Decimal)> {
    let what = "an annuity factor";
    if n == 1 {
        return Ok((Decimal::ONE, Decimal::ZERO));
    }
    let nd = Decimal::from(n);
    if i.is_zero() {
        let pairs = Decimal::from(u64::from(n) * u64::from(n - 1) / 2);
        return Ok((nd, -pairs));
    }
    if i.abs() < SMALL_RATE {
        let mut s = Decimal::ZERO;
        let mut ds = Decimal::ZERO;
        let mut vm = Decimal::ONE;
        for m in 0..n {
            s = s.checked_add(vm).or_overflow(what)?;
            let next = vm.checked_mul(v).or_overflow(what)?;
            ds = ds
                .checked_sub(Decimal::from(m).checked_mul(next).or_overflow(what)?)
                .or_overflow(what)?;
            vm = next;
        }
        return Ok((s, ds));
    }
    let vn = powers.get(n)?;
    let w = Decimal::ONE - vn;
    let w_over_i = w.checked_div(i).or_overflow(what)?;
    let s = w_over_i.checked_mul(Decimal::ONE + i).or_overflow(what)?;
    let ds = nd
        .checked_mul(vn)
        .and_then(|x| x.checked_sub(w_over_i))
        .and_then(|x| x.checked_div(i))
        .or_overflow(what)?;
    Ok((s, ds))
}

/// The flows in binary floating point (sign, amount, fraction, periods, count),
/// converted once, for the first estimate only.
struct BinaryFlows {
    flows: Vec<(f64, f64, f64, f64, f64)>,
}

impl BinaryFlows {
    fn new(advances: &[UnitFlow], payments: &[UnitFlow]) -> Option<Self> {
        let mut flows = Vec::with_capacity(advances.len() + payments.len());
        for (list, sign) in [(payments, 1.0), (advances, -1.0)] {
            for f in list {
                flows.push((
                    sign,
                    f.amount.to_f64()?,
                    f.fraction.to_f64()?,
                    f64::from(f.periods),
                    f64::from(f.count),
                ));
            }
        }
        Some(Self { flows })
    }

    /// (A, H): bounds, for every i ≥ 0, on Σ |d/di| and Σ |d²/di²| of the flows'
    /// present values. A flow a·v^t/(1 + f·i) (0 ≤ f < 1, v = 1/(1 + i) ≤ 1) has
    /// |d/di| = |a|·v^t/(1 + f·i)·|t·v + f/(1 + f·i)| ≤ |a|·(t + 1), and
    /// |d²/di²| ≤ |a|·(t(t + 1) + 2t + 2) ≤ |a|·(t + 2)²; a run of n such
    /// payments, at t to t + n − 1, at most n times its last one's.
    fn bounds(&self) -> (f64, f64) {
        let (mut first, mut second) = (0.0, 0.0);
        for &(_, a, _, t, n) in &self.flows {
            let last = t + n - 1.0;
            first += a.abs() * n * (last + 1.0);
            second += a.abs() * n * (last + 2.0) * (last + 2.0);
        }
        // Room for the rounding of these sums.
        (first * 1.01, second * 1.01)
    }

    /// G(i) and G'(i).
    fn equation(&self, i: f64) -> Option<(f64, f64)> {
        let v = 1.0 / (1.0 + i);
        let ln_v = v.ln();
        let mut value = 0.0;
        let mut slope = 0.0;
        for &(sign, a, f, t, n) in &self.flows {
            let base = (t * ln_v).exp() / (1.0 + f * i);
            let log_slope = -t * v - f / (1.0 + f * i);
            let (s, ds) = if n == 1.0 {
                (1.0, 0.0)
            } else if i.abs() < 1e-9 {
                (n, -n * (n - 1.0) / 2.0)
            } else {
                let vn = (n * ln_v).exp();
                let w = 1.0 - vn;
                (w * (1.0 + i) / i, (n * vn - w / i) / i)
            };
            value += sign * a * base * s;
            slope += sign * a * base * (log_slope * s + ds);
        }
        (value.is_finite() && slope.is_finite()).then_some((value, slope))
    }
}

/// A first estimate of the root of a falling equation with g(0) > 0, in binary
/// floating point: the bracketed Newton iteration of [`solve_falling`] to about
/// 1e-13. `None` when the arithmetic fails; the decimal solver then starts from
/// the middle of its bracket.
fn estimate_rate(g: impl Fn(f64) -> Option<(f64, f64)>) -> Option<Decimal> {
    let mut lo = 0.0_f64;
    let mut hi = 1.0_f64;
    let mut doublings = 0;
    loop {
        let (value, _) = g(hi)?;
        if value < 0.0 {
            break;
        }
        if value == 0.0 {
            return Decimal::from_f64(hi);
        }
        lo = hi;
        hi *= 2.0;
        doublings += 1;
        if doublings > MAX_DOUBLINGS {
            return None;
        }
    }
    // Newton's step from 0 where it lands inside the bracket: g is falling and,
    // for the flows of a loan, convex, so the step stays below the root and the
    // steps after it climb to it; the middle of the bracket otherwise.
    let mut x = (lo + hi) / 2.0;
    if let Some((g0, s0)) = g(0.0) {
        let from_zero = -g0 / s0;
        if from_zero.is_finite() && from_zero > lo && from_zero < hi {
            x = from_zero;
        }
    }
    for _ in 0..200 {
        let (value, slope) = g(x)?;
        if value == 0.0 {
            break;
        }
        if value > 0.0 {
            lo = x;
        } else {
            hi = x;
        }
        let newton = x - value / slope;
        let next = if newton > lo && newton < hi && newton.is_finite() {
            newton
        } else {
            (lo + hi) / 2.0
        };
        let done = (next - x).abs() <= 1e-13 * x.abs().max(1e-9);
        x = next;
        if done {
            break;
        }
    }
    Decimal::from_f64(x)
}

/// The root at or above 0 of an equation g with g(0) > 0, by Newton's method kept
/// inside a bracket [lo, hi] with g(lo) > 0 > g(hi): a step that would leave the
/// bracket is replaced by a bisection, so the iteration always converges. The
/// bracket's upper end is found by doubling from 1. Stops when a step changes the
/// rate by less than 1e-22, or the bracket is narrower than that.
///
/// Returns the root and the number of steps.
fn solve_falling(
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
    let mut lo = Decimal::ZERO;
    let mut hi = Decimal::ONE;
    let mut doublings = 0;
    loop {
        let (value, _) = g(hi)?;
        if value.is_zero() {
            return Ok((hi, 0));
        }
        if value < Decimal::ZERO {
            break;
        }
        lo = hi;
        hi = hi
            .checked_mul(Decimal::TWO)
            .or_overflow("the rate bracket")?;
        doublings += 1;
        if doublings > MAX_DOUBLINGS {
            return Err(EngineError::no_solution(
                Some(field),
                "no rate makes the payments' present value equal the advances'",
            ));
        }
    }
    let mid = |lo: Decimal, hi: Decimal| lo + (hi - lo) / Decimal::TWO;
    let mut x = match estimate {
        Some(e) if e > lo && e < hi => e,
        _ => mid(lo, hi),
    };
    for step in 1..=MAX_ITERATIONS {
        let (value, slope) = g(x)?;
        if value.is_zero() {
            return Ok((x, step));
        }
        if value > Decimal::ZERO {
            lo = x;
        } else {
            hi = x;
        }
        let newton = if slope.is_zero() {
            None
        } else {
            value.checked_div(slope).and_then(|s| x.checked_sub(s))
        };
        let next = match newton {
            Some(n) if n > lo && n < hi => n,
            _ => mid(lo, hi),
        };
        if (next - x).abs() < TOLERANCE || hi - lo < TOLERANCE {
            return Ok((next, step));
        }
        x = next;
    }
    // Not reached: bisection alone closes the bracket well within the steps allowed.
    Ok((x, MAX_ITERATIONS))
}

// ---------------------------------------------------------------------------
// Dates: month arithmetic with the month-end rules of (b)(3)
// ---------------------------------------------------------------------------

/// `later − earlier` in days (may be negative).
fn days_between(earlier: Date, later: Date) -> i64 {
    i64::from((later - earlier).get_days())
}

fn is_month_end(d: Date) -> bool {
    d.day() == d.days_in_month()
}

/// Full months counted back from `later` towards `earlier` (Appendix J (b)(5)(ii)),
/// the days left from `earlier` to the first of them, and that date.
///
/// Months run from a date to the same date; when `later` is the last day of its
/// month and `earlier` falls on a later day of the month than `later` (Feb 28
/// and the 30th, Apr 30 and the 31st), the months counted back run to day
/// `earlier.day()`, clamped to each month's end: last day to last day, and the
/// last day of February standing for the 29th or 30th ((b)(3)). Otherwise they
/// run to `later.day()`, clamped (a payment on the 30th counts back to the last
/// day of February).
fn months_back(earlier: Date, later: Date, field: &'static str) -> Result<(u32, u32, Date)> {
    let anchor = month_anchor(earlier, later);
    let span = (i64::from(later.year()) - i64::from(earlier.year())) * 12
        + i64::from(later.month())
        - i64::from(earlier.month());
    let mut months = span;
    let mut back = add_months(later, -months, anchor, field)?;
    if back < earlier {
        months -= 1;
        back = add_months(later, -months, anchor, field)?;
    }
    let months = u32::try_from(months).map_err(|_| dates_out_of_order(field))?;
    let days = u32::try_from(days_between(earlier, back)).map_err(|_| dates_out_of_order(field))?;
    Ok((months, days, back))
}

/// The day of the month that months counted back from `later` fall on (see [`months_back`]).
fn month_anchor(earlier: Date, later: Date) -> i8 {
    if is_month_end(later) && earlier.day() > later.day() {
        earlier.day()
    } else {
        later.day()
    }
}

fn dates_out_of_order(field: &'static str) -> EngineError {
    EngineError::out_of_range(field, "a date falls before the start of the term")
}

/// Full unit-periods t and the fraction f from `start` to `date`, by Appendix J (b)(5):
///
/// - month, n months, semimonth: 30 × full months counted back from `date` plus the
///   remaining days, divided by 30·n (month: f = remaining days/30) or by 15;
/// - day, n days, week, n weeks: days divided by the days in the unit;
/// - year: full years counted back, plus the remaining months/12 when the rest is a
///   whole number of months, else the remaining days/365.
///
/// A fraction of exactly 1 (30 remaining days in a month unit, 365 in a year) is
/// carried into t: (1 + 1·i) = (1 + i), so nothing changes but the form.
///
/// # Errors
/// `date` before `start`, a unit of zero length, or a date off the calendar.
pub fn unit_periods_between(start: Date, date: Date, unit: UnitPeriod) -> Result<(u32, Decimal)> {
    unit.check()?;
    place_in_unit_periods(start, date, unit, "payments")
}

/// [`unit_periods_between`] for a unit already checked, errors naming `field`.
fn place_in_unit_periods(
    start: Date,
    date: Date,
    unit: UnitPeriod,
    field: &'static str,
) -> Result<(u32, Decimal)> {
    let days = days_between(start, date);
    if days < 0 {
        return Err(dates_out_of_order(field));
    }
    let days = u64::try_from(days).map_err(|_| dates_out_of_order(field))?;
    // (numerator in some count, count per unit-period)
    let (count, per_unit): (u64, u64) = match unit {
        UnitPeriod::Day => (days, 1),
        UnitPeriod::Days(n) => (days, u64::from(n)),
        UnitPeriod::Week => (days, 7),
        UnitPeriod::Weeks(n) => (days, 7 * u64::from(n)),
        UnitPeriod::Semimonth | UnitPeriod::Month | UnitPeriod::Months(_) | UnitPeriod::Quarter => {
            let (months, rest, _) = months_back(start, date, field)?;
            let per = match unit {
                UnitPeriod::Semimonth => 15,
                UnitPeriod::Month => 30,
                UnitPeriod::Quarter => 90,
                UnitPeriod::Months(n) => 30 * u64::from(n),
                _ => unreachable!("matched above"),
            };
            (30 * u64::from(months) + u64::from(rest), per)
        }
        UnitPeriod::Year => {
            let (months, rest, _) = months_back(start, date, field)?;
            let years = months / 12;
            if rest == 0 {
                (u64::from(months), 12)
            } else {
                // Full years back from `date`, then the days from `start` to that point.
                let year_back = add_months(
                    date,
                    -i64::from(years * 12),
                    month_anchor(start, date),
                    field,
                )?;
                let left = u64::try_from(days_between(start, year_back))
                    .map_err(|_| dates_out_of_order(field))?;
                (365 * u64::from(years) + left, 365)
            }
        }
    };
    let t = count / per_unit;
    let t = u32::try_from(t).map_err(|_| {
        EngineError::out_of_range(field, "a flow lies too many unit-periods from the start")
    })?;
    let f = Decimal::from(count % per_unit) / Decimal::from(per_unit);
    Ok((t, f))
}

// ---------------------------------------------------------------------------
// Dated flows and payment series
// ---------------------------------------------------------------------------

/// An advance or a payment on a date.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct DatedFlow {
    pub amount: Decimal,
    pub date: Date,
}

/// `count` payments of `amount` from `first_date` at `frequency`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PaymentSeries {
    pub amount: Decimal,
    pub count: u32,
    pub first_date: Date,
    pub frequency: Frequency,
}

impl PaymentSeries {
    /// The payment dates.
    ///
    /// - monthly, quarterly, semiannual, annual: 1, 3, 6 or 12 calendar months
    ///   apart, each counted from the first date on its day of the month; a day
    ///   the month lacks (the 29th–31st) falls on the month's last day
    ///   (Jan 31 → Feb 28 → Mar 31 → Apr 30);
    /// - semimonthly: two fixed days of each month 15 apart, the first date's day
    ///   d and d + 15 when d ≤ 15 (the 1st and the 16th), else d − 15 and d (a
    ///   first date on the 16th pays on the 16th and the 1st; on the 31st, the 16th
    ///   and the last day), clamped to the month's last day. For d ≥ 16 this is
    ///   Residue's reading: "the day 15 days later" would move with the month's length;
    /// - weekly, biweekly, daily: 7, 14 or 1 days apart.
    ///
    /// # Errors
    /// A count of zero or above [`MAX_PAYMENTS`], or a date off the calendar.
    pub fn dates(&self) -> Result<Vec<Date>> {
        let field = "payments";
        if self.count == 0 || self.count > MAX_PAYMENTS {
            return Err(EngineError::out_of_range(
                field,
                format!("a payment series must have 1 to {MAX_PAYMENTS} payments"),
            ));
        }
        calendar::dates_named(self.first_date, self.count, self.frequency, field)
    }

    /// The payments as dated flows.
    ///
    /// # Errors
    /// As [`PaymentSeries::dates`].
    pub fn flows(&self) -> Result<Vec<DatedFlow>> {
        Ok(self
            .dates()?
            .into_iter()
            .map(|date| DatedFlow {
                amount: self.amount,
                date,
            })
            .collect())
    }
}

/// The flows of several series, in order.
///
/// # Errors
/// As [`PaymentSeries::dates`].
pub fn expand_series(series: &[PaymentSeries]) -> Result<Vec<DatedFlow>> {
    let mut flows = Vec::new();
    for s in series {
        flows.extend(s.flows()?);
    }
    Ok(flows)
}

/// Which rule of (b)(4) chose the unit-period.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum UnitPeriodRule {
    /// The common period that occurs most often.
    MostFrequentCommonPeriod,
    /// The smaller of common periods that occur equally often.
    SmallerOfEquallyFrequent,
    /// No common period: the average period, rounded to the nearest standard interval.
    AverageOfPeriods,
    /// A single advance and a single payment: the term, at most a year.
    SingleAdvanceSinglePayment,
}

/// The APR of dated flows, with the unit-period found and each flow's (t, f).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DatedAprResult {
    pub apr: AprResult,
    pub unit_period: UnitPeriod,
    /// The rule of (b)(4) that chose the unit-period; `None` when the caller gave it.
    pub rule: Option<UnitPeriodRule>,
    /// The first advance's date: the start of the term.
    pub start: Date,
    /// Each advance, in the order given, placed in unit-periods (count 1).
    pub advances: Vec<UnitFlow>,
    /// Each payment, in the order given, placed in unit-periods (count 1).
    pub payments: Vec<UnitFlow>,
}

/// The unit-period of Appendix J (b)(4) for these advance and payment dates.
///
/// The periods are the times between consecutive distinct dates, the first from
/// the start of the term (the earliest advance). Each is named as one interval:
/// a whole number of months (by the month rules of (b)(3)) if it is one, else a
/// semimonth if it is one half of a month on two days 15 apart (the 1st and the
/// 16th, the 15th and the last day), else so many weeks if its days divide by 7,
/// else so many days. Periods over a year are not candidates.
///
/// - The common period (one occurring more than once) that occurs most often.
/// - *Unconfirmed reading (REGULATIONS.md):* two or more equally often: the smaller.
/// - *Unconfirmed reading:* no common period: the average period (days of the
///   term ÷ number of periods) rounded to the nearest standard interval (a day,
///   1 to 52 weeks, a semimonth of 365/24 days, 1 to 11 months of 365/12 days,
///   a year), the lower at a midpoint.
/// - A single advance and a single payment: the term, capped at a year ((b)(4)(ii),
///   (b)(5)(vi)–(vii)): n whole months → n months, else the days of the term.
///
/// # Errors
/// No advances or payments, a payment before the first advance, a term of no
/// length, or a date off the calendar.
pub fn find_unit_period(
    advance_dates: &[Date],
    payment_dates: &[Date],
) -> Result<(UnitPeriod, UnitPeriodRule)> {
    let start = *advance_dates
        .iter()
        .min()
        .ok_or_else(|| EngineError::out_of_range("advances", "at least one is needed"))?;
    if payment_dates.is_empty() {
        return Err(EngineError::out_of_range(
            "payments",
            "at least one is needed",
        ));
    }
    if payment_dates.iter().any(|&d| d < start) {
        return Err(EngineError::out_of_range(
            "payments",
            "a payment falls before the first advance (the start of the term)",
        ));
    }
    let mut dates: Vec<Date> = advance_dates.iter().chain(payment_dates).copied().collect();
    dates.sort_unstable();
    dates.dedup();
    if dates.len() < 2 {
        return Err(EngineError::no_solution(
            Some("payments"),
            "the term has no length: every flow falls on the start date",
        ));
    }
    let single_advance = advance_dates.iter().all(|&d| d == start);
    let last_payment = *payment_dates.iter().max().expect("not empty");
    let single_payment = payment_dates.iter().all(|&d| d == last_payment);
    if single_advance && single_payment {
        let (months, rest, _) = months_back(start, last_payment, "payments")?;
        let unit = if months >= 12 {
            UnitPeriod::Year
        } else if rest == 0 {
            UnitPeriod::Months(months).canonical()
        } else {
            let days = u32::try_from(days_between(start, last_payment))
                .map_err(|_| dates_out_of_order("payments"))?;
            UnitPeriod::Days(days).canonical()
        };
        return Ok((unit, UnitPeriodRule::SingleAdvanceSinglePayment));
    }
    let mut tally: Vec<(UnitPeriod, u32)> = Vec::new();
    for pair in dates.windows(2) {
        if let Some(label) = classify_period(pair[0], pair[1])? {
            match tally.iter_mut().find(|(u, _)| *u == label) {
                Some((_, n)) => *n += 1,
                None => tally.push((label, 1)),
            }
        }
    }
    let most = tally.iter().map(|&(_, n)| n).max().unwrap_or(0);
    if most >= 2 {
        let leaders: Vec<UnitPeriod> = tally
            .iter()
            .filter(|&&(_, n)| n == most)
            .map(|&(u, _)| u)
            .collect();
        // Unconfirmed reading (REGULATIONS.md (b)(4)): equally frequent common
        // periods → the smaller.
        let mut best = leaders[0];
        for &u in &leaders[1..] {
            if u.shorter_than(best) {
                best = u;
            }
        }
        let rule = if leaders.len() > 1 {
            UnitPeriodRule::SmallerOfEquallyFrequent
        } else {
            UnitPeriodRule::MostFrequentCommonPeriod
        };
        return Ok((best, rule));
    }
    // Unconfirmed reading: no common period → the average, to the nearest standard interval.
    let term_days = u64::try_from(days_between(start, *dates.last().expect("two or more")))
        .map_err(|_| dates_out_of_order("payments"))?;
    let periods = (dates.len() - 1) as u64;
    Ok((
        nearest_standard_interval(term_days, periods),
        UnitPeriodRule::AverageOfPeriods,
    ))
}

/// Names the period from `a` to `b` (a < b) as one interval, or `None` over a year.
fn classify_period(a: Date, b: Date) -> Result<Option<UnitPeriod>> {
    let (months, rest, _) = months_back(a, b, "payments")?;
    if rest == 0 && months >= 1 {
        return Ok((months <= 12).then(|| UnitPeriod::Months(months).canonical()));
    }
    if is_semimonth(a, b) {
        return Ok(Some(UnitPeriod::Semimonth));
    }
    let days = u32::try_from(days_between(a, b)).map_err(|_| dates_out_of_order("payments"))?;
    Ok(if days > 365 {
        None
    } else if days % 7 == 0 {
        Some(UnitPeriod::Weeks(days / 7).canonical())
    } else {
        Some(UnitPeriod::Days(days).canonical())
    })
}

/// One half of a month on two days 15 apart: in the same month from day d to day
/// d + 15 (or to the last day, when shorter, or from the 15th to the last day), or
/// into the next month from day d + 15 (or the last day) to day d.
fn is_semimonth(a: Date, b: Date) -> bool {
    let month_index = |d: Date| i32::from(d.year()) * 12 + i32::from(d.month());
    let dim_a = a.days_in_month();
    if month_index(a) == month_index(b) {
        b.day() == (a.day() + 15).min(dim_a) || (a.day() == 15 && is_month_end(b))
    } else if month_index(a) + 1 == month_index(b) {
        a.day() == (b.day() + 15).min(dim_a) || (is_month_end(a) && b.day() == 15)
    } else {
        false
    }
}

/// The standard interval nearest `term_days / periods` days, the lower at a midpoint.
fn nearest_standard_interval(term_days: u64, periods: u64) -> UnitPeriod {
    let mut candidates = vec![UnitPeriod::Day, UnitPeriod::Week];
    candidates.extend((2..=52).map(UnitPeriod::Weeks));
    candidates.push(UnitPeriod::Semimonth);
    candidates.push(UnitPeriod::Month);
    candidates.extend((2..=11).map(|n| UnitPeriod::Months(n).canonical()));
    candidates.push(UnitPeriod::Year);
    // |T/P − a/b| = |T·b − a·P| / (P·b); compare |T·b − a·P|/b exactly across candidates.
    let distance = |u: UnitPeriod| -> (u128, u128) {
        let (a, b) = u.nominal_days_ratio();
        let lhs = u128::from(term_days) * u128::from(b);
        let rhs = u128::from(a) * u128::from(periods);
        (lhs.abs_diff(rhs), u128::from(b))
    };
    let mut best = candidates[0];
    for &u in &candidates[1..] {
        let (dn, dd) = distance(u);
        let (bn, bd) = distance(best);
        // Strictly nearer replaces; at an equal distance the lower (shorter) stays.
        if dn * bd < bn * dd || (dn * bd == bn * dd && u.shorter_than(best)) {
            best = u;
        }
    }
    best
}

/// The APR of dated advances and payments by Appendix J: the unit-period by
/// [`find_unit_period`], each flow's (t, f) from the first advance by
/// [`unit_periods_between`], then [`solve_apr`].
///
/// # Errors
/// As [`find_unit_period`] and [`solve_apr`].
///
/// # Example
/// ```
/// // Regulation Z Appendix J (c)(1)(i): 5,000 advanced on 10 January 1978, 24
/// // monthly payments of 230 from 10 February 1978: an APR of 9.69 %.
/// use residue::engine::apr::{apr_from_dates, DatedFlow, PaymentSeries};
/// use residue::engine::rate::Frequency;
/// let advance = DatedFlow { amount: "5000".parse().unwrap(), date: "1978-01-10".parse().unwrap() };
/// let payments = PaymentSeries {
///     amount: "230".parse().unwrap(),
///     count: 24,
///     first_date: "1978-02-10".parse().unwrap(),
///     frequency: Frequency::Monthly,
/// }
/// .flows()
/// .unwrap();
/// let r = apr_from_dates(&[advance], &payments).unwrap();
/// assert_eq!(r.apr.apr_percent_rounded.to_string(), "9.69");
/// ```
pub fn apr_from_dates(advances: &[DatedFlow], payments: &[DatedFlow]) -> Result<DatedAprResult> {
    let advance_dates: Vec<Date> = advances.iter().map(|f| f.date).collect();
    let payment_dates: Vec<Date> = payments.iter().map(|f| f.date).collect();
    let (unit, rule) = find_unit_period(&advance_dates, &payment_dates)?;
    let mut result = apr_from_dates_with_unit(advances, payments, unit)?;
    result.rule = Some(rule);
    Ok(result)
}

/// As [`apr_from_dates`], with the unit-period given rather than found (`rule` is `None`).
///
/// # Errors
/// As [`solve_apr`], or a payment before the first advance.
pub fn apr_from_dates_with_unit(
    advances: &[DatedFlow],
    payments: &[DatedFlow],
    unit: UnitPeriod,
) -> Result<DatedAprResult> {
    unit.check()?;
    let start = advances
        .iter()
        .map(|f| f.date)
        .min()
        .ok_or_else(|| EngineError::out_of_range("advances", "at least one is needed"))?;
    let place = |flows: &[DatedFlow], field: &'static str| -> Result<Vec<UnitFlow>> {
        flows
            .iter()
            .map(|flow| {
                if flow.date < start {
                    return Err(EngineError::out_of_range(
                        field,
                        "a payment falls before the first advance (the start of the term)",
                    ));
                }
                let (t, f) = place_in_unit_periods(start, flow.date, unit, field)?;
                Ok(UnitFlow::single(flow.amount, t, f))
            })
            .collect()
    };
    let placed_advances = place(advances, "advances")?;
    let placed_payments = place(payments, "payments")?;
    let apr = solve_apr(
        &into_runs(&placed_advances),
        &into_runs(&placed_payments),
        unit,
    )?;
    Ok(DatedAprResult {
        apr,
        unit_period: unit,
        rule: None,
        start,
        advances: placed_advances,
        payments: placed_payments,
    })
}

/// Joins flows of equal amount and fraction one unit-period apart into runs, so
/// the solver sums them in closed form.
fn into_runs(flows: &[UnitFlow]) -> Vec<UnitFlow> {
    let mut sorted: Vec<UnitFlow> = flows.to_vec();
    sorted.sort_by_key(|a| (a.periods, a.fraction));
    let mut runs: Vec<UnitFlow> = Vec::with_capacity(sorted.len());
    for flow in sorted {
        if let Some(last) = runs.last_mut() {
            if last.amount == flow.amount
                && last.fraction == flow.fraction
                && u64::from(last.periods) + u64::from(last.count) == u64::from(flow.periods)
            {
                last.count += flow.count;
                continue;
            }
        }
        runs.push(flow);
    }
    runs
}

// ---------------------------------------------------------------------------
// EU APRC (Directive 2008/48/EC Annex I)
// ---------------------------------------------------------------------------

/// A drawdown or a repayment (or charge) at a time in years from the first drawdown.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct YearFlow {
    pub amount: Decimal,
    /// Years from the first drawdown (t_k or s_l of Annex I).
    pub years: Decimal,
}

/// How the times from the first drawdown are counted in years (Annex I remark (c):
/// a year has 365 days (366 in leap years), 52 weeks or 12 equal months).
///
/// On every basis a time that is not a whole number of its periods is whole
/// periods counted back from the flow's date towards the first drawdown, plus the
/// days left ([`years_between`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AprcTimeBasis {
    /// Whole months ÷ 12 (months counted back with the month-end rules of Appendix J
    /// (b)(3)), plus any days left.
    EqualMonths,
    /// Whole weeks ÷ 52, plus any days left.
    Weeks,
    /// Whole years, plus the days left ÷ 365 or 366.
    Days,
}

impl AprcTimeBasis {
    /// The name in requests and answers.
    pub fn name(self) -> &'static str {
        match self {
            AprcTimeBasis::EqualMonths => "equal_months",
            AprcTimeBasis::Weeks => "weeks",
            AprcTimeBasis::Days => "days",
        }
    }
}

/// The time basis a caller asks for: one of the three, or `auto`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum AprcTimeChoice {
    /// Equal months when every flow falls on a monthly anniversary of the first
    /// drawdown (month-end rules of Appendix J (b)(3)); else weeks when every flow
    /// falls a whole number of weeks after it; else days.
    #[default]
    Auto,
    /// This basis for every flow.
    Basis(AprcTimeBasis),
}

impl AprcTimeChoice {
    /// `auto`, `days`, `weeks` or `equal_months`.
    pub fn parse(s: &str) -> Option<Self> {
        match s {
            "auto" => Some(AprcTimeChoice::Auto),
            "days" => Some(AprcTimeChoice::Basis(AprcTimeBasis::Days)),
            "weeks" => Some(AprcTimeChoice::Basis(AprcTimeBasis::Weeks)),
            "equal_months" => Some(AprcTimeChoice::Basis(AprcTimeBasis::EqualMonths)),
            _ => None,
        }
    }
}

/// The APRC.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AprcResult {
    /// X × 100, unrounded.
    pub aprc_percent: Decimal,
    /// Rounded to one decimal, halves up (Annex I remark (d): at least one decimal).
    pub aprc_percent_rounded: Decimal,
    /// X.
    pub annual_rate: Decimal,
    /// Steps of the decimal iteration.
    pub iterations: u32,
}

/// The APRC of dated flows, with the times used.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DatedAprcResult {
    pub aprc: AprcResult,
    pub time_basis: AprcTimeBasis,
    /// Each drawdown, in the order given, at its time in years.
    pub drawdowns: Vec<YearFlow>,
    /// Each repayment, in the order given, at its time in years.
    pub repayments: Vec<YearFlow>,
}

/// Solves Σ C_k (1 + X)^(−t_k) = Σ D_l (1 + X)^(−s_l) for X ≥ 0 (Directive
/// 2008/48/EC Annex I).
///
/// Powers: (1 + X)^(−t) is v^t by [`super::power::pow`] when t is whole (v = 1/(1 + X)),
/// else exp(−t·ln(1 + X)) by rust_decimal's `ln` and `exp` (Taylor series):
/// checked here against Python's `decimal` at 40 digits to about 1e-27 relative
/// (1.03037^(365/182), 1.1^(−1.5)), so X is good to about 1e-22 and far below
/// the one decimal published.
///
/// # Errors
/// No drawdowns or repayments, a negative amount or time, a time over
/// [`MAX_APRC_YEARS`], repayments totalling less than the drawdowns, no root, or
/// an overflow.
pub fn solve_aprc_years(drawdowns: &[YearFlow], repayments: &[YearFlow]) -> Result<AprcResult> {
    let drawn = check_year_flows(drawdowns, "drawdowns")?;
    let repaid = check_year_flows(repayments, "repayments")?;
    let result = |x: Decimal, iterations: u32| -> Result<AprcResult> {
        let aprc_percent = x
            .checked_mul(Decimal::ONE_HUNDRED)
            .or_overflow("the APRC")?;
        Ok(AprcResult {
            aprc_percent,
            aprc_percent_rounded: aprc_percent
                .round_dp_with_strategy(1, RoundingStrategy::MidpointAwayFromZero),
            annual_rate: x,
            iterations,
        })
    };
    if repaid < drawn {
        return Err(EngineError::no_solution(
            Some("repayments"),
            "the repayments total less than the drawdowns: the APRC would be negative",
        ));
    }
    if repaid == drawn {
        return result(Decimal::ZERO, 0);
    }
    let estimate = estimate_rate(|x| aprc_equation_f64(drawdowns, repayments, x));
    let (x, iterations) = solve_falling(
        |x| aprc_equation(drawdowns, repayments, x),
        estimate,
        "repayments",
    )?;
    result(x, iterations)
}

fn check_year_flows(flows: &[YearFlow], field: &'static str) -> Result<Decimal> {
    if flows.is_empty() {
        return Err(EngineError::out_of_range(field, "at least one is needed"));
    }
    let mut total = Decimal::ZERO;
    for flow in flows {
        if flow.amount.is_sign_negative() && !flow.amount.is_zero() {
            return Err(EngineError::out_of_range(
                field,
                "an amount cannot be negative",
            ));
        }
        if flow.years.is_sign_negative() && !flow.years.is_zero() {
            return Err(EngineError::out_of_range(
                field,
                "a flow falls before the first drawdown",
            ));
        }
        if flow.years > Decimal::from(MAX_APRC_YEARS) {
            return Err(EngineError::out_of_range(
                field,
                format!("a flow falls more than {MAX_APRC_YEARS} years after the first drawdown"),
            ));
        }
        total = total
            .checked_add(flow.amount)
            .or_overflow("the total of the flows")?;
    }
    if total.is_zero() {
        return Err(EngineError::out_of_range(
            field,
            "the amounts must total more than zero",
        ));
    }
    Ok(total)
}

/// (1 + X)^(−t) from v = 1/(1 + X) and ln(1 + X).
fn discount(t: Decimal, v: Decimal, log: Decimal) -> Result<Decimal> {
    let what = "a discount factor";
    if t.fract().is_zero() {
        if let Some(whole) = t.to_u32() {
            return super::power::pow(v, whole).or_overflow(what);
        }
        let whole = t.to_i64().or_overflow(what)?;
        return v.checked_powi(whole).or_overflow(what);
    }
    let exponent = -(t.checked_mul(log).or_overflow(what)?);
    // e^exponent (exponent ≤ 0) fails only when e^|exponent| overflows, that is
    // when the factor is below the smallest decimal (1e-28): it is then 0.
    Ok(exponent.checked_exp().unwrap_or(Decimal::ZERO))
}

/// H(X) = Σ D (1 + X)^(−s) − Σ C (1 + X)^(−t), and H'(X).
fn aprc_equation(
    drawdowns: &[YearFlow],
    repayments: &[YearFlow],
    x: Decimal,
) -> Result<(Decimal, Decimal)> {
    let what = "the APRC equation";
    let one_plus = Decimal::ONE.checked_add(x).or_overflow(what)?;
    let v = Decimal::ONE.checked_div(one_plus).or_overflow(what)?;
    let log = one_plus.checked_ln().or_overflow(what)?;
    let mut value = Decimal::ZERO;
    let mut slope = Decimal::ZERO;
    for (flows, sign) in [
        (repayments, Decimal::ONE),
        (drawdowns, Decimal::NEGATIVE_ONE),
    ] {
        for flow in flows {
            let discounted = flow
                .amount
                .checked_mul(discount(flow.years, v, log)?)
                .or_overflow(what)?;
            // d/dX (1 + X)^(−t) = −t·(1 + X)^(−t)·v
            let discounted_slope = -(discounted
                .checked_mul(flow.years)
                .and_then(|p| p.checked_mul(v))
                .or_overflow(what)?);
            value = value.checked_add(sign * discounted).or_overflow(what)?;
            slope = slope
                .checked_add(sign * discounted_slope)
                .or_overflow(what)?;
        }
    }
    Ok((value, slope))
}

fn aprc_equation_f64(
    drawdowns: &[YearFlow],
    repayments: &[YearFlow],
    x: f64,
) -> Option<(f64, f64)> {
    let mut value = 0.0;
    let mut slope = 0.0;
    for (flows, sign) in [(repayments, 1.0), (drawdowns, -1.0)] {
        for flow in flows {
            let a = flow.amount.to_f64()?;
            let t = flow.years.to_f64()?;
            let discounted = a * (1.0 + x).powf(-t);
            value += sign * discounted;
            slope += sign * (-t * discounted / (1.0 + x));
        }
    }
    (value.is_finite() && slope.is_finite()).then_some((value, slope))
}

/// The APRC of dated drawdowns and repayments (Directive 2008/48/EC Annex I),
/// times in years from the first drawdown.
///
/// Remark (c) lets a year be 365 days (366 in leap years), 52 weeks or 12 equal
/// months; `choice` picks the basis or leaves it to [`AprcTimeChoice::Auto`]. Times
/// are counted by [`years_between`]. The time basis is reported.
///
/// # Errors
/// A flow before the first drawdown, or as [`solve_aprc_years`].
///
/// # Example
/// ```
/// // Directive 98/7/EC Annex III, first example: 1,000 lent on 1994-01-01 and repaid
/// // by 1,200 on 1995-07-01 has an APRC of 12.96 % on a days basis.
/// use residue::engine::apr::{solve_aprc_with, AprcTimeChoice, AprcTimeBasis, DatedFlow};
/// let flow = |amount: &str, date: &str| DatedFlow { amount: amount.parse().unwrap(), date: date.parse().unwrap() };
/// let r = solve_aprc_with(
///     &[flow("1000", "1994-01-01")],
///     &[flow("1200", "1995-07-01")],
///     AprcTimeChoice::Basis(AprcTimeBasis::Days),
/// ).unwrap();
/// assert_eq!(r.aprc.aprc_percent.round_dp(2).to_string(), "12.96");
/// ```
pub fn solve_aprc_with(
    drawdowns: &[DatedFlow],
    repayments: &[DatedFlow],
    choice: AprcTimeChoice,
) -> Result<DatedAprcResult> {
    let start = drawdowns
        .iter()
        .map(|f| f.date)
        .min()
        .ok_or_else(|| EngineError::out_of_range("drawdowns", "at least one is needed"))?;
    if repayments.is_empty() {
        return Err(EngineError::out_of_range(
            "repayments",
            "at least one is needed",
        ));
    }
    if repayments.iter().any(|f| f.date < start) {
        return Err(EngineError::out_of_range(
            "repayments",
            "a repayment falls before the first drawdown",
        ));
    }
    let basis = match choice {
        AprcTimeChoice::Basis(b) => b,
        AprcTimeChoice::Auto => {
            let mut monthly = true;
            let mut weekly = true;
            for flow in drawdowns.iter().chain(repayments) {
                let (_, rest, _) = months_back(start, flow.date, "repayments")?;
                monthly &= rest == 0;
                weekly &= days_between(start, flow.date) % 7 == 0;
            }
            if monthly {
                AprcTimeBasis::EqualMonths
            } else if weekly {
                AprcTimeBasis::Weeks
            } else {
                AprcTimeBasis::Days
            }
        }
    };
    let place = |flows: &[DatedFlow], field: &'static str| -> Result<Vec<YearFlow>> {
        flows
            .iter()
            .map(|flow| {
                Ok(YearFlow {
                    amount: flow.amount,
                    years: years_from(start, flow.date, basis, field)?,
                })
            })
            .collect()
    };
    let placed_drawdowns = place(drawdowns, "drawdowns")?;
    let placed_repayments = place(repayments, "repayments")?;
    let aprc = solve_aprc_years(&placed_drawdowns, &placed_repayments)?;
    Ok(DatedAprcResult {
        aprc,
        time_basis: basis,
        drawdowns: placed_drawdowns,
        repayments: placed_repayments,
    })
}

/// [`solve_aprc_with`] with the basis chosen by [`AprcTimeChoice::Auto`].
///
/// # Errors
/// As [`solve_aprc_with`].
pub fn solve_aprc(drawdowns: &[DatedFlow], repayments: &[DatedFlow]) -> Result<DatedAprcResult> {
    solve_aprc_with(drawdowns, repayments, AprcTimeChoice::Auto)
}

/// Years from `start` to `date` on a time basis, by the counting rule that follows
/// remark (c) of Directive 2008/48/EC Annex I (Residue's reading of it):
///
/// 1. whole periods of the basis (years for `days`, months for `equal_months`,
///    weeks for `weeks`) are counted back from `date` towards `start`, reaching the
///    day B (months and years with the month-end rules of Appendix J (b)(3): from
///    28 February 2025 one year back is 29 February 2024 when the drawdown was on
///    the 29th);
/// 2. the days left, from `start` (excluded) to B (included), are divided by the
///    days of the complete year counted back from B, "the last day", to the same
///    day of the previous year: 366 when that year holds a 29 February, else 365;
/// 3. t = whole periods ÷ (1, 12 or 52) + days left ÷ (365 or 366).
///
/// # Errors
/// `date` before `start`, or a date off the calendar.
pub fn years_between(start: Date, date: Date, basis: AprcTimeBasis) -> Result<Decimal> {
    years_from(start, date, basis, "repayments")
}

/// [`years_between`], errors naming `field`.
fn years_from(
    start: Date,
    date: Date,
    basis: AprcTimeBasis,
    field: &'static str,
) -> Result<Decimal> {
    let days = days_between(start, date);
    if days < 0 {
        return Err(EngineError::out_of_range(
            field,
            "a flow falls before the first drawdown",
        ));
    }
    // Whole periods counted back from `date`, the day B they reach, and the
    // periods a year.
    let (whole, per_year, back) = match basis {
        AprcTimeBasis::EqualMonths => {
            let (months, _, back) = months_back(start, date, field)?;
            (i64::from(months), 12, back)
        }
        AprcTimeBasis::Weeks => {
            let weeks = days / 7;
            let back = date
                .checked_sub(Span::new().days(weeks * 7))
                .map_err(|_| dates_out_of_order(field))?;
            (weeks, 52, back)
        }
        AprcTimeBasis::Days => {
            let (months, _, _) = months_back(start, date, field)?;
            let years = i64::from(months / 12);
            let back = add_months(date, -12 * years, month_anchor(start, date), field)?;
            (years, 1, back)
        }
    };
    let rest = days_between(start, back);
    let mut t = Decimal::from(whole) / Decimal::from(per_year);
    if rest != 0 {
        let year_before = add_months(back, -12, back.day(), field)?;
        let year_days = days_between(year_before, back);
        t += Decimal::from(rest) / Decimal::from(year_days);
    }
    Ok(t)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::error::ErrorKind;
    use crate::engine::loan::payment_for_term;
    use crate::engine::rate::nth_root;
    use jiff::civil::date;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    fn close(x: Decimal, want: &str, tolerance: &str) {
        assert!(
            (x - d(want)).abs() < d(tolerance),
            "{x} is not within {tolerance} of {want}"
        );
    }

    fn advance(amount: &str) -> Vec<UnitFlow> {
        vec![UnitFlow::single(d(amount), 0, Decimal::ZERO)]
    }

    fn flow(amount: &str, on: Date) -> DatedFlow {
        DatedFlow {
            amount: d(amount),
            date: on,
        }
    }

    fn series(amount: &str, count: u32, first: Date, frequency: Frequency) -> Vec<DatedFlow> {
        PaymentSeries {
            amount: d(amount),
            count,
            first_date: first,
            frequency,
        }
        .flows()
        .unwrap()
    }

    /// (G(i), G'(i)) summed flow by flow, every run expanded: the reference for the closed form.
    fn equation_by_loop(advances: &[UnitFlow], payments: &[UnitFlow], i: Decimal) -> Decimal {
        let mut g = Decimal::ZERO;
        for (flows, sign) in [(payments, Decimal::ONE), (advances, Decimal::NEGATIVE_ONE)] {
            for f in flows {
                for m in 0..f.count {
                    let t = f.periods + m;
                    g += sign * f.amount
                        / ((Decimal::ONE + f.fraction * i) * (Decimal::ONE + i).powi(i64::from(t)));
                }
            }
        }
        g
    }

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
    fn appendix_j_c_1_i_monthly_payments_from_dates() {
        // 12 CFR 1026 Appendix J (c)(1)(i): 9.69 %.
        let r = apr_from_dates(
            &[flow("5000", date(1978, 1, 10))],
            &series("230", 24, date(1978, 2, 10), Frequency::Monthly),
        )
        .unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Month);
        assert_eq!(r.rule, Some(UnitPeriodRule::MostFrequentCommonPeriod));
        assert_eq!((r.payments[0].periods, r.payments[0].fraction), (1, d("0")));
        assert_eq!(
            (r.payments[23].periods, r.payments[23].fraction),
            (24, d("0"))
        );
        close(
            r.apr.periodic_rate,
            "0.0080714233852339729075831461",
            "1e-20",
        );
        assert_eq!(r.apr.apr_percent_rounded, d("9.69"));
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
    fn appendix_j_c_1_ii_odd_first_period_from_dates() {
        // 12 CFR 1026 Appendix J (c)(1)(ii): 11.82 %, first payment at t = 1, f = 19/30
        // (one month back from 4-1-78 is 3-1-78; 2-10-78 to 3-1-78 is 19 days).
        let r = apr_from_dates(
            &[flow("6000", date(1978, 2, 10))],
            &series("200", 36, date(1978, 4, 1), Frequency::Monthly),
        )
        .unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Month);
        let f = Decimal::from(19) / Decimal::from(30);
        assert_eq!((r.payments[0].periods, r.payments[0].fraction), (1, f));
        assert_eq!((r.payments[35].periods, r.payments[35].fraction), (36, f));
        close(
            r.apr.periodic_rate,
            "0.0098470902423550229128265613",
            "1e-20",
        );
        assert_eq!(r.apr.apr_percent_rounded, d("11.82"));
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
    fn appendix_j_c_1_iii_semimonthly_from_dates() {
        // 12 CFR 1026 Appendix J (c)(1)(iii): 10.34 %; 2-23-78 to 3-1-78 is 6 days: t = 0, f = 6/15.
        let payments = series("219.17", 24, date(1978, 3, 1), Frequency::Semimonthly);
        assert_eq!(payments[1].date, date(1978, 3, 16));
        assert_eq!(payments[23].date, date(1979, 2, 16));
        let r = apr_from_dates(&[flow("5000", date(1978, 2, 23))], &payments).unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Semimonth);
        for (k, p) in r.payments.iter().enumerate() {
            assert_eq!((p.periods, p.fraction), (k as u32, d("0.4")), "payment {k}");
        }
        close(
            r.apr.periodic_rate,
            "0.0043074595463029554736780516",
            "1e-20",
        );
        assert_eq!(r.apr.apr_percent_rounded, d("10.34"));
    }

    #[test]
    fn appendix_j_c_2_i_irregular_first_payment() {
        // 12 CFR 1026 Appendix J (c)(2)(i): $5,000 advanced 1-10-78; $250 on 2-10-78,
        // then 23 monthly payments of $230: 10.08 %. i = 0.0084024083559892373993428240
        let r = solve_apr(
            &advance("5000"),
            &[
                UnitFlow::single(d("250"), 1, Decimal::ZERO),
                UnitFlow::run(d("230"), 2, Decimal::ZERO, 23),
            ],
            UnitPeriod::Month,
        )
        .unwrap();
        close(r.periodic_rate, "0.0084024083559892373993428240", "1e-20");
        assert_eq!(r.apr_percent_rounded, d("10.08"));

        let mut payments = vec![flow("250", date(1978, 2, 10))];
        payments.extend(series("230", 23, date(1978, 3, 10), Frequency::Monthly));
        let dated = apr_from_dates(&[flow("5000", date(1978, 1, 10))], &payments).unwrap();
        assert_eq!(dated.unit_period, UnitPeriod::Month);
        close(
            dated.apr.periodic_rate,
            "0.0084024083559892373993428240",
            "1e-20",
        );
        assert_eq!(dated.apr.apr_percent_rounded, d("10.08"));
    }

    #[test]
    fn appendix_j_c_3_i_irregular_final_payment() {
        // 12 CFR 1026 Appendix J (c)(3)(i): $5,000 advanced 1-10-78; 23 monthly payments
        // of $230 from 2-10-78 and a final $280: 10.50 %. i = 0.0087503907148883816406389480
        let r = solve_apr(
            &advance("5000"),
            &[
                UnitFlow::run(d("230"), 1, Decimal::ZERO, 23),
                UnitFlow::single(d("280"), 24, Decimal::ZERO),
            ],
            UnitPeriod::Month,
        )
        .unwrap();
        close(r.periodic_rate, "0.0087503907148883816406389480", "1e-20");
        assert_eq!(r.apr_percent_rounded, d("10.50"));

        let mut payments = series("230", 23, date(1978, 2, 10), Frequency::Monthly);
        payments.push(flow("280", date(1980, 1, 10)));
        let dated = apr_from_dates(&[flow("5000", date(1978, 1, 10))], &payments).unwrap();
        assert_eq!(dated.unit_period, UnitPeriod::Month);
        assert_eq!(dated.payments[23].periods, 24);
        close(
            dated.apr.periodic_rate,
            "0.0087503907148883816406389480",
            "1e-20",
        );
        assert_eq!(dated.apr.apr_percent_rounded, d("10.50"));
    }

    #[test]
    fn appendix_j_c_5_i_single_advance_single_payment() {
        // 12 CFR 1026 Appendix J (c)(5)(i): $1,000 advanced 1-3-78; one payment of $1,080
        // on 9-15-78: 255 days, a unit-period of 255 days, 365/255 per year: 11.45 %.
        // i = 0.08 exactly; APR = 8 × 365/255 = 11.450980392156862745098039216 %.
        let r = solve_apr(
            &advance("1000"),
            &[UnitFlow::single(d("1080"), 1, Decimal::ZERO)],
            UnitPeriod::Days(255),
        )
        .unwrap();
        close(r.periodic_rate, "0.08", "1e-24");
        close(r.apr_percent, "11.450980392156862745098039216", "1e-20");
        assert_eq!(r.apr_percent_rounded, d("11.45"));

        let dated = apr_from_dates(
            &[flow("1000", date(1978, 1, 3))],
            &[flow("1080", date(1978, 9, 15))],
        )
        .unwrap();
        assert_eq!(dated.unit_period, UnitPeriod::Days(255));
        assert_eq!(dated.rule, Some(UnitPeriodRule::SingleAdvanceSinglePayment));
        assert_eq!(
            (dated.payments[0].periods, dated.payments[0].fraction),
            (1, d("0"))
        );
        close(
            dated.apr.unit_periods_per_year,
            "1.4313725490196078431372549020",
            "1e-27",
        );
        assert_eq!(dated.apr.apr_percent_rounded, d("11.45"));
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
    fn a_run_in_closed_form_agrees_with_the_flows_one_by_one() {
        let run = [UnitFlow::run(d("599.55"), 1, d("0.25"), 360)];
        let singles: Vec<UnitFlow> = (1..=360)
            .map(|t| UnitFlow::single(d("599.55"), t, d("0.25")))
            .collect();
        let a = solve_apr(&advance("100000"), &run, UnitPeriod::Month).unwrap();
        let b = solve_apr(&advance("100000"), &singles, UnitPeriod::Month).unwrap();
        close(a.periodic_rate - b.periodic_rate, "0", "1e-22");
        // And the root found leaves the equation, summed term by term, at nothing.
        let g = equation_by_loop(&advance("100000"), &run, a.periodic_rate);
        close(g, "0", "1e-18");
        // Dated flows are joined into runs the same way.
        assert_eq!(into_runs(&singles), run.to_vec());
    }

    #[test]
    fn the_closed_form_slope_matches_a_difference_quotient() {
        for (rate, n) in [
            ("0.004", 360u32),
            ("0.3", 24),
            ("0.0000004", 120),
            ("0", 12),
        ] {
            let i = d(rate);
            let v = Decimal::ONE / (Decimal::ONE + i);
            let (_, ds) = annuity_factor(i, v, n, &mut Powers::new(v)).unwrap();
            let h = d("1e-12");
            let (s_plus, _) = {
                let v = Decimal::ONE / (Decimal::ONE + i + h);
                annuity_factor(i + h, v, n, &mut Powers::new(v)).unwrap()
            };
            let (s_minus, _) = if i.is_zero() {
                (Decimal::from(n), Decimal::ZERO)
            } else {
                let v = Decimal::ONE / (Decimal::ONE + i - h);
                annuity_factor(i - h, v, n, &mut Powers::new(v)).unwrap()
            };
            let quotient = if i.is_zero() {
                (s_plus - s_minus) / h
            } else {
                (s_plus - s_minus) / (h * Decimal::TWO)
            };
            let tolerance = ds.abs() * d("1e-6") + d("1e-6");
            assert!(
                (quotient - ds).abs() < tolerance,
                "{rate}, {n}: {quotient} vs {ds}"
            );
        }
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
    fn a_very_high_rate_is_bracketed() {
        // 100 borrowed, 115 repaid 14 days later: a 14-day unit-period, i = 0.15,
        // APR = 15 × 365/14 = 391.0714…%.
        let r = apr_from_dates(
            &[flow("100", date(2026, 3, 2))],
            &[flow("115", date(2026, 3, 16))],
        )
        .unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Days(14));
        close(r.apr.periodic_rate, "0.15", "1e-24");
        assert_eq!(r.apr.apr_percent_rounded, d("391.07"));
        // A rate of 5,000 % a month still converges.
        let r = solve_apr(
            &advance("100"),
            &[UnitFlow::single(d("5100"), 1, Decimal::ZERO)],
            UnitPeriod::Month,
        )
        .unwrap();
        close(r.periodic_rate, "50", "1e-20");
    }

    #[test]
    fn single_payments_over_whole_months_or_beyond_a_year() {
        // 3 whole months: the unit-period is the term, 4 a year ((b)(5)(vi)).
        let r = apr_from_dates(
            &[flow("1000", date(2026, 1, 31))],
            &[flow("1030", date(2026, 4, 30))],
        )
        .unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Quarter);
        close(r.apr.apr_percent, "12", "1e-20");
        // Two years: the unit-period is capped at a year, t = 2.
        let r = apr_from_dates(
            &[flow("1000", date(2026, 1, 15))],
            &[flow("1210", date(2028, 1, 15))],
        )
        .unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Year);
        assert_eq!((r.payments[0].periods, r.payments[0].fraction), (2, d("0")));
        close(r.apr.apr_percent, "10", "1e-20");
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
        // Dated: a payment before the advance; every flow on one day.
        let e = apr_from_dates(
            &[flow("100", date(2026, 3, 2))],
            &[flow("110", date(2026, 3, 1))],
        )
        .unwrap_err();
        assert_eq!((e.kind, e.field), (ErrorKind::OutOfRange, Some("payments")));
        let e = apr_from_dates(
            &[flow("100", date(2026, 3, 2))],
            &[flow("110", date(2026, 3, 2))],
        )
        .unwrap_err();
        assert_eq!(e.kind, ErrorKind::NoSolution);
    }

    #[test]
    fn unit_periods_per_year() {
        assert_eq!(UnitPeriod::Month.per_year(), d("12"));
        assert_eq!(UnitPeriod::Semimonth.per_year(), d("24"));
        assert_eq!(UnitPeriod::Week.per_year(), d("52"));
        assert_eq!(UnitPeriod::Weeks(2).per_year(), d("26"));
        assert_eq!(UnitPeriod::Weeks(4).per_year(), d("13"));
        assert_eq!(UnitPeriod::Months(2).per_year(), d("6"));
        assert_eq!(UnitPeriod::Quarter.per_year(), d("4"));
        assert_eq!(UnitPeriod::Months(3).per_year(), d("4"));
        assert_eq!(UnitPeriod::Year.per_year(), d("1"));
        assert_eq!(UnitPeriod::Day.per_year(), d("365"));
        assert_eq!(UnitPeriod::Days(5).per_year(), d("73"));
        assert_eq!(UnitPeriod::Months(0).per_year(), d("0"));
        assert_eq!(UnitPeriod::Months(3).canonical(), UnitPeriod::Quarter);
        assert_eq!(UnitPeriod::Days(7).canonical(), UnitPeriod::Days(7));
        assert_eq!(UnitPeriod::Weeks(2).to_string(), "2 weeks");
    }

    #[test]
    fn months_are_counted_back_with_the_month_end_rules() {
        let m = |a: Date, b: Date| {
            let (months, days, _) = months_back(a, b, "payments").unwrap();
            (months, days)
        };
        // 12 CFR 1026 Appendix J (c)(1)(ii): 2-10-78 to 4-1-78 is 1 month and 19 days.
        assert_eq!(m(date(1978, 2, 10), date(1978, 4, 1)), (1, 19));
        // Last day to last day; the 30th to the last day of February.
        assert_eq!(m(date(2026, 1, 31), date(2026, 4, 30)), (3, 0));
        assert_eq!(m(date(2026, 1, 30), date(2026, 2, 28)), (1, 0));
        assert_eq!(m(date(2026, 1, 30), date(2026, 4, 30)), (3, 0));
        assert_eq!(m(date(2026, 2, 28), date(2026, 5, 31)), (3, 0));
        assert_eq!(m(date(2024, 1, 29), date(2024, 2, 29)), (1, 0));
        // A payment on the 30th counts back to the last day of February.
        assert_eq!(m(date(2026, 2, 20), date(2026, 3, 30)), (1, 8));
        assert_eq!(m(date(2026, 1, 15), date(2026, 3, 31)), (2, 16));
        assert_eq!(m(date(2026, 3, 5), date(2026, 3, 20)), (0, 15));
        // 30 remaining days in a month unit are a whole unit-period: (1 + 1·i) = (1 + i).
        assert_eq!(m(date(2026, 1, 1), date(2026, 3, 31)), (2, 30));
        assert_eq!(
            unit_periods_between(date(2026, 1, 1), date(2026, 3, 31), UnitPeriod::Month).unwrap(),
            (3, d("0"))
        );
    }

    #[test]
    fn unit_periods_are_counted_by_each_rule_of_b_5() {
        let at = |a: Date, b: Date, u: UnitPeriod| unit_periods_between(a, b, u).unwrap();
        // Semimonth: (30 × 1 month + 21 days)/15 = 3 + 6/15.
        assert_eq!(
            at(date(1978, 2, 23), date(1978, 4, 16), UnitPeriod::Semimonth),
            (3, d("0.4"))
        );
        // Two months: (30 × 3 + 10)/60.
        assert_eq!(
            at(date(2026, 1, 5), date(2026, 4, 15), UnitPeriod::Months(2)),
            (1, Decimal::from(40) / Decimal::from(60))
        );
        // Quarter = three months.
        assert_eq!(
            at(date(2026, 1, 5), date(2026, 7, 5), UnitPeriod::Quarter),
            (2, d("0"))
        );
        // Weeks and days: days ÷ days in the unit.
        assert_eq!(
            at(date(2026, 1, 1), date(2026, 1, 31), UnitPeriod::Weeks(2)),
            (2, Decimal::from(2) / Decimal::from(14))
        );
        assert_eq!(
            at(date(2026, 1, 1), date(2026, 1, 31), UnitPeriod::Day),
            (30, d("0"))
        );
        // Year: whole months left → months/12; otherwise days/365.
        assert_eq!(
            at(date(2026, 1, 15), date(2027, 4, 15), UnitPeriod::Year),
            (1, d("0.25"))
        );
        assert_eq!(
            at(date(2026, 1, 15), date(2027, 4, 25), UnitPeriod::Year),
            (1, Decimal::from(100) / Decimal::from(365))
        );
        assert!(unit_periods_between(date(2026, 1, 2), date(2026, 1, 1), UnitPeriod::Day).is_err());
    }

    #[test]
    fn payment_series_dates() {
        let dates = |first: Date, f: Frequency, n: u32| {
            PaymentSeries {
                amount: d("1"),
                count: n,
                first_date: first,
                frequency: f,
            }
            .dates()
            .unwrap()
        };
        assert_eq!(
            dates(date(2026, 1, 31), Frequency::Monthly, 4),
            [
                date(2026, 1, 31),
                date(2026, 2, 28),
                date(2026, 3, 31),
                date(2026, 4, 30)
            ]
        );
        assert_eq!(
            dates(date(2026, 1, 30), Frequency::Monthly, 3),
            [date(2026, 1, 30), date(2026, 2, 28), date(2026, 3, 30)]
        );
        assert_eq!(
            dates(date(2026, 1, 1), Frequency::Semimonthly, 4),
            [
                date(2026, 1, 1),
                date(2026, 1, 16),
                date(2026, 2, 1),
                date(2026, 2, 16)
            ]
        );
        assert_eq!(
            dates(date(2026, 1, 16), Frequency::Semimonthly, 3),
            [date(2026, 1, 16), date(2026, 2, 1), date(2026, 2, 16)]
        );
        assert_eq!(
            dates(date(2026, 1, 31), Frequency::Semimonthly, 4),
            [
                date(2026, 1, 31),
                date(2026, 2, 16),
                date(2026, 2, 28),
                date(2026, 3, 16)
            ]
        );
        assert_eq!(
            dates(date(2026, 1, 15), Frequency::Semimonthly, 4),
            [
                date(2026, 1, 15),
                date(2026, 1, 30),
                date(2026, 2, 15),
                date(2026, 2, 28)
            ]
        );
        assert_eq!(
            dates(date(2026, 12, 28), Frequency::Biweekly, 3),
            [date(2026, 12, 28), date(2027, 1, 11), date(2027, 1, 25)]
        );
        assert_eq!(
            dates(date(2026, 1, 1), Frequency::Weekly, 2),
            [date(2026, 1, 1), date(2026, 1, 8)]
        );
        assert_eq!(
            dates(date(2025, 11, 30), Frequency::Quarterly, 3),
            [date(2025, 11, 30), date(2026, 2, 28), date(2026, 5, 30)]
        );
        assert_eq!(
            dates(date(2024, 2, 29), Frequency::Annual, 2),
            [date(2024, 2, 29), date(2025, 2, 28)]
        );
        assert_eq!(
            dates(date(2026, 8, 31), Frequency::Semiannual, 2),
            [date(2026, 8, 31), date(2027, 2, 28)]
        );
        let none = PaymentSeries {
            amount: d("1"),
            count: 0,
            first_date: date(2026, 1, 1),
            frequency: Frequency::Monthly,
        };
        assert_eq!(none.dates().unwrap_err().field, Some("payments"));
    }

    #[test]
    fn semimonths_are_recognised_on_their_two_days() {
        assert!(is_semimonth(date(2026, 3, 1), date(2026, 3, 16)));
        assert!(is_semimonth(date(2026, 3, 16), date(2026, 4, 1)));
        assert!(is_semimonth(date(1978, 2, 16), date(1978, 3, 1)));
        assert!(is_semimonth(date(2026, 1, 15), date(2026, 1, 31)));
        assert!(is_semimonth(date(2026, 1, 31), date(2026, 2, 15)));
        assert!(is_semimonth(date(2026, 2, 15), date(2026, 2, 28)));
        assert!(!is_semimonth(date(2026, 3, 1), date(2026, 3, 15)));
        assert!(!is_semimonth(date(2026, 3, 10), date(2026, 4, 1)));
    }

    #[test]
    fn the_unit_period_is_the_most_frequent_common_period() {
        // Weekly and biweekly series: the week multiples.
        let weekly = series("50", 10, date(2026, 1, 8), Frequency::Weekly);
        let r = apr_from_dates(&[flow("480", date(2026, 1, 1))], &weekly).unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Week);
        assert_eq!(r.apr.unit_periods_per_year, d("52"));
        let reference = solve_apr(
            &advance("480"),
            &[UnitFlow::run(d("50"), 1, Decimal::ZERO, 10)],
            UnitPeriod::Week,
        )
        .unwrap();
        assert_eq!(r.apr.periodic_rate, reference.periodic_rate);
        let biweekly = series("50", 10, date(2026, 1, 15), Frequency::Biweekly);
        let r = apr_from_dates(&[flow("480", date(2026, 1, 1))], &biweekly).unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Weeks(2));
        // Quarterly across month ends.
        let quarterly = series("260", 4, date(2026, 3, 31), Frequency::Quarterly);
        let r = apr_from_dates(&[flow("1000", date(2025, 12, 31))], &quarterly).unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Quarter);
        assert!(r.payments.iter().all(|p| p.fraction.is_zero()));
    }

    #[test]
    fn equally_frequent_common_periods_give_the_smaller() {
        // Unconfirmed reading of (b)(4) (REGULATIONS.md): two months, then two
        // two-week periods: the two weeks.
        let payments = [
            flow("100", date(2026, 2, 1)),
            flow("100", date(2026, 3, 1)),
            flow("100", date(2026, 3, 15)),
            flow("100", date(2026, 3, 29)),
        ];
        let r = apr_from_dates(&[flow("390", date(2026, 1, 1))], &payments).unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Weeks(2));
        assert_eq!(r.rule, Some(UnitPeriodRule::SmallerOfEquallyFrequent));
    }

    #[test]
    fn without_a_common_period_the_average_is_rounded_to_a_standard_interval() {
        // Unconfirmed reading of (b)(4): periods of 35 and 43 days average 39 days;
        // the nearest standard interval is 6 weeks (42 days; a month is 30.4).
        let payments = [
            flow("100", date(2026, 2, 5)),
            flow("100", date(2026, 3, 20)),
        ];
        let r = apr_from_dates(&[flow("190", date(2026, 1, 1))], &payments).unwrap();
        assert_eq!(r.unit_period, UnitPeriod::Weeks(6));
        assert_eq!(r.rule, Some(UnitPeriodRule::AverageOfPeriods));
        // 10.5 days is midway between a week and two weeks: the lower.
        assert_eq!(nearest_standard_interval(21, 2), UnitPeriod::Week);
        assert_eq!(nearest_standard_interval(61, 2), UnitPeriod::Month);
        assert_eq!(nearest_standard_interval(2, 2), UnitPeriod::Day);
    }

    // ---- EU APRC -----------------------------------------------------------

    /// Σ D (1 + X)^(−s) − Σ C (1 + X)^(−t) with times k/n evaluated exactly: the
    /// n-th root of 1 + X by Newton's method in decimal, then integer powers
    /// (no logarithm or exponential), as an independent check of the solver.
    fn residual_in_roots(
        drawdowns: &[YearFlow],
        repayments: &[YearFlow],
        x: Decimal,
        n: u32,
    ) -> Decimal {
        let root = nth_root(Decimal::ONE + x, n).unwrap();
        let mut g = Decimal::ZERO;
        for (flows, sign) in [
            (repayments, Decimal::ONE),
            (drawdowns, Decimal::NEGATIVE_ONE),
        ] {
            for f in flows {
                let k = (f.years * Decimal::from(n)).round();
                g += sign * f.amount / root.powi(k.to_i64().unwrap());
            }
        }
        g
    }

    #[test]
    fn aprc_of_one_repayment_a_year_later_is_ten_percent() {
        // Directive 2008/48/EC Annex I, by hand: 1,000 drawn, 1,100 repaid exactly one
        // year later: 1000 = 1100 (1 + X)^−1, X = 10 %.
        let r = solve_aprc(
            &[flow("1000", date(2025, 1, 1))],
            &[flow("1100", date(2026, 1, 1))],
        )
        .unwrap();
        assert_eq!(r.time_basis, AprcTimeBasis::EqualMonths);
        assert_eq!(r.repayments[0].years, d("1"));
        close(r.aprc.annual_rate, "0.1", "1e-24");
        assert_eq!(r.aprc.aprc_percent_rounded, d("10.0"));
        assert_eq!(r.aprc.aprc_percent_rounded.to_string(), "10.0");
    }

    #[test]
    fn aprc_in_equal_months_balances_the_equation() {
        // 1,000 drawn; 12 monthly repayments of 88.85. X = 0.12685391893581531583477672314
        // (mpmath, 50 digits).
        // Month ends: Feb 28, Mar 31, Apr 30, … are monthly anniversaries of Jan 31.
        let repayments = series("88.85", 13, date(2025, 1, 31), Frequency::Monthly)[1..].to_vec();
        let r = solve_aprc(&[flow("1000", date(2025, 1, 31))], &repayments).unwrap();
        assert_eq!(r.time_basis, AprcTimeBasis::EqualMonths);
        assert_eq!(r.repayments[2].years, Decimal::from(3) / Decimal::from(12));
        close(
            r.aprc.annual_rate,
            "0.12685391893581531583477672314",
            "1e-20",
        );
        assert_eq!(r.aprc.aprc_percent_rounded, d("12.7"));
        // Plugged back into the equation, evaluated with 12th roots and integer powers.
        let g = residual_in_roots(&r.drawdowns, &r.repayments, r.aprc.annual_rate, 12);
        close(g, "0", "1e-20");
    }

    #[test]
    fn aprc_in_weeks_balances_the_equation() {
        // 500 drawn; 10 weekly repayments of 51: times k/52.
        // X = 0.20651152379750379850155129282 (mpmath, 50 digits).
        let r = solve_aprc(
            &[flow("500", date(2026, 1, 1))],
            &series("51", 10, date(2026, 1, 8), Frequency::Weekly),
        )
        .unwrap();
        assert_eq!(r.time_basis, AprcTimeBasis::Weeks);
        close(
            r.aprc.annual_rate,
            "0.20651152379750379850155129282",
            "1e-20",
        );
        assert_eq!(r.aprc.aprc_percent_rounded, d("20.7"));
        let g = residual_in_roots(&r.drawdowns, &r.repayments, r.aprc.annual_rate, 52);
        close(g, "0", "1e-20");
    }

    #[test]
    fn aprc_in_days_uses_366_in_a_leap_year() {
        // 1,000 drawn 2024-01-10, 1,050 repaid 2024-07-20: 192 days of a year holding
        // 29 February, t = 192/366; X = 1.05^(366/192) − 1 = 0.097468594917005976857212649.
        let r = solve_aprc(
            &[flow("1000", date(2024, 1, 10))],
            &[flow("1050", date(2024, 7, 20))],
        )
        .unwrap();
        assert_eq!(r.time_basis, AprcTimeBasis::Days);
        assert_eq!(
            r.repayments[0].years,
            Decimal::from(192) / Decimal::from(366)
        );
        close(r.aprc.annual_rate, "0.097468594917005976857212649", "1e-20");
        assert_eq!(r.aprc.aprc_percent_rounded, d("9.7"));
        let g = residual_in_roots(&r.drawdowns, &r.repayments, r.aprc.annual_rate, 366);
        close(g, "0", "1e-18");
    }

    #[test]
    fn years_in_days_count_whole_years_then_the_days_of_the_year_they_fall_in() {
        let y = |a: Date, b: Date| years_between(a, b, AprcTimeBasis::Days).unwrap();
        assert_eq!(
            y(date(2023, 1, 10), date(2023, 7, 20)),
            Decimal::from(191) / Decimal::from(365)
        );
        assert_eq!(
            y(date(2023, 6, 1), date(2024, 6, 3)),
            Decimal::from(367) / Decimal::from(365)
        );
        // The year counted back from 2024-02-01 (2023-02-01 to 2024-02-01) holds no
        // 29 February: 365, though the days left run up to a leap year
        // (Directive 2008/48/EC Annex I, the counting rule after remark (c)).
        assert_eq!(
            y(date(2023, 3, 1), date(2024, 2, 1)),
            Decimal::from(337) / Decimal::from(365)
        );
        // The year counted back from 2024-03-01 holds 29 February 2024: 366.
        assert_eq!(
            y(date(2023, 4, 1), date(2024, 3, 1)),
            Decimal::from(335) / Decimal::from(366)
        );
        // Whole years are counted back from the flow's date, the days left at the
        // start: 2022-12-01 to 2025-03-01 is 2 years (back to 2023-03-01) plus the
        // 90 days from 2022-12-01, divided by the year 2022-03-01 to 2023-03-01 (365).
        assert_eq!(
            y(date(2022, 12, 1), date(2025, 3, 1)),
            Decimal::from(2) + Decimal::from(90) / Decimal::from(365)
        );
        assert_eq!(y(date(2024, 2, 29), date(2025, 2, 28)), d("1"));
        assert_eq!(y(date(2025, 5, 5), date(2028, 5, 5)), d("3"));
    }

    #[test]
    fn the_three_annex_iii_examples_of_98_7_ec_hold_on_the_days_basis() {
        // Directive 98/7/EC Annex III, examples 1 to 3 (figures as summarised in
        // REGULATIONS.md): 12.96 %, 16.90 %, 13.07 %, to two decimals of the full figure.
        let days = AprcTimeChoice::Basis(AprcTimeBasis::Days);
        let cases: [(&[DatedFlow], &[DatedFlow], &str); 3] = [
            (
                &[flow("1000", date(1994, 1, 1))],
                &[flow("1200", date(1995, 7, 1))],
                "12.96",
            ),
            (
                &[flow("950", date(1994, 1, 1))],
                &[flow("1200", date(1995, 7, 1))],
                "16.90",
            ),
            (
                &[flow("1000", date(1994, 1, 1))],
                &[flow("600", date(1995, 1, 1)), flow("600", date(1996, 1, 1))],
                "13.07",
            ),
        ];
        for (drawdowns, repayments, want) in cases {
            let r = solve_aprc_with(drawdowns, repayments, days).unwrap();
            assert_eq!(r.time_basis, AprcTimeBasis::Days);
            assert_eq!(
                r.aprc
                    .aprc_percent
                    .round_dp_with_strategy(2, RoundingStrategy::MidpointAwayFromZero)
                    .to_string(),
                want
            );
        }
        // 1995-07-01 is one year and 181 days (of a 365-day year) after 1994-01-01.
        let r = solve_aprc_with(cases[0].0, cases[0].1, days).unwrap();
        assert_eq!(
            r.repayments[0].years,
            Decimal::ONE + Decimal::from(181) / Decimal::from(365)
        );
    }

    #[test]
    fn a_chosen_time_basis_counts_whole_periods_back_then_days() {
        let (start, end) = (date(2027, 1, 10), date(2027, 3, 20));
        // Equal months: 2 months back to 2027-01-20, 10 days left, year 2026-01-20 to
        // 2027-01-20 (365).
        assert_eq!(
            years_between(start, end, AprcTimeBasis::EqualMonths).unwrap(),
            Decimal::from(2) / Decimal::from(12) + Decimal::from(10) / Decimal::from(365)
        );
        // Weeks: 69 days are 9 weeks and 6 days.
        assert_eq!(
            years_between(start, end, AprcTimeBasis::Weeks).unwrap(),
            Decimal::from(9) / Decimal::from(52) + Decimal::from(6) / Decimal::from(365)
        );
        let auto = solve_aprc(&[flow("1000", start)], &[flow("1020", end)]).unwrap();
        assert_eq!(auto.time_basis, AprcTimeBasis::Days);
        let months = solve_aprc_with(
            &[flow("1000", start)],
            &[flow("1020", end)],
            AprcTimeChoice::Basis(AprcTimeBasis::EqualMonths),
        )
        .unwrap();
        assert_eq!(months.time_basis, AprcTimeBasis::EqualMonths);
        assert_ne!(months.aprc.annual_rate, auto.aprc.annual_rate);
        for name in ["auto", "days", "weeks", "equal_months"] {
            assert!(AprcTimeChoice::parse(name).is_some());
        }
        assert_eq!(AprcTimeChoice::parse("months"), None);
    }

    #[test]
    fn aprc_refusals() {
        let e = solve_aprc(
            &[flow("1000", date(2025, 1, 1))],
            &[flow("1100", date(2024, 12, 31))],
        )
        .unwrap_err();
        assert_eq!(
            (e.kind, e.field),
            (ErrorKind::OutOfRange, Some("repayments"))
        );
        let e = solve_aprc(
            &[flow("1000", date(2025, 1, 1))],
            &[flow("999", date(2026, 1, 1))],
        )
        .unwrap_err();
        assert_eq!(
            (e.kind, e.field),
            (ErrorKind::NoSolution, Some("repayments"))
        );
        let e = solve_aprc(&[], &[flow("999", date(2026, 1, 1))]).unwrap_err();
        assert_eq!(e.field, Some("drawdowns"));
        let e = solve_aprc_years(
            &[YearFlow {
                amount: d("1"),
                years: d("0"),
            }],
            &[YearFlow {
                amount: d("2"),
                years: d("101"),
            }],
        )
        .unwrap_err();
        assert_eq!(e.field, Some("repayments"));
        let zero = solve_aprc(
            &[flow("1000", date(2025, 1, 1))],
            &[flow("1000", date(2026, 1, 1))],
        )
        .unwrap();
        assert_eq!(zero.aprc.annual_rate, Decimal::ZERO);
    }

    #[test]
    fn aprc_fractional_powers_survive_a_huge_bracket() {
        // 1 drawn, 1,000,000 repaid after half a year: X = 10^12 − 1.
        let r = solve_aprc_years(
            &[YearFlow {
                amount: d("1"),
                years: d("0"),
            }],
            &[YearFlow {
                amount: d("1000000"),
                years: d("0.5"),
            }],
        )
        .unwrap();
        let relative = (r.annual_rate - d("999999999999")).abs() / d("1e12");
        assert!(relative < d("1e-20"), "{}", r.annual_rate);
    }
}
