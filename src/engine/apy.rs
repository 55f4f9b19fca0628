//! Annual percentage yield: Regulation DD (12 CFR 1030) Appendix A.
//!
//! - Part I.A, the general formula: APY = 100 [(1 + Interest/Principal)^(365/Days in term) − 1];
//!   for a term of 365 days, exactly 100 (Interest/Principal).
//! - Part II.A, the APY earned for a statement period:
//!   100 [(1 + Interest earned/Balance)^(365/Days in period) − 1], the balance being
//!   the average daily balance.
//! - The APY of a nominal rate j compounded m times in a 365-day year,
//!   100 [(1 + j/m)^m − 1]: the general formula applied to a year's interest.
//!
//! §1030.3(f): the APY and the APY earned are rounded to the nearest 0.01
//! percentage point (halves up here: the regulation names no rule for halves) and
//! are accurate within 0.05 point; the full figure is kept alongside.
//!
//! Powers: an exponent 365/days that is whole (days of 1, 5, 73 or 365) is raised
//! by `checked_powi`; otherwise (1 + r)^(365/days) = exp(ln(1 + r) × 365/days) by
//! rust_decimal's `ln` and `exp` (Taylor series in wide arithmetic). Checked against
//! Python's `decimal` at 40 digits: 1.03037^(365/182) agrees to 1e-27, so the
//! unrounded APY is good to about 1e-24 percent, far below the 0.01 published.

use rust_decimal::{Decimal, MathematicalOps, RoundingStrategy};

use super::error::{EngineError, OrOverflow, Result};
use super::rate::AnnualRate;

/// The longest term or statement period accepted, in days (a century).
pub const MAX_DAYS: u32 = 36_525;

/// The most compounding periods in a year accepted.
pub const MAX_COMPOUNDING_PER_YEAR: u32 = 366;

/// An annual percentage yield.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ApyResult {
    /// In percent, unrounded.
    pub apy_percent: Decimal,
    /// In percent, rounded to two decimals, halves up (§1030.3(f)).
    pub apy_percent_rounded: Decimal,
}

impl ApyResult {
    fn new(apy_percent: Decimal) -> Self {
        Self {
            apy_percent,
            apy_percent_rounded: apy_percent
                .round_dp_with_strategy(2, RoundingStrategy::MidpointAwayFromZero),
        }
    }
}

/// The APY of `interest` earned on `principal` over a term of `days` days
/// (12 CFR 1030 Appendix A, Part I.A).
///
/// # Errors
/// A principal of zero or less, negative interest, days outside 1 to [`MAX_DAYS`],
/// or an overflow (a short term with a large yield).
pub fn apy_general(principal: Decimal, interest: Decimal, days: u32) -> Result<ApyResult> {
    let ratio = interest_ratio(interest, principal, "interest", "principal")?;
    annualize(ratio, days, "days")
}

/// The APY earned in a statement period: `interest_earned` on an
/// `average_daily_balance` over `days_in_period` days (12 CFR 1030 Appendix A,
/// Part II.A).
///
/// # Errors
/// A balance of zero or less, negative interest, days outside 1 to [`MAX_DAYS`],
/// or an overflow.
pub fn apy_earned(
    interest_earned: Decimal,
    average_daily_balance: Decimal,
    days_in_period: u32,
) -> Result<ApyResult> {
    let ratio = interest_ratio(
        interest_earned,
        average_daily_balance,
        "interest_earned",
        "average_daily_balance",
    )?;
    annualize(ratio, days_in_period, "days_in_period")
}

/// The APY of a nominal annual rate compounded `compounding_per_year` times in a
/// 365-day year: 100 [(1 + j/m)^m − 1] (m = 365 for daily compounding; m = 1 gives
/// the rate itself).
///
/// # Errors
/// A rate outside 0 % to 1000 %, compounding outside 1 to
/// [`MAX_COMPOUNDING_PER_YEAR`] times a year, or an overflow.
///
/// # Example
/// ```
/// // 5 % compounded daily in a 365-day year: 100 [(1 + 0.05/365)^365 − 1] = 5.1267…,
/// // disclosed as 5.13 % (Regulation DD Appendix A's formula; the value by hand).
/// use residue::engine::apy::apy_of_rate;
/// let r = apy_of_rate("5".parse().unwrap(), 365).unwrap();
/// assert_eq!(r.apy_percent_rounded.to_string(), "5.13");
/// assert!(r.apy_percent.to_string().starts_with("5.1267496"));
/// ```
pub fn apy_of_rate(annual_rate_percent: Decimal, compounding_per_year: u32) -> Result<ApyResult> {
    let rate = AnnualRate::from_percent(annual_rate_percent)?;
    if compounding_per_year == 0 || compounding_per_year > MAX_COMPOUNDING_PER_YEAR {
        return Err(EngineError::out_of_range(
            "compounding_per_year",
            format!("interest must compound 1 to {MAX_COMPOUNDING_PER_YEAR} times a year"),
        ));
    }
    let what = "the compounding factor";
    let periodic = rate
        .fraction()
        .checked_div(Decimal::from(compounding_per_year))
        .or_overflow(what)?;
    let factor = (Decimal::ONE + periodic)
        .checked_powi(i64::from(compounding_per_year))
        .or_overflow(what)?;
    let apy = (factor - Decimal::ONE)
        .checked_mul(Decimal::ONE_HUNDRED)
        .or_overflow("the APY")?;
    Ok(ApyResult::new(apy))
}

/// A balance (principal or average daily balance) alone: more than zero.
///
/// # Errors
/// Zero or less, naming `field`.
pub fn check_balance(base: Decimal, field: &'static str) -> Result<()> {
    if base <= Decimal::ZERO {
        return Err(EngineError::out_of_range(
            field,
            "the balance must be more than zero",
        ));
    }
    Ok(())
}

/// Interest alone: not negative.
///
/// # Errors
/// Negative, naming `field`.
pub fn check_interest(interest: Decimal, field: &'static str) -> Result<()> {
    if interest.is_sign_negative() && !interest.is_zero() {
        return Err(EngineError::out_of_range(
            field,
            "the interest cannot be negative",
        ));
    }
    Ok(())
}

/// A number of days alone: 1 to [`MAX_DAYS`].
///
/// # Errors
/// Out of range, naming `field`.
pub fn check_days(days: u32, field: &'static str) -> Result<()> {
    if days == 0 || days > MAX_DAYS {
        return Err(EngineError::out_of_range(
            field,
            format!("the number of days must be 1 to {MAX_DAYS}"),
        ));
    }
    Ok(())
}

/// interest / base, after checking both.
fn interest_ratio(
    interest: Decimal,
    base: Decimal,
    interest_field: &'static str,
    base_field: &'static str,
) -> Result<Decimal> {
    check_balance(base, base_field)?;
    check_interest(interest, interest_field)?;
    interest
        .checked_div(base)
        .or_overflow("the interest per unit of balance")
}

/// 100 [(1 + ratio)^(365/days) − 1], exactly 100·ratio when days = 365.
fn annualize(ratio: Decimal, days: u32, days_field: &'static str) -> Result<ApyResult> {
    check_days(days, days_field)?;
    let what = "the annualized yield";
    if days == 365 {
        // Appendix A, Part I.A: for a 365-day term, APY = 100 (Interest/Principal).
        let apy = ratio
            .checked_mul(Decimal::ONE_HUNDRED)
            .or_overflow("the APY")?;
        return Ok(ApyResult::new(apy));
    }
    let base = Decimal::ONE.checked_add(ratio).or_overflow(what)?;
    let factor = if 365 % days == 0 {
        base.checked_powi(i64::from(365 / days)).or_overflow(what)?
    } else {
        // exp(ln(1 + r) × 365 / days): multiplied before dividing, one rounding.
        let exponent = base
            .checked_ln()
            .and_then(|l| l.checked_mul(Decimal::from(365)))
            .and_then(|l| l.checked_div(Decimal::from(days)))
            .or_overflow(what)?;
        exponent.checked_exp().or_overflow(what)?
    };
    let apy = (factor - Decimal::ONE)
        .checked_mul(Decimal::ONE_HUNDRED)
        .or_overflow("the APY")?;
    Ok(ApyResult::new(apy))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::error::ErrorKind;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    fn close(x: Decimal, want: &str, tolerance: &str) {
        assert!(
            (x - d(want)).abs() < d(tolerance),
            "{x} is not within {tolerance} of {want}"
        );
    }

    #[test]
    fn a_365_day_year_is_the_interest_over_the_principal() {
        // 12 CFR 1030 Appendix A, Part I.A: $1,000 earning $61.68 in a 365-day year: 6.17 %.
        let r = apy_general(d("1000"), d("61.68"), 365).unwrap();
        assert_eq!(r.apy_percent, d("6.168"));
        assert_eq!(r.apy_percent_rounded, d("6.17"));
    }

    #[test]
    fn a_six_month_certificate() {
        // 12 CFR 1030 Appendix A, Part I.A: a $1,000 six-month CD earning $30.37 over
        // 182 days: 6.18 %. 100 [(1.03037)^(365/182) − 1] =
        // 6.1836871972666675559701474408 (Python decimal, 40 digits).
        let r = apy_general(d("1000"), d("30.37"), 182).unwrap();
        close(r.apy_percent, "6.1836871972666675559701474408", "1e-22");
        assert_eq!(r.apy_percent_rounded, d("6.18"));
    }

    #[test]
    fn apy_earned_in_a_statement_period() {
        // 12 CFR 1030 Appendix A, Part II.A: $5.25 earned on an average daily balance
        // of $1,000 over 30 days: 6.58 %. 100 [(1.00525)^(365/30) − 1] =
        // 6.5781052157490113000624154955 (Python decimal, 40 digits).
        let r = apy_earned(d("5.25"), d("1000"), 30).unwrap();
        close(r.apy_percent, "6.5781052157490113000624154955", "1e-22");
        assert_eq!(r.apy_percent_rounded, d("6.58"));
    }

    #[test]
    fn whole_exponents_use_integer_powers() {
        // 73 days: (1 + r)^5 exactly. 1.01^5 = 1.0510100501.
        let r = apy_general(d("100"), d("1"), 73).unwrap();
        assert_eq!(r.apy_percent, d("5.10100501"));
        // The real-power path agrees with it at a neighbouring term within its precision:
        // (1.01)^(365/73) through exp/ln.
        let via_exp = (d("1.01").ln() * d("5")).exp();
        close(
            (via_exp - Decimal::ONE) * Decimal::ONE_HUNDRED,
            "5.10100501",
            "1e-24",
        );
    }

    #[test]
    fn apy_of_a_nominal_rate() {
        // 5 % compounded daily over a 365-day year: 100 [(1 + 0.05/365)^365 − 1]
        // = 5.1267496467462550454968149774; monthly: 5.1161897881733189804873890961
        // (Python decimal, 40 digits).
        let daily = apy_of_rate(d("5"), 365).unwrap();
        close(daily.apy_percent, "5.1267496467462550454968149774", "1e-22");
        assert_eq!(daily.apy_percent_rounded, d("5.13"));
        let monthly = apy_of_rate(d("5"), 12).unwrap();
        close(
            monthly.apy_percent,
            "5.1161897881733189804873890961",
            "1e-22",
        );
        assert_eq!(monthly.apy_percent_rounded, d("5.12"));
        assert_eq!(apy_of_rate(d("5"), 1).unwrap().apy_percent, d("5"));
        assert_eq!(apy_of_rate(d("0"), 365).unwrap().apy_percent, d("0"));
    }

    #[test]
    fn the_general_formula_recovers_the_rate_of_a_years_daily_interest() {
        // A year's interest at 5 % compounded daily, then Part I.A over 365 days: the same APY.
        let factor = (Decimal::ONE + d("0.05") / d("365")).powi(365);
        let interest = (factor - Decimal::ONE) * d("1000");
        let general = apy_general(d("1000"), interest, 365).unwrap();
        let of_rate = apy_of_rate(d("5"), 365).unwrap();
        close(general.apy_percent - of_rate.apy_percent, "0", "1e-22");
    }

    #[test]
    fn halves_round_up() {
        // 100 × 0.06125 = 6.125 → 6.13.
        let r = apy_general(d("1000"), d("61.25"), 365).unwrap();
        assert_eq!(r.apy_percent_rounded, d("6.13"));
    }

    #[test]
    fn refusals() {
        let e = apy_general(d("0"), d("1"), 365).unwrap_err();
        assert_eq!(
            (e.kind, e.field),
            (ErrorKind::OutOfRange, Some("principal"))
        );
        let e = apy_general(d("1000"), d("-1"), 365).unwrap_err();
        assert_eq!(e.field, Some("interest"));
        let e = apy_general(d("1000"), d("1"), 0).unwrap_err();
        assert_eq!(e.field, Some("days"));
        let e = apy_general(d("1000"), d("1"), MAX_DAYS + 1).unwrap_err();
        assert_eq!(e.field, Some("days"));
        let e = apy_earned(d("1"), d("-5"), 30).unwrap_err();
        assert_eq!(e.field, Some("average_daily_balance"));
        let e = apy_earned(d("-1"), d("5"), 30).unwrap_err();
        assert_eq!(e.field, Some("interest_earned"));
        let e = apy_earned(d("1"), d("5"), 0).unwrap_err();
        assert_eq!(e.field, Some("days_in_period"));
        let e = apy_of_rate(d("-1"), 12).unwrap_err();
        assert_eq!(e.field, Some("annual_rate_percent"));
        let e = apy_of_rate(d("5"), 0).unwrap_err();
        assert_eq!(e.field, Some("compounding_per_year"));
        // A huge yield over one day overflows rather than panicking.
        let e = apy_general(d("1"), d("1000000"), 1).unwrap_err();
        assert_eq!(e.kind, ErrorKind::Overflow);
    }
}
