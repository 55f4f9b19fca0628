//! Property tests of savings plans against exact rational arithmetic.
//!
//! Reference: exact big-integer arithmetic from `num-bigint` (general-purpose,
//! crates.io), as in `engine_properties.rs`. Every coefficient is a decimal,
//! so every balance is an exact decimal fraction num/10^s. Each plan is stepped
//! exactly as it is described to a saver, period by period, with deposits at the
//! start (x[k+1] = a·(x[k] + d[k])) or the end (x[k+1] = a·x[k] + d[k]) and
//! the deposits d[k] themselves (level, growing every period, or a staircase
//! growing once a year); the engine's closed forms must agree with it to 1e-20 of
//! the plan's magnitude scale (the same plan stepped with every term made
//! positive, plus one).

use num_bigint::BigInt;
use num_traits::Signed;
use proptest::prelude::*;
use residue::engine::money::Currency;
use residue::engine::rate::{AnnualRate, Frequency};
use residue::engine::savings::{
    plan, Flow, FlowShape, Growth, GrowthEvery, Pattern, Question, SavingsTerms, Timing,
};
use residue::engine::ErrorKind;
use rust_decimal::Decimal;

use crate::helpers::{d, money, proptest_config, rate, Exact};

/// The plan stepped exactly: (x[k], magnitude scale) for every k ≤ n, with the
/// deposit of period k made as the saver makes it.
fn step_exact(
    shape: &FlowShape,
    x0: Decimal,
    amount: Decimal,
    step: Decimal,
    n: u32,
) -> Vec<(Exact, Exact)> {
    let a = Exact::of(shape.a);
    let m = shape.periods_per_year;
    let mut x = Exact::of(x0);
    let mut mag = x.abs();
    let mut out = vec![(x.clone(), mag.clone())];
    let mut power = Exact::one(); // g^k or g^year
    let mut this_year = Exact::zero();
    for k in 0..n {
        let d = match shape.pattern {
            Pattern::Level => Exact::of(amount),
            Pattern::EachPeriod { ratio } => {
                let d = Exact::of(amount).mul(&power);
                power = power.mul(&Exact::of(ratio));
                d
            }
            Pattern::EachYear { ratio } => {
                if k % m == 0 {
                    let y = Exact::of(Decimal::from(k / m));
                    this_year = Exact::of(amount).mul(&power).add(&Exact::of(step).mul(&y));
                    power = power.mul(&Exact::of(ratio));
                }
                this_year.clone()
            }
        };
        match shape.timing {
            Timing::End => {
                x = a.mul(&x).add(&d);
                mag = a.mul(&mag).add(&d.abs());
            }
            Timing::Start => {
                x = a.mul(&x.add(&d));
                mag = a.mul(&mag.add(&d.abs()));
            }
        }
        out.push((x.clone(), mag.clone()));
    }
    out
}

fn check_against_exact(
    shape: &FlowShape,
    x0: Decimal,
    amount: Decimal,
    step: Decimal,
    n: u32,
    tolerance: Decimal,
    absolute: Decimal,
) -> Result<(), TestCaseError> {
    let fail = |e: residue::engine::EngineError| TestCaseError::fail(e.to_string());
    let form = shape.solve(x0, amount, step).map_err(fail)?;
    let reference = step_exact(shape, x0, amount, step, n);
    let all = match form.balances(n) {
        Ok(all) => all,
        // A balance past the 28-digit range (about 7.9e28) is an overflow error, and
        // only then: the exact plan must be at least near that size.
        Err(e) if e.kind == ErrorKind::Overflow => {
            let near = Exact::of(
                Decimal::new(1, 0) * Decimal::from(10u64.pow(18)) * Decimal::from(10u64.pow(6)),
            );
            prop_assert!(
                near.le(&reference[n as usize].1),
                "overflow for a plan of size {:?}",
                reference[n as usize].1
            );
            return Ok(());
        }
        Err(e) => return Err(fail(e)),
    };
    prop_assert_eq!(all.len(), n as usize + 1);
    let tol = Exact::of(tolerance);
    let mut ks: Vec<u32> = (0..=n.min(60)).collect();
    ks.extend([n / 3, n / 2, n.saturating_sub(1), n]);
    for k in ks {
        let (want, scale) = &reference[k as usize];
        let bound = tol.mul(&scale.add(&Exact::one())).add(&Exact::of(absolute));
        for (what, got) in [
            ("balance_at", form.balance_at(k).map_err(fail)?),
            ("balances", all[k as usize]),
        ] {
            let diff = Exact::of(got).sub(want).abs();
            prop_assert!(
                diff.le(&bound),
                "{what}, k = {k}: closed form {got} vs exact {want:?} for {shape:?}, x0 {x0}, c {amount}, s {step}"
            );
        }
    }
    Ok(())
}

/// The interest on `balance` at a nominal `percent` a year over `per_year`
/// periods: balance × percent / (100 · per_year) exactly (big integers), rounded
/// half away from zero to the cent. The engine's decimal periodic rate is this
/// ratio rounded to 28 digits; a balance times the ratio can be an exact half
/// cent, which the rounded decimal would put a hair to one side.
fn interest_at_nominal_rate(balance: Decimal, percent: Decimal, per_year: u32) -> Decimal {
    let num: BigInt =
        BigInt::from(balance.mantissa()) * BigInt::from(percent.mantissa()) * BigInt::from(100);
    let den =
        BigInt::from(10).pow(balance.scale() + percent.scale()) * BigInt::from(100 * per_year);
    let magnitude = (BigInt::from(2) * num.abs() + &den) / (BigInt::from(2) * &den);
    let cents = if num.is_negative() {
        -magnitude
    } else {
        magnitude
    };
    let cents: i128 = cents.try_into().expect("the interest fits");
    Decimal::from_i128_with_scale(cents, 2)
}

/// 1e-20 of the plan's magnitude scale.
const TOLERANCE: Decimal = Decimal::from_parts(1, 0, 0, false, 20);

/// The two-level closed form with a yearly step s: the yearly recurrence has a ramp
/// (a double pole at z = 1) beside its pole at A = a^m, two residues of about
/// ±s·S/(A − 1)² cancel, and the engine states an error of about
/// 1e-20·s·m/(A − 1)² in money (src/engine/savings.rs, "Precision"). This allows ten
/// times that, as an absolute tolerance on top of the relative 1e-20.
fn yearly_step_tolerance(a: Decimal, m: u32, step: Decimal) -> Decimal {
    let gap = (rust_decimal::MathematicalOps::powi(&a, i64::from(m)) - Decimal::ONE).abs();
    if step.is_zero() || gap.is_zero() {
        return Decimal::ZERO;
    }
    Decimal::new(1, 19) * step * Decimal::from(m) / gap / gap
}

fn timing() -> impl Strategy<Value = Timing> {
    prop_oneof![Just(Timing::End), Just(Timing::Start)]
}

fn periods_per_year() -> impl Strategy<Value = u32> {
    prop_oneof![
        Just(1u32),
        Just(2),
        Just(4),
        Just(12),
        Just(24),
        Just(26),
        Just(52)
    ]
}

fn frequency() -> impl Strategy<Value = Frequency> {
    prop_oneof![
        Just(Frequency::Annual),
        Just(Frequency::Quarterly),
        Just(Frequency::Monthly),
        Just(Frequency::Semimonthly),
        Just(Frequency::Biweekly),
        Just(Frequency::Weekly),
    ]
}

proptest! {
    #![proptest_config(proptest_config(300))]

    /// Level deposits and deposits growing every period, made at the start or the end
    /// of each period: poles at a, 1 and g (the start-of-period plan is the
    /// end-of-period one with the deposit a·d).
    #[test]
    fn level_and_growing_deposits_closed_form_equals_exact_stepping(
        i in rate(),
        x0 in money(500_000),
        c in money(5_000),
        growth in 0i64..300,
        timing in timing(),
        n in 1u32..600,
    ) {
        let a = Decimal::ONE + i;
        let g = Decimal::ONE + Decimal::new(growth, 5) + Decimal::new(37, 7);
        prop_assume!((a - g).abs() > Decimal::new(1, 6));
        let pattern = if growth == 0 { Pattern::Level } else { Pattern::EachPeriod { ratio: g } };
        let shape = FlowShape { a, exact_rate: None, periods_per_year: 12, timing, pattern };
        check_against_exact(&shape, x0, c, Decimal::ZERO, n, TOLERANCE, Decimal::ZERO)?;
    }

    /// Deposits growing every period at exactly the periodic rate: the double pole at z = a.
    #[test]
    fn growth_equal_to_the_rate_closed_form_equals_exact_stepping(
        i in (1u64..2_000_000).prop_map(|m| Decimal::new(m as i64, 8)),
        x0 in money(100_000),
        c in money(5_000),
        timing in timing(),
        n in 1u32..600,
    ) {
        let a = Decimal::ONE + i;
        let shape = FlowShape { a, exact_rate: None, periods_per_year: 12, timing, pattern: Pattern::EachPeriod { ratio: a } };
        let form = shape.solve(x0, c, Decimal::ZERO).unwrap();
        prop_assert!(form.period.fractions.iter().any(|f| f.pole == a && f.multiplicity == 2));
        check_against_exact(&shape, x0, c, Decimal::ZERO, n, TOLERANCE, Decimal::ZERO)?;
    }

    /// Zero interest: level deposits have the double pole at z = 1; deposits growing
    /// every period add a simple pole at g; a yearly step makes the yearly
    /// recurrence's pole at z = 1 triple.
    #[test]
    fn zero_interest_closed_form_equals_exact_stepping(
        x0 in money(100_000),
        c in money(5_000),
        growth in 1i64..300,
        s in money(200),
        m in periods_per_year(),
        timing in timing(),
        n in 1u32..6000,
    ) {
        let level = FlowShape { a: Decimal::ONE, exact_rate: None, periods_per_year: m, timing, pattern: Pattern::Level };
        let form = level.solve(x0, c, Decimal::ZERO).unwrap();
        prop_assert!(form.period.fractions.iter().any(|f| f.pole == Decimal::ONE && f.multiplicity == 2));
        check_against_exact(&level, x0, c, Decimal::ZERO, n, TOLERANCE, Decimal::ZERO)?;
        let g = Decimal::ONE + Decimal::new(growth, 5);
        let growing = FlowShape { pattern: Pattern::EachPeriod { ratio: g }, ..level };
        check_against_exact(&growing, x0, c, Decimal::ZERO, n.min(600), TOLERANCE, Decimal::ZERO)?;
        let stepped = FlowShape { pattern: Pattern::EachYear { ratio: Decimal::ONE }, ..level };
        let form = stepped.solve(x0, c, s).unwrap();
        let yearly = form.yearly.as_ref().unwrap();
        prop_assert!(yearly.year.fractions.iter().any(|f| f.pole == Decimal::ONE && f.multiplicity == 3));
        check_against_exact(&stepped, x0, c, s, n, TOLERANCE, Decimal::ZERO)?; // a = 1: exact poles
    }

    /// Yearly growth: the two-level closed form (year-boundary recurrence, then the
    /// period closed form inside each year) against exact stepping of the period
    /// recurrence with staircase deposits c·g^y + s·y.
    #[test]
    fn yearly_growth_two_level_closed_form_equals_exact_stepping(
        i in rate(),
        x0 in money(500_000),
        c in money(5_000),
        growth in 0i64..1000,
        s in prop_oneof![Just(Decimal::ZERO), money(200)],
        m in periods_per_year(),
        timing in timing(),
        n in 1u32..1200,
    ) {
        let a = Decimal::ONE + i;
        let g = Decimal::ONE + Decimal::new(growth, 4);
        let shape = FlowShape { a, exact_rate: None, periods_per_year: m, timing, pattern: Pattern::EachYear { ratio: g } };
        check_against_exact(&shape, x0, c, s, n, TOLERANCE, yearly_step_tolerance(a, m, s))?;
    }

    /// Annual deposits growing at exactly the rate: the yearly recurrence's double pole at z = A.
    #[test]
    fn yearly_growth_equal_to_the_yearly_factor_closed_form_equals_exact_stepping(
        i in (1u64..2_000_000).prop_map(|m| Decimal::new(m as i64, 8)),
        x0 in money(100_000),
        c in money(5_000),
        timing in timing(),
        n in 1u32..200,
    ) {
        let a = Decimal::ONE + i;
        let shape = FlowShape { a, exact_rate: None, periods_per_year: 1, timing, pattern: Pattern::EachYear { ratio: a } };
        let form = shape.solve(x0, c, Decimal::ZERO).unwrap();
        let yearly = form.yearly.as_ref().unwrap();
        prop_assert!(yearly.year.fractions.iter().any(|f| f.pole == a && f.multiplicity == 2));
        check_against_exact(&shape, x0, c, Decimal::ZERO, n, TOLERANCE, Decimal::ZERO)?;
    }

    /// The posted ledger: each row's interest is the balance it is earned on times the
    /// periodic rate j/p (exactly), rounded half up; the balance adds up; the totals are the sums
    /// of the rows; and the drift from the closed form stays within the rounding bound.
    #[test]
    fn posted_ledger_adds_up_and_reconciles(
        percent in (0u64..1500).prop_map(|m| Decimal::new(m as i64, 2)),
        x0 in prop_oneof![Just(Decimal::ZERO), money(200_000)],
        c in money(3_000),
        growth in prop_oneof![Just(None), (1i64..800).prop_map(|g| Some((Decimal::new(g, 2), GrowthEvery::Year))), (1i64..30).prop_map(|g| Some((Decimal::new(g, 2), GrowthEvery::Period)))],
        frequency in frequency(),
        timing in timing(),
        n in 1u32..=600,
    ) {
        let terms = SavingsTerms {
            opening_balance: x0,
            currency: Currency::USD,
            rate: AnnualRate::from_percent(percent).unwrap(),
            frequency,
            compounding: None,
            timing,
            growth: growth.map(|(percent, every)| Growth { percent, every }),
            deposit_step: Decimal::ZERO,
            question: Question::FinalBalance { flow: Flow::Deposit(c), periods: n },
            start_date: None,
        };
        let p = match plan(&terms) {
            Ok(p) => p,
            // Balances past 7.9e28 (high rates over centuries) are overflow errors.
            Err(e) if e.kind == ErrorKind::Overflow => return Ok(()),
            Err(e) => return Err(TestCaseError::fail(e.to_string())),
        };
        prop_assert_eq!(p.ledger.rows.len(), n as usize);
        let mut balance = x0;
        for r in &p.ledger.rows {
            let earning = match timing { Timing::End => balance, Timing::Start => balance + r.deposit };
            let want = interest_at_nominal_rate(earning, percent, frequency.per_year());
            prop_assert_eq!(r.interest, want, "row {}", r.number);
            balance += r.deposit + r.interest;
            prop_assert_eq!(r.balance, balance);
        }
        let deposited: Decimal = p.ledger.rows.iter().map(|r| r.deposit).sum();
        let interest: Decimal = p.ledger.rows.iter().map(|r| r.interest).sum();
        prop_assert_eq!(deposited, p.ledger.total_deposited);
        prop_assert_eq!(interest, p.ledger.total_interest);
        prop_assert_eq!(x0 + deposited + interest, p.ledger.final_balance);
        let rec = p.reconciliation.unwrap();
        prop_assert!(rec.largest_drift <= rec.bound + Decimal::new(1, 12), "{rec:?}");
    }

    /// Drawdowns end at exactly zero: every withdrawal but the last is the regular one,
    /// the last is no larger, and the withdrawals total the balance plus its interest.
    #[test]
    fn drawdowns_end_at_zero(
        percent in (0u64..1200).prop_map(|m| Decimal::new(m as i64, 2)),
        x0 in money(1_000_000),
        term in 1u32..=480,
        timing in timing(),
        given in any::<bool>(),
    ) {
        let rate = AnnualRate::from_percent(percent).unwrap();
        let mut terms = SavingsTerms {
            opening_balance: x0,
            currency: Currency::USD,
            rate,
            frequency: Frequency::Monthly,
            compounding: None,
            timing,
            growth: None,
            deposit_step: Decimal::ZERO,
            question: Question::WithdrawalForTerm { periods: term },
            start_date: None,
        };
        let solved = match plan(&terms) {
            Ok(p) => p,
            // A balance too small for the term: the withdrawal rounds to zero.
            Err(e) => { prop_assert_eq!(e.field, Some("opening_balance")); return Ok(()); }
        };
        let w = -solved.flow;
        if given {
            terms.question = Question::WithdrawalsSupported { withdrawal: w };
        }
        let p = plan(&terms).unwrap();
        if p.lasts_indefinitely {
            prop_assert!(given);
            return Ok(());
        }
        let rows = &p.ledger.rows;
        prop_assert_eq!(rows.last().unwrap().balance, Decimal::ZERO);
        for r in &rows[..rows.len() - 1] {
            prop_assert_eq!(-r.deposit, w);
        }
        let last = -rows.last().unwrap().deposit;
        if given {
            prop_assert!(last <= w && last >= Decimal::ZERO, "last {last} vs {w}");
        }
        prop_assert_eq!(p.ledger.total_withdrawn, x0 + p.ledger.total_interest);
        if !given {
            prop_assert!(rows.len() as u32 <= term);
        }
    }

    /// No input in range panics: every question, frequency and growth answers or errs.
    #[test]
    fn no_input_in_range_panics(
        percent in (0u64..100_000).prop_map(|m| Decimal::new(m as i64, 2)),
        x0 in prop_oneof![Just(Decimal::ZERO), money(1_000_000)],
        c in prop_oneof![Just(Decimal::ZERO), money(50_000)],
        goal in money(5_000_000),
        s in prop_oneof![Just(Decimal::ZERO), money(500)],
        growth in prop_oneof![Just(None), (0i64..10_000).prop_map(|g| Some((Decimal::new(g, 2), GrowthEvery::Year))), (0i64..300).prop_map(|g| Some((Decimal::new(g, 2), GrowthEvery::Period)))],
        frequency in frequency(),
        compounding in prop_oneof![Just(None), Just(Some(Frequency::Daily)), Just(Some(Frequency::Quarterly))],
        timing in timing(),
        kind in 0u8..5,
        n in 1u32..=6000,
    ) {
        let question = match kind {
            0 => Question::FinalBalance { flow: Flow::Deposit(c), periods: n },
            1 => Question::DepositForGoal { goal, periods: n },
            2 => Question::PeriodsToGoal { deposit: c, goal },
            3 => Question::WithdrawalForTerm { periods: n },
            _ => Question::WithdrawalsSupported { withdrawal: c },
        };
        let terms = SavingsTerms {
            opening_balance: x0,
            currency: Currency::USD,
            rate: AnnualRate::from_percent(percent).unwrap(),
            frequency,
            compounding,
            timing,
            growth: growth.map(|(percent, every)| Growth { percent, every }),
            deposit_step: if matches!(growth, Some((_, GrowthEvery::Period))) { Decimal::ZERO } else { s },
            question,
            start_date: Some("2027-01-31".parse().unwrap()),
        };
        if let Ok(p) = plan(&terms) {
            prop_assert!(p.notes[0].starts_with("Estimates for discussion only"));
            prop_assert!(p.ledger.rows.len() <= 6000);
        }
    }
}

/// Regression (found by `no_input_in_range_panics`): deposits growing 45.53 % a year for
/// 2,023 months push the balance past 96 bits; the posting must answer an overflow error,
/// not panic.
#[test]
fn a_balance_beyond_decimal_range_is_an_error_not_a_panic() {
    let terms = SavingsTerms {
        opening_balance: Decimal::ZERO,
        currency: Currency::USD,
        rate: AnnualRate::from_percent(d("0.01")).unwrap(),
        frequency: Frequency::Monthly,
        compounding: None,
        timing: Timing::Start,
        growth: Some(Growth {
            percent: d("45.53"),
            every: GrowthEvery::Year,
        }),
        deposit_step: Decimal::ZERO,
        question: Question::FinalBalance {
            flow: Flow::Deposit(d("0.01")),
            periods: 2023,
        },
        start_date: Some("2027-01-31".parse().unwrap()),
    };
    // Deposits growing 45.53 % a year for 168 years leave the decimal range: the
    // plan says so as an overflow error naming what overflowed, and does not panic.
    let e = plan(&terms).expect_err("a balance beyond the decimal range");
    assert_eq!(e.kind, ErrorKind::Overflow, "{e:?}");
    let what = e
        .message
        .strip_suffix(" leaves the range of 28-digit decimal arithmetic")
        .unwrap_or_else(|| panic!("the overflow's own message: {e:?}"));
    assert!(!what.is_empty(), "the error names what overflowed: {e:?}");
}
