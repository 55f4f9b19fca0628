//! `/refinance`: does refinancing pay, and when; the page twin of `GET /api/v1/refinance`.

use askama::Template;
use axum::extract::RawQuery;
use axum::response::Response;

use super::form::{normalize, query_string, Form};
use super::page::{render_form, Layout};
use super::view::{group_thousands, Figure};
use crate::answer::refinance::{from_query, RefinanceDto};
use crate::input::http::query_pairs;
use crate::input::problem::ApiError;

/// The form's groups: the current loan, the new loan, the costs.
pub const REFINANCE_FORM: [(&str, bool, &[&str]); 4] = [
    (
        "The current loan",
        false,
        &[
            "current.balance",
            "current.annual_rate_percent",
            "current.remaining_payments",
        ],
    ),
    (
        "Or the current loan as first made (instead of the balance and payments left)",
        true,
        &[
            "current.principal",
            "current.term_months",
            "current.payments_made",
        ],
    ),
    (
        "The new loan",
        false,
        &[
            "annual_rate_percent",
            "term_months",
            "principal",
            "currency",
        ],
    ),
    (
        "Costs and how long the loan is kept",
        false,
        &[
            "closing_costs",
            "points_percent",
            "financed_costs",
            "cash_out",
            "horizon_months",
        ],
    ),
];

/// The values of an empty form: an invented refinance of a 7.25 % loan.
pub const REFINANCE_DEFAULTS: [(&str, &str); 7] = [
    ("current.balance", "187,500"),
    ("current.annual_rate_percent", "7.25"),
    ("current.remaining_payments", "312"),
    ("annual_rate_percent", "6.125"),
    ("term_months", "360"),
    ("closing_costs", "3,200"),
    ("points_percent", "1"),
];

/// One horizon's row.
pub struct HorizonRow {
    pub when: String,
    pub keep: String,
    pub refinance: String,
    pub saves: String,
    pub raw_saves: String,
}

/// A computed refinance, as the page shows it.
pub struct RefinanceResult {
    pub currency: &'static str,
    pub headline: String,
    pub figures: Vec<Figure>,
    pub horizons: Vec<HorizonRow>,
    /// "In 5 years": (row label, current, new).
    pub five_years: Vec<(String, String, String)>,
    pub derivation: Vec<String>,
    pub notes: Vec<String>,
    pub json_url: String,
    pub csv_url: String,
    pub new_loan_url: String,
}

/// The refinance page.
#[derive(Template)]
#[template(path = "refinance.html")]
pub struct RefinancePage {
    pub layout: Layout,
    pub form: Form,
    pub result: Option<RefinanceResult>,
}

fn months_words(m: Option<u32>, none: &str) -> String {
    match m {
        None => none.to_string(),
        Some(0) => "at once".to_string(),
        Some(m) => format!("{m} months ({})", years_words(m)),
    }
}

/// 61 months as "5 years 1 month".
pub fn years_words(m: u32) -> String {
    let (y, r) = (m / 12, m % 12);
    let part = |n: u32, one: &str, many: &str| format!("{n} {}", if n == 1 { one } else { many });
    match (y, r) {
        (0, r) => part(r, "month", "months"),
        (y, 0) => part(y, "year", "years"),
        (y, r) => format!(
            "{} {}",
            part(y, "year", "years"),
            part(r, "month", "months")
        ),
    }
}

/// Reads and computes with the API's refinance reader.
///
/// # Errors
/// The API's problem for this query.
pub fn compute(pairs: &[(String, String)]) -> Result<RefinanceResult, ApiError> {
    let normalized = normalize(pairs, false);
    let r = from_query(&normalized, true)?;
    let dto = RefinanceDto::from_refinance(&r);
    let g = |s: &str| group_thousands(s);
    let saving = -r.monthly_change;
    let headline = if saving > rust_decimal::Decimal::ZERO {
        format!(
            "Refinancing lowers the payment by {} a month; the costs of {} are recovered {}.",
            g(dto.monthly_change.trim_start_matches('-')),
            g(&dto.costs.total_costs),
            match dto.break_even_months_with_balances {
                Some(m) => format!("by month {m}, counting what each loan still owes"),
                None => "in no month, counting what each loan still owes".into(),
            }
        )
    } else {
        format!(
            "The new payment is {} a month more (or no lower): refinancing does not pay through the payment.",
            g(dto.monthly_change.trim_start_matches('-'))
        )
    };
    let figures = vec![
        Figure::new(
            "Current payment",
            g(&dto.current_payment),
            dto.current_payment.clone(),
            "principal and interest",
        )
        .keyed("current_payment"),
        Figure::new(
            "New payment",
            g(&dto.new_payment),
            dto.new_payment.clone(),
            "principal and interest",
        )
        .keyed("new_payment"),
        Figure::new(
            "Change a month",
            g(&dto.monthly_change),
            dto.monthly_change.clone(),
            "new less current",
        )
        .keyed("monthly_change"),
        Figure::new(
            "Costs",
            g(&dto.costs.total_costs),
            dto.costs.total_costs.clone(),
            format!(
                "closing costs and points; {} paid in cash",
                g(&dto.costs.paid_in_cash)
            ),
        )
        .keyed("total_costs"),
        Figure::new(
            "Break-even, simple",
            months_words(dto.break_even_months, "never"),
            dto.break_even_months
                .map_or(String::new(), |m| m.to_string()),
            "costs ÷ monthly saving, rounded up",
        )
        .keyed("break_even_months"),
        Figure::new(
            "Break-even, balances counted",
            months_words(dto.break_even_months_with_balances, "never"),
            dto.break_even_months_with_balances
                .map_or(String::new(), |m| m.to_string()),
            "payments saved plus the difference in what is owed",
        )
        .keyed("break_even_months_with_balances"),
    ];
    let horizons = dto
        .horizons
        .iter()
        .chain(std::iter::once(&dto.to_the_end))
        .enumerate()
        .map(|(i, h)| HorizonRow {
            when: if i == dto.horizons.len() {
                format!("To the end of both loans ({})", years_words(h.months))
            } else {
                format!("After {}", years_words(h.months))
            },
            keep: g(&h.current_cost),
            refinance: g(&h.new_cost),
            saves: g(&h.refinancing_saves),
            raw_saves: h.refinancing_saves.clone(),
        })
        .collect();
    let f = &dto.in_five_years;
    let five_years = vec![
        (
            "Paid in principal, interest and loan costs".to_string(),
            g(&f.current.total_paid),
            g(&f.new.total_paid),
        ),
        (
            "Principal paid off".to_string(),
            g(&f.current.principal_paid),
            g(&f.new.principal_paid),
        ),
    ];
    let query = query_string(&normalized);
    let new_loan: Vec<(String, String)> = [
        ("principal", dto.new.principal.clone()),
        ("annual_rate_percent", dto.new.annual_rate_percent.clone()),
        ("term_months", dto.new.number_of_payments.to_string()),
        ("currency", dto.currency.to_string()),
    ]
    .into_iter()
    .map(|(k, v)| (k.to_string(), v))
    .collect();
    Ok(RefinanceResult {
        currency: dto.currency,
        headline,
        figures,
        horizons,
        five_years,
        derivation: dto.derivation.clone(),
        notes: super::form::page_notes(&dto.notes),
        json_url: format!("/api/v1/refinance?{query}"),
        csv_url: format!("/api/v1/refinance.csv?{query}"),
        new_loan_url: format!("/loan?{}", query_string(&new_loan)),
    })
}

/// Builds the page for a query string.
pub fn build(q: Option<&str>) -> RefinancePage {
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
    RefinancePage {
        layout: Layout::new("Refinance", "/refinance"),
        form: Form::new(
            "/refinance",
            &[
                crate::input::loan::LOAN,
                crate::input::refinance::REFINANCE_COSTS,
            ],
            &REFINANCE_FORM,
            &pairs,
            &REFINANCE_DEFAULTS,
            problem.as_ref(),
        ),
        result,
    }
}

/// `GET /refinance?…`
pub async fn page(RawQuery(q): RawQuery) -> Response {
    let page = build(q.as_deref());
    render_form(&page, page.form.status)
}
