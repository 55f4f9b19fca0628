//! The five questions a savings plan can ask, one function each: the final
//! balance, the deposit that reaches a goal, the periods to a goal, the
//! withdrawal that exhausts the balance over a term, and the withdrawals a
//! balance supports. Each posts the ledger that answers it and adds its notes.

use rust_decimal::{Decimal, RoundingStrategy};

use super::closed_form::FlowShape;
use super::ledger::{post, Posting, SavingsLedger};
use super::searches::{periods_to_exhaust, periods_to_reach, PeriodsDerivation};
use super::terms::{Flow, SavingsTerms, Timing, MAX_AMOUNT, MAX_PERIODS};
use crate::engine::error::{EngineError, OrOverflow, Result};
use crate::engine::ledger::to_minor;
use crate::engine::rate::Frequency;

/// How a solved deposit or withdrawal was found: the balance is linear in it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FlowDerivation {
    /// The number of periods.
    pub n: u32,
    /// The balance wanted after n periods: the goal, or zero for a drawdown.
    pub target: Decimal,
    /// x[n] with the deposit set to zero: the opening balance (and the yearly step) alone.
    pub base_response: Decimal,
    /// x[n] of a unit deposit (first deposit 1, growing as the plan grows) with no opening balance.
    pub unit_response: Decimal,
    /// (target − base)/unit: the deposit, unrounded (negative for a withdrawal).
    pub exact: Decimal,
}

/// The plan being answered: its terms, the shape of its flows, the periodic
/// rate and the yearly step with the flow's sign.
pub(super) struct Setup<'a> {
    pub(super) terms: &'a SavingsTerms,
    pub(super) shape: FlowShape,
    pub(super) i: Decimal,
    pub(super) step: Decimal,
}

/// What answering the question gives: the posted flow and ledger, and how they
/// were found.
pub(super) struct Answer {
    /// The first (level) deposit as posted: negative for a withdrawal.
    pub(super) flow: Decimal,
    pub(super) ledger: SavingsLedger,
    pub(super) solved_flow: Option<FlowDerivation>,
    pub(super) periods_search: Option<PeriodsDerivation>,
    /// The period the goal is reached in, when the question found it.
    pub(super) goal_period: Option<u32>,
    pub(super) lasts_indefinitely: bool,
}

impl Answer {
    /// A posted flow and ledger, nothing solved or searched.
    fn posted(flow: Decimal, ledger: SavingsLedger) -> Self {
        Self {
            flow,
            ledger,
            solved_flow: None,
            periods_search: None,
            goal_period: None,
            lasts_indefinitely: false,
        }
    }
}

impl Setup<'_> {
    /// The ledger of the first flow `amount` (negative for a withdrawal), posted
    /// until `rule` stops it.
    fn post(&self, amount: Decimal, rule: Posting) -> Result<SavingsLedger> {
        let t = self.terms;
        post(
            &self.shape,
            t.opening_balance,
            amount,
            self.step,
            self.i,
            t.currency,
            rule,
        )
    }

    /// An amount in the plan's currency, as the notes show it.
    fn money(&self, amount: Decimal) -> String {
        self.terms.currency.format(amount)
    }

    /// The balance after `periods` periods of the opening balance and the yearly
    /// step alone, and of a unit first deposit alone: the balance is linear in the deposit.
    fn responses(&self, periods: u32) -> Result<(Decimal, Decimal)> {
        let x0 = self.terms.opening_balance;
        let base = self
            .shape
            .solve(x0, Decimal::ZERO, self.step)?
            .balance_at(periods)?;
        let unit = self
            .shape
            .solve(Decimal::ZERO, Decimal::ONE, Decimal::ZERO)?
            .balance_at(periods)?;
        Ok((base, unit))
    }

    /// The deposit that reaches `goal`: the exact one rounded up to the minor unit,
    /// raised by a minor unit at a time should interest credited to the minor unit
    /// leave the posted ledger short.
    fn post_solved_deposit(
        &self,
        goal: Decimal,
        exact: Decimal,
        periods: u32,
        notes: &mut Vec<String>,
    ) -> Result<(Decimal, SavingsLedger)> {
        let currency = self.terms.currency;
        let mut deposit = currency.round(exact, RoundingStrategy::AwayFromZero);
        if deposit > MAX_AMOUNT {
            return Err(EngineError::no_solution(
                Some("goal"),
                "the goal needs a deposit above 1,000,000,000,000 a period in this term",
            ));
        }
        let rule = Posting::periods(periods);
        let mut ledger = self.post(deposit, rule)?;
        let mut raised = 0;
        while ledger.final_balance < goal && raised < 8 {
            deposit += currency.minor_unit();
            raised += 1;
            ledger = self.post(deposit, rule)?;
        }
        let raised_text = match raised {
            0 => String::new(),
            1 => " (raised by one minor unit for the rounding of the interest)".into(),
            n => format!(" (raised by {n} minor units for the rounding of the interest)"),
        };
        notes.push(format!(
            "The deposit that reaches the goal exactly is {}; it is posted rounded up to {}{raised_text} so that the posted ledger reaches the goal.",
            exact.round_dp(6).normalize(),
            currency.format(deposit),
        ));
        Ok((deposit, ledger))
    }
}

/// The balance after `periods` periods of `flow`.
pub(super) fn final_balance(
    s: &Setup,
    flow: Flow,
    periods: u32,
    notes: &mut Vec<String>,
) -> Result<Answer> {
    let f = flow.signed();
    let ledger = s.post(f, Posting::periods(periods))?;
    if ledger.exhausted {
        let count = ledger.rows.len() as u32;
        let last = -ledger.rows.last().map_or(Decimal::ZERO, |r| r.deposit);
        notes.push(if count < periods {
            format!(
                "The balance runs out at withdrawal {count} of the {periods} asked for; the last withdrawal is {}.",
                s.money(last)
            )
        } else {
            format!(
                "The last withdrawal, {}, takes what is left of the balance.",
                s.money(last)
            )
        });
    }
    Ok(Answer::posted(f, ledger))
}

/// The level (or first) deposit that reaches `goal` at the end of `periods` periods.
pub(super) fn deposit_for_goal(
    s: &Setup,
    goal: Decimal,
    periods: u32,
    notes: &mut Vec<String>,
) -> Result<Answer> {
    if goal <= s.terms.opening_balance {
        notes.push(format!(
            "The opening balance already meets the goal of {}: no deposit is needed.",
            s.money(goal)
        ));
        let ledger = s.post(Decimal::ZERO, Posting::periods(periods))?;
        return Ok(Answer {
            goal_period: Some(0),
            ..Answer::posted(Decimal::ZERO, ledger)
        });
    }
    let (base, unit) = s.responses(periods)?;
    let exact = goal
        .checked_sub(base)
        .and_then(|v| v.checked_div(unit))
        .or_overflow("the deposit")?;
    let derivation = FlowDerivation {
        n: periods,
        target: goal,
        base_response: base,
        unit_response: unit,
        exact,
    };
    let (flow, ledger) = if exact <= Decimal::ZERO {
        notes.push(format!(
            "The opening balance{} reaches the goal of {} by the end of the term: the deposit needed is zero.",
            if s.step.is_zero() { " with its interest" } else { " with its interest and the yearly step" },
            s.money(goal)
        ));
        let ledger = s.post(Decimal::ZERO, Posting::periods(periods))?;
        (Decimal::ZERO, ledger)
    } else {
        s.post_solved_deposit(goal, exact, periods, notes)?
    };
    Ok(Answer {
        solved_flow: Some(derivation),
        ..Answer::posted(flow, ledger)
    })
}

/// The number of periods `deposit` needs to reach `goal`.
pub(super) fn periods_to_goal(
    s: &Setup,
    deposit: Decimal,
    goal: Decimal,
    notes: &mut Vec<String>,
) -> Result<Answer> {
    let (x0, i, step) = (s.terms.opening_balance, s.i, s.step);
    if goal <= x0 {
        notes.push(format!(
            "The opening balance already meets the goal of {}: no period is needed.",
            s.money(goal)
        ));
        let ledger = s.post(deposit, Posting::periods(0))?;
        return Ok(Answer {
            goal_period: Some(0),
            ..Answer::posted(deposit, ledger)
        });
    }
    if deposit.is_zero() && step.is_zero() && (i.is_zero() || x0.is_zero()) {
        return Err(EngineError::no_solution(
            Some("deposit"),
            if i.is_zero() {
                "with no deposit and no interest the balance never grows: the goal is never reached"
            } else {
                "with no deposit and no opening balance the balance stays zero: the goal is never reached"
            },
        ));
    }
    let form = s.shape.solve(x0, deposit, step)?;
    let (n, method) = periods_to_reach(&form, x0, i, deposit, goal)?;
    let Some(n) = n else {
        return Err(EngineError::no_solution(
            Some("goal"),
            format!(
                "the goal would take more than {MAX_PERIODS} periods to reach with this deposit"
            ),
        ));
    };
    let search = PeriodsDerivation {
        method,
        n,
        target: goal,
        before: form.balance_at(n - 1)?,
        at: form.balance_at(n).unwrap_or(Decimal::MAX),
    };
    let rule = Posting {
        limit: MAX_PERIODS,
        goal: Some(to_minor(goal, s.terms.currency.minor_units())?),
        absorb_last: false,
    };
    let ledger = s.post(deposit, rule)?;
    if ledger.final_balance < goal {
        return Err(EngineError::no_solution(
            Some("goal"),
            format!(
                "with interest credited to the minor unit the goal takes more than {MAX_PERIODS} periods"
            ),
        ));
    }
    let posted = ledger.rows.len() as u32;
    if posted != n {
        notes.push(format!(
            "The closed form reaches the goal after {n} periods; with interest credited to the minor unit the posted ledger reaches it after {posted}."
        ));
    }
    notes.push(format!(
        "The goal of {} is reached after {posted} periods ({}).",
        s.money(goal),
        duration_text(posted, s.terms.frequency)
    ));
    Ok(Answer {
        periods_search: Some(search),
        goal_period: Some(posted),
        ..Answer::posted(deposit, ledger)
    })
}

/// The level (or first) withdrawal that exhausts the opening balance in `periods` periods.
pub(super) fn withdrawal_for_term(
    s: &Setup,
    periods: u32,
    notes: &mut Vec<String>,
) -> Result<Answer> {
    let currency = s.terms.currency;
    let (base, unit) = s.responses(periods)?;
    let exact = base
        .checked_div(unit)
        .map(|v| -v)
        .or_overflow("the withdrawal")?;
    let derivation = FlowDerivation {
        n: periods,
        target: Decimal::ZERO,
        base_response: base,
        unit_response: unit,
        exact,
    };
    if exact >= Decimal::ZERO {
        return Err(EngineError::no_solution(
            Some("deposit_step"),
            "the yearly step alone exhausts the balance within the term: no first withdrawal of zero or more fits",
        ));
    }
    let withdrawal = currency.round(-exact, RoundingStrategy::MidpointAwayFromZero);
    if withdrawal.is_zero() {
        return Err(EngineError::no_solution(
            Some("opening_balance"),
            format!(
                "the withdrawal rounds to zero in {}: the balance is too small for this term",
                currency.code()
            ),
        ));
    }
    let rule = Posting {
        limit: periods,
        goal: None,
        absorb_last: true,
    };
    let ledger = s.post(-withdrawal, rule)?;
    let count = ledger.rows.len() as u32;
    if count < periods {
        notes.push(format!(
            "The rounded withdrawal exhausts the balance after {count} withdrawals, {} fewer than the term.",
            periods - count
        ));
    }
    let last = -ledger.rows.last().map_or(Decimal::ZERO, |r| r.deposit);
    notes.push(format!(
        "The withdrawal that exhausts the balance exactly is {}; it is posted rounded to {}, and the last withdrawal, {}, takes what is left so that the balance ends at exactly zero.",
        (-exact).round_dp(6).normalize(),
        s.money(withdrawal),
        s.money(last)
    ));
    Ok(Answer {
        solved_flow: Some(derivation),
        ..Answer::posted(-withdrawal, ledger)
    })
}

/// How many withdrawals of `withdrawal` the opening balance supports.
pub(super) fn withdrawals_supported(
    s: &Setup,
    withdrawal: Decimal,
    notes: &mut Vec<String>,
) -> Result<Answer> {
    let (x0, i) = (s.terms.opening_balance, s.i);
    let form = s.shape.solve(x0, -withdrawal, s.step)?;
    let c = withdrawal
        .checked_mul(s.shape.timing_factor())
        .or_overflow("the withdrawal")?;
    let interest = x0
        .checked_mul(i)
        .or_overflow("the first period's interest")?;
    if s.shape.is_level() && c <= interest {
        notes.push(format!(
            "The withdrawal{} never exceeds the interest the balance earns ({} a period): it lasts indefinitely. The schedule shows the first year.",
            if s.terms.timing == Timing::Start { ", with the interest it would have earned," } else { "" },
            s.money(interest)
        ));
        let ledger = s.post(-withdrawal, Posting::periods(s.shape.periods_per_year))?;
        return Ok(Answer {
            lasts_indefinitely: true,
            ..Answer::posted(-withdrawal, ledger)
        });
    }
    let (n, method) = periods_to_exhaust(&form, x0, i, c)?;
    let Some(n) = n else {
        return Err(EngineError::no_solution(
            Some("withdrawal"),
            format!("the balance supports more than {MAX_PERIODS} withdrawals"),
        ));
    };
    let search = PeriodsDerivation {
        method,
        n,
        target: Decimal::ZERO,
        before: form.balance_at(n - 1)?,
        at: form.balance_at(n).unwrap_or(Decimal::MIN),
    };
    let ledger = s.post(-withdrawal, Posting::periods(MAX_PERIODS))?;
    if !ledger.exhausted {
        return Err(EngineError::no_solution(
            Some("withdrawal"),
            format!(
                "with interest credited to the minor unit the balance supports more than {MAX_PERIODS} withdrawals"
            ),
        ));
    }
    let count = ledger.rows.len() as u32;
    let last = -ledger.rows.last().map_or(Decimal::ZERO, |r| r.deposit);
    notes.push(format!(
        "The balance supports {count} withdrawals ({}); the last one is {}{}.",
        duration_text(count, s.terms.frequency),
        s.money(last),
        if count == n {
            String::new()
        } else {
            format!(" (the closed form, without rounding, runs out at withdrawal {n})")
        }
    ));
    Ok(Answer {
        periods_search: Some(search),
        ..Answer::posted(-withdrawal, ledger)
    })
}

/// "20 years and 3 months" for 243 monthly periods.
fn duration_text(n: u32, frequency: Frequency) -> String {
    let p = frequency.per_year();
    let unit = match frequency {
        Frequency::Annual => "year",
        Frequency::Semiannual => "half-year",
        Frequency::Quarterly => "quarter",
        Frequency::Monthly => "month",
        Frequency::Semimonthly => "half-month",
        Frequency::Biweekly => "fortnight",
        Frequency::Weekly => "week",
        Frequency::Daily => "day",
    };
    let plural = |n: u32, w: &str| format!("{n} {w}{}", if n == 1 { "" } else { "s" });
    if p == 1 {
        return plural(n, "year");
    }
    match (n / p, n % p) {
        (0, r) => plural(r, unit),
        (y, 0) => plural(y, "year"),
        (y, r) => format!("{} and {}", plural(y, "year"), plural(r, unit)),
    }
}
