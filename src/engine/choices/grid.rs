//! A payment grid: the level payment at each principal, rate and term, and the
//! payment per 1,000 borrowed as a printed factor table gives it.

use rust_decimal::{Decimal, RoundingStrategy};

use crate::engine::error::{EngineError, OrOverflow, Result};
use crate::engine::loan::UnitResponses;
use crate::engine::money::{Currency, PaymentRounding};
use crate::engine::rate::{AnnualRate, Frequency};
use crate::engine::terms::payments_in_months;

/// The most cells a grid may have.
pub const MAX_CELLS: usize = 2000;

/// One cell of the grid.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct GridCell {
    /// The principal borrowed.
    pub principal: Decimal,
    /// The nominal annual rate.
    pub rate: AnnualRate,
    /// The term in months.
    pub term_months: u32,
    /// The number of payments of the term.
    pub payments: u32,
    /// The level payment, rounded as a schedule rounds it.
    pub payment: Decimal,
    /// The payment per 1,000 borrowed: the exact factor per 1 rounded up to five
    /// places, times 1,000, as the factor tables of 7 CFR 1942.19 print it.
    pub per_thousand: Decimal,
}

/// The grid's rows are principals then rates, its columns terms.
///
/// The payment is principal·h[n]/u[n] (the closed forms of a unit principal and a
/// unit payment at the periodic rate, [`UnitResponses`]), rounded by `rounding`;
/// the closed forms are built once a rate and evaluated once a term.
///
/// # Errors
/// More than [`MAX_CELLS`] cells (`rates`), a term that is not a whole number of
/// payments (`terms`), or an overflow.
pub fn payment_grid(
    principals: &[Decimal],
    rates: &[AnnualRate],
    terms_months: &[u32],
    frequency: Frequency,
    currency: Currency,
    rounding: PaymentRounding,
) -> Result<Vec<GridCell>> {
    let cells = principals.len() * rates.len() * terms_months.len();
    if cells > MAX_CELLS {
        return Err(EngineError::out_of_range(
            "rates",
            format!(
                "the grid would have {cells} cells ({} principals × {} rates × {} terms); it may have at most {MAX_CELLS}",
                principals.len(),
                rates.len(),
                terms_months.len()
            ),
        ));
    }
    let payments: Vec<u32> = terms_months
        .iter()
        .map(|&m| {
            payments_in_months(m, frequency).map_err(|e| EngineError {
                field: Some("terms"),
                ..e
            })
        })
        .collect::<Result<_>>()?;
    // factors[r][t] = (h, u) scaled.
    let mut factors = Vec::with_capacity(rates.len());
    for rate in rates {
        let i = rate.periodic_rate(frequency, frequency)?;
        let unit = UnitResponses::for_rate(i)?;
        let row: Vec<(Decimal, Decimal)> = payments
            .iter()
            .map(|&n| unit.at_scaled(n))
            .collect::<Result<_>>()?;
        factors.push(row);
    }
    let thousand = Decimal::ONE_THOUSAND;
    let mut out = Vec::with_capacity(cells);
    for &principal in principals {
        for (rate, row) in rates.iter().zip(&factors) {
            for ((&months, &n), &(h, u)) in terms_months.iter().zip(&payments).zip(row) {
                let exact = principal
                    .checked_mul(h)
                    .and_then(|v| v.checked_div(u))
                    .or_overflow("the payment")?;
                let factor = h.checked_div(u).or_overflow("the factor")?;
                let mut per_thousand = factor
                    .round_dp_with_strategy(5, RoundingStrategy::ToPositiveInfinity)
                    .checked_mul(thousand)
                    .or_overflow("the factor")?;
                per_thousand.rescale(2);
                out.push(GridCell {
                    principal,
                    rate: *rate,
                    term_months: months,
                    payments: n,
                    payment: currency.round(exact, rounding.strategy()),
                    per_thousand,
                });
            }
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn the_factors_printed_in_7_cfr_1942_19_e_2() {
        // 7 CFR 1942.19(e)(2): 100,000 at 5 %; .05929 per 1 for 38 annual payments,
        // .02952 for 76 semiannual, .00491 for 456 monthly (rounded up to five places).
        let five = [AnnualRate::from_percent(d("5")).unwrap()];
        for (frequency, per_thousand) in [
            (Frequency::Annual, "59.29"),
            (Frequency::Semiannual, "29.52"),
            (Frequency::Monthly, "4.91"),
        ] {
            let g = payment_grid(
                &[d("100000")],
                &five,
                &[456],
                frequency,
                Currency::USD,
                PaymentRounding::Nearest,
            )
            .unwrap();
            assert_eq!(g[0].per_thousand.to_string(), per_thousand, "{frequency:?}");
        }
    }

    #[test]
    fn a_grid_over_the_limit_is_refused_naming_its_size() {
        let rates: Vec<AnnualRate> = (0..101)
            .map(|k| AnnualRate::from_percent(Decimal::from(k) / Decimal::TEN).unwrap())
            .collect();
        let e = payment_grid(
            &[d("1000"), d("2000")],
            &rates,
            &[120, 180, 240, 300, 360, 480, 540, 600, 660, 720],
            Frequency::Monthly,
            Currency::USD,
            PaymentRounding::Nearest,
        )
        .unwrap_err();
        assert_eq!(e.field, Some("rates"));
        assert!(e.message.contains("2020 cells"), "{}", e.message);
    }
}
