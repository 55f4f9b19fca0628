//! Savings plans: deposits toward a goal, growing deposits and drawdowns, solved in closed form.
//!
//! The balance of a savings account obeys the recurrence of every plan,
//!
//! ```text
//! balance[k+1] = a·balance[k] + f[k],   balance[0] = opening balance,   a = 1 + i,
//! ```
//!
//! with f[k] the deposit of period k (a withdrawal is a negative deposit):
//!
//! - level deposits: a step input c (poles at z = a and z = 1);
//! - deposits growing by a percentage each period: a geometric input c·g^k (a
//!   second pole z = g; when g equals a the pole is double and the closed form
//!   gains a k·a^k term through the engine's repeated-pole path, with no formula
//!   of its own);
//! - deposits growing each year, level within a year: a staircase, which is not in
//!   the transform table. It is solved in two levels. At the year boundaries the
//!   balance B[y] = balance[y·m] (m periods a year) obeys a first-order recurrence
//!   of its own,
//!
//!   ```text
//!   B[y+1] = A·B[y] + S·(c·g^y + s·y),   A = a^m,   S = Σ_{j<m} a^j,
//!   ```
//!
//!   (c the first year's deposit, g = 1 + yearly growth, s the fixed amount added
//!   each year), a geometric and a ramp input solved by
//!   [`Recurrence::solve`](super::recurrence::Recurrence::solve) (a double pole
//!   when g = A). Inside year y the balance is the period closed form from B[y]
//!   with that year's level deposit: balance[y·m + r] = a^r·B[y] + c_y·u[r], where
//!   a^r and u[r] = Σ_{j<r} a^j are the closed forms of a unit balance and a unit
//!   deposit ([`UnitResponses`](super::loan::UnitResponses)). Every period's
//!   balance is O(1).
//!
//! Deposits at the **start** of a period earn that period's interest:
//! x[k+1] = a·(x[k] + d) = a·x[k] + a·d, which is the end-of-period plan with the
//! deposit a·d, each deposit shifted one period earlier.
//!
//! The balance is linear in the level (first) deposit, so the deposit that reaches a
//! goal comes from two evaluations of the closed form (a unit deposit, and the
//! opening balance with the yearly step alone), as [`super::loan::payment_for_term`]
//! does. The number of periods to a goal is a logarithm for level deposits (a
//! binary-floating-point estimate confirmed exactly by the decimal closed form at
//! n − 1 and n) and a bisection over whole periods on the O(1) closed form when
//! deposits grow.
//!
//! The posted ledger credits each period's interest rounded to the minor unit,
//! halves up, posts growing deposits rounded to the minor unit, and is reconciled
//! with the closed form.
//!
//! Precision: the closed forms agree with exact rational stepping to 1e-20 of the
//! plan's size (tests/savings_properties.rs), with one exception. A yearly step s
//! puts a ramp (a double pole at z = 1) into the yearly recurrence beside its pole
//! A = a^m, and when A is close to 1 (a small nonzero rate) the partial fractions
//! are two residues of about ±s·S/(A − 1)² that cancel. Each carries about 1e-21
//! of its size in error, so the closed form errs by about 1e-20·s·m/(A − 1)² in
//! money: for s = 1,000 a year on monthly deposits, 1e-6 at 0.001 % a year and a
//! cent only below about 0.00001 % a year (below A − 1 = 1e-14 the poles are merged).
//! The posted ledger does not depend on it: final balances and totals come from the
//! ledger, a solved deposit is confirmed by posting it, and the answer says so when
//! the closed form may be off by more than a hundredth of a minor unit.
//!
//! # Files
//!
//! - `terms`: the plan's terms and their ranges;
//! - `closed_form`: the balance after any period, in O(1);
//! - `ledger`: the posted ledger and its reconciliation;
//! - `searches`: the number of periods, found on the closed form;
//! - `questions`: one function for each question a plan can ask;
//! - `plan`: the plan solved, posted, dated and reconciled.

mod closed_form;
mod ledger;
mod plan;
mod questions;
mod searches;
mod terms;

pub use closed_form::{FlowShape, PlanForm, YearlyForm};
pub use ledger::{SavingsLedger, SavingsReconciliation, SavingsRow};
pub use plan::{plan, repost, GoalReached, SavingsPlan};
pub use questions::FlowDerivation;
pub use searches::{PeriodSearch, PeriodsDerivation};
pub use terms::{
    check_amount, check_periods, period_date, periods_in_months, Flow, Growth, GrowthEvery,
    Pattern, Question, SavingsTerms, Timing, MAX_AMOUNT, MAX_GROWTH_PERCENT_A_YEAR, MAX_PERIODS,
};
