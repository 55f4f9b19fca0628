//! Milestones of a posted plan: the first payment whose principal part exceeds
//! its interest part, the balances of 80 % and 78 % of the original value and the
//! midpoint of the Homeowners Protection Act, and the figures of the first five
//! years; found on the closed forms and confirmed on the posted rows.

use std::convert::Infallible;

use jiff::civil::Date;
use rust_decimal::Decimal;

use super::posting::{Plan, PlanRow};
use crate::engine::error::Result;
use crate::engine::money::Currency;
use crate::engine::search::first_whole;
use crate::engine::zdomain::{ClosedForm, Estimator};

/// A milestone: a payment number and its date.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Milestone {
    /// The payment number.
    pub payment: u32,
    /// Its due date, when the plan is dated.
    pub date: Option<Date>,
}

/// The milestones of a plan.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Milestones {
    /// The first regular payment whose principal part exceeds its interest part
    /// (the final payoff and a balloon are not regular payments).
    pub principal_exceeds_interest: Option<Milestone>,
    /// Scheduled balance first at or below 80 % of the original value (HPA borrower request).
    pub balance_80_percent: Option<Milestone>,
    /// Scheduled balance first at or below 78 % of the original value (HPA automatic termination).
    pub balance_78_percent: Option<Milestone>,
    /// The midpoint of the amortization period, and the first day of the next month.
    pub midpoint: Option<Milestone>,
    /// The first day of the month after the midpoint (HPA final termination).
    pub final_termination_date: Option<Date>,
    /// Through payment 60 (or the whole term when shorter).
    pub payments_counted: u32,
    /// Payments and extra payments through `payments_counted`.
    pub total_paid_60: Decimal,
    /// Principal repaid through `payments_counted`.
    pub principal_paid_60: Decimal,
}

/// The first m in lo..=hi with x[m] ≤ threshold (x falling), or `None`.
///
/// A floating-point bisection picks the candidate; the decimal closed form then
/// confirms it exactly at m − 1 and m, moving it until both agree.
///
/// # Errors
/// An overflow.
pub fn first_at_or_below(
    cf: &ClosedForm,
    threshold: Decimal,
    lo: u32,
    hi: u32,
) -> Result<Option<u32>> {
    use rust_decimal::prelude::ToPrimitive;
    if lo > hi || cf.eval(hi)? > threshold {
        return Ok(None);
    }
    let t = threshold.to_f64().unwrap_or(0.0);
    let estimator = Estimator::new(cf);
    let mut m = first_by_halving(lo, hi, |m| estimator.at(m) <= t);
    for _ in 0..(hi - lo + 2) {
        if cf.eval(m)? > threshold {
            m += 1;
        } else if m > lo && cf.eval(m - 1)? <= threshold {
            m -= 1;
        } else {
            return Ok(Some(m));
        }
    }
    Ok(Some(m))
}

/// The first m in lo..=hi at which `holds`, by halving, `holds(hi)` taken as true.
///
/// Counted down from hi (y = hi − m), "`holds` fails at m" fails at y = 0 and is
/// taken to hold at y = hi − lo + 1 (m = lo − 1); the first y where it holds is
/// one past the m sought. Halving y rounded down tries the m that halving up
/// from lo rounded down tries (a + (b − a)/2 with m in [a, b]), so with a test
/// in binary floating point that is not exactly monotone the candidate is still
/// the one those steps give.
fn first_by_halving(lo: u32, hi: u32, holds: impl Fn(u32) -> bool) -> u32 {
    let Ok((y, _)) = first_whole::<Infallible>(0, hi - lo + 1, |y| Ok(!holds(hi - y)));
    hi + 1 - y
}

/// The milestones of a posted plan; `base` is the same plan without extras (the
/// initial amortization schedule of the Homeowners Protection Act).
///
/// # Errors
/// An overflow.
pub fn milestones(
    plan: &Plan,
    base: &Plan,
    property_value: Option<Decimal>,
    currency: Currency,
) -> Result<(Milestones, Vec<String>)> {
    let mut notes = Vec::new();
    let mut out = Milestones::default();
    let at = |rows: &[PlanRow], k: u32| Milestone {
        payment: k,
        date: rows.get(k as usize - 1).and_then(|r| r.date),
    };
    // The principal part first exceeds the interest part where x[k−1] < P/(2i).
    'segments: for s in &plan.segments {
        if s.periodic_rate.is_zero() {
            out.principal_exceeds_interest = Some(at(&plan.rows, s.first_payment));
            break;
        }
        let regular = plan.rows[s.first_payment as usize - 1].payment
            - if s.first_payment == 1 {
                plan.rows[0].interest - base.rows[0].interest.min(plan.rows[0].interest)
            } else {
                Decimal::ZERO
            };
        let threshold = regular / (Decimal::TWO * s.periodic_rate);
        let len = s.last_payment - s.first_payment + 1;
        if let Some(m) = first_at_or_below(&s.solution.closed_form, threshold, 0, len - 1)? {
            // Confirm on the posted rows, whose interest is rounded.
            let mut k = s.first_payment + m;
            while (k as usize) <= plan.rows.len() {
                let r = &plan.rows[k as usize - 1];
                if r.principal - r.extra > r.interest {
                    out.principal_exceeds_interest = Some(at(&plan.rows, k));
                    break 'segments;
                }
                k += 1;
            }
        }
    }
    if let Some(v) = property_value {
        let principal = base
            .rows
            .first()
            .map_or(Decimal::ZERO, |r| r.balance + r.principal);
        if v < principal {
            notes.push("The property value is below the principal: the balance starts above 100 % of the original value.".into());
        }
        let find = |share: Decimal| -> Result<Option<Milestone>> {
            let threshold = currency.round(
                v * share,
                rust_decimal::RoundingStrategy::MidpointAwayFromZero,
            );
            for s in &base.segments {
                let len = s.last_payment - s.first_payment + 1;
                if let Some(m) = first_at_or_below(&s.solution.closed_form, threshold, 1, len)? {
                    let mut k = s.first_payment + m - 1;
                    // Confirm on the posted initial schedule.
                    while k > 1 && base.rows[k as usize - 2].balance <= threshold {
                        k -= 1;
                    }
                    while (k as usize) < base.rows.len()
                        && base.rows[k as usize - 1].balance > threshold
                    {
                        k += 1;
                    }
                    return Ok(Some(at(&base.rows, k)));
                }
            }
            Ok(base
                .rows
                .iter()
                .find(|r| r.balance <= threshold)
                .map(|r| at(&base.rows, r.number)))
        };
        out.balance_80_percent = find(Decimal::new(80, 2))?;
        out.balance_78_percent = find(Decimal::new(78, 2))?;
        let n = base.rows.len() as u32;
        let mid = n.div_ceil(2);
        out.midpoint = Some(at(&base.rows, mid));
        out.final_termination_date = out
            .midpoint
            .and_then(|m| m.date)
            .and_then(first_of_next_month);
        notes.push("Mortgage-insurance points follow the Homeowners Protection Act of 1998 (12 U.S.C. 4901–4902) on the initial amortization schedule; lender and investor rules may differ, and cancellation has conditions (payment history, value).".into());
    }
    let counted = plan.rows.len().min(60);
    out.payments_counted = counted as u32;
    out.total_paid_60 = plan.rows[..counted]
        .iter()
        .map(|r| r.payment + r.extra)
        .sum();
    out.principal_paid_60 = plan.rows[..counted].iter().map(|r| r.principal).sum();
    Ok((out, notes))
}

fn first_of_next_month(d: Date) -> Option<Date> {
    crate::engine::calendar::add_months(d, 1, 1, "first_payment_date").ok()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::plan::options::PlanOptions;
    use crate::engine::plan::posting::post;
    use crate::engine::terms::LoanTerm;
    use crate::engine::testing::loan_terms;
    use jiff::civil::date;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn hpa_milestones_on_the_initial_schedule() {
        // 12 U.S.C. 4901–4902: 80 % (request) and 78 % (automatic) of the original value on the
        // initial amortization schedule; final termination the first day of the month after the
        // midpoint. Property 250,000, loan 225,000 (90 %): thresholds 200,000 and 195,000.
        let t = loan_terms("225000", "6", LoanTerm::Payments(360));
        let o = PlanOptions {
            first_payment_date: Some(date(2027, 1, 1)),
            property_value: Some(d("250000")),
            ..PlanOptions::default()
        };
        let p = post(&t, &o, true).unwrap();
        let base = post(&t, &o, false).unwrap();
        let (m, _) = milestones(&p, &base, o.property_value, Currency::USD).unwrap();
        let k80 = m.balance_80_percent.unwrap().payment as usize;
        assert!(p.rows[k80 - 1].balance <= d("200000") && p.rows[k80 - 2].balance > d("200000"));
        let k78 = m.balance_78_percent.unwrap().payment as usize;
        assert!(p.rows[k78 - 1].balance <= d("195000") && p.rows[k78 - 2].balance > d("195000"));
        assert_eq!(m.midpoint.unwrap().payment, 180);
        assert_eq!(m.midpoint.unwrap().date, Some(date(2041, 12, 1)));
        assert_eq!(m.final_termination_date, Some(date(2042, 1, 1)));
        let kp = m.principal_exceeds_interest.unwrap().payment as usize;
        assert!(p.rows[kp - 1].principal > p.rows[kp - 1].interest);
        assert!(p.rows[kp - 2].principal <= p.rows[kp - 2].interest);
        assert_eq!(m.payments_counted, 60);
    }

    #[test]
    fn halving_down_from_hi_tries_the_points_of_halving_up_from_lo() {
        // The loop first_by_halving replaced, on tests that need not be monotone.
        let up = |lo: u32, hi: u32, holds: &dyn Fn(u32) -> bool| {
            let (mut a, mut b) = (lo, hi);
            while a < b {
                let mid = a + (b - a) / 2;
                if holds(mid) {
                    b = mid;
                } else {
                    a = mid + 1;
                }
            }
            a
        };
        let mut state = 0x9e37_79b9_u32;
        for (lo, hi) in [
            (0, 0),
            (0, 1),
            (1, 1),
            (0, 359),
            (1, 360),
            (5, 6),
            (3, 1000),
        ] {
            for _ in 0..200 {
                state ^= state << 13;
                state ^= state >> 17;
                state ^= state << 5;
                let seed = state;
                let holds = move |m: u32| (m.wrapping_mul(seed) >> 7) % 3 != 0 || m == hi;
                assert_eq!(
                    first_by_halving(lo, hi, holds),
                    up(lo, hi, &holds),
                    "{lo}..{hi}"
                );
            }
        }
    }
}
