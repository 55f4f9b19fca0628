//! The disclosure figures of a posted loan: amount financed, total of payments,
//! finance charge, the APR by Appendix J, total interest percentage, and what is
//! paid in five years; and how a form rounds them.

use jiff::civil::Date;
use rust_decimal::{Decimal, RoundingStrategy};

use super::tolerance::{apr_tolerance, AprTolerance, IRREGULAR_APR_TOLERANCE};
use crate::engine::apr::{apr_from_dates, solve_apr, AprResult, DatedFlow, UnitFlow, UnitPeriod};
use crate::engine::error::{EngineError, OrOverflow, Result};
use crate::engine::plan::PaymentRun;
use crate::engine::rate::Frequency;
use crate::engine::schedule::ScheduledPayments;

/// A prepaid finance charge (points, an origination fee), by name.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PrepaidFinanceCharge {
    /// What the charge is (points, an origination fee).
    pub name: String,
    /// The amount charged.
    pub amount: Decimal,
}

/// The unit-period of Appendix J that equals a payment period.
pub fn unit_period_of(frequency: Frequency) -> UnitPeriod {
    match frequency {
        Frequency::Annual => UnitPeriod::Year,
        Frequency::Semiannual => UnitPeriod::Months(6),
        Frequency::Quarterly => UnitPeriod::Quarter,
        Frequency::Monthly => UnitPeriod::Month,
        Frequency::Semimonthly => UnitPeriod::Semimonth,
        Frequency::Biweekly => UnitPeriod::Weeks(2),
        Frequency::Weekly => UnitPeriod::Week,
        Frequency::Daily => UnitPeriod::Day,
    }
}

/// A percentage as a disclosure form shows it (§1026.37(o)(4)): rounded to three
/// decimals (halves up: common practice, no source), trailing zeros dropped
/// (7.000 → 7, 2.4999 → 2.5).
pub fn form_percent(percent: Decimal) -> Decimal {
    percent
        .round_dp_with_strategy(3, RoundingStrategy::MidpointAwayFromZero)
        .normalize()
}

pub use crate::engine::money::form_dollars;

/// What is paid through the 60th month after the first payment (§1026.37(l)(1)).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InFiveYears {
    /// The last payment counted: 60 monthly payments, or the whole term when
    /// shorter. For other frequencies, 5 × payments a year (130 biweekly, 20
    /// quarterly): Residue's reading of "through the end of the 60th month".
    pub through_payment: u32,
    /// The scheduled payments 1 to `through_payment`.
    pub payments: Decimal,
    /// The prepaid finance charges, counted as loan costs paid at consummation.
    pub loan_costs: Decimal,
    /// payments + loan costs.
    pub total_paid: Decimal,
    /// The principal parts of payments 1 to `through_payment`.
    pub principal_paid: Decimal,
}

/// The disclosure figures of a posted loan.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LoanDisclosure {
    /// The prepaid finance charges, prepaid interest of an odd first period included.
    pub prepaid_finance_charges: Vec<PrepaidFinanceCharge>,
    /// Their total.
    pub prepaid_total: Decimal,
    /// The principal less the prepaid finance charges (§1026.18(b)).
    pub amount_financed: Decimal,
    /// The sum of the scheduled payments (§1026.18(h)).
    pub total_of_payments: Decimal,
    /// Total of payments less the amount financed.
    pub finance_charge: Decimal,
    /// The scheduled interest of the posted ledger.
    pub total_interest: Decimal,
    /// Unrounded: total interest ÷ principal × 100.
    pub total_interest_percentage: Decimal,
    /// The APR by Appendix J.
    pub apr: AprResult,
    /// The unit-period the APR was found in.
    pub unit_period: UnitPeriod,
    /// The APR tolerance that applies, and why.
    pub apr_tolerance: AprTolerance,
    /// What is paid in the first five years (§1026.37(l)(1)).
    pub in_five_years: InFiveYears,
    /// Prepaid interest of an odd first period collected at closing: a prepaid
    /// finance charge (listed among `prepaid_finance_charges`), counted in the
    /// total interest percentage.
    pub prepaid_interest: Decimal,
    /// When the APR was found from the funding date and the payments' due dates
    /// (Appendix J (b)(4) then chose the unit-period), the funding date.
    pub dated_from: Option<Date>,
}

/// Runs of equal payments as unit-period flows one unit-period apart, the first
/// at period `first_period`: a level loan becomes one run (and a final payment).
pub fn unit_runs(runs: &[PaymentRun], first_period: u32) -> Vec<UnitFlow> {
    let mut period = first_period;
    runs.iter()
        .map(|run| {
            let flow = UnitFlow::run(run.amount, period, Decimal::ZERO, run.count);
            period += run.count;
            flow
        })
        .collect()
}

/// The disclosure figures of a posted schedule with these prepaid finance charges.
///
/// # Errors
/// A negative charge, charges that leave no amount financed, or an error of
/// the APR solver.
pub fn disclose(s: &ScheduledPayments, prepaid: &[PrepaidFinanceCharge]) -> Result<LoanDisclosure> {
    disclose_dated(s, prepaid, None)
}

/// The name under which prepaid interest is listed among the prepaid finance charges.
pub const PREPAID_INTEREST: &str = "prepaid interest (odd first period)";

/// As [`disclose`]; with a `funding_date` and a schedule whose payments have due
/// dates, the APR is found from those dates: the amount financed advanced on the
/// funding date, each posted payment on its due date, the unit-period chosen by
/// Appendix J (b)(4) and an odd first period counted in unit-periods and days.
/// Prepaid interest collected at closing joins the prepaid finance charges.
///
/// # Errors
/// As [`disclose`], or dates the APR cannot be placed on.
pub fn disclose_dated(
    s: &ScheduledPayments,
    prepaid: &[PrepaidFinanceCharge],
    funding_date: Option<Date>,
) -> Result<LoanDisclosure> {
    let field = "prepaid_finance_charges";
    let currency = s.terms.currency;
    let prepaid_interest = s.prepaid_interest.max(Decimal::ZERO);
    let mut prepaid: Vec<PrepaidFinanceCharge> = prepaid.to_vec();
    if !prepaid_interest.is_zero() {
        prepaid.push(PrepaidFinanceCharge {
            name: PREPAID_INTEREST.into(),
            amount: prepaid_interest,
        });
    }
    let mut prepaid_total = Decimal::ZERO;
    for charge in &prepaid {
        if charge.amount.is_sign_negative() && !charge.amount.is_zero() {
            return Err(EngineError::out_of_range(
                field,
                "a prepaid finance charge cannot be negative",
            ));
        }
        prepaid_total = prepaid_total
            .checked_add(charge.amount)
            .or_overflow("the prepaid finance charges")?;
    }
    let principal = s.terms.principal;
    let amount_financed = principal - prepaid_total;
    if amount_financed <= Decimal::ZERO {
        return Err(EngineError::out_of_range(
            field,
            format!(
                "the prepaid finance charges ({}) must total less than the principal ({}), or nothing is financed",
                currency.format(prepaid_total),
                currency.format(principal)
            ),
        ));
    }
    let runs = &s.summary.runs;
    let total_of_payments = s.total_paid;
    let finance_charge = total_of_payments - amount_financed;
    let total_interest = s.total_interest;
    // §1026.37(l)(3) and its commentary: prepaid interest counts as interest.
    let total_interest_percentage = (total_interest + prepaid_interest)
        .checked_mul(Decimal::ONE_HUNDRED)
        .and_then(|x| x.checked_div(principal))
        .or_overflow("the total interest percentage")?;
    let dated = match funding_date {
        Some(start) if s.due_dates.len() == s.number_of_payments as usize => Some(start),
        _ => None,
    };
    let (apr, unit_period) = match dated {
        Some(start) => {
            let amounts = runs
                .iter()
                .flat_map(|r| std::iter::repeat_n(r.amount, r.count as usize));
            let payments: Vec<DatedFlow> = amounts
                .zip(&s.due_dates)
                .map(|(amount, date)| DatedFlow {
                    amount,
                    date: *date,
                })
                .collect();
            let found = apr_from_dates(
                &[DatedFlow {
                    amount: amount_financed,
                    date: start,
                }],
                &payments,
            )
            .map_err(|e| EngineError {
                field: Some("funding_date"),
                ..e
            })?;
            (found.apr, found.unit_period)
        }
        None => {
            let unit_period = unit_period_of(s.terms.payment_frequency);
            let apr = solve_apr(
                &[UnitFlow::single(amount_financed, 0, Decimal::ZERO)],
                &unit_runs(runs, 1),
                unit_period,
            )?;
            (apr, unit_period)
        }
    };
    let apr_tolerance = if s.adjustable {
        // An adjustable-rate loan's payments change with its rate: an
        // irregular transaction (REGULATIONS.md's adjustable-rate summary).
        AprTolerance {
            regular: false,
            points: IRREGULAR_APR_TOLERANCE,
            reason: "Irregular transaction (§1026.22(a)(3)): an adjustable-rate loan's payment amounts change with its rate; its APR is figured on the composite path (comment 17(c)(1)-10).".into(),
        }
    } else {
        apr_tolerance(1, true, runs, currency)
    };
    let through = s.summary.early_count;
    let payments = s.summary.early_payments;
    let principal_paid = s.summary.early_principal;
    // Prepaid interest is a closing cost of its own kind (a prepaid item), not a
    // loan cost of §1026.37(l)(1)(i).
    let loan_costs = prepaid_total - prepaid_interest;
    // §1026.37(l)(1) counts mortgage insurance among what is paid.
    let payments = payments + s.early_mortgage_insurance;
    Ok(LoanDisclosure {
        prepaid_interest,
        dated_from: dated,
        prepaid_finance_charges: prepaid,
        prepaid_total,
        amount_financed,
        total_of_payments,
        finance_charge,
        total_interest,
        total_interest_percentage,
        apr,
        unit_period,
        apr_tolerance,
        in_five_years: InFiveYears {
            through_payment: through,
            payments,
            loan_costs,
            total_paid: payments + loan_costs,
            principal_paid,
        },
    })
}
#[cfg(test)]
mod tests {
    use super::super::tolerance::tests::runs;
    use super::*;
    use crate::engine::plan::PlanOptions;
    use crate::engine::schedule::{schedule, scheduled_payments};
    use crate::engine::terms::LoanTerms;
    use crate::engine::testing::{d, level_loan as terms};

    fn charge(name: &str, amount: &str) -> PrepaidFinanceCharge {
        PrepaidFinanceCharge {
            name: name.into(),
            amount: d(amount),
        }
    }

    #[test]
    fn form_percentages_keep_three_decimals_and_drop_trailing_zeros() {
        // §1026.37(o)(4) as summarised in REGULATIONS.md: 7.000 % shows as 7 %, 2.4999 % as 2.5 %.
        assert_eq!(form_percent(d("7.000")).to_string(), "7");
        assert_eq!(form_percent(d("2.4999")).to_string(), "2.5");
        assert_eq!(form_percent(d("115.83825")).to_string(), "115.838");
        assert_eq!(form_percent(d("6.0005")).to_string(), "6.001");
        assert_eq!(form_dollars(d("1234.50")).to_string(), "1235");
        assert_eq!(form_dollars(d("1234.49")).to_string(), "1234");
    }

    fn posted(t: &LoanTerms) -> ScheduledPayments {
        scheduled_payments(t, &PlanOptions::default()).unwrap()
    }

    #[test]
    fn a_level_loan_is_one_run_and_a_final_payment() {
        let flows = unit_runs(&runs(&[d("10"), d("10"), d("10"), d("12")]), 1);
        assert_eq!(
            flows,
            vec![
                UnitFlow::run(d("10"), 1, Decimal::ZERO, 3),
                UnitFlow::run(d("12"), 4, Decimal::ZERO, 1)
            ]
        );
    }

    #[test]
    fn the_summary_posting_gives_the_full_schedules_figures() {
        let t = terms("100000", "6", 360);
        let full = schedule(&t).unwrap();
        let lean = posted(&t);
        let rows = &full.ledger.rows;
        let amounts: Vec<Decimal> = rows.iter().map(|r| r.payment).collect();
        assert_eq!(lean.summary.runs, runs(&amounts));
        assert_eq!(lean.number_of_payments, full.number_of_payments);
        assert_eq!(lean.final_payment, full.final_payment);
        assert_eq!(lean.payment, full.payment);
        assert_eq!(lean.total_paid, full.ledger.total_paid);
        assert_eq!(lean.total_interest, full.ledger.total_interest);
        assert_eq!(lean.summary.early_count, 60);
        let principal60: Decimal = rows[..60].iter().map(|r| r.principal).sum();
        assert_eq!(lean.summary.early_principal, principal60);
    }

    #[test]
    fn the_apr_of_the_runs_equals_the_apr_of_the_payments_one_by_one() {
        let t = terms("200000", "6", 360);
        let s = schedule(&t).unwrap();
        let disclosure = disclose(&posted(&t), &[charge("points", "4000")]).unwrap();
        let singles: Vec<UnitFlow> = s
            .ledger
            .rows
            .iter()
            .map(|r| UnitFlow::single(r.payment, r.number, Decimal::ZERO))
            .collect();
        let one_by_one = solve_apr(
            &[UnitFlow::single(d("196000"), 0, Decimal::ZERO)],
            &singles,
            UnitPeriod::Month,
        )
        .unwrap();
        assert!(
            (disclosure.apr.periodic_rate - one_by_one.periodic_rate).abs() < d("1e-20"),
            "{} vs {}",
            disclosure.apr.periodic_rate,
            one_by_one.periodic_rate
        );
        assert!(
            disclosure.apr.apr_percent > d("6.17"),
            "points raise the APR"
        );
    }

    #[test]
    fn disclosure_figures_add_up() {
        let t = terms("100000", "6", 360);
        let s = schedule(&t).unwrap();
        let f = disclose(
            &posted(&t),
            &[charge("origination", "1000"), charge("points", "500")],
        )
        .unwrap();
        assert_eq!(f.prepaid_total, d("1500"));
        assert_eq!(f.amount_financed, d("98500"));
        assert_eq!(f.total_of_payments, s.ledger.total_paid);
        assert_eq!(f.finance_charge, s.ledger.total_interest + d("1500"));
        assert_eq!(f.in_five_years.through_payment, 60);
        let first60: Decimal = s.ledger.rows[..60].iter().map(|r| r.payment).sum();
        assert_eq!(f.in_five_years.payments, first60);
        assert_eq!(f.in_five_years.total_paid, first60 + d("1500"));
        assert!(f.apr_tolerance.regular);
        assert_eq!(f.apr_tolerance.points, d("0.125"));
        // 100,000 at 6 % over 360: the posted final payment differs from 599.55.
        assert!(
            f.apr_tolerance.reason.contains("final payment"),
            "{}",
            f.apr_tolerance.reason
        );
    }

    #[test]
    fn a_short_loan_counts_its_whole_term_in_five_years() {
        let s = posted(&terms("12000", "0", 48));
        let f = disclose(&s, &[]).unwrap();
        assert_eq!(f.in_five_years.through_payment, 48);
        assert_eq!(f.in_five_years.principal_paid, d("12000"));
        assert_eq!(f.apr.apr_percent, Decimal::ZERO);
        assert!(f.apr_tolerance.reason.ends_with("amounts."));
    }

    #[test]
    fn charges_that_leave_nothing_financed_are_refused() {
        let s = posted(&terms("1000", "6", 12));
        let e = disclose(&s, &[charge("fee", "1000")]).unwrap_err();
        assert_eq!(e.field, Some("prepaid_finance_charges"));
        let e = disclose(&s, &[charge("fee", "-1")]).unwrap_err();
        assert_eq!(e.field, Some("prepaid_finance_charges"));
    }
}
