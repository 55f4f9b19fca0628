//! The EU annual percentage rate of charge (Directive 2008/48/EC Annex I): the
//! times of the flows counted in years on a time basis (remark (c)), the
//! equation Σ C_k (1 + X)^(−t_k) = Σ D_l (1 + X)^(−s_l) solved for X, and X
//! rounded to one decimal (remark (d)).

use jiff::civil::Date;
use jiff::Span;
use rust_decimal::prelude::ToPrimitive;
use rust_decimal::{Decimal, MathematicalOps, RoundingStrategy};

use super::flows::{check_flows, DatedFlow};
use super::months::{dates_out_of_order, days_between, month_anchor, months_back};
use super::solver::{estimate_rate, solve_falling};
use crate::engine::calendar::add_months;
use crate::engine::error::{EngineError, OrOverflow, Result};

/// The longest time from the first drawdown to a flow in the APRC, in years.
pub const MAX_APRC_YEARS: u32 = 100;

/// A drawdown or a repayment (or charge) at a time in years from the first drawdown.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct YearFlow {
    /// The amount drawn down or repaid.
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
    /// The APRC found.
    pub aprc: AprcResult,
    /// The time basis the years were counted on.
    pub time_basis: AprcTimeBasis,
    /// Each drawdown, in the order given, at its time in years.
    pub drawdowns: Vec<YearFlow>,
    /// Each repayment, in the order given, at its time in years.
    pub repayments: Vec<YearFlow>,
}

/// Solves Σ C_k (1 + X)^(−t_k) = Σ D_l (1 + X)^(−s_l) for X ≥ 0 (Directive
/// 2008/48/EC Annex I).
///
/// Powers: (1 + X)^(−t) is v^t by [`crate::engine::power::pow`] when t is whole (v = 1/(1 + X)),
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

/// Checks a list of flows in years and returns the total of their amounts.
fn check_year_flows(flows: &[YearFlow], field: &'static str) -> Result<Decimal> {
    check_flows(
        flows,
        field,
        |flow| flow.amount,
        |flow| {
            if flow.years.is_sign_negative() && !flow.years.is_zero() {
                return Err(EngineError::out_of_range(
                    field,
                    "a flow falls before the first drawdown",
                ));
            }
            if flow.years > Decimal::from(MAX_APRC_YEARS) {
                return Err(EngineError::out_of_range(
                    field,
                    format!(
                        "a flow falls more than {MAX_APRC_YEARS} years after the first drawdown"
                    ),
                ));
            }
            Ok(flow.amount)
        },
    )
}

/// (1 + X)^(−t) from v = 1/(1 + X) and ln(1 + X).
fn discount(t: Decimal, v: Decimal, log: Decimal) -> Result<Decimal> {
    let what = "a discount factor";
    if t.fract().is_zero() {
        if let Some(whole) = t.to_u32() {
            return crate::engine::power::pow(v, whole).or_overflow(what);
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
    use crate::engine::apr::testing::{close, d, flow, series};
    use crate::engine::error::ErrorKind;
    use crate::engine::rate::{nth_root, Frequency};
    use jiff::civil::date;

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
