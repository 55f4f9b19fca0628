//! Polynomials in one variable over `Decimal`, coefficients in ascending order.
//!
//! Every operation is checked: an overflow becomes an error, never a panic.
//! Multiplication and division round half-even past 28 significant digits
//! (rust_decimal's rule); the engine states its precision with that in mind.

use rust_decimal::Decimal;

use super::error::{OrOverflow, Result};

/// A polynomial c0 + c1·z + c2·z² + …, kept without trailing zero coefficients.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Poly {
    coefficients: Vec<Decimal>,
}

impl Poly {
    /// The polynomial with these coefficients (ascending powers).
    pub fn new(coefficients: Vec<Decimal>) -> Self {
        let mut p = Self { coefficients };
        p.trim();
        p
    }

    /// The constant polynomial `c`.
    pub fn constant(c: Decimal) -> Self {
        Self::new(vec![c])
    }

    /// The monic linear factor (z − root).
    pub fn linear_factor(root: Decimal) -> Self {
        Self::new(vec![-root, Decimal::ONE])
    }

    /// (z − root)^power, expanded.
    pub fn factor_power(root: Decimal, power: u32) -> Result<Self> {
        let mut out = Self::constant(Decimal::ONE);
        let f = Self::linear_factor(root);
        for _ in 0..power {
            out = out.mul(&f)?;
        }
        Ok(out)
    }

    fn trim(&mut self) {
        while self.coefficients.last().is_some_and(|c| c.is_zero()) {
            self.coefficients.pop();
        }
    }

    /// The coefficients in ascending order (empty for the zero polynomial).
    pub fn coefficients(&self) -> &[Decimal] {
        &self.coefficients
    }

    /// The coefficient of z^power (zero beyond the degree).
    pub fn coefficient(&self, power: usize) -> Decimal {
        self.coefficients
            .get(power)
            .copied()
            .unwrap_or(Decimal::ZERO)
    }

    /// True for the zero polynomial.
    pub fn is_zero(&self) -> bool {
        self.coefficients.is_empty()
    }

    /// The degree; the zero polynomial reports `None`.
    pub fn degree(&self) -> Option<usize> {
        self.coefficients.len().checked_sub(1)
    }

    /// The sum of two polynomials.
    pub fn add(&self, other: &Self) -> Result<Self> {
        let n = self.coefficients.len().max(other.coefficients.len());
        let mut out = Vec::with_capacity(n);
        for i in 0..n {
            out.push(
                self.coefficient(i)
                    .checked_add(other.coefficient(i))
                    .or_overflow("a polynomial coefficient")?,
            );
        }
        Ok(Self::new(out))
    }

    /// The product of two polynomials.
    pub fn mul(&self, other: &Self) -> Result<Self> {
        if self.is_zero() || other.is_zero() {
            return Ok(Self::default());
        }
        let mut out = vec![Decimal::ZERO; self.coefficients.len() + other.coefficients.len() - 1];
        for (i, a) in self.coefficients.iter().enumerate() {
            for (j, b) in other.coefficients.iter().enumerate() {
                let term = a.checked_mul(*b).or_overflow("a polynomial coefficient")?;
                out[i + j] = out[i + j]
                    .checked_add(term)
                    .or_overflow("a polynomial coefficient")?;
            }
        }
        Ok(Self::new(out))
    }

    /// The polynomial times a constant.
    pub fn scale(&self, c: Decimal) -> Result<Self> {
        let out = self
            .coefficients
            .iter()
            .map(|x| x.checked_mul(c).or_overflow("a polynomial coefficient"))
            .collect::<Result<Vec<_>>>()?;
        Ok(Self::new(out))
    }

    /// The value at `z`, by Horner's rule.
    pub fn eval(&self, z: Decimal) -> Result<Decimal> {
        let mut acc = Decimal::ZERO;
        for c in self.coefficients.iter().rev() {
            acc = acc
                .checked_mul(z)
                .and_then(|v| v.checked_add(*c))
                .or_overflow("a polynomial value")?;
        }
        Ok(acc)
    }

    /// Divides by (z − root), returning the quotient and the remainder (the value at `root`).
    pub fn divide_by_linear(&self, root: Decimal) -> Result<(Self, Decimal)> {
        let n = self.coefficients.len();
        if n == 0 {
            return Ok((Self::default(), Decimal::ZERO));
        }
        let mut quotient = vec![Decimal::ZERO; n - 1];
        let mut carry = Decimal::ZERO;
        for i in (0..n).rev() {
            let value = self.coefficients[i]
                .checked_add(carry.checked_mul(root).or_overflow("synthetic division")?);
            let value = value.or_overflow("synthetic division")?;
            if i == 0 {
                return Ok((Self::new(quotient), value));
            }
            quotient[i - 1] = value;
            carry = value;
        }
        unreachable!("the loop returns at i == 0")
    }

    /// The coefficients of p(root + w) as a polynomial in w (a Taylor shift).
    pub fn shifted(&self, root: Decimal) -> Result<Self> {
        // Repeated synthetic division: the remainders are the Taylor coefficients.
        let mut out = Vec::with_capacity(self.coefficients.len());
        let mut current = self.clone();
        while !current.is_zero() {
            let (q, r) = current.divide_by_linear(root)?;
            out.push(r);
            current = q;
        }
        Ok(Self::new(out))
    }
}

/// The first `count` coefficients of the power series a(w)/b(w); b(0) must not be zero.
pub fn series_quotient(a: &Poly, b: &Poly, count: usize) -> Result<Vec<Decimal>> {
    let b0 = b.coefficient(0);
    debug_assert!(!b0.is_zero(), "series_quotient needs b(0) != 0");
    let mut q: Vec<Decimal> = Vec::with_capacity(count);
    for n in 0..count {
        let mut acc = a.coefficient(n);
        for j in 1..=n {
            let t = b
                .coefficient(j)
                .checked_mul(q[n - j])
                .or_overflow("a partial-fraction coefficient")?;
            acc = acc
                .checked_sub(t)
                .or_overflow("a partial-fraction coefficient")?;
        }
        q.push(
            acc.checked_div(b0)
                .or_overflow("a partial-fraction coefficient")?,
        );
    }
    Ok(q)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rust_decimal::Decimal;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn product_of_linear_factors_expands_as_by_hand() {
        // (z − 1)(z − 2) = z² − 3z + 2
        let p = Poly::linear_factor(d("1"))
            .mul(&Poly::linear_factor(d("2")))
            .unwrap();
        assert_eq!(p.coefficients(), &[d("2"), d("-3"), d("1")]);
        assert_eq!(
            Poly::factor_power(d("1"), 3).unwrap().coefficients(),
            &[d("-1"), d("3"), d("-3"), d("1")]
        );
    }

    #[test]
    fn synthetic_division_gives_quotient_and_value() {
        // z² − 3z + 2 = (z − 2)(z − 1) + 0; at z = 3 the remainder is 2.
        let p = Poly::new(vec![d("2"), d("-3"), d("1")]);
        let (q, r) = p.divide_by_linear(d("2")).unwrap();
        assert_eq!(q.coefficients(), &[d("-1"), d("1")]);
        assert_eq!(r, Decimal::ZERO);
        assert_eq!(p.divide_by_linear(d("3")).unwrap().1, d("2"));
        assert_eq!(p.eval(d("3")).unwrap(), d("2"));
    }

    #[test]
    fn taylor_shift_matches_expansion() {
        // p(z) = z², p(1 + w) = 1 + 2w + w².
        let p = Poly::new(vec![d("0"), d("0"), d("1")]);
        assert_eq!(
            p.shifted(d("1")).unwrap().coefficients(),
            &[d("1"), d("2"), d("1")]
        );
    }

    #[test]
    fn series_quotient_of_one_over_one_minus_w() {
        // 1/(1 − w) = 1 + w + w² + …
        let q = series_quotient(
            &Poly::constant(d("1")),
            &Poly::new(vec![d("1"), d("-1")]),
            4,
        )
        .unwrap();
        assert_eq!(q, vec![d("1"), d("1"), d("1"), d("1")]);
    }

    #[test]
    fn overflow_is_an_error_not_a_panic() {
        let big = Poly::constant(Decimal::MAX);
        assert!(big.mul(&big).is_err());
    }
}
