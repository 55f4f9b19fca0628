//! Loans whose terms change over time: dates and an odd first period, extra
//! payments, an interest-only start, a balloon, rate steps, milestones.
//!
//! The posted ledger steps through the payments as a servicing system would
//! (the only stepping there is). The closed form is found per segment: a run of
//! payments over which the rate, the regular payment and the recurring extra stay
//! the same, a lump sum or odd-days interest starting a segment of its own as an
//! impulse. Each segment is solved from the previous segment's closed-form end
//! balance, and the ledger is reconciled with the chain.

use jiff::civil::Date;
use rust_decimal::Decimal;

use super::calendar::{due_dates, period_before, DayCount};
use super::error::{EngineError, OrOverflow, Result};
use super::ledger::{from_minor, to_minor, InterestPoster};
use super::loan::{payment_for_term, MAX_PAYMENTS};
use super::money::Currency;
use super::rate::AnnualRate;
use super::recurrence::{Input, Recurrence, Solution};
use super::schedule::{LoanTerm, LoanTerms};
use super::zdomain::ClosedForm;

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
        amount: Decimal,
        from: u32,
        to: Option<u32>,
        every: u32,
    },
    /// `amount` once, with payment `at`.
    Lump { amount: Decimal, at: u32 },
}

/// A new nominal annual rate from payment `at` on.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RateChange {
    pub at: u32,
    pub rate: AnnualRate,
}

/// Everything a plan adds to level-loan terms.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct PlanOptions {
    pub funding_date: Option<Date>,
    pub first_payment_date: Option<Date>,
    pub day_count: DayCount,
    pub odd_days_interest: OddDaysInterest,
    pub extras: Vec<Extra>,
    pub interest_only_payments: u32,
    pub balloon_after_payments: Option<u32>,
    pub rate_changes: Vec<RateChange>,
    pub rate_change_keeps: RateChangeKeeps,
    pub property_value: Option<Decimal>,
}

/// One posted payment: the ledger's row (the schedule moves the plan's rows into
/// its ledger rather than copying them).
pub type PlanRow = super::ledger::Row;

/// A run of payments solved by one closed form.
#[derive(Debug, Clone)]
pub struct Segment {
    pub first_payment: u32,
    pub last_payment: u32,
    pub periodic_rate: Decimal,
    /// Regular payment plus recurring extra, each period.
    pub outflow: Decimal,
    /// A lump sum or interest credit at the segment's first payment (negative: paid in).
    pub impulse: Decimal,
    pub solution: Solution,
    /// The closed form's balance after the segment's last payment.
    pub end_balance: Decimal,
}

/// A milestone: a payment number and its date.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Milestone {
    pub payment: u32,
    pub date: Option<Date>,
}

/// The milestones of a plan.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Milestones {
    /// The first regular payment whose principal part exceeds its interest part
    /// (the final payoff and a balloon are not regular payments).
    pub principal_exceeds_interest: Option<Milestone>,
    /// Scheduled balance first at or below 80 % of the original value (HPA borrower request).
    pub balance_80_percent: Option<Milestone>,
    /// Scheduled balance first at or below 78 % of the original value (HPA automatic termination).
    pub balance_78_percent: Option<Milestone>,
    /// The midpoint of the amortization period, and the first day of the next month.
    pub midpoint: Option<Milestone>,
    pub final_termination_date: Option<Date>,
    /// Through payment 60 (or the whole term when shorter).
    pub payments_counted: u32,
    pub total_paid_60: Decimal,
    pub principal_paid_60: Decimal,
}

/// Consecutive scheduled payments of the same amount.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PaymentRun {
    pub amount: Decimal,
    pub count: u32,
}

/// What a disclosure needs of a posted plan, gathered while posting (so a check
/// can post without keeping its rows).
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct PaymentSummary {
    /// The scheduled payments in order (odd-days interest included, extra
    /// payments left out), as runs of equal amounts.
    pub runs: Vec<PaymentRun>,
    /// The number of posted payments.
    pub count: u32,
    /// The last payment, extra included.
    pub final_payment: Decimal,
    /// The payments counted in the first five years: 5 × payments a year, or all.
    pub early_count: u32,
    /// The scheduled payments 1 to `early_count`.
    pub early_payments: Decimal,
    /// The principal parts of payments 1 to `early_count` (extras included).
    pub early_principal: Decimal,
}

/// The [`PaymentSummary`] gathered payment by payment, in minor units.
struct Tally {
    runs: Vec<(i128, u32)>,
    count: u32,
    final_payment: i128,
    early_limit: u32,
    early_payments: i128,
    early_principal: i128,
}

impl Tally {
    fn new(early_limit: u32) -> Self {
        Self {
            runs: Vec::with_capacity(4),
            count: 0,
            final_payment: 0,
            early_limit,
            early_payments: 0,
            early_principal: 0,
        }
    }

    /// Payment `k`: its scheduled amount, the extra paid with it, its principal part.
    #[inline]
    fn record(&mut self, k: u32, scheduled: i128, extra: i128, principal_part: i128) {
        match self.runs.last_mut() {
            Some((amount, run)) if *amount == scheduled => *run += 1,
            _ => self.runs.push((scheduled, 1)),
        }
        self.count = k;
        self.final_payment = scheduled + extra;
        if k <= self.early_limit {
            self.early_payments += scheduled;
            self.early_principal += principal_part;
        }
    }

    fn push_run(&mut self, amount: i128, count: u32) {
        match self.runs.last_mut() {
            Some((a, run)) if *a == amount => *run += count,
            _ if count > 0 => self.runs.push((amount, count)),
            _ => {}
        }
    }

    /// A level loan of `count` payments: `pay` each, the first with odd-days
    /// interest `odd` added, the last `last`; `early_principal` the principal
    /// repaid by the first five years' payments when the loan runs longer.
    fn record_level(
        &mut self,
        count: u32,
        pay: i128,
        last: i128,
        odd: i128,
        early_principal: i128,
    ) {
        if count == 1 {
            self.push_run(last + odd, 1);
        } else {
            self.push_run(pay + odd, 1);
            self.push_run(pay, count - 2);
            self.push_run(last, 1);
        }
        self.count = count;
        self.final_payment = if count == 1 { last + odd } else { last };
        self.early_payments = if count <= self.early_limit {
            pay * i128::from(count - 1) + last + odd
        } else {
            pay * i128::from(self.early_limit) + odd
        };
        self.early_principal = early_principal;
    }

    fn finish(self, e: u32) -> PaymentSummary {
        PaymentSummary {
            runs: self
                .runs
                .into_iter()
                .map(|(amount, count)| PaymentRun {
                    amount: from_minor(amount, e),
                    count,
                })
                .collect(),
            count: self.count,
            final_payment: from_minor(self.final_payment, e),
            early_count: self.count.min(self.early_limit),
            early_payments: from_minor(self.early_payments, e),
            early_principal: from_minor(self.early_principal, e),
        }
    }
}

/// The payment (given, or solved from the term) does not exceed payment `k`'s
/// interest: the error names the field that set it.
fn never_falls(k: u32, terms: &LoanTerms, pay: i128) -> EngineError {
    match terms.term {
        LoanTerm::Payment(_) => EngineError::no_solution(
            Some("payment"),
            format!(
                "at payment {k} the payment does not exceed the interest, so the balance never falls"
            ),
        ),
        LoanTerm::Payments(_) => EngineError::no_solution(
            Some("term_payments"),
            format!(
                "over this term the payment would be {}, which does not exceed the interest of payment {k}, so the balance never falls: a shorter term, a larger principal or a lower rate has a solution",
                terms.currency.format(from_minor(pay, terms.currency.minor_units()))
            ),
        ),
    }
}

/// A posted plan with its closed-form segments.
#[derive(Debug, Clone)]
pub struct Plan {
    /// The posted rows (empty when posted by [`post_summary`]).
    pub rows: Vec<PlanRow>,
    pub summary: PaymentSummary,
    pub segments: Vec<Segment>,
    /// The regular payment at the start of amortization (after any interest-only period).
    pub payment: Decimal,
    pub total_paid: Decimal,
    pub total_interest: Decimal,
    pub total_extra: Decimal,
    pub balloon: Option<Decimal>,
    /// Odd-days interest (signed: a short first period gives a credit).
    pub odd_days: i64,
    pub odd_days_interest: Decimal,
    /// The due date one regular period before the first payment, by the rule that
    /// dates the rows: the odd days run from funding to it.
    pub regular_period_start: Option<Date>,
    pub prepaid_interest: Decimal,
    pub largest_drift: Option<(Decimal, u32)>,
    pub notes: Vec<String>,
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
    u64::from(payments) * (1 + o.extras.len() as u64 + o.rate_changes.len() as u64)
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
fn extras_at(extras: &[Extra], k: u32) -> (Decimal, Decimal) {
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
fn last_extra(extras: &[Extra]) -> Option<u32> {
    extras
        .iter()
        .map(|e| match *e {
            Extra::Recurring { from, to, .. } => to.unwrap_or(from),
            Extra::Lump { at, .. } => at,
        })
        .max()
}

/// The scheduled number of payments: the term, or (given a payment) what a level
/// posting of that payment needs.
fn scheduled_payments(terms: &LoanTerms, i: Decimal) -> Result<u32> {
    match terms.term {
        LoanTerm::Payments(n) => Ok(n),
        LoanTerm::Payment(p) => {
            // The closed form checks that the payment repays at all; the posted
            // ledger, whose rounded interest may need a payment more, then counts.
            super::loan::term_for_payment(terms.principal, i, p)?;
            let l = super::ledger::post_level(
                terms.principal,
                i,
                terms.periodic_ratio(),
                p,
                MAX_PAYMENTS,
                terms.currency,
                terms.interest_rounding,
            )?;
            if l.rows.last().is_some_and(|r| r.payment > p) {
                return Err(EngineError::no_solution(
                    Some("payment"),
                    format!("with interest posted to the minor unit, the payment needs more than {MAX_PAYMENTS} payments to repay the loan"),
                ));
            }
            Ok(l.rows.len() as u32)
        }
    }
}

fn rounded_payment(
    terms: &LoanTerms,
    balance: Decimal,
    i: Decimal,
    poster: &InterestPoster,
    n: u32,
) -> Result<Decimal> {
    if n == 1 && balance >= Decimal::ZERO {
        // One payment repays balance·(1 + i): rounded from the exact product
        // the ledger posts (a tie is then a tie), not from the closed form's
        // 28-digit decimal.
        let e = terms.currency.minor_units();
        let b = to_minor(balance, e)?;
        if let Some(interest) = poster.times_rate(b, terms.payment_rounding) {
            return Ok(from_minor(b + interest, e));
        }
    }
    let exact = payment_for_term(balance, i, n)?;
    Ok(terms
        .currency
        .round(exact, terms.payment_rounding.strategy()))
}

/// Posts a plan and solves its segments.
///
/// `with_extras = false` posts the same plan without extra payments (the base for
/// savings, and the initial amortization schedule for the HPA milestones).
///
/// # Errors
/// Inconsistent options, a payment that does not cover the interest, an overflow.
pub fn post(terms: &LoanTerms, o: &PlanOptions, with_extras: bool) -> Result<Plan> {
    post_with(terms, o, with_extras, true)
}

/// As [`post`]; with `reconcile = false` the ledger is not compared with the
/// closed forms (`largest_drift` is `None`), for answers that show no reconciliation.
///
/// # Errors
/// As [`post`].
pub fn post_with(
    terms: &LoanTerms,
    o: &PlanOptions,
    with_extras: bool,
    reconcile_ledger: bool,
) -> Result<Plan> {
    post_inner(terms, o, with_extras, reconcile_ledger, true, true)
}

/// The posted rows and totals alone: no closed-form segments (`segments` is
/// empty) and no reconciliation, for answers that show totals only (comparisons,
/// disclosure checks).
///
/// # Errors
/// As [`post`].
pub fn post_totals(terms: &LoanTerms, o: &PlanOptions) -> Result<Plan> {
    post_inner(terms, o, true, false, false, true)
}

/// As [`post_totals`] without keeping the rows: the plan's totals and its
/// [`PaymentSummary`] (what a disclosure check needs), posted by the same steps.
///
/// # Errors
/// As [`post`].
pub fn post_summary(terms: &LoanTerms, o: &PlanOptions) -> Result<Plan> {
    post_inner(terms, o, true, false, false, false)
}

fn post_inner(
    terms: &LoanTerms,
    o: &PlanOptions,
    with_extras: bool,
    reconcile_ledger: bool,
    with_segments: bool,
    keep_rows: bool,
) -> Result<Plan> {
    terms.check()?;
    let c = terms.currency;
    let e = c.minor_units();
    let compounding = terms.compounding.unwrap_or(terms.payment_frequency);
    let rate_of = |r: &AnnualRate| {
        r.periodic_rate(terms.payment_frequency, compounding)
            .map_err(|e| e.at("rate_changes"))
    };
    // Interest is the balance times the exact ratio the periodic rate rounds,
    // when it is one (a nominal rate over its periods a year).
    let poster_for = |r: &AnnualRate, i: Decimal| {
        InterestPoster::new(i, c, terms.interest_rounding)
            .exactly(r.periodic_ratio(terms.payment_frequency, compounding))
    };
    let i0 = terms.periodic_rate()?;
    let n = scheduled_payments(terms, i0)?;
    check(terms, o, n)?;
    let extras: &[Extra] = if with_extras { &o.extras } else { &[] };
    let mut notes = Vec::new();

    // The odd first period.
    let (mut odd_days, mut odd_interest) = (0i64, Decimal::ZERO);
    let mut regular_period_start = None;
    if let (Some(funding), Some(first)) = (o.funding_date, o.first_payment_date) {
        let regular_start = period_before(first, terms.payment_frequency)?;
        regular_period_start = Some(regular_start);
        odd_days = o.day_count.days(funding, regular_start);
        if odd_days != 0 {
            let exact = terms.principal * terms.rate.fraction() * Decimal::from(odd_days)
                / Decimal::from(o.day_count.basis());
            odd_interest = c.round(exact, terms.interest_rounding.strategy());
        }
    }
    let prepaid = if o.odd_days_interest == OddDaysInterest::Prepaid {
        odd_interest
    } else {
        Decimal::ZERO
    };
    let odd_on_first = if o.odd_days_interest == OddDaysInterest::FirstPayment {
        to_minor(odd_interest, e)?
    } else {
        0
    };

    let mut i = i0;
    let mut poster = poster_for(&terms.rate, i);
    let mut payment = match terms.term {
        LoanTerm::Payment(p) => p,
        LoanTerm::Payments(_) => rounded_payment(
            terms,
            terms.principal,
            i,
            &poster,
            n - o.interest_only_payments,
        )?,
    };
    let amortizing_payment = payment;
    let mut pay = to_minor(payment, e)?;
    let mut balance = to_minor(terms.principal, e)?;
    let mut rows: Vec<PlanRow> = Vec::with_capacity(if keep_rows { n as usize } else { 0 });
    // The summary: runs of equal scheduled payments, the count, the last
    // payment, and the sums of the first five years.
    let mut tally = Tally::new(5 * terms.payment_frequency.per_year());
    // (rate, regular, recurring, lump) of each payment, for the closed-form
    // segments; the rate an index into `rates` (integers compare faster than
    // decimals, row after row).
    let mut inputs: Vec<(u32, i128, i128, i128)> =
        Vec::with_capacity(if with_segments { n as usize } else { 0 });
    let mut rates = vec![i0];
    let mut balloon = None;
    let (mut total_paid, mut total_interest, mut total_extra) = (0i128, 0i128, 0i128);
    let mut limit = n;
    let mut k = 0;
    // A level loan posted for its totals alone (a check): the steps of the
    // general loop below when nothing changes over time, without its per-payment
    // tests (the property tests hold both to the same figures).
    let level = !with_segments
        && !keep_rows
        && extras.is_empty()
        && o.rate_changes.is_empty()
        && o.interest_only_payments == 0
        && o.balloon_after_payments.is_none();
    if level {
        // Only the balance is carried: every payment but the last is `pay`,
        // so the totals and the summary follow from the last payment, the
        // count and the balance after the first five years.
        let start = balance;
        let mut early_balance = 0;
        let mut last = 0;
        let early_limit = tally.early_limit;
        while k < limit {
            k += 1;
            let interest = poster.interest(balance)?;
            let owed = balance + interest;
            if pay <= interest && owed > pay {
                return Err(never_falls(k, terms, pay));
            }
            // The last payment, or one that repays, takes what is owed.
            if owed <= pay || k == limit {
                last = owed;
                balance = 0;
                break;
            }
            balance = owed - pay;
            if k == early_limit {
                early_balance = balance;
            }
        }
        total_paid = pay * i128::from(k - 1) + last + odd_on_first;
        // Σ interest = Σ payments − Σ principal parts, and the principal parts
        // add up to the principal.
        total_interest = total_paid - start;
        tally.record_level(k, pay, last, odd_on_first, start - early_balance);
    }
    while !level && k < limit {
        k += 1;
        if let Some(rc) = o.rate_changes.iter().find(|rc| rc.at == k) {
            i = rate_of(&rc.rate)?;
            if rates.last() != Some(&i) {
                rates.push(i);
            }
            poster = poster_for(&rc.rate, i);
            if k > o.interest_only_payments {
                match o.rate_change_keeps {
                    RateChangeKeeps::Term => {
                        payment = rounded_payment(
                            terms,
                            from_minor(balance, e),
                            i,
                            &poster,
                            n - (k - 1),
                        )?;
                        pay = to_minor(payment, e)?;
                    }
                    RateChangeKeeps::Payment => {
                        if pay <= poster.interest(balance)? {
                            return Err(EngineError::no_solution(
                                Some("rate_change_keeps"),
                                format!("at payment {k} the kept payment no longer covers the interest; keep the term instead"),
                            ));
                        }
                        limit = MAX_PAYMENTS;
                    }
                }
            }
        }
        if o.interest_only_payments > 0 && k == o.interest_only_payments + 1 {
            payment = rounded_payment(
                terms,
                from_minor(balance, e),
                i,
                &poster,
                n - o.interest_only_payments,
            )?;
            if matches!(terms.term, LoanTerm::Payment(p) if p > Decimal::ZERO) {
                payment = match terms.term {
                    LoanTerm::Payment(p) => p,
                    LoanTerm::Payments(_) => payment,
                };
            }
            pay = to_minor(payment, e)?;
        }
        let interest = poster.interest(balance)?;
        let owed = balance + interest;
        let mut regular = if k <= o.interest_only_payments {
            interest
        } else {
            pay
        };
        if k > o.interest_only_payments && regular <= interest && owed > regular {
            return Err(never_falls(k, terms, pay));
        }
        let (recurring, lump) = if extras.is_empty() {
            (0, 0)
        } else {
            let (recurring, lump) = extras_at(extras, k);
            (to_minor(recurring, e)?, to_minor(lump, e)?)
        };
        let mut extra = recurring + lump;
        let last = k == limit || o.balloon_after_payments == Some(k);
        if owed <= regular + extra || last {
            if owed <= regular {
                regular = owed;
                extra = 0;
            } else if !last {
                extra = owed - regular;
            } else {
                // The last scheduled payment (or the balloon) takes what is owed beyond the extra.
                let rest = owed - extra.min(owed);
                if o.balloon_after_payments == Some(k) && rest > regular {
                    balloon = Some(from_minor(rest - regular, e));
                }
                extra = extra.min(owed);
                regular = rest;
            }
        }
        let principal_part = regular + extra - interest;
        balance -= principal_part;
        let odd = if k == 1 { odd_on_first } else { 0 };
        total_paid += regular + extra + odd;
        total_interest += interest + odd;
        total_extra += extra;
        let scheduled = regular + odd;
        tally.record(k, scheduled, extra, principal_part);
        if keep_rows {
            rows.push(PlanRow {
                number: k,
                date: None,
                payment: from_minor(scheduled, e),
                extra: from_minor(extra, e),
                interest: from_minor(interest + odd, e),
                principal: from_minor(principal_part, e),
                balance: from_minor(balance, e),
            });
        }
        if with_segments {
            inputs.push((rates.len() as u32 - 1, regular, recurring, lump));
        }
        if balance == 0 {
            break;
        }
        if k == limit && balance != 0 {
            return Err(EngineError::no_solution(
                Some("rate_change_keeps"),
                format!("the kept payment would need more than {MAX_PAYMENTS} payments"),
            ));
        }
    }
    let count = tally.count;
    if with_extras && last_extra(&o.extras).is_some_and(|last| last > count) {
        notes.push(format!(
            "Extra payments scheduled after payment {count} are ignored: the loan is paid off by then."
        ));
    }
    if let (Some(first), true) = (o.first_payment_date, keep_rows) {
        let dates = due_dates(first, rows.len() as u32, terms.payment_frequency)?;
        for (row, d) in rows.iter_mut().zip(dates) {
            row.date = Some(d);
        }
    }
    // The closed-form segments serve the derivation and the reconciliation; an
    // answer that shows neither (a comparison, a check) skips them.
    let segments = if with_segments {
        solve_segments(terms.principal, &rows, &inputs, &rates, e)?
    } else {
        Vec::new()
    };
    let largest_drift = if reconcile_ledger {
        reconcile(&rows, &segments)?
    } else {
        None
    };
    Ok(Plan {
        rows,
        summary: tally.finish(e),
        segments,
        payment: amortizing_payment,
        total_paid: from_minor(total_paid, e),
        total_interest: from_minor(total_interest, e),
        total_extra: from_minor(total_extra, e),
        balloon,
        odd_days,
        odd_days_interest: odd_interest,
        regular_period_start,
        prepaid_interest: prepaid,
        largest_drift,
        notes,
    })
}

/// Splits the posted payments (all but the final payoff) into closed-form segments.
fn solve_segments(
    principal: Decimal,
    rows: &[PlanRow],
    inputs: &[(u32, i128, i128, i128)],
    rates: &[Decimal],
    e: u32,
) -> Result<Vec<Segment>> {
    let regular_count = rows.len().saturating_sub(1);
    let mut segments: Vec<Segment> = Vec::new();
    let mut start_balance = principal;
    let mut k = 0;
    while k < regular_count {
        let (rate, regular, recurring, lump) = inputs[k];
        let i = rates[rate as usize];
        let outflow = from_minor(regular + recurring, e);
        // Odd-days interest raises payment and interest alike: the balance does not see it.
        let impulse = -from_minor(lump, e);
        let mut end = k + 1;
        while end < regular_count {
            let (i2, r2, rec2, l2) = inputs[end];
            if i2 != rate || r2 != regular || rec2 != recurring || l2 != 0 {
                break;
            }
            end += 1;
        }
        let mut recurrence_inputs = vec![Input::Step { amount: -outflow }];
        if !impulse.is_zero() {
            recurrence_inputs.push(Input::Impulse { amount: impulse });
        }
        let a = Decimal::ONE
            .checked_add(i)
            .or_overflow("the interest factor")?;
        let solution = Recurrence {
            a,
            x0: start_balance,
            inputs: recurrence_inputs,
        }
        .solve()?;
        let len = (end - k) as u32;
        let end_balance = solution.closed_form.eval(len)?;
        segments.push(Segment {
            first_payment: k as u32 + 1,
            last_payment: end as u32,
            periodic_rate: i,
            outflow,
            impulse,
            solution,
            end_balance,
        });
        start_balance = end_balance;
        k = end;
    }
    Ok(segments)
}

/// The largest |posted balance − closed-form balance| and where, or `None` past the decimal range.
fn reconcile(rows: &[PlanRow], segments: &[Segment]) -> Result<Option<(Decimal, u32)>> {
    let mut largest: Option<(Decimal, u32)> = None;
    for s in segments {
        let len = s.last_payment - s.first_payment + 1;
        let offset = s.first_payment as usize;
        let found = match s
            .solution
            .closed_form
            .largest_gap(len, |m| rows[offset + m as usize - 2].balance)
        {
            Ok(v) => v,
            Err(e) if e.kind == super::error::ErrorKind::Overflow => return Ok(None),
            Err(e) => return Err(e),
        };
        if let Some((drift, m)) = found {
            if largest.is_none_or(|(d, _)| drift > d) {
                largest = Some((drift, rows[offset + m as usize - 2].number));
            }
        }
    }
    Ok(largest)
}

impl ClosedForm {
    /// x[k] in binary floating point: for estimates only, never for an answer.
    pub fn estimate(&self, k: u32) -> f64 {
        Estimator::new(self).at(k)
    }
}

/// A closed form's coefficients and poles in binary floating point, converted
/// once for a search that estimates x[k] at many k.
struct Estimator {
    modes: Vec<(Vec<f64>, f64)>,
    impulses: Vec<(u32, f64)>,
}

impl Estimator {
    fn new(cf: &ClosedForm) -> Self {
        use rust_decimal::prelude::ToPrimitive;
        let f = |d: &Decimal| d.to_f64().unwrap_or(0.0);
        Self {
            modes: cf
                .modes
                .iter()
                .map(|m| (m.polynomial.iter().map(f).collect(), f(&m.pole)))
                .collect(),
            impulses: cf.impulses.iter().map(|(j, c)| (*j, f(c))).collect(),
        }
    }

    /// x[k] in binary floating point.
    fn at(&self, k: u32) -> f64 {
        let kf = f64::from(k);
        let mut total = 0.0;
        for (polynomial, pole) in &self.modes {
            let mut poly = 0.0;
            for c in polynomial.iter().rev() {
                poly = poly * kf + c;
            }
            total += poly * pole.powf(kf);
        }
        for (j, c) in &self.impulses {
            if *j == k {
                total += c;
            }
        }
        total
    }
}

/// The first m in lo..=hi with x[m] ≤ threshold (x falling), or `None`.
///
/// A floating-point bisection picks the candidate; the decimal closed form then
/// confirms it exactly at m − 1 and m, moving it until both agree.
///
/// # Errors
/// An overflow.
pub fn first_at_or_below(
    cf: &ClosedForm,
    threshold: Decimal,
    lo: u32,
    hi: u32,
) -> Result<Option<u32>> {
    use rust_decimal::prelude::ToPrimitive;
    if lo > hi || cf.eval(hi)? > threshold {
        return Ok(None);
    }
    let t = threshold.to_f64().unwrap_or(0.0);
    let estimator = Estimator::new(cf);
    let (mut a, mut b) = (lo, hi);
    while a < b {
        let mid = a + (b - a) / 2;
        if estimator.at(mid) <= t {
            b = mid;
        } else {
            a = mid + 1;
        }
    }
    let mut m = a;
    for _ in 0..(hi - lo + 2) {
        if cf.eval(m)? > threshold {
            m += 1;
        } else if m > lo && cf.eval(m - 1)? <= threshold {
            m -= 1;
        } else {
            return Ok(Some(m));
        }
    }
    Ok(Some(m))
}

/// The milestones of a posted plan; `base` is the same plan without extras (the
/// initial amortization schedule of the Homeowners Protection Act).
///
/// # Errors
/// An overflow.
pub fn milestones(
    plan: &Plan,
    base: &Plan,
    property_value: Option<Decimal>,
    currency: Currency,
) -> Result<(Milestones, Vec<String>)> {
    let mut notes = Vec::new();
    let mut out = Milestones::default();
    let at = |rows: &[PlanRow], k: u32| Milestone {
        payment: k,
        date: rows.get(k as usize - 1).and_then(|r| r.date),
    };
    // The principal part first exceeds the interest part where x[k−1] < P/(2i).
    'segments: for s in &plan.segments {
        if s.periodic_rate.is_zero() {
            out.principal_exceeds_interest = Some(at(&plan.rows, s.first_payment));
            break;
        }
        let regular = plan.rows[s.first_payment as usize - 1].payment
            - if s.first_payment == 1 {
                plan.rows[0].interest - base.rows[0].interest.min(plan.rows[0].interest)
            } else {
                Decimal::ZERO
            };
        let threshold = regular / (Decimal::TWO * s.periodic_rate);
        let len = s.last_payment - s.first_payment + 1;
        if let Some(m) = first_at_or_below(&s.solution.closed_form, threshold, 0, len - 1)? {
            // Confirm on the posted rows, whose interest is rounded.
            let mut k = s.first_payment + m;
            while (k as usize) <= plan.rows.len() {
                let r = &plan.rows[k as usize - 1];
                if r.principal - r.extra > r.interest {
                    out.principal_exceeds_interest = Some(at(&plan.rows, k));
                    break 'segments;
                }
                k += 1;
            }
        }
    }
    if let Some(v) = property_value {
        let principal = base
            .rows
            .first()
            .map_or(Decimal::ZERO, |r| r.balance + r.principal);
        if v < principal {
            notes.push("The property value is below the principal: the balance starts above 100 % of the original value.".into());
        }
        let find = |share: Decimal| -> Result<Option<Milestone>> {
            let threshold = currency.round(
                v * share,
                rust_decimal::RoundingStrategy::MidpointAwayFromZero,
            );
            for s in &base.segments {
                let len = s.last_payment - s.first_payment + 1;
                if let Some(m) = first_at_or_below(&s.solution.closed_form, threshold, 1, len)? {
                    let mut k = s.first_payment + m - 1;
                    // Confirm on the posted initial schedule.
                    while k > 1 && base.rows[k as usize - 2].balance <= threshold {
                        k -= 1;
                    }
                    while (k as usize) < base.rows.len()
                        && base.rows[k as usize - 1].balance > threshold
                    {
                        k += 1;
                    }
                    return Ok(Some(at(&base.rows, k)));
                }
            }
            Ok(base
                .rows
                .iter()
                .find(|r| r.balance <= threshold)
                .map(|r| at(&base.rows, r.number)))
        };
        out.balance_80_percent = find(Decimal::new(80, 2))?;
        out.balance_78_percent = find(Decimal::new(78, 2))?;
        let n = base.rows.len() as u32;
        let mid = n.div_ceil(2);
        out.midpoint = Some(at(&base.rows, mid));
        out.final_termination_date = out
            .midpoint
            .and_then(|m| m.date)
            .and_then(first_of_next_month);
        notes.push("Mortgage-insurance points follow the Homeowners Protection Act of 1998 (12 U.S.C. 4901–4902) on the initial amortization schedule; lender and investor rules may differ, and cancellation has conditions (payment history, value).".into());
    }
    let counted = plan.rows.len().min(60);
    out.payments_counted = counted as u32;
    out.total_paid_60 = plan.rows[..counted]
        .iter()
        .map(|r| r.payment + r.extra)
        .sum();
    out.principal_paid_60 = plan.rows[..counted].iter().map(|r| r.principal).sum();
    Ok((out, notes))
}

fn first_of_next_month(d: Date) -> Option<Date> {
    let (y, m) = if d.month() == 12 {
        (d.year().checked_add(1)?, 1)
    } else {
        (d.year(), d.month() + 1)
    };
    Date::new(y, m, 1).ok()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::money::{InterestRounding, PaymentRounding};
    use crate::engine::rate::Frequency;
    use jiff::civil::date;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    fn terms(principal: &str, percent: &str, n: u32) -> LoanTerms {
        LoanTerms {
            principal: d(principal),
            currency: Currency::USD,
            rate: AnnualRate::from_percent(d(percent)).unwrap(),
            payment_frequency: Frequency::Monthly,
            compounding: None,
            term: LoanTerm::Payments(n),
            payment_rounding: PaymentRounding::Nearest,
            interest_rounding: InterestRounding::HalfUp,
        }
    }

    fn total_principal(p: &Plan) -> Decimal {
        p.rows.iter().map(|r| r.principal).sum()
    }

    #[test]
    fn an_exact_half_cent_of_interest_is_a_tie_whatever_the_rate_decimal() {
        // 249,960 at 3.25 % a year, monthly: the first interest is
        // 249960 × 0.0325/12 = 676.975 exactly (by hand). The decimal periodic
        // rate 0.0325/12 = 0.00270833… is rounded down at 28 digits; the tie
        // must still round half up (676.98), or to the even cent (676.98, 7 odd).
        let mut terms = terms("249960", "3.25", 360);
        let p = post(&terms, &PlanOptions::default(), true).unwrap();
        assert_eq!(p.rows[0].interest, d("676.98"));
        terms.interest_rounding = InterestRounding::HalfEven;
        let p = post(&terms, &PlanOptions::default(), true).unwrap();
        assert_eq!(p.rows[0].interest, d("676.98"));
        // 1018.80 at 5 %: 4.245 exactly, whose even cent is 4.24; the decimal
        // 0.05/12 is rounded up at 28 digits.
        terms.principal = d("1018.80");
        terms.rate = AnnualRate::from_percent(d("5")).unwrap();
        terms.term = LoanTerm::Payments(12);
        let p = post(&terms, &PlanOptions::default(), true).unwrap();
        assert_eq!(p.rows[0].interest, d("4.24"));
        // One payment repays 249960 × (1 + 0.0325/12) = 250636.975: 250636.98.
        terms.principal = d("249960");
        terms.rate = AnnualRate::from_percent(d("3.25")).unwrap();
        terms.term = LoanTerm::Payments(1);
        terms.interest_rounding = InterestRounding::HalfUp;
        let p = post(&terms, &PlanOptions::default(), true).unwrap();
        assert_eq!(p.payment, d("250636.98"));
        assert_eq!(p.rows[0].payment, d("250636.98"));
    }

    #[test]
    fn a_plan_without_options_posts_like_the_level_ledger() {
        let t = terms("100000", "6", 360);
        let p = post(&t, &PlanOptions::default(), true).unwrap();
        let l = super::super::schedule::schedule(&t).unwrap();
        assert_eq!(p.rows.len(), l.ledger.rows.len());
        assert_eq!(p.total_interest, l.ledger.total_interest);
        assert_eq!(p.segments.len(), 1);
    }

    #[test]
    fn extra_payments_shorten_the_loan_and_save_interest() {
        let t = terms("250000", "6.5", 360);
        let o = PlanOptions {
            extras: vec![
                Extra::Recurring {
                    amount: d("150"),
                    from: 13,
                    to: None,
                    every: 1,
                },
                Extra::Lump {
                    amount: d("5000"),
                    at: 36,
                },
            ],
            ..PlanOptions::default()
        };
        let with = post(&t, &o, true).unwrap();
        let without = post(&t, &o, false).unwrap();
        assert!(with.rows.len() < without.rows.len());
        assert!(with.total_interest < without.total_interest);
        assert_eq!(total_principal(&with), d("250000"));
        assert_eq!(with.rows.last().unwrap().balance, Decimal::ZERO);
        // Segments: 1–12, 13–35, then 36 on with the lump as an impulse at its start.
        assert_eq!(with.segments.len(), 3);
        assert_eq!(with.segments[2].first_payment, 36);
        assert_eq!(with.segments[2].impulse, d("-5000"));
        assert!(with.largest_drift.unwrap().0 < d("1"));
    }

    #[test]
    fn interest_only_then_amortizing() {
        let t = terms("120000", "7.2", 360);
        let o = PlanOptions {
            interest_only_payments: 12,
            ..PlanOptions::default()
        };
        let p = post(&t, &o, true).unwrap();
        assert!(p.rows[..12]
            .iter()
            .all(|r| r.payment == d("720.00") && r.principal.is_zero()));
        assert_eq!(p.rows.len(), 360);
        assert_eq!(
            p.payment,
            super::super::loan::payment_for_term(d("120000"), d("0.006"), 348)
                .unwrap()
                .round_dp(2)
        );
        // The interest-only segment's closed form is flat: the pole at a cancels.
        assert!(p.segments[0].solution.cancelled.contains(&d("1.006")));
    }

    #[test]
    fn a_balloon_falls_due_with_the_last_payment() {
        let t = terms("500000", "7", 300);
        let o = PlanOptions {
            balloon_after_payments: Some(84),
            ..PlanOptions::default()
        };
        let p = post(&t, &o, true).unwrap();
        assert_eq!(p.rows.len(), 84);
        let balloon = p.balloon.unwrap();
        assert!(balloon > d("400000"));
        assert_eq!(p.rows[83].payment, p.payment + balloon);
        assert_eq!(p.rows[83].balance, Decimal::ZERO);
    }

    #[test]
    fn a_rate_step_re_amortizes_or_keeps_the_payment() {
        let t = terms("200000", "5", 360);
        let step = vec![RateChange {
            at: 61,
            rate: AnnualRate::from_percent(d("7")).unwrap(),
        }];
        let keep_term = post(
            &t,
            &PlanOptions {
                rate_changes: step.clone(),
                ..PlanOptions::default()
            },
            true,
        )
        .unwrap();
        assert_eq!(keep_term.rows.len(), 360);
        assert!(keep_term.rows[60].payment > keep_term.rows[59].payment);
        let keep_payment = post(
            &t,
            &PlanOptions {
                rate_changes: step,
                rate_change_keeps: RateChangeKeeps::Payment,
                ..PlanOptions::default()
            },
            true,
        )
        .unwrap();
        assert!(keep_payment.rows.len() > 360);
        assert_eq!(keep_payment.rows[60].payment, keep_payment.rows[59].payment);
    }

    #[test]
    fn odd_days_interest_by_day_count() {
        // Funded 2027-01-10, first payment 2027-03-01: the regular period starts 2027-02-01,
        // so 22 odd days (actual) or 21 (30/360: 30·1 + 1 − 10). Interest on 100,000 at 6 %,
        // worked by hand: 22/365 → 361.64; 22/360 → 366.67; 21/360 → 350.00.
        let t = terms("100000", "6", 360);
        let mut o = PlanOptions {
            funding_date: Some(date(2027, 1, 10)),
            first_payment_date: Some(date(2027, 3, 1)),
            ..PlanOptions::default()
        };
        for (count, days, interest) in [
            (DayCount::Actual365, 22, "361.64"),
            (DayCount::Actual360, 22, "366.67"),
            (DayCount::Thirty360BondBasis, 21, "350.00"),
        ] {
            o.day_count = count;
            let p = post(&t, &o, true).unwrap();
            assert_eq!(p.odd_days, days);
            assert_eq!(p.odd_days_interest, d(interest));
            assert_eq!(p.rows[0].payment, p.payment + d(interest));
            assert_eq!(p.rows[0].date, Some(date(2027, 3, 1)));
            assert_eq!(p.rows[359].date, Some(date(2057, 2, 1)));
        }
        o.odd_days_interest = OddDaysInterest::Prepaid;
        let p = post(&t, &o, true).unwrap();
        assert_eq!(p.rows[0].payment, p.payment);
        assert_eq!(p.prepaid_interest, d("350.00"));
    }

    #[test]
    fn inconsistent_options_name_their_fields() {
        let t = terms("100000", "6", 360);
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
            assert_eq!(post(&t, &o, true).unwrap_err().field, Some(field));
        }
    }

    #[test]
    fn hpa_milestones_on_the_initial_schedule() {
        // 12 U.S.C. 4901–4902: 80 % (request) and 78 % (automatic) of the original value on the
        // initial amortization schedule; final termination the first day of the month after the
        // midpoint. Property 250,000, loan 225,000 (90 %): thresholds 200,000 and 195,000.
        let t = terms("225000", "6", 360);
        let o = PlanOptions {
            first_payment_date: Some(date(2027, 1, 1)),
            property_value: Some(d("250000")),
            ..PlanOptions::default()
        };
        let p = post(&t, &o, true).unwrap();
        let base = post(&t, &o, false).unwrap();
        let (m, _) = milestones(&p, &base, o.property_value, Currency::USD).unwrap();
        let k80 = m.balance_80_percent.unwrap().payment as usize;
        assert!(p.rows[k80 - 1].balance <= d("200000") && p.rows[k80 - 2].balance > d("200000"));
        let k78 = m.balance_78_percent.unwrap().payment as usize;
        assert!(p.rows[k78 - 1].balance <= d("195000") && p.rows[k78 - 2].balance > d("195000"));
        assert_eq!(m.midpoint.unwrap().payment, 180);
        assert_eq!(m.midpoint.unwrap().date, Some(date(2041, 12, 1)));
        assert_eq!(m.final_termination_date, Some(date(2042, 1, 1)));
        let kp = m.principal_exceeds_interest.unwrap().payment as usize;
        assert!(p.rows[kp - 1].principal > p.rows[kp - 1].interest);
        assert!(p.rows[kp - 2].principal <= p.rows[kp - 2].interest);
        assert_eq!(m.payments_counted, 60);
    }
}
