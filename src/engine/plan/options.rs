//! What a plan adds to level-loan terms: dates and the odd first period, extra
//! payments, an interest-only start, a balloon, rate steps; their checks against
//! the terms, and the work they make.

use jiff::civil::Date;
use rust_decimal::Decimal;

use crate::engine::adjustable::terms::{AdjustableRate, MortgageInsurance, RatePath};
use crate::engine::calendar::DayCount;
use crate::engine::error::{EngineError, Result};
use crate::engine::rate::AnnualRate;
use crate::engine::terms::{LoanTerm, LoanTerms, MAX_PAYMENTS};

/// Where the odd first period's interest goes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum OddDaysInterest {
    /// Added to the first payment.
    #[default]
    FirstPayment,
    /// Collected at closing as prepaid interest.
    Prepaid,
}

/// What a rate step keeps.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum RateChangeKeeps {
    /// The remaining term: the payment is re-amortized.
    #[default]
    Term,
    /// The payment: the term changes.
    Payment,
}

/// An extra payment.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Extra {
    /// `amount` with payments `from`, `from + every`, … up to `to` (or the end).
    Recurring {
        /// The extra paid each time.
        amount: Decimal,
        /// The first payment it comes with.
        from: u32,
        /// The last payment it may come with; `None`: to the end.
        to: Option<u32>,
        /// Every how many payments.
        every: u32,
    },
    /// `amount` once, with payment `at`.
    Lump {
        /// The extra paid.
        amount: Decimal,
        /// The payment it comes with.
        at: u32,
    },
}

/// A new nominal annual rate from payment `at` on.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RateChange {
    /// The first payment at the new rate.
    pub at: u32,
    /// The new nominal annual rate.
    pub rate: AnnualRate,
}

/// Everything a plan adds to level-loan terms.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct PlanOptions {
    /// The date the loan is funded; with the first payment date it sets the odd first period.
    pub funding_date: Option<Date>,
    /// The due date of the first payment: the rows are dated from it.
    pub first_payment_date: Option<Date>,
    /// How the odd days are counted.
    pub day_count: DayCount,
    /// Where the odd first period's interest goes.
    pub odd_days_interest: OddDaysInterest,
    /// Extra payments.
    pub extras: Vec<Extra>,
    /// How many payments at the start are of interest only.
    pub interest_only_payments: u32,
    /// The rest of the balance falls due with this payment (a balloon).
    pub balloon_after_payments: Option<u32>,
    /// Rate steps, at increasing payments.
    pub rate_changes: Vec<RateChange>,
    /// What a rate step keeps: the term or the payment.
    pub rate_change_keeps: RateChangeKeeps,
    /// The original value of the property, for the HPA milestones.
    pub property_value: Option<Decimal>,
    /// Adjustable-rate terms: the rate changes then come from `rate_path`.
    pub adjustable: Option<AdjustableRate>,
    /// The path an adjustable rate is assumed to take (default: composite).
    pub rate_path: RatePath,
    /// Estimated escrow (taxes and insurance) with each payment.
    pub escrow_monthly: Option<Decimal>,
    /// Mortgage insurance with each payment.
    pub mortgage_insurance: Option<MortgageInsurance>,
}

/// The expected work of posting a plan, in payment-segments: its payments (the
/// longest schedule when the term is solved from a payment) times one plus the
/// rules that can start a segment (extra payments and rate changes). The server
/// weighs its in-flight limit by it.
pub fn expected_work(terms: &LoanTerms, o: &PlanOptions) -> u64 {
    let payments = match terms.term {
        LoanTerm::Payments(n) => n,
        LoanTerm::Payment(_) => MAX_PAYMENTS,
    };
    let changes = match &o.adjustable {
        // Each path posted (the schedule's, and three more for the disclosure).
        Some(a) => 4 * (1 + u64::from(payments / a.change_every.max(1))),
        None => o.rate_changes.len() as u64,
    };
    u64::from(payments) * (1 + o.extras.len() as u64 + changes)
}

/// The interface's name of an adjustable term's field: `adjustable.NAME`.
pub fn adjustable_field(name: &'static str) -> &'static str {
    match name {
        "index_percent" => "adjustable.index_percent",
        "margin_percent" => "adjustable.margin_percent",
        "first_change_payment" => "adjustable.first_change_payment",
        "change_every" => "adjustable.change_every",
        "first_change_cap_percent" => "adjustable.first_change_cap_percent",
        "periodic_cap_percent" => "adjustable.periodic_cap_percent",
        "lifetime_max_percent" => "adjustable.lifetime_max_percent",
        "floor_percent" => "adjustable.floor_percent",
        "rounding" => "adjustable.rounding",
        "payment_cap_percent" => "adjustable.payment_cap_percent",
        "index_values" => "rate_path",
        other => other,
    }
}

fn err(field: &'static str, message: impl Into<String>) -> EngineError {
    EngineError::out_of_range(field, message)
}

/// Checks a plan's options against its terms.
///
/// # Errors
/// Each inconsistency, naming its field.
pub fn check(terms: &LoanTerms, o: &PlanOptions, n: u32) -> Result<()> {
    if o.interest_only_payments >= n && o.interest_only_payments > 0 {
        return Err(err(
            "interest_only_payments",
            "the interest-only period must be shorter than the term",
        ));
    }
    if let Some(b) = o.balloon_after_payments {
        if b == 0 || b >= n {
            return Err(err(
                "balloon_after_payments",
                format!(
                    "the balloon must fall due after 1 to {} payments (the term has {n})",
                    n.saturating_sub(1)
                ),
            ));
        }
        if b <= o.interest_only_payments {
            return Err(err(
                "balloon_after_payments",
                "the balloon must fall due after the interest-only period",
            ));
        }
    }
    if let Some(a) = &o.adjustable {
        if !o.rate_changes.is_empty() {
            return Err(err(
                "rate_changes",
                "an adjustable-rate loan takes its rate changes from its index, margin and caps: give rate_changes or adjustable, not both",
            ));
        }
        if o.rate_change_keeps == RateChangeKeeps::Payment {
            return Err(err(
                "rate_change_keeps",
                "an adjustable-rate loan re-amortises at each change (keeps the term); use payment_cap_percent to limit the payment",
            ));
        }
        a.check(terms.rate.percent(), n).map_err(|e| EngineError {
            field: e.field.map(adjustable_field),
            ..e
        })?;
        if !matches!(terms.term, LoanTerm::Payments(_)) {
            return Err(err(
                "payment",
                "an adjustable-rate loan needs its term (term_months or term_payments): the payment is worked out again at each change",
            ));
        }
    }
    if let Some(m) = &o.mortgage_insurance {
        if m.payments.is_some_and(|p| p == 0 || p > n) {
            return Err(err(
                "mortgage_insurance_payments",
                format!("must be a number of payments from 1 to {n}, the term"),
            ));
        }
    }
    let mut last = 1;
    for (index, rc) in o.rate_changes.iter().enumerate() {
        if rc.at < 2 || rc.at > n {
            return Err(err(
                "rate_changes",
                format!(
                    "rate change {}: `at` must be a payment from 2 to {n}",
                    index + 1
                ),
            ));
        }
        if rc.at <= last {
            return Err(err(
                "rate_changes",
                format!(
                    "rate change {}: rate changes must be at increasing payments, without overlap",
                    index + 1
                ),
            ));
        }
        last = rc.at;
    }
    for (index, e) in o.extras.iter().enumerate() {
        match *e {
            Extra::Recurring {
                amount,
                from,
                to,
                every,
            } => {
                if amount <= Decimal::ZERO || !terms.currency.fits(amount) {
                    return Err(err(
                        "extra_payments",
                        format!(
                            "extra payment {}: the amount must be more than zero, in minor units",
                            index + 1
                        ),
                    ));
                }
                if from == 0 || every == 0 || to.is_some_and(|t| t < from) {
                    return Err(err(
                        "extra_payments",
                        format!(
                            "extra payment {}: needs 1 ≤ from ≤ to and every ≥ 1",
                            index + 1
                        ),
                    ));
                }
            }
            Extra::Lump { amount, at } => {
                if amount <= Decimal::ZERO || !terms.currency.fits(amount) {
                    return Err(err(
                        "extra_payments",
                        format!(
                            "extra payment {}: the amount must be more than zero, in minor units",
                            index + 1
                        ),
                    ));
                }
                if at == 0 {
                    return Err(err(
                        "extra_payments",
                        format!(
                            "extra payment {}: `at` must be a payment number from 1",
                            index + 1
                        ),
                    ));
                }
            }
        }
    }
    match (o.funding_date, o.first_payment_date) {
        (Some(f), Some(p)) => {
            if p <= f {
                return Err(err(
                    "first_payment_date",
                    "the first payment must fall after funding",
                ));
            }
            if DayCount::Actual365.days(f, p) > 366 {
                return Err(err(
                    "first_payment_date",
                    "the first period cannot be longer than a year",
                ));
            }
        }
        (Some(_), None) => {
            return Err(err(
                "first_payment_date",
                "give the first payment date with the funding date",
            ))
        }
        _ => {}
    }
    if let Some(v) = o.property_value {
        if v <= Decimal::ZERO {
            return Err(err(
                "property_value",
                "the property value must be more than zero",
            ));
        }
    }
    Ok(())
}

/// The extra paid with payment k: (recurring every period, everything else as a lump).
pub(super) fn extras_at(extras: &[Extra], k: u32) -> (Decimal, Decimal) {
    let (mut recurring, mut lump) = (Decimal::ZERO, Decimal::ZERO);
    for e in extras {
        match *e {
            Extra::Recurring {
                amount,
                from,
                to,
                every,
            } => {
                if k >= from && to.is_none_or(|t| k <= t) && (k - from) % every == 0 {
                    if every == 1 {
                        recurring += amount;
                    } else {
                        lump += amount;
                    }
                }
            }
            Extra::Lump { amount, at } => {
                if at == k {
                    lump += amount;
                }
            }
        }
    }
    (recurring, lump)
}

/// The payment number of the last scheduled extra (to tell when extras come after payoff).
pub(super) fn last_extra(extras: &[Extra]) -> Option<u32> {
    extras
        .iter()
        .map(|e| match *e {
            Extra::Recurring { from, to, .. } => to.unwrap_or(from),
            Extra::Lump { at, .. } => at,
        })
        .max()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::testing::loan_terms;
    use jiff::civil::date;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn inconsistent_options_name_their_fields() {
        let t = loan_terms("100000", "6", LoanTerm::Payments(360));
        let cases = [
            (
                PlanOptions {
                    interest_only_payments: 360,
                    ..PlanOptions::default()
                },
                "interest_only_payments",
            ),
            (
                PlanOptions {
                    balloon_after_payments: Some(400),
                    ..PlanOptions::default()
                },
                "balloon_after_payments",
            ),
            (
                PlanOptions {
                    rate_changes: vec![
                        RateChange {
                            at: 60,
                            rate: AnnualRate::from_percent(d("7")).unwrap(),
                        },
                        RateChange {
                            at: 60,
                            rate: AnnualRate::from_percent(d("8")).unwrap(),
                        },
                    ],
                    ..PlanOptions::default()
                },
                "rate_changes",
            ),
            (
                PlanOptions {
                    funding_date: Some(date(2027, 3, 1)),
                    first_payment_date: Some(date(2027, 2, 1)),
                    ..PlanOptions::default()
                },
                "first_payment_date",
            ),
            (
                PlanOptions {
                    funding_date: Some(date(2026, 1, 1)),
                    first_payment_date: Some(date(2027, 2, 1)),
                    ..PlanOptions::default()
                },
                "first_payment_date",
            ),
        ];
        for (o, field) in cases {
            assert_eq!(check(&t, &o, 360).unwrap_err().field, Some(field));
        }
    }
}
