//! The general equation of Appendix J (b)(8) in unit-periods: G(i), the
//! payments' present values less the advances', and its slope G'(i); a run of
//! equal payments summed in closed form; the same equation in binary floating
//! point for a first estimate.

use rust_decimal::prelude::ToPrimitive;
use rust_decimal::Decimal;

use super::flows::{check_flows, UnitFlow};
use crate::engine::error::{EngineError, OrOverflow, Result};

/// The most unit-periods from the start of the term to the last flow
/// (t + count − 1): a century of daily unit-periods.
pub const MAX_UNIT_PERIODS: u32 = 36_525;

/// Below this unit-period rate a run of flows is summed term by term: the closed
/// form's 1 − v^n would lose about log10(1/i) of the 28 digits to cancellation.
const SMALL_RATE: Decimal = Decimal::from_parts(1, 0, 0, false, 6); // 1e-6

/// G(i) alone (no slope): Σ payments' present values − Σ advances'.
pub(super) fn unit_value(
    advances: &[UnitFlow],
    payments: &[UnitFlow],
    i: Decimal,
) -> Result<Decimal> {
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
pub(super) fn check_unit_flows(flows: &[UnitFlow], field: &'static str) -> Result<Decimal> {
    check_flows(
        flows,
        field,
        |flow| flow.amount,
        |flow| {
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
            flow.amount
                .checked_mul(Decimal::from(flow.count))
                .or_overflow("the total of the flows")
        },
    )
}

/// G(i) = Σ payments' present values − Σ advances' present values, and G'(i).
pub(super) fn unit_equation(
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
            crate::engine::power::pow(self.v, gap).or_overflow(what)?
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
pub(super) struct BinaryFlows {
    flows: Vec<(f64, f64, f64, f64, f64)>,
}

impl BinaryFlows {
    pub(super) fn new(advances: &[UnitFlow], payments: &[UnitFlow]) -> Option<Self> {
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
    pub(super) fn bounds(&self) -> (f64, f64) {
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
    pub(super) fn equation(&self, i: f64) -> Option<(f64, f64)> {
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::apr::testing::d;

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
}
