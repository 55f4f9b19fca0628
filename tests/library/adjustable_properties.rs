//! Property tests of adjustable-rate loans.
//!
//! Reference: exact rational arithmetic from `num-rational` over `num-bigint`
//! (general-purpose, crates.io). Each path's posted schedule must equal a
//! ledger stepped here with exact fractions: the path's rates worked out here
//! from the note's terms, the payment re-amortised at each change as
//! B·i / (1 − (1 + i)^−m) rounded half up to the cent, each period's interest
//! B·i rounded half up. The highest path is never below the composite, the
//! composite never below the lowest; rates stay within floor and maximum; the
//! final balance is zero.

use num_bigint::BigInt;
use num_rational::BigRational;
use num_traits::{One, Signed, Zero};
use proptest::prelude::*;
use residue::engine::adjustable::{AdjustableRate, RatePath, RateRounding};
use residue::engine::money::{Currency, InterestRounding, PaymentRounding};
use residue::engine::plan::{post, PlanOptions};
use residue::engine::rate::{AnnualRate, Frequency};
use residue::engine::schedule::{LoanTerm, LoanTerms};
use rust_decimal::Decimal;

use crate::helpers::proptest_config;

fn ratio(d: Decimal) -> BigRational {
    BigRational::new(BigInt::from(d.mantissa()), BigInt::from(10).pow(d.scale()))
}

/// Rounded half up (away from zero) to a multiple of 1/`unit`.
fn round_to(x: &BigRational, unit: i64) -> BigRational {
    let scaled = x * BigRational::from_integer(BigInt::from(unit));
    let half = BigRational::new(BigInt::from(1), BigInt::from(2));
    let whole = if scaled.is_negative() {
        -((-scaled) + half).floor()
    } else {
        (scaled + half).floor()
    };
    whole / BigRational::from_integer(BigInt::from(unit))
}

/// The rate rounding of the note, on eighths, written out here.
fn eighths(x: &BigRational, rule: RateRounding) -> BigRational {
    let eight = BigRational::from_integer(BigInt::from(8));
    let scaled = x * &eight;
    let whole = match rule {
        RateRounding::None => return x.clone(),
        RateRounding::NearestEighth => (scaled + BigRational::new(1.into(), 2.into())).floor(),
        RateRounding::UpEighth => scaled.ceil(),
        RateRounding::DownEighth => scaled.floor(),
    };
    whole / eight
}

/// The path's rate for each payment 1..=n, worked out here.
fn rates_here(
    a: &AdjustableRate,
    initial: &BigRational,
    path: &RatePath,
    n: u32,
) -> Vec<BigRational> {
    let floor = ratio(a.floor_percent.unwrap_or(a.margin_percent));
    let max = ratio(a.lifetime_max_percent);
    let mut rate = initial.clone();
    let mut out = Vec::with_capacity(n as usize);
    let mut change = 0usize;
    for k in 1..=n {
        if k >= a.first_change_payment && (k - a.first_change_payment) % a.change_every == 0 {
            let cap = if change == 0 {
                a.first_change_cap_percent.or(a.periodic_cap_percent)
            } else {
                a.periodic_cap_percent
            };
            let target = match path {
                RatePath::Composite => eighths(
                    &(ratio(a.index_percent) + ratio(a.margin_percent)),
                    a.rounding,
                ),
                RatePath::Highest => max.clone(),
                RatePath::Lowest => floor.clone(),
                RatePath::IndexValues(v) => {
                    let index = v.get(change).or(v.last()).copied().unwrap();
                    eighths(&(ratio(index) + ratio(a.margin_percent)), a.rounding)
                }
            };
            let mut next = target;
            if let Some(cap) = cap {
                let cap = ratio(cap);
                next = next.min(&rate + &cap).max(&rate - &cap);
            }
            rate = next.min(max.clone()).max(floor.clone());
            change += 1;
        }
        out.push(rate.clone());
    }
    out
}

/// (payment, interest, principal, balance) of each payment, posted here.
fn ledger_here(principal: Decimal, rates: &[BigRational], io: u32) -> Vec<[BigRational; 4]> {
    let n = rates.len() as u32;
    let hundred_twelve = BigRational::from_integer(BigInt::from(1200));
    let level = |b: &BigRational, i: &BigRational, m: u32| -> BigRational {
        if i.is_zero() {
            return round_to(&(b / BigRational::from_integer(BigInt::from(m))), 100);
        }
        let factor = num_traits::pow(BigRational::one() + i, m as usize);
        round_to(&(b * i * &factor / (factor - BigRational::one())), 100)
    };
    let mut b = ratio(principal);
    let mut rows = Vec::with_capacity(n as usize);
    let mut pay = level(&b, &(&rates[0] / &hundred_twelve), n - io);
    for k in 1..=n {
        let i = &rates[k as usize - 1] / &hundred_twelve;
        let changed = k > 1 && rates[k as usize - 1] != rates[k as usize - 2];
        if k > io && (changed || k == io + 1) {
            pay = level(&b, &i, n - k + 1);
        }
        let interest = round_to(&(&b * &i), 100);
        let owed = &b + &interest;
        let regular = if k <= io {
            interest.clone()
        } else {
            pay.clone()
        };
        let payment = if k == n || owed <= regular {
            owed.clone()
        } else {
            regular
        };
        let principal_part = &payment - &interest;
        b = owed - &payment;
        rows.push([payment, interest, principal_part, b.clone()]);
        if b.is_zero() {
            break;
        }
    }
    rows
}

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

fn note() -> impl Strategy<Value = (AdjustableRate, Decimal, u32, u32)> {
    (
        (0i64..800).prop_map(|p| Decimal::new(p, 2)),   // index
        (100i64..400).prop_map(|p| Decimal::new(p, 2)), // margin
        (120u32..=360),                                 // term
        (2u32..200),                                    // first change
        prop_oneof![Just(1u32), Just(6), Just(12), Just(36)],
        prop_oneof![
            Just(None),
            (0i64..600).prop_map(|p| Some(Decimal::new(p, 2)))
        ],
        prop_oneof![
            Just(None),
            (25i64..300).prop_map(|p| Some(Decimal::new(p, 2)))
        ],
        (100i64..1000).prop_map(|p| Decimal::new(p, 2)), // initial rate
        (0i64..800).prop_map(|p| Decimal::new(p, 2)),    // maximum above the initial
        prop_oneof![
            Just(RateRounding::None),
            Just(RateRounding::NearestEighth),
            Just(RateRounding::UpEighth),
            Just(RateRounding::DownEighth)
        ],
        prop_oneof![Just(0u32), 1u32..60],
    )
        .prop_map(
            |(index, margin, n, first, every, first_cap, cap, initial, above, rounding, io)| {
                let a = AdjustableRate {
                    index_percent: index,
                    margin_percent: margin,
                    first_change_payment: first.min(n),
                    change_every: every,
                    first_change_cap_percent: first_cap,
                    periodic_cap_percent: cap,
                    lifetime_max_percent: initial + above,
                    floor_percent: None,
                    rounding,
                    payment_cap_percent: None,
                };
                (a, initial, n, io.min(first.min(n) - 1))
            },
        )
}

proptest! {
    #![proptest_config(proptest_config(48))]

    #[test]
    fn each_path_equals_an_exact_ledger_and_the_paths_are_ordered(
        principal in (5_000_000i64..90_000_000).prop_map(|c| Decimal::new(c, 2)),
        (a, initial, n, io) in note(),
        index_values in prop::collection::vec((0i64..900).prop_map(|p| Decimal::new(p, 2)), 1..6),
    ) {
        prop_assume!(a.floor_percent.unwrap_or(a.margin_percent) <= a.lifetime_max_percent);
        let t = terms(principal, initial, n);
        let mut payments: Vec<Vec<Decimal>> = Vec::new();
        for path in [RatePath::Highest, RatePath::Composite, RatePath::Lowest, RatePath::IndexValues(index_values.clone())] {
            let o = PlanOptions { adjustable: Some(a.clone()), rate_path: path.clone(), interest_only_payments: io, ..PlanOptions::default() };
            let plan = match post(&t, &o, true) {
                Ok(p) => p,
                Err(e) => return Err(TestCaseError::reject(e.to_string())),
            };
            let rates = rates_here(&a, &ratio(initial), &path, n);
            let floor = ratio(a.floor_percent.unwrap_or(a.margin_percent));
            for (k, r) in rates.iter().enumerate() {
                if k as u32 + 1 >= a.first_change_payment {
                    prop_assert!(*r >= floor && *r <= ratio(a.lifetime_max_percent));
                }
            }
            let here = ledger_here(principal, &rates, io);
            prop_assert_eq!(plan.rows.len(), here.len(), "{:?}: the number of payments", path);
            for (row, [payment, interest, principal_part, balance]) in plan.rows.iter().zip(&here) {
                prop_assert_eq!(ratio(row.payment), payment.clone(), "{:?} payment {}", path, row.number);
                prop_assert_eq!(ratio(row.interest), interest.clone(), "{:?} interest {}", path, row.number);
                prop_assert_eq!(ratio(row.principal), principal_part.clone(), "{:?} principal {}", path, row.number);
                prop_assert_eq!(ratio(row.balance), balance.clone(), "{:?} balance {}", path, row.number);
            }
            prop_assert_eq!(plan.rows.last().unwrap().balance, Decimal::ZERO);
            prop_assert_eq!(plan.rows.iter().map(|r| r.principal).sum::<Decimal>(), principal);
            payments.push(plan.rows.iter().map(|r| r.payment).collect());
        }
        // Highest ≥ composite ≥ lowest, payment by payment (the final payment,
        // which absorbs the rounding, left out).
        let last = n as usize - 1;
        for (k, ((high, comp), low)) in payments[0].iter().zip(&payments[1]).zip(&payments[2]).take(last).enumerate() {
            prop_assert!(high >= comp, "payment {}: highest below composite", k + 1);
            prop_assert!(comp >= low, "payment {}: composite below lowest", k + 1);
        }
    }
}

proptest! {
    #![proptest_config(proptest_config(200))]

    /// A check posts an adjustable loan's path without keeping rows, in runs
    /// between its rate changes; its figures must be the full schedule's.
    #[test]
    fn the_lean_posting_of_an_adjustable_loan_equals_the_full_schedule(
        principal in (5_000_000i64..90_000_000).prop_map(|c| Decimal::new(c, 2)),
        (a, initial, n, _io) in note(),
        path in prop_oneof![Just(RatePath::Composite), Just(RatePath::Highest), Just(RatePath::Lowest)],
        dated in any::<bool>(),
    ) {
        prop_assume!(a.floor_percent.unwrap_or(a.margin_percent) <= a.lifetime_max_percent);
        let date = |s: &str| s.parse::<jiff::civil::Date>().unwrap();
        let o = PlanOptions {
            adjustable: Some(a),
            rate_path: path,
            funding_date: dated.then(|| date("2027-01-17")),
            first_payment_date: dated.then(|| date("2027-03-01")),
            ..PlanOptions::default()
        };
        crate::plan_properties::lean_against_full(&terms(principal, initial, n), &o)?;
    }
}
