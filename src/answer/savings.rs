//! The savings plan's answer: summary, derivation, reconciliation and rows, for
//! the API and the savings page alike.

use crate::answer::derivation::{full, short, DerivationDto};
use crate::answer::text::IsoDate;
use crate::engine::money::AmountText;
use crate::engine::savings::{PeriodSearch, Question, SavingsPlan, Timing};
use crate::input::problem::ApiError;
use rust_decimal::Decimal;
use serde::Serialize;

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

/// A savings plan's overflow, put on the rate (the size of the growth).
pub fn overflow_named(e: ApiError, prefix: &str) -> ApiError {
    e.naming(prefix, &["annual_rate_percent"])
}
