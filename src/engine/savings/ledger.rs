//! The posted ledger of a savings plan: interest credited to the minor unit each
//! period, growing deposits posted rounded, a withdrawal never taking more than
//! the balance; and its reconciliation with the closed form.

use jiff::civil::Date;
use rust_decimal::{Decimal, RoundingStrategy};

use super::closed_form::{FlowShape, PlanForm};
use super::terms::{Pattern, Timing, MAX_PERIODS};
use crate::engine::error::{OrOverflow, Result};
use crate::engine::ledger::{to_minor, InterestPoster};
use crate::engine::loan::UnitResponses;
use crate::engine::money::{Currency, InterestRounding};

/// One posted period.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SavingsRow {
    /// The period number, from 1.
    pub number: u32,
    /// The end of the period: `start_date` + `number` periods.
    pub date: Option<Date>,
    /// The money put in this period: negative for a withdrawal.
    pub deposit: Decimal,
    /// The interest credited, rounded to the minor unit.
    pub interest: Decimal,
    /// The balance at the end of the period.
    pub balance: Decimal,
}

/// The posted ledger and its totals.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SavingsLedger {
    /// The posted periods, in order.
    pub rows: Vec<SavingsRow>,
    /// Deposits made.
    pub total_deposited: Decimal,
    /// Withdrawals, as a positive total.
    pub total_withdrawn: Decimal,
    /// Interest credited.
    pub total_interest: Decimal,
    /// The balance after the last period posted.
    pub final_balance: Decimal,
    /// True when a withdrawal took the last of the balance (the last one may be smaller).
    pub exhausted: bool,
}

/// When the ledger stops.
#[derive(Debug, Clone, Copy)]
pub(super) struct Posting {
    /// The most periods posted.
    pub(super) limit: u32,
    /// Stop at the first balance at or above it (minor units).
    pub(super) goal: Option<i128>,
    /// The last period's withdrawal takes whatever is left (a drawdown over a term).
    pub(super) absorb_last: bool,
}

impl Posting {
    pub(super) fn periods(limit: u32) -> Self {
        Self {
            limit,
            goal: None,
            absorb_last: false,
        }
    }
}

/// Posts the plan: interest rounded half up to the minor unit each period, growing
/// deposits rounded half up to the minor unit; a withdrawal never takes more than
/// the balance (the last one is then smaller and the ledger stops).
pub(super) fn post(
    shape: &FlowShape,
    x0: Decimal,
    amount: Decimal,
    step: Decimal,
    periodic_rate: Decimal,
    currency: Currency,
    rule: Posting,
) -> Result<SavingsLedger> {
    let e = currency.minor_units();
    let half_up = RoundingStrategy::MidpointAwayFromZero;
    let poster = InterestPoster::new(periodic_rate, currency, InterestRounding::HalfUp)
        .exactly(shape.exact_rate);
    let mut balance = to_minor(x0, e)?;
    let level = to_minor(currency.round(amount, half_up), e)?;
    let m = shape.periods_per_year;
    let mut rows = Vec::with_capacity(rule.limit.min(MAX_PERIODS) as usize);
    let (mut deposited, mut withdrawn, mut interest_total) = (0i128, 0i128, 0i128);
    let mut exhausted = false;
    // Growing deposits: the exact flow from incremental powers, rounded when posted.
    let mut power = Decimal::ONE;
    let mut this_year = level;
    for number in 1..=rule.limit {
        let k = number - 1;
        let mut flow = match shape.pattern {
            Pattern::Level => level,
            Pattern::EachPeriod { ratio } => {
                let exact = amount.checked_mul(power).or_overflow("a growing deposit")?;
                power = power.checked_mul(ratio).or_overflow("a growth power")?;
                to_minor(currency.round(exact, half_up), e)?
            }
            Pattern::EachYear { ratio } => {
                if k % m == 0 {
                    let y = Decimal::from(k / m);
                    let exact = amount
                        .checked_mul(power)
                        .and_then(|v| v.checked_add(step.checked_mul(y)?))
                        .or_overflow("a year's deposit")?;
                    power = power.checked_mul(ratio).or_overflow("a growth power")?;
                    this_year = to_minor(currency.round(exact, half_up), e)?;
                }
                this_year
            }
        };
        let last = rule.absorb_last && number == rule.limit;
        let interest = match shape.timing {
            Timing::Start => {
                if flow < 0 && (balance + flow <= 0 || last) {
                    flow = -balance;
                    exhausted = true;
                }
                balance += flow;
                let interest = poster.interest(balance)?;
                balance += interest;
                interest
            }
            Timing::End => {
                let interest = poster.interest(balance)?;
                if flow < 0 && (balance + interest + flow <= 0 || last) {
                    flow = -(balance + interest);
                    exhausted = true;
                }
                balance += interest + flow;
                interest
            }
        };
        if flow >= 0 {
            deposited += flow;
        } else {
            withdrawn -= flow;
        }
        interest_total += interest;
        rows.push(SavingsRow {
            number,
            date: None,
            deposit: checked_from_minor(flow, e, "a posted deposit")?,
            interest: checked_from_minor(interest, e, "a period's interest")?,
            balance: checked_from_minor(balance, e, "a posted balance")?,
        });
        if exhausted || rule.goal.is_some_and(|g| balance >= g) {
            break;
        }
    }
    Ok(SavingsLedger {
        rows,
        total_deposited: checked_from_minor(deposited, e, "the total deposited")?,
        total_withdrawn: checked_from_minor(withdrawn, e, "the total withdrawn")?,
        total_interest: checked_from_minor(interest_total, e, "the total interest")?,
        final_balance: checked_from_minor(balance, e, "a posted balance")?,
        exhausted,
    })
}

/// Minor units back to an amount, or an overflow past the 96 bits of a decimal.
fn checked_from_minor(amount: i128, minor_units: u32, what: &str) -> Result<Decimal> {
    Decimal::try_from_i128_with_scale(amount, minor_units)
        .ok()
        .or_overflow(what)
}

/// How far the posted ledger strays from the closed form with the same posted deposit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SavingsReconciliation {
    /// The largest |ledger balance − closed-form balance| over the rows compared.
    pub largest_drift: Decimal,
    /// The period where it occurs (0 when no row is compared).
    pub at_period: u32,
    /// Rows compared: all but a last withdrawal that took the residue.
    pub compared: u32,
    /// What rounding can do by then: (½ unit of interest, plus ½ unit of a rounded
    /// growing deposit, times a when made at the start) × Σ_{j<k} a^j.
    pub bound: Decimal,
}

pub(super) fn reconcile(
    ledger: &SavingsLedger,
    form: &PlanForm,
    periodic_rate: Decimal,
    currency: Currency,
) -> Result<SavingsReconciliation> {
    let compared = if ledger.exhausted {
        ledger.rows.len().saturating_sub(1)
    } else {
        ledger.rows.len()
    };
    let values = form.balances(compared as u32)?;
    let mut largest = Decimal::ZERO;
    let mut at = 0;
    for row in &ledger.rows[..compared] {
        let drift = (row.balance - values[row.number as usize]).abs();
        if drift > largest || at == 0 {
            largest = drift;
            at = row.number;
        }
    }
    let half = currency.minor_unit() / Decimal::TWO;
    let per_period = if form.shape.is_level() {
        half
    } else {
        half + half * form.shape.timing_factor()
    };
    // Σ_{j<at} a^j is the closed form of a unit deposit.
    let sum = UnitResponses::for_rate(periodic_rate)?
        .payment_response
        .eval(at)?;
    Ok(SavingsReconciliation {
        largest_drift: largest,
        at_period: at,
        compared: compared as u32,
        bound: per_period.checked_mul(sum).or_overflow("the drift bound")?,
    })
}
