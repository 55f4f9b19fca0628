//! The flows of a transaction: advances and payments placed in unit-periods
//! ([`UnitFlow`], runs of equal payments included), or on dates ([`DatedFlow`],
//! and the [`PaymentSeries`] that dates a run of payments).

use jiff::civil::Date;
use rust_decimal::Decimal;

use crate::engine::calendar;
use crate::engine::error::{EngineError, OrOverflow, Result};
use crate::engine::loan::MAX_PAYMENTS;
use crate::engine::rate::Frequency;

/// An advance or a payment placed in unit-periods from the start of the term;
/// with `count` > 1, a run of `count` equal flows one unit-period apart, the
/// first at (`periods`, `fraction`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct UnitFlow {
    /// The amount of each flow.
    pub amount: Decimal,
    /// Full unit-periods from the start of the term (t or q of (b)(8)).
    pub periods: u32,
    /// The remaining fraction of a unit-period (f or e of (b)(8)), 0 ≤ f < 1.
    pub fraction: Decimal,
    /// How many equal flows, one unit-period apart (at least 1).
    pub count: u32,
}

impl UnitFlow {
    /// One flow at `periods` + `fraction` unit-periods.
    pub fn single(amount: Decimal, periods: u32, fraction: Decimal) -> Self {
        Self {
            amount,
            periods,
            fraction,
            count: 1,
        }
    }

    /// `count` flows of `amount`, the first at `periods` + `fraction`, then one unit-period apart.
    pub fn run(amount: Decimal, periods: u32, fraction: Decimal, count: u32) -> Self {
        Self {
            amount,
            periods,
            fraction,
            count,
        }
    }
}

/// An advance or a payment on a date.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct DatedFlow {
    /// The amount advanced or paid.
    pub amount: Decimal,
    /// The date of the flow.
    pub date: Date,
}

/// `count` payments of `amount` from `first_date` at `frequency`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PaymentSeries {
    /// The amount of each payment.
    pub amount: Decimal,
    /// How many payments.
    pub count: u32,
    /// The date of the first payment.
    pub first_date: Date,
    /// How often the payments fall due.
    pub frequency: Frequency,
}

impl PaymentSeries {
    /// The payment dates.
    ///
    /// - monthly, quarterly, semiannual, annual: 1, 3, 6 or 12 calendar months
    ///   apart, each counted from the first date on its day of the month; a day
    ///   the month lacks (the 29th–31st) falls on the month's last day
    ///   (Jan 31 → Feb 28 → Mar 31 → Apr 30);
    /// - semimonthly: two fixed days of each month 15 apart, the first date's day
    ///   d and d + 15 when d ≤ 15 (the 1st and the 16th), else d − 15 and d (a
    ///   first date on the 16th pays on the 16th and the 1st; on the 31st, the 16th
    ///   and the last day), clamped to the month's last day. For d ≥ 16 this is
    ///   Residue's reading: "the day 15 days later" would move with the month's length;
    /// - weekly, biweekly, daily: 7, 14 or 1 days apart.
    ///
    /// # Errors
    /// A count of zero or above [`MAX_PAYMENTS`], or a date off the calendar.
    pub fn dates(&self) -> Result<Vec<Date>> {
        let field = "payments";
        if self.count == 0 || self.count > MAX_PAYMENTS {
            return Err(EngineError::out_of_range(
                field,
                format!("a payment series must have 1 to {MAX_PAYMENTS} payments"),
            ));
        }
        calendar::dates_named(self.first_date, self.count, self.frequency, field)
    }

    /// The payments as dated flows.
    ///
    /// # Errors
    /// As [`PaymentSeries::dates`].
    pub fn flows(&self) -> Result<Vec<DatedFlow>> {
        Ok(self
            .dates()?
            .into_iter()
            .map(|date| DatedFlow {
                amount: self.amount,
                date,
            })
            .collect())
    }
}

/// The flows of several series, in order.
///
/// # Errors
/// As [`PaymentSeries::dates`].
pub fn expand_series(series: &[PaymentSeries]) -> Result<Vec<DatedFlow>> {
    let mut flows = Vec::new();
    for s in series {
        flows.extend(s.flows()?);
    }
    Ok(flows)
}

/// Checks a list of flows: at least one, no amount below zero, each flow's own
/// ranges (`each`, which returns what the flow adds to the total), and amounts
/// that total more than zero. Returns the total; errors name `field`.
pub(super) fn check_flows<F>(
    flows: &[F],
    field: &'static str,
    amount: impl Fn(&F) -> Decimal,
    each: impl Fn(&F) -> Result<Decimal>,
) -> Result<Decimal> {
    if flows.is_empty() {
        return Err(EngineError::out_of_range(field, "at least one is needed"));
    }
    let mut total = Decimal::ZERO;
    for flow in flows {
        let a = amount(flow);
        if a.is_sign_negative() && !a.is_zero() {
            return Err(EngineError::out_of_range(
                field,
                "an amount cannot be negative",
            ));
        }
        total = total
            .checked_add(each(flow)?)
            .or_overflow("the total of the flows")?;
    }
    if total.is_zero() {
        return Err(EngineError::out_of_range(
            field,
            "the amounts must total more than zero",
        ));
    }
    Ok(total)
}

#[cfg(test)]
mod tests {
    use super::*;
    use jiff::civil::date;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn payment_series_dates() {
        let dates = |first: Date, f: Frequency, n: u32| {
            PaymentSeries {
                amount: d("1"),
                count: n,
                first_date: first,
                frequency: f,
            }
            .dates()
            .unwrap()
        };
        assert_eq!(
            dates(date(2026, 1, 31), Frequency::Monthly, 4),
            [
                date(2026, 1, 31),
                date(2026, 2, 28),
                date(2026, 3, 31),
                date(2026, 4, 30)
            ]
        );
        assert_eq!(
            dates(date(2026, 1, 30), Frequency::Monthly, 3),
            [date(2026, 1, 30), date(2026, 2, 28), date(2026, 3, 30)]
        );
        assert_eq!(
            dates(date(2026, 1, 1), Frequency::Semimonthly, 4),
            [
                date(2026, 1, 1),
                date(2026, 1, 16),
                date(2026, 2, 1),
                date(2026, 2, 16)
            ]
        );
        assert_eq!(
            dates(date(2026, 1, 16), Frequency::Semimonthly, 3),
            [date(2026, 1, 16), date(2026, 2, 1), date(2026, 2, 16)]
        );
        assert_eq!(
            dates(date(2026, 1, 31), Frequency::Semimonthly, 4),
            [
                date(2026, 1, 31),
                date(2026, 2, 16),
                date(2026, 2, 28),
                date(2026, 3, 16)
            ]
        );
        assert_eq!(
            dates(date(2026, 1, 15), Frequency::Semimonthly, 4),
            [
                date(2026, 1, 15),
                date(2026, 1, 30),
                date(2026, 2, 15),
                date(2026, 2, 28)
            ]
        );
        assert_eq!(
            dates(date(2026, 12, 28), Frequency::Biweekly, 3),
            [date(2026, 12, 28), date(2027, 1, 11), date(2027, 1, 25)]
        );
        assert_eq!(
            dates(date(2026, 1, 1), Frequency::Weekly, 2),
            [date(2026, 1, 1), date(2026, 1, 8)]
        );
        assert_eq!(
            dates(date(2025, 11, 30), Frequency::Quarterly, 3),
            [date(2025, 11, 30), date(2026, 2, 28), date(2026, 5, 30)]
        );
        assert_eq!(
            dates(date(2024, 2, 29), Frequency::Annual, 2),
            [date(2024, 2, 29), date(2025, 2, 28)]
        );
        assert_eq!(
            dates(date(2026, 8, 31), Frequency::Semiannual, 2),
            [date(2026, 8, 31), date(2027, 2, 28)]
        );
        let none = PaymentSeries {
            amount: d("1"),
            count: 0,
            first_date: date(2026, 1, 1),
            frequency: Frequency::Monthly,
        };
        assert_eq!(none.dates().unwrap_err().field, Some("payments"));
    }
}
