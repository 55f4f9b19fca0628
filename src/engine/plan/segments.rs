//! The closed form of a posted plan, segment by segment: a run of payments over
//! which the rate, the regular payment and the recurring extra stay the same,
//! solved from the previous segment's closed-form end balance; and the ledger's
//! reconciliation with that chain.

use rust_decimal::Decimal;

use crate::engine::error::{ErrorKind, OrOverflow, Result};
use crate::engine::ledger::{from_minor, Row};
use crate::engine::recurrence::{Input, Recurrence, Solution};

/// A run of payments solved by one closed form.
#[derive(Debug, Clone)]
pub struct Segment {
    /// The first payment of the segment.
    pub first_payment: u32,
    /// The last payment of the segment.
    pub last_payment: u32,
    /// The periodic rate over the segment.
    pub periodic_rate: Decimal,
    /// Regular payment plus recurring extra, each period.
    pub outflow: Decimal,
    /// A lump sum or interest credit at the segment's first payment (negative: paid in).
    pub impulse: Decimal,
    /// The segment's balance recurrence, solved.
    pub solution: Solution,
    /// The closed form's balance after the segment's last payment.
    pub end_balance: Decimal,
}

/// Splits the posted payments (all but the final payoff) into closed-form segments.
pub(super) fn solve_segments(
    principal: Decimal,
    rows: &[Row],
    inputs: &[(u32, i128, i128, i128)],
    rates: &[Decimal],
    e: u32,
) -> Result<Vec<Segment>> {
    let regular_count = rows.len().saturating_sub(1);
    let mut segments: Vec<Segment> = Vec::new();
    let mut start_balance = principal;
    let mut k = 0;
    while k < regular_count {
        let (rate, regular, recurring, lump) = inputs[k];
        let i = rates[rate as usize];
        let outflow = from_minor(regular + recurring, e);
        // Odd-days interest raises payment and interest alike: the balance does not see it.
        let impulse = -from_minor(lump, e);
        let mut end = k + 1;
        while end < regular_count {
            let (i2, r2, rec2, l2) = inputs[end];
            if i2 != rate || r2 != regular || rec2 != recurring || l2 != 0 {
                break;
            }
            end += 1;
        }
        let mut recurrence_inputs = vec![Input::Step { amount: -outflow }];
        if !impulse.is_zero() {
            recurrence_inputs.push(Input::Impulse { amount: impulse });
        }
        let a = Decimal::ONE
            .checked_add(i)
            .or_overflow("the interest factor")?;
        let solution = Recurrence {
            a,
            x0: start_balance,
            inputs: recurrence_inputs,
        }
        .solve()?;
        let len = (end - k) as u32;
        let end_balance = solution.closed_form.eval(len)?;
        segments.push(Segment {
            first_payment: k as u32 + 1,
            last_payment: end as u32,
            periodic_rate: i,
            outflow,
            impulse,
            solution,
            end_balance,
        });
        start_balance = end_balance;
        k = end;
    }
    Ok(segments)
}

/// The largest |posted balance − closed-form balance| and where, or `None` past the decimal range.
pub(super) fn reconcile(rows: &[Row], segments: &[Segment]) -> Result<Option<(Decimal, u32)>> {
    let mut largest: Option<(Decimal, u32)> = None;
    for s in segments {
        let len = s.last_payment - s.first_payment + 1;
        let offset = s.first_payment as usize;
        let found = match s
            .solution
            .closed_form
            .largest_gap(len, |m| rows[offset + m as usize - 2].balance)
        {
            Ok(v) => v,
            Err(e) if e.kind == ErrorKind::Overflow => return Ok(None),
            Err(e) => return Err(e),
        };
        if let Some((drift, m)) = found {
            if largest.is_none_or(|(d, _)| drift > d) {
                largest = Some((drift, rows[offset + m as usize - 2].number));
            }
        }
    }
    Ok(largest)
}
