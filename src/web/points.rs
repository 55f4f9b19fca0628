//! `/options`: is it worth paying points; the page twin of `GET /api/v1/loans/options`.

use askama::Template;
use axum::extract::RawQuery;
use axum::response::Response;

use super::form::{normalize_rows, query_string, Form, Rows};
use super::page::{render_form, Layout};
use super::refinance::years_words;
use super::view::group_thousands;
use crate::answer::points::{from_query, OptionsDto};
use crate::input::http::query_pairs;
use crate::input::points::QUERY_NAMES;
use crate::input::problem::ApiError;

/// The loan's fields on the form.
pub const OPTIONS_FORM: [(&str, bool, &[&str]); 2] = [
    ("The loan", false, &["principal", "term_months", "currency"]),
    ("How long the loan is kept", false, &["horizon_months"]),
];

/// The values of an empty form.
pub const OPTIONS_DEFAULTS: [(&str, &str); 2] = [("principal", "200,000"), ("term_months", "360")];

/// The options of an empty form: an invented rate sheet.
const DEFAULT_ROWS: [&[&str]; 3] = [
    &["No points", "6.75", "0", "0"],
    &["One point", "6.5", "1", "0"],
    &["Two points", "6.25", "2", "0"],
];

/// One option's row.
pub struct OptionRow {
    pub label: String,
    pub rate: String,
    pub points: String,
    pub upfront: String,
    pub payment: String,
    pub raw_payment: String,
    pub difference: String,
    pub break_even: String,
    pub break_even_balances: String,
    /// The cost at each horizon, then to the end.
    pub costs: Vec<String>,
    pub loan_url: String,
}

/// A computed set of options.
pub struct OptionsResult {
    pub currency: &'static str,
    pub headings: Vec<String>,
    pub rows: Vec<OptionRow>,
    /// "After 5 years: Two points", …
    pub cheapest: Vec<String>,
    pub changes: Vec<String>,
    pub derivation: Vec<String>,
    pub notes: Vec<String>,
    pub json_url: String,
    pub csv_url: String,
}

/// The options page.
#[derive(Template)]
#[template(path = "options.html")]
pub struct OptionsPage {
    pub layout: Layout,
    pub form: Form,
    pub result: Option<OptionsResult>,
}

fn months(m: Option<u32>) -> String {
    match m {
        None => "never".into(),
        Some(0) => "at once".into(),
        Some(m) => format!("{m} months"),
    }
}

/// Reads and computes with the API's reader.
///
/// # Errors
/// The API's problem.
pub fn compute(pairs: &[(String, String)]) -> Result<OptionsResult, ApiError> {
    let normalized = normalize_rows(pairs, &QUERY_NAMES, &[false, true, true, true]);
    let a = from_query(&normalized, true)?;
    let dto = OptionsDto::from_answer(&a);
    let g = |s: &str| group_thousands(s);
    let mut headings: Vec<String> = dto.options[0]
        .costs
        .iter()
        .map(|c| format!("Cost after {}", years_words(c.months)))
        .collect();
    headings.push("Cost to the end".into());
    let loan: Vec<(String, String)> = normalized
        .iter()
        .filter(|(k, _)| !QUERY_NAMES.contains(&k.as_str()) && k != "horizon_months")
        .cloned()
        .collect();
    let rows = dto
        .options
        .iter()
        .map(|o| {
            let mut p = loan.clone();
            p.push(("annual_rate_percent".into(), o.annual_rate_percent.clone()));
            OptionRow {
                label: o.label.clone(),
                rate: format!("{} %", o.annual_rate_percent),
                points: format!("{} % ({})", o.points_percent, g(&o.points)),
                upfront: g(&o.upfront_cost),
                payment: g(&o.payment),
                raw_payment: o.payment.clone(),
                difference: o
                    .monthly_difference
                    .as_deref()
                    .map_or("the reference".into(), g),
                break_even: if o.monthly_difference.is_none() {
                    "—".into()
                } else {
                    months(o.break_even_months)
                },
                break_even_balances: if o.monthly_difference.is_none() {
                    "—".into()
                } else {
                    months(o.break_even_months_with_balances)
                },
                costs: o
                    .costs
                    .iter()
                    .map(|c| g(&c.cost))
                    .chain(std::iter::once(g(&o.cost_to_end)))
                    .collect(),
                loan_url: format!("/loan?{}", query_string(&p)),
            }
        })
        .collect();
    let cheapest = dto
        .cheapest
        .iter()
        .map(|c| {
            if c.months == dto.number_of_payments {
                format!("To the end of the term: {}", c.label)
            } else {
                format!("After {}: {}", years_words(c.months), c.label)
            }
        })
        .collect();
    let changes = dto
        .cheapest_changes
        .iter()
        .map(|c| {
            if c.months == 0 {
                format!("At the start: {}", c.label)
            } else {
                format!(
                    "From month {} ({}): {}",
                    c.months,
                    years_words(c.months),
                    c.label
                )
            }
        })
        .collect();
    let query = query_string(&normalized);
    Ok(OptionsResult {
        currency: dto.currency,
        headings,
        rows,
        cheapest,
        changes,
        derivation: dto.derivation.clone(),
        notes: super::form::page_notes(&dto.notes),
        json_url: format!("/api/v1/loans/options?{query}"),
        csv_url: format!("/api/v1/loans/options.csv?{query}"),
    })
}

/// The option rows of the form.
pub fn option_rows(pairs: &[(String, String)]) -> Rows {
    Rows::from_query(
        "Rate-and-points options",
        "The first option is the one the others are measured against. Points are a percentage of the loan amount; a lender credit is negative points. Blank rows are left out.",
        vec![
            (QUERY_NAMES[0], "Option", "text"),
            (QUERY_NAMES[1], "Rate (% a year)", "decimal"),
            (QUERY_NAMES[2], "Points (%)", "decimal"),
            (QUERY_NAMES[3], "Other costs", "decimal"),
        ],
        pairs,
        &DEFAULT_ROWS,
        crate::engine::choices::points::OPTIONS_RANGE.1,
    )
}

/// Builds the page for a query string.
pub fn build(q: Option<&str>) -> OptionsPage {
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
    OptionsPage {
        layout: Layout::new("Rate and points", "/options"),
        form: Form::new(
            "/options",
            &[
                crate::input::loan::LOAN,
                crate::input::points::OPTIONS_FIELDS,
            ],
            &OPTIONS_FORM,
            &pairs,
            &OPTIONS_DEFAULTS,
            problem.as_ref(),
        )
        .with_rows(option_rows(&pairs)),
        result,
    }
}

/// `GET /options?…`
pub async fn page(RawQuery(q): RawQuery) -> Response {
    let page = build(q.as_deref());
    render_form(&page, page.form.status)
}
