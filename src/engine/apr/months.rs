//! Month arithmetic with the month-end rules of Appendix J (b)(3): whole months
//! counted back from a later date, and the days left. The unit-periods of (b)(5)
//! and the EU APRC's years are both counted with it.

use jiff::civil::Date;

use crate::engine::calendar::add_months;
use crate::engine::error::{EngineError, Result};

/// `later − earlier` in days (may be negative).
pub(super) fn days_between(earlier: Date, later: Date) -> i64 {
    i64::from((later - earlier).get_days())
}

pub(super) fn is_month_end(d: Date) -> bool {
    d.day() == d.days_in_month()
}

/// Full months counted back from `later` towards `earlier` (Appendix J (b)(5)(ii)),
/// the days left from `earlier` to the first of them, and that date.
///
/// Months run from a date to the same date; when `later` is the last day of its
/// month and `earlier` falls on a later day of the month than `later` (Feb 28
/// and the 30th, Apr 30 and the 31st), the months counted back run to day
/// `earlier.day()`, clamped to each month's end: last day to last day, and the
/// last day of February standing for the 29th or 30th ((b)(3)). Otherwise they
/// run to `later.day()`, clamped (a payment on the 30th counts back to the last
/// day of February).
pub(super) fn months_back(
    earlier: Date,
    later: Date,
    field: &'static str,
) -> Result<(u32, u32, Date)> {
    let anchor = month_anchor(earlier, later);
    let span = (i64::from(later.year()) - i64::from(earlier.year())) * 12
        + i64::from(later.month())
        - i64::from(earlier.month());
    let mut months = span;
    let mut back = add_months(later, -months, anchor, field)?;
    if back < earlier {
        months -= 1;
        back = add_months(later, -months, anchor, field)?;
    }
    let months = u32::try_from(months).map_err(|_| dates_out_of_order(field))?;
    let days = u32::try_from(days_between(earlier, back)).map_err(|_| dates_out_of_order(field))?;
    Ok((months, days, back))
}

/// The day of the month that months counted back from `later` fall on (see [`months_back`]).
pub(super) fn month_anchor(earlier: Date, later: Date) -> i8 {
    if is_month_end(later) && earlier.day() > later.day() {
        earlier.day()
    } else {
        later.day()
    }
}

pub(super) fn dates_out_of_order(field: &'static str) -> EngineError {
    EngineError::out_of_range(field, "a date falls before the start of the term")
}

#[cfg(test)]
mod tests {
    use super::*;
    use jiff::civil::date;

    #[test]
    fn months_are_counted_back_with_the_month_end_rules() {
        let m = |a: Date, b: Date| {
            let (months, days, _) = months_back(a, b, "payments").unwrap();
            (months, days)
        };
        // 12 CFR 1026 Appendix J (c)(1)(ii): 2-10-78 to 4-1-78 is 1 month and 19 days.
        assert_eq!(m(date(1978, 2, 10), date(1978, 4, 1)), (1, 19));
        // Last day to last day; the 30th to the last day of February.
        assert_eq!(m(date(2026, 1, 31), date(2026, 4, 30)), (3, 0));
        assert_eq!(m(date(2026, 1, 30), date(2026, 2, 28)), (1, 0));
        assert_eq!(m(date(2026, 1, 30), date(2026, 4, 30)), (3, 0));
        assert_eq!(m(date(2026, 2, 28), date(2026, 5, 31)), (3, 0));
        assert_eq!(m(date(2024, 1, 29), date(2024, 2, 29)), (1, 0));
        // A payment on the 30th counts back to the last day of February.
        assert_eq!(m(date(2026, 2, 20), date(2026, 3, 30)), (1, 8));
        assert_eq!(m(date(2026, 1, 15), date(2026, 3, 31)), (2, 16));
        assert_eq!(m(date(2026, 3, 5), date(2026, 3, 20)), (0, 15));
        // 30 remaining days in a month unit are a whole unit-period: (1 + 1·i) = (1 + i).
        assert_eq!(m(date(2026, 1, 1), date(2026, 3, 31)), (2, 30));
    }
}
