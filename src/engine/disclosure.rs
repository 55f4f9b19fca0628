//! Loan disclosure figures and quote checks, over the posted schedule of a
//! level-payment loan (Regulation Z, 12 CFR 1026).
//!
//! - Amount financed = principal − prepaid finance charges (§1026.18(b)).
//! - Total of payments = the sum of the scheduled (posted) payments (§1026.18(h)).
//! - Finance charge = total of payments − amount financed: the scheduled
//!   interest plus the prepaid finance charges.
//! - APR by the actuarial method of Appendix J ([`super::apr::solve_apr`]): the
//!   amount financed advanced at consummation, the posted payments one payment
//!   period apart from one period after it, the unit-period the payment period.
//!   Equal payments are passed as one run, so each iteration is O(1).
//! - APR tolerance: 1/8 point in a regular transaction, 1/4 point in an
//!   irregular one (§1026.22(a)(2)–(3)).
//! - Finance-charge tolerance (§1026.18(d)): mortgages, understated by no more
//!   than $100 (overstating is accurate); other credit, within $5 when the
//!   amount financed is at most $1,000, else $10.
//! - Total interest percentage (§1026.37(l)(3)): total interest over the loan
//!   term ÷ the loan amount × 100, every payment on time, no extra payments.
//! - In 5 years (§1026.37(l)(1)): total paid and principal paid through the 60th
//!   month after the first payment (the whole term when shorter).
//! - Rounding on the form (§1026.37(o)(4)): dollars to whole dollars, percentages
//!   to three decimals with trailing zeros dropped.
//!
//! Every figure is computed from the posted ledger in exact decimal arithmetic;
//! rounding for the form is applied only to the figures shown, never to their
//! components.

use rust_decimal::{Decimal, MathematicalOps, RoundingStrategy};

use super::apr::{apr_from_dates, solve_apr, AprResult, DatedFlow, UnitFlow, UnitPeriod};
use super::error::{EngineError, ErrorKind, OrOverflow, Result};
use super::loan::rate_for_payment;
use super::money::Currency;
use super::plan::{PaymentRun, PlanOptions};
use super::rate::{nth_root, Frequency};
use super::schedule::{scheduled_payments, LoanTerm, LoanTerms, ScheduledPayments, CAUTION};

/// The sentence every check carries after the caution.
pub const TOOL_NOT_OPINION: &str = "This check is a tool, not a compliance opinion.";

/// 1/8 of one percentage point (§1026.22(a)(2)).
pub const REGULAR_APR_TOLERANCE: Decimal = Decimal::from_parts(125, 0, 0, false, 3);
/// 1/4 of one percentage point (§1026.22(a)(3)).
pub const IRREGULAR_APR_TOLERANCE: Decimal = Decimal::from_parts(25, 0, 0, false, 2);

/// A prepaid finance charge (points, an origination fee), by name.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PrepaidFinanceCharge {
    pub name: String,
    pub amount: Decimal,
}

/// The unit-period of Appendix J that equals a payment period.
pub fn unit_period_of(frequency: Frequency) -> UnitPeriod {
    match frequency {
        Frequency::Annual => UnitPeriod::Year,
        Frequency::Semiannual => UnitPeriod::Months(6),
        Frequency::Quarterly => UnitPeriod::Quarter,
        Frequency::Monthly => UnitPeriod::Month,
        Frequency::Semimonthly => UnitPeriod::Semimonth,
        Frequency::Biweekly => UnitPeriod::Weeks(2),
        Frequency::Weekly => UnitPeriod::Week,
        Frequency::Daily => UnitPeriod::Day,
    }
}

/// Whether a transaction is regular for the APR tolerance, and why.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AprTolerance {
    pub regular: bool,
    /// 0.125 (regular) or 0.25 (irregular) percentage point.
    pub points: Decimal,
    pub reason: String,
}

/// Classifies a transaction by §1026.22(a)(3): irregular when it has multiple
/// advances, irregular payment periods, or irregular payment amounts; an
/// irregular first or final payment (and an irregular first period, which the
/// caller folds into `regular_periods`) does not make it irregular.
///
/// `payments` are the payment amounts in order, as runs of equal amounts.
pub fn apr_tolerance(
    advances: usize,
    regular_periods: bool,
    payments: &[PaymentRun],
    currency: Currency,
) -> AprTolerance {
    let irregular = |reason: String| AprTolerance {
        regular: false,
        points: IRREGULAR_APR_TOLERANCE,
        reason,
    };
    if advances > 1 {
        return irregular(format!(
            "Irregular transaction (§1026.22(a)(3)): it has {advances} advances."
        ));
    }
    if !regular_periods {
        return irregular(
            "Irregular transaction (§1026.22(a)(3)): its payment periods are irregular.".into(),
        );
    }
    // The payments between the first and the final one, as runs.
    let total: u32 = payments.iter().map(|r| r.count).sum();
    let mut middle: Vec<PaymentRun> = Vec::new();
    if total > 2 {
        let last = payments.len() - 1;
        for (index, run) in payments.iter().enumerate() {
            let count = run.count - u32::from(index == 0) - u32::from(index == last);
            if count > 0 {
                middle.push(PaymentRun {
                    amount: run.amount,
                    count,
                });
            }
        }
    }
    if let [first, other, ..] = middle.as_slice() {
        return irregular(format!(
            "Irregular transaction (§1026.22(a)(3)): its payment amounts are irregular ({} and {}).",
            currency.format(first.amount),
            currency.format(other.amount)
        ));
    }
    let mut reason = String::from(
        "Regular transaction (§1026.22(a)(2)): a single advance, regular payment periods and equal payment amounts",
    );
    let level = middle.first().map(|r| r.amount);
    let mut exceptions = Vec::new();
    if let (Some(level), Some(first)) = (level, payments.first()) {
        if first.amount != level {
            exceptions.push(format!(
                "the first payment of {}",
                currency.format(first.amount)
            ));
        }
    }
    if let (Some(level), Some(last)) = (level, payments.last()) {
        if last.amount != level {
            exceptions.push(format!(
                "the final payment of {}",
                currency.format(last.amount)
            ));
        }
    }
    if exceptions.is_empty() {
        reason.push('.');
    } else {
        reason.push_str(&format!(
            "; {} differs, and an irregular first or final payment does not make a transaction irregular (§1026.22(a)(3)).",
            exceptions.join(" and ")
        ));
    }
    AprTolerance {
        regular: true,
        points: REGULAR_APR_TOLERANCE,
        reason,
    }
}

/// A quoted APR against the computed one.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AprCheck {
    pub quoted_percent: Decimal,
    /// Quoted − computed, in percentage points (the computed APR unrounded).
    pub difference_points: Decimal,
    /// |difference| ≤ tolerance.
    pub within_tolerance: bool,
}

/// Compares a quoted APR with the computed one: accurate when within the
/// tolerance above or below (§1026.22(a)(2)–(3)); the boundary itself is within.
pub fn check_apr(
    quoted_percent: Decimal,
    computed_percent: Decimal,
    tolerance: Decimal,
) -> AprCheck {
    let difference_points = quoted_percent - computed_percent;
    AprCheck {
        quoted_percent,
        difference_points,
        within_tolerance: difference_points.abs() <= tolerance,
    }
}

/// Which rule of §1026.18(d) sets the finance-charge tolerance.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FinanceChargeRule {
    /// (d)(1): a mortgage loan: understated by no more than $100, or overstated.
    Mortgage,
    /// (d)(2): other credit with an amount financed of $1,000 or less: within $5.
    OtherSmall,
    /// (d)(2): other credit with an amount financed over $1,000: within $10.
    OtherLarge,
}

impl FinanceChargeRule {
    /// The rule for a loan.
    pub fn of(mortgage: bool, amount_financed: Decimal) -> Self {
        if mortgage {
            FinanceChargeRule::Mortgage
        } else if amount_financed <= Decimal::ONE_THOUSAND {
            FinanceChargeRule::OtherSmall
        } else {
            FinanceChargeRule::OtherLarge
        }
    }

    /// The tolerance in dollars.
    pub fn tolerance(self) -> Decimal {
        match self {
            FinanceChargeRule::Mortgage => Decimal::ONE_HUNDRED,
            FinanceChargeRule::OtherSmall => Decimal::from(5),
            FinanceChargeRule::OtherLarge => Decimal::TEN,
        }
    }

    /// The rule in words, with its citation.
    pub fn text(self) -> &'static str {
        match self {
            FinanceChargeRule::Mortgage => {
                "§1026.18(d)(1), a mortgage loan: accurate if understated by no more than $100, or overstated"
            }
            FinanceChargeRule::OtherSmall => {
                "§1026.18(d)(2), other credit with an amount financed of $1,000 or less: accurate within $5 above or below"
            }
            FinanceChargeRule::OtherLarge => {
                "§1026.18(d)(2), other credit with an amount financed over $1,000: accurate within $10 above or below"
            }
        }
    }
}

/// A quoted finance charge against the computed one.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FinanceChargeCheck {
    pub quoted: Decimal,
    /// Quoted − computed: negative when the quote understates the finance charge.
    pub difference: Decimal,
    pub rule: FinanceChargeRule,
    pub tolerance: Decimal,
    pub within_tolerance: bool,
}

/// Compares a quoted finance charge with the computed one (§1026.18(d)).
pub fn check_finance_charge(
    quoted: Decimal,
    computed: Decimal,
    amount_financed: Decimal,
    mortgage: bool,
) -> FinanceChargeCheck {
    let rule = FinanceChargeRule::of(mortgage, amount_financed);
    let tolerance = rule.tolerance();
    let difference = quoted - computed;
    let within_tolerance = match rule {
        FinanceChargeRule::Mortgage => difference >= -tolerance,
        FinanceChargeRule::OtherSmall | FinanceChargeRule::OtherLarge => {
            difference.abs() <= tolerance
        }
    };
    FinanceChargeCheck {
        quoted,
        difference,
        rule,
        tolerance,
        within_tolerance,
    }
}

/// A percentage as a disclosure form shows it (§1026.37(o)(4)): rounded to three
/// decimals (halves up: common practice, no source), trailing zeros dropped
/// (7.000 → 7, 2.4999 → 2.5).
pub fn form_percent(percent: Decimal) -> Decimal {
    percent
        .round_dp_with_strategy(3, RoundingStrategy::MidpointAwayFromZero)
        .normalize()
}

/// A dollar amount as a disclosure form shows it (§1026.37(o)(4)): to the
/// nearest whole dollar (halves up: common practice, no source).
pub fn form_dollars(amount: Decimal) -> Decimal {
    let mut r = amount.round_dp_with_strategy(0, RoundingStrategy::MidpointAwayFromZero);
    r.rescale(0);
    r
}

/// What is paid through the 60th month after the first payment (§1026.37(l)(1)).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InFiveYears {
    /// The last payment counted: 60 monthly payments, or the whole term when
    /// shorter. For other frequencies, 5 × payments a year (130 biweekly, 20
    /// quarterly): Residue's reading of "through the end of the 60th month".
    pub through_payment: u32,
    /// The scheduled payments 1 to `through_payment`.
    pub payments: Decimal,
    /// The prepaid finance charges, counted as loan costs paid at consummation.
    pub loan_costs: Decimal,
    /// payments + loan costs.
    pub total_paid: Decimal,
    /// The principal parts of payments 1 to `through_payment`.
    pub principal_paid: Decimal,
}

/// The disclosure figures of a posted loan.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LoanDisclosure {
    pub prepaid_finance_charges: Vec<PrepaidFinanceCharge>,
    pub prepaid_total: Decimal,
    pub amount_financed: Decimal,
    pub total_of_payments: Decimal,
    pub finance_charge: Decimal,
    /// The scheduled interest of the posted ledger.
    pub total_interest: Decimal,
    /// Unrounded: total interest ÷ principal × 100.
    pub total_interest_percentage: Decimal,
    pub apr: AprResult,
    pub unit_period: UnitPeriod,
    pub apr_tolerance: AprTolerance,
    pub in_five_years: InFiveYears,
    /// Prepaid interest of an odd first period collected at closing: a prepaid
    /// finance charge (listed among `prepaid_finance_charges`), counted in the
    /// total interest percentage.
    pub prepaid_interest: Decimal,
    /// When the APR was found from the funding date and the payments' due dates
    /// (Appendix J (b)(4) then chose the unit-period), the funding date.
    pub dated_from: Option<jiff::civil::Date>,
}

/// Runs of equal payments as unit-period flows one unit-period apart, the first
/// at period `first_period`: a level loan becomes one run (and a final payment).
pub fn unit_runs(runs: &[PaymentRun], first_period: u32) -> Vec<UnitFlow> {
    let mut period = first_period;
    runs.iter()
        .map(|run| {
            let flow = UnitFlow::run(run.amount, period, Decimal::ZERO, run.count);
            period += run.count;
            flow
        })
        .collect()
}

/// The disclosure figures of a posted schedule with these prepaid finance charges.
///
/// # Errors
/// A negative charge, charges that leave no amount financed, or an error of
/// the APR solver.
pub fn disclose(s: &ScheduledPayments, prepaid: &[PrepaidFinanceCharge]) -> Result<LoanDisclosure> {
    disclose_dated(s, prepaid, None)
}

/// The name under which prepaid interest is listed among the prepaid finance charges.
pub const PREPAID_INTEREST: &str = "prepaid interest (odd first period)";

/// As [`disclose`]; with a `funding_date` and a schedule whose payments have due
/// dates, the APR is found from those dates: the amount financed advanced on the
/// funding date, each posted payment on its due date, the unit-period chosen by
/// Appendix J (b)(4) and an odd first period counted in unit-periods and days.
/// Prepaid interest collected at closing joins the prepaid finance charges.
///
/// # Errors
/// As [`disclose`], or dates the APR cannot be placed on.
pub fn disclose_dated(
    s: &ScheduledPayments,
    prepaid: &[PrepaidFinanceCharge],
    funding_date: Option<jiff::civil::Date>,
) -> Result<LoanDisclosure> {
    let field = "prepaid_finance_charges";
    let currency = s.terms.currency;
    let prepaid_interest = s.prepaid_interest.max(Decimal::ZERO);
    let mut prepaid: Vec<PrepaidFinanceCharge> = prepaid.to_vec();
    if !prepaid_interest.is_zero() {
        prepaid.push(PrepaidFinanceCharge {
            name: PREPAID_INTEREST.into(),
            amount: prepaid_interest,
        });
    }
    let mut prepaid_total = Decimal::ZERO;
    for charge in &prepaid {
        if charge.amount.is_sign_negative() && !charge.amount.is_zero() {
            return Err(EngineError::out_of_range(
                field,
                "a prepaid finance charge cannot be negative",
            ));
        }
        prepaid_total = prepaid_total
            .checked_add(charge.amount)
            .or_overflow("the prepaid finance charges")?;
    }
    let principal = s.terms.principal;
    let amount_financed = principal - prepaid_total;
    if amount_financed <= Decimal::ZERO {
        return Err(EngineError::out_of_range(
            field,
            format!(
                "the prepaid finance charges ({}) must total less than the principal ({}), or nothing is financed",
                currency.format(prepaid_total),
                currency.format(principal)
            ),
        ));
    }
    let runs = &s.summary.runs;
    let total_of_payments = s.total_paid;
    let finance_charge = total_of_payments - amount_financed;
    let total_interest = s.total_interest;
    // §1026.37(l)(3) and its commentary: prepaid interest counts as interest.
    let total_interest_percentage = (total_interest + prepaid_interest)
        .checked_mul(Decimal::ONE_HUNDRED)
        .and_then(|x| x.checked_div(principal))
        .or_overflow("the total interest percentage")?;
    let dated = match funding_date {
        Some(start) if s.due_dates.len() == s.number_of_payments as usize => Some(start),
        _ => None,
    };
    let (apr, unit_period) = match dated {
        Some(start) => {
            let amounts = runs
                .iter()
                .flat_map(|r| std::iter::repeat_n(r.amount, r.count as usize));
            let payments: Vec<DatedFlow> = amounts
                .zip(&s.due_dates)
                .map(|(amount, date)| DatedFlow {
                    amount,
                    date: *date,
                })
                .collect();
            let found = apr_from_dates(
                &[DatedFlow {
                    amount: amount_financed,
                    date: start,
                }],
                &payments,
            )
            .map_err(|e| EngineError {
                field: Some("funding_date"),
                ..e
            })?;
            (found.apr, found.unit_period)
        }
        None => {
            let unit_period = unit_period_of(s.terms.payment_frequency);
            let apr = solve_apr(
                &[UnitFlow::single(amount_financed, 0, Decimal::ZERO)],
                &unit_runs(runs, 1),
                unit_period,
            )?;
            (apr, unit_period)
        }
    };
    let apr_tolerance = apr_tolerance(1, true, runs, currency);
    let through = s.summary.early_count;
    let payments = s.summary.early_payments;
    let principal_paid = s.summary.early_principal;
    // Prepaid interest is a closing cost of its own kind (a prepaid item), not a
    // loan cost of §1026.37(l)(1)(i).
    let loan_costs = prepaid_total - prepaid_interest;
    Ok(LoanDisclosure {
        prepaid_interest,
        dated_from: dated,
        prepaid_finance_charges: prepaid,
        prepaid_total,
        amount_financed,
        total_of_payments,
        finance_charge,
        total_interest,
        total_interest_percentage,
        apr,
        unit_period,
        apr_tolerance,
        in_five_years: InFiveYears {
            through_payment: through,
            payments,
            loan_costs,
            total_paid: payments + loan_costs,
            principal_paid,
        },
    })
}

/// The nominal annual rate, in percent, at which `n` payments of `payment`
/// repay `principal`: the periodic rate i from [`rate_for_payment`] (the closed
/// form, root-found), then j = i × p when interest compounds at the payment
/// frequency, else the inverse of the equivalent rate i = (1 + j/m)^(m/p) − 1:
/// j = m·[(1 + i)^(p/m) − 1], the power taken as (ᵛ√(1 + i))^u with p/m = u/v
/// in lowest terms.
///
/// # Errors
/// Payments totalling less than the principal (no rate of 0 % or more), `n`
/// out of range, or an overflow.
pub fn implied_annual_rate_percent(
    principal: Decimal,
    payment: Decimal,
    n: u32,
    payment_frequency: Frequency,
    compounding: Option<Frequency>,
) -> Result<Decimal> {
    let i = rate_for_payment(principal, payment, n)?;
    let p = payment_frequency.per_year();
    let m = compounding.unwrap_or(payment_frequency).per_year();
    let nominal = if p == m {
        i.checked_mul(Decimal::from(p))
            .or_overflow("the implied rate")?
    } else {
        let g = gcd(p, m);
        let (u, v) = (p / g, m / g);
        let root = nth_root(Decimal::ONE + i, v)?;
        let factor = root
            .checked_powi(i64::from(u))
            .or_overflow("the implied rate")?;
        (factor - Decimal::ONE)
            .checked_mul(Decimal::from(m))
            .or_overflow("the implied rate")?
    };
    nominal
        .checked_mul(Decimal::ONE_HUNDRED)
        .or_overflow("the implied rate")
}

fn gcd(a: u32, b: u32) -> u32 {
    if b == 0 {
        a
    } else {
        gcd(b, a % b)
    }
}

/// The quotes a check compares.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Quotes {
    pub payment: Option<Decimal>,
    pub apr_percent: Option<Decimal>,
    pub finance_charge: Option<Decimal>,
}

/// A quoted payment against the posted one.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PaymentCheck {
    pub quoted: Decimal,
    /// Quoted − computed.
    pub difference: Decimal,
    /// Equal to the minor unit.
    pub matches: bool,
    /// The note rate the quoted payment implies over the same term; `None`
    /// when no rate of 0 % or more gives it.
    pub implied_annual_rate_percent: Option<Decimal>,
}

/// The answer to a check: the schedule, its disclosure figures, and each quote compared.
#[derive(Debug, Clone)]
pub struct LoanCheck {
    /// The loan's scheduled payments and totals.
    pub scheduled: ScheduledPayments,
    pub disclosure: LoanDisclosure,
    pub mortgage: bool,
    pub payment: Option<PaymentCheck>,
    pub apr: Option<AprCheck>,
    pub finance_charge: Option<FinanceChargeCheck>,
    pub notes: Vec<String>,
}

/// Posts the loan, computes its disclosure figures and compares the quotes.
///
/// # Errors
/// As [`schedule`] and [`disclose`]; a quoted payment or finance charge that is
/// negative or has more decimals than the currency, or a negative quoted APR.
pub fn check_loan(
    terms: &LoanTerms,
    prepaid: &[PrepaidFinanceCharge],
    quotes: &Quotes,
    mortgage: bool,
) -> Result<LoanCheck> {
    check_loan_with(terms, &PlanOptions::default(), prepaid, quotes, mortgage)
}

/// Each quoted figure alone: a payment more than zero, a finance charge not
/// negative (both in the currency's minor units), an APR not negative.
pub fn quote_problems(quotes: &Quotes, currency: Currency) -> Vec<EngineError> {
    let mut out = Vec::new();
    let money_field =
        |field: &'static str, value: Decimal, positive: bool| -> Option<EngineError> {
            if value.is_sign_negative() && !value.is_zero() || positive && value.is_zero() {
                return Some(EngineError::out_of_range(
                    field,
                    if positive {
                        "must be more than zero"
                    } else {
                        "cannot be negative"
                    },
                ));
            }
            if !currency.fits(value) {
                return Some(EngineError::out_of_range(
                    field,
                    format!(
                        "{} amounts have at most {} decimals",
                        currency.code(),
                        currency.minor_units()
                    ),
                ));
            }
            None
        };
    if let Some(p) = quotes.payment {
        out.extend(money_field("quoted_payment", p, true));
    }
    if let Some(fc) = quotes.finance_charge {
        out.extend(money_field("quoted_finance_charge", fc, false));
    }
    if let Some(a) = quotes.apr_percent {
        if a.is_sign_negative() && !a.is_zero() {
            out.push(EngineError::out_of_range(
                "quoted_apr_percent",
                "cannot be negative",
            ));
        }
    }
    out
}

/// As [`check_loan`], for a loan with plan options: a funding date and a first
/// payment date (an odd first period, its interest added to the first payment or
/// prepaid at closing), an interest-only start, a balloon, rate steps. Extra
/// payments are not part of a disclosure and are refused.
///
/// # Errors
/// As [`check_loan`], and extra payments.
pub fn check_loan_with(
    terms: &LoanTerms,
    options: &PlanOptions,
    prepaid: &[PrepaidFinanceCharge],
    quotes: &Quotes,
    mortgage: bool,
) -> Result<LoanCheck> {
    if !options.extras.is_empty() {
        return Err(EngineError::out_of_range(
            "extra_payments",
            "a disclosure counts the scheduled payments only: leave extra payments out of a check",
        ));
    }
    let currency = terms.currency;
    if let Some(e) = quote_problems(quotes, currency).into_iter().next() {
        return Err(e);
    }
    for charge in prepaid {
        if !currency.fits(charge.amount) {
            return Err(EngineError::out_of_range(
                "prepaid_finance_charges",
                format!(
                    "{} amounts have at most {} decimals",
                    currency.code(),
                    currency.minor_units()
                ),
            ));
        }
    }
    let s = scheduled_payments(terms, options)?;
    let disclosure = disclose_dated(&s, prepaid, options.funding_date)?;
    let mut notes = vec![CAUTION.to_string(), TOOL_NOT_OPINION.to_string()];
    notes.extend(s.notes.iter().filter(|n| n.as_str() != CAUTION).cloned());
    let n = match terms.term {
        LoanTerm::Payments(n) => n,
        LoanTerm::Payment(_) => s.number_of_payments,
    };
    let payment = match quotes.payment {
        None => None,
        Some(quoted) => {
            let implied = match implied_annual_rate_percent(
                terms.principal,
                quoted,
                n,
                terms.payment_frequency,
                terms.compounding,
            ) {
                Ok(j) => Some(j),
                Err(e) if e.kind == ErrorKind::NoSolution => {
                    notes.push(format!(
                        "The quoted payment of {} over {n} payments totals less than the principal: no rate of 0 % or more gives it, so no note rate is implied.",
                        currency.format(quoted)
                    ));
                    None
                }
                Err(e) => {
                    return Err(EngineError {
                        field: Some("quoted_payment"),
                        ..e
                    })
                }
            };
            Some(PaymentCheck {
                quoted,
                difference: quoted - s.payment,
                matches: quoted == s.payment,
                implied_annual_rate_percent: implied,
            })
        }
    };
    let apr = quotes.apr_percent.map(|quoted| {
        check_apr(
            quoted,
            disclosure.apr.apr_percent,
            disclosure.apr_tolerance.points,
        )
    });
    let finance_charge = quotes.finance_charge.map(|quoted| {
        check_finance_charge(
            quoted,
            disclosure.finance_charge,
            disclosure.amount_financed,
            mortgage,
        )
    });
    match disclosure.dated_from {
        Some(start) => notes.push(format!(
            "APR by 12 CFR 1026 Appendix J: the amount financed ({}) advanced on the funding date {start} and each of the {} posted payments on its due date; the unit-period ({}) chosen by (b)(4), an odd first period counted in whole unit-periods and a fraction (b)(5); equal payments one unit-period apart summed in closed form.",
            currency.format(disclosure.amount_financed),
            s.number_of_payments,
            disclosure.unit_period
        )),
        None => notes.push(format!(
            "APR by 12 CFR 1026 Appendix J: the amount financed ({}) advanced at consummation and the {} posted payments, the first one payment period later (a regular first period); the unit-period is the payment period ({}), solved in closed form over runs of equal payments.",
            currency.format(disclosure.amount_financed),
            s.number_of_payments,
            disclosure.unit_period
        )),
    }
    if !disclosure.prepaid_interest.is_zero() {
        notes.push(format!(
            "Prepaid interest of {} for the odd first period is a prepaid finance charge: it lowers the amount financed and counts in the total interest percentage; it is not a loan cost of the in-5-years figure.",
            currency.format(disclosure.prepaid_interest)
        ));
    }
    if apr.is_some() {
        notes.push("The quoted APR is compared with the computed APR unrounded; a difference of exactly the tolerance is within it.".into());
    }
    if disclosure.prepaid_total > Decimal::ZERO {
        notes.push("In 5 years counts the prepaid finance charges as loan costs paid at consummation (§1026.37(l)(1)(i)); mortgage insurance and loan costs that are not finance charges are not known here and not included.".into());
    }
    if disclosure.prepaid_interest.is_zero() {
        notes.push("The total interest percentage counts the scheduled interest of the posted ledger (odd-days interest added to the first payment included); no interest is prepaid.".into());
    }
    if currency != Currency::USD {
        notes.push(format!(
            "Regulation Z is a US rule stated in US dollars; its dollar tolerances are applied to these {} figures as they stand.",
            currency.code()
        ));
    }
    Ok(LoanCheck {
        scheduled: s,
        disclosure,
        mortgage,
        payment,
        apr,
        finance_charge,
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::money::{InterestRounding, PaymentRounding};
    use crate::engine::rate::AnnualRate;
    use crate::engine::schedule::schedule;

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

    fn charge(name: &str, amount: &str) -> PrepaidFinanceCharge {
        PrepaidFinanceCharge {
            name: name.into(),
            amount: d(amount),
        }
    }

    #[test]
    fn form_percentages_keep_three_decimals_and_drop_trailing_zeros() {
        // §1026.37(o)(4) as summarised in REGULATIONS.md: 7.000 % shows as 7 %, 2.4999 % as 2.5 %.
        assert_eq!(form_percent(d("7.000")).to_string(), "7");
        assert_eq!(form_percent(d("2.4999")).to_string(), "2.5");
        assert_eq!(form_percent(d("115.83825")).to_string(), "115.838");
        assert_eq!(form_percent(d("6.0005")).to_string(), "6.001");
        assert_eq!(form_dollars(d("1234.50")).to_string(), "1235");
        assert_eq!(form_dollars(d("1234.49")).to_string(), "1234");
    }

    /// Consecutive equal amounts as runs (a test's shorthand).
    fn runs(amounts: &[Decimal]) -> Vec<PaymentRun> {
        let mut runs: Vec<PaymentRun> = Vec::new();
        for amount in amounts {
            match runs.last_mut() {
                Some(run) if run.amount == *amount => run.count += 1,
                _ => runs.push(PaymentRun {
                    amount: *amount,
                    count: 1,
                }),
            }
        }
        runs
    }

    fn posted(t: &LoanTerms) -> ScheduledPayments {
        scheduled_payments(t, &PlanOptions::default()).unwrap()
    }

    #[test]
    fn a_level_loan_is_one_run_and_a_final_payment() {
        let flows = unit_runs(&runs(&[d("10"), d("10"), d("10"), d("12")]), 1);
        assert_eq!(
            flows,
            vec![
                UnitFlow::run(d("10"), 1, Decimal::ZERO, 3),
                UnitFlow::run(d("12"), 4, Decimal::ZERO, 1)
            ]
        );
    }

    #[test]
    fn the_summary_posting_gives_the_full_schedules_figures() {
        let t = terms("100000", "6", 360);
        let full = schedule(&t).unwrap();
        let lean = posted(&t);
        let rows = &full.ledger.rows;
        let amounts: Vec<Decimal> = rows.iter().map(|r| r.payment).collect();
        assert_eq!(lean.summary.runs, runs(&amounts));
        assert_eq!(lean.number_of_payments, full.number_of_payments);
        assert_eq!(lean.final_payment, full.final_payment);
        assert_eq!(lean.payment, full.payment);
        assert_eq!(lean.total_paid, full.ledger.total_paid);
        assert_eq!(lean.total_interest, full.ledger.total_interest);
        assert_eq!(lean.summary.early_count, 60);
        let principal60: Decimal = rows[..60].iter().map(|r| r.principal).sum();
        assert_eq!(lean.summary.early_principal, principal60);
    }

    #[test]
    fn the_apr_of_the_runs_equals_the_apr_of_the_payments_one_by_one() {
        let t = terms("200000", "6", 360);
        let s = schedule(&t).unwrap();
        let disclosure = disclose(&posted(&t), &[charge("points", "4000")]).unwrap();
        let singles: Vec<UnitFlow> = s
            .ledger
            .rows
            .iter()
            .map(|r| UnitFlow::single(r.payment, r.number, Decimal::ZERO))
            .collect();
        let one_by_one = solve_apr(
            &[UnitFlow::single(d("196000"), 0, Decimal::ZERO)],
            &singles,
            UnitPeriod::Month,
        )
        .unwrap();
        assert!(
            (disclosure.apr.periodic_rate - one_by_one.periodic_rate).abs() < d("1e-20"),
            "{} vs {}",
            disclosure.apr.periodic_rate,
            one_by_one.periodic_rate
        );
        assert!(
            disclosure.apr.apr_percent > d("6.17"),
            "points raise the APR"
        );
    }

    #[test]
    fn disclosure_figures_add_up() {
        let t = terms("100000", "6", 360);
        let s = schedule(&t).unwrap();
        let f = disclose(
            &posted(&t),
            &[charge("origination", "1000"), charge("points", "500")],
        )
        .unwrap();
        assert_eq!(f.prepaid_total, d("1500"));
        assert_eq!(f.amount_financed, d("98500"));
        assert_eq!(f.total_of_payments, s.ledger.total_paid);
        assert_eq!(f.finance_charge, s.ledger.total_interest + d("1500"));
        assert_eq!(f.in_five_years.through_payment, 60);
        let first60: Decimal = s.ledger.rows[..60].iter().map(|r| r.payment).sum();
        assert_eq!(f.in_five_years.payments, first60);
        assert_eq!(f.in_five_years.total_paid, first60 + d("1500"));
        assert!(f.apr_tolerance.regular);
        assert_eq!(f.apr_tolerance.points, d("0.125"));
        // 100,000 at 6 % over 360: the posted final payment differs from 599.55.
        assert!(
            f.apr_tolerance.reason.contains("final payment"),
            "{}",
            f.apr_tolerance.reason
        );
    }

    #[test]
    fn a_short_loan_counts_its_whole_term_in_five_years() {
        let s = posted(&terms("12000", "0", 48));
        let f = disclose(&s, &[]).unwrap();
        assert_eq!(f.in_five_years.through_payment, 48);
        assert_eq!(f.in_five_years.principal_paid, d("12000"));
        assert_eq!(f.apr.apr_percent, Decimal::ZERO);
        assert!(f.apr_tolerance.reason.ends_with("amounts."));
    }

    #[test]
    fn charges_that_leave_nothing_financed_are_refused() {
        let s = posted(&terms("1000", "6", 12));
        let e = disclose(&s, &[charge("fee", "1000")]).unwrap_err();
        assert_eq!(e.field, Some("prepaid_finance_charges"));
        let e = disclose(&s, &[charge("fee", "-1")]).unwrap_err();
        assert_eq!(e.field, Some("prepaid_finance_charges"));
    }

    #[test]
    fn transactions_are_classified_by_1026_22_a_3() {
        let usd = Currency::USD;
        let level = runs(&[d("230"); 5]);
        assert!(apr_tolerance(1, true, &level, usd).regular);
        let odd_ends = runs(&[d("250"), d("230"), d("230"), d("280")]);
        let t = apr_tolerance(1, true, &odd_ends, usd);
        assert!(t.regular && t.reason.contains("first payment of 250.00"));
        assert!(t.reason.contains("final payment of 280.00"));
        let odd_middle = runs(&[d("230"), d("240"), d("230"), d("230")]);
        let t = apr_tolerance(1, true, &odd_middle, usd);
        assert!(!t.regular);
        assert_eq!(t.points, d("0.25"));
        assert!(!apr_tolerance(2, true, &level, usd).regular);
        assert!(!apr_tolerance(1, false, &level, usd).regular);
    }

    #[test]
    fn the_apr_tolerance_includes_its_boundary() {
        let eighth = REGULAR_APR_TOLERANCE;
        assert!(check_apr(d("6.125"), d("6"), eighth).within_tolerance);
        assert!(check_apr(d("5.875"), d("6"), eighth).within_tolerance);
        assert!(!check_apr(d("6.126"), d("6"), eighth).within_tolerance);
        assert!(!check_apr(d("6.1250000001"), d("6"), eighth).within_tolerance);
        assert!(check_apr(d("6.25"), d("6"), IRREGULAR_APR_TOLERANCE).within_tolerance);
    }

    #[test]
    fn finance_charge_tolerances_follow_1026_18_d() {
        // (d)(1): a mortgage may understate by $100 at most; overstating is accurate.
        let m = |q: &str| check_finance_charge(d(q), d("5000"), d("90000"), true);
        assert!(m("4900").within_tolerance);
        assert!(!m("4899.99").within_tolerance);
        assert!(m("6000").within_tolerance);
        // (d)(2): $5 up to an amount financed of $1,000, else $10, above or below.
        let small = check_finance_charge(d("105"), d("100"), d("1000"), false);
        assert_eq!(
            (small.rule, small.within_tolerance),
            (FinanceChargeRule::OtherSmall, true)
        );
        assert!(!check_finance_charge(d("105.01"), d("100"), d("1000"), false).within_tolerance);
        let large = check_finance_charge(d("90"), d("100"), d("1000.01"), false);
        assert_eq!(
            (large.rule, large.within_tolerance),
            (FinanceChargeRule::OtherLarge, true)
        );
        assert!(!check_finance_charge(d("110.01"), d("100"), d("1000.01"), false).within_tolerance);
    }

    #[test]
    fn the_implied_rate_inverts_the_payment() {
        // The exact payment of 6 % over 360 implies 6 % again.
        let exact = crate::engine::loan::payment_for_term(d("100000"), d("0.005"), 360).unwrap();
        let j =
            implied_annual_rate_percent(d("100000"), exact, 360, Frequency::Monthly, None).unwrap();
        assert!((j - d("6")).abs() < d("1e-18"), "{j}");
        // Monthly payments on a rate compounded semiannually: invert (1 + j/2)^(1/6) − 1.
        let r = AnnualRate::from_percent(d("6")).unwrap();
        let i = r
            .periodic_rate(Frequency::Monthly, Frequency::Semiannual)
            .unwrap();
        let p = crate::engine::loan::payment_for_term(d("100000"), i, 300).unwrap();
        let j = implied_annual_rate_percent(
            d("100000"),
            p,
            300,
            Frequency::Monthly,
            Some(Frequency::Semiannual),
        )
        .unwrap();
        assert!((j - d("6")).abs() < d("1e-16"), "{j}");
        // Daily compounding, monthly payments.
        let i = AnnualRate::from_percent(d("4.1"))
            .unwrap()
            .periodic_rate(Frequency::Monthly, Frequency::Daily)
            .unwrap();
        let p = crate::engine::loan::payment_for_term(d("50000"), i, 60).unwrap();
        let j = implied_annual_rate_percent(
            d("50000"),
            p,
            60,
            Frequency::Monthly,
            Some(Frequency::Daily),
        )
        .unwrap();
        assert!((j - d("4.1")).abs() < d("1e-14"), "{j}");
    }

    #[test]
    fn a_check_compares_each_quote() {
        let quotes = Quotes {
            payment: Some(d("599.56")),
            apr_percent: Some(d("6.00")),
            finance_charge: Some(d("115000")),
        };
        let c = check_loan(&terms("100000", "6", 360), &[], &quotes, true).unwrap();
        let p = c.payment.unwrap();
        assert_eq!((p.difference, p.matches), (d("0.01"), false));
        assert!(p.implied_annual_rate_percent.unwrap() > d("6"));
        assert!(c.apr.unwrap().within_tolerance);
        assert!(
            c.finance_charge.unwrap().within_tolerance
                == (d("115000") >= c.disclosure.finance_charge - d("100"))
        );
        assert_eq!(c.notes[0], CAUTION);
        assert_eq!(c.notes[1], TOOL_NOT_OPINION);
    }

    #[test]
    fn a_check_refuses_bad_quotes_by_field() {
        let t = terms("100000", "6", 360);
        let bad = |q: Quotes| check_loan(&t, &[], &q, true).unwrap_err().field;
        assert_eq!(
            bad(Quotes {
                payment: Some(d("599.555")),
                ..Quotes::default()
            }),
            Some("quoted_payment")
        );
        assert_eq!(
            bad(Quotes {
                payment: Some(d("0")),
                ..Quotes::default()
            }),
            Some("quoted_payment")
        );
        assert_eq!(
            bad(Quotes {
                apr_percent: Some(d("-1")),
                ..Quotes::default()
            }),
            Some("quoted_apr_percent")
        );
        assert_eq!(
            bad(Quotes {
                finance_charge: Some(d("-1")),
                ..Quotes::default()
            }),
            Some("quoted_finance_charge")
        );
    }

    #[test]
    fn a_quoted_payment_too_small_for_any_rate_implies_none() {
        let quotes = Quotes {
            payment: Some(d("100")),
            ..Quotes::default()
        };
        let c = check_loan(&terms("100000", "6", 360), &[], &quotes, true).unwrap();
        assert_eq!(c.payment.unwrap().implied_annual_rate_percent, None);
        assert!(c
            .notes
            .iter()
            .any(|n| n.contains("no note rate is implied")));
    }
}
