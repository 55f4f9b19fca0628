//! `/grid`: a printable payment grid; the page twin of `GET /api/v1/loans/grid`.

use askama::Template;
use axum::extract::RawQuery;
use axum::response::Response;

use super::form::{normalize, query_string, Form};
use super::page::{render_form, Layout};
use super::view::group_thousands;
use crate::answer::grid::{from_query, rate_label, GridDto};
use crate::input::http::query_pairs;
use crate::input::problem::ApiError;

/// The form's groups.
pub const GRID_FORM: [(&str, bool, &[&str]); 2] = [
    ("The grid", false, &["principal", "rates", "terms"]),
    (
        "Payments and currency",
        true,
        &["payment_frequency", "currency"],
    ),
];

/// The values of an empty form.
pub const GRID_DEFAULTS: [(&str, &str); 3] = [
    ("principal", "300,000"),
    ("rates", "6.000..7.500/0.125"),
    ("terms", "120, 180, 240, 300, 360"),
];

/// The page's own parameters: the rate and the term being discussed, marked.
const MARKS: [&str; 2] = ["mark_rate", "mark_term"];

/// One cell as shown.
pub struct Cell {
    pub payment: String,
    pub raw_payment: String,
    pub per_thousand: String,
    pub loan_url: String,
    pub marked: bool,
}

/// One rate's row.
pub struct GridRow {
    pub rate: String,
    pub mark_url: String,
    pub marked: bool,
    pub cells: Vec<Cell>,
}

/// One principal's table.
pub struct GridTable {
    pub principal: String,
    /// (term heading, link that marks it, marked).
    pub terms: Vec<(String, String, bool)>,
    pub rows: Vec<GridRow>,
}

/// A computed grid.
pub struct GridResult {
    pub currency: &'static str,
    pub tables: Vec<GridTable>,
    pub notes: Vec<String>,
    pub json_url: String,
    pub csv_url: String,
}

/// The grid page.
#[derive(Template)]
#[template(path = "grid.html")]
pub struct GridPage {
    pub layout: Layout,
    pub form: Form,
    pub result: Option<GridResult>,
}

/// Reads and computes with the API's reader.
///
/// # Errors
/// The API's problem.
pub fn compute(pairs: &[(String, String)]) -> Result<GridResult, ApiError> {
    let marks: Vec<(String, String)> = pairs
        .iter()
        .filter(|(k, _)| MARKS.contains(&k.as_str()))
        .cloned()
        .collect();
    let mark = |k: &str| {
        marks
            .iter()
            .find(|(n, _)| n == k)
            .map(|(_, v)| v.trim().to_string())
    };
    let asked: Vec<(String, String)> = pairs
        .iter()
        .filter(|(k, _)| !MARKS.contains(&k.as_str()))
        .cloned()
        .collect();
    let normalized = normalize(&asked, true);
    let g = from_query(&normalized, true)?;
    let dto = GridDto::from_grid(&g);
    let query = query_string(&normalized);
    let (mark_rate, mark_term) = (mark("mark_rate"), mark("mark_term"));
    let with_marks = |rate: Option<&str>, term: Option<String>| {
        let mut p = normalized.clone();
        if let Some(r) = rate {
            p.push(("mark_rate".into(), r.to_string()));
        }
        if let Some(t) = term {
            p.push(("mark_term".into(), t));
        }
        format!("/grid?{}#grid", query_string(&p))
    };
    let req = &g.request;
    let per_table = req.rates.len() * req.terms.len();
    let tables = req
        .principals
        .iter()
        .enumerate()
        .map(|(pi, _)| {
            let terms = req
                .terms
                .iter()
                .map(|t| {
                    let marked = mark_term.as_deref() == Some(t.to_string().as_str());
                    (
                        super::refinance::years_words(*t),
                        with_marks(mark_rate.as_deref(), Some(t.to_string())),
                        marked,
                    )
                })
                .collect();
            let rows = req
                .rates
                .iter()
                .enumerate()
                .map(|(ri, rate)| {
                    let label = rate_label(rate.percent());
                    let marked = mark_rate.as_deref().is_some_and(|m| {
                        m.parse::<rust_decimal::Decimal>().ok() == Some(rate.percent())
                    });
                    GridRow {
                        mark_url: with_marks(Some(&label), mark_term.clone()),
                        marked,
                        cells: req
                            .terms
                            .iter()
                            .enumerate()
                            .map(|(ti, t)| {
                                let c = &dto.cells[pi * per_table + ri * req.terms.len() + ti];
                                let loan: Vec<(String, String)> = vec![
                                    ("principal".into(), c.principal.clone()),
                                    ("annual_rate_percent".into(), c.annual_rate_percent.clone()),
                                    ("term_months".into(), t.to_string()),
                                    (
                                        "payment_frequency".into(),
                                        dto.payment_frequency.to_string(),
                                    ),
                                    ("currency".into(), dto.currency.to_string()),
                                ];
                                Cell {
                                    payment: group_thousands(&c.payment),
                                    raw_payment: c.payment.clone(),
                                    per_thousand: c.per_thousand.clone(),
                                    loan_url: format!("/loan?{}", query_string(&loan)),
                                    marked: marked
                                        || mark_term.as_deref() == Some(t.to_string().as_str()),
                                }
                            })
                            .collect(),
                        rate: format!("{label} %"),
                    }
                })
                .collect();
            GridTable {
                principal: group_thousands(&dto.cells[pi * per_table].principal),
                terms,
                rows,
            }
        })
        .collect();
    Ok(GridResult {
        currency: dto.currency,
        tables,
        notes: super::form::page_notes(&dto.notes),
        json_url: format!("/api/v1/loans/grid?{query}"),
        csv_url: format!("/api/v1/loans/grid.csv?{query}"),
    })
}

/// Builds the page for a query string.
pub fn build(q: Option<&str>) -> GridPage {
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
    let shown: Vec<(String, String)> = pairs
        .iter()
        .filter(|(k, _)| !MARKS.contains(&k.as_str()))
        .cloned()
        .collect();
    GridPage {
        layout: Layout::new("Payment grid", "/grid"),
        form: Form::new(
            "/grid",
            &[crate::input::grid::GRID_FIELDS],
            &GRID_FORM,
            &shown,
            &GRID_DEFAULTS,
            problem.as_ref(),
        ),
        result,
    }
}

/// `GET /grid?…`
pub async fn page(RawQuery(q): RawQuery) -> Response {
    let page = build(q.as_deref());
    render_form(&page, page.form.status)
}
