//! The posted plan: the ledger stepped payment by payment as a servicing system
//! would (the only stepping there is), with the summary a disclosure needs, and
//! the closed-form segments solved alongside.

use jiff::civil::Date;
use rust_decimal::Decimal;

use super::options::{
    check, extras_at, last_extra, Extra, OddDaysInterest, PlanOptions, RateChange, RateChangeKeeps,
};
use super::segments::{reconcile, solve_segments, Segment};
use crate::engine::adjustable::terms::RECAST_EVERY;
use crate::engine::calendar::{due_dates, period_before};
use crate::engine::error::{EngineError, Result};
use crate::engine::ledger::{from_minor, to_minor, InterestPoster};
use crate::engine::loan::payment_for_term;
use crate::engine::rate::AnnualRate;
use crate::engine::terms::{LoanTerm, LoanTerms, MAX_PAYMENTS};
use rust_decimal::RoundingStrategy;

/// One posted payment: the ledger's row (the schedule moves the plan's rows into
/// its ledger rather than copying them).
pub type PlanRow = crate::engine::ledger::Row;

/// Consecutive scheduled payments of the same amount.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PaymentRun {
    /// The amount of each payment.
    pub amount: Decimal,
    /// How many in a row.
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
    /// What a disclosure needs, gathered while posting.
    pub summary: PaymentSummary,
    /// The closed-form segments (empty unless solved).
    pub segments: Vec<Segment>,
    /// The regular payment at the start of amortization (after any interest-only period).
    pub payment: Decimal,
    /// Every payment, extra payment and odd-days interest paid.
    pub total_paid: Decimal,
    /// Every period's interest, odd-days interest included.
    pub total_interest: Decimal,
    /// The extra payments.
    pub total_extra: Decimal,
    /// The balloon beyond the regular payment, when one falls due.
    pub balloon: Option<Decimal>,
    /// Odd-days interest (signed: a short first period gives a credit).
    pub odd_days: i64,
    /// The odd-days interest, rounded to the minor unit.
    pub odd_days_interest: Decimal,
    /// The due date one regular period before the first payment, by the rule that
    /// dates the rows: the odd days run from funding to it.
    pub regular_period_start: Option<Date>,
    /// Odd-days interest collected at closing (zero unless prepaid).
    pub prepaid_interest: Decimal,
    /// The largest |posted − closed-form| balance and its payment; `None` when not reconciled.
    pub largest_drift: Option<(Decimal, u32)>,
    /// What the posting assumed or ignored.
    pub notes: Vec<String>,
}

/// The scheduled number of payments: the term, or (given a payment) what a level
/// posting of that payment needs.
fn scheduled_payments(terms: &LoanTerms, i: Decimal) -> Result<u32> {
    match terms.term {
        LoanTerm::Payments(n) => Ok(n),
        LoanTerm::Payment(p) => {
            // The closed form checks that the payment repays at all; the posted
            // ledger, whose rounded interest may need a payment more, then counts.
            crate::engine::loan::term_for_payment(terms.principal, i, p)?;
            let l = crate::engine::ledger::post_level(
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
    // An adjustable rate's changes come from its path.
    let derived;
    let rate_changes: &[RateChange] = match &o.adjustable {
        Some(a) => {
            derived = a
                .rate_changes(terms.rate.percent(), &o.rate_path, n)?
                .into_iter()
                .map(|(at, rate)| RateChange { at, rate })
                .collect::<Vec<_>>();
            &derived
        }
        None => &o.rate_changes,
    };
    let payment_cap = o
        .adjustable
        .as_ref()
        .and_then(|a| a.payment_cap_percent)
        .map(|cap| Decimal::ONE + cap / Decimal::ONE_HUNDRED);
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
    // A loan posted for its totals alone (a check), level or with rate steps
    // that re-amortise (an adjustable rate's path): the steps of the general
    // loop below when only the rate changes over time, without its
    // per-payment tests (the property tests hold both to the same figures).
    let level = !with_segments
        && !keep_rows
        && extras.is_empty()
        && (rate_changes.is_empty() || o.rate_change_keeps == RateChangeKeeps::Term)
        && payment_cap.is_none()
        && o.interest_only_payments == 0
        && o.balloon_after_payments.is_none();
    if level && rate_changes.is_empty() {
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
    } else if level {
        // Runs of one payment between rate changes: the balance is carried,
        // and each run is recorded when the next change (or the end) closes it.
        let start = balance;
        let mut early_balance = None;
        let early_limit = tally.early_limit;
        let mut runs: Vec<(i128, u32)> = Vec::with_capacity(rate_changes.len() + 3);
        let mut run_start = 1u32;
        let mut next = 0usize;
        let mut last = 0;
        while k < limit {
            k += 1;
            if let Some(rc) = rate_changes.get(next).filter(|rc| rc.at == k) {
                next += 1;
                i = rate_of(&rc.rate)?;
                poster = poster_for(&rc.rate, i);
                let new_payment =
                    rounded_payment(terms, from_minor(balance, e), i, &poster, n - (k - 1))?;
                runs.push((pay, k - run_start));
                run_start = k;
                pay = to_minor(new_payment, e)?;
            }
            let interest = poster.interest(balance)?;
            let owed = balance + interest;
            if pay <= interest && owed > pay {
                return Err(never_falls(k, terms, pay));
            }
            if owed <= pay || k == limit {
                last = owed;
                balance = 0;
                break;
            }
            balance = owed - pay;
            if k == early_limit {
                early_balance = Some(balance);
            }
        }
        runs.push((pay, k - run_start));
        // The last payment takes what is owed; odd-days interest goes with the first.
        runs.push((last, 1));
        let mut count = 0u32;
        let (mut early_payments, mut paid) = (odd_on_first, odd_on_first);
        for (amount, n) in &runs {
            let before = count;
            count += n;
            paid += amount * i128::from(*n);
            let early = count
                .min(early_limit)
                .saturating_sub(before.min(early_limit));
            early_payments += amount * i128::from(early);
        }
        // The runs as the general loop records them: each payment's scheduled
        // amount, the first with its odd-days interest.
        let mut first = true;
        for (amount, n) in runs {
            if n == 0 {
                continue;
            }
            if first {
                tally.push_run(amount + odd_on_first, 1);
                tally.push_run(amount, n - 1);
                first = false;
            } else {
                tally.push_run(amount, n);
            }
        }
        tally.count = k;
        tally.final_payment = if k == 1 { last + odd_on_first } else { last };
        tally.early_payments = early_payments;
        tally.early_principal = start - early_balance.unwrap_or(0);
        total_paid = paid;
        total_interest = total_paid - start;
    }
    let mut next_change = 0usize;
    while !level && k < limit {
        k += 1;
        // The rate changes are at increasing payments (checked): the next one
        // is the only one that can fall due.
        let change = match rate_changes.get(next_change) {
            Some(rc) if rc.at == k => {
                next_change += 1;
                Some(rc)
            }
            _ => None,
        };
        // A payment-capped note recasts to the fully amortising payment every
        // RECAST_EVERY payments, the cap set aside.
        let recast = payment_cap.is_some() && k > 1 && (k - 1) % RECAST_EVERY == 0;
        if let Some(rc) = change {
            i = rate_of(&rc.rate)?;
            if rates.last() != Some(&i) {
                rates.push(i);
            }
            poster = poster_for(&rc.rate, i);
        }
        if (change.is_some() || recast) && k > o.interest_only_payments {
            match o.rate_change_keeps {
                RateChangeKeeps::Term => {
                    let full = rounded_payment(
                        terms,
                        from_minor(balance, e).max(Decimal::ZERO),
                        i,
                        &poster,
                        n - (k - 1),
                    )?;
                    payment = match payment_cap {
                        Some(cap) if !recast => {
                            full.min(c.round(payment * cap, RoundingStrategy::ToZero))
                        }
                        _ => full,
                    };
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
        // A capped payment may leave interest unpaid: it is added to the
        // balance (negative amortisation) until the next recast.
        if k > o.interest_only_payments
            && regular <= interest
            && owed > regular
            && payment_cap.is_none()
        {
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::calendar::DayCount;
    use crate::engine::money::InterestRounding;
    use crate::engine::plan::options::RateChange;
    use crate::engine::testing::{d, level_loan as terms};
    use jiff::civil::date;

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
            payment_for_term(d("120000"), d("0.006"), 348)
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
}
