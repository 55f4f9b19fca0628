//! A savings plan solved and posted: the notes every plan carries, the question
//! answered (see `questions`), the rows dated, the goal's period, the ledger
//! reconciled with the closed form, and the account's APY.

use jiff::civil::Date;
use rust_decimal::Decimal;

use super::closed_form::{FlowShape, PlanForm};
use super::ledger::{post, reconcile, Posting, SavingsLedger, SavingsReconciliation};
use super::questions::{
    deposit_for_goal, final_balance, periods_to_goal, withdrawal_for_term, withdrawals_supported,
    Answer, FlowDerivation, Setup,
};
use super::searches::PeriodsDerivation;
use super::terms::{period_date, Pattern, Question, SavingsTerms, Timing};
use crate::engine::apy::{apy_of_rate, ApyResult};
use crate::engine::error::{ErrorKind, OrOverflow, Result};
use crate::engine::money::Currency;
use crate::engine::schedule::CAUTION;
use crate::engine::zdomain::pow;

/// When the goal is first reached.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct GoalReached {
    /// The period the posted balance first reaches the goal (0: the opening balance).
    pub period: u32,
    /// The end of that period, when the plan is dated.
    pub date: Option<Date>,
}

/// The answer to a savings plan.
#[derive(Debug, Clone)]
pub struct SavingsPlan {
    /// The terms, as given.
    pub terms: SavingsTerms,
    /// The periodic rate i for the deposit frequency.
    pub periodic_rate: Decimal,
    /// The first (level) deposit as posted: negative for a withdrawal.
    pub flow: Decimal,
    /// The yearly step, with the flow's sign.
    pub step: Decimal,
    /// How the deposit or withdrawal was solved, when it was.
    pub solved_flow: Option<FlowDerivation>,
    /// How the number of periods was found, when it was.
    pub periods_search: Option<PeriodsDerivation>,
    /// The closed form with the posted deposit.
    pub form: PlanForm,
    /// The posted ledger.
    pub ledger: SavingsLedger,
    /// `None` when the closed form leaves the range of 28-digit decimals.
    pub reconciliation: Option<SavingsReconciliation>,
    /// When the goal is reached, for a question with a goal.
    pub goal_reached_at: Option<GoalReached>,
    /// Withdrawals that never exceed the interest: the balance never runs out.
    pub lasts_indefinitely: bool,
    /// Of the account rate, 12 CFR 1030 Appendix A.
    pub apy: ApyResult,
    /// The caution, then the assumptions made and what they give.
    pub notes: Vec<String>,
}

/// Posts a solved plan's ledger again for as many periods as it has: the posting
/// alone (for benchmarks and checks).
///
/// # Errors
/// As the posting of [`plan`].
pub fn repost(p: &SavingsPlan) -> Result<SavingsLedger> {
    post(
        &p.form.shape,
        p.terms.opening_balance,
        p.flow,
        p.step,
        p.periodic_rate,
        p.terms.currency,
        Posting::periods(p.ledger.rows.len() as u32),
    )
}

/// Solves and posts a savings plan.
///
/// # Errors
/// Out-of-range terms (each naming its field), a goal that can never be reached or
/// needs more than [`MAX_PERIODS`](super::terms::MAX_PERIODS) periods (no solution), or an overflow.
///
/// # Example
/// ```
/// use residue::engine::money::Currency;
/// use residue::engine::rate::{AnnualRate, Frequency};
/// use residue::engine::savings::{plan, Flow, Question, SavingsTerms, Timing};
/// // 350 a month for 8 years into a 4.1 % account, compounded monthly.
/// let terms = SavingsTerms {
///     opening_balance: "0".parse().unwrap(),
///     currency: Currency::USD,
///     rate: AnnualRate::from_percent("4.1".parse().unwrap()).unwrap(),
///     frequency: Frequency::Monthly,
///     compounding: None,
///     timing: Timing::End,
///     growth: None,
///     deposit_step: "0".parse().unwrap(),
///     question: Question::FinalBalance { flow: Flow::Deposit("350".parse().unwrap()), periods: 96 },
///     start_date: None,
/// };
/// let p = plan(&terms).unwrap();
/// assert_eq!(p.ledger.rows.len(), 96);
/// assert_eq!(p.ledger.total_deposited, "33600.00".parse().unwrap());
/// ```
pub fn plan(terms: &SavingsTerms) -> Result<SavingsPlan> {
    terms.check()?;
    let i = terms.periodic_rate()?;
    let a = Decimal::ONE
        .checked_add(i)
        .or_overflow("the interest factor")?;
    let shape = FlowShape {
        a,
        exact_rate: terms.periodic_ratio(),
        periods_per_year: terms.frequency.per_year(),
        timing: terms.timing,
        pattern: terms.pattern(),
    };
    let step = terms.signed_step();
    let mut notes = opening_notes(terms, &shape, step)?;
    let setup = Setup {
        terms,
        shape,
        i,
        step,
    };
    let answer = answer(&setup, &mut notes)?;
    finish(&setup, answer, notes)
}

/// The question answered, by the function for it.
fn answer(s: &Setup, notes: &mut Vec<String>) -> Result<Answer> {
    match s.terms.question {
        Question::FinalBalance { flow, periods } => final_balance(s, flow, periods, notes),
        Question::DepositForGoal { goal, periods } => deposit_for_goal(s, goal, periods, notes),
        Question::PeriodsToGoal { deposit, goal } => periods_to_goal(s, deposit, goal, notes),
        Question::WithdrawalForTerm { periods } => withdrawal_for_term(s, periods, notes),
        Question::WithdrawalsSupported { withdrawal } => {
            withdrawals_supported(s, withdrawal, notes)
        }
    }
}

/// The notes every plan of these terms carries, before its question's: the
/// caution, the compounding, the timing, the precision of a yearly step, and how
/// growing flows are posted.
fn opening_notes(terms: &SavingsTerms, shape: &FlowShape, step: Decimal) -> Result<Vec<String>> {
    let frequency = terms.frequency;
    let mut notes = vec![CAUTION.to_string()];
    match terms.compounding {
        None => notes.push(format!(
            "Compounding taken equal to the deposit frequency ({}).",
            frequency.name()
        )),
        Some(c) if c != frequency => notes.push(format!(
            "Interest compounds {} and deposits are {}: the periodic rate is the equivalent rate (1 + j/m)^(m/p) − 1.",
            c.name(),
            frequency.name()
        )),
        Some(_) => {}
    }
    let what = if terms.question.is_drawdown() {
        "withdrawal"
    } else {
        "deposit"
    };
    if terms.timing == Timing::Start {
        notes.push(format!(
            "Each {what} is made at the start of its period and earns that period's interest: x[k+1] = a·(x[k] + d) = a·x[k] + a·d, the end-of-period plan with the {what} a·d, shifted by one period."
        ));
    }
    if let Some(caution) = step_precision_note(shape, step, terms.currency)? {
        notes.push(caution);
    }
    match shape.pattern {
        Pattern::EachPeriod { .. } => notes.push(format!(
            "The {what} grows every period and is posted rounded to the minor unit (halves up); the closed form keeps it exact."
        )),
        Pattern::EachYear { .. } => notes.push(format!(
            "The {what} is level within each year and steps up at the start of each year (every {} periods); it is posted rounded to the minor unit (halves up).",
            shape.periods_per_year
        )),
        Pattern::Level => {}
    }
    Ok(notes)
}

/// The plan from its answer: the closed form with the posted flow, the rows
/// dated, the goal's period, the reconciliation and the APY.
fn finish(setup: &Setup, answer: Answer, mut notes: Vec<String>) -> Result<SavingsPlan> {
    let Setup {
        terms,
        shape,
        i,
        step,
    } = *setup;
    let form = shape.solve(terms.opening_balance, answer.flow, step)?;
    let mut ledger = answer.ledger;
    date_rows(terms, &mut ledger, &mut notes)?;
    let goal_reached_at = goal_reached(terms, answer.goal_period, &ledger)?;
    let reconciliation = reconciliation(&ledger, &form, i, terms.currency, &mut notes)?;
    let apy = apy_of_rate(
        terms.rate.percent(),
        terms.compounding.unwrap_or(terms.frequency).per_year(),
    )
    .map_err(|e| e.at("annual_rate_percent"))?;
    Ok(SavingsPlan {
        terms: terms.clone(),
        periodic_rate: i,
        flow: answer.flow,
        step,
        solved_flow: answer.solved_flow,
        periods_search: answer.periods_search,
        form,
        ledger,
        reconciliation,
        goal_reached_at,
        lasts_indefinitely: answer.lasts_indefinitely,
        apy,
        notes,
    })
}

/// Dates each row at the end of its period, when the plan has a start date.
fn date_rows(
    terms: &SavingsTerms,
    ledger: &mut SavingsLedger,
    notes: &mut Vec<String>,
) -> Result<()> {
    let Some(start) = terms.start_date else {
        return Ok(());
    };
    let frequency = terms.frequency;
    for row in &mut ledger.rows {
        row.date = Some(period_date(start, frequency, row.number)?);
    }
    notes.push(format!(
        "Each row is dated at the end of its period, when interest is credited: start_date plus k {} periods{}.",
        frequency.name(),
        if terms.timing == Timing::Start {
            "; a start-of-period deposit is made at the start of its period, one period before its row's date"
        } else {
            ""
        }
    ));
    Ok(())
}

/// When the goal is reached: the period the question found, or for a deposit
/// toward a goal the first posted row at or above it; dated when the plan is.
fn goal_reached(
    terms: &SavingsTerms,
    found: Option<u32>,
    ledger: &SavingsLedger,
) -> Result<Option<GoalReached>> {
    let mut goal_period = found;
    if goal_period.is_none() {
        if let Question::DepositForGoal { goal, .. } = terms.question {
            goal_period = ledger
                .rows
                .iter()
                .find(|r| r.balance >= goal)
                .map(|r| r.number);
        }
    }
    Ok(match goal_period {
        Some(period) => Some(GoalReached {
            period,
            date: match terms.start_date {
                Some(start) => Some(period_date(start, terms.frequency, period)?),
                None => None,
            },
        }),
        None => None,
    })
}

/// The ledger reconciled with the closed form; `None`, with a note, when a^k
/// leaves the range of 28-digit decimals.
fn reconciliation(
    ledger: &SavingsLedger,
    form: &PlanForm,
    i: Decimal,
    currency: Currency,
    notes: &mut Vec<String>,
) -> Result<Option<SavingsReconciliation>> {
    match reconcile(ledger, form, i, currency) {
        Ok(r) => Ok(Some(r)),
        Err(e) if e.kind == ErrorKind::Overflow => {
            notes.push("The ledger could not be reconciled with the closed form: a^k leaves the range of 28-digit decimals for this term and rate.".into());
            Ok(None)
        }
        Err(e) => Err(e),
    }
}

/// A note when the yearly step's closed form may be off by more than a hundredth of a
/// minor unit: about 1e-20·s·m/(A − 1)² for A = a^m near 1 (see the module's precision).
fn step_precision_note(
    shape: &FlowShape,
    step: Decimal,
    currency: Currency,
) -> Result<Option<String>> {
    let gap = pow(shape.a, shape.periods_per_year)? - Decimal::ONE;
    if step.is_zero() || gap.is_zero() || gap > Decimal::new(1, 4) {
        return Ok(None);
    }
    let error = Decimal::new(1, 20)
        .checked_mul(step.abs())
        .and_then(|v| v.checked_mul(Decimal::from(shape.periods_per_year)))
        .and_then(|v| v.checked_div(gap))
        .and_then(|v| v.checked_div(gap))
        .unwrap_or(Decimal::MAX);
    if error <= currency.minor_unit() / Decimal::ONE_HUNDRED {
        return Ok(None);
    }
    Ok(Some(format!(
        "The rate is so close to zero that the closed form of the yearly step loses digits (its two partial fractions of about ±s·S/(A − 1)² cancel): it may be off by about {}. The posted ledger is computed period by period and is not affected.",
        currency.format(error.max(currency.minor_unit()))
    )))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::error::ErrorKind;
    use crate::engine::rate::Frequency;
    use crate::engine::savings::closed_form::tests::{close, stepped};
    use crate::engine::savings::searches::PeriodSearch;
    use crate::engine::savings::terms::tests::terms;
    use crate::engine::savings::terms::{Flow, Growth, GrowthEvery};
    use rust_decimal::{MathematicalOps, RoundingStrategy};

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn an_exact_half_cent_of_interest_rounds_up() {
        // 300 a month at 4 %: after 21 deposits the balance is 6514.50 and its
        // interest 6514.50 × 0.04/12 = 21.715 exactly (by hand), a tie that
        // rounds up to 21.72; 0.04/12 itself has no finite decimal, so the
        // posting multiplies by the ratio 1/300, not by its 28-digit decimal.
        let t = terms(
            "4",
            Question::FinalBalance {
                flow: Flow::Deposit(d("300")),
                periods: 120,
            },
        );
        let p = plan(&t).unwrap();
        assert_eq!(p.ledger.rows[20].balance, d("6514.50"));
        assert_eq!(d("6514.50") * d("0.04") / d("12"), d("21.715"));
        assert_eq!(p.ledger.rows[21].interest, d("21.72"));
    }

    #[test]
    fn one_annual_deposit_of_a_cent_at_zero_percent() {
        // The case on which the property test of posted ledgers once failed in
        // its own exact reference (a product with fewer than two decimals).
        let mut t = terms(
            "0",
            Question::FinalBalance {
                flow: Flow::Deposit(d("0.01")),
                periods: 1,
            },
        );
        t.frequency = Frequency::Annual;
        let p = plan(&t).unwrap();
        assert_eq!(p.ledger.final_balance, d("0.01"));
    }

    #[test]
    fn a_drawdown_of_1800_a_month_from_310000_at_3_5_percent() {
        // The posted ledger is stepped here independently; the 240th withdrawal is the
        // last and smaller one.
        let mut t = terms(
            "3.5",
            Question::WithdrawalsSupported {
                withdrawal: d("1800"),
            },
        );
        t.opening_balance = d("310000");
        let p = plan(&t).unwrap();
        assert!(!p.lasts_indefinitely);
        let rows = &p.ledger.rows;
        assert_eq!(rows.len(), 240);
        let last = rows.last().unwrap();
        assert_eq!(last.balance, d("0.00"));
        assert!(-last.deposit < d("1800") && -last.deposit > Decimal::ZERO);
        let i = d("0.035") / d("12");
        let mut b = d("310000");
        for r in &rows[..rows.len() - 1] {
            let interest = Currency::USD.round(b * i, RoundingStrategy::MidpointAwayFromZero);
            b = b + interest - d("1800");
            assert_eq!(r.interest, interest);
            assert_eq!(r.balance, b);
        }
        let interest = Currency::USD.round(b * i, RoundingStrategy::MidpointAwayFromZero);
        assert_eq!(-last.deposit, b + interest);
        let search = p.periods_search.unwrap();
        assert_eq!(search.n, 240);
        assert!(search.before > Decimal::ZERO && search.at <= Decimal::ZERO);
        let total: Decimal = rows.iter().map(|r| -r.deposit).sum();
        assert_eq!(total, p.ledger.total_withdrawn);
        assert_eq!(
            p.ledger.total_withdrawn,
            d("310000") + p.ledger.total_interest
        );
    }

    #[test]
    fn a_withdrawal_below_the_interest_lasts_indefinitely() {
        let mut t = terms(
            "3.5",
            Question::WithdrawalsSupported {
                withdrawal: d("900"),
            },
        );
        t.opening_balance = d("310000");
        let p = plan(&t).unwrap();
        assert!(p.lasts_indefinitely);
        assert_eq!(p.ledger.rows.len(), 12);
        assert!(p.notes.iter().any(|n| n.contains("lasts indefinitely")));
    }

    #[test]
    fn the_withdrawal_for_a_term_exhausts_the_balance_exactly() {
        for timing in [Timing::End, Timing::Start] {
            let mut t = terms("3.5", Question::WithdrawalForTerm { periods: 240 });
            t.opening_balance = d("310000");
            t.timing = timing;
            let p = plan(&t).unwrap();
            let s = p.solved_flow.unwrap();
            // Loan arithmetic (common practice, no source): P = x0·i/(1 − (1 + i)^−n),
            // divided by a when taken at the start of each period.
            let i = d("0.035") / d("12");
            let mut want = d("310000") * i / (Decimal::ONE - (Decimal::ONE + i).powi(-240));
            if timing == Timing::Start {
                want /= Decimal::ONE + i;
            }
            close(-s.exact, want, "1e-16");
            assert_eq!(p.ledger.rows.len(), 240);
            assert_eq!(p.ledger.final_balance, d("0.00"));
            assert!(p.ledger.exhausted);
        }
    }

    #[test]
    fn the_deposit_for_a_goal_reaches_it() {
        // 40,000 in 72 months at 4.1 %: P = G·i/((1 + i)^n − 1) (common practice, no source).
        let t = terms(
            "4.1",
            Question::DepositForGoal {
                goal: d("40000"),
                periods: 72,
            },
        );
        let p = plan(&t).unwrap();
        let i = d("0.041") / d("12");
        let want = d("40000") * i / ((Decimal::ONE + i).powi(72) - Decimal::ONE);
        close(p.solved_flow.unwrap().exact, want, "1e-18");
        assert!(p.flow >= Currency::USD.round(want, RoundingStrategy::AwayFromZero));
        assert!(p.ledger.final_balance >= d("40000"));
        assert_eq!(p.goal_reached_at.unwrap().period, 72);
    }

    #[test]
    fn a_goal_already_met_needs_no_deposit() {
        let mut t = terms(
            "4",
            Question::DepositForGoal {
                goal: d("1000"),
                periods: 12,
            },
        );
        t.opening_balance = d("1500");
        let p = plan(&t).unwrap();
        assert_eq!(p.flow, Decimal::ZERO);
        assert_eq!(p.goal_reached_at.unwrap().period, 0);
        assert!(p.notes.iter().any(|n| n.contains("already meets")));
        t.question = Question::PeriodsToGoal {
            deposit: d("50"),
            goal: d("1000"),
        };
        let p = plan(&t).unwrap();
        assert!(p.ledger.rows.is_empty());
        assert_eq!(p.goal_reached_at.unwrap().period, 0);
    }

    #[test]
    fn periods_to_goal_level_and_growing_agree_with_stepping() {
        for growth in [None, Some(d("3"))] {
            let mut t = terms(
                "4.1",
                Question::PeriodsToGoal {
                    deposit: d("350"),
                    goal: d("40000"),
                },
            );
            t.growth = growth.map(|percent| Growth {
                percent,
                every: GrowthEvery::Year,
            });
            let p = plan(&t).unwrap();
            let search = p.periods_search.unwrap();
            let x = stepped(
                &p.form.shape,
                Decimal::ZERO,
                d("350"),
                Decimal::ZERO,
                search.n,
            );
            assert!(x[search.n as usize] >= d("40000"));
            assert!(x[search.n as usize - 1] < d("40000"));
            assert_eq!(
                matches!(search.method, PeriodSearch::Logarithm { .. }),
                growth.is_none()
            );
            assert_eq!(
                p.goal_reached_at.unwrap().period,
                p.ledger.rows.len() as u32
            );
        }
    }

    #[test]
    fn a_goal_never_reached_is_no_solution() {
        let mut t = terms(
            "0",
            Question::PeriodsToGoal {
                deposit: d("0"),
                goal: d("1000"),
            },
        );
        t.opening_balance = d("10");
        let e = plan(&t).unwrap_err();
        assert_eq!((e.kind, e.field), (ErrorKind::NoSolution, Some("deposit")));
        // 0.01 a month at 0 % takes 100,000,000 months: beyond 6,000 periods.
        t.question = Question::PeriodsToGoal {
            deposit: d("0.01"),
            goal: d("1000000"),
        };
        let e = plan(&t).unwrap_err();
        assert_eq!((e.kind, e.field), (ErrorKind::NoSolution, Some("goal")));
    }

    #[test]
    fn the_ledger_reconciles_within_its_bound() {
        let mut t = terms(
            "4.1",
            Question::FinalBalance {
                flow: Flow::Deposit(d("350")),
                periods: 480,
            },
        );
        t.opening_balance = d("2500");
        for growth in [
            None,
            Some((d("3"), GrowthEvery::Year)),
            Some((d("0.25"), GrowthEvery::Period)),
        ] {
            for timing in [Timing::End, Timing::Start] {
                t.growth = growth.map(|(percent, every)| Growth { percent, every });
                t.timing = timing;
                let p = plan(&t).unwrap();
                let r = p.reconciliation.unwrap();
                assert!(r.largest_drift <= r.bound, "{growth:?} {timing:?}: {r:?}");
                assert_eq!(r.compared, 480);
                let sum: Decimal = p.ledger.rows.iter().map(|r| r.deposit + r.interest).sum();
                assert_eq!(d("2500") + sum, p.ledger.final_balance);
            }
        }
    }

    #[test]
    fn apy_of_the_account_rate_follows_regulation_dd() {
        // 12 CFR 1030 Appendix A, Part I.A, for a 365-day term: APY = 100·(Interest/Principal).
        // A year's interest on 1,000 at 5 % compounded daily is 1000·((1 + 0.05/365)^365 − 1)
        // = 51.267…, so the APY is 5.1267… and rounds to 5.13.
        let mut t = terms(
            "5",
            Question::FinalBalance {
                flow: Flow::Deposit(d("100")),
                periods: 12,
            },
        );
        t.compounding = Some(Frequency::Daily);
        let p = plan(&t).unwrap();
        let interest = d("1000") * ((Decimal::ONE + d("0.05") / d("365")).powi(365) - Decimal::ONE);
        close(p.apy.apy_percent, interest / d("10"), "1e-20");
        assert_eq!(p.apy.apy_percent_rounded, d("5.13"));
        // 100·[(1 + i)^p − 1] with i the monthly equivalent rate gives the same figure.
        let via_i = ((Decimal::ONE + p.periodic_rate).powi(12) - Decimal::ONE) * d("100");
        close(via_i, p.apy.apy_percent, "1e-20");
    }
}
