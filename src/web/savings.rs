//! `/savings`: a savings plan or a drawdown, the page twin of `GET /api/v1/savings/plan`.

use askama::Template;
use axum::extract::RawQuery;
use axum::response::Response;
use rust_decimal::Decimal;

use super::charts::{balance_chart, stacked_bars, Bar, BarWords, Series};
use super::form::{normalize, query_string, Form};
use super::mathml::{self, Step};
use super::page::{render_form, Layout};
use super::view::{
    group_thousands as g, money, span, year_of, Figure, Schedule, Year, UNFOLDED_ROWS,
};
use crate::answer::savings::SavingsPlanDto;
use crate::engine::savings::{plan, SavingsPlan};
use crate::input::fields::{Fields, Source};
use crate::input::http::query_pairs;
use crate::input::problem::ApiError;
use crate::input::savings::savings_terms_from;

/// The savings form's groups.
pub const SAVINGS_FORM: [(&str, bool, &[&str]); 3] = [
    (
        "The plan",
        false,
        &[
            "opening_balance",
            "deposit",
            "withdrawal",
            "annual_rate_percent",
            "term_months",
            "term_periods",
            "goal",
        ],
    ),
    (
        "Deposits and currency",
        false,
        &[
            "deposit_frequency",
            "deposit_timing",
            "compounding",
            "currency",
            "start_date",
        ],
    ),
    (
        "Deposits that grow",
        true,
        &[
            "deposit_growth_percent",
            "deposit_growth_every",
            "deposit_step",
        ],
    ),
];

const SAVINGS_DEFAULTS: [(&str, &str); 1] = [("deposit_frequency", "monthly")];

/// A computed savings plan.
pub struct SavingsResult {
    pub heading: String,
    pub figures: Vec<Figure>,
    pub balance_chart: String,
    pub yearly_chart: String,
    /// "deposits" or "withdrawals", for the yearly chart's caption.
    pub flows: &'static str,
    pub schedule: Schedule,
    pub steps: Vec<Step>,
    /// The engine's further steps in words (the yearly recurrence, the solved deposit, the reconciliation).
    pub more_steps: Vec<String>,
    pub notes: Vec<String>,
    pub json_url: String,
    pub csv_url: String,
}

/// The savings page.
#[derive(Template)]
#[template(path = "savings.html")]
pub struct SavingsPage {
    pub layout: Layout,
    pub form: Form,
    pub result: Option<SavingsResult>,
}

fn schedule_view(p: &SavingsPlan, flow_name: &'static str) -> (Schedule, Vec<Bar>) {
    let c = p.terms.currency;
    let per_year = p.terms.frequency.per_year();
    let dated = p.ledger.rows.iter().any(|r| r.date.is_some());
    let mut columns = vec!["No."];
    if dated {
        columns.push("Date");
    }
    columns.extend([flow_name, "Interest", "Balance"]);
    let fold = p.ledger.rows.len() > UNFOLDED_ROWS;
    let rows = &p.ledger.rows;
    let mut years = Vec::new();
    let mut bars = Vec::new();
    let mut start = 0;
    while start < rows.len() {
        let y = year_of(rows[start].number, per_year);
        let end = rows[start..]
            .iter()
            .position(|r| year_of(r.number, per_year) != y)
            .map_or(rows.len(), |i| start + i);
        let chunk = &rows[start..end];
        let (mut flow, mut interest) = (Decimal::ZERO, Decimal::ZERO);
        let mut body = Vec::with_capacity(chunk.len());
        for r in chunk {
            flow += r.deposit;
            interest += r.interest;
            let mut cells = vec![r.number.to_string()];
            if dated {
                cells.push(r.date.map(|d| d.to_string()).unwrap_or_default());
            }
            cells.extend([
                money(c, r.deposit),
                money(c, r.interest),
                money(c, r.balance),
            ]);
            body.push(cells);
        }
        let last = &chunk[chunk.len() - 1];
        let mut totals = vec![format!("Year {y}")];
        if dated {
            totals.push(String::new());
        }
        totals.extend([money(c, flow), money(c, interest), money(c, last.balance)]);
        years.push(Year {
            title: format!(
                "Year {y}: {}",
                span(
                    "period",
                    chunk[0].number,
                    last.number,
                    chunk[0].date,
                    last.date
                )
            ),
            summary: format!(
                "{} {}, interest {}; balance {}",
                flow_name.to_lowercase(),
                money(c, flow.abs()),
                money(c, interest),
                money(c, last.balance)
            ),
            open: !fold || y == 1,
            rows: body,
            totals,
        });
        bars.push(Bar {
            label: y.to_string(),
            lower: flow.abs(),
            upper: interest,
        });
        start = end;
    }
    (
        Schedule {
            caption: format!("Savings schedule ({})", c.code()),
            columns,
            years,
        },
        bars,
    )
}

/// Reads and computes with the savings API's reader and engine call.
///
/// # Errors
/// The API's problem for this query.
pub fn compute(pairs: &[(String, String)]) -> Result<SavingsResult, ApiError> {
    let normalized = normalize(pairs, false);
    let mut f = Fields::new(Source::Query(&normalized));
    f.lenient = true;
    let terms = savings_terms_from(f)?;
    let p = plan(&terms)
        .map_err(|e| crate::answer::savings::overflow_named(ApiError::from_engine(e, ""), ""))?;
    let dto = SavingsPlanDto::from_plan(&p);
    let s = &dto.summary;
    let c = p.terms.currency;
    let drawdown = p.terms.question.is_drawdown();
    let flow_name = if drawdown { "Withdrawal" } else { "Deposit" };
    let solved = match s.solved_for {
        "deposit" => "the deposit that reaches the goal",
        "number_of_periods" if drawdown => "how many withdrawals the balance supports",
        "number_of_periods" => "when the goal is reached",
        "withdrawal" => "the withdrawal that uses up the balance",
        _ => "the final balance",
    };
    let mut figures = Vec::new();
    if let Some(d) = &s.deposit {
        figures.push(
            Figure::new(
                if p.form.shape.is_level() {
                    "Deposit"
                } else {
                    "First deposit"
                },
                g(d),
                d.clone(),
                format!("{} {}", s.deposit_frequency, s.currency),
            )
            .keyed("deposit"),
        );
    }
    if let Some(w) = &s.withdrawal {
        figures.push(
            Figure::new(
                "Withdrawal",
                g(w),
                w.clone(),
                format!("{} {}", s.deposit_frequency, s.currency),
            )
            .keyed("withdrawal"),
        );
    }
    figures.push(
        Figure::new(
            "Number of periods",
            s.number_of_periods.to_string(),
            s.number_of_periods.to_string(),
            if s.lasts_indefinitely {
                "the balance never runs out".to_string()
            } else {
                String::new()
            },
        )
        .keyed("number_of_periods"),
    );
    figures.push(
        Figure::new(
            "Final balance",
            g(&s.final_balance),
            s.final_balance.clone(),
            "",
        )
        .keyed("final_balance"),
    );
    figures.push(
        Figure::new(
            "Total deposited",
            g(&s.total_deposited),
            s.total_deposited.clone(),
            "",
        )
        .keyed("total_deposited"),
    );
    if drawdown {
        figures.push(
            Figure::new(
                "Total withdrawn",
                g(&s.total_withdrawn),
                s.total_withdrawn.clone(),
                "",
            )
            .keyed("total_withdrawn"),
        );
    }
    figures.push(
        Figure::new(
            "Total interest",
            g(&s.total_interest),
            s.total_interest.clone(),
            "",
        )
        .keyed("total_interest"),
    );
    if let Some(goal) = &s.goal {
        let when = s.goal_reached_at.as_ref().map_or_else(
            || "not reached".to_string(),
            |r| match &r.date {
                Some(d) => format!("reached at period {}, {d}", r.period),
                None => format!("reached at period {}", r.period),
            },
        );
        figures.push(Figure::new("Goal", g(goal), goal.clone(), when).keyed("goal"));
    }
    figures.push(
        Figure::new(
            "APY",
            format!("{} %", s.apy_percent),
            s.apy_percent.clone(),
            "of the account rate",
        )
        .keyed("apy_percent"),
    );
    let (schedule, bars) = schedule_view(&p, flow_name);
    let mut points = vec![(0, p.terms.opening_balance)];
    points.extend(p.ledger.rows.iter().map(|r| (r.number, r.balance)));
    let per_year = p.terms.frequency.per_year();
    let balance = balance_chart(
        "balance",
        "The balance over time",
        &format!(
            "The balance goes from {} to {} over {} periods ({} a year); the schedule below gives every figure.",
            money(c, p.terms.opening_balance),
            money(c, p.ledger.final_balance),
            p.ledger.rows.len(),
            per_year
        ),
        &[Series { label: "balance".into(), points }],
        per_year,
    );
    let yearly = stacked_bars(
        "yearly",
        &format!("Each year's {}s and interest", flow_name.to_lowercase()),
        &format!(
            "{} bars, one a year: the lower part is {}s, the upper part interest; the yearly subtotals in the schedule give each figure.",
            bars.len(),
            flow_name.to_lowercase()
        ),
        &bars,
        &BarWords {
            lower: if drawdown { "Withdrawals" } else { "Deposits" },
            upper: "Interest earned",
            axis: if drawdown {
                "withdrawn and earned in the year"
            } else {
                "deposited and earned in the year"
            },
        },
    );
    let query = query_string(&normalized);
    Ok(SavingsResult {
        heading: format!("The plan: {solved}"),
        figures,
        balance_chart: balance,
        yearly_chart: yearly,
        flows: if drawdown { "withdrawals" } else { "deposits" },
        schedule,
        steps: mathml::steps(
            &p.form.period,
            if drawdown { "withdrawal" } else { "deposit" },
        ),
        // The year's deposit c_y written c(y): a subscript in running text.
        more_steps: dto
            .derivation
            .steps
            .iter()
            .map(|t| t.replace("c_y", "c(y)"))
            .collect(),
        notes: super::form::page_notes(&dto.notes),
        json_url: format!("/api/v1/savings/plan?{query}"),
        csv_url: format!("/api/v1/savings/plan.csv?{query}"),
    })
}

/// Builds the page for a query string.
pub fn build(q: Option<&str>) -> SavingsPage {
    let (pairs, problem) = match query_pairs(q) {
        Ok(p) => (p, None),
        Err(e) => (vec![], Some(e)),
    };
    let (result, problem) = if pairs.is_empty() {
        (None, problem)
    } else {
        match compute(&pairs) {
            Ok(r) => (Some(r), None),
            Err(e) => (None, Some(e)),
        }
    };
    SavingsPage {
        layout: Layout::new("Savings plan", "/savings").with_result(result.is_some()),
        form: Form::new(
            "/savings",
            &[crate::input::savings::SAVINGS_FIELDS],
            &SAVINGS_FORM,
            &pairs,
            &SAVINGS_DEFAULTS,
            problem.as_ref(),
        ),
        result,
    }
}

/// `GET /savings?…`
pub async fn page(RawQuery(q): RawQuery) -> Response {
    let page = build(q.as_deref());
    render_form(&page, page.form.status)
}
