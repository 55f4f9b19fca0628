//! Adjustable rates: the terms of an adjustable-rate note (index, margin,
//! changes, caps, floor, maximum, rounding, payment cap), and the rate paths
//! they allow.
//!
//! Each rate period is a segment of the same recurrence: the plan posts the
//! path's rates as rate changes, and at every change the balance then due is
//! re-amortised over the remaining term at the new rate (§1026.20(c)(2)(v)).
//!
//! - `disclose`: what a lender's disclosures say of an adjustable loan: the
//!   summary, the rate table of §1026.37(j), the $10,000 example of
//!   §1026.19(b)(2)(viii)(B) and the underwriting payments of §1026.43;
//! - `projected`: the projected payments of §1026.37(c), for any loan, with
//!   escrow and mortgage insurance.

mod disclose;
mod projected;
pub mod terms;

pub use disclose::{
    disclose_adjustable, path_payments, AdjustableDisclosure, AdjustableSummary, PathPayments,
    PathStep, ProgramExample, RateTable, Underwriting,
};
pub use projected::{insurance_until, projected_payments, ProjectedColumn};
pub use terms::{AdjustableRate, MortgageInsurance, RatePath, RateRounding, RECAST_EVERY};

use crate::engine::error::Result;
use crate::engine::plan::PlanOptions;
use crate::engine::terms::{LoanTerm, LoanTerms};

/// The full monthly payment of a loan, fixed or adjustable.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FullPayment {
    /// The columns of §1026.37(c).
    pub columns: Vec<ProjectedColumn>,
    /// The last payment with mortgage insurance (0: none).
    pub insurance_until: u32,
}

/// The projected payments of a loan with adjustable terms, escrow or mortgage
/// insurance (`None` for a loan with none of them, or a term given as a
/// payment); `adjustable` the loan's disclosure, when it has one, whose paths
/// are reused.
///
/// # Errors
/// The errors of posting.
pub fn full_payment(
    terms: &LoanTerms,
    options: &PlanOptions,
    adjustable: Option<&AdjustableDisclosure>,
) -> Result<Option<FullPayment>> {
    let LoanTerm::Payments(n) = terms.term else {
        return Ok(None);
    };
    if adjustable.is_none()
        && options.escrow_monthly.is_none()
        && options.mortgage_insurance.is_none()
    {
        return Ok(None);
    }
    let needs_balances = options
        .mortgage_insurance
        .is_some_and(|m| m.payments.is_none() && options.property_value.is_some());
    let own;
    let paths: Vec<&PathPayments> = match adjustable {
        Some(x) if !needs_balances => x.paths.iter().collect(),
        Some(x) => {
            own = path_payments(terms, options, RatePath::Composite, true)?;
            vec![&own, &x.paths[1], &x.paths[2]]
        }
        None => {
            own = path_payments(terms, options, RatePath::Composite, needs_balances)?;
            vec![&own]
        }
    };
    let until = options.mortgage_insurance.map_or(0, |m| {
        insurance_until(&m, options.property_value, &paths[0].balances, n)
    });
    Ok(Some(FullPayment {
        columns: projected_payments(
            &paths,
            terms.payment_frequency.per_year(),
            options.interest_only_payments,
            options.mortgage_insurance,
            until,
            options.escrow_monthly.unwrap_or_default(),
        ),
        insurance_until: until,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::testing::d;

    fn note() -> AdjustableRate {
        AdjustableRate {
            index_percent: d("4.3"),
            margin_percent: d("2.75"),
            first_change_payment: 61,
            change_every: 12,
            first_change_cap_percent: Some(d("5")),
            periodic_cap_percent: Some(d("2")),
            lifetime_max_percent: d("11.5"),
            floor_percent: None,
            rounding: RateRounding::NearestEighth,
            payment_cap_percent: None,
        }
    }

    #[test]
    fn eighths_round_by_the_note_s_rule() {
        // 7.05 lies between 7 and 7.125: nearest 7, up 7.125, down 7.
        assert_eq!(RateRounding::NearestEighth.apply(d("7.05")), d("7"));
        assert_eq!(RateRounding::UpEighth.apply(d("7.05")), d("7.125"));
        assert_eq!(RateRounding::DownEighth.apply(d("7.05")), d("7"));
        // 7.0625 is half way: halves go up.
        assert_eq!(RateRounding::NearestEighth.apply(d("7.0625")), d("7.125"));
        assert_eq!(RateRounding::None.apply(d("7.05")), d("7.05"));
    }

    #[test]
    fn the_paths_take_their_caps_and_stay_within_floor_and_maximum() {
        let a = note();
        // Index + margin = 7.05, rounded to 7; initial 6.5: the composite rises
        // to 7 at payment 61 and stays there.
        let c = a.path_rates(d("6.5"), &RatePath::Composite, 360).unwrap();
        assert_eq!(c[0], (61, d("7")));
        assert!(c.iter().all(|(_, r)| *r == d("7")));
        // Highest: +5 at the first change (11.5, the maximum).
        let h = a.path_rates(d("6.5"), &RatePath::Highest, 360).unwrap();
        assert_eq!(h[0], (61, d("11.5")));
        // Lowest: −5 would be 1.5, the floor is the margin 2.75.
        let l = a.path_rates(d("6.5"), &RatePath::Lowest, 360).unwrap();
        assert_eq!(l[0], (61, d("2.75")));
        // 11.5 at payment 61, kept at 73: the path has settled, and the list ends.
        assert_eq!(h.len(), 2);
        // Only changes that move the rate become rate changes.
        assert_eq!(
            a.rate_changes(d("6.5"), &RatePath::Composite, 360)
                .unwrap()
                .len(),
            1
        );
    }

    #[test]
    fn a_periodic_cap_spreads_the_rise_of_the_composite_path() {
        // Comment 17(c)(1)-10's reading with caps (from memory of the
        // commentary): initial 9 %, index + margin 12 %, a 2-point yearly cap:
        // 9 % in year 1, 11 % in year 2, 12 % after.
        let a = AdjustableRate {
            index_percent: d("10"),
            margin_percent: d("2"),
            first_change_payment: 13,
            change_every: 12,
            first_change_cap_percent: None,
            periodic_cap_percent: Some(d("2")),
            lifetime_max_percent: d("15"),
            floor_percent: None,
            rounding: RateRounding::None,
            payment_cap_percent: None,
        };
        let c = a.path_rates(d("9"), &RatePath::Composite, 360).unwrap();
        assert_eq!(&c[..2], &[(13, d("11")), (25, d("12"))]);
    }

    #[test]
    fn index_values_carry_the_last_value_forward() {
        let a = note();
        let p = RatePath::IndexValues(vec![d("5"), d("3.1")]);
        let r = a.path_rates(d("6.5"), &p, 120).unwrap();
        // 5 + 2.75 = 7.75; then 3.1 + 2.75 = 5.85 → 5.875, within the 2-point cap.
        assert_eq!(
            r,
            vec![
                (61, d("7.75")),
                (73, d("5.875")),
                (85, d("5.875")),
                (97, d("5.875")),
                (109, d("5.875"))
            ]
        );
    }

    #[test]
    fn bad_terms_name_their_field() {
        let mut a = note();
        a.floor_percent = Some(d("12"));
        assert_eq!(
            a.check(d("6"), 360).unwrap_err().field,
            Some("floor_percent")
        );
        let mut a = note();
        a.first_change_payment = 400;
        assert_eq!(
            a.check(d("6"), 360).unwrap_err().field,
            Some("first_change_payment")
        );
        let mut a = note();
        a.periodic_cap_percent = Some(d("-1"));
        assert_eq!(
            a.check(d("6"), 360).unwrap_err().field,
            Some("periodic_cap_percent")
        );
        assert_eq!(
            note().check(d("12"), 360).unwrap_err().field,
            Some("lifetime_max_percent")
        );
    }
}
