//! Projected payments (§1026.37(c)): the full monthly payment of any loan,
//! fixed or adjustable, by years: principal and interest from the lowest to
//! the highest path, mortgage insurance on the composite path, escrow.

use rust_decimal::Decimal;

use super::disclose::PathPayments;
use super::terms::MortgageInsurance;
use crate::engine::money::form_dollars;

/// One column of projected payments, in whole dollars (§1026.37(o)(4)).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ProjectedColumn {
    /// The first year of the loan the column covers.
    pub from_year: u32,
    /// The last year it covers.
    pub to_year: u32,
    /// The lowest principal and interest in those years, on any path.
    pub principal_interest_min: Decimal,
    /// The highest, on any path (a balloon included in its year).
    pub principal_interest_max: Decimal,
    /// The payment is interest only in some of those years.
    pub interest_only: bool,
    /// Mortgage insurance in the column's first year (composite path).
    pub mortgage_insurance: Decimal,
    /// Estimated escrow.
    pub escrow: Decimal,
    /// The lowest total payment.
    pub total_min: Decimal,
    /// The highest total payment.
    pub total_max: Decimal,
}

/// The last payment with mortgage insurance: as given; else, with the
/// property's original value, the payment after which the balance on the
/// composite path is first scheduled at or below 78 % of it, or the midpoint
/// of the term when that comes first (12 U.S.C. 4902(b) and (c); Residue's
/// reading: the premium is paid with that payment, not after it); else every
/// payment.
pub fn insurance_until(
    m: &MortgageInsurance,
    property_value: Option<Decimal>,
    composite_balances: &[Decimal],
    n: u32,
) -> u32 {
    if let Some(p) = m.payments {
        return p.min(n);
    }
    let Some(value) = property_value else {
        return n;
    };
    let threshold = value * Decimal::new(78, 2);
    let midpoint = n.div_ceil(2);
    composite_balances
        .iter()
        .position(|b| *b <= threshold)
        .map_or(midpoint, |k| (k as u32 + 1).min(midpoint))
}

/// What a year's payments look like, unrounded.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Year {
    min: Decimal,
    max: Decimal,
    interest_only: bool,
    insurance: Decimal,
}

/// The columns of §1026.37(c) from posted paths.
///
/// - `paths`: the composite path first, then any others (highest, lowest);
/// - `interest_only_payments`: how many payments pay interest only;
/// - `insurance_until`: the last payment with mortgage insurance (0: none);
/// - the final payment, which absorbs the rounding, is not a change of its
///   own; a balloon is, and keeps a column of its own.
///
/// A year starts a new column when its payments differ from the year
/// before's; with more than four, changes that are only the end of mortgage
/// insurance are merged first, then the years after the third column (after
/// the second, when the fourth must show a balloon) into one (§1026.37(c)(1)(ii)
/// and (iii); Residue's reading of the merging rules).
pub fn projected_payments(
    paths: &[&PathPayments],
    per_year: u32,
    interest_only_payments: u32,
    insurance: Option<MortgageInsurance>,
    insurance_until: u32,
    escrow: Decimal,
) -> Vec<ProjectedColumn> {
    let per_year = per_year.max(1);
    let count = paths.iter().map(|p| p.payments.len()).max().unwrap_or(0) as u32;
    let years = count.div_ceil(per_year);
    let balloon = paths.first().and_then(|p| p.balloon).is_some();
    let premium = insurance.map_or(Decimal::ZERO, |m| m.monthly);
    // Each year's lowest and highest payment on any path, from the paths'
    // steps (runs of one payment), not payment by payment.
    let mut range: Vec<Option<(Decimal, Decimal)>> = vec![None; years as usize];
    let mut note = |y: u32, v: Decimal| {
        let slot = &mut range[y as usize];
        *slot = Some(slot.map_or((v, v), |(lo, hi)| (lo.min(v), hi.max(v))));
    };
    for p in paths {
        let last = p.payments.len() as u32;
        for (j, s) in p.steps.iter().enumerate() {
            // The steps leave out the final payment, which absorbs the
            // rounding: it is not a change.
            let end = p
                .steps
                .get(j + 1)
                .map_or(last.saturating_sub(1).max(1), |n| n.from_payment - 1);
            for y in (s.from_payment - 1) / per_year..=(end.max(s.from_payment) - 1) / per_year {
                note(y, s.payment);
            }
        }
        // The final payment counts when it is a balloon, or the only payment of its year.
        if last > 0 && (p.balloon.is_some() || (last - 1) % per_year == 0) {
            note((last - 1) / per_year, p.payments[last as usize - 1]);
        }
    }
    let rows: Vec<Year> = range
        .iter()
        .enumerate()
        .map(|(y, r)| {
            let from = y as u32 * per_year + 1;
            let (min, max) = r.unwrap_or_default();
            Year {
                min,
                max,
                interest_only: from <= interest_only_payments,
                insurance: if from <= insurance_until {
                    premium
                } else {
                    Decimal::ZERO
                },
            }
        })
        .collect();
    // Runs of equal years.
    let mut runs: Vec<(u32, u32, bool)> = Vec::new(); // (first year, last year, started by insurance alone)
    for (y, row) in rows.iter().enumerate() {
        let y = y as u32 + 1;
        match runs.last_mut() {
            Some(run) if rows[run.1 as usize - 1] == *row => run.1 = y,
            Some(run) => {
                let before = rows[run.1 as usize - 1];
                let insurance_only = before.min == row.min
                    && before.max == row.max
                    && before.interest_only == row.interest_only;
                runs.push((y, y, insurance_only));
            }
            None => runs.push((y, y, false)),
        }
    }
    // Merge the ends of mortgage insurance first, then the years after the
    // third column (the second, when a balloon needs the fourth).
    while runs.len() > 4 {
        match runs.iter().skip(1).position(|r| r.2) {
            Some(i) => {
                let gone = runs.remove(i + 1);
                runs[i].1 = gone.1;
            }
            None => break,
        }
    }
    if runs.len() > 4 {
        let keep = if balloon { 2 } else { 3 };
        let last_merged = if balloon {
            runs.len() - 2
        } else {
            runs.len() - 1
        };
        let end = runs[last_merged].1;
        runs[keep].1 = end;
        runs.drain(keep + 1..=last_merged);
    }
    runs.iter()
        .map(|&(from, to, _)| {
            let span = &rows[from as usize - 1..to as usize];
            let min = span.iter().map(|r| r.min).min().unwrap_or_default();
            let max = span.iter().map(|r| r.max).max().unwrap_or_default();
            let insurance = span[0].insurance;
            ProjectedColumn {
                from_year: from,
                to_year: to,
                principal_interest_min: form_dollars(min),
                principal_interest_max: form_dollars(max),
                interest_only: span.iter().any(|r| r.interest_only),
                mortgage_insurance: form_dollars(insurance),
                escrow: form_dollars(escrow),
                total_min: form_dollars(min + insurance + escrow),
                total_max: form_dollars(max + insurance + escrow),
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::super::disclose::{disclose_adjustable, path_payments};
    use super::super::terms::{AdjustableRate, RatePath, RateRounding};
    use super::*;
    use crate::engine::plan::PlanOptions;
    use crate::engine::testing::{d, level_loan};

    #[test]
    fn a_five_one_loan_shows_years_1_to_5_6_7_and_8_to_30() {
        // A 5/1 note (first change at payment 61, yearly after): the columns
        // are years 1–5, 6, 7 and 8–30 (§1026.37(c)(1)(ii): the year of each
        // change, and the rest merged after the third column).
        let a = AdjustableRate {
            index_percent: d("4.5"),
            margin_percent: d("2.75"),
            first_change_payment: 61,
            change_every: 12,
            first_change_cap_percent: Some(d("2")),
            periodic_cap_percent: Some(d("2")),
            lifetime_max_percent: d("11"),
            floor_percent: None,
            rounding: RateRounding::NearestEighth,
            payment_cap_percent: None,
        };
        let terms = level_loan("300000", "6", 360);
        let o = PlanOptions {
            adjustable: Some(a),
            ..PlanOptions::default()
        };
        let x = disclose_adjustable(&terms, &o).unwrap();
        let [c, h, l] = &x.paths;
        let cols = projected_payments(
            &[c, h, l],
            12,
            0,
            Some(MortgageInsurance {
                monthly: d("120"),
                payments: Some(96),
            }),
            96,
            d("410.25"),
        );
        let years: Vec<(u32, u32)> = cols.iter().map(|c| (c.from_year, c.to_year)).collect();
        assert_eq!(years, vec![(1, 5), (6, 6), (7, 7), (8, 30)]);
        // Years 1–5: one payment, 1,799 (300,000 at 6 % over 30 years: 1,798.65).
        assert_eq!(cols[0].principal_interest_min, d("1799"));
        assert_eq!(cols[0].principal_interest_max, d("1799"));
        assert_eq!(cols[0].total_max, d("2329")); // 1798.65 + 120 + 410.25 = 2328.90
        assert!(cols[3].principal_interest_max > cols[3].principal_interest_min);
        assert_eq!(cols[3].mortgage_insurance, d("120"));
    }

    #[test]
    fn a_fixed_loan_with_insurance_ending_has_two_columns() {
        let terms = level_loan("200000", "6", 360);
        let o = PlanOptions::default();
        let p = path_payments(&terms, &o, RatePath::Composite, false).unwrap();
        let cols = projected_payments(
            &[&p],
            12,
            0,
            Some(MortgageInsurance {
                monthly: d("90"),
                payments: Some(100),
            }),
            100,
            d("300"),
        );
        let years: Vec<(u32, u32)> = cols.iter().map(|c| (c.from_year, c.to_year)).collect();
        // Payment 100 is in year 9: insurance is paid in year 9's first
        // payment, and gone from year 10.
        assert_eq!(years, vec![(1, 9), (10, 30)]);
        assert_eq!(cols[1].mortgage_insurance, d("0"));
        assert_eq!(cols[0].total_min, d("1589")); // 1199.10 + 90 + 300
    }
}
