//! The loan schedule job: terms in, payment, posted ledger, derivation and notes out.

use jiff::civil::Date;
use rust_decimal::Decimal;

use super::adjustable::{
    disclose_adjustable, full_payment, insurance_until, path_payments, AdjustableDisclosure,
    FullPayment, RatePath,
};
use super::calendar::due_dates;
use super::error::{EngineError, ErrorKind, OrOverflow, Result};
use super::ledger::{Ledger, Reconciliation, Row};
use super::loan::{payment_for_term, solve_balance, UnitResponses};
use super::money::Currency;
use super::plan::{
    milestones, post_summary, post_totals, post_with, Milestones, OddDaysInterest, PaymentSummary,
    Plan, PlanOptions,
};
use super::recurrence::Solution;
pub use super::terms::{
    check_payment, check_payment_count, check_principal, payments_in_months, LoanTerm, LoanTerms,
    MAX_PRINCIPAL,
};

/// The caution every result carries.
pub const CAUTION: &str = "Estimates for discussion only: not an offer of credit, a disclosure, or financial, legal or tax advice. \
The lender's system of record, local regulation and licensed professionals decide.";

/// The segments an answer shows with their whole derivation (recurrence, poles,
/// partial fractions, closed form); later ones are listed by their figures alone.
/// A plan whose extras change the outflow at nearly every payment has thousands
/// of segments: listing each derivation made one answer 13 MB.
pub const SEGMENTS_IN_FULL: usize = 24;

/// The segments an answer lists at all; the rows carry every figure of the rest.
pub const SEGMENTS_LISTED: usize = 600;

/// How the payment was found from the closed form (when it was solved).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PaymentDerivation {
    /// The number of payments.
    pub n: u32,
    /// h[n]/s^n: a unit principal after n periods with no payment (s = max(a, 1)).
    pub principal_response: Decimal,
    /// u[n]/s^n: a unit payment each period accumulated over n periods.
    pub payment_response: Decimal,
    /// principal·h[n]/u[n], unrounded.
    pub exact_payment: Decimal,
    /// The closed forms h and u of the periodic rate.
    pub unit: UnitResponses,
}

/// The answer to a loan schedule request.
#[derive(Debug, Clone)]
pub struct LoanSchedule {
    /// The terms, as given.
    pub terms: LoanTerms,
    /// The periodic rate i for the payment frequency.
    pub periodic_rate: Decimal,
    /// The regular payment, as posted.
    pub payment: Decimal,
    /// The number of payments posted.
    pub number_of_payments: u32,
    /// The last payment, which absorbs the residue (or carries a balloon).
    pub final_payment: Decimal,
    /// How the payment was solved, when it was.
    pub payment_derivation: Option<PaymentDerivation>,
    /// The balance recurrence with the posted payment, solved.
    pub solution: Solution,
    /// The posted ledger.
    pub ledger: Ledger,
    /// `None` when the closed form's powers leave the decimal range (very long terms at high rates).
    pub reconciliation: Option<Reconciliation>,
    /// The caution, then the assumptions made and what they give.
    pub notes: Vec<String>,
    /// The date of the last payment, when dated.
    pub payoff_date: Option<jiff::civil::Date>,
    /// Against the same loan without extra payments, when there are extras.
    pub savings: Option<Savings>,
    /// Payments and dates worth naming.
    pub milestones: Milestones,
    /// The posted plan with its closed-form segments (its rows are moved into `ledger`).
    pub plan: Plan,
    /// An adjustable loan's disclosure: its paths, summary, rate table,
    /// $10,000 example and underwriting payments.
    pub adjustable: Option<AdjustableDisclosure>,
    /// The projected payments with escrow and mortgage insurance, for an
    /// adjustable loan or one given escrow or mortgage insurance.
    pub full_payment: Option<FullPayment>,
}

/// Solves and posts a level-payment loan.
///
/// # Errors
/// Out-of-range terms, a payment that never repays, or an overflow; each names its field.
///
/// # Example
/// ```
/// use residue::engine::money::Currency;
/// use residue::engine::rate::{AnnualRate, Frequency};
/// use residue::engine::schedule::{schedule, LoanTerm, LoanTerms};
/// let terms = LoanTerms {
///     principal: "100000".parse().unwrap(),
///     currency: Currency::USD,
///     rate: AnnualRate::from_percent("6".parse().unwrap()).unwrap(),
///     payment_frequency: Frequency::Monthly,
///     compounding: None,
///     term: LoanTerm::Payments(360),
///     payment_rounding: Default::default(),
///     interest_rounding: Default::default(),
/// };
/// let s = schedule(&terms).unwrap();
/// assert_eq!(s.payment.to_string(), "599.55");
/// // The posted ledger ends at exactly zero; its last payment absorbs the rounding.
/// assert!(s.ledger.rows.last().unwrap().balance.is_zero());
/// ```
pub fn schedule(terms: &LoanTerms) -> Result<LoanSchedule> {
    schedule_with(terms, &PlanOptions::default())
}

/// Solves and posts a loan with plan options (dates, extras, interest-only, balloon, rate steps).
///
/// # Errors
/// Out-of-range or inconsistent terms, a payment that never repays, or an overflow.
pub fn schedule_with(terms: &LoanTerms, options: &PlanOptions) -> Result<LoanSchedule> {
    schedule_inner(terms, options, true)
}

/// As [`schedule_with`] without reconciling the ledger with the closed forms:
/// for comparisons, whose answer shows totals, not derivations.
///
/// # Errors
/// As [`schedule_with`].
pub fn schedule_for_comparison(terms: &LoanTerms, options: &PlanOptions) -> Result<LoanSchedule> {
    schedule_without_reconciling(terms, options)
}

/// The posted schedule without its reconciliation, milestones or savings against
/// the loan without extras: for answers that show totals, not derivations
/// (comparisons, disclosure checks).
///
/// # Errors
/// As [`schedule_with`].
pub fn schedule_without_reconciling(
    terms: &LoanTerms,
    options: &PlanOptions,
) -> Result<LoanSchedule> {
    schedule_inner(terms, options, false)
}

fn schedule_inner(
    terms: &LoanTerms,
    options: &PlanOptions,
    reconcile_ledger: bool,
) -> Result<LoanSchedule> {
    terms.check()?;
    let i = terms.periodic_rate()?;
    let currency = terms.currency;
    let mut notes = opening_notes(terms);
    let mut plan = if reconcile_ledger {
        post_with(terms, options, true, true)?
    } else {
        post_totals(terms, options)?
    };
    let payment = plan.payment;
    check_posted_payment(payment, currency)?;
    let derivation = match terms.term {
        LoanTerm::Payments(_) if !reconcile_ledger => None,
        LoanTerm::Payments(n) => {
            let amortizing = n - options.interest_only_payments;
            let balance = plan
                .rows
                .get(options.interest_only_payments as usize)
                .map_or(terms.principal, |r| r.balance + r.principal + r.extra)
                .max(Decimal::ZERO);
            let start = if options.interest_only_payments == 0 {
                terms.principal
            } else {
                balance
            };
            let i_start = plan
                .segments
                .iter()
                .find(|s| s.first_payment > options.interest_only_payments)
                .map_or(i, |s| s.periodic_rate);
            let unit = UnitResponses::for_rate(i_start)?;
            let (h, u) = unit.at_scaled(amortizing)?;
            Some(PaymentDerivation {
                n: amortizing,
                principal_response: h,
                payment_response: u,
                exact_payment: match terms.periodic_ratio() {
                    // One payment: start·(1 + i) from the exact ratio i rounds,
                    // a terminating decimal whenever it is a tie.
                    Some((num, den)) if amortizing == 1 && i_start == i => {
                        Decimal::try_from_i128_with_scale(num, 0)
                            .ok()
                            .zip(Decimal::try_from_i128_with_scale(den, 0).ok())
                            .and_then(|(num, den)| start.checked_mul(num)?.checked_div(den))
                            .and_then(|v| v.checked_add(start))
                            .map_or_else(|| payment_for_term(start, i_start, amortizing), Ok)?
                    }
                    _ => payment_for_term(start, i_start, amortizing)?,
                },
                unit,
            })
        }
        LoanTerm::Payment(_) => None,
    };
    // A comparison shows neither milestones nor savings against the loan without
    // extras (its rows compare plans with each other), so it skips both.
    // The loan without its extras may not repay at all (an amortizing payment
    // that rounds to the interest): the schedule as asked is still answered,
    // without the interest saved, its milestones read from itself.
    let base = if options.extras.is_empty() || !reconcile_ledger {
        None
    } else {
        match post_with(terms, options, false, false) {
            Ok(base) => Some(base),
            Err(e) if e.kind == ErrorKind::NoSolution => {
                notes.push(format!(
                    "Without its extra payments this loan would not repay ({}): the interest saved is not shown, and the milestones are read from this schedule.",
                    e.message
                ));
                None
            }
            Err(e) => return Err(e),
        }
    };
    let milestone_base = base.as_ref().unwrap_or(&plan);
    let (milestones, milestone_notes) = if reconcile_ledger {
        milestones(&plan, milestone_base, options.property_value, currency)?
    } else {
        (Milestones::default(), Vec::new())
    };
    notes.extend(plan.notes.iter().cloned());
    notes.extend(milestone_notes);
    notes.extend(odd_days_note(&plan, options, currency));
    if plan.segments.len() > SEGMENTS_IN_FULL {
        notes.push(format!(
            "The plan runs in {} segments. To keep the answer a readable size, the first {SEGMENTS_IN_FULL} are shown with their whole derivation, {} by their figures alone; every payment is in the schedule's rows.",
            plan.segments.len(),
            if plan.segments.len() > SEGMENTS_LISTED {
                format!("the next {} (to segment {SEGMENTS_LISTED})", SEGMENTS_LISTED - SEGMENTS_IN_FULL)
            } else {
                "the rest".to_string()
            }
        ));
    }
    let rows: Vec<Row> = std::mem::take(&mut plan.rows);
    let payoff_date = rows.last().and_then(|r| r.date);
    let ledger = Ledger {
        rows,
        total_paid: plan.total_paid,
        total_interest: plan.total_interest,
    };
    let number_of_payments = plan.summary.count;
    let final_payment = plan.summary.final_payment;
    let reconciliation = if reconcile_ledger {
        reconcile_plan(&plan, ledger.rows.last(), currency)?
    } else {
        None
    };
    if reconciliation.is_none() && reconcile_ledger {
        notes.push("The ledger could not be reconciled with the closed form: a^k leaves the range of 28-digit decimals for this term and rate.".into());
    }
    notes.extend(closing_notes(terms, options, &plan));
    let solution = match plan.segments.first() {
        Some(s) => s.solution.clone(),
        None => solve_balance(terms.principal, i, payment)?,
    };
    let adjustable = match &options.adjustable {
        Some(_) if reconcile_ledger => Some(disclose_adjustable(terms, options)?),
        _ => None,
    };
    let full_payment = if reconcile_ledger {
        full_payment(terms, options, adjustable.as_ref())?
    } else {
        None
    };
    notes.extend(adjustable_notes(
        terms,
        options,
        adjustable.as_ref(),
        full_payment.as_ref(),
    ));
    let savings = base.as_ref().map(|b| Savings {
        interest_saved: b.total_interest - plan.total_interest,
        payments_saved: b.rows.len() as u32 - ledger.rows.len().min(b.rows.len()) as u32,
    });
    Ok(LoanSchedule {
        terms: terms.clone(),
        periodic_rate: i,
        payment,
        number_of_payments,
        final_payment,
        payment_derivation: derivation,
        solution,
        ledger,
        reconciliation,
        notes,
        payoff_date,
        savings,
        milestones,
        plan,
        adjustable,
        full_payment,
    })
}

/// What an adjustable loan's schedule assumed, and how its full payment was made up.
fn adjustable_notes(
    terms: &LoanTerms,
    options: &PlanOptions,
    adjustable: Option<&AdjustableDisclosure>,
    full: Option<&FullPayment>,
) -> Vec<String> {
    let mut notes = Vec::new();
    if let Some(a) = &options.adjustable {
        let path = match &options.rate_path {
            RatePath::Composite => format!(
                "The schedule follows the composite path: the initial rate of {} % while it lasts, then index + margin at consummation ({} %), reached through the caps (comment 17(c)(1)-10). The APR, finance charge and total of payments are figured on it.",
                terms.rate.percent().normalize(),
                a.fully_indexed()
            ),
            RatePath::Highest => "The schedule follows the highest path: every change takes its full cap up, to the maximum rate.".into(),
            RatePath::Lowest => "The schedule follows the lowest path: every change takes its full cap down, to the floor.".into(),
            RatePath::IndexValues(v) => format!(
                "The schedule follows the index values given ({} of them){}: each change's rate is index + margin, rounded as the note says, within the caps, the floor and the maximum.",
                v.len(),
                if v.len() < a.changes(u32::MAX).take(v.len() + 1).count() { ", the last carried forward" } else { "" }
            ),
        };
        notes.push(path);
        notes.push("At each change the balance then due is re-amortised over the remaining term at the new rate; a change that leaves the rate as it was changes nothing.".into());
        if a.floor_percent.is_none() {
            notes.push(format!(
                "No floor was given: the floor is the margin, {} % (comment 37(j)(4)-1).",
                a.margin_percent.normalize()
            ));
        }
        if a.first_change_cap_percent.is_none() && a.periodic_cap_percent.is_some() {
            notes.push(
                "No cap for the first change was given: the periodic cap applies to it.".into(),
            );
        }
        if a.payment_cap_percent.is_some() {
            notes.push(format!(
                "With the payment cap, interest the capped payment leaves unpaid is added to the balance, and the payment is recast to the fully amortising one every {} payments (common practice for payment-capped notes, no source: a note states its own).",
                crate::engine::adjustable::RECAST_EVERY
            ));
        }
        if adjustable.is_some() {
            notes.push("The highest and lowest payments leave out the final payment, which absorbs the rounding.".into());
        }
    }
    if let Some(f) = full {
        if options.mortgage_insurance.is_some() {
            notes.push(format!(
                "Mortgage insurance is shown with payments 1 to {}{}.",
                f.insurance_until,
                match options.mortgage_insurance.and_then(|m| m.payments) {
                    Some(_) => " as given".to_string(),
                    None if options.property_value.is_some() => ": the payment after which the balance is first scheduled at or below 78 % of the property value, or the term's midpoint if sooner (12 U.S.C. 4902(b), (c)), on the composite path".to_string(),
                    None => ": every payment, since neither mortgage_insurance_payments nor property_value was given".to_string(),
                }
            ));
        }
        notes.push("Projected payments are in whole dollars, by years of the loan (§1026.37(c), (o)(4)); principal and interest range from the lowest to the highest path.".into());
    }
    notes
}

/// The caution, and how the periodic rate was taken.
fn opening_notes(terms: &LoanTerms) -> Vec<String> {
    let mut notes = vec![CAUTION.to_string()];
    if terms.compounding.is_none() {
        notes.push(format!(
            "Compounding taken equal to the payment frequency ({}).",
            terms.payment_frequency.name()
        ));
    } else if terms.compounding != Some(terms.payment_frequency) {
        notes.push(format!(
            "Interest compounds {} and payments are {}: the periodic rate is the equivalent rate (1 + j/m)^(m/p) − 1.",
            terms.compounding.map_or("", |f| f.name()),
            terms.payment_frequency.name()
        ));
    }
    notes
}

/// Refuses a payment that rounds to zero.
fn check_posted_payment(payment: Decimal, currency: Currency) -> Result<()> {
    if payment <= Decimal::ZERO {
        return Err(EngineError::no_solution(
            Some("principal"),
            format!(
                "the payment rounds to zero in {}: the principal is too small for this term",
                currency.code()
            ),
        ));
    }
    Ok(())
}

/// The odd first period, when there is one.
fn odd_days_note(plan: &Plan, options: &PlanOptions, currency: Currency) -> Option<String> {
    if plan.odd_days == 0 {
        return None;
    }
    // "from funding on F to S, the due date one period before the first payment, by
    // the day count's rule", so the count can be checked on a calendar.
    let counted = match (options.funding_date, plan.regular_period_start) {
        (Some(funding), Some(start)) => format!(
            "counted from funding on {funding} to {start}, the due date one period before the first payment, {}",
            options.day_count.describe()
        ),
        _ => options.day_count.describe().to_string(),
    };
    if plan.odd_days < 0 {
        // Funded after the start of the first regular period: that period's
        // interest is charged in full on the balance, and the days before
        // funding are credited back.
        let place = match options.odd_days_interest {
            OddDaysInterest::FirstPayment => "taken off the first payment",
            OddDaysInterest::Prepaid => "credited at closing",
        };
        return Some(format!(
            "The first period is {} days shorter than a regular one ({counted}): the first payment's interest is for a full period, and {} of interest for the days before funding is {place}.",
            -plan.odd_days,
            currency.format(-plan.odd_days_interest)
        ));
    }
    let place = match options.odd_days_interest {
        OddDaysInterest::FirstPayment => "added to the first payment",
        OddDaysInterest::Prepaid => "collected at closing as prepaid interest",
    };
    Some(format!(
        "The first period is {} days longer than a regular one ({counted}): {} of interest, {place}.",
        plan.odd_days,
        currency.format(plan.odd_days_interest)
    ))
}

/// An early payoff by rounding, a balloon, or a final payment that differs.
fn closing_notes(terms: &LoanTerms, options: &PlanOptions, plan: &Plan) -> Vec<String> {
    let mut notes = Vec::new();
    let currency = terms.currency;
    let number_of_payments = plan.summary.count;
    let final_payment = plan.summary.final_payment;
    if let (LoanTerm::Payments(n), true) = (
        terms.term,
        options.extras.is_empty()
            && options.balloon_after_payments.is_none()
            && options.rate_changes.is_empty(),
    ) {
        if number_of_payments < n {
            notes.push(format!(
                "The rounded payment repays the loan after {number_of_payments} payments, {} fewer than the term.",
                n - number_of_payments
            ));
        }
    }
    if let Some(b) = plan.balloon {
        notes.push(format!(
            "A balloon of {} falls due with payment {number_of_payments}.",
            currency.format(b)
        ));
    } else if final_payment != plan.payment && options.extras.is_empty() {
        notes.push(format!(
            "The final payment is {} so that the balance ends at exactly zero.",
            currency.format(final_payment)
        ));
    }
    notes
}

/// A loan's scheduled payments and totals, posted without keeping the rows:
/// what a disclosure check needs (see [`scheduled_payments`]).
#[derive(Debug, Clone)]
pub struct ScheduledPayments {
    /// The terms, as given.
    pub terms: LoanTerms,
    /// The regular payment at the start of amortization.
    pub payment: Decimal,
    /// The number of payments posted.
    pub number_of_payments: u32,
    /// The last payment, which absorbs the residue (or carries a balloon).
    pub final_payment: Decimal,
    /// Everything paid: payments, extra payments and odd-days interest.
    pub total_paid: Decimal,
    /// Every period's interest, odd-days interest included.
    pub total_interest: Decimal,
    /// Odd-days interest collected at closing (zero unless prepaid).
    pub prepaid_interest: Decimal,
    /// The payments as runs of equal amounts, and the first five years' sums.
    pub summary: PaymentSummary,
    /// Each payment's due date, when the plan has a first payment date.
    pub due_dates: Vec<Date>,
    /// The caution first, then the assumptions made.
    pub notes: Vec<String>,
    /// The loan has adjustable terms (its figures are on the composite path).
    pub adjustable: bool,
    /// Mortgage insurance paid through the first five years (§1026.37(l)(1)).
    pub early_mortgage_insurance: Decimal,
}

/// Posts a loan (with plan options) by the same steps as [`schedule_with`] and
/// keeps only its scheduled payments and totals: no rows, closed forms,
/// reconciliation or milestones. The figures are those of the full schedule.
///
/// # Errors
/// As [`schedule_with`].
pub fn scheduled_payments(terms: &LoanTerms, options: &PlanOptions) -> Result<ScheduledPayments> {
    terms.check()?;
    let mut notes = opening_notes(terms);
    let plan = post_summary(terms, options)?;
    check_posted_payment(plan.payment, terms.currency)?;
    notes.extend(plan.notes.iter().cloned());
    notes.extend(odd_days_note(&plan, options, terms.currency));
    notes.extend(closing_notes(terms, options, &plan));
    let due_dates = match options.first_payment_date {
        Some(first) => due_dates(first, plan.summary.count, terms.payment_frequency)?,
        None => Vec::new(),
    };
    Ok(ScheduledPayments {
        terms: terms.clone(),
        payment: plan.payment,
        number_of_payments: plan.summary.count,
        final_payment: plan.summary.final_payment,
        total_paid: plan.total_paid,
        total_interest: plan.total_interest,
        prepaid_interest: plan.prepaid_interest,
        early_mortgage_insurance: early_insurance(terms, options, plan.summary.early_count)?,
        summary: plan.summary,
        due_dates,
        notes,
        adjustable: options.adjustable.is_some(),
    })
}

/// Mortgage insurance paid with the first `early` payments.
fn early_insurance(terms: &LoanTerms, options: &PlanOptions, early: u32) -> Result<Decimal> {
    let Some(m) = options.mortgage_insurance else {
        return Ok(Decimal::ZERO);
    };
    let n = match terms.term {
        LoanTerm::Payments(n) => n,
        LoanTerm::Payment(_) => early,
    };
    let balances = if m.payments.is_none() && options.property_value.is_some() {
        path_payments(terms, options, options.rate_path.clone(), true)?.balances
    } else {
        Vec::new()
    };
    let until = insurance_until(&m, options.property_value, &balances, n);
    Ok(m.monthly * Decimal::from(until.min(early)))
}

/// Interest and payments saved by extra payments, against the same loan without them.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Savings {
    /// The interest the extra payments save.
    pub interest_saved: Decimal,
    /// The payments they save.
    pub payments_saved: u32,
}

/// Reconciles a plan's posted balances with its chain of closed forms.
fn reconcile_plan(
    plan: &Plan,
    last_row: Option<&Row>,
    currency: Currency,
) -> Result<Option<Reconciliation>> {
    let Some((largest, at)) = plan.largest_drift else {
        return Ok(if plan.segments.is_empty() {
            Some(Reconciliation {
                largest_drift: Decimal::ZERO,
                at_payment: 0,
                final_payment_drift: Decimal::ZERO,
                bound: Decimal::ZERO,
            })
        } else {
            None
        });
    };
    // The bound: half a minor unit each period, carried forward by each period's factor.
    let half = currency.minor_unit() / Decimal::TWO;
    let mut bound = Decimal::ZERO;
    for s in &plan.segments {
        if s.first_payment > at {
            break;
        }
        // count steps of b ← a·b + ½: b·a^count + ½·Σ_{j<count} a^j, in closed form.
        let count = s.last_payment.min(at) - s.first_payment + 1;
        let a = Decimal::ONE
            .checked_add(s.periodic_rate)
            .or_overflow("the drift bound")?;
        let power = crate::engine::zdomain::pow(a, count)?;
        let sum = if s.periodic_rate.is_zero() {
            Decimal::from(count)
        } else {
            (power - Decimal::ONE)
                .checked_div(s.periodic_rate)
                .or_overflow("the drift bound")?
        };
        bound = bound
            .checked_mul(power)
            .and_then(|b| b.checked_add(half.checked_mul(sum)?))
            .or_overflow("the drift bound")?;
    }
    let final_drift = match (last_row, plan.segments.last()) {
        (Some(last), Some(s)) if last.number == s.last_payment + 1 => {
            let a = Decimal::ONE
                + plan
                    .segments
                    .last()
                    .map_or(Decimal::ZERO, |s| s.periodic_rate);
            let interest_rate_now = a;
            last.payment + last.extra
                - interest_rate_now
                    .checked_mul(s.end_balance)
                    .or_overflow("the final payment")?
        }
        _ => Decimal::ZERO,
    };
    Ok(Some(Reconciliation {
        largest_drift: largest,
        at_payment: at,
        final_payment_drift: final_drift,
        bound,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    use crate::engine::testing::loan_terms as terms;

    #[test]
    fn the_ledger_repays_exactly_and_the_principal_parts_add_up() {
        let s = schedule(&terms("100000", "6", LoanTerm::Payments(360))).unwrap();
        assert_eq!(s.payment, d("599.55"));
        assert_eq!(s.number_of_payments, 360);
        assert_eq!(s.ledger.rows.last().unwrap().balance, d("0.00"));
        let principal: Decimal = s.ledger.rows.iter().map(|r| r.principal).sum();
        assert_eq!(principal, d("100000"));
        let r = s.reconciliation.unwrap();
        assert!(r.largest_drift <= r.bound);
    }

    #[test]
    fn a_zero_rate_schedule_is_level() {
        let s = schedule(&terms("12000", "0", LoanTerm::Payments(48))).unwrap();
        assert!(s
            .ledger
            .rows
            .iter()
            .all(|r| r.payment == d("250") && r.interest.is_zero()));
    }

    #[test]
    fn a_payment_below_the_first_interest_names_the_payment_field() {
        let e = schedule(&terms("100000", "6", LoanTerm::Payment(d("500")))).unwrap_err();
        assert_eq!(e.field, Some("payment"));
    }

    #[test]
    fn a_loan_that_repays_only_with_its_extras_is_still_scheduled() {
        // Found by the property test of lean checks against full schedules: 90
        // years of quarterly payments at 13.93 %, 18 of them interest-only, so
        // the amortizing payment exceeds the interest by less than a cent; with
        // the extra of 72.26 at payment 18 it rounds above the interest, without
        // it to the interest itself. The loan as asked repays.
        let mut t = terms("8702.41", "13.93", LoanTerm::Payments(360));
        t.payment_frequency = crate::engine::rate::Frequency::Quarterly;
        let o = PlanOptions {
            interest_only_payments: 18,
            extras: vec![crate::engine::plan::Extra::Recurring {
                amount: d("72.26"),
                from: 18,
                to: Some(18),
                every: 1,
            }],
            ..PlanOptions::default()
        };
        let s = schedule_with(&t, &o).unwrap();
        assert_eq!(s.ledger.rows.last().unwrap().balance, Decimal::ZERO);
        assert!(s.savings.is_none());
        assert!(s
            .notes
            .iter()
            .any(|n| n.starts_with("Without its extra payments")));
        // The check's lean posting agrees.
        let lean = scheduled_payments(&t, &o).unwrap();
        assert_eq!(lean.number_of_payments, s.number_of_payments);
        // Without the extra, the loan is refused.
        let bare = schedule_with(
            &t,
            &PlanOptions {
                extras: vec![],
                ..o
            },
        );
        assert_eq!(bare.unwrap_err().kind, ErrorKind::NoSolution);
    }

    #[test]
    fn a_plan_without_options_posts_like_the_level_ledger() {
        let t = terms("100000", "6", LoanTerm::Payments(360));
        let p = crate::engine::plan::post(&t, &PlanOptions::default(), true).unwrap();
        let l = schedule(&t).unwrap();
        assert_eq!(p.rows.len(), l.ledger.rows.len());
        assert_eq!(p.total_interest, l.ledger.total_interest);
        assert_eq!(p.segments.len(), 1);
    }
}
