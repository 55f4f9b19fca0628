//! The three choices between loans: `/api/v1/refinance`, `/api/v1/loans/options`
//! and `/api/v1/loans/grid`, each as JSON or CSV.
//!
//! Each handler reads, computes once (`answer::refinance`, `answer::points`,
//! `answer::grid`) and writes; the CSV is the same answer's table.

use axum::extract::RawQuery;
use axum::http::HeaderMap;
use axum::response::Response;

use super::csv::csv_field;
use super::handlers::{csv_answer, json_answer, JsonBody};
use crate::answer::grid::{Grid, GridDto};
use crate::answer::points::OptionsDto;
use crate::answer::refinance::RefinanceDto;
use crate::input::http::{query_pairs, wants_csv};
use crate::input::problem::ApiError;

/// The refinance as CSV: one row a figure, the current loan, the new loan and
/// what refinancing saves (negative: it costs more).
pub fn refinance_csv(r: &RefinanceDto) -> String {
    let mut out = String::from("figure,months,current_loan,new_loan,refinancing_saves\r\n");
    let mut row = |figure: &str, months: &str, c: &str, n: &str, saves: &str| {
        out.push_str(&format!("{figure},{months},{c},{n},{saves}\r\n"));
    };
    row("payment", "", &r.current_payment, &r.new_payment, "");
    row("monthly_change", "", "", &r.monthly_change, "");
    let months = |m: Option<u32>| m.map_or(String::new(), |m| m.to_string());
    row(
        "break_even_months",
        &months(r.break_even_months),
        "",
        "",
        "",
    );
    row(
        "break_even_months_with_balances",
        &months(r.break_even_months_with_balances),
        "",
        "",
        "",
    );
    row(
        "balance_or_principal",
        "0",
        &r.current.balance,
        &r.new.principal,
        "",
    );
    let zero = match r.costs.total_costs.split_once('.') {
        Some((_, d)) => format!("0.{}", "0".repeat(d.len())),
        None => "0".to_string(),
    };
    row("total_costs", "0", &zero, &r.costs.total_costs, "");
    for h in r.horizons.iter().chain(std::iter::once(&r.to_the_end)) {
        let m = h.months.to_string();
        row("paid", &m, &h.current_paid, &h.new_paid, "");
        row("owed", &m, &h.current_owed, &h.new_owed, "");
        row(
            "cost",
            &m,
            &h.current_cost,
            &h.new_cost,
            &h.refinancing_saves,
        );
    }
    row(
        "total_interest",
        "",
        &r.current.total_interest,
        &r.new.total_interest,
        "",
    );
    out
}

/// The options as CSV: one row an option and horizon (60, 84 and 120 months,
/// the chosen horizon, then the end of the term), the option's own figures
/// repeated on each, so that a spreadsheet filters or pivots it as it is.
pub fn options_csv(o: &OptionsDto) -> String {
    let mut out = String::from("label,annual_rate_percent,points_percent,points,other_costs,upfront_cost,payment,monthly_difference,break_even_months,break_even_months_with_balances,total_interest,horizon_months,paid,owed,cost\r\n");
    let months = |m: Option<u32>| m.map_or(String::new(), |m| m.to_string());
    for r in &o.options {
        let head = format!(
            "{},{},{},{},{},{},{},{},{},{},{}",
            csv_field(&r.label),
            r.annual_rate_percent,
            r.points_percent,
            r.points,
            r.other_costs,
            r.upfront_cost,
            r.payment,
            r.monthly_difference.as_deref().unwrap_or(""),
            months(r.break_even_months),
            months(r.break_even_months_with_balances),
            r.total_interest
        );
        for c in &r.costs {
            out.push_str(&format!(
                "{head},{},{},{},{}\r\n",
                c.months, c.paid, c.owed, c.cost
            ));
        }
        // Nothing is owed at the end: zero with the currency's decimals.
        let zero = match r.cost_to_end.split_once('.') {
            Some((_, d)) => format!("0.{}", "0".repeat(d.len())),
            None => "0".to_string(),
        };
        out.push_str(&format!(
            "{head},{},{},{zero},{}\r\n",
            o.number_of_payments, r.cost_to_end, r.cost_to_end
        ));
    }
    out
}

/// The grid as CSV: one row a cell.
pub fn grid_csv(g: &GridDto) -> String {
    let mut out = String::with_capacity(48 * (g.cells.len() + 1));
    out.push_str("principal,annual_rate_percent,term_months,payment,per_thousand\r\n");
    for c in &g.cells {
        out.push_str(&format!(
            "{},{},{},{},{}\r\n",
            c.principal, c.annual_rate_percent, c.term_months, c.payment, c.per_thousand
        ));
    }
    out
}

fn refinance_answer(r: &crate::engine::choices::refinance::Refinance, csv: bool) -> Response {
    let dto = RefinanceDto::from_refinance(r);
    if csv {
        csv_answer(refinance_csv(&dto), "refinance.csv")
    } else {
        json_answer(&dto)
    }
}

/// `POST /api/v1/refinance`
pub async fn refinance_post(
    headers: HeaderMap,
    JsonBody(body): JsonBody,
) -> Result<Response, ApiError> {
    Ok(refinance_answer(
        &crate::answer::refinance::from_json(&body)?,
        wants_csv(&headers),
    ))
}

/// `GET /api/v1/refinance?…`
pub async fn refinance_get(
    headers: HeaderMap,
    RawQuery(q): RawQuery,
) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    Ok(refinance_answer(
        &crate::answer::refinance::from_query(&pairs, false)?,
        wants_csv(&headers),
    ))
}

/// `GET /api/v1/refinance.csv?…`
pub async fn refinance_get_csv(RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    Ok(refinance_answer(
        &crate::answer::refinance::from_query(&pairs, false)?,
        true,
    ))
}

fn options_answer(a: &crate::engine::choices::points::OptionsAnswer, csv: bool) -> Response {
    let dto = OptionsDto::from_answer(a);
    if csv {
        csv_answer(options_csv(&dto), "rate-options.csv")
    } else {
        json_answer(&dto)
    }
}

/// `POST /api/v1/loans/options`
pub async fn options_post(
    headers: HeaderMap,
    JsonBody(body): JsonBody,
) -> Result<Response, ApiError> {
    Ok(options_answer(
        &crate::answer::points::from_json(&body)?,
        wants_csv(&headers),
    ))
}

/// `GET /api/v1/loans/options?…`
pub async fn options_get(headers: HeaderMap, RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    Ok(options_answer(
        &crate::answer::points::from_query(&pairs, false)?,
        wants_csv(&headers),
    ))
}

/// `GET /api/v1/loans/options.csv?…`
pub async fn options_get_csv(RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    Ok(options_answer(
        &crate::answer::points::from_query(&pairs, false)?,
        true,
    ))
}

fn grid_answer(g: &Grid, csv: bool) -> Response {
    let dto = GridDto::from_grid(g);
    if csv {
        csv_answer(grid_csv(&dto), "payment-grid.csv")
    } else {
        json_answer(&dto)
    }
}

/// `GET /api/v1/loans/grid?…`
pub async fn grid_get(headers: HeaderMap, RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    Ok(grid_answer(
        &crate::answer::grid::from_query(&pairs, false)?,
        wants_csv(&headers),
    ))
}

/// `GET /api/v1/loans/grid.csv?…`
pub async fn grid_get_csv(RawQuery(q): RawQuery) -> Result<Response, ApiError> {
    let pairs = query_pairs(q.as_deref())?;
    Ok(grid_answer(
        &crate::answer::grid::from_query(&pairs, false)?,
        true,
    ))
}
