//! Property tests of the engine against exact rational arithmetic.
//!
//! Reference: exact big-integer arithmetic from `num-bigint` (general-purpose,
//! crates.io). All coefficients are decimals, so every x[k] is an exact decimal
//! fraction num/10^s; each recurrence is stepped exactly from the same decimal
//! coefficients, and the engine's closed form must agree with it to 1e-20 of
//! the recurrence's magnitude scale (the same recurrence stepped with every
//! term made positive: what the figures are made of, so that a balance that
//! crosses zero is still judged against the size of what produced it).

use proptest::prelude::*;
use residue::engine::ledger::post_level;
use residue::engine::loan::{payment_for_term, rate_for_payment, term_for_payment};
use residue::engine::money::{Currency, InterestRounding};
use residue::engine::recurrence::{Input, Recurrence};
use rust_decimal::prelude::{FromPrimitive, ToPrimitive};
use rust_decimal::Decimal;

use crate::helpers::{d, money, proptest_config, rate, Exact};

/// Exact x[k] and its magnitude scale for every k ≤ n.
fn step_exact(r: &Recurrence, n: u32) -> Vec<(Exact, Exact)> {
    let a = Exact::of(r.a);
    let mut x = Exact::of(r.x0);
    let mut m = x.abs();
    // Running powers of each geometric ratio.
    let mut powers: Vec<Exact> = r.inputs.iter().map(|_| Exact::one()).collect();
    let mut out = vec![(x.clone(), m.clone())];
    for k in 0..n {
        let mut f = Exact::zero();
        let mut fm = Exact::zero();
        for (input, power) in r.inputs.iter().zip(powers.iter_mut()) {
            let v = match *input {
                Input::Impulse { amount } => {
                    if k == 0 {
                        Exact::of(amount)
                    } else {
                        Exact::zero()
                    }
                }
                Input::Step { amount } => Exact::of(amount),
                Input::Geometric { amount, ratio } => {
                    let v = Exact::of(amount).mul(power);
                    *power = power.mul(&Exact::of(ratio));
                    v
                }
                Input::Ramp { amount } => Exact::of(amount).mul(&Exact::of(Decimal::from(k))),
            };
            fm = fm.add(&v.abs());
            f = f.add(&v);
        }
        x = a.mul(&x).add(&f);
        m = a.mul(&m).add(&fm);
        out.push((x.clone(), m.clone()));
    }
    out
}

/// Σ over the closed form's modes of |coefficient|·k^j·|pole|^k, plus its impulses.
fn closed_form_terms(cf: &residue::engine::zdomain::ClosedForm, k: u32) -> Exact {
    let kd = Decimal::from(k);
    let mut total = Exact::zero();
    for mode in &cf.modes {
        let mut power_of_k = Decimal::ONE;
        let mut size = Decimal::ZERO;
        for c in &mode.polynomial {
            size += c.abs() * power_of_k;
            power_of_k *= kd;
        }
        // |pole|^k in binary floating point, enough for a bound (capped).
        let p = mode
            .pole
            .abs()
            .to_f64()
            .unwrap_or(f64::MAX)
            .powi(k as i32)
            .min(1e20);
        let p = Decimal::from_f64(p).unwrap_or(Decimal::from(100_000_000_000_000_000_000u128));
        total = total.add(&Exact::of(size).mul(&Exact::of(p)));
    }
    for (_, c) in &cf.impulses {
        total = total.add(&Exact::of(c.abs()));
    }
    total
}

fn check_against_exact(r: &Recurrence, n: u32, tolerance: &str) -> Result<(), TestCaseError> {
    let s = r.solve().map_err(|e| TestCaseError::fail(e.to_string()))?;
    let reference = step_exact(r, n);
    let tol = Exact::of(d(tolerance));
    // Every k up to 60, then a spread of k up to n.
    let mut ks: Vec<u32> = (0..=n.min(60)).collect();
    ks.extend([n / 3, n / 2, n.saturating_sub(1), n]);
    for k in ks {
        let cf = Exact::of(
            s.closed_form
                .eval(k)
                .map_err(|e| TestCaseError::fail(e.to_string()))?,
        );
        let (want, scale) = &reference[k as usize];
        // Rounding is relative to what is summed: the stepped terms, and the
        // closed form's own terms, which for poles close together (a = 1 + 1e-7
        // beside the ramp's double pole at 1) are large and cancel: 28-digit
        // coefficients carry about 1e-28 of their size each (1e-26 allows a
        // hundred such roundings).
        let bound = tol
            .mul(&scale.add(&Exact::one()))
            .add(&Exact::of(Decimal::new(1, 26)).mul(&closed_form_terms(&s.closed_form, k)));
        let diff = cf.sub(want).abs();
        prop_assert!(
            diff.le(&bound),
            "k = {k}: closed form {cf:?} vs exact {want:?} for {r:?}"
        );
    }
    Ok(())
}

proptest! {
    #![proptest_config(proptest_config(1000))]

    /// Level loans: simple poles at a and 1, or the double pole at 1 when the rate is 0.
    #[test]
    fn level_loan_closed_form_equals_exact_stepping(i in rate(), x0 in money(2_000_000), p in money(20_000), n in 1u32..720) {
        let r = Recurrence { a: Decimal::ONE + i, x0, inputs: vec![Input::Step { amount: -p }] };
        check_against_exact(&r, n, "1e-20")?;
    }

    /// Every table input together: impulse, step, geometric, ramp (poles at 0, 1 (double), g, a).
    #[test]
    fn mixed_inputs_closed_form_equals_exact_stepping(
        i in rate(),
        x0 in money(500_000),
        impulse in money(10_000),
        step in money(5_000),
        growth in 1i64..300,
        ramp in money(50),
        n in 1u32..480,
    ) {
        let g = Decimal::ONE + Decimal::new(growth, 4) + Decimal::new(37, 6); // kept away from a
        prop_assume!((Decimal::ONE + i - g).abs() > Decimal::new(1, 5));
        let r = Recurrence {
            a: Decimal::ONE + i,
            x0,
            inputs: vec![
                Input::Impulse { amount: impulse },
                Input::Step { amount: step },
                Input::Geometric { amount: -step, ratio: g },
                Input::Ramp { amount: ramp },
            ],
        };
        check_against_exact(&r, n, "1e-20")?;
    }

    /// Deposits growing at exactly the interest rate: the double pole at z = a.
    #[test]
    fn growth_equal_to_the_rate_closed_form_equals_exact_stepping(i in (1u64..2_000_000).prop_map(|m| Decimal::new(m as i64, 8)), x0 in money(100_000), c in money(5_000), n in 1u32..600) {
        let a = Decimal::ONE + i;
        let r = Recurrence { a, x0, inputs: vec![Input::Geometric { amount: c, ratio: a }] };
        let s = r.solve().unwrap();
        prop_assert!(s.fractions.iter().any(|f| f.pole == a && f.multiplicity == 2));
        check_against_exact(&r, n, "1e-20")?;
    }

    /// Zero interest with growing deposits: a double pole at 1 (ramp: a triple pole).
    #[test]
    fn zero_rate_with_ramp_closed_form_equals_exact_stepping(x0 in money(100_000), c in money(500), d in money(50), n in 1u32..6000) {
        let r = Recurrence { a: Decimal::ONE, x0, inputs: vec![Input::Step { amount: c }, Input::Ramp { amount: d }] };
        let s = r.solve().unwrap();
        prop_assert!(s.fractions.iter().any(|f| f.pole == Decimal::ONE && f.multiplicity == 3));
        check_against_exact(&r, n, "1e-20")?;
    }

    /// The posted ledger: principal parts sum to the principal, it ends at 0.00,
    /// every payment but the last equals the posted payment, and its drift from the
    /// closed form stays within the rounding bound.
    #[test]
    fn posted_ledger_invariants_hold(i in rate(), x0 in money(1_000_000), n in 1u32..=600, even in any::<bool>()) {
        let exact_payment = payment_for_term(x0, i, n).unwrap();
        let p = Currency::USD.round(exact_payment, rust_decimal::RoundingStrategy::MidpointAwayFromZero);
        prop_assume!(p > Currency::USD.round(x0 * i, rust_decimal::RoundingStrategy::MidpointAwayFromZero));
        let rounding = if even { InterestRounding::HalfEven } else { InterestRounding::HalfUp };
        let l = post_level(x0, i, None, p, n, Currency::USD, rounding).unwrap();
        prop_assert_eq!(l.rows.last().unwrap().balance, Decimal::ZERO);
        let principal: Decimal = l.rows.iter().map(|r| r.principal).sum();
        prop_assert_eq!(principal, x0);
        for r in &l.rows[..l.rows.len() - 1] {
            prop_assert_eq!(r.payment, p);
        }
        let paid: Decimal = l.rows.iter().map(|r| r.payment).sum();
        prop_assert_eq!(paid, l.total_paid);
        let s = residue::engine::loan::solve_balance(x0, i, p).unwrap();
        let rec = residue::engine::ledger::reconcile(&l, &s.closed_form, Decimal::ONE + i, Currency::USD).unwrap();
        prop_assert!(rec.largest_drift <= rec.bound + Decimal::new(1, 12), "{rec:?}");
    }

    /// Solving for the payment and then for the rate gives the rate back (to 1e-12 and better).
    #[test]
    fn rate_for_payment_recovers_the_rate(i in (1u64..2_000_000).prop_map(|m| Decimal::new(m as i64, 8)), x0 in money(1_000_000), n in 1u32..=6000) {
        let p = payment_for_term(x0, i, n).unwrap();
        let back = rate_for_payment(x0, p, n).unwrap();
        prop_assert!((back - i).abs() < Decimal::new(1, 12), "{i} → {back}");
    }

    /// Solving for the term of a payment and then the payment for that term gives a
    /// payment no larger than the one given, and one payment fewer would not repay.
    #[test]
    fn term_for_payment_is_consistent_with_payment_for_term(i in rate(), x0 in money(1_000_000), n in 1u32..=600) {
        let p = Currency::USD.round(payment_for_term(x0, i, n).unwrap(), rust_decimal::RoundingStrategy::AwayFromZero);
        prop_assume!(p > x0 * i);
        let m = term_for_payment(x0, i, p).unwrap();
        prop_assert!(m <= n, "{m} > {n}");
        prop_assert!(payment_for_term(x0, i, m).unwrap() <= p);
        if m > 1 {
            prop_assert!(payment_for_term(x0, i, m - 1).unwrap() > p);
        }
    }
}

/// 6,000 monthly payments at 6 %: the longest term, checked at its end against exact fractions.
#[test]
fn the_longest_term_matches_exact_stepping() {
    let i = d("0.005");
    let p = payment_for_term(d("250000"), i, 6000).unwrap();
    let r = Recurrence {
        a: Decimal::ONE + i,
        x0: d("250000"),
        inputs: vec![Input::Step { amount: -p }],
    };
    check_against_exact(&r, 6000, "1e-20").unwrap();
}
