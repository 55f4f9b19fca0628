//! Property tests of plans that change over time (extras, interest-only, rate steps).
//!
//! Reference: exact big-integer arithmetic from `num-bigint` (general-purpose,
//! crates.io). The chain of segment closed forms must equal exact stepping of the
//! posted payments, and the interest saved by extras must equal the difference of
//! two ledgers posted independently here.

use num_bigint::BigInt;
use num_traits::Signed;
use proptest::prelude::*;
use residue::engine::money::{Currency, InterestRounding, PaymentRounding};
use residue::engine::plan::{post, Extra, PlanOptions, RateChange};
use residue::engine::rate::{AnnualRate, Frequency};
use residue::engine::schedule::{schedule_with, scheduled_payments, LoanTerm, LoanTerms};
use rust_decimal::{Decimal, RoundingStrategy};

use crate::helpers::{proptest_config, Exact};

fn terms(principal: Decimal, percent: Decimal, n: u32) -> LoanTerms {
    LoanTerms {
        principal,
        currency: Currency::USD,
        rate: AnnualRate::from_percent(percent).unwrap(),
        payment_frequency: Frequency::Monthly,
        compounding: None,
        term: LoanTerm::Payments(n),
        payment_rounding: PaymentRounding::Nearest,
        interest_rounding: InterestRounding::HalfUp,
    }
}

fn options() -> impl Strategy<Value = (u32, Vec<Extra>, Vec<(u32, u32)>)> {
    (
        prop_oneof![Just(0u32), 1u32..24],
        prop::collection::vec(
            prop_oneof![
                (1i64..50_000, 1u32..120, 0u32..200, 1u32..13).prop_map(|(c, from, len, every)| {
                    Extra::Recurring {
                        amount: Decimal::new(c, 2),
                        from,
                        to: Some(from + len),
                        every,
                    }
                }),
                (1i64..2_000_000, 1u32..300).prop_map(|(c, at)| Extra::Lump {
                    amount: Decimal::new(c, 2),
                    at
                }),
            ],
            0..4,
        ),
        prop::collection::vec((30u32..300, 0u32..1500), 0..3),
    )
}

/// Rate steps from (gap, hundredths of a percent) pairs, kept within n payments.
fn rate_steps(steps: &[(u32, u32)], n: u32) -> Vec<RateChange> {
    let mut rate_changes = Vec::new();
    let mut at = 1;
    for (gap, p) in steps {
        at += gap;
        if at <= n {
            rate_changes.push(RateChange {
                at,
                rate: AnnualRate::from_percent(Decimal::new(i64::from(*p), 2)).unwrap(),
            });
        }
    }
    rate_changes
}

/// The lean posting of a check (`scheduled_payments`) against the full
/// schedule of the same loan: the same payments (as runs), count, totals,
/// first five years, due dates and notes; or the same refusal.
pub(crate) fn lean_against_full(t: &LoanTerms, o: &PlanOptions) -> Result<(), TestCaseError> {
    let (full, lean) = match (schedule_with(t, o), scheduled_payments(t, o)) {
        (Ok(full), Ok(lean)) => (full, lean),
        (Err(a), Err(b)) => {
            prop_assert_eq!(a, b);
            return Err(TestCaseError::reject("refused by both"));
        }
        (a, b) => {
            return Err(TestCaseError::fail(format!(
                "one refused: {:?} / {:?}",
                a.err(),
                b.err()
            )))
        }
    };
    let rows = &full.ledger.rows;
    let mut expanded = Vec::new();
    for run in &lean.summary.runs {
        prop_assert!(run.count > 0);
        expanded.extend(std::iter::repeat_n(run.amount, run.count as usize));
    }
    let scheduled: Vec<Decimal> = rows.iter().map(|r| r.payment).collect();
    prop_assert_eq!(expanded, scheduled);
    for pair in lean.summary.runs.windows(2) {
        prop_assert!(pair[0].amount != pair[1].amount, "runs are maximal");
    }
    prop_assert_eq!(lean.number_of_payments, full.number_of_payments);
    prop_assert_eq!(lean.final_payment, full.final_payment);
    prop_assert_eq!(lean.payment, full.payment);
    prop_assert_eq!(lean.total_paid, full.ledger.total_paid);
    prop_assert_eq!(lean.total_interest, full.ledger.total_interest);
    prop_assert_eq!(lean.prepaid_interest, full.plan.prepaid_interest);
    let early = (5 * t.payment_frequency.per_year()).min(full.number_of_payments) as usize;
    prop_assert_eq!(lean.summary.early_count as usize, early);
    prop_assert_eq!(
        lean.summary.early_payments,
        rows[..early].iter().map(|r| r.payment).sum::<Decimal>()
    );
    prop_assert_eq!(
        lean.summary.early_principal,
        rows[..early].iter().map(|r| r.principal).sum::<Decimal>()
    );
    let dates: Vec<jiff::civil::Date> = rows.iter().filter_map(|r| r.date).collect();
    prop_assert_eq!(&lean.due_dates, &dates);
    // The notes that concern the payments, in the full schedule's order.
    let shared: Vec<String> = full
        .notes
        .iter()
        .filter(|n| lean.notes.contains(n))
        .cloned()
        .collect();
    prop_assert_eq!(&lean.notes, &shared);
    Ok(())
}

proptest! {
    #![proptest_config(proptest_config(300))]

    #[test]
    fn segment_closed_forms_equal_exact_stepping(
        principal in (100_000i64..100_000_000).prop_map(|c| Decimal::new(c, 2)),
        percent in (0i64..1500).prop_map(|p| Decimal::new(p, 2)),
        (io, extras, steps) in options(),
    ) {
        let n = 360;
        let rate_changes = rate_steps(&steps, n);
        let o = PlanOptions { interest_only_payments: io, extras, rate_changes, ..PlanOptions::default() };
        let plan = match post(&terms(principal, percent, n), &o, true) {
            Ok(p) => p,
            Err(e) => return Err(TestCaseError::reject(e.to_string())),
        };
        // Exact stepping of the posted payments: x_k = a_k·x_{k−1} − (payment_k + extra_k), from the start.
        const S: u32 = 28 * 4;
        let mut x = Exact::of(principal).at_scale(S);
        let mut m = x.abs();
        let mut k = 0usize;
        for seg in &plan.segments {
            let a = Decimal::ONE + seg.periodic_rate;
            let values = seg.solution.closed_form.values(seg.last_payment - seg.first_payment + 1).unwrap();
            for (local, value) in values.iter().enumerate().skip(1) {
                let row = &plan.rows[k];
                let out = row.payment + row.extra;
                // x_k = a·x_{k−1} − out, at growing scale (a has up to 28 decimals).
                x = (&x * Exact::of(a).at_scale(28)) / BigInt::from(10).pow(28) - Exact::of(out).at_scale(S);
                m = (&m * Exact::of(a).at_scale(28)) / BigInt::from(10).pow(28) + Exact::of(out).at_scale(S);
                k += 1;
                let diff = (Exact::of(*value).at_scale(S.max(value.scale())) - &x * BigInt::from(10).pow(S.max(value.scale()) - S)).abs();
                // 1e-20 of the magnitude, plus the 1e-84 truncation of this reference per step.
                let bound = (&m + BigInt::from(10).pow(S)) / BigInt::from(10).pow(20) * BigInt::from(10).pow(S.max(value.scale()) - S);
                prop_assert!(diff <= bound, "payment {} (segment {}–{}, local {local}): {value} vs exact", row.number, seg.first_payment, seg.last_payment);
            }
        }
        prop_assert_eq!(plan.rows.last().unwrap().balance, Decimal::ZERO);
        let principal_sum: Decimal = plan.rows.iter().map(|r| r.principal).sum();
        prop_assert_eq!(principal_sum, principal);
    }

    #[test]
    fn interest_saved_equals_the_difference_of_two_independent_ledgers(
        principal in (1_000_000i64..60_000_000).prop_map(|c| Decimal::new(c, 2)),
        percent in (1i64..1200).prop_map(|p| Decimal::new(p, 2)),
        extra in (100i64..100_000).prop_map(|c| Decimal::new(c, 2)),
        from in 1u32..120,
        lump in (0i64..1_000_000).prop_map(|c| Decimal::new(c, 2)),
        lump_at in 1u32..200,
    ) {
        let t = terms(principal, percent, 360);
        let mut extras = vec![Extra::Recurring { amount: extra, from, to: None, every: 1 }];
        if !lump.is_zero() {
            extras.push(Extra::Lump { amount: lump, at: lump_at });
        }
        let s = schedule_with(&t, &PlanOptions { extras: extras.clone(), ..PlanOptions::default() }).unwrap();
        // Two ledgers posted here, independently of the engine's posting loop.
        // Interest is b × j/12 with j = percent/100 exactly: b × percent / 1200,
        // multiplied first so a tie (an exact half cent) stays one; the decimal
        // percent/1200 alone is rounded at 28 digits when it does not terminate.
        let payment = s.payment;
        let post_here = |with: bool| -> (Decimal, u32) {
            let mut b = principal;
            let mut total = Decimal::ZERO;
            for k in 1..=360u32 {
                let interest = (b * percent / Decimal::from(1200)).round_dp_with_strategy(2, RoundingStrategy::MidpointAwayFromZero);
                total += interest;
                let mut e = Decimal::ZERO;
                if with {
                    if k >= from { e += extra; }
                    if k == lump_at { e += lump; }
                }
                if b + interest <= payment + e || k == 360 {
                    return (total, k);
                }
                b = b + interest - payment - e;
            }
            (total, 360)
        };
        let (base_interest, base_n) = post_here(false);
        let (with_interest, with_n) = post_here(true);
        let saved = s.savings.unwrap();
        prop_assert_eq!(saved.interest_saved, base_interest - with_interest);
        prop_assert_eq!(saved.payments_saved, base_n - with_n);
        prop_assert_eq!(s.ledger.total_interest, with_interest);
    }

    /// A check posts without keeping rows (`scheduled_payments`); its figures
    /// must be the full schedule's, row for row summed here.
    #[test]
    fn the_lean_posting_of_a_check_equals_the_full_schedule(
        principal in (100_000i64..100_000_000).prop_map(|c| Decimal::new(c, 2)),
        percent in (0i64..1500).prop_map(|p| Decimal::new(p, 2)),
        n in prop_oneof![Just(360u32), 1u32..480],
        frequency in prop_oneof![Just(Frequency::Monthly), Just(Frequency::Biweekly), Just(Frequency::Quarterly)],
        (io, extras, steps) in options(),
        balloon in prop_oneof![Just(None), (1u32..480).prop_map(Some)],
        dated in any::<bool>(),
    ) {
        let rate_changes = rate_steps(&steps, n);
        let date = |s: &str| s.parse::<jiff::civil::Date>().unwrap();
        let o = PlanOptions {
            interest_only_payments: io,
            extras,
            rate_changes,
            balloon_after_payments: balloon,
            funding_date: dated.then(|| date("2027-01-17")),
            first_payment_date: dated.then(|| date("2027-03-01")),
            ..PlanOptions::default()
        };
        let t = LoanTerms { payment_frequency: frequency, ..terms(principal, percent, n) };
        lean_against_full(&t, &o)?;
    }

    /// A level loan's lean posting takes a loop of its own (no changes over
    /// time to test for): it must give the full schedule's figures in every
    /// currency, frequency, rounding and odd first period.
    #[test]
    fn the_lean_posting_of_a_level_loan_equals_the_full_schedule(
        units in (1_000i64..100_000_000_000),
        percent in (0i64..100_000).prop_map(|p| Decimal::new(p, 3)),
        code in prop_oneof![Just("USD"), Just("JPY"), Just("KWD")],
        frequency in prop_oneof![Just(Frequency::Monthly), Just(Frequency::Biweekly), Just(Frequency::Annual), Just(Frequency::Weekly)],
        compounding in prop_oneof![Just(None), Just(Some(Frequency::Daily)), Just(Some(Frequency::Semiannual))],
        by_payment in any::<bool>(),
        n in 1u32..600,
        payment_up in any::<bool>(),
        half_even in any::<bool>(),
        odd in prop_oneof![Just(None), (0u32..40).prop_map(Some)],
    ) {
        let currency = Currency::parse(code).unwrap();
        let principal = Decimal::new(units, currency.minor_units());
        let rate = AnnualRate::from_percent(percent).unwrap();
        let mut t = LoanTerms {
            principal,
            currency,
            rate,
            payment_frequency: frequency,
            compounding,
            term: LoanTerm::Payments(n),
            payment_rounding: if payment_up { PaymentRounding::Up } else { PaymentRounding::Nearest },
            interest_rounding: if half_even { InterestRounding::HalfEven } else { InterestRounding::HalfUp },
        };
        if by_payment {
            // A payment a little above the level one for n payments: the term is solved.
            match scheduled_payments(&t, &PlanOptions::default()) {
                Ok(level) => t.term = LoanTerm::Payment(level.payment + currency.minor_unit()),
                Err(_) => return Err(TestCaseError::reject("no level payment")),
            }
        }
        let o = match odd {
            None => PlanOptions::default(),
            Some(days) => {
                let funding = "2027-01-01".parse::<jiff::civil::Date>().unwrap();
                PlanOptions {
                    funding_date: Some(funding.checked_add(jiff::Span::new().days(i64::from(days))).unwrap()),
                    first_payment_date: Some("2027-03-01".parse().unwrap()),
                    ..PlanOptions::default()
                }
            }
        };
        lean_against_full(&t, &o)?;
    }
}
