//! The rate-and-points answer: each option's payment and upfront cost, its
//! break-evens against the first option, its cost at each horizon, and which
//! option costs least when. Computed once for the API and the page.

use rust_decimal::Decimal;
use serde::Serialize;

use crate::engine::choices::points::{compare_options, CostedOption, OptionsAnswer};
use crate::engine::schedule::CAUTION;
use crate::input::json::Json;
use crate::input::points::{read_json, read_query, OptionsRequest};
use crate::input::problem::ApiError;

/// One option's cost at a horizon.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct PricingOptionCostDto {
    pub months: u32,
    /// Upfront cost and payments 1 to `months`.
    pub paid: String,
    /// The balance still owed after payment `months`.
    pub owed: String,
    /// paid + owed.
    pub cost: String,
}

/// One option.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct PricingOptionDto {
    pub label: String,
    pub annual_rate_percent: String,
    pub points_percent: String,
    /// The points in money.
    pub points: String,
    pub other_costs: String,
    /// points + other costs (negative: a credit).
    pub upfront_cost: String,
    pub payment: String,
    /// This payment − the first option's (null for the first).
    pub monthly_difference: Option<String>,
    /// The months for the option costing more upfront to recover the difference
    /// through its lower payment, rounded up (null for the first option, or when
    /// it never does).
    pub break_even_months: Option<u32>,
    /// The first month by which the option that cost more at the start costs no
    /// more, counting what each still owes (null for the first option, or never).
    pub break_even_months_with_balances: Option<u32>,
    /// At 60, 84 and 120 months and the chosen horizon.
    pub costs: Vec<PricingOptionCostDto>,
    /// To the end of the term: upfront cost and every payment.
    pub cost_to_end: String,
    pub total_interest: String,
}

/// The cheapest option at a horizon.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct CheapestOptionDto {
    pub months: u32,
    pub label: String,
}

/// The rate-and-points answer.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct OptionsDto {
    pub currency: &'static str,
    pub principal: String,
    pub number_of_payments: u32,
    pub options: Vec<PricingOptionDto>,
    /// The cheapest option at each horizon, then at the end of the term.
    pub cheapest: Vec<CheapestOptionDto>,
    /// From each of these months on, the option named costs least (the first is month 0).
    pub cheapest_changes: Vec<CheapestOptionDto>,
    /// How the figures were worked out.
    pub derivation: Vec<String>,
    /// The caution first, then what was assumed.
    pub notes: Vec<String>,
}

/// Computes a rate-and-points request.
///
/// # Errors
/// The problem to answer.
pub fn compute(req: OptionsRequest, prefix: &str) -> Result<OptionsAnswer, ApiError> {
    let work = crate::engine::plan::expected_work(&req.loan.terms, &req.loan.options)
        * req.options.len() as u64;
    let _weight = crate::weight::weigh(work)?;
    compare_options(
        &req.loan.terms,
        &req.loan.options,
        &req.options,
        req.horizon,
    )
    .map_err(|e| req.loan.problem(e, prefix))
}

/// Reads and computes a JSON request.
///
/// # Errors
/// The problem to answer.
pub fn from_json(body: &Json) -> Result<OptionsAnswer, ApiError> {
    compute(read_json(body)?, "/")
}

/// Reads and computes a query request (`lenient`: as the page reads it).
///
/// # Errors
/// The problem to answer.
pub fn from_query(pairs: &[(String, String)], lenient: bool) -> Result<OptionsAnswer, ApiError> {
    compute(read_query(pairs, lenient)?, "")
}

fn percent(d: Decimal) -> String {
    d.normalize().to_string()
}

impl OptionsDto {
    /// The answer of computed options.
    pub fn from_answer(a: &OptionsAnswer) -> Self {
        let first = &a.options[0];
        let currency = first.schedule.terms.currency;
        let money = |d: Decimal| currency.format(d);
        let label = |i: usize| a.options[i].option.label.clone();
        OptionsDto {
            currency: currency.code(),
            principal: money(first.schedule.terms.principal),
            number_of_payments: first.schedule.number_of_payments,
            options: a
                .options
                .iter()
                .enumerate()
                .map(|(i, o)| PricingOptionDto {
                    label: o.option.label.clone(),
                    annual_rate_percent: percent(o.option.rate.percent()),
                    points_percent: percent(o.option.points_percent),
                    points: money(o.points),
                    other_costs: money(o.option.other_costs),
                    upfront_cost: money(o.upfront_cost),
                    payment: money(o.schedule.payment),
                    monthly_difference: (i > 0).then(|| money(o.monthly_difference)),
                    break_even_months: o.break_even_months,
                    break_even_months_with_balances: o.break_even_months_with_balances,
                    costs: o
                        .horizons
                        .iter()
                        .map(|h| PricingOptionCostDto {
                            months: h.months,
                            paid: money(h.paid),
                            owed: money(h.owed),
                            cost: money(h.cost),
                        })
                        .collect(),
                    cost_to_end: money(o.to_the_end.cost),
                    total_interest: money(o.schedule.ledger.total_interest),
                })
                .collect(),
            cheapest: a
                .cheapest
                .iter()
                .map(|&(months, i)| CheapestOptionDto { months, label: label(i) })
                .collect(),
            cheapest_changes: a
                .cheapest_changes
                .iter()
                .map(|&(months, i)| CheapestOptionDto { months, label: label(i) })
                .collect(),
            derivation: derivation(a, &money),
            notes: vec![
                CAUTION.to_string(),
                "Each option is the same loan at its own rate, posted to the cent; its cost by month m is its upfront cost, plus payments 1 to m, plus the balance still owed after payment m. The payments are principal and interest only.".to_string(),
                "Break-evens are measured against the first option: the months for the option that costs more upfront to recover the difference.".to_string(),
            ],
        }
    }
}

fn option_steps(
    first: &CostedOption,
    o: &CostedOption,
    money: &impl Fn(Decimal) -> String,
) -> String {
    let extra = o.upfront_cost - first.upfront_cost;
    let (dearer, cheaper) = if extra >= Decimal::ZERO {
        (o, first)
    } else {
        (first, o)
    };
    let saving = cheaper.schedule.payment - dearer.schedule.payment;
    let simple = match o.break_even_months {
        Some(0) => "no extra upfront cost to recover: month 0".to_string(),
        Some(m) => format!(
            "{} more upfront ÷ {} less a month = {}, rounded up to {m} months",
            money(extra.abs()),
            money(saving),
            (extra.abs() / saving).round_dp(2)
        ),
        None => format!(
            "\"{}\" costs {} more upfront and its payment is not lower, so it never recovers it",
            dearer.option.label,
            money(extra.abs())
        ),
    };
    let balances = match o.break_even_months_with_balances {
        Some(m) => format!(
            "with balances, by month {m} \"{}\" has cost {} against {} for \"{}\"",
            dearer.option.label,
            money(dearer.path.cost(m)),
            money(cheaper.path.cost(m)),
            cheaper.option.label
        ),
        None => "with balances, never".to_string(),
    };
    format!(
        "\"{}\" against \"{}\": payment {} against {}; simple break-even: {simple}; {balances}.",
        o.option.label,
        first.option.label,
        money(o.schedule.payment),
        money(first.schedule.payment)
    )
}

fn derivation(a: &OptionsAnswer, money: &impl Fn(Decimal) -> String) -> Vec<String> {
    let first = &a.options[0];
    let mut steps: Vec<String> = a
        .options
        .iter()
        .map(|o| {
            format!(
                "\"{}\": {} % × {} = {} of points, with {} other costs: {} upfront; the level payment at {} % over {} payments is {}.",
                o.option.label,
                percent(o.option.points_percent),
                money(o.schedule.terms.principal),
                money(o.points),
                money(o.option.other_costs),
                money(o.upfront_cost),
                percent(o.option.rate.percent()),
                o.schedule.number_of_payments,
                money(o.schedule.payment)
            )
        })
        .collect();
    steps.extend(
        a.options
            .iter()
            .skip(1)
            .map(|o| option_steps(first, o, money)),
    );
    steps
}
