//! Loan disclosure figures and quote checks, over the posted schedule of a
//! level-payment loan (Regulation Z, 12 CFR 1026).
//!
//! - Amount financed = principal − prepaid finance charges (§1026.18(b)).
//! - Total of payments = the sum of the scheduled (posted) payments (§1026.18(h)).
//! - Finance charge = total of payments − amount financed: the scheduled
//!   interest plus the prepaid finance charges.
//! - APR by the actuarial method of Appendix J ([`super::apr::solve_apr`]): the
//!   amount financed advanced at consummation, the posted payments one payment
//!   period apart from one period after it, the unit-period the payment period.
//!   Equal payments are passed as one run, so each iteration is O(1).
//! - APR tolerance: 1/8 point in a regular transaction, 1/4 point in an
//!   irregular one (§1026.22(a)(2)–(3)).
//! - Finance-charge tolerance (§1026.18(d)): mortgages, understated by no more
//!   than $100 (overstating is accurate); other credit, within $5 when the
//!   amount financed is at most $1,000, else $10.
//! - Total interest percentage (§1026.37(l)(3)): total interest over the loan
//!   term ÷ the loan amount × 100, every payment on time, no extra payments.
//! - In 5 years (§1026.37(l)(1)): total paid and principal paid through the 60th
//!   month after the first payment (the whole term when shorter).
//! - Rounding on the form (§1026.37(o)(4)): dollars to whole dollars, percentages
//!   to three decimals with trailing zeros dropped.
//!
//! Every figure is computed from the posted ledger in exact decimal arithmetic;
//! rounding for the form is applied only to the figures shown, never to their
//! components.
//!
//! - `figures`: the disclosure figures of a posted loan, and the form's rounding;
//! - `tolerance`: the APR and finance-charge tolerances;
//! - `check`: quotes compared with the figures.

mod check;
mod figures;
mod tolerance;

pub use check::{
    check_loan, check_loan_with, implied_annual_rate_percent, quote_problems, LoanCheck,
    PaymentCheck, Quotes, TOOL_NOT_OPINION,
};
pub use figures::{
    disclose, disclose_dated, form_dollars, form_percent, unit_period_of, unit_runs, InFiveYears,
    LoanDisclosure, PrepaidFinanceCharge, PREPAID_INTEREST,
};
pub use tolerance::{
    apr_tolerance, check_apr, check_finance_charge, AprCheck, AprTolerance, FinanceChargeCheck,
    FinanceChargeRule, IRREGULAR_APR_TOLERANCE, REGULAR_APR_TOLERANCE,
};
