//! Nominal annual rates, payment and compounding frequencies, periodic rates.

use rust_decimal::{Decimal, MathematicalOps};

use super::error::{EngineError, OrOverflow, Result};

/// How often payments fall due, or interest compounds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Frequency {
    /// Once a year.
    Annual,
    /// Twice a year.
    Semiannual,
    /// Four times a year.
    Quarterly,
    /// Twelve times a year.
    Monthly,
    /// Twice a month: 24 times a year.
    Semimonthly,
    /// Every two weeks: 26 times a year.
    Biweekly,
    /// Every week: 52 times a year.
    Weekly,
    /// Compounding only: 365 times a year.
    Daily,
}

impl Frequency {
    /// Periods in a year.
    pub fn per_year(self) -> u32 {
        match self {
            Frequency::Annual => 1,
            Frequency::Semiannual => 2,
            Frequency::Quarterly => 4,
            Frequency::Monthly => 12,
            Frequency::Semimonthly => 24,
            Frequency::Biweekly => 26,
            Frequency::Weekly => 52,
            Frequency::Daily => 365,
        }
    }

    /// The interface name (`monthly`, `biweekly`, …).
    pub fn name(self) -> &'static str {
        match self {
            Frequency::Annual => "annual",
            Frequency::Semiannual => "semiannual",
            Frequency::Quarterly => "quarterly",
            Frequency::Monthly => "monthly",
            Frequency::Semimonthly => "semimonthly",
            Frequency::Biweekly => "biweekly",
            Frequency::Weekly => "weekly",
            Frequency::Daily => "daily",
        }
    }

    /// The frequency with this interface name.
    pub fn parse(name: &str) -> Option<Frequency> {
        Self::ALL.iter().copied().find(|f| f.name() == name)
    }

    /// Every frequency, the least frequent first.
    pub const ALL: [Frequency; 8] = [
        Frequency::Annual,
        Frequency::Semiannual,
        Frequency::Quarterly,
        Frequency::Monthly,
        Frequency::Semimonthly,
        Frequency::Biweekly,
        Frequency::Weekly,
        Frequency::Daily,
    ];
}

/// The highest nominal annual rate accepted, in percent.
pub const MAX_ANNUAL_RATE_PERCENT: Decimal = Decimal::from_parts(1000, 0, 0, false, 0);

/// A nominal annual rate, 0 % to 1000 %, kept as the decimal the user gave.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct AnnualRate {
    percent: Decimal,
}

impl AnnualRate {
    /// # Errors
    /// A negative rate, or one above 1000 %.
    pub fn from_percent(percent: Decimal) -> Result<Self> {
        if percent.is_sign_negative() && !percent.is_zero() {
            return Err(EngineError::out_of_range(
                "annual_rate_percent",
                "the rate cannot be negative",
            ));
        }
        if percent > MAX_ANNUAL_RATE_PERCENT {
            return Err(EngineError::out_of_range(
                "annual_rate_percent",
                "the rate cannot exceed 1000 %",
            ));
        }
        Ok(Self {
            percent: percent.abs(),
        })
    }

    /// The rate in percent, as given.
    pub fn percent(&self) -> Decimal {
        self.percent
    }

    /// The rate as a fraction (6.5 % → 0.065).
    pub fn fraction(&self) -> Decimal {
        self.percent / Decimal::ONE_HUNDRED
    }

    /// The periodic rate for payments at `payment`, interest compounding at `compounding`.
    ///
    /// Equal frequencies: i = j/p. Otherwise the equivalent rate
    /// i = (1 + j/m)^(m/p) − 1 (common practice, no source), computed as
    /// ((1 + j/m)^(1/v))^u with m/p = u/v in lowest terms, the root by Newton's method.
    ///
    /// # Errors
    /// An overflow of the compounding factor (very high rates compounded daily).
    pub fn periodic_rate(&self, payment: Frequency, compounding: Frequency) -> Result<Decimal> {
        let j = self.fraction();
        let p = payment.per_year();
        let m = compounding.per_year();
        if p == m {
            return j
                .checked_div(Decimal::from(p))
                .or_overflow("the periodic rate");
        }
        let base = Decimal::ONE
            + j.checked_div(Decimal::from(m))
                .or_overflow("the compounding rate")?;
        let g = gcd(m, p);
        let (u, v) = (m / g, p / g);
        let root = nth_root(base, v)?;
        let factor = root
            .checked_powi(i64::from(u))
            .or_overflow("the compounding factor")?;
        Ok(factor - Decimal::ONE)
    }
}

impl AnnualRate {
    /// The periodic rate as an exact ratio of integers (numerator, denominator),
    /// in lowest terms, when it is one: payment and compounding at the same
    /// frequency, i = j/p. `None` for an equivalent rate (a root) or a ratio
    /// beyond 128 bits.
    ///
    /// The decimal of [`Self::periodic_rate`] is that ratio rounded to 28
    /// digits; a balance times the rounded decimal can fall a hair below or
    /// above an exact half minor unit (249,960 at 3.25 % a year, monthly:
    /// 676.975 exactly), so the posting multiplies by the ratio instead.
    pub fn periodic_ratio(
        &self,
        payment: Frequency,
        compounding: Frequency,
    ) -> Option<(i128, i128)> {
        if payment.per_year() != compounding.per_year() {
            return None;
        }
        let numerator = self.percent.mantissa();
        let denominator = 10i128
            .checked_pow(self.percent.scale())?
            .checked_mul(100 * i128::from(payment.per_year()))?;
        let g = gcd_wide(numerator.unsigned_abs(), denominator.unsigned_abs());
        if g <= 1 {
            return Some((numerator, denominator));
        }
        let g = g as i128;
        Some((numerator / g, denominator / g))
    }
}

fn gcd_wide(a: u128, b: u128) -> u128 {
    if b == 0 {
        a
    } else {
        gcd_wide(b, a % b)
    }
}

fn gcd(a: u32, b: u32) -> u32 {
    if b == 0 {
        a
    } else {
        gcd(b, a % b)
    }
}

/// The positive n-th root of c ≥ 1 by Newton's method, to the last digit of 28.
pub fn nth_root(c: Decimal, n: u32) -> Result<Decimal> {
    if n == 1 || c == Decimal::ONE {
        return Ok(c);
    }
    let nd = Decimal::from(n);
    // Start above the root (Bernoulli: (1 + (c−1)/n)^n ≥ c), so Newton's steps fall monotonically.
    // Not the bracketed search of `search`: no bracket is needed from above, and the
    // loop stops at the first step that no longer falls, where a bracket's tolerance
    // would stop elsewhere and change the last digits.
    let mut y = Decimal::ONE + (c - Decimal::ONE).checked_div(nd).or_overflow("a root")?;
    for _ in 0..200 {
        let y_n1 = y.checked_powi(i64::from(n - 1)).or_overflow("a root")?;
        let f = y_n1.checked_mul(y).or_overflow("a root")? - c;
        let step = f
            .checked_div(nd.checked_mul(y_n1).or_overflow("a root")?)
            .or_overflow("a root")?;
        if step <= Decimal::ZERO {
            break;
        }
        y -= step;
    }
    Ok(y)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn the_periodic_ratio_is_the_nominal_rate_over_its_periods_in_lowest_terms() {
        // 3.25 % / 12 = 0.0325 / 12 = 13/4800 (arithmetic by hand).
        let r = AnnualRate::from_percent(d("3.25")).unwrap();
        assert_eq!(
            r.periodic_ratio(Frequency::Monthly, Frequency::Monthly),
            Some((13, 4800))
        );
        // The decimal periodic rate is that ratio rounded to 28 digits.
        let i = r
            .periodic_rate(Frequency::Monthly, Frequency::Monthly)
            .unwrap();
        assert_eq!(i, Decimal::from(13) / Decimal::from(4800));
        assert_ne!(i * Decimal::from(4800), Decimal::from(13));
        // Trailing zeros of the rate as given do not change the ratio.
        let r = AnnualRate::from_percent(d("6.500")).unwrap();
        assert_eq!(
            r.periodic_ratio(Frequency::Biweekly, Frequency::Biweekly),
            Some((1, 400))
        );
        assert_eq!(
            AnnualRate::from_percent(d("0"))
                .unwrap()
                .periodic_ratio(Frequency::Weekly, Frequency::Weekly),
            Some((0, 1))
        );
        // An equivalent rate is a root: no ratio.
        assert_eq!(r.periodic_ratio(Frequency::Monthly, Frequency::Daily), None);
    }

    #[test]
    fn periodic_rate_divides_when_frequencies_agree() {
        let r = AnnualRate::from_percent(d("6")).unwrap();
        assert_eq!(
            r.periodic_rate(Frequency::Monthly, Frequency::Monthly)
                .unwrap(),
            d("0.005")
        );
    }

    #[test]
    fn monthly_payments_on_a_semiannually_compounded_rate() {
        // (1 + 0.06/2)^(1/6) − 1; reference value from Python's decimal module at 50 digits:
        // 0.0049386220311969784108341660882852295898266572639
        let r = AnnualRate::from_percent(d("6")).unwrap();
        let i = r
            .periodic_rate(Frequency::Monthly, Frequency::Semiannual)
            .unwrap();
        assert!(
            (i - d("0.0049386220311969784108341661")).abs() < d("1e-26"),
            "{i}"
        );
        // Raising back reproduces the semiannual factor.
        let back = (Decimal::ONE + i).powi(6);
        assert!((back - d("1.03")).abs() < d("1e-25"), "{back}");
    }

    #[test]
    fn daily_compounding_for_monthly_payments_round_trips() {
        let r = AnnualRate::from_percent(d("4.1")).unwrap();
        let i = r
            .periodic_rate(Frequency::Monthly, Frequency::Daily)
            .unwrap();
        let back = (Decimal::ONE + i).powi(12);
        let direct = (Decimal::ONE + d("0.041") / d("365")).powi(365);
        assert!((back - direct).abs() < d("1e-24"), "{back} vs {direct}");
    }

    #[test]
    fn rates_outside_zero_to_a_thousand_percent_are_refused() {
        assert!(AnnualRate::from_percent(d("-0.01")).is_err());
        assert!(AnnualRate::from_percent(d("1000.0001")).is_err());
        assert!(AnnualRate::from_percent(d("1000")).is_ok());
        assert_eq!(AnnualRate::from_percent(d("-0")).unwrap().percent(), d("0"));
    }
}
