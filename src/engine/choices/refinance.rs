//! Does refinancing pay, and when: the current loan kept against a new loan,
//! month by month (see [the module above](super)).

use rust_decimal::{Decimal, RoundingStrategy};

use super::{balance_break_even, falls_back_after, horizons, simple_break_even, within, CostPath};
use crate::engine::error::{EngineError, OrOverflow, Result};
use crate::engine::ledger::Row;
use crate::engine::loan::balance_after;
use crate::engine::money::Currency;
use crate::engine::plan::PlanOptions;
use crate::engine::rate::{AnnualRate, Frequency};
use crate::engine::schedule::{schedule_for_comparison, LoanSchedule, LoanTerm, LoanTerms};
use crate::engine::terms::check_principal;

/// The loan being refinanced: monthly payments, posted as a schedule would post them.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum CurrentLoan {
    /// Its balance today, its rate and the payments left: the payment is solved
    /// over the payments left.
    Balance {
        /// The balance owed today.
        balance: Decimal,
        /// The nominal annual rate.
        rate: AnnualRate,
        /// The monthly payments left.
        remaining_payments: u32,
    },
    /// Its original terms and the payments made: the balance is found from the
    /// closed form and taken from the posted ledger.
    Original {
        /// The amount first borrowed.
        principal: Decimal,
        /// The nominal annual rate.
        rate: AnnualRate,
        /// The term in monthly payments.
        term_payments: u32,
        /// The payments already made.
        payments_made: u32,
    },
}

/// Where the current loan stands today, and what keeping it costs.
#[derive(Debug, Clone)]
pub struct CurrentPosition {
    /// The balance owed today (posted, to the minor unit).
    pub balance: Decimal,
    /// The nominal annual rate.
    pub rate: AnnualRate,
    /// The regular monthly payment.
    pub payment: Decimal,
    /// The payments left.
    pub remaining_payments: u32,
    /// The payments made, when the original terms were given.
    pub payments_made: Option<u32>,
    /// The closed form's balance after the payments made, unrounded (original terms).
    pub closed_form_balance: Option<Decimal>,
    /// The payments left, as posted.
    pub rows: Vec<Row>,
    /// The interest of the payments left.
    pub remaining_interest: Decimal,
}

fn monthly(principal: Decimal, rate: AnnualRate, n: u32, currency: Currency) -> LoanTerms {
    LoanTerms {
        principal,
        currency,
        rate,
        payment_frequency: Frequency::Monthly,
        compounding: None,
        term: LoanTerm::Payments(n),
        payment_rounding: Default::default(),
        interest_rounding: Default::default(),
    }
}

/// Where the current loan stands.
///
/// # Errors
/// A loan already paid off (`payments_made` or `remaining_payments` naming it),
/// an amount out of range, or an overflow.
pub fn current_position(current: &CurrentLoan, currency: Currency) -> Result<CurrentPosition> {
    match *current {
        CurrentLoan::Balance {
            balance,
            rate,
            remaining_payments,
        } => {
            if balance.is_zero() {
                return Err(EngineError::out_of_range(
                    "balance",
                    "the current loan is already paid off (its balance is zero): there is nothing to refinance",
                ));
            }
            if remaining_payments == 0 {
                return Err(EngineError::out_of_range(
                    "remaining_payments",
                    "the current loan has no payments left: it is already paid off",
                ));
            }
            check_principal(balance, currency).map_err(|e| EngineError {
                field: Some("balance"),
                ..e
            })?;
            let s = schedule_for_comparison(
                &monthly(balance, rate, remaining_payments, currency),
                &PlanOptions::default(),
            )
            .map_err(|e| rename(e, "remaining_payments"))?;
            Ok(CurrentPosition {
                balance,
                rate,
                payment: s.payment,
                remaining_payments: s.number_of_payments,
                payments_made: None,
                closed_form_balance: None,
                remaining_interest: s.ledger.total_interest,
                rows: s.ledger.rows,
            })
        }
        CurrentLoan::Original {
            principal,
            rate,
            term_payments,
            payments_made,
        } => {
            let s = schedule_for_comparison(
                &monthly(principal, rate, term_payments, currency),
                &PlanOptions::default(),
            )
            .map_err(|e| rename(e, "term_months"))?;
            if payments_made >= s.number_of_payments {
                return Err(EngineError::out_of_range(
                    "payments_made",
                    format!(
                        "the current loan is paid off with payment {}: payments_made must be less than that to leave a balance to refinance",
                        s.number_of_payments
                    ),
                ));
            }
            let k = payments_made as usize;
            let balance = if k == 0 {
                principal
            } else {
                s.ledger.rows[k - 1].balance
            };
            let closed = balance_after(principal, s.periodic_rate, s.payment, payments_made)?;
            let rows: Vec<Row> = s.ledger.rows[k..]
                .iter()
                .enumerate()
                .map(|(j, r)| Row {
                    number: j as u32 + 1,
                    ..*r
                })
                .collect();
            let remaining_interest = rows.iter().map(|r| r.interest).sum();
            Ok(CurrentPosition {
                balance,
                rate,
                payment: s.payment,
                remaining_payments: rows.len() as u32,
                payments_made: Some(payments_made),
                closed_form_balance: Some(closed),
                rows,
                remaining_interest,
            })
        }
    }
}

fn rename(mut e: EngineError, term: &'static str) -> EngineError {
    if e.field == Some("term_payments") {
        e.field = Some(term);
    }
    e
}

/// The refinance's costs, as the request gives them.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct RefinanceCosts {
    /// Closing costs other than points.
    pub closing_costs: Decimal,
    /// Points, in percent of the new principal (negative: a lender credit).
    pub points_percent: Decimal,
    /// The part of the costs added to the new principal (the rest is paid in cash).
    pub financed_costs: Decimal,
}

/// The least and most points a request may give, in percent.
pub const POINTS_RANGE: (i64, i64) = (-10, 10);

/// The points in money: `percent` of `principal`, to the minor unit (halves up).
///
/// # Errors
/// Points outside [`POINTS_RANGE`], naming `points_field`.
pub fn points_amount(
    percent: Decimal,
    principal: Decimal,
    currency: Currency,
    points_field: &'static str,
) -> Result<Decimal> {
    if percent < Decimal::from(POINTS_RANGE.0) || percent > Decimal::from(POINTS_RANGE.1) {
        return Err(EngineError::out_of_range(
            points_field,
            format!(
                "points must be from {} to {} percent of the principal (negative: a lender credit)",
                POINTS_RANGE.0, POINTS_RANGE.1
            ),
        ));
    }
    let amount = percent
        .checked_mul(principal)
        .and_then(|v| v.checked_div(Decimal::ONE_HUNDRED))
        .or_overflow("the points")?;
    Ok(currency.round(amount, RoundingStrategy::MidpointAwayFromZero))
}

/// One way's cost at a horizon.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct HorizonCost {
    /// The months counted (payments 1 to `months`).
    pub months: u32,
    /// Upfront, then the payments through `months`.
    pub paid: Decimal,
    /// The balance still owed after payment `months`.
    pub owed: Decimal,
    /// paid + owed.
    pub cost: Decimal,
}

/// A way's cost at `m` months.
pub fn horizon_cost(p: &CostPath, m: u32) -> HorizonCost {
    HorizonCost {
        months: m,
        paid: p.upfront + p.paid(m),
        owed: p.owed(m),
        cost: p.cost(m),
    }
}

/// "In 5 years" (§1026.37(l)(1)) for one loan: paid through the 60th payment
/// (the whole term when shorter) with the loan costs, and the principal repaid.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FiveYears {
    /// The last payment counted.
    pub through_payment: u32,
    /// Payments 1 to `through_payment` and the loan costs.
    pub total_paid: Decimal,
    /// The principal repaid by them.
    pub principal_paid: Decimal,
}

fn five_years(p: &CostPath, principal: Decimal, loan_costs: Decimal) -> FiveYears {
    let through = p.months().min(60);
    FiveYears {
        through_payment: through,
        total_paid: p.paid(through) + loan_costs,
        principal_paid: principal - p.owed(through),
    }
}

/// A refinance analysed.
#[derive(Debug, Clone)]
pub struct Refinance {
    /// Where the current loan stands.
    pub current: CurrentPosition,
    /// The new loan, posted.
    pub new: LoanSchedule,
    /// The costs as given.
    pub costs: RefinanceCosts,
    /// The points in money.
    pub points: Decimal,
    /// Closing costs and points.
    pub total_costs: Decimal,
    /// The costs not financed: paid in cash at closing.
    pub costs_paid_in_cash: Decimal,
    /// Cash received at closing: new principal − balance − financed costs
    /// (negative: cash brought to pay the balance down).
    pub cash_out: Decimal,
    /// new payment − current payment.
    pub monthly_change: Decimal,
    /// total costs ÷ monthly saving, rounded up.
    pub break_even_months: Option<u32>,
    /// The first month the new loan has cost no more than the current one,
    /// balances counted.
    pub break_even_months_with_balances: Option<u32>,
    /// After that, the first month the new loan costs more again.
    pub costs_more_again_from: Option<u32>,
    /// The current way: no upfront cost.
    pub current_path: CostPath,
    /// The new way: upfront the costs paid in cash less the cash out.
    pub new_path: CostPath,
    /// 5, 7 and 10 years and the chosen horizon: (current, new).
    pub horizons: Vec<(HorizonCost, HorizonCost)>,
    /// Both loans to their ends: (current, new).
    pub to_the_end: (HorizonCost, HorizonCost),
    /// "In 5 years": (current, new).
    pub in_five_years: (FiveYears, FiveYears),
}

/// Analyses a refinance of `current` into the new loan.
///
/// # Errors
/// Financed costs beyond the costs (`financed_costs`), points out of range
/// (`points_percent`), a new loan the engine refuses, or an overflow.
pub fn refinance(
    current: CurrentPosition,
    new_terms: &LoanTerms,
    new_options: &PlanOptions,
    costs: RefinanceCosts,
    horizon: Option<u32>,
) -> Result<Refinance> {
    let currency = new_terms.currency;
    let points = points_amount(
        costs.points_percent,
        new_terms.principal,
        currency,
        "points_percent",
    )?;
    let total_costs = costs.closing_costs + points;
    if costs.financed_costs > total_costs.max(Decimal::ZERO) {
        return Err(EngineError::out_of_range(
            "financed_costs",
            format!(
                "the financed costs cannot exceed the costs (closing costs and points: {})",
                currency.format(total_costs.max(Decimal::ZERO))
            ),
        ));
    }
    let new = schedule_for_comparison(new_terms, new_options)?;
    let costs_paid_in_cash = total_costs - costs.financed_costs;
    let cash_out = new_terms.principal - current.balance - costs.financed_costs;
    let current_path = CostPath::posted(Decimal::ZERO, current.balance, &current.rows)?;
    let new_path = CostPath::posted(
        costs_paid_in_cash - cash_out,
        new_terms.principal,
        &new.ledger.rows,
    )?;
    let monthly_change = new.payment - current.payment;
    let break_even_months = within(
        simple_break_even(total_costs, -monthly_change),
        new_path.months(),
    );
    let with_balances = balance_break_even(&current_path, &new_path);
    let costs_more_again_from =
        with_balances.and_then(|m| falls_back_after(&current_path, &new_path, m));
    let horizons = horizons(horizon)
        .into_iter()
        .map(|m| (horizon_cost(&current_path, m), horizon_cost(&new_path, m)))
        .collect();
    let end = current_path.months().max(new_path.months());
    let in_five_years = (
        five_years(&current_path, current.balance, Decimal::ZERO),
        // Loan costs (§1026.37(f)) are what is charged; a lender credit is
        // disclosed apart from them (§1026.38(h)(3)), so negative points do not
        // lower the loan costs counted "In 5 years".
        five_years(
            &new_path,
            new_terms.principal,
            costs.closing_costs + points.max(Decimal::ZERO),
        ),
    );
    Ok(Refinance {
        to_the_end: (
            horizon_cost(&current_path, end),
            horizon_cost(&new_path, end),
        ),
        current,
        new,
        costs,
        points,
        total_costs,
        costs_paid_in_cash,
        cash_out,
        monthly_change,
        break_even_months,
        break_even_months_with_balances: with_balances,
        costs_more_again_from,
        current_path,
        new_path,
        horizons,
        in_five_years,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    fn rate(p: &str) -> AnnualRate {
        AnnualRate::from_percent(d(p)).unwrap()
    }

    #[test]
    fn the_same_rate_and_term_with_no_costs_changes_nothing_and_breaks_even_at_once() {
        let current = current_position(
            &CurrentLoan::Balance {
                balance: d("187654.32"),
                rate: rate("6.125"),
                remaining_payments: 287,
            },
            Currency::USD,
        )
        .unwrap();
        let terms = monthly(d("187654.32"), rate("6.125"), 287, Currency::USD);
        let r = refinance(
            current,
            &terms,
            &PlanOptions::default(),
            RefinanceCosts::default(),
            None,
        )
        .unwrap();
        assert_eq!(r.monthly_change, Decimal::ZERO);
        assert_eq!(r.break_even_months, Some(0));
        assert_eq!(r.break_even_months_with_balances, Some(0));
        assert_eq!(r.costs_more_again_from, None);
        for (c, n) in &r.horizons {
            assert_eq!(c, n);
        }
        assert_eq!(r.to_the_end.0, r.to_the_end.1);
    }

    #[test]
    fn the_original_terms_give_the_posted_balance_and_the_ledgers_tail() {
        // 200,000 at 6 % over 360 months pays 1,199.10 (common practice, no source:
        // the level-payment formula); after 60 payments the posted balance is
        // within a cent or two of the closed form's.
        let c = current_position(
            &CurrentLoan::Original {
                principal: d("200000"),
                rate: rate("6"),
                term_payments: 360,
                payments_made: 60,
            },
            Currency::USD,
        )
        .unwrap();
        assert_eq!(c.payment, d("1199.10"));
        assert_eq!(c.remaining_payments, 300);
        assert!((c.closed_form_balance.unwrap() - c.balance).abs() < d("0.05"));
        let paid_off = current_position(
            &CurrentLoan::Original {
                principal: d("200000"),
                rate: rate("6"),
                term_payments: 360,
                payments_made: 360,
            },
            Currency::USD,
        )
        .unwrap_err();
        assert_eq!(paid_off.field, Some("payments_made"));
    }
}
