//! First-order linear recurrences x[k+1] = a·x[k] + f[k], solved in closed form.
//!
//! The z-transform of the recurrence is z·X(z) − z·x0 = a·X(z) + F(z), so
//!
//! ```text
//! X(z)/z = x0/(z − a) + F(z)/(z·(z − a))
//! ```
//!
//! with F(z) from the transform table of the inputs:
//!
//! | input        | f[k]      | F(z)            |
//! |--------------|-----------|-----------------|
//! | impulse      | c·δ[k]    | c               |
//! | step         | c         | c·z/(z − 1)     |
//! | geometric    | c·g^k     | c·z/(z − g)     |
//! | ramp         | c·k       | c·z/(z − 1)²    |
//!
//! Everything is put over one denominator, factors the numerator shares with it
//! are cancelled, the result is split into partial fractions over its poles
//! (with multiplicity), and each fraction maps back to a time-domain term.
//! No input gets a formula of its own: a 0% loan (a = 1 with a step) simply has
//! a double pole at z = 1, and deposits growing at the interest rate (g = a) a
//! double pole at z = a.

use rust_decimal::Decimal;

use super::error::{OrOverflow, Result};
use super::poly::Poly;
use super::zdomain::{ClosedForm, Pole, PoleFractions, Rational};

/// One input sequence from the transform table; the recurrence's input is their sum.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Input {
    /// c·δ[k]: an amount added once, in the first period.
    Impulse {
        /// c.
        amount: Decimal,
    },
    /// c for every k ≥ 0: a level payment (negative) or deposit (positive).
    Step {
        /// c.
        amount: Decimal,
    },
    /// c·g^k: an amount growing by the ratio g each period.
    Geometric {
        /// c, the first amount.
        amount: Decimal,
        /// g.
        ratio: Decimal,
    },
    /// c·k: an amount growing by c each period (zero in the first).
    Ramp {
        /// c.
        amount: Decimal,
    },
}

impl Input {
    /// The input's value f[k] (for exact stepping and checks).
    pub fn value_at(&self, k: u32) -> Result<Decimal> {
        Ok(match *self {
            Input::Impulse { amount } => {
                if k == 0 {
                    amount
                } else {
                    Decimal::ZERO
                }
            }
            Input::Step { amount } => amount,
            Input::Geometric { amount, ratio } => amount
                .checked_mul(super::zdomain::pow(ratio, k)?)
                .or_overflow("a geometric input")?,
            Input::Ramp { amount } => amount
                .checked_mul(Decimal::from(k))
                .or_overflow("a ramp input")?,
        })
    }

    /// F(z) = numerator / Π (z − p)^m of this input's transform.
    fn transform(&self) -> (Poly, Vec<Pole>) {
        let z_times = |c: Decimal| Poly::new(vec![Decimal::ZERO, c]);
        match *self {
            Input::Impulse { amount } => (Poly::constant(amount), vec![]),
            Input::Step { amount } => (
                z_times(amount),
                vec![Pole {
                    at: Decimal::ONE,
                    multiplicity: 1,
                }],
            ),
            Input::Geometric { amount, ratio } => (
                z_times(amount),
                vec![Pole {
                    at: ratio,
                    multiplicity: 1,
                }],
            ),
            Input::Ramp { amount } => (
                z_times(amount),
                vec![Pole {
                    at: Decimal::ONE,
                    multiplicity: 2,
                }],
            ),
        }
    }
}

/// Poles closer than this are taken as one repeated pole (see [`Recurrence::solve`]).
pub const POLE_MERGE_DISTANCE: Decimal = Decimal::from_parts(1, 0, 0, false, 14);

/// x[k+1] = a·x[k] + Σ inputs[k], x[0] = x0.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Recurrence {
    /// a: the factor each period multiplies the balance by.
    pub a: Decimal,
    /// The opening balance x[0].
    pub x0: Decimal,
    /// The inputs, summed.
    pub inputs: Vec<Input>,
}

/// A solved recurrence: its transform, partial fractions and closed form.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Solution {
    /// The recurrence solved.
    pub recurrence: Recurrence,
    /// X(z)/z over one denominator, before cancellation.
    pub transform: Rational,
    /// Poles cancelled by zeros of the numerator.
    pub cancelled: Vec<Decimal>,
    /// Pairs of poles closer than [`POLE_MERGE_DISTANCE`] that were taken as one.
    pub merged: Vec<(Decimal, Decimal)>,
    /// The partial fractions of X(z)/z after cancellation.
    pub fractions: Vec<PoleFractions>,
    /// x[k] for every k ≥ 0.
    pub closed_form: ClosedForm,
}

impl Recurrence {
    /// A recurrence with no input: x[k] = a^k·x0.
    pub fn homogeneous(a: Decimal, x0: Decimal) -> Self {
        Self {
            a,
            x0,
            inputs: vec![],
        }
    }

    /// Solves the recurrence into its closed form through the z-domain.
    ///
    /// Poles nearer each other than 1e-14 (a growth ratio that equals the
    /// interest factor except for rounding in the 28th digit) are merged into
    /// one repeated pole, and [`Solution::merged`] says so: the two-pole
    /// expansion would divide by their difference and lose every digit.
    ///
    /// # Errors
    /// An overflow of the 28-digit arithmetic.
    ///
    /// # Example
    /// ```
    /// // A 0 % plan: 2,400 repaid by 200 a period. a = 1 and the step's pole
    /// // z = 1 coincide: a double pole, whose closed form is 2400 − 200·k.
    /// use residue::engine::recurrence::{Input, Recurrence};
    /// let r = Recurrence {
    ///     a: "1".parse().unwrap(),
    ///     x0: "2400".parse().unwrap(),
    ///     inputs: vec![Input::Step { amount: "-200".parse().unwrap() }],
    /// };
    /// let s = r.solve().unwrap();
    /// assert_eq!(s.fractions.len(), 1);
    /// assert_eq!(s.fractions[0].multiplicity, 2);
    /// assert!(s.closed_form.eval(12).unwrap().is_zero());
    /// assert_eq!(s.closed_form.eval(5).unwrap().to_string(), "1400");
    /// ```
    pub fn solve(&self) -> Result<Solution> {
        // Without inputs X(z)/z = x0/(z − a) is already one partial fraction
        // (residue x0 at the simple pole a): nothing to expand. The unit tests
        // hold this to the expansion below.
        if self.inputs.is_empty() && !self.x0.is_zero() {
            let fractions = vec![PoleFractions {
                pole: self.a,
                multiplicity: 1,
                coefficients: vec![self.x0],
            }];
            return Ok(Solution {
                recurrence: self.clone(),
                transform: Rational {
                    numerator: Poly::constant(self.x0),
                    poles: vec![Pole {
                        at: self.a,
                        multiplicity: 1,
                    }],
                },
                cancelled: Vec::new(),
                merged: Vec::new(),
                closed_form: ClosedForm::from_fractions(&fractions)?,
                fractions,
            });
        }
        self.solve_by_expansion()
    }

    /// The closed form alone, as [`Self::solve`] gives it, without the transform
    /// and the expansion kept for display.
    ///
    /// A recurrence with one nonzero term whose denominator, once the pole at
    /// z = 0 it shares with its numerator is cancelled, has two distinct simple
    /// poles p and q (a level payment or deposit at a rate other than 0%, a
    /// geometric input growing at a ratio other than a, an impulse) takes the
    /// cover-up residues directly: A_p = c/(p − q), A_q = c/(q − p), the same
    /// operations the expansion performs for such a term, without building its
    /// polynomials. Everything else (repeated or merged poles, a ramp, x0 and
    /// inputs together) goes through [`Self::solve`]. The unit tests hold the
    /// two to equality.
    ///
    /// # Errors
    /// An overflow of the 28-digit arithmetic.
    pub fn closed_form(&self) -> Result<ClosedForm> {
        if self.inputs.is_empty() && !self.x0.is_zero() {
            // x0/(z − a): the residue x0 at the simple pole a, as in `solve`.
            return ClosedForm::from_fractions(&[PoleFractions {
                pole: self.a,
                multiplicity: 1,
                coefficients: vec![self.x0],
            }]);
        }
        if let Some(fractions) = self.two_simple_poles()? {
            return ClosedForm::from_fractions(&fractions);
        }
        Ok(self.solve()?.closed_form)
    }

    /// The partial fractions of X(z)/z = c/((z − p)(z − q)) for the recurrences
    /// [`Self::closed_form`] solves directly, ordered as [`Self::solve`] orders
    /// them (a pole at z = 0 first, then from the largest down); `None` for the rest.
    fn two_simple_poles(&self) -> Result<Option<[PoleFractions; 2]>> {
        let a = self.a;
        let (c, p, q) = match (self.x0.is_zero(), self.inputs.as_slice()) {
            // c·z/(z·(z − a)·(z − g)) = c/((z − a)(z − g)); g = 1 for a step.
            (true, [Input::Step { amount }]) => (*amount, a, Decimal::ONE),
            (true, [Input::Geometric { amount, ratio }]) => (*amount, a, *ratio),
            // c/(z·(z − a)): nothing cancels.
            (true, [Input::Impulse { amount }]) => (*amount, Decimal::ZERO, a),
            _ => return Ok(None),
        };
        let gap = p.checked_sub(q).or_overflow("a pole gap")?;
        // Equal or merged poles are repeated: the expansion handles them; so it
        // does a zero numerator (nothing left) or a pole at 0 a geometric input
        // would double.
        if c.is_zero()
            || a.is_zero()
            || gap.abs() < POLE_MERGE_DISTANCE
            || (matches!(self.inputs[0], Input::Geometric { .. }) && q.is_zero())
        {
            return Ok(None);
        }
        let residue = |gap: Decimal| {
            c.checked_div(gap)
                .or_overflow("a partial-fraction coefficient")
        };
        let at = |pole: Decimal, coefficient: Decimal| PoleFractions {
            pole,
            multiplicity: 1,
            coefficients: vec![coefficient],
        };
        let first = at(p, residue(gap)?);
        let second = at(q, residue(q.checked_sub(p).or_overflow("a pole gap")?)?);
        // z = 0 first, then the larger pole.
        Ok(Some(if !p.is_zero() && (q.is_zero() || q > p) {
            [second, first]
        } else {
            [first, second]
        }))
    }

    /// [`Self::solve`] through the common denominator and the expansion term by term.
    fn solve_by_expansion(&self) -> Result<Solution> {
        let mut merged = Vec::new();
        let mut canonical = |p: Decimal, known: &mut Vec<Pole>| -> Decimal {
            for q in known.iter() {
                if q.at != p && (q.at - p).abs() < POLE_MERGE_DISTANCE {
                    merged.push((q.at, p));
                    return q.at;
                }
            }
            p
        };
        // Terms of X(z)/z: x0/(z − a) and F_i(z)/(z (z − a)).
        let mut known: Vec<Pole> = vec![Pole {
            at: self.a,
            multiplicity: 1,
        }];
        let mut terms: Vec<(Poly, Vec<Pole>)> = vec![(
            Poly::constant(self.x0),
            vec![Pole {
                at: self.a,
                multiplicity: 1,
            }],
        )];
        for input in &self.inputs {
            let (numerator, poles) = input.transform();
            // 1/(z·(z − a)): a double pole at 0 when a = 0.
            let mut all = vec![Pole {
                at: Decimal::ZERO,
                multiplicity: 1,
            }];
            add_pole(
                &mut all,
                Pole {
                    at: self.a,
                    multiplicity: 1,
                },
            );
            for pole in poles {
                let at = canonical(pole.at, &mut known);
                add_pole(
                    &mut all,
                    Pole {
                        at,
                        multiplicity: pole.multiplicity,
                    },
                );
                add_pole(
                    &mut known,
                    Pole {
                        at,
                        multiplicity: 1,
                    },
                );
            }
            terms.push((numerator, all));
        }
        // The common denominator: each pole at its largest multiplicity.
        let mut common: Vec<Pole> = Vec::new();
        for (_, poles) in &terms {
            for pole in poles {
                match common.iter_mut().find(|q| q.at == pole.at) {
                    Some(q) => q.multiplicity = q.multiplicity.max(pole.multiplicity),
                    None => common.push(*pole),
                }
            }
        }
        // Order for reading: z = 0 first, then the others from the largest down.
        common.sort_by(|p, q| match (p.at.is_zero(), q.at.is_zero()) {
            (true, false) => std::cmp::Ordering::Less,
            (false, true) => std::cmp::Ordering::Greater,
            _ => q.at.cmp(&p.at),
        });
        let mut numerator = Poly::default();
        for (n, poles) in &terms {
            let mut lifted = n.clone();
            for pole in &common {
                let have = poles
                    .iter()
                    .find(|q| q.at == pole.at)
                    .map_or(0, |q| q.multiplicity);
                lifted = lifted.mul(&Poly::factor_power(pole.at, pole.multiplicity - have)?)?;
            }
            numerator = numerator.add(&lifted)?;
        }
        let transform = Rational {
            numerator,
            poles: common,
        };
        let mut reduced = transform.clone();
        let cancelled = reduced.cancel_common_factors()?;
        // The fractions are found term by term and summed pole by pole: each
        // term's numerator is a single constant or monomial, whereas the expanded
        // common numerator cancels digits when evaluated near its poles.
        let mut fractions: Vec<PoleFractions> = reduced
            .poles
            .iter()
            .map(|p| PoleFractions {
                pole: p.at,
                multiplicity: p.multiplicity,
                coefficients: vec![Decimal::ZERO; p.multiplicity as usize],
            })
            .collect();
        for (n, poles) in &terms {
            let mut term = Rational {
                numerator: n.clone(),
                poles: poles.clone(),
            };
            term.cancel_common_factors()?;
            for f in term.partial_fractions()? {
                // A power the common form cancelled sums to zero here too (up to rounding): drop it.
                let Some(target) = fractions.iter_mut().find(|t| t.pole == f.pole) else {
                    continue;
                };
                for (j, c) in f
                    .coefficients
                    .iter()
                    .enumerate()
                    .take(target.coefficients.len())
                {
                    target.coefficients[j] = target.coefficients[j]
                        .checked_add(*c)
                        .or_overflow("a partial-fraction coefficient")?;
                }
            }
        }
        let closed_form = ClosedForm::from_fractions(&fractions)?;
        Ok(Solution {
            recurrence: self.clone(),
            transform,
            cancelled,
            merged,
            fractions,
            closed_form,
        })
    }

    /// x[0..=n] by stepping the recurrence in decimal arithmetic (for checks, not for answers).
    pub fn step(&self, n: u32) -> Result<Vec<Decimal>> {
        let mut out = Vec::with_capacity(n as usize + 1);
        let mut x = self.x0;
        out.push(x);
        for k in 0..n {
            let mut f = Decimal::ZERO;
            for input in &self.inputs {
                f = f.checked_add(input.value_at(k)?).or_overflow("an input")?;
            }
            x = self
                .a
                .checked_mul(x)
                .and_then(|v| v.checked_add(f))
                .or_overflow("a stepped balance")?;
            out.push(x);
        }
        Ok(out)
    }
}

fn add_pole(poles: &mut Vec<Pole>, pole: Pole) {
    match poles.iter_mut().find(|q| q.at == pole.at) {
        Some(q) => q.multiplicity += pole.multiplicity,
        None => poles.push(pole),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    fn close(a: Decimal, b: Decimal, tol: &str) -> bool {
        (a - b).abs() <= d(tol)
    }

    #[test]
    fn a_recurrence_without_inputs_is_its_own_partial_fraction() {
        for (a, x0) in [
            ("1.005", "1"),
            ("1", "1"),
            ("0.5", "-3.25"),
            ("1.0055833333333333333333333333", "250000"),
            ("0", "2"),
        ] {
            let r = Recurrence::homogeneous(d(a), d(x0));
            assert_eq!(
                r.solve().unwrap(),
                r.solve_by_expansion().unwrap(),
                "a = {a}, x0 = {x0}"
            );
        }
    }

    #[test]
    fn the_direct_closed_form_equals_the_expansion() {
        // Every shape closed_form() takes directly, and some it hands on, at
        // rates from −100 % to +300 % a period (a from 0 to 4), against solve().
        let rates = [
            "0",
            "1",
            "1.005",
            "0.995",
            "1.0041666666666666666666666667",
            "1.00000000000001",
            "0.99999999999999",
            "1.000000000000001",
            "2",
            "4",
            "0.5",
            "0.0000001",
            "1.0000000000000000000000000001",
            "1.2345678901234567890123456789",
        ];
        let amounts = ["1", "-1", "-599.55", "0.01", "123456789.12", "0"];
        let ratios = [
            "1",
            "1.005",
            "0.98",
            "0",
            "1.02",
            "1.0041666666666666666666666667",
        ];
        let mut direct = 0;
        for a in rates {
            for c in amounts {
                let mut shapes = vec![
                    vec![],
                    vec![Input::Step { amount: d(c) }],
                    vec![Input::Impulse { amount: d(c) }],
                    vec![Input::Ramp { amount: d(c) }],
                    vec![
                        Input::Step { amount: d(c) },
                        Input::Impulse { amount: d("2") },
                    ],
                ];
                for g in ratios {
                    shapes.push(vec![Input::Geometric {
                        amount: d(c),
                        ratio: d(g),
                    }]);
                }
                for x0 in ["0", "1", "250000"] {
                    for inputs in &shapes {
                        let r = Recurrence {
                            a: d(a),
                            x0: d(x0),
                            inputs: inputs.clone(),
                        };
                        if r.two_simple_poles().unwrap().is_some() {
                            direct += 1;
                        }
                        match (r.closed_form(), r.solve()) {
                            (Ok(lean), Ok(full)) => {
                                assert_eq!(
                                    lean, full.closed_form,
                                    "a = {a}, x0 = {x0}, {inputs:?}"
                                );
                                // And both against stepping the recurrence.
                                let stepped = r.step(7).unwrap();
                                for k in [0u32, 1, 2, 7] {
                                    let v = lean.eval(k).unwrap();
                                    assert_eq!(Some(v), full.closed_form.eval(k).ok());
                                    if !full.merged.is_empty() {
                                        // Poles 1e-15 apart taken as one: an
                                        // approximation of its own (tested below).
                                        continue;
                                    }
                                    let x = stepped[k as usize];
                                    // Within rounding of the size of the terms summed.
                                    let size: Decimal = lean
                                        .modes
                                        .iter()
                                        .flat_map(|m| m.polynomial.iter())
                                        .chain(lean.impulses.iter().map(|(_, c)| c))
                                        .map(|c| c.abs())
                                        .sum();
                                    let reach =
                                        rust_decimal::MathematicalOps::powi(&d("4"), i64::from(k))
                                            * Decimal::from((k + 1) * (k + 1));
                                    assert!(
                                        (v - x).abs()
                                            <= d("1e-22") * size * reach + d("1e-20") * x.abs(),
                                        "a = {a}, x0 = {x0}, {inputs:?}, k = {k}: {v} against {x}"
                                    );
                                }
                            }
                            (Err(_), Err(_)) => {}
                            (lean, full) => panic!(
                                "a = {a}, x0 = {x0}, {inputs:?}: {:?} against {:?}",
                                lean.map(|_| ()),
                                full.map(|_| ())
                            ),
                        }
                    }
                }
            }
        }
        // The direct path was taken (and so compared), not only handed on.
        assert!(direct > 150, "{direct}");
    }

    #[test]
    fn level_loan_closed_form_matches_the_annuity_balance() {
        // x[k] = (x0 − P/i)·a^k + P/i (common practice, no source)
        let r = Recurrence {
            a: d("1.005"),
            x0: d("100000"),
            inputs: vec![Input::Step {
                amount: d("-599.55"),
            }],
        };
        let s = r.solve().unwrap();
        assert_eq!(s.closed_form.modes.len(), 2);
        let stepped = r.step(360).unwrap();
        for k in [0u32, 1, 12, 120, 359, 360] {
            assert!(
                close(s.closed_form.eval(k).unwrap(), stepped[k as usize], "1e-15"),
                "k = {k}"
            );
        }
    }

    #[test]
    fn zero_rate_loan_goes_through_the_double_pole_at_one() {
        let r = Recurrence {
            a: d("1"),
            x0: d("1200"),
            inputs: vec![Input::Step { amount: d("-100") }],
        };
        let s = r.solve().unwrap();
        assert_eq!(s.fractions.len(), 1);
        assert_eq!(s.fractions[0].pole, d("1"));
        assert_eq!(s.fractions[0].multiplicity, 2);
        assert_eq!(s.closed_form.eval(12).unwrap(), Decimal::ZERO);
        assert_eq!(s.closed_form.eval(5).unwrap(), d("700"));
    }

    #[test]
    fn growth_at_the_interest_rate_gives_a_double_pole_at_a() {
        let r = Recurrence {
            a: d("1.004"),
            x0: d("0"),
            inputs: vec![Input::Geometric {
                amount: d("100"),
                ratio: d("1.004"),
            }],
        };
        let s = r.solve().unwrap();
        let pole_a = s.fractions.iter().find(|f| f.pole == d("1.004")).unwrap();
        assert_eq!(pole_a.multiplicity, 2);
        // Σ_{j<k} 100·g^j·a^(k−1−j) = 100·k·a^(k−1) (summed by hand)
        let expected = d("100") * d("24") * rust_decimal::MathematicalOps::powi(&d("1.004"), 23);
        assert!(close(s.closed_form.eval(24).unwrap(), expected, "1e-18"));
    }

    #[test]
    fn impulse_and_ramp_inputs_match_stepping() {
        let r = Recurrence {
            a: d("1.01"),
            x0: d("50"),
            inputs: vec![
                Input::Impulse { amount: d("7") },
                Input::Ramp { amount: d("3") },
                Input::Step { amount: d("-2") },
            ],
        };
        let s = r.solve().unwrap();
        let stepped = r.step(60).unwrap();
        for k in 0..=60u32 {
            assert!(
                close(s.closed_form.eval(k).unwrap(), stepped[k as usize], "1e-18"),
                "k = {k}"
            );
        }
    }

    #[test]
    fn zero_rate_with_a_ramp_has_a_triple_pole() {
        let r = Recurrence {
            a: d("1"),
            x0: d("0"),
            inputs: vec![Input::Ramp { amount: d("1") }],
        };
        let s = r.solve().unwrap();
        assert_eq!(s.fractions[0].multiplicity, 3);
        // Σ_{j<k} j = k(k−1)/2
        assert_eq!(s.closed_form.eval(10).unwrap().normalize(), d("45"));
    }

    #[test]
    fn nearly_equal_poles_are_merged_and_reported() {
        let a = d("1.0041666666666666666666666667");
        let g = d("1.0041666666666666666666666666");
        let r = Recurrence {
            a,
            x0: d("0"),
            inputs: vec![Input::Geometric {
                amount: d("100"),
                ratio: g,
            }],
        };
        let s = r.solve().unwrap();
        assert_eq!(s.merged.len(), 1);
        let stepped = r.step(120).unwrap();
        assert!(close(
            s.closed_form.eval(120).unwrap(),
            stepped[120],
            "1e-9"
        ));
    }
}
