//! The closed form of a savings plan: the recurrence of level, growing or
//! yearly-stepped deposits solved once, so that the balance after any period is
//! O(1); for deposits growing once a year, in two levels (year boundaries, then
//! the periods inside a year).

use rust_decimal::Decimal;

use super::terms::{Pattern, Timing};
use crate::engine::error::{OrOverflow, Result};
use crate::engine::loan::UnitResponses;
use crate::engine::recurrence::{Input, Recurrence, Solution};
use crate::engine::zdomain::pow;

/// The shape of a plan: interest factor, periods a year, timing and pattern.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FlowShape {
    /// a = 1 + i.
    pub a: Decimal,
    /// i as the exact ratio of integers it rounds, when it is one
    /// ([`SavingsTerms::periodic_ratio`](super::terms::SavingsTerms::periodic_ratio)):
    /// the posting multiplies by it.
    pub exact_rate: Option<(i128, i128)>,
    /// Periods (deposits) a year.
    pub periods_per_year: u32,
    /// When in each period the deposit is made.
    pub timing: Timing,
    /// How the deposits move over time.
    pub pattern: Pattern,
}

/// The two-level closed form of deposits growing once a year.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct YearlyForm {
    /// B[y+1] = A·B[y] + S·c·g^y + S·s·y, B[0] = opening balance, solved.
    pub year: Solution,
    /// A = a^m.
    pub year_factor: Decimal,
    /// S = Σ_{j<m} a^j: one year of a unit end-of-period deposit.
    pub year_sum: Decimal,
    /// a^r and u[r] = Σ_{j<r} a^j inside a year.
    pub unit: UnitResponses,
    /// c: the first year's deposit as the recurrence sees it (times a when at the start).
    pub flow: Decimal,
    /// g: the yearly growth ratio.
    pub ratio: Decimal,
    /// s: the yearly step as the recurrence sees it.
    pub step: Decimal,
}

/// The closed form of a plan: its balance after any period, in O(1).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PlanForm {
    /// The shape it was solved for.
    pub shape: FlowShape,
    /// The period recurrence, solved. With yearly growth it is that of the first
    /// year (valid for k ≤ m); later years start from B[y] with their own deposit.
    pub period: Solution,
    /// With yearly growth (or a yearly step): the year-boundary recurrence.
    pub yearly: Option<YearlyForm>,
}

impl FlowShape {
    /// 1 for end-of-period deposits, a for deposits at the start (the shift by one period).
    pub fn timing_factor(&self) -> Decimal {
        match self.timing {
            Timing::Start => self.a,
            Timing::End => Decimal::ONE,
        }
    }

    /// True when every deposit is the same.
    pub fn is_level(&self) -> bool {
        self.pattern == Pattern::Level
    }

    /// The plan's closed form for an opening balance `x0`, a first deposit `amount`
    /// (negative for a withdrawal) and a yearly `step`, all as made (before the shift
    /// of start-of-period deposits).
    ///
    /// # Errors
    /// An overflow.
    pub fn solve(&self, x0: Decimal, amount: Decimal, step: Decimal) -> Result<PlanForm> {
        let tf = self.timing_factor();
        let c = amount.checked_mul(tf).or_overflow("the deposit")?;
        let s = step.checked_mul(tf).or_overflow("the yearly step")?;
        let level = |x0: Decimal, c: Decimal| Recurrence {
            a: self.a,
            x0,
            inputs: nonzero(vec![Input::Step { amount: c }]),
        };
        match self.pattern {
            Pattern::Level => Ok(PlanForm {
                shape: *self,
                period: level(x0, c).solve()?,
                yearly: None,
            }),
            Pattern::EachPeriod { ratio } => {
                let input = if ratio == Decimal::ONE {
                    Input::Step { amount: c }
                } else {
                    Input::Geometric { amount: c, ratio }
                };
                let r = Recurrence {
                    a: self.a,
                    x0,
                    inputs: nonzero(vec![input]),
                };
                Ok(PlanForm {
                    shape: *self,
                    period: r.solve()?,
                    yearly: None,
                })
            }
            Pattern::EachYear { ratio } => {
                let m = self.periods_per_year;
                let unit = UnitResponses::for_rate(self.a - Decimal::ONE)?;
                let year_factor = pow(self.a, m)?;
                let year_sum = unit.payment_response.eval(m)?;
                let yearly_flow = year_sum.checked_mul(c).or_overflow("a year's deposits")?;
                let yearly_step = year_sum.checked_mul(s).or_overflow("a year's step")?;
                let growth = if ratio == Decimal::ONE {
                    Input::Step {
                        amount: yearly_flow,
                    }
                } else {
                    Input::Geometric {
                        amount: yearly_flow,
                        ratio,
                    }
                };
                let year = Recurrence {
                    a: year_factor,
                    x0,
                    inputs: nonzero(vec![
                        growth,
                        Input::Ramp {
                            amount: yearly_step,
                        },
                    ]),
                }
                .solve()?;
                Ok(PlanForm {
                    shape: *self,
                    period: level(x0, c).solve()?,
                    yearly: Some(YearlyForm {
                        year,
                        year_factor,
                        year_sum,
                        unit,
                        flow: c,
                        ratio,
                        step: s,
                    }),
                })
            }
        }
    }

    /// The deposit made in period `k` (0-based), unrounded: c, c·g^k or c·g^y + s·y.
    ///
    /// # Errors
    /// An overflow.
    pub fn flow_at(&self, amount: Decimal, step: Decimal, k: u32) -> Result<Decimal> {
        match self.pattern {
            Pattern::Level => Ok(amount),
            Pattern::EachPeriod { ratio } => amount
                .checked_mul(pow(ratio, k)?)
                .or_overflow("a growing deposit"),
            Pattern::EachYear { ratio } => {
                yearly_flow(amount, ratio, step, k / self.periods_per_year)
            }
        }
    }
}

/// c·g^y + s·y.
fn yearly_flow(amount: Decimal, ratio: Decimal, step: Decimal, y: u32) -> Result<Decimal> {
    amount
        .checked_mul(pow(ratio, y)?)
        .and_then(|v| v.checked_add(step.checked_mul(Decimal::from(y))?))
        .or_overflow("a year's deposit")
}

fn nonzero(inputs: Vec<Input>) -> Vec<Input> {
    inputs
        .into_iter()
        .filter(|i| match *i {
            Input::Impulse { amount }
            | Input::Step { amount }
            | Input::Geometric { amount, .. }
            | Input::Ramp { amount } => !amount.is_zero(),
        })
        .collect()
}

impl PlanForm {
    /// The balance after period `k`, in O(1).
    ///
    /// # Errors
    /// An overflow of the 28-digit arithmetic (a balance beyond about 7.9e28).
    pub fn balance_at(&self, k: u32) -> Result<Decimal> {
        let Some(y) = &self.yearly else {
            return self.period.closed_form.eval(k);
        };
        let m = self.shape.periods_per_year;
        let (year, r) = (k / m, k % m);
        let boundary = y.year.closed_form.eval(year)?;
        if r == 0 {
            return Ok(boundary);
        }
        let c = yearly_flow(y.flow, y.ratio, y.step, year)?;
        let h = y.unit.principal_response.eval(r)?;
        let u = y.unit.payment_response.eval(r)?;
        boundary
            .checked_mul(h)
            .and_then(|v| v.checked_add(c.checked_mul(u)?))
            .or_overflow("a balance")
    }

    /// [`PlanForm::balance_at`] in binary floating point: for estimates only.
    pub fn estimate_at(&self, k: u32) -> f64 {
        use rust_decimal::prelude::ToPrimitive;
        let Some(y) = &self.yearly else {
            return self.period.closed_form.estimate(k);
        };
        let m = self.shape.periods_per_year;
        let (year, r) = (k / m, k % m);
        let boundary = y.year.closed_form.estimate(year);
        if r == 0 {
            return boundary;
        }
        let f = |d: Decimal| d.to_f64().unwrap_or(f64::NAN);
        let c = f(y.flow) * f(y.ratio).powf(f64::from(year)) + f(y.step) * f64::from(year);
        boundary * y.unit.principal_response.estimate(r) + c * y.unit.payment_response.estimate(r)
    }

    /// The balances after periods 0, 1, …, n, in one pass (powers taken incrementally).
    ///
    /// # Errors
    /// An overflow.
    pub fn balances(&self, n: u32) -> Result<Vec<Decimal>> {
        let Some(y) = &self.yearly else {
            return self.period.closed_form.values(n);
        };
        let m = self.shape.periods_per_year;
        let boundaries = y.year.closed_form.values(n / m)?;
        let h = y.unit.principal_response.values(m)?;
        let u = y.unit.payment_response.values(m)?;
        let mut out = Vec::with_capacity(n as usize + 1);
        let mut power = Decimal::ONE; // g^year
        for (year, b) in boundaries.iter().enumerate() {
            let c = y
                .flow
                .checked_mul(power)
                .and_then(|v| v.checked_add(y.step.checked_mul(Decimal::from(year as u64))?))
                .or_overflow("a year's deposit")?;
            for r in 0..m {
                if year as u32 * m + r > n {
                    break;
                }
                out.push(
                    b.checked_mul(h[r as usize])
                        .and_then(|v| v.checked_add(c.checked_mul(u[r as usize])?))
                        .or_overflow("a balance")?,
                );
            }
            power = power.checked_mul(y.ratio).or_overflow("a growth power")?;
        }
        Ok(out)
    }
}

#[cfg(test)]
pub(super) mod tests {
    use super::*;
    use crate::engine::money::Currency;
    use rust_decimal::MathematicalOps;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    /// Asserts that `x` lies within `tolerance` of `want`.
    pub(in crate::engine::savings) fn close(x: Decimal, want: Decimal, tolerance: &str) {
        assert!(
            (x - want).abs() <= d(tolerance),
            "{x} is not within {tolerance} of {want}"
        );
    }

    fn shape(i: &str, m: u32, timing: Timing, pattern: Pattern) -> FlowShape {
        FlowShape {
            a: Decimal::ONE + d(i),
            exact_rate: None,
            periods_per_year: m,
            timing,
            pattern,
        }
    }

    /// x[0..=n] stepped in decimals with the deposits of the shape (a check, not an answer).
    pub(in crate::engine::savings) fn stepped(
        s: &FlowShape,
        x0: Decimal,
        amount: Decimal,
        step: Decimal,
        n: u32,
    ) -> Vec<Decimal> {
        let mut x = x0;
        let mut out = vec![x];
        for k in 0..n {
            let f = s.flow_at(amount, step, k).unwrap();
            x = match s.timing {
                Timing::End => s.a * x + f,
                Timing::Start => s.a * (x + f),
            };
            out.push(x);
        }
        out
    }

    #[test]
    fn future_value_of_an_ordinary_annuity() {
        // Future value = P·((1 + i)^n − 1)/i (common practice, no source): 100 a month for 120
        // months at 0.5 % a month.
        let s = shape("0.005", 12, Timing::End, Pattern::Level);
        let accumulated = s.solve(Decimal::ZERO, d("100"), Decimal::ZERO).unwrap();
        let want = d("100") * (d("1.005").powi(120) - Decimal::ONE) / d("0.005");
        close(accumulated.balance_at(120).unwrap(), want, "1e-18");
        // Rounded to the cent: 16387.93 (the same formula, evaluated here).
        assert_eq!(Currency::USD.format(want), "16387.93");
    }

    #[test]
    fn future_value_of_an_annuity_due_is_the_ordinary_one_times_one_plus_i() {
        // Future value of an annuity due = P·((1 + i)^n − 1)/i·(1 + i) (common practice, no source).
        let s = shape("0.005", 12, Timing::Start, Pattern::Level);
        let accumulated = s.solve(Decimal::ZERO, d("100"), Decimal::ZERO).unwrap();
        let want = d("100") * (d("1.005").powi(120) - Decimal::ONE) / d("0.005") * d("1.005");
        close(accumulated.balance_at(120).unwrap(), want, "1e-18");
        // The derivation's recurrence is the end-of-period one with the deposit a·d.
        assert_eq!(
            accumulated.period.recurrence.inputs,
            vec![Input::Step {
                amount: d("100.500")
            }]
        );
    }

    #[test]
    fn growing_annuity_matches_its_formula() {
        // Future value = P·(a^n − g^n)/(a − g) for deposits P·g^k at the end of period k + 1
        // (common practice, no source).
        let s = shape(
            "0.004",
            12,
            Timing::End,
            Pattern::EachPeriod { ratio: d("1.002") },
        );
        let accumulated = s.solve(d("0"), d("250"), Decimal::ZERO).unwrap();
        let want = d("250") * (d("1.004").powi(240) - d("1.002").powi(240)) / d("0.002");
        close(accumulated.balance_at(240).unwrap(), want, "1e-16");
    }

    #[test]
    fn growth_equal_to_the_rate_takes_the_double_pole_at_a() {
        // Σ_{j<n} P·a^j·a^(n−1−j) = P·n·a^(n−1) (summed by hand).
        let s = shape(
            "0.004",
            12,
            Timing::End,
            Pattern::EachPeriod { ratio: d("1.004") },
        );
        let accumulated = s.solve(Decimal::ZERO, d("100"), Decimal::ZERO).unwrap();
        assert!(accumulated
            .period
            .fractions
            .iter()
            .any(|f| f.pole == d("1.004") && f.multiplicity == 2));
        let want = d("100") * d("360") * d("1.004").powi(359);
        close(accumulated.balance_at(360).unwrap(), want, "1e-16");
    }

    #[test]
    fn zero_interest_level_deposits_have_a_double_pole_at_one() {
        let s = shape("0", 12, Timing::End, Pattern::Level);
        let accumulated = s.solve(d("500"), d("25"), Decimal::ZERO).unwrap();
        assert_eq!(accumulated.period.fractions.len(), 1);
        assert_eq!(
            (
                accumulated.period.fractions[0].pole,
                accumulated.period.fractions[0].multiplicity
            ),
            (Decimal::ONE, 2)
        );
        assert_eq!(accumulated.balance_at(48).unwrap().normalize(), d("1700"));
    }

    #[test]
    fn zero_interest_with_growing_deposits() {
        // Every period: Σ_{j<n} P·g^j = P·(g^n − 1)/(g − 1), poles at 1 (a) and g.
        let s = shape(
            "0",
            12,
            Timing::End,
            Pattern::EachPeriod { ratio: d("1.01") },
        );
        let accumulated = s.solve(Decimal::ZERO, d("10"), Decimal::ZERO).unwrap();
        close(
            accumulated.balance_at(100).unwrap(),
            d("10") * (d("1.01").powi(100) - Decimal::ONE) / d("0.01"),
            "1e-18",
        );
        // Each year by a fixed step: B[y+1] = B[y] + 12·(c + s·y) has a step and a ramp at
        // A = 1: the ramp's double pole at z = 1 times the pole of A = 1, a triple pole.
        let s = shape(
            "0",
            12,
            Timing::End,
            Pattern::EachYear {
                ratio: Decimal::ONE,
            },
        );
        let accumulated = s.solve(Decimal::ZERO, d("100"), d("10")).unwrap();
        let yearly = accumulated.yearly.as_ref().unwrap();
        assert_eq!(yearly.year.fractions[0].pole, Decimal::ONE);
        assert_eq!(yearly.year.fractions[0].multiplicity, 3);
        // 12·Σ_{y<5} (100 + 10y) = 12·(500 + 100) = 7200.
        assert_eq!(accumulated.balance_at(60).unwrap().normalize(), d("7200"));
        // Each year by a percentage: poles at 1 and g.
        let s = shape("0", 12, Timing::End, Pattern::EachYear { ratio: d("1.03") });
        let accumulated = s.solve(Decimal::ZERO, d("100"), Decimal::ZERO).unwrap();
        let stepped = stepped(&s, Decimal::ZERO, d("100"), Decimal::ZERO, 120);
        for k in [0u32, 1, 11, 12, 13, 59, 60, 119, 120] {
            close(
                accumulated.balance_at(k).unwrap(),
                stepped[k as usize],
                "1e-18",
            );
        }
    }

    #[test]
    fn yearly_growth_two_level_form_matches_stepping_with_staircase_deposits() {
        for timing in [Timing::End, Timing::Start] {
            let s = shape("0.0035", 12, timing, Pattern::EachYear { ratio: d("1.03") });
            let accumulated = s.solve(d("1000"), d("200"), d("15")).unwrap();
            let want = stepped(&s, d("1000"), d("200"), d("15"), 480);
            let all = accumulated.balances(480).unwrap();
            for k in 0..=480u32 {
                close(
                    accumulated.balance_at(k).unwrap(),
                    want[k as usize],
                    "1e-17",
                );
                close(all[k as usize], want[k as usize], "1e-17");
            }
        }
    }

    #[test]
    fn yearly_growth_equal_to_the_yearly_factor_gives_a_double_pole() {
        // Annual deposits growing 5 % a year at 5 %: A = g = 1.05.
        let s = shape(
            "0.05",
            1,
            Timing::End,
            Pattern::EachYear { ratio: d("1.05") },
        );
        let accumulated = s.solve(Decimal::ZERO, d("1000"), Decimal::ZERO).unwrap();
        let yearly = accumulated.yearly.as_ref().unwrap();
        assert!(yearly
            .year
            .fractions
            .iter()
            .any(|f| f.pole == d("1.05") && f.multiplicity == 2));
        close(
            accumulated.balance_at(30).unwrap(),
            d("1000") * d("30") * d("1.05").powi(29),
            "1e-16",
        );
    }
}
