//! The payment grid's answer, computed once for the API and the page.

use rust_decimal::Decimal;
use serde::Serialize;

use crate::engine::choices::grid::{payment_grid, GridCell};
use crate::engine::money::{Currency, PaymentRounding};
use crate::engine::rate::Frequency;
use crate::engine::schedule::CAUTION;
use crate::input::grid::{read_query, GridRequest};
use crate::input::problem::ApiError;

/// One cell.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct GridCellDto {
    pub principal: String,
    pub annual_rate_percent: String,
    pub term_months: u32,
    /// The level payment, rounded to the nearest minor unit.
    pub payment: String,
    /// The payment per 1,000 borrowed: the factor per 1 rounded up to five places, × 1,000.
    pub per_thousand: String,
}

/// The grid's answer.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct GridDto {
    pub currency: &'static str,
    pub payment_frequency: &'static str,
    /// Principals, then rates, then terms, in the order given.
    pub cells: Vec<GridCellDto>,
    /// The caution first, then how the cells were worked out.
    pub notes: Vec<String>,
}

/// A computed grid and what it was asked for.
pub struct Grid {
    pub request: GridRequest,
    pub cells: Vec<GridCell>,
}

/// Reads and computes a grid.
///
/// # Errors
/// The problem to answer.
pub fn from_query(pairs: &[(String, String)], lenient: bool) -> Result<Grid, ApiError> {
    let request = read_query(pairs, lenient)?;
    let cells = payment_grid(
        &request.principals,
        &request.rates,
        &request.terms,
        request.frequency,
        request.currency,
        PaymentRounding::Nearest,
    )
    .map_err(|e| ApiError::from_engine(e, ""))?;
    Ok(Grid { request, cells })
}

fn rate_text(d: Decimal) -> String {
    let n = d.normalize();
    if n.scale() < 3 {
        format!("{:.3}", n)
    } else {
        n.to_string()
    }
}

/// The rate as a grid prints it: at least three decimals (6.125, 6.500).
pub fn rate_label(d: Decimal) -> String {
    rate_text(d)
}

impl GridDto {
    /// The answer of a computed grid.
    pub fn from_grid(g: &Grid) -> Self {
        let currency: Currency = g.request.currency;
        let frequency: Frequency = g.request.frequency;
        GridDto {
            currency: currency.code(),
            payment_frequency: frequency.name(),
            cells: g
                .cells
                .iter()
                .map(|c| GridCellDto {
                    principal: currency.format(c.principal),
                    annual_rate_percent: rate_text(c.rate.percent()),
                    term_months: c.term_months,
                    payment: currency.format(c.payment),
                    per_thousand: c.per_thousand.to_string(),
                })
                .collect(),
            notes: vec![
                CAUTION.to_string(),
                format!(
                    "Each payment is the level {} payment of principal and interest that repays the principal over the term, P·i / (1 − (1 + i)^−n) with i the annual rate over {} and n the number of payments, rounded to the nearest {}.",
                    frequency.name(),
                    frequency.per_year(),
                    if currency.minor_units() == 0 { "unit".to_string() } else { "minor unit".to_string() }
                ),
                "The payment per 1,000 borrowed is the factor per 1 rounded up to five decimal places, times 1,000, as the amortization factor tables of 7 CFR 1942.19 print it; multiplying it out may give a few cents more than the payment.".to_string(),
            ],
        }
    }
}
