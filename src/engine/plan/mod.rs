//! Loans whose terms change over time: dates and an odd first period, extra
//! payments, an interest-only start, a balloon, rate steps, milestones.
//!
//! The posted ledger steps through the payments as a servicing system would
//! (the only stepping there is). The closed form is found per segment: a run of
//! payments over which the rate, the regular payment and the recurring extra stay
//! the same, a lump sum or odd-days interest starting a segment of its own as an
//! impulse. Each segment is solved from the previous segment's closed-form end
//! balance, and the ledger is reconciled with the chain.
//!
//! - `options`: what a plan adds to the terms, and its checks;
//! - `posting`: the posted ledger and its summary;
//! - `segments`: the closed form per segment, and the reconciliation;
//! - `milestones`: payments and dates worth naming, found on the closed forms.

mod milestones;
mod options;
mod posting;
mod segments;

pub use milestones::{first_at_or_below, milestones, Milestone, Milestones};
pub use options::{
    check, expected_work, Extra, OddDaysInterest, PlanOptions, RateChange, RateChangeKeeps,
};
pub use posting::{
    post, post_summary, post_totals, post_with, PaymentRun, PaymentSummary, Plan, PlanRow,
};
pub use segments::Segment;
