//! `/compare`: up to four plans side by side, the page twin of `GET /api/v1/loans/compare`.

use askama::Template;
use axum::extract::RawQuery;
use axum::response::Response;

use super::charts::balance_chart;
use super::form::{normalize, query_string, Form};
use super::loan::{balance_series, LOAN_FORM};
use super::page::{render_form, Layout};
use crate::answer::compare::{from_query_with, CompareDto};
use crate::input::http::query_pairs;
use crate::input::problem::ApiError;

/// The values of an empty form: a first home at three terms.
pub const COMPARE_DEFAULTS: [(&str, &str); 3] = [
    ("term_months", "180, 240, 360"),
    ("payment_frequency", "monthly"),
    ("currency", "USD"),
];

/// One plan's row, as the API's row with figures grouped for reading.
pub struct PlanRow {
    pub label: String,
    pub payment: String,
    pub number_of_payments: u32,
    pub total_interest: String,
    pub total_paid: String,
    pub payoff: String,
    pub interest_saved: String,
    pub payments_saved: String,
    /// The plan alone on the loan page.
    pub loan_url: String,
    /// The API's figures, for `data-value`.
    pub raw_payment: String,
    pub raw_total_interest: String,
    pub raw_total_paid: String,
    pub raw_interest_saved: String,
    pub raw_payments_saved: String,
}

/// A computed comparison.
pub struct CompareResult {
    pub currency: &'static str,
    pub rows: Vec<PlanRow>,
    pub balance_chart: String,
    /// The API's notes after the caution.
    pub notes: Vec<String>,
    pub json_url: String,
    pub csv_url: String,
}

/// The compare page.
#[derive(Template)]
#[template(path = "compare.html")]
pub struct ComparePage {
    pub layout: Layout,
    pub form: Form,
    pub result: Option<CompareResult>,
}

/// Reads and computes with the API's comparison reader.
///
/// # Errors
/// The API's problem for this query.
pub fn compute(pairs: &[(String, String)]) -> Result<CompareResult, ApiError> {
    let normalized = normalize(pairs, true);
    let c = from_query_with(&normalized, true)?;
    let dto = CompareDto::from_comparison(&c);
    let query = query_string(&normalized);
    let listed = listed_field(&normalized);
    let rows = dto
        .rows
        .iter()
        .zip(&c.plans)
        .map(|(r, (_, s))| {
            let mut p: Vec<(String, String)> = normalized
                .iter()
                .filter(|(k, _)| Some(k.as_str()) != listed.as_deref())
                .cloned()
                .collect();
            if let Some(name) = &listed {
                if let Some(value) = r.label.strip_prefix(&format!("{name} ")) {
                    p.push((name.clone(), value.to_string()));
                }
            }
            let cur = s.terms.currency;
            PlanRow {
                label: readable_label(&r.label, listed.as_deref()),
                payment: super::view::group_thousands(&r.payment),
                number_of_payments: r.number_of_payments,
                total_interest: super::view::group_thousands(&r.total_interest),
                total_paid: super::view::group_thousands(&r.total_paid),
                payoff: match s.payoff_date {
                    Some(d) => format!(
                        "payment {} ({})",
                        r.number_of_payments,
                        super::loan::month_year(d)
                    ),
                    None => format!("payment {}", r.number_of_payments),
                },
                interest_saved: super::view::group_thousands(&r.interest_saved),
                payments_saved: r.payments_saved.map_or_else(
                    || "not counted (another frequency)".to_string(),
                    |v| super::view::group_thousands(&v.to_string()),
                ),
                loan_url: format!("/loan?{}", query_string(&p)),
                raw_payment: cur.format(s.payment),
                raw_total_interest: cur.format(s.ledger.total_interest),
                raw_total_paid: r.total_paid.clone(),
                raw_interest_saved: r.interest_saved.clone(),
                raw_payments_saved: r.payments_saved.map_or(String::new(), |v| v.to_string()),
            }
        })
        .collect();
    let series: Vec<_> = c
        .plans
        .iter()
        .map(|(label, s)| balance_series(&readable_label(label, listed.as_deref()), s))
        .collect();
    let per_year = c.plans[0].1.terms.payment_frequency.per_year();
    let desc = c
        .plans
        .iter()
        .map(|(label, s)| {
            format!(
                "{}: {} payments",
                readable_label(label, listed.as_deref()),
                s.number_of_payments
            )
        })
        .collect::<Vec<_>>()
        .join("; ");
    Ok(CompareResult {
        currency: dto.currency,
        rows,
        balance_chart: balance_chart(
            "balance",
            "The balance of each plan over time",
            &format!("One line per plan, each falling to zero at its payoff. {desc}. The table above gives the figures."),
            &series,
            per_year,
        ),
        notes: super::form::page_notes(&dto.notes),
        json_url: format!("/api/v1/loans/compare?{query}"),
        csv_url: format!("/api/v1/loans/compare.csv?{query}"),
    })
}

/// The API's label "term_months 180" as "Term in months: 180"; a label given by
/// the user is kept as given.
fn readable_label(label: &str, listed: Option<&str>) -> String {
    if let Some(name) = listed {
        if let (Some(value), Some(spec)) = (
            label.strip_prefix(name).and_then(|v| v.strip_prefix(' ')),
            super::form::spec(name),
        ) {
            return format!("{}: {value}", spec.label);
        }
    }
    label.to_string()
}

/// The field that lists several values, if one does.
fn listed_field(pairs: &[(String, String)]) -> Option<String> {
    pairs
        .iter()
        .find(|(k, v)| {
            !matches!(
                k.as_str(),
                "extra_payments" | "rate_changes" | "index_values" | "adjustable"
            ) && !k.starts_with("adjustable.")
                && v.contains(',')
        })
        .map(|(k, _)| k.clone())
}

/// Builds the page for a query string.
pub fn build(q: Option<&str>) -> ComparePage {
    let (pairs, problem) = match query_pairs(q) {
        Ok(p) => (p, None),
        Err(e) => (vec![], Some(e)),
    };
    let (pairs, rows, refused) =
        super::rows::expand(&pairs, &[&super::rows::EXTRAS, &super::rows::RATE_CHANGES]);
    let (result, problem) = super::rows::computed(&pairs, refused, problem, compute);
    ComparePage {
        layout: Layout::new("Compare plans", "/compare").with_result(result.is_some()),
        form: Form::new(
            "/compare",
            &[crate::input::loan::LOAN, crate::input::loan::PLAN],
            &LOAN_FORM,
            &pairs,
            &COMPARE_DEFAULTS,
            problem.as_ref(),
        )
        .with_all_rows(rows),
        result,
    }
}

/// `GET /compare?…`
pub async fn page(RawQuery(q): RawQuery) -> Response {
    let page = build(q.as_deref());
    render_form(&page, page.form.status)
}
