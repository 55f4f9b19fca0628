//! Rational functions of z given over their poles, and their partial fractions.
//!
//! Residue writes the z-transform of a balance as X(z) and expands X(z)/z, which
//! is always strictly proper here, as
//!
//! ```text
//! X(z)/z = N(z) / Π (z − p)^m  =  Σ_p Σ_{j=1..m} A_{p,j} / (z − p)^j
//! ```
//!
//! The coefficients A_{p,j} come from the Taylor expansion at each pole p of
//! G_p(z) = (z − p)^m · X(z)/z = N(z) / Π_{q≠p} (z − q)^{m_q}:
//! A_{p,j} = coefficient of (z − p)^{m−j} in that expansion, that is
//! 1/(m−j)! · d^{m−j}G_p/dz^{m−j} at z = p. The expansion is computed exactly as
//! a Taylor shift of each polynomial followed by a power-series division, so
//! repeated poles of any multiplicity need no derivative formulas.

use rust_decimal::Decimal;

use super::error::{EngineError, ErrorKind, OrOverflow, Result};
use super::poly::{series_quotient, Poly};

/// A pole of a rational function and how often it is repeated.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Pole {
    /// Where the pole lies.
    pub at: Decimal,
    /// How often it is repeated.
    pub multiplicity: u32,
}

/// A strictly proper rational function N(z) / Π (z − p)^m, denominator kept factored.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Rational {
    /// N(z).
    pub numerator: Poly,
    /// The poles of the denominator.
    pub poles: Vec<Pole>,
}

/// The partial fractions at one pole: `coefficients[j − 1]` belongs to 1/(z − p)^j.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PoleFractions {
    /// The pole p.
    pub pole: Decimal,
    /// Its multiplicity m.
    pub multiplicity: u32,
    /// The coefficients of 1/(z − p)^j, j = 1 to m.
    pub coefficients: Vec<Decimal>,
}

impl Rational {
    /// The degree of the denominator: the sum of the multiplicities.
    pub fn denominator_degree(&self) -> u32 {
        self.poles.iter().map(|p| p.multiplicity).sum()
    }

    /// The expanded denominator polynomial.
    pub fn denominator(&self) -> Result<Poly> {
        let mut d = Poly::constant(Decimal::ONE);
        for pole in &self.poles {
            d = d.mul(&Poly::factor_power(pole.at, pole.multiplicity)?)?;
        }
        Ok(d)
    }

    /// Cancels every pole at which the numerator vanishes exactly (pole-zero cancellation).
    ///
    /// Returns the poles that were cancelled, once per cancelled power.
    pub fn cancel_common_factors(&mut self) -> Result<Vec<Decimal>> {
        let mut cancelled = Vec::new();
        for pole in &mut self.poles {
            while pole.multiplicity > 0 && !self.numerator.is_zero() {
                let (q, r) = self.numerator.divide_by_linear(pole.at)?;
                if !r.is_zero() {
                    break;
                }
                self.numerator = q;
                pole.multiplicity -= 1;
                cancelled.push(pole.at);
            }
        }
        if self.numerator.is_zero() {
            self.poles.clear();
        }
        self.poles.retain(|p| p.multiplicity > 0);
        Ok(cancelled)
    }

    /// The partial-fraction expansion over the poles, with multiplicity.
    ///
    /// # Errors
    /// An overflow of the arithmetic, or a function that is not strictly proper.
    pub fn partial_fractions(&self) -> Result<Vec<PoleFractions>> {
        if let Some(deg) = self.numerator.degree() {
            if deg as u32 >= self.denominator_degree() {
                return Err(EngineError {
                    kind: ErrorKind::NoSolution,
                    field: None,
                    message: "the transform is not strictly proper".into(),
                });
            }
        }
        let mut out = Vec::with_capacity(self.poles.len());
        for (index, pole) in self.poles.iter().enumerate() {
            let m = pole.multiplicity as usize;
            // Numerator and the other poles' factors, both as polynomials in w = z − p.
            let numerator = self.numerator.shifted(pole.at)?;
            let mut others = Poly::constant(Decimal::ONE);
            for (other_index, other) in self.poles.iter().enumerate() {
                if other_index != index {
                    let gap = pole.at.checked_sub(other.at).or_overflow("a pole gap")?;
                    // (z − q) = (w + (p − q))
                    let factor = Poly::new(vec![gap, Decimal::ONE]);
                    for _ in 0..other.multiplicity {
                        others = others.mul(&factor)?;
                    }
                }
            }
            let taylor = series_quotient(&numerator, &others, m)?;
            // A_{p,j} is the coefficient of w^{m−j}.
            let coefficients = (1..=m).map(|j| taylor[m - j]).collect();
            out.push(PoleFractions {
                pole: pole.at,
                multiplicity: pole.multiplicity,
                coefficients,
            });
        }
        Ok(out)
    }
}

/// One term of a closed form: (polynomial in k) · pole^k, or an impulse when the pole is 0.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Mode {
    /// The pole p (0 for impulses).
    pub pole: Decimal,
    /// Coefficients of the polynomial in k, ascending.
    pub polynomial: Vec<Decimal>,
}

/// x[k] = Σ (polynomial in k)·p^k + Σ c·δ[k − j], valid for every k ≥ 0.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct ClosedForm {
    /// The terms (polynomial in k)·p^k.
    pub modes: Vec<Mode>,
    /// (j, c): c·δ[k − j], from poles at z = 0.
    pub impulses: Vec<(u32, Decimal)>,
}

/// The binomial coefficient C(k, r) as a polynomial in k: k(k−1)…(k−r+1)/r!.
fn binomial_polynomial(r: usize) -> Result<Poly> {
    let mut p = Poly::constant(Decimal::ONE);
    let mut factorial = Decimal::ONE;
    for t in 0..r {
        p = p.mul(&Poly::new(vec![-Decimal::from(t as u64), Decimal::ONE]))?;
        factorial = factorial
            .checked_mul(Decimal::from(t as u64 + 1))
            .or_overflow("a factorial")?;
    }
    p.scale(
        Decimal::ONE
            .checked_div(factorial)
            .or_overflow("a factorial")?,
    )
}

impl ClosedForm {
    /// Maps partial fractions of X(z)/z back to the time domain with the transform table:
    /// A·z/(z − p)^j  ↔  A·C(k, j − 1)·p^(k − j + 1).
    pub fn from_fractions(fractions: &[PoleFractions]) -> Result<Self> {
        let mut out = ClosedForm::default();
        for f in fractions {
            if f.pole.is_zero() {
                for (j, c) in f.coefficients.iter().enumerate() {
                    if !c.is_zero() {
                        out.impulses.push((j as u32, *c));
                    }
                }
                continue;
            }
            if let [a] = f.coefficients.as_slice() {
                // A simple pole: A·z/(z − p) ↔ A·p^k, the j = 1 term below.
                if !a.is_zero() {
                    out.modes.push(Mode {
                        pole: f.pole,
                        polynomial: vec![*a],
                    });
                }
                continue;
            }
            let mut poly = Poly::default();
            let mut pole_power = Decimal::ONE; // p^(j−1)
            for (j0, a) in f.coefficients.iter().enumerate() {
                let weight = a
                    .checked_div(pole_power)
                    .or_overflow("a closed-form coefficient")?;
                poly = poly.add(&binomial_polynomial(j0)?.scale(weight)?)?;
                pole_power = pole_power.checked_mul(f.pole).or_overflow("a pole power")?;
            }
            if !poly.is_zero() {
                out.modes.push(Mode {
                    pole: f.pole,
                    polynomial: poly.coefficients().to_vec(),
                });
            }
        }
        Ok(out)
    }

    /// The value x[k], in O(1) for a fixed number of modes: no stepping through earlier periods.
    pub fn eval(&self, k: u32) -> Result<Decimal> {
        let kd = Decimal::from(k);
        let mut total = Decimal::ZERO;
        for mode in &self.modes {
            let mut poly = Decimal::ZERO;
            for c in mode.polynomial.iter().rev() {
                poly = poly
                    .checked_mul(kd)
                    .and_then(|v| v.checked_add(*c))
                    .or_overflow("a closed-form value")?;
            }
            let power = pow(mode.pole, k)?;
            let term = poly.checked_mul(power).or_overflow("a closed-form value")?;
            total = total.checked_add(term).or_overflow("a closed-form value")?;
        }
        for (j, c) in &self.impulses {
            if *j == k {
                total = total.checked_add(*c).or_overflow("a closed-form value")?;
            }
        }
        Ok(total)
    }

    /// x[k]/s^k for s > 0: each mode's pole enters as (p/s)^k, so with s the largest
    /// pole no power overflows even where x[k] itself would.
    pub fn eval_scaled(&self, k: u32, s: Decimal) -> Result<Decimal> {
        let kd = Decimal::from(k);
        let mut total = Decimal::ZERO;
        for mode in &self.modes {
            let mut poly = Decimal::ZERO;
            for c in mode.polynomial.iter().rev() {
                poly = poly
                    .checked_mul(kd)
                    .and_then(|v| v.checked_add(*c))
                    .or_overflow("a closed-form value")?;
            }
            let ratio = mode.pole.checked_div(s).or_overflow("a scaled pole")?;
            let term = poly
                .checked_mul(pow(ratio, k)?)
                .or_overflow("a closed-form value")?;
            total = total.checked_add(term).or_overflow("a closed-form value")?;
        }
        for (j, c) in &self.impulses {
            if *j == k {
                let scale = pow(s, k)?;
                total = total
                    .checked_add(c.checked_div(scale).or_overflow("a scaled impulse")?)
                    .or_overflow("a closed-form value")?;
            }
        }
        Ok(total)
    }

    /// The largest |observed(m) − x[m]| over m in 1..=len and the first m where it occurs
    /// (`None` for len = 0).
    ///
    /// Binary floating point screens every m, the powers taken incrementally; the
    /// decimal closed form then measures each m whose screened gap comes within the
    /// screening's error bound of the largest, so the figure returned is decimal and
    /// exact to the closed form. Where too many gaps tie (an exact ledger), every m is
    /// measured in decimal.
    ///
    /// # Errors
    /// An overflow of the decimal closed form.
    pub fn largest_gap(
        &self,
        len: u32,
        observed: impl Fn(u32) -> Decimal,
    ) -> Result<Option<(Decimal, u32)>> {
        use rust_decimal::prelude::ToPrimitive;
        const MEASURED_AT_MOST: usize = 48;
        if len == 0 {
            return Ok(None);
        }
        let poles: Vec<f64> = self
            .modes
            .iter()
            .map(|m| m.pole.to_f64().unwrap_or(f64::NAN))
            .collect();
        let polys: Vec<Vec<f64>> = self
            .modes
            .iter()
            .map(|m| {
                m.polynomial
                    .iter()
                    .map(|c| c.to_f64().unwrap_or(f64::NAN))
                    .collect()
            })
            .collect();
        let mut powers = vec![1.0f64; poles.len()];
        let mut gaps = Vec::with_capacity(len as usize);
        let mut magnitude = 0.0f64;
        // The common closed form (a level run: constant coefficients, at most four
        // simple poles, no impulse) in fixed arrays; the same sums in the same order.
        let simple =
            self.impulses.is_empty() && polys.len() <= 4 && polys.iter().all(|p| p.len() == 1);
        if simple {
            // Unused lanes hold a zero coefficient and a zero pole: their terms
            // are 0.0, and adding 0.0 leaves each sum as it was.
            let (mut c, mut p, mut w) = ([0.0f64; 4], [0.0f64; 4], [0.0f64; 4]);
            for (j, (poly, pole)) in polys.iter().zip(&poles).enumerate() {
                (c[j], p[j], w[j]) = (poly[0], *pole, 1.0);
            }
            for k in 0..=len {
                let t = [c[0] * w[0], c[1] * w[1], c[2] * w[2], c[3] * w[3]];
                let x = t[0] + t[1] + t[2] + t[3];
                let size = t[0].abs() + t[1].abs() + t[2].abs() + t[3].abs();
                w = [w[0] * p[0], w[1] * p[1], w[2] * p[2], w[3] * p[3]];
                if k >= 1 {
                    let seen = quick_f64(observed(k));
                    gaps.push((seen - x).abs());
                    magnitude = magnitude.max(size + seen.abs());
                }
            }
        }
        for k in (0..=len).filter(|_| !simple) {
            let kf = f64::from(k);
            let (mut x, mut size) = (0.0f64, 0.0f64);
            for ((poly, pole), power) in polys.iter().zip(&poles).zip(powers.iter_mut()) {
                let mut v = 0.0;
                for c in poly.iter().rev() {
                    v = v * kf + c;
                }
                let term = v * *power;
                x += term;
                size += term.abs();
                *power *= pole;
            }
            for (j, c) in &self.impulses {
                if *j == k {
                    let c = c.to_f64().unwrap_or(f64::NAN);
                    x += c;
                    size += c.abs();
                }
            }
            if k >= 1 {
                let seen = quick_f64(observed(k));
                gaps.push((seen - x).abs());
                magnitude = magnitude.max(size + seen.abs());
            }
        }
        let finite = gaps.iter().all(|g| g.is_finite()) && magnitude.is_finite();
        let tolerance = magnitude * (f64::from(len) + 8.0) * 8.0 * f64::EPSILON;
        let top = gaps.iter().copied().fold(0.0f64, f64::max);
        let candidates: Vec<u32> = (1..=len)
            .filter(|m| gaps[*m as usize - 1] >= top - 2.0 * tolerance)
            .collect();
        let mut largest: Option<(Decimal, u32)> = None;
        if finite && candidates.len() <= MEASURED_AT_MOST {
            for m in candidates {
                let gap = (observed(m) - self.eval(m)?).abs();
                if largest.is_none_or(|(g, _)| gap > g) {
                    largest = Some((gap, m));
                }
            }
        } else {
            let values = self.values(len)?;
            for m in 1..=len {
                let gap = (observed(m) - values[m as usize]).abs();
                if largest.is_none_or(|(g, _)| gap > g) {
                    largest = Some((gap, m));
                }
            }
        }
        Ok(largest)
    }

    /// x[0], x[1], …, x[n] in one pass, the powers p^k taken incrementally.
    pub fn values(&self, n: u32) -> Result<Vec<Decimal>> {
        let mut powers: Vec<Decimal> = vec![Decimal::ONE; self.modes.len()];
        let mut out = Vec::with_capacity(n as usize + 1);
        for k in 0..=n {
            let kd = Decimal::from(k);
            let mut total = Decimal::ZERO;
            for (mode, power) in self.modes.iter().zip(powers.iter_mut()) {
                let poly = match mode.polynomial.as_slice() {
                    [c] => *c,
                    coefficients => {
                        let mut poly = Decimal::ZERO;
                        for c in coefficients.iter().rev() {
                            poly = poly
                                .checked_mul(kd)
                                .and_then(|v| v.checked_add(*c))
                                .or_overflow("a closed-form value")?;
                        }
                        poly
                    }
                };
                // Modes at z = 1 need no power; the others take it incrementally.
                let term = if mode.pole == Decimal::ONE {
                    poly
                } else {
                    let t = poly
                        .checked_mul(*power)
                        .or_overflow("a closed-form value")?;
                    *power = power.checked_mul(mode.pole).or_overflow("a pole power")?;
                    t
                };
                total = total.checked_add(term).or_overflow("a closed-form value")?;
            }
            for (j, c) in &self.impulses {
                if *j == k {
                    total = total.checked_add(*c).or_overflow("a closed-form value")?;
                }
            }
            out.push(total);
        }
        Ok(out)
    }
}

/// p^k, with 1^k and 0^k taken without arithmetic.
/// A decimal in binary floating point within a few units in the last place
/// (mantissa ÷ 10^scale, each rounded once): for screening, never for an answer.
fn quick_f64(d: Decimal) -> f64 {
    const TENS: [f64; 29] = [
        1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
        1e17, 1e18, 1e19, 1e20, 1e21, 1e22, 1e23, 1e24, 1e25, 1e26, 1e27, 1e28,
    ];
    // The mantissa's words (flags, low, middle, high): a mantissa of 64 bits (every
    // amount of money) converts in a few instructions, a wider one through i128.
    // (Written from the words: a test of the i128's range is seen through by the
    // compiler, which then converts every mantissa with the i128 library call.)
    let b = d.serialize();
    let word = |i: usize| u32::from_le_bytes([b[i], b[i + 1], b[i + 2], b[i + 3]]);
    let magnitude = if word(12) == 0 {
        ((u64::from(word(8)) << 32) | u64::from(word(4))) as f64
    } else {
        d.mantissa().unsigned_abs() as f64
    };
    let m = if d.is_sign_negative() {
        -magnitude
    } else {
        magnitude
    };
    m / TENS[(d.scale() as usize).min(28)]
}

/// p^k, the exact power rounded once to a decimal's precision ([`super::power`]).
///
/// # Errors
/// A power beyond the decimal range.
pub fn pow(p: Decimal, k: u32) -> Result<Decimal> {
    super::power::pow(p, k).or_overflow("a pole power")
}

impl ClosedForm {
    /// x[k] in binary floating point: for estimates only, never for an answer.
    pub fn estimate(&self, k: u32) -> f64 {
        Estimator::new(self).at(k)
    }
}

/// A closed form's coefficients and poles in binary floating point, converted
/// once for a search that estimates x[k] at many k.
pub(crate) struct Estimator {
    modes: Vec<(Vec<f64>, f64)>,
    impulses: Vec<(u32, f64)>,
}

impl Estimator {
    pub(crate) fn new(cf: &ClosedForm) -> Self {
        use rust_decimal::prelude::ToPrimitive;
        let f = |d: &Decimal| d.to_f64().unwrap_or(0.0);
        Self {
            modes: cf
                .modes
                .iter()
                .map(|m| (m.polynomial.iter().map(f).collect(), f(&m.pole)))
                .collect(),
            impulses: cf.impulses.iter().map(|(j, c)| (*j, f(c))).collect(),
        }
    }

    /// x[k] in binary floating point.
    pub(crate) fn at(&self, k: u32) -> f64 {
        let kf = f64::from(k);
        let mut total = 0.0;
        for (polynomial, pole) in &self.modes {
            let mut poly = 0.0;
            for c in polynomial.iter().rev() {
                poly = poly * kf + c;
            }
            total += poly * pole.powf(kf);
        }
        for (j, c) in &self.impulses {
            if *j == k {
                total += c;
            }
        }
        total
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_quick_conversion_reads_the_mantissa_as_the_i128_conversion_does() {
        // The reference: rust_decimal's i128 mantissa converted by the compiler.
        let mut values = vec![
            Decimal::ZERO,
            Decimal::MAX,
            Decimal::MIN,
            Decimal::new(-1, 28),
        ];
        values.extend(crate::engine::testing::random_decimals(
            0x2545_f491_4f6c_dd1d,
            5_000,
            None,
        ));
        for d in values {
            let ten_power: f64 = format!("1e{}", d.scale()).parse().unwrap();
            let expected = d.mantissa() as f64 / ten_power;
            assert_eq!(quick_f64(d), expected, "{d}");
        }
    }

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn simple_poles_give_the_cover_up_residues() {
        // 1/((z − 1)(z − 2)) = −1/(z − 1) + 1/(z − 2)  (worked by hand)
        let r = Rational {
            numerator: Poly::constant(d("1")),
            poles: vec![
                Pole {
                    at: d("1"),
                    multiplicity: 1,
                },
                Pole {
                    at: d("2"),
                    multiplicity: 1,
                },
            ],
        };
        let f = r.partial_fractions().unwrap();
        assert_eq!(f[0].coefficients, vec![d("-1")]);
        assert_eq!(f[1].coefficients, vec![d("1")]);
    }

    #[test]
    fn a_triple_pole_expands_fully() {
        // (z² + 1)/(z − 1)³ = 1/(z − 1) + 2/(z − 1)² + 2/(z − 1)³ (z² + 1 = w² + 2w + 2, w = z − 1)
        let r = Rational {
            numerator: Poly::new(vec![d("1"), d("0"), d("1")]),
            poles: vec![Pole {
                at: d("1"),
                multiplicity: 3,
            }],
        };
        let f = r.partial_fractions().unwrap();
        assert_eq!(f[0].coefficients, vec![d("1"), d("2"), d("2")]);
    }

    #[test]
    fn double_pole_at_one_inverts_to_a_ramp() {
        // z/(z − 1)² ↔ k  (transform table)
        let f = [PoleFractions {
            pole: d("1"),
            multiplicity: 2,
            coefficients: vec![d("0"), d("1")],
        }];
        let cf = ClosedForm::from_fractions(&f).unwrap();
        for k in 0..10 {
            assert_eq!(cf.eval(k).unwrap(), Decimal::from(k));
        }
    }

    #[test]
    fn cancellation_removes_a_pole_the_numerator_shares() {
        // (z − 2)/((z − 1)(z − 2)) = 1/(z − 1)
        let mut r = Rational {
            numerator: Poly::new(vec![d("-2"), d("1")]),
            poles: vec![
                Pole {
                    at: d("1"),
                    multiplicity: 1,
                },
                Pole {
                    at: d("2"),
                    multiplicity: 1,
                },
            ],
        };
        assert_eq!(r.cancel_common_factors().unwrap(), vec![d("2")]);
        assert_eq!(
            r.poles,
            vec![Pole {
                at: d("1"),
                multiplicity: 1
            }]
        );
    }

    #[test]
    fn values_and_eval_agree() {
        let f = [
            PoleFractions {
                pole: d("1.005"),
                multiplicity: 2,
                coefficients: vec![d("3"), d("-2")],
            },
            PoleFractions {
                pole: d("1"),
                multiplicity: 1,
                coefficients: vec![d("7")],
            },
            PoleFractions {
                pole: d("0"),
                multiplicity: 1,
                coefficients: vec![d("5")],
            },
        ];
        let cf = ClosedForm::from_fractions(&f).unwrap();
        let all = cf.values(40).unwrap();
        for k in 0..=40u32 {
            let diff = (all[k as usize] - cf.eval(k).unwrap()).abs();
            assert!(diff < d("1e-20"), "k = {k}: {diff}");
        }
    }
}
