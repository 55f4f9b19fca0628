//! Annual percentage rates: the actuarial method of Regulation Z (12 CFR 1026)
//! Appendix J, and the EU annual percentage rate of charge (Directive 2008/48/EC
//! Annex I).
//!
//! # Appendix J
//!
//! Every advance and payment is placed in unit-periods from the start of the term:
//! `periods` full unit-periods (q or t) and a `fraction` (e or f) of one, which earns
//! simple interest ((b)(6)). The unit-period rate i solves the general equation (b)(8)
//!
//! ```text
//! Σ_k A_k / [(1 + e_k·i)(1 + i)^q_k]  =  Σ_j P_j / [(1 + f_j·i)(1 + i)^t_j]
//! ```
//!
//! and the APR is i × unit-periods per year ((b)(1)). The equation is solved by
//! Newton's method kept inside a bracket (a bisection whenever a step would leave
//! it), from a binary-floating-point estimate, and carried to about 1e-22 in i:
//! far beyond the two decimals of the APR that (b)(9) asks to be certain.
//!
//! A run of `count` equal flows one unit-period apart is summed in closed form,
//! Σ_{m=0}^{n−1} v^m = (1 − v^n)/(1 − v) with v = 1/(1 + i), so a 360-payment
//! level loan costs the same per iteration as a single payment.
//!
//! From dated flows, [`apr_from_dates`] finds the unit-period by (b)(4) and counts
//! each flow's (t, f) by (b)(5), with the month rules of (b)(3).
//!
//! # EU APRC
//!
//! [`solve_aprc`] solves Σ C_k (1 + X)^(−t_k) = Σ D_l (1 + X)^(−s_l) with times
//! in years from the first drawdown, and rounds X to one decimal half up
//! (Annex I, remark (d)).
//!
//! Every function here is pure: no I/O, no clock. Money and rates are
//! `rust_decimal::Decimal`; `f64` is used only for the first estimate of a rate,
//! which the decimal iteration then refines (no result depends on it).
//!
//! # Files
//!
//! - `flows`: the advances and payments, in unit-periods or on dates;
//! - `equation`: the general equation (b)(8) in unit-periods and its slope;
//! - `solver`: the rate that balances it, and the bracketed iteration the APRC shares;
//! - `months`: month arithmetic with the month-end rules of (b)(3);
//! - `unit_period`: the unit-period, chosen by (b)(4) and counted by (b)(5);
//! - `dated`: the APR of dated flows, from the unit-period to the rate;
//! - `aprc`: the EU APRC, with its counting of time in years.

mod aprc;
mod dated;
mod equation;
mod flows;
mod months;
mod solver;
#[cfg(test)]
mod testing;
mod unit_period;

pub use aprc::{
    solve_aprc, solve_aprc_with, solve_aprc_years, years_between, AprcResult, AprcTimeBasis,
    AprcTimeChoice, DatedAprcResult, YearFlow, MAX_APRC_YEARS,
};
pub use dated::{apr_from_dates, apr_from_dates_with_unit, DatedAprResult};
pub use equation::MAX_UNIT_PERIODS;
pub use flows::{expand_series, DatedFlow, PaymentSeries, UnitFlow};
pub use solver::{solve_apr, AprResult};
pub use unit_period::{find_unit_period, unit_periods_between, UnitPeriod, UnitPeriodRule};
