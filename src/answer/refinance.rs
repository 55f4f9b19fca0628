//! The refinance answer: both payments, the two break-evens, each way's cost at
//! 5, 7 and 10 years, a chosen horizon and to the end, "In 5 years", and how each
//! figure was worked out. Computed once for the API and the page.

use rust_decimal::Decimal;
use serde::Serialize;

use crate::engine::choices::refinance::{refinance, FiveYears, HorizonCost, Refinance};
use crate::engine::loan::payment_for_term;
use crate::engine::money::Currency;
use crate::engine::schedule::CAUTION;
use crate::input::json::Json;
use crate::input::problem::ApiError;
use crate::input::refinance::{read_json, read_query, RefinanceRequest};

/// Where the current loan stands.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct RefinanceCurrentDto {
    pub balance: String,
    pub annual_rate_percent: String,
    pub payment: String,
    pub remaining_payments: u32,
    /// When the original terms were given.
    pub payments_made: Option<u32>,
    /// The closed form's balance after the payments made, unrounded (original terms).
    pub closed_form_balance: Option<String>,
    /// The interest of the payments left.
    pub total_interest: String,
    /// The payments left.
    pub total_paid: String,
}

/// The new loan.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct RefinanceNewDto {
    pub principal: String,
    pub annual_rate_percent: String,
    pub payment: String,
    pub number_of_payments: u32,
    pub total_interest: String,
    pub total_paid: String,
    pub payoff_date: Option<String>,
}

/// The costs of the refinance.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct RefinanceCostsDto {
    pub closing_costs: String,
    pub points_percent: String,
    /// The points in money (percent of the new principal, halves up to the minor unit).
    pub points: String,
    /// Closing costs and points.
    pub total_costs: String,
    pub financed_costs: String,
    /// total_costs − financed_costs.
    pub paid_in_cash: String,
    /// new principal − balance − financed costs (negative: cash brought to closing).
    pub cash_out: String,
}

/// Both ways' cost at a horizon: upfront, then payments 1 to `months`, and the
/// balance still owed after payment `months`.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct RefinanceHorizonDto {
    pub months: u32,
    pub current_paid: String,
    pub current_owed: String,
    pub current_cost: String,
    pub new_paid: String,
    pub new_owed: String,
    pub new_cost: String,
    /// current_cost − new_cost: what refinancing saves by then (negative: it costs more).
    pub refinancing_saves: String,
}

/// "In 5 years" (§1026.37(l)(1)) for one loan.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct LoanFiveYearsDto {
    pub through_payment: u32,
    /// Payments through `through_payment`, and the loan costs for the new loan.
    pub total_paid: String,
    pub principal_paid: String,
}

/// "In 5 years" for both loans.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct RefinanceInFiveYearsDto {
    pub current: LoanFiveYearsDto,
    pub new: LoanFiveYearsDto,
}

/// The refinance answer.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct RefinanceDto {
    pub currency: &'static str,
    pub current_payment: String,
    pub new_payment: String,
    /// new_payment − current_payment.
    pub monthly_change: String,
    /// total costs ÷ monthly saving, rounded up; null when the new payment is not lower.
    pub break_even_months: Option<u32>,
    /// The first month by which the new loan has cost no more than the current
    /// one, counting what each still owes; null when it never does.
    pub break_even_months_with_balances: Option<u32>,
    /// After that month, the first month the new loan costs more again (its
    /// longer term's further interest); null when it does not.
    pub costs_more_again_from_month: Option<u32>,
    pub current: RefinanceCurrentDto,
    pub new: RefinanceNewDto,
    pub costs: RefinanceCostsDto,
    /// 60, 84 and 120 months and the chosen horizon.
    pub horizons: Vec<RefinanceHorizonDto>,
    /// Both loans to their ends.
    pub to_the_end: RefinanceHorizonDto,
    pub in_five_years: RefinanceInFiveYearsDto,
    /// How each figure was worked out, in order.
    pub derivation: Vec<String>,
    /// The caution first, then what was assumed.
    pub notes: Vec<String>,
}

fn percent(d: Decimal) -> String {
    d.normalize().to_string()
}

fn horizon(
    c: &HorizonCost,
    n: &HorizonCost,
    money: &impl Fn(Decimal) -> String,
) -> RefinanceHorizonDto {
    RefinanceHorizonDto {
        months: c.months,
        current_paid: money(c.paid),
        current_owed: money(c.owed),
        current_cost: money(c.cost),
        new_paid: money(n.paid),
        new_owed: money(n.owed),
        new_cost: money(n.cost),
        refinancing_saves: money(c.cost - n.cost),
    }
}

fn five(f: &FiveYears, money: &impl Fn(Decimal) -> String) -> LoanFiveYearsDto {
    LoanFiveYearsDto {
        through_payment: f.through_payment,
        total_paid: money(f.total_paid),
        principal_paid: money(f.principal_paid),
    }
}

/// Computes a refinance read from a request.
///
/// # Errors
/// The problem to answer.
pub fn compute(req: RefinanceRequest) -> Result<Refinance, ApiError> {
    let work = crate::engine::plan::expected_work(&req.new.terms, &req.new.options)
        + u64::from(req.current.remaining_payments);
    let _weight = crate::weight::weigh(work)?;
    let RefinanceRequest {
        current,
        new,
        costs,
        horizon,
    } = req;
    refinance(current, &new.terms, &new.options, costs, horizon).map_err(|e| {
        if matches!(e.field, Some("points_percent" | "financed_costs")) {
            ApiError::from_engine(e, "")
        } else {
            new.problem(e, "")
        }
    })
}

/// Reads and computes a JSON refinance.
///
/// # Errors
/// The problem to answer.
pub fn from_json(body: &Json) -> Result<Refinance, ApiError> {
    compute(read_json(body)?).map_err(json_pointers)
}

/// Engine errors on the new loan point into `/new` in a JSON request.
fn json_pointers(mut e: ApiError) -> ApiError {
    for f in &mut e.errors {
        if !f.pointer.starts_with('/') {
            f.pointer = if matches!(f.pointer.as_str(), "points_percent" | "financed_costs") {
                format!("/{}", f.pointer)
            } else {
                format!("/new/{}", f.pointer)
            };
        }
    }
    if let [one] = e.errors.as_slice() {
        e.detail = format!("{}: {}", one.pointer, one.message);
    }
    e
}

/// Reads and computes a query refinance (`lenient`: as the page reads it).
///
/// # Errors
/// The problem to answer.
pub fn from_query(pairs: &[(String, String)], lenient: bool) -> Result<Refinance, ApiError> {
    compute(read_query(pairs, lenient)?)
}

impl RefinanceDto {
    /// The answer of a computed refinance.
    pub fn from_refinance(r: &Refinance) -> Self {
        let currency: Currency = r.new.terms.currency;
        let money = |d: Decimal| currency.format(d);
        let c = &r.current;
        let notes = notes(r, &money);
        RefinanceDto {
            currency: currency.code(),
            current_payment: money(c.payment),
            new_payment: money(r.new.payment),
            monthly_change: money(r.monthly_change),
            break_even_months: r.break_even_months,
            break_even_months_with_balances: r.break_even_months_with_balances,
            costs_more_again_from_month: r.costs_more_again_from,
            current: RefinanceCurrentDto {
                balance: money(c.balance),
                annual_rate_percent: percent(c.rate.percent()),
                payment: money(c.payment),
                remaining_payments: c.remaining_payments,
                payments_made: c.payments_made,
                closed_form_balance: c.closed_form_balance.map(|b| b.normalize().to_string()),
                total_interest: money(c.remaining_interest),
                total_paid: money(r.current_path.paid(c.remaining_payments)),
            },
            new: RefinanceNewDto {
                principal: money(r.new.terms.principal),
                annual_rate_percent: percent(r.new.terms.rate.percent()),
                payment: money(r.new.payment),
                number_of_payments: r.new.number_of_payments,
                total_interest: money(r.new.ledger.total_interest),
                total_paid: money(r.new.ledger.total_paid),
                payoff_date: r.new.payoff_date.map(|d| d.to_string()),
            },
            costs: RefinanceCostsDto {
                closing_costs: money(r.costs.closing_costs),
                points_percent: percent(r.costs.points_percent),
                points: money(r.points),
                total_costs: money(r.total_costs),
                financed_costs: money(r.costs.financed_costs),
                paid_in_cash: money(r.costs_paid_in_cash),
                cash_out: money(r.cash_out),
            },
            horizons: r
                .horizons
                .iter()
                .map(|(c, n)| horizon(c, n, &money))
                .collect(),
            to_the_end: horizon(&r.to_the_end.0, &r.to_the_end.1, &money),
            in_five_years: RefinanceInFiveYearsDto {
                current: five(&r.in_five_years.0, &money),
                new: five(&r.in_five_years.1, &money),
            },
            derivation: derivation(r, &money),
            notes,
        }
    }
}

/// How each figure was worked out, in words and numbers.
pub fn derivation(r: &Refinance, money: &impl Fn(Decimal) -> String) -> Vec<String> {
    let c = &r.current;
    let mut steps = Vec::new();
    let i = c.rate.percent() / Decimal::from(1200);
    if let (Some(k), Some(closed)) = (c.payments_made, c.closed_form_balance) {
        steps.push(format!(
            "Current balance: after {k} payments of {} the closed form gives x[{k}] = {}; the posted ledger, each month's interest rounded to the cent, holds {}. The posted balance is used.",
            money(c.payment),
            closed.round_dp(6).normalize(),
            money(c.balance)
        ));
    } else if let Ok(exact) = payment_for_term(c.balance, i, c.remaining_payments) {
        steps.push(format!(
            "Current payment: {} at {} % a year ({} a month) over {} payments: P = B·i / (1 − (1 + i)^−n) = {}, rounded to {}.",
            money(c.balance),
            percent(c.rate.percent()),
            i.round_dp(10).normalize(),
            c.remaining_payments,
            exact.round_dp(6).normalize(),
            money(c.payment)
        ));
    }
    steps.push(format!(
        "New principal: {} (the current balance {} + financed costs {} + cash out {}).",
        money(r.new.terms.principal),
        money(c.balance),
        money(r.costs.financed_costs),
        money(r.cash_out)
    ));
    steps.push(format!(
        "Points: {} % × {} = {}; with closing costs of {} the costs are {}, of which {} are added to the loan and {} paid in cash.",
        percent(r.costs.points_percent),
        money(r.new.terms.principal),
        money(r.points),
        money(r.costs.closing_costs),
        money(r.total_costs),
        money(r.costs.financed_costs),
        money(r.costs_paid_in_cash)
    ));
    steps.push(format!(
        "New payment: {} over {} payments at {} %, the level payment rounded to the cent.",
        money(r.new.payment),
        r.new.number_of_payments,
        percent(r.new.terms.rate.percent())
    ));
    let saving = -r.monthly_change;
    steps.push(match r.break_even_months {
        Some(0) if r.total_costs <= Decimal::ZERO => "Simple break-even: there are no costs to recover, so month 0.".to_string(),
        Some(m) => format!(
            "Simple break-even: costs ÷ monthly saving = {} ÷ {} = {}, rounded up to {m} months.",
            money(r.total_costs),
            money(saving),
            (r.total_costs / saving).round_dp(2)
        ),
        None => format!(
            "Simple break-even: none. The new payment is not lower (it changes by {} a month), so the costs of {} are never recovered from the payment alone.",
            money(r.monthly_change),
            money(r.total_costs)
        ),
    });
    let cost_words = "each way's cost by month m is what was paid upfront, plus payments 1 to m, plus the balance still owed after payment m";
    steps.push(match r.break_even_months_with_balances {
        Some(m) => format!(
            "Break-even with balances: {cost_words}. At month {m} keeping the loan has cost {} ({} paid + {} owed) and the new loan {} ({} paid + {} owed): the first month the new loan has cost no more.",
            money(r.current_path.cost(m)),
            money(r.current_path.paid(m)),
            money(r.current_path.owed(m)),
            money(r.new_path.cost(m)),
            money(r.new_path.upfront + r.new_path.paid(m)),
            money(r.new_path.owed(m))
        ),
        None => format!(
            "Break-even with balances: {cost_words}. In no month up to the end of both loans has the new loan cost no more than keeping the current one."
        ),
    });
    steps
}

fn notes(r: &Refinance, money: &impl Fn(Decimal) -> String) -> Vec<String> {
    let mut notes = vec![
        CAUTION.to_string(),
        "Both loans are paid monthly and posted to the cent as a servicing system posts them; the payments are principal and interest only (no escrow or mortgage insurance).".to_string(),
    ];
    if r.break_even_months.is_none() {
        notes.push(
            "The simple break-even is empty: the new payment is not lower than the current one."
                .into(),
        );
    }
    if let Some(m) = r.costs_more_again_from {
        notes.push(format!(
            "From month {m} on the new loan costs more again: its longer term's further interest outweighs what was saved. To the end of both loans, refinancing costs {} more.",
            money((r.to_the_end.1.cost - r.to_the_end.0.cost).max(Decimal::ZERO))
        ));
    }
    if r.current.payments_made.is_none() {
        notes.push("The current payment is solved from the balance, rate and payments left; a servicer's own payment may differ by a few cents.".into());
    }
    notes
}
