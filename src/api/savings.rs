//! The savings plan operation: request fields in, JSON or CSV out.
//!
//! `POST /api/v1/savings/plan` (JSON body), `GET /api/v1/savings/plan?…` and
//! `GET /api/v1/savings/plan.csv?…` read the same fields with the same
//! [`Fields`] reader, so a plan posted as JSON and fetched as a plain URL gives
//! the same answer.
//!
//! What is solved follows from what is given (exactly enough of it):
//!
//! | given                          | solved                                       |
//! |--------------------------------|----------------------------------------------|
//! | `deposit` and a term           | the final balance                            |
//! | `deposit` and `goal`           | the number of periods to reach the goal      |
//! | a term and `goal`              | the deposit that reaches the goal            |
//! | `withdrawal` and a term        | the final balance of the drawdown            |
//! | `withdrawal` alone             | how many withdrawals the balance supports    |
//! | a term alone                   | the withdrawal that exhausts the balance     |
//!
//! A term is `term_months` or `term_periods`.

use axum::extract::RawQuery;
use axum::http::HeaderMap;
use axum::response::Response;
use jiff::civil::Date;
use rust_decimal::Decimal;
use serde::Serialize;

use super::derivation::{full, short, DerivationDto};
use super::handlers::{csv_answer, json_answer, JsonBody};
use super::text::IsoDate;
use crate::engine::money::{AmountText, Currency};
use crate::engine::rate::{AnnualRate, Frequency};
use crate::engine::savings::{
    check_amount, check_periods, periods_in_months, plan, Flow, Growth, GrowthEvery, PeriodSearch,
    Question, SavingsPlan, SavingsTerms, Timing,
};
use crate::input::fields::{Fields, Source};
use crate::input::http::{query_pairs, wants_csv};
use crate::input::json::Json;
use crate::input::problem::{ApiError, FieldError};

const DEPOSIT_FREQUENCIES: [&str; 7] = [
    "annual",
    "semiannual",
    "quarterly",
    "monthly",
    "semimonthly",
    "biweekly",
    "weekly",
];
const COMPOUNDINGS: [&str; 8] = [
    "annual",
    "semiannual",
    "quarterly",
    "monthly",
    "semimonthly",
    "biweekly",
    "weekly",
    "daily",
];

/// The field names of a savings plan request, in the order the guide lists them.
pub const SAVINGS_FIELDS: [&str; 15] = [
    "opening_balance",
    "deposit",
    "withdrawal",
    "deposit_timing",
    "deposit_frequency",
    "deposit_growth_percent",
    "deposit_growth_every",
    "deposit_step",
    "annual_rate_percent",
    "compounding",
    "term_months",
    "term_periods",
    "goal",
    "start_date",
    "currency",
];

/// A date written as ISO 8601 `YYYY-MM-DD`, and a real calendar date.
fn parse_date(text: &str) -> Result<Date, String> {
    let b = text.as_bytes();
    let shaped = b.len() == 10
        && b[4] == b'-'
        && b[7] == b'-'
        && b.iter()
            .enumerate()
            .all(|(i, c)| i == 4 || i == 7 || c.is_ascii_digit());
    if !shaped {
        return Err("must be a date written YYYY-MM-DD (ISO 8601), e.g. 2027-03-01".into());
    }
    let number = |range: std::ops::Range<usize>| text[range].parse::<i16>().unwrap_or(0);
    let (y, m, d) = (number(0..4), number(5..7), number(8..10));
    Date::new(y, m as i8, d as i8).map_err(|_| format!("{text} is not a date of the calendar"))
}

fn present_without_error(f: &Fields<'_>, name: &str) -> bool {
    let pointer = f.pointer(name);
    !f.errors.iter().any(|e| e.pointer == pointer)
}

/// Reads savings terms from request fields (JSON body or query string).
///
/// Returns `None` when a field is bad or missing; every problem is recorded in `f`
/// with its pointer, range problems of the engine included.
pub fn read_savings_terms(f: &mut Fields<'_>) -> Option<SavingsTerms> {
    let currency = match f.text("currency") {
        None => Some(Currency::USD),
        Some(code) => {
            let c = Currency::parse(code);
            if c.is_none() {
                let known: Vec<&str> = Currency::codes().collect();
                f.error(
                    "currency",
                    format!(
                        "is not a currency Residue knows; use one of {}",
                        known.join(", ")
                    ),
                );
            }
            c
        }
    };
    let opening = f.decimal("opening_balance");
    let deposit = f.decimal("deposit");
    let withdrawal = f.decimal("withdrawal");
    let timing = f.choice("deposit_timing", Timing::parse, &["start", "end"]);
    let frequency = f
        .choice(
            "deposit_frequency",
            |s| Frequency::parse(s).filter(|f| *f != Frequency::Daily),
            &DEPOSIT_FREQUENCIES,
        )
        .or_else(|| present_without_error(f, "deposit_frequency").then_some(Frequency::Monthly));
    let growth_percent = f.decimal("deposit_growth_percent");
    let growth_every = f.choice(
        "deposit_growth_every",
        GrowthEvery::parse,
        &["period", "year"],
    );
    let step = f.decimal("deposit_step");
    let rate = f.decimal("annual_rate_percent");
    let compounding = f.choice("compounding", Frequency::parse, &COMPOUNDINGS);
    let months = f.whole("term_months", "120");
    let periods = f.whole("term_periods", "120");
    let goal = f.decimal("goal");
    let start_date = match f.text("start_date") {
        None => None,
        Some(t) => match parse_date(t) {
            Ok(d) => Some(d),
            Err(message) => {
                f.error("start_date", message);
                None
            }
        },
    };

    // Each field's own range first, so that every bad field is named at once; the
    // rules across fields only once each field alone is valid.
    let amounts_in = currency.unwrap_or(Currency::USD);
    let opening = opening.filter(|v| f.in_range(check_amount("opening_balance", *v, amounts_in)));
    let deposit = deposit.filter(|v| f.in_range(check_amount("deposit", *v, amounts_in)));
    let withdrawal = withdrawal.filter(|v| f.in_range(check_amount("withdrawal", *v, amounts_in)));
    let goal = goal.filter(|v| f.in_range(check_amount("goal", *v, amounts_in)));
    let step = step.filter(|v| f.in_range(check_amount("deposit_step", *v, amounts_in)));
    let months = months.filter(|m| match frequency {
        Some(frequency) => f.in_range(periods_in_months(*m, frequency).map(|_| ())),
        None => true,
    });
    let periods = periods.filter(|n| f.in_range(check_periods(*n, "term_periods")));
    let rate = rate.and_then(|r| match AnnualRate::from_percent(r) {
        Ok(r) => Some(r),
        Err(e) => {
            f.error("annual_rate_percent", e.message);
            None
        }
    });
    let fields_ok = f.errors.is_empty();

    let has_deposit = f.has("deposit");
    let has_withdrawal = f.has("withdrawal");
    let has_months = f.has("term_months");
    let has_periods = f.has("term_periods");
    let has_goal = f.has("goal");
    let combination_ok = !fields_ok
        || cross_field_rules(
            f,
            has_deposit,
            has_withdrawal,
            has_months,
            has_periods,
            has_goal,
        );
    if rate.is_none() && present_without_error(f, "annual_rate_percent") {
        f.error("annual_rate_percent", "is required");
    }
    let (Some(currency), Some(rate), Some(frequency)) = (currency, rate, frequency) else {
        return None;
    };
    if !f.errors.is_empty() || !combination_ok {
        return None;
    }
    let term = if let Some(m) = months {
        match periods_in_months(m, frequency) {
            Ok(n) => Some(n),
            Err(e) => {
                f.error("term_months", e.message);
                return None;
            }
        }
    } else {
        periods
    };
    let question = match (deposit, withdrawal, term, goal) {
        (Some(deposit), None, Some(periods), None) => Question::FinalBalance {
            flow: Flow::Deposit(deposit),
            periods,
        },
        (Some(deposit), None, None, Some(goal)) => Question::PeriodsToGoal { deposit, goal },
        (None, None, Some(periods), Some(goal)) => Question::DepositForGoal { goal, periods },
        (None, Some(w), Some(periods), None) => Question::FinalBalance {
            flow: Flow::Withdrawal(w),
            periods,
        },
        (None, Some(withdrawal), None, None) => Question::WithdrawalsSupported { withdrawal },
        (None, None, Some(periods), None) => Question::WithdrawalForTerm { periods },
        // Each other combination was recorded as an error above.
        _ => return None,
    };
    let growth = growth_percent.map(|percent| Growth {
        percent,
        every: growth_every.unwrap_or_default(),
    });
    let terms = SavingsTerms {
        opening_balance: opening.unwrap_or(Decimal::ZERO),
        currency,
        rate,
        frequency,
        compounding,
        timing: timing.unwrap_or_default(),
        growth,
        deposit_step: step.unwrap_or(Decimal::ZERO),
        question,
        start_date,
    };
    let problems = terms.problems();
    for e in &problems {
        f.error(e.field.unwrap_or(""), e.message.clone());
    }
    problems.is_empty().then_some(terms)
}

/// The rules across the savings fields (which combination asks which question),
/// recorded in `f`; true when the combination is one Residue answers.
fn cross_field_rules(
    f: &mut Fields<'_>,
    has_deposit: bool,
    has_withdrawal: bool,
    has_months: bool,
    has_periods: bool,
    has_goal: bool,
) -> bool {
    let has_term = has_months || has_periods;
    if has_deposit && has_withdrawal {
        f.error(
            "withdrawal",
            "give either deposit or withdrawal, not both: a plan either saves or draws down",
        );
    }
    if has_months && has_periods {
        f.error(
            "term_periods",
            "give only one of term_months and term_periods",
        );
    }
    if f.has("deposit_growth_every") && !f.has("deposit_growth_percent") {
        f.error(
            "deposit_growth_every",
            "has no effect without deposit_growth_percent",
        );
    }
    match (has_deposit, has_withdrawal, has_term, has_goal) {
        (true, true, _, _) => false,
        (true, false, true, true) => {
            f.error(
                "goal",
                "with a deposit give a term (to find the final balance) or a goal (to find when it is reached), not both",
            );
            false
        }
        (true, false, false, false) => {
            f.error(
                "term_months",
                "give term_months or term_periods (to find the final balance) or goal (to find when it is reached)",
            );
            false
        }
        (false, true, _, true) => {
            f.error(
                "goal",
                "a goal is for deposits: with a withdrawal give a term (to find the final balance) or nothing more (to find how many withdrawals the balance supports)",
            );
            false
        }
        (false, false, false, true) => {
            f.error(
                "deposit",
                "with a goal give a deposit (to find when the goal is reached) or a term (to find the deposit that reaches it)",
            );
            false
        }
        (false, false, false, false) => {
            f.error(
                "deposit",
                "give a deposit or a withdrawal with a term or a goal; or a term and a goal (to find the deposit); or a term alone (to find the withdrawal that exhausts the opening balance)",
            );
            false
        }
        _ => true,
    }
}

/// Turns fields into terms, or into one problem naming every bad field.
///
/// # Errors
/// The problem to answer.
pub fn savings_terms_from(mut f: Fields<'_>) -> Result<SavingsTerms, ApiError> {
    let terms = read_savings_terms(&mut f);
    let errors: Vec<FieldError> = match f.finish() {
        Ok(()) => vec![],
        Err(e) => e,
    };
    match terms {
        Some(t) if errors.is_empty() => Ok(t),
        _ => Err(ApiError::fields(errors)),
    }
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct GoalReachedDto {
    pub period: u32,
    pub date: Option<String>,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct SavingsSummaryDto {
    /// What was solved: `final_balance`, `deposit`, `number_of_periods` or `withdrawal`.
    pub solved_for: &'static str,
    pub final_balance: String,
    pub total_deposited: String,
    pub total_withdrawn: String,
    pub total_interest: String,
    /// The level (or first) deposit, given or solved; `null` for a drawdown.
    pub deposit: Option<String>,
    /// The level (or first) withdrawal, given or solved; `null` for deposits.
    pub withdrawal: Option<String>,
    pub number_of_periods: u32,
    pub goal: Option<String>,
    pub goal_reached_at: Option<GoalReachedDto>,
    /// Withdrawals that never exceed the interest: the balance never runs out.
    pub lasts_indefinitely: bool,
    /// The annual percentage yield of the account rate, 12 CFR 1030 Appendix A,
    /// rounded to two decimals (§1030.3(f)).
    pub apy_percent: String,
    pub periodic_rate: String,
    pub currency: &'static str,
    pub deposit_frequency: &'static str,
    pub compounding: &'static str,
    pub deposit_timing: &'static str,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct YearlyDerivationDto {
    #[serde(flatten)]
    pub closed_form: DerivationDto,
    /// A = a^m.
    pub year_factor: String,
    /// S = Σ_{j<m} a^j.
    pub year_sum: String,
    pub periods_per_year: u32,
    pub text: String,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct FlowSolutionDto {
    /// `deposit` or `withdrawal`.
    pub unknown: &'static str,
    pub n: u32,
    pub target: String,
    /// x[n] with no deposit: the opening balance (and the yearly step) alone.
    pub base_response: String,
    /// x[n] of a unit first deposit with no opening balance.
    pub unit_response: String,
    pub exact: String,
    pub posted: String,
    pub text: String,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct PeriodsSolutionDto {
    /// `logarithm`, `bisection` or `scan`.
    pub method: &'static str,
    /// The floating-point estimate of the logarithm, when one was used.
    pub estimate: Option<u32>,
    /// Closed-form evaluations of the bisection, when one was used.
    pub evaluations: Option<u32>,
    /// The first n whose closed-form balance reaches the target.
    pub n: u32,
    pub target: String,
    pub balance_before: String,
    pub balance_at: String,
    pub text: String,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct SavingsDerivationDto {
    /// The period recurrence; with yearly growth, that of the first year.
    pub period: DerivationDto,
    /// With yearly growth or a yearly step: the recurrence of the year-end balances.
    pub yearly: Option<YearlyDerivationDto>,
    pub deposit_solution: Option<FlowSolutionDto>,
    pub periods_solution: Option<PeriodsSolutionDto>,
    /// The derivation in sentences, from the recurrence to the posted ledger.
    pub steps: Vec<String>,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct SavingsReconciliationDto {
    pub largest_drift: String,
    pub at_period: u32,
    pub rows_compared: u32,
    pub drift_bound: String,
    pub text: String,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct SavingsRowDto {
    pub number: u32,
    #[schema(value_type = Option<String>)]
    pub date: Option<IsoDate>,
    /// Negative for a withdrawal.
    #[schema(value_type = String)]
    pub deposit: AmountText,
    #[schema(value_type = String)]
    pub interest: AmountText,
    #[schema(value_type = String)]
    pub balance: AmountText,
}

/// The JSON answer of the savings plan operation.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct SavingsPlanDto {
    pub summary: SavingsSummaryDto,
    pub derivation: SavingsDerivationDto,
    pub reconciliation: Option<SavingsReconciliationDto>,
    pub schedule: Vec<SavingsRowDto>,
    pub notes: Vec<String>,
}

impl SavingsPlanDto {
    pub fn from_plan(p: &SavingsPlan) -> Self {
        let t = &p.terms;
        let c = t.currency;
        let money = |d: Decimal| c.format(d);
        let currency_text = |d: Decimal| c.text(d);
        let drawdown = t.question.is_drawdown();
        let what = if drawdown { "withdrawal" } else { "deposit" };
        let m = p.form.shape.periods_per_year;
        let mut steps = Vec::new();
        let mut period = DerivationDto::from_solution(&p.form.period);
        if t.timing == Timing::Start {
            let shift = format!(
                "Each {what} is made at the start of its period: x[k+1] = a·(x[k] + d) = a·x[k] + a·d. This is the end-of-period plan with the {what} a·d ({}·d here), shifted by one period: each {what} earns one more period's interest.",
                short(p.form.shape.a)
            );
            period.steps.insert(0, shift.clone());
            steps.push(shift);
        }
        let yearly = p.form.yearly.as_ref().map(|y| {
            let text = format!(
                "The {what} is level within each year and changes once a year, a staircase that is not in the transform table. At the year ends the balance B[y] = x[{m}y] obeys B[y+1] = A·B[y] + S·(c·g^y + s·y) with A = a^{m} = {}, S = Σ_{{j<{m}}} a^j = {} (one year of a unit {what}), c = {} the first year's {what}, g = {} and s = {} the yearly step. That recurrence is solved in closed form below; inside year y the balance is x[{m}y + r] = a^r·B[y] + c_y·Σ_{{j<r}} a^j, the period closed form from B[y] with that year's {what} c_y = c·g^y + s·y.",
                full(y.year_factor.round_dp(18)),
                full(y.year_sum.round_dp(18)),
                full(y.flow),
                full(y.ratio),
                full(y.step),
            );
            period.steps.push(format!(
                "This closed form holds for the first year (k ≤ {m}); each later year starts from B[y] with its own {what}."
            ));
            steps.push(text.clone());
            YearlyDerivationDto {
                closed_form: DerivationDto::from_solution(&y.year),
                year_factor: full(y.year_factor),
                year_sum: full(y.year_sum),
                periods_per_year: m,
                text,
            }
        });
        let deposit_solution = p.solved_flow.map(|s| {
            let posted = p.flow.abs();
            let text = if drawdown {
                format!(
                    "The balance is linear in the withdrawal: x[n] = base[n] + F·unit[n], with base[{n}] = {} (the opening balance{} alone) and unit[{n}] = {} (a unit deposit{}). Setting x[{n}] = 0 gives the withdrawal −F = base[{n}]/unit[{n}] = {}, posted rounded to the nearest minor unit as {}; the last withdrawal takes what is left.",
                    full(s.base_response.round_dp(12)),
                    if p.step.is_zero() { "" } else { " with the yearly step" },
                    full(s.unit_response.round_dp(12)),
                    if p.form.shape.is_level() { "" } else { ", growing as the plan grows" },
                    full((-s.exact).round_dp(12)),
                    money(posted),
                    n = s.n
                )
            } else {
                format!(
                    "The balance is linear in the deposit: x[n] = base[n] + D·unit[n], with base[{n}] = {} (the opening balance{} alone) and unit[{n}] = {} (a unit deposit{}). Setting x[{n}] = {} gives D = (goal − base[{n}])/unit[{n}] = {}, posted as {}.",
                    full(s.base_response.round_dp(12)),
                    if p.step.is_zero() { "" } else { " with the yearly step" },
                    full(s.unit_response.round_dp(12)),
                    if p.form.shape.is_level() { "" } else { ", growing as the plan grows" },
                    money(s.target),
                    full(s.exact.round_dp(12)),
                    money(posted),
                    n = s.n
                )
            };
            steps.push(text.clone());
            FlowSolutionDto {
                unknown: what,
                n: s.n,
                target: full(s.target),
                base_response: full(s.base_response),
                unit_response: full(s.unit_response),
                exact: full(if drawdown { -s.exact } else { s.exact }),
                posted: money(posted),
                text,
            }
        });
        let periods_solution = p.periods_search.map(|s| {
            let (method, estimate, evaluations) = match s.method {
                PeriodSearch::Logarithm { estimate } => ("logarithm", Some(estimate), None),
                PeriodSearch::Bisection { evaluations } => ("bisection", None, Some(evaluations)),
                PeriodSearch::Scan => ("scan", None, None),
            };
            let reached = if drawdown {
                "x[n] ≤ 0".to_string()
            } else {
                format!("x[n] ≥ {}", money(s.target))
            };
            let how = match s.method {
                PeriodSearch::Logarithm { estimate } => format!(
                    "The closed form gives n through a logarithm; its binary-floating-point estimate ({estimate}) was confirmed exactly with the decimal closed form"
                ),
                PeriodSearch::Bisection { evaluations } => format!(
                    "The {what}s grow, so n comes from a bisection over whole periods on the closed form ({evaluations} evaluations, each O(1), in binary floating point), confirmed exactly with the decimal closed form at n − 1 and n"
                ),
                PeriodSearch::Scan => format!(
                    "The {what}s grow and the balance may rise before it falls, so the closed form was scanned period by period"
                ),
            };
            let text = format!(
                "{how}: the first n with {reached} is n = {}, where x[{}] = {} and x[{}] = {}.",
                s.n,
                s.n - 1,
                full(s.before.round_dp(6)),
                s.n,
                full(s.at.round_dp(6)),
            );
            steps.push(text.clone());
            PeriodsSolutionDto {
                method,
                estimate,
                evaluations,
                n: s.n,
                target: full(s.target),
                balance_before: full(s.before),
                balance_at: full(s.at),
                text,
            }
        });
        let reconciliation = p.reconciliation.map(|r| {
            let text = format!(
                "The posted ledger credits each period's interest rounded to the minor unit (halves up){}. Against the closed form with the posted {what} its balance drifts at most {} (at period {}, over {} rows); rounding can drift it no more than {} by then.",
                if p.form.shape.is_level() { "" } else { " and posts each growing amount rounded to the minor unit" },
                full(r.largest_drift.round_dp(6)),
                r.at_period,
                r.compared,
                full(r.bound.round_dp(6)),
            );
            steps.push(text.clone());
            SavingsReconciliationDto {
                largest_drift: full(r.largest_drift.round_dp(12)),
                at_period: r.at_period,
                rows_compared: r.compared,
                drift_bound: full(r.bound.round_dp(12)),
                text,
            }
        });
        let solved_for = match t.question {
            Question::FinalBalance { .. } => "final_balance",
            Question::DepositForGoal { .. } => "deposit",
            Question::PeriodsToGoal { .. } => "number_of_periods",
            Question::WithdrawalForTerm { .. } => "withdrawal",
            Question::WithdrawalsSupported { .. } => "number_of_periods",
        };
        let goal = match t.question {
            Question::DepositForGoal { goal, .. } | Question::PeriodsToGoal { goal, .. } => {
                Some(money(goal))
            }
            _ => None,
        };
        let mut apy = p.apy.apy_percent_rounded;
        apy.rescale(2);
        SavingsPlanDto {
            summary: SavingsSummaryDto {
                solved_for,
                final_balance: money(p.ledger.final_balance),
                total_deposited: money(p.ledger.total_deposited),
                total_withdrawn: money(p.ledger.total_withdrawn),
                total_interest: money(p.ledger.total_interest),
                deposit: (!drawdown).then(|| money(p.flow)),
                withdrawal: drawdown.then(|| money(-p.flow)),
                number_of_periods: p.ledger.rows.len() as u32,
                goal,
                goal_reached_at: p.goal_reached_at.map(|g| GoalReachedDto {
                    period: g.period,
                    date: g.date.map(|d| d.to_string()),
                }),
                lasts_indefinitely: p.lasts_indefinitely,
                apy_percent: apy.to_string(),
                periodic_rate: full(p.periodic_rate),
                currency: c.code(),
                deposit_frequency: t.frequency.name(),
                compounding: t.compounding.unwrap_or(t.frequency).name(),
                deposit_timing: t.timing.name(),
            },
            derivation: SavingsDerivationDto {
                period,
                yearly,
                deposit_solution,
                periods_solution,
                steps,
            },
            reconciliation,
            schedule: p
                .ledger
                .rows
                .iter()
                .map(|r| SavingsRowDto {
                    number: r.number,
                    date: r.date.map(IsoDate),
                    deposit: currency_text(r.deposit),
                    interest: currency_text(r.interest),
                    balance: currency_text(r.balance),
                })
                .collect(),
            notes: p.notes.clone(),
        }
    }
}

/// The schedule as CSV (RFC 4180): a header row, then one row a period; the date
/// is empty without a `start_date`, and a withdrawal is a negative deposit.
pub fn schedule_csv(p: &SavingsPlan) -> String {
    let c = p.terms.currency;
    let mut out = String::with_capacity(48 * (p.ledger.rows.len() + 1));
    out.push_str("number,date,deposit,interest,balance\r\n");
    for r in &p.ledger.rows {
        out.push_str(&format!(
            "{},{},{},{},{}\r\n",
            r.number,
            r.date.map(|d| d.to_string()).unwrap_or_default(),
            c.format(r.deposit),
            c.format(r.interest),
            c.format(r.balance)
        ));
    }
    out
}

/// A savings plan's overflow, put on the rate (the size of the growth).
pub fn overflow_named(e: ApiError, prefix: &str) -> ApiError {
    e.naming(prefix, &["annual_rate_percent"])
}

fn savings_answer(fields: Fields<'_>, csv: bool) -> Result<Response, ApiError> {
    let prefix = fields.pointer("");
    let terms = savings_terms_from(fields)?;
    let p = plan(&terms).map_err(|e| overflow_named(ApiError::from_engine(e, &prefix), &prefix))?;
    Ok(if csv {
        csv_answer(schedule_csv(&p), "savings-plan.csv")
    } else {
        json_answer(&SavingsPlanDto::from_plan(&p))
    })
}

/// `POST /api/v1/savings/plan`
pub async fn plan_post(headers: HeaderMap, JsonBody(body): JsonBody) -> Result<Response, ApiError> {
    let Json::Object(members) = &body else {
        unreachable!("parse_object checks")
    };
    savings_answer(
        Fields::new(Source::Json {
            members,
            pointer: "",
        }),
        wants_csv(&headers),
    )
}

/// `GET /api/v1/savings/plan?…`
pub async fn plan_get(headers: HeaderMap, RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    savings_answer(Fields::new(Source::Query(&pairs)), wants_csv(&headers))
}

/// `GET /api/v1/savings/plan.csv?…`
pub async fn plan_get_csv(RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    savings_answer(Fields::new(Source::Query(&pairs)), true)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_must_be_iso_calendar_dates() {
        assert_eq!(parse_date("2027-03-01").unwrap().to_string(), "2027-03-01");
        for bad in [
            "2027-3-01",
            "20270301",
            "2027-02-30",
            "2027-13-01",
            "",
            "2027-03-01T00:00",
        ] {
            assert!(parse_date(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn exactly_enough_fields_fix_the_unknown() {
        let read = |pairs: &[(&str, &str)]| {
            let owned: Vec<(String, String)> = pairs
                .iter()
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect();
            let mut f = Fields::new(Source::Query(&owned));
            let t = read_savings_terms(&mut f).map(|t| t.question);
            (t, f.errors)
        };
        let (q, _) = read(&[
            ("annual_rate_percent", "4"),
            ("deposit", "100"),
            ("term_months", "12"),
        ]);
        assert!(matches!(
            q,
            Some(Question::FinalBalance {
                flow: Flow::Deposit(_),
                periods: 12
            })
        ));
        let (q, _) = read(&[
            ("annual_rate_percent", "4"),
            ("goal", "1000"),
            ("term_periods", "12"),
        ]);
        assert!(matches!(q, Some(Question::DepositForGoal { .. })));
        let (q, _) = read(&[
            ("annual_rate_percent", "4"),
            ("opening_balance", "1000"),
            ("term_periods", "12"),
        ]);
        assert!(matches!(
            q,
            Some(Question::WithdrawalForTerm { periods: 12 })
        ));
        let (q, errors) = read(&[
            ("annual_rate_percent", "4"),
            ("deposit", "100"),
            ("goal", "1000"),
            ("term_periods", "12"),
        ]);
        assert!(q.is_none());
        assert_eq!(errors[0].pointer, "goal");
    }
}
