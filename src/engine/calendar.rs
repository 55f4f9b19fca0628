//! Due dates and day counts: the one home of the rule that dates a schedule's
//! payments (loans, APR payment series, savings periods) and of the day counts
//! that measure an odd first period.

use jiff::civil::Date;
use jiff::Span;

use super::error::{EngineError, Result};
use super::rate::Frequency;

/// How the days of an odd period are counted and divided.
///
/// The three 30/360 variants differ only at month ends; each is named for the
/// rule it follows, and `thirty_360` is read as [`DayCount::Thirty360BondBasis`],
/// the meaning it has always had here.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DayCount {
    /// Actual days over 365 (common practice, no source).
    #[default]
    Actual365,
    /// Actual days over 360 (common practice, no source).
    Actual360,
    /// 30/360 bond basis, per the ISDA 2006 Definitions, section 4.16(f) ("30/360",
    /// "Bond Basis"; from memory): D1 = 31 becomes 30; D2 = 31 becomes 30 when D1
    /// (after that change) is 30. The same rule as QuantLib's `Thirty360.BondBasis`.
    Thirty360BondBasis,
    /// 30/360 US, the rule of the SIA's Standard Securities Calculation Methods
    /// (from memory; QuantLib's `Thirty360.USA` follows it): when D1 is the last day
    /// of February, D1 becomes 30, and D2 too when it is also the last day of
    /// February; then D2 = 31 becomes 30 when D1 is 30 or 31; then D1 = 31 becomes 30.
    Thirty360Us,
    /// 30E/360, the European rule, per the ISDA 2006 Definitions, section 4.16(g)
    /// ("30E/360", "Eurobond Basis"; from memory): a 31st is the 30th at either end.
    /// QuantLib's `Thirty360.European`.
    ThirtyE360,
}

/// Every day count with its name in requests, for lists of choices.
pub const DAY_COUNTS: [DayCount; 5] = [
    DayCount::Actual365,
    DayCount::Actual360,
    DayCount::Thirty360BondBasis,
    DayCount::Thirty360Us,
    DayCount::ThirtyE360,
];

impl DayCount {
    /// The name in requests and answers.
    pub fn name(self) -> &'static str {
        match self {
            DayCount::Actual365 => "actual_365",
            DayCount::Actual360 => "actual_360",
            DayCount::Thirty360BondBasis => "thirty_360_bond_basis",
            DayCount::Thirty360Us => "thirty_360_us",
            DayCount::ThirtyE360 => "thirty_e_360",
        }
    }

    /// The convention in words, for notes and pages.
    pub fn describe(self) -> &'static str {
        match self {
            DayCount::Actual365 => "actual days / 365",
            DayCount::Actual360 => "actual days / 360",
            DayCount::Thirty360BondBasis => "30/360 bond basis (ISDA 4.16(f))",
            DayCount::Thirty360Us => "30/360 US (SIA, with the February month-end rule)",
            DayCount::ThirtyE360 => "30E/360 European (ISDA 4.16(g))",
        }
    }

    /// A day count from its name; `thirty_360` is the bond basis.
    pub fn parse(s: &str) -> Option<Self> {
        if s == "thirty_360" {
            return Some(DayCount::Thirty360BondBasis);
        }
        DAY_COUNTS.into_iter().find(|d| d.name() == s)
    }

    /// Days in the year the count divides by.
    pub fn basis(self) -> i64 {
        match self {
            DayCount::Actual365 => 365,
            _ => 360,
        }
    }

    /// Days from `start` to `end` (negative when `end` is earlier).
    pub fn days(self, start: Date, end: Date) -> i64 {
        if matches!(self, DayCount::Actual365 | DayCount::Actual360) {
            return actual_days(start, end);
        }
        if end < start {
            return -self.days(end, start);
        }
        let (y1, m1, mut d1) = (
            i64::from(start.year()),
            i64::from(start.month()),
            i64::from(start.day()),
        );
        let (y2, m2, mut d2) = (
            i64::from(end.year()),
            i64::from(end.month()),
            i64::from(end.day()),
        );
        let last_of_february = |d: Date| d.month() == 2 && d.day() == d.days_in_month();
        match self {
            DayCount::Thirty360BondBasis => {
                if d1 == 31 {
                    d1 = 30;
                }
                if d2 == 31 && d1 == 30 {
                    d2 = 30;
                }
            }
            DayCount::Thirty360Us => {
                if last_of_february(start) {
                    if last_of_february(end) {
                        d2 = 30;
                    }
                    d1 = 30;
                }
                if d2 == 31 && d1 >= 30 {
                    d2 = 30;
                }
                if d1 == 31 {
                    d1 = 30;
                }
            }
            _ => {
                d1 = d1.min(30);
                d2 = d2.min(30);
            }
        }
        360 * (y2 - y1) + 30 * (m2 - m1) + (d2 - d1)
    }
}

/// Actual days between two dates.
pub fn actual_days(start: Date, end: Date) -> i64 {
    i64::from((end - start).get_days())
}

fn calendar_error(field: &'static str) -> EngineError {
    EngineError::out_of_range(field, "a date leaves the calendar (years −9999 to 9999)")
}

/// The day `date` + `months` months on day `anchor` of that month, clamped to
/// the month's last day (31 January + 1 month on anchor 31 is 28 February; + 2
/// months is 31 March). The months are counted by jiff's calendar arithmetic
/// from the first of `date`'s month, so the clamp never carries from one month
/// into the next.
///
/// # Errors
/// A date outside the calendar, naming `field`.
pub(crate) fn add_months(date: Date, months: i64, anchor: i8, field: &'static str) -> Result<Date> {
    let span = Span::new()
        .try_months(months)
        .map_err(|_| calendar_error(field))?;
    let month = date
        .first_of_month()
        .checked_add(span)
        .map_err(|_| calendar_error(field))?;
    month
        .with()
        .day(anchor.clamp(1, month.days_in_month()))
        .build()
        .map_err(|_| calendar_error(field))
}

/// The due date `k` periods from `first` (k may be negative: k = −1 is the regular
/// due date before the first): the one rule that dates every schedule.
///
/// - monthly, quarterly, semiannual, annual: calendar months (1, 3, 6 or 12 apart)
///   on `first`'s day of the month, clamped to shorter months (Jan 31 → Feb 28 →
///   Mar 31);
/// - semimonthly: two fixed days a month, d and d + 15 when `first` falls on day
///   d ≤ 15, else d − 15 and d, each clamped to the month's end (a 15th/30th loan
///   pays on 15 and 28 February); the half-months alternate between them;
/// - biweekly, weekly (and daily): whole days.
///
/// # Errors
/// A date outside the calendar (years −9999 to 9999), naming `field`.
///
/// # Example
/// ```
/// use residue::engine::calendar::due_date;
/// use residue::engine::rate::Frequency;
/// let first = "2027-03-05".parse().unwrap();
/// // A 5th/20th semimonthly schedule: the due date before 5 March is 20 February.
/// let before = due_date(first, Frequency::Semimonthly, -1, "first_payment_date").unwrap();
/// assert_eq!(before.to_string(), "2027-02-20");
/// let third = due_date(first, Frequency::Semimonthly, 2, "first_payment_date").unwrap();
/// assert_eq!(third.to_string(), "2027-04-05");
/// ```
pub fn due_date(first: Date, frequency: Frequency, k: i64, field: &'static str) -> Result<Date> {
    let by_days = |days: i64| -> Result<Date> {
        let span = Span::new()
            .try_days(days)
            .map_err(|_| calendar_error(field))?;
        first.checked_add(span).map_err(|_| calendar_error(field))
    };
    match frequency {
        Frequency::Monthly => add_months(first, k, first.day(), field),
        Frequency::Quarterly => add_months(first, 3 * k, first.day(), field),
        Frequency::Semiannual => add_months(first, 6 * k, first.day(), field),
        Frequency::Annual => add_months(first, 12 * k, first.day(), field),
        Frequency::Weekly => by_days(7 * k),
        Frequency::Biweekly => by_days(14 * k),
        Frequency::Daily => by_days(k),
        Frequency::Semimonthly => {
            let d = first.day();
            let (low, high, first_half) = if d <= 15 {
                (d, d + 15, 0)
            } else {
                (d - 15, d, 1)
            };
            let half = first_half + k;
            let day = if half.rem_euclid(2) == 0 { low } else { high };
            add_months(first, half.div_euclid(2), day, field)
        }
    }
}

/// The due dates of `count` payments from `first` at `frequency` ([`due_date`]).
///
/// # Errors
/// A date past the calendar's end, naming `first_payment_date`.
pub fn due_dates(first: Date, count: u32, frequency: Frequency) -> Result<Vec<Date>> {
    dates_named(first, count, frequency, "first_payment_date")
}

/// [`due_dates`], errors naming `field`.
///
/// # Errors
/// A date past the calendar's end.
pub(crate) fn dates_named(
    first: Date,
    count: u32,
    frequency: Frequency,
    field: &'static str,
) -> Result<Vec<Date>> {
    (0..i64::from(count))
        .map(|k| due_date(first, frequency, k, field))
        .collect()
}

/// The start of the regular period that ends at `first`: the due date one period
/// before it by the rule that dates the rows ([`due_date`] at k = −1), so that a
/// semimonthly 5th/20th schedule's period before 5 March starts on 20 February.
///
/// # Errors
/// A date before the calendar's start.
pub fn period_before(first: Date, frequency: Frequency) -> Result<Date> {
    due_date(first, frequency, -1, "first_payment_date").map_err(|_| {
        EngineError::out_of_range("first_payment_date", "the date is outside the calendar")
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use jiff::civil::date;

    #[test]
    fn thirty_360_follows_the_isda_rule() {
        // ISDA 2006 Definitions 4.16(f) (from memory), worked by hand.
        let c = DayCount::Thirty360BondBasis;
        assert_eq!(DayCount::parse("thirty_360"), Some(c));
        assert_eq!(c.days(date(2027, 1, 31), date(2027, 3, 1)), 31); // D1 31→30: 30 + 1
        assert_eq!(c.days(date(2027, 1, 30), date(2027, 3, 31)), 60); // D2 31→30 as D1 = 30
        assert_eq!(c.days(date(2027, 1, 15), date(2027, 3, 31)), 76); // D2 stays 31: 60 + 16
        assert_eq!(c.days(date(2027, 2, 28), date(2027, 3, 28)), 30);
        assert_eq!(c.days(date(2027, 3, 10), date(2027, 3, 1)), -9);
    }

    #[test]
    fn the_three_thirty_360_rules_differ_only_at_month_ends() {
        // Each day count by hand from its rule (ISDA 2006 4.16(f) and (g), SIA; from
        // memory); the Python cross-check holds them to QuantLib's Thirty360 too.
        let (bond, us, euro) = (
            DayCount::Thirty360BondBasis,
            DayCount::Thirty360Us,
            DayCount::ThirtyE360,
        );
        // Feb 28 2027 (February's last day) to Mar 30: bond 30 + 2, US 30 + 0.
        assert_eq!(bond.days(date(2027, 2, 28), date(2027, 3, 30)), 32);
        assert_eq!(us.days(date(2027, 2, 28), date(2027, 3, 30)), 30);
        assert_eq!(euro.days(date(2027, 2, 28), date(2027, 3, 30)), 32);
        // Feb 28 2027 to Feb 29 2028, both February's last days: US counts 360.
        assert_eq!(us.days(date(2027, 2, 28), date(2028, 2, 29)), 360);
        assert_eq!(bond.days(date(2027, 2, 28), date(2028, 2, 29)), 361);
        // Jan 15 to Mar 31: the 31st stays for bond and US (D1 is 15), not for 30E.
        assert_eq!(bond.days(date(2027, 1, 15), date(2027, 3, 31)), 76);
        assert_eq!(us.days(date(2027, 1, 15), date(2027, 3, 31)), 76);
        assert_eq!(euro.days(date(2027, 1, 15), date(2027, 3, 31)), 75);
        // Feb 28 2028 is not February's last day in a leap year: no month-end rule.
        assert_eq!(us.days(date(2028, 2, 28), date(2028, 3, 30)), 32);
        for c in [bond, us, euro] {
            assert_eq!(DayCount::parse(c.name()), Some(c));
            assert_eq!(
                c.days(date(2027, 3, 30), date(2027, 2, 28)),
                -c.days(date(2027, 2, 28), date(2027, 3, 30))
            );
        }
    }

    #[test]
    fn the_period_before_a_semimonthly_first_payment_is_the_schedules_own_previous_due_date() {
        // The rows' rule at k = −1, checked by hand against a calendar; the Python
        // cross-check compares with QuantLib's Schedule.
        let before = |y, m, d| period_before(date(y, m, d), Frequency::Semimonthly).unwrap();
        assert_eq!(before(2027, 3, 5), date(2027, 2, 20)); // 5th/20th: the 20th before
        assert_eq!(before(2027, 4, 5), date(2027, 3, 20));
        assert_eq!(before(2027, 3, 20), date(2027, 3, 5));
        assert_eq!(before(2027, 2, 15), date(2027, 1, 30)); // 15th/30th
        assert_eq!(before(2027, 3, 15), date(2027, 2, 28)); // the 30th clamped
        assert_eq!(before(2028, 3, 15), date(2028, 2, 29));
        assert_eq!(before(2027, 3, 1), date(2027, 2, 16)); // 1st/16th
        assert_eq!(before(2027, 3, 31), date(2027, 3, 16)); // 16th/31st
        assert_eq!(before(2027, 4, 16), date(2027, 4, 1)); // 1st/16th
        assert_eq!(before(2027, 3, 1), date(2027, 2, 16));
        assert_eq!(before(2027, 1, 5), date(2026, 12, 20)); // across the year
                                                            // The period before is the rows' own: where it is not clamped to a month's
                                                            // end, a schedule dated from it has the first payment as its second row.
        for first in [
            date(2027, 3, 5),
            date(2027, 2, 15),
            date(2027, 3, 20),
            date(2027, 4, 16),
        ] {
            let start = period_before(first, Frequency::Semimonthly).unwrap();
            let after = due_date(start, Frequency::Semimonthly, 1, "first_payment_date").unwrap();
            assert_eq!(after, first, "{start} then {first}");
        }
    }

    #[test]
    fn actual_days_count_leap_years() {
        assert_eq!(
            DayCount::Actual365.days(date(2028, 2, 1), date(2028, 3, 1)),
            29
        );
        assert_eq!(
            DayCount::Actual360.days(date(2027, 2, 1), date(2027, 3, 1)),
            28
        );
    }

    #[test]
    fn a_loan_paying_on_the_31st_pays_on_the_last_day_of_shorter_months() {
        let d = due_dates(date(2027, 1, 31), 4, Frequency::Monthly).unwrap();
        assert_eq!(
            d,
            vec![
                date(2027, 1, 31),
                date(2027, 2, 28),
                date(2027, 3, 31),
                date(2027, 4, 30)
            ]
        );
    }

    #[test]
    fn monthly_due_dates_agree_with_month_index_arithmetic() {
        // The engine counts months with jiff (from the first of the month, then
        // clamps). The reference here is computed apart: whole months as an index
        // year × 12 + month − 1, back to a year and month by Euclidean division,
        // and the day clamped to the month's length; and jiff's own
        // Date + Span::months(k) from the first date, which clamps the same way.
        for first in [
            date(2027, 1, 31),
            date(2027, 1, 30),
            date(2027, 1, 29),
            date(2028, 2, 29),
            date(2027, 8, 31),
            date(2099, 12, 31),
        ] {
            for (frequency, months) in [
                (Frequency::Monthly, 1),
                (Frequency::Quarterly, 3),
                (Frequency::Semiannual, 6),
                (Frequency::Annual, 12),
            ] {
                let ours = due_dates(first, 120, frequency).unwrap();
                for (k, d) in ours.iter().enumerate() {
                    let shift = months * k as i64;
                    let by_jiff = first.checked_add(Span::new().months(shift)).unwrap();
                    assert_eq!(*d, by_jiff, "{first} + {k} × {months} months");
                    let index = i64::from(first.year()) * 12 + i64::from(first.month()) - 1 + shift;
                    let (year, month) = (index.div_euclid(12), index.rem_euclid(12) + 1);
                    let length = date(year as i16, month as i8, 1).days_in_month();
                    let by_index = date(year as i16, month as i8, first.day().min(length));
                    assert_eq!(*d, by_index, "{first} + {k} × {months} months");
                }
            }
            let weekly = due_dates(first, 300, Frequency::Biweekly).unwrap();
            for (k, d) in weekly.iter().enumerate() {
                assert_eq!(
                    *d,
                    first.checked_add(Span::new().days(14 * k as i64)).unwrap()
                );
            }
        }
    }

    #[test]
    fn one_period_before_a_first_payment() {
        assert_eq!(
            period_before(date(2027, 3, 1), Frequency::Monthly).unwrap(),
            date(2027, 2, 1)
        );
        assert_eq!(
            period_before(date(2027, 3, 31), Frequency::Monthly).unwrap(),
            date(2027, 2, 28)
        );
        assert_eq!(
            period_before(date(2027, 3, 15), Frequency::Biweekly).unwrap(),
            date(2027, 3, 1)
        );
    }
}
