//! Due dates and day counts.

use jiff::civil::Date;
use jiff::Span;

use super::apr::PaymentSeries;
use super::error::{EngineError, Result};
use super::rate::Frequency;

/// How the days of an odd period are counted and divided.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DayCount {
    /// Actual days over 365 (common practice, no source).
    #[default]
    Actual365,
    /// Actual days over 360 (common practice, no source).
    Actual360,
    /// 30/360: each month 30 days, the year 360, per the ISDA 2006 Definitions,
    /// section 4.16(f) ("30/360", "Bond Basis"; from memory): D1 = 31 becomes 30;
    /// D2 = 31 becomes 30 when D1 is 30 or 31.
    Thirty360,
}

impl DayCount {
    pub fn name(self) -> &'static str {
        match self {
            DayCount::Actual365 => "actual_365",
            DayCount::Actual360 => "actual_360",
            DayCount::Thirty360 => "thirty_360",
        }
    }

    pub fn parse(s: &str) -> Option<Self> {
        [
            DayCount::Actual365,
            DayCount::Actual360,
            DayCount::Thirty360,
        ]
        .into_iter()
        .find(|d| d.name() == s)
    }

    /// Days in the year the count divides by.
    pub fn basis(self) -> i64 {
        match self {
            DayCount::Actual365 => 365,
            DayCount::Actual360 | DayCount::Thirty360 => 360,
        }
    }

    /// Days from `start` to `end` (negative when `end` is earlier).
    pub fn days(self, start: Date, end: Date) -> i64 {
        match self {
            DayCount::Actual365 | DayCount::Actual360 => actual_days(start, end),
            DayCount::Thirty360 => {
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
                if d1 == 31 {
                    d1 = 30;
                }
                if d2 == 31 && d1 >= 30 {
                    d2 = 30;
                }
                360 * (y2 - y1) + 30 * (m2 - m1) + (d2 - d1)
            }
        }
    }
}

/// Actual days between two dates.
pub fn actual_days(start: Date, end: Date) -> i64 {
    i64::from((end - start).get_days())
}

/// The due dates of `count` payments from `first` at `frequency`: calendar months
/// with the day clamped to shorter months (a loan paying on the 31st pays on the
/// last day of shorter months); semimonthly on two fixed days 15 apart; biweekly
/// and weekly by days.
///
/// # Errors
/// A date past the calendar's end.
pub fn due_dates(first: Date, count: u32, frequency: Frequency) -> Result<Vec<Date>> {
    PaymentSeries {
        amount: rust_decimal::Decimal::ZERO,
        count,
        first_date: first,
        frequency,
    }
    .dates()
    .map_err(|e| EngineError {
        field: Some("first_payment_date"),
        ..e
    })
}

/// The start of the regular period that ends at `first` (one payment period before it).
///
/// # Errors
/// A date before the calendar's start.
pub fn period_before(first: Date, frequency: Frequency) -> Result<Date> {
    let span = match frequency {
        Frequency::Annual => Span::new().months(12),
        Frequency::Semiannual => Span::new().months(6),
        Frequency::Quarterly => Span::new().months(3),
        Frequency::Monthly => Span::new().months(1),
        Frequency::Semimonthly => Span::new().days(15),
        Frequency::Biweekly => Span::new().days(14),
        Frequency::Weekly => Span::new().days(7),
        Frequency::Daily => Span::new().days(1),
    };
    first.checked_sub(span).map_err(|_| {
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
        let c = DayCount::Thirty360;
        assert_eq!(c.days(date(2027, 1, 31), date(2027, 3, 1)), 31); // D1 31→30: 30 + 1
        assert_eq!(c.days(date(2027, 1, 30), date(2027, 3, 31)), 60); // D2 31→30 as D1 = 30
        assert_eq!(c.days(date(2027, 1, 15), date(2027, 3, 31)), 76); // D2 stays 31: 60 + 16
        assert_eq!(c.days(date(2027, 2, 28), date(2027, 3, 28)), 30);
        assert_eq!(c.days(date(2027, 3, 10), date(2027, 3, 1)), -9);
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
    fn monthly_due_dates_agree_with_jiffs_calendar_arithmetic() {
        // Reference: jiff's own month arithmetic (Date + Span::months(k) clamps the day to
        // the month's end), a general-purpose date library; ours is computed separately.
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
                    let reference = first
                        .checked_add(Span::new().months(months * k as i64))
                        .unwrap();
                    assert_eq!(*d, reference, "{first} + {k} × {months} months");
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
