//! The unit-period of Appendix J: what it is ((b)(3)), which one a transaction
//! has ((b)(4): the most frequent common period, or the rules after it), and how
//! many unit-periods and which fraction of one lie between two dates ((b)(5)).

use jiff::civil::Date;
use rust_decimal::Decimal;

use super::months::{dates_out_of_order, days_between, is_month_end, month_anchor, months_back};
use crate::engine::calendar::add_months;
use crate::engine::error::{EngineError, Result};

/// The unit-period of Appendix J (b)(3)–(b)(5): a standard interval (a day, a
/// week, a semimonth, a month, or a multiple of a week or a month up to a year),
/// or, for a single advance and single payment, a term of so many days.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum UnitPeriod {
    /// A day: 365 a year.
    Day,
    /// n days: the term of a single-advance, single-payment transaction that is
    /// not a whole number of months ((b)(5)(vii)), or a common period of n days
    /// that is not a multiple of a week (counted by days, 365/n per year: the
    /// reading of (b)(5)(iv) extended to it).
    Days(u32),
    /// A week: 52 a year.
    Week,
    /// n weeks: 52/n a year.
    Weeks(u32),
    /// Half a month: 24 a year.
    Semimonth,
    /// A month: 12 a year.
    Month,
    /// n months: 12/n a year.
    Months(u32),
    /// The same as `Months(3)`.
    Quarter,
    /// A year.
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
    pub(super) fn check(self) -> Result<()> {
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
pub(super) fn place_in_unit_periods(
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::apr::testing::d;
    use jiff::civil::date;

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
        // 30 remaining days in a month unit are a whole unit-period: (1 + 1·i) = (1 + i).
        assert_eq!(
            unit_periods_between(date(2026, 1, 1), date(2026, 3, 31), UnitPeriod::Month).unwrap(),
            (3, d("0"))
        );
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
    fn a_midpoint_between_standard_intervals_takes_the_lower() {
        // 10.5 days is midway between a week and two weeks: the lower.
        assert_eq!(nearest_standard_interval(21, 2), UnitPeriod::Week);
        assert_eq!(nearest_standard_interval(61, 2), UnitPeriod::Month);
        assert_eq!(nearest_standard_interval(2, 2), UnitPeriod::Day);
    }
}
