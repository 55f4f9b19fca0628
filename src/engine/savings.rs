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
//!   each year), a geometric and a ramp input solved by [`Recurrence::solve`] (a
//!   double pole when g = A). Inside year y the balance is the period closed form
//!   from B[y] with that year's level deposit: balance[y·m + r] = a^r·B[y] + c_y·u[r],
//!   where a^r and u[r] = Σ_{j<r} a^j are the closed forms of a unit balance and a
//!   unit deposit ([`UnitResponses`]). Every period's balance is O(1).
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

use jiff::civil::Date;
use rust_decimal::prelude::ToPrimitive;
use rust_decimal::{Decimal, MathematicalOps, RoundingStrategy};

use super::apy::{apy_of_rate, ApyResult};
use super::error::{EngineError, ErrorKind, OrOverflow, Result};
use super::ledger::{to_minor, InterestPoster};
use super::loan::{UnitResponses, MAX_PAYMENTS};
use super::money::{Currency, InterestRounding};
use super::rate::{AnnualRate, Frequency};
use super::recurrence::{Input, Recurrence, Solution};
use super::schedule::{CAUTION, MAX_PRINCIPAL};
use super::zdomain::pow;

/// The most periods a savings plan may have (the same limit as a loan's payments).
pub const MAX_PERIODS: u32 = MAX_PAYMENTS;

/// The largest amount accepted for a balance, a deposit, a step or a goal.
pub const MAX_AMOUNT: Decimal = MAX_PRINCIPAL;

/// The fastest growth of deposits accepted: 100 % a year.
pub const MAX_GROWTH_PERCENT_A_YEAR: Decimal = Decimal::ONE_HUNDRED;

/// When in each period the deposit (or withdrawal) is made.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Timing {
    /// At the start: it earns the period's interest (an annuity due).
    Start,
    /// At the end: it earns interest from the next period on (an ordinary annuity).
    #[default]
    End,
}

impl Timing {
    /// The interface name (`start`, `end`).
    pub fn name(self) -> &'static str {
        match self {
            Timing::Start => "start",
            Timing::End => "end",
        }
    }

    /// The timing with this interface name.
    pub fn parse(name: &str) -> Option<Self> {
        match name {
            "start" => Some(Timing::Start),
            "end" => Some(Timing::End),
            _ => None,
        }
    }
}

/// How often the deposits grow.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum GrowthEvery {
    /// Every period: deposit k is c·g^k.
    Period,
    /// Once a year: level within a year, c·g^y in year y.
    #[default]
    Year,
}

impl GrowthEvery {
    /// The interface name (`period`, `year`).
    pub fn name(self) -> &'static str {
        match self {
            GrowthEvery::Period => "period",
            GrowthEvery::Year => "year",
        }
    }

    /// The value with this interface name.
    pub fn parse(name: &str) -> Option<Self> {
        match name {
            "period" => Some(GrowthEvery::Period),
            "year" => Some(GrowthEvery::Year),
            _ => None,
        }
    }
}

/// Deposits growing by a percentage, each period or each year.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Growth {
    pub percent: Decimal,
    pub every: GrowthEvery,
}

impl Growth {
    /// The growth ratio g = 1 + percent/100.
    pub fn ratio(&self) -> Decimal {
        Decimal::ONE + self.percent / Decimal::ONE_HUNDRED
    }
}

/// A given flow: money put in or taken out each period.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Flow {
    Deposit(Decimal),
    Withdrawal(Decimal),
}

impl Flow {
    /// The flow into the account: a deposit positive, a withdrawal negative.
    pub fn signed(self) -> Decimal {
        match self {
            Flow::Deposit(d) => d,
            Flow::Withdrawal(w) => -w,
        }
    }
}

/// What is asked: one unknown, the rest given.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Question {
    /// The balance after `periods` periods of the given flow.
    FinalBalance { flow: Flow, periods: u32 },
    /// The level (or first) deposit that reaches `goal` at the end of `periods` periods.
    DepositForGoal { goal: Decimal, periods: u32 },
    /// The number of periods `deposit` needs to reach `goal`.
    PeriodsToGoal { deposit: Decimal, goal: Decimal },
    /// The level (or first) withdrawal that exhausts the opening balance in `periods` periods.
    WithdrawalForTerm { periods: u32 },
    /// How many withdrawals of `withdrawal` the opening balance supports.
    WithdrawalsSupported { withdrawal: Decimal },
}

impl Question {
    /// True for the questions about withdrawals.
    pub fn is_drawdown(&self) -> bool {
        matches!(
            self,
            Question::FinalBalance {
                flow: Flow::Withdrawal(_),
                ..
            } | Question::WithdrawalForTerm { .. }
                | Question::WithdrawalsSupported { .. }
        )
    }
}

/// A savings plan, parsed; [`SavingsTerms::check`] says whether it is in range.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SavingsTerms {
    pub opening_balance: Decimal,
    pub currency: Currency,
    pub rate: AnnualRate,
    /// How often deposits (or withdrawals) are made; also the ledger's period.
    pub frequency: Frequency,
    /// `None`: interest compounds at the deposit frequency.
    pub compounding: Option<Frequency>,
    pub timing: Timing,
    pub growth: Option<Growth>,
    /// A fixed amount added to the deposit (or withdrawal) once a year; zero for none.
    pub deposit_step: Decimal,
    pub question: Question,
    /// The plan's opening date: row k is dated `start_date` + k periods.
    pub start_date: Option<Date>,
}

/// How the deposits move over time, whatever their size.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Pattern {
    /// The same deposit every period.
    Level,
    /// c·g^k in period k.
    EachPeriod { ratio: Decimal },
    /// c·g^y + s·y in every period of year y (s the yearly step; g may be 1).
    EachYear { ratio: Decimal },
}

/// The shape of a plan: interest factor, periods a year, timing and pattern.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FlowShape {
    /// a = 1 + i.
    pub a: Decimal,
    /// i as the exact ratio of integers it rounds, when it is one
    /// ([`SavingsTerms::periodic_ratio`]): the posting multiplies by it.
    pub exact_rate: Option<(i128, i128)>,
    pub periods_per_year: u32,
    pub timing: Timing,
    pub pattern: Pattern,
}

/// The two-level closed form of deposits growing once a year.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct YearlyForm {
    /// B[y+1] = A·B[y] + S·c·g^y + S·s·y, B[0] = opening balance, solved.
    pub year: Solution,
    /// A = a^m.
    pub year_factor: Decimal,
    /// S = Σ_{j<m} a^j: one year of a unit end-of-period deposit.
    pub year_sum: Decimal,
    /// a^r and u[r] = Σ_{j<r} a^j inside a year.
    pub unit: UnitResponses,
    /// c: the first year's deposit as the recurrence sees it (times a when at the start).
    pub flow: Decimal,
    pub ratio: Decimal,
    /// s: the yearly step as the recurrence sees it.
    pub step: Decimal,
}

/// The closed form of a plan: its balance after any period, in O(1).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PlanForm {
    pub shape: FlowShape,
    /// The period recurrence, solved. With yearly growth it is that of the first
    /// year (valid for k ≤ m); later years start from B[y] with their own deposit.
    pub period: Solution,
    /// With yearly growth (or a yearly step): the year-boundary recurrence.
    pub yearly: Option<YearlyForm>,
}

impl FlowShape {
    /// 1 for end-of-period deposits, a for deposits at the start (the shift by one period).
    pub fn timing_factor(&self) -> Decimal {
        match self.timing {
            Timing::Start => self.a,
            Timing::End => Decimal::ONE,
        }
    }

    /// True when every deposit is the same.
    pub fn is_level(&self) -> bool {
        self.pattern == Pattern::Level
    }

    /// The plan's closed form for an opening balance `x0`, a first deposit `amount`
    /// (negative for a withdrawal) and a yearly `step`, all as made (before the shift
    /// of start-of-period deposits).
    ///
    /// # Errors
    /// An overflow.
    pub fn solve(&self, x0: Decimal, amount: Decimal, step: Decimal) -> Result<PlanForm> {
        let tf = self.timing_factor();
        let c = amount.checked_mul(tf).or_overflow("the deposit")?;
        let s = step.checked_mul(tf).or_overflow("the yearly step")?;
        let level = |x0: Decimal, c: Decimal| Recurrence {
            a: self.a,
            x0,
            inputs: nonzero(vec![Input::Step { amount: c }]),
        };
        match self.pattern {
            Pattern::Level => Ok(PlanForm {
                shape: *self,
                period: level(x0, c).solve()?,
                yearly: None,
            }),
            Pattern::EachPeriod { ratio } => {
                let input = if ratio == Decimal::ONE {
                    Input::Step { amount: c }
                } else {
                    Input::Geometric { amount: c, ratio }
                };
                let r = Recurrence {
                    a: self.a,
                    x0,
                    inputs: nonzero(vec![input]),
                };
                Ok(PlanForm {
                    shape: *self,
                    period: r.solve()?,
                    yearly: None,
                })
            }
            Pattern::EachYear { ratio } => {
                let m = self.periods_per_year;
                let unit = UnitResponses::for_rate(self.a - Decimal::ONE)?;
                let year_factor = pow(self.a, m)?;
                let year_sum = unit.payment_response.eval(m)?;
                let yearly_flow = year_sum.checked_mul(c).or_overflow("a year's deposits")?;
                let yearly_step = year_sum.checked_mul(s).or_overflow("a year's step")?;
                let growth = if ratio == Decimal::ONE {
                    Input::Step {
                        amount: yearly_flow,
                    }
                } else {
                    Input::Geometric {
                        amount: yearly_flow,
                        ratio,
                    }
                };
                let year = Recurrence {
                    a: year_factor,
                    x0,
                    inputs: nonzero(vec![
                        growth,
                        Input::Ramp {
                            amount: yearly_step,
                        },
                    ]),
                }
                .solve()?;
                Ok(PlanForm {
                    shape: *self,
                    period: level(x0, c).solve()?,
                    yearly: Some(YearlyForm {
                        year,
                        year_factor,
                        year_sum,
                        unit,
                        flow: c,
                        ratio,
                        step: s,
                    }),
                })
            }
        }
    }

    /// The deposit made in period `k` (0-based), unrounded: c, c·g^k or c·g^y + s·y.
    ///
    /// # Errors
    /// An overflow.
    pub fn flow_at(&self, amount: Decimal, step: Decimal, k: u32) -> Result<Decimal> {
        match self.pattern {
            Pattern::Level => Ok(amount),
            Pattern::EachPeriod { ratio } => amount
                .checked_mul(pow(ratio, k)?)
                .or_overflow("a growing deposit"),
            Pattern::EachYear { ratio } => {
                yearly_flow(amount, ratio, step, k / self.periods_per_year)
            }
        }
    }
}

/// c·g^y + s·y.
fn yearly_flow(amount: Decimal, ratio: Decimal, step: Decimal, y: u32) -> Result<Decimal> {
    amount
        .checked_mul(pow(ratio, y)?)
        .and_then(|v| v.checked_add(step.checked_mul(Decimal::from(y))?))
        .or_overflow("a year's deposit")
}

fn nonzero(inputs: Vec<Input>) -> Vec<Input> {
    inputs
        .into_iter()
        .filter(|i| match *i {
            Input::Impulse { amount }
            | Input::Step { amount }
            | Input::Geometric { amount, .. }
            | Input::Ramp { amount } => !amount.is_zero(),
        })
        .collect()
}

impl PlanForm {
    /// The balance after period `k`, in O(1).
    ///
    /// # Errors
    /// An overflow of the 28-digit arithmetic (a balance beyond about 7.9e28).
    pub fn balance_at(&self, k: u32) -> Result<Decimal> {
        let Some(y) = &self.yearly else {
            return self.period.closed_form.eval(k);
        };
        let m = self.shape.periods_per_year;
        let (year, r) = (k / m, k % m);
        let boundary = y.year.closed_form.eval(year)?;
        if r == 0 {
            return Ok(boundary);
        }
        let c = yearly_flow(y.flow, y.ratio, y.step, year)?;
        let h = y.unit.principal_response.eval(r)?;
        let u = y.unit.payment_response.eval(r)?;
        boundary
            .checked_mul(h)
            .and_then(|v| v.checked_add(c.checked_mul(u)?))
            .or_overflow("a balance")
    }

    /// [`PlanForm::balance_at`] in binary floating point: for estimates only.
    pub fn estimate_at(&self, k: u32) -> f64 {
        use rust_decimal::prelude::ToPrimitive;
        let Some(y) = &self.yearly else {
            return self.period.closed_form.estimate(k);
        };
        let m = self.shape.periods_per_year;
        let (year, r) = (k / m, k % m);
        let boundary = y.year.closed_form.estimate(year);
        if r == 0 {
            return boundary;
        }
        let f = |d: Decimal| d.to_f64().unwrap_or(f64::NAN);
        let c = f(y.flow) * f(y.ratio).powf(f64::from(year)) + f(y.step) * f64::from(year);
        boundary * y.unit.principal_response.estimate(r) + c * y.unit.payment_response.estimate(r)
    }

    /// The balances after periods 0, 1, …, n, in one pass (powers taken incrementally).
    ///
    /// # Errors
    /// An overflow.
    pub fn balances(&self, n: u32) -> Result<Vec<Decimal>> {
        let Some(y) = &self.yearly else {
            return self.period.closed_form.values(n);
        };
        let m = self.shape.periods_per_year;
        let boundaries = y.year.closed_form.values(n / m)?;
        let h = y.unit.principal_response.values(m)?;
        let u = y.unit.payment_response.values(m)?;
        let mut out = Vec::with_capacity(n as usize + 1);
        let mut power = Decimal::ONE; // g^year
        for (year, b) in boundaries.iter().enumerate() {
            let c = y
                .flow
                .checked_mul(power)
                .and_then(|v| v.checked_add(y.step.checked_mul(Decimal::from(year as u64))?))
                .or_overflow("a year's deposit")?;
            for r in 0..m {
                if year as u32 * m + r > n {
                    break;
                }
                out.push(
                    b.checked_mul(h[r as usize])
                        .and_then(|v| v.checked_add(c.checked_mul(u[r as usize])?))
                        .or_overflow("a balance")?,
                );
            }
            power = power.checked_mul(y.ratio).or_overflow("a growth power")?;
        }
        Ok(out)
    }
}

/// One posted period.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SavingsRow {
    pub number: u32,
    /// The end of the period: `start_date` + `number` periods.
    pub date: Option<Date>,
    /// The money put in this period: negative for a withdrawal.
    pub deposit: Decimal,
    pub interest: Decimal,
    pub balance: Decimal,
}

/// The posted ledger and its totals.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SavingsLedger {
    pub rows: Vec<SavingsRow>,
    pub total_deposited: Decimal,
    /// Withdrawals, as a positive total.
    pub total_withdrawn: Decimal,
    pub total_interest: Decimal,
    pub final_balance: Decimal,
    /// True when a withdrawal took the last of the balance (the last one may be smaller).
    pub exhausted: bool,
}

/// When the ledger stops.
#[derive(Debug, Clone, Copy)]
struct Posting {
    /// The most periods posted.
    limit: u32,
    /// Stop at the first balance at or above it (minor units).
    goal: Option<i128>,
    /// The last period's withdrawal takes whatever is left (a drawdown over a term).
    absorb_last: bool,
}

impl Posting {
    fn periods(limit: u32) -> Self {
        Self {
            limit,
            goal: None,
            absorb_last: false,
        }
    }
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

/// Posts the plan: interest rounded half up to the minor unit each period, growing
/// deposits rounded half up to the minor unit; a withdrawal never takes more than
/// the balance (the last one is then smaller and the ledger stops).
fn post(
    shape: &FlowShape,
    x0: Decimal,
    amount: Decimal,
    step: Decimal,
    periodic_rate: Decimal,
    currency: Currency,
    rule: Posting,
) -> Result<SavingsLedger> {
    let e = currency.minor_units();
    let half_up = RoundingStrategy::MidpointAwayFromZero;
    let poster = InterestPoster::new(periodic_rate, currency, InterestRounding::HalfUp)
        .exactly(shape.exact_rate);
    let mut balance = to_minor(x0, e)?;
    let level = to_minor(currency.round(amount, half_up), e)?;
    let m = shape.periods_per_year;
    let mut rows = Vec::with_capacity(rule.limit.min(MAX_PERIODS) as usize);
    let (mut deposited, mut withdrawn, mut interest_total) = (0i128, 0i128, 0i128);
    let mut exhausted = false;
    // Growing deposits: the exact flow from incremental powers, rounded when posted.
    let mut power = Decimal::ONE;
    let mut this_year = level;
    for number in 1..=rule.limit {
        let k = number - 1;
        let mut flow = match shape.pattern {
            Pattern::Level => level,
            Pattern::EachPeriod { ratio } => {
                let exact = amount.checked_mul(power).or_overflow("a growing deposit")?;
                power = power.checked_mul(ratio).or_overflow("a growth power")?;
                to_minor(currency.round(exact, half_up), e)?
            }
            Pattern::EachYear { ratio } => {
                if k % m == 0 {
                    let y = Decimal::from(k / m);
                    let exact = amount
                        .checked_mul(power)
                        .and_then(|v| v.checked_add(step.checked_mul(y)?))
                        .or_overflow("a year's deposit")?;
                    power = power.checked_mul(ratio).or_overflow("a growth power")?;
                    this_year = to_minor(currency.round(exact, half_up), e)?;
                }
                this_year
            }
        };
        let last = rule.absorb_last && number == rule.limit;
        let interest = match shape.timing {
            Timing::Start => {
                if flow < 0 && (balance + flow <= 0 || last) {
                    flow = -balance;
                    exhausted = true;
                }
                balance += flow;
                let interest = poster.interest(balance)?;
                balance += interest;
                interest
            }
            Timing::End => {
                let interest = poster.interest(balance)?;
                if flow < 0 && (balance + interest + flow <= 0 || last) {
                    flow = -(balance + interest);
                    exhausted = true;
                }
                balance += interest + flow;
                interest
            }
        };
        if flow >= 0 {
            deposited += flow;
        } else {
            withdrawn -= flow;
        }
        interest_total += interest;
        rows.push(SavingsRow {
            number,
            date: None,
            deposit: checked_from_minor(flow, e, "a posted deposit")?,
            interest: checked_from_minor(interest, e, "a period's interest")?,
            balance: checked_from_minor(balance, e, "a posted balance")?,
        });
        if exhausted || rule.goal.is_some_and(|g| balance >= g) {
            break;
        }
    }
    Ok(SavingsLedger {
        rows,
        total_deposited: checked_from_minor(deposited, e, "the total deposited")?,
        total_withdrawn: checked_from_minor(withdrawn, e, "the total withdrawn")?,
        total_interest: checked_from_minor(interest_total, e, "the total interest")?,
        final_balance: checked_from_minor(balance, e, "a posted balance")?,
        exhausted,
    })
}

/// Minor units back to an amount, or an overflow past the 96 bits of a decimal.
fn checked_from_minor(amount: i128, minor_units: u32, what: &str) -> Result<Decimal> {
    Decimal::try_from_i128_with_scale(amount, minor_units)
        .ok()
        .or_overflow(what)
}

/// How far the posted ledger strays from the closed form with the same posted deposit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SavingsReconciliation {
    /// The largest |ledger balance − closed-form balance| over the rows compared.
    pub largest_drift: Decimal,
    /// The period where it occurs (0 when no row is compared).
    pub at_period: u32,
    /// Rows compared: all but a last withdrawal that took the residue.
    pub compared: u32,
    /// What rounding can do by then: (½ unit of interest, plus ½ unit of a rounded
    /// growing deposit, times a when made at the start) × Σ_{j<k} a^j.
    pub bound: Decimal,
}

fn reconcile(
    ledger: &SavingsLedger,
    form: &PlanForm,
    periodic_rate: Decimal,
    currency: Currency,
) -> Result<SavingsReconciliation> {
    let compared = if ledger.exhausted {
        ledger.rows.len().saturating_sub(1)
    } else {
        ledger.rows.len()
    };
    let values = form.balances(compared as u32)?;
    let mut largest = Decimal::ZERO;
    let mut at = 0;
    for row in &ledger.rows[..compared] {
        let drift = (row.balance - values[row.number as usize]).abs();
        if drift > largest || at == 0 {
            largest = drift;
            at = row.number;
        }
    }
    let half = currency.minor_unit() / Decimal::TWO;
    let per_period = if form.shape.is_level() {
        half
    } else {
        half + half * form.shape.timing_factor()
    };
    // Σ_{j<at} a^j is the closed form of a unit deposit.
    let sum = UnitResponses::for_rate(periodic_rate)?
        .payment_response
        .eval(at)?;
    Ok(SavingsReconciliation {
        largest_drift: largest,
        at_period: at,
        compared: compared as u32,
        bound: per_period.checked_mul(sum).or_overflow("the drift bound")?,
    })
}

/// How a solved deposit or withdrawal was found: the balance is linear in it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FlowDerivation {
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

/// How the number of periods was found from the closed form.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PeriodSearch {
    /// Level flows: a logarithm (estimated in binary floating point), confirmed exactly.
    Logarithm { estimate: u32 },
    /// Growing deposits: bisection over whole periods on the O(1) closed form (in
    /// binary floating point, confirmed in decimal at n − 1 and n).
    Bisection { evaluations: u32 },
    /// Growing withdrawals (the balance may rise before it falls): a scan of the closed form.
    Scan,
}

/// The number of periods from the closed form, and the balances around it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PeriodsDerivation {
    pub method: PeriodSearch,
    /// The first n whose closed-form balance reaches the target.
    pub n: u32,
    /// The goal, or zero for a drawdown.
    pub target: Decimal,
    /// x[n − 1] and x[n] from the closed form.
    pub before: Decimal,
    pub at: Decimal,
}

/// When the goal is first reached.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct GoalReached {
    pub period: u32,
    pub date: Option<Date>,
}

/// The answer to a savings plan.
#[derive(Debug, Clone)]
pub struct SavingsPlan {
    pub terms: SavingsTerms,
    pub periodic_rate: Decimal,
    /// The first (level) deposit as posted: negative for a withdrawal.
    pub flow: Decimal,
    /// The yearly step, with the flow's sign.
    pub step: Decimal,
    pub solved_flow: Option<FlowDerivation>,
    pub periods_search: Option<PeriodsDerivation>,
    /// The closed form with the posted deposit.
    pub form: PlanForm,
    pub ledger: SavingsLedger,
    /// `None` when the closed form leaves the range of 28-digit decimals.
    pub reconciliation: Option<SavingsReconciliation>,
    pub goal_reached_at: Option<GoalReached>,
    /// Withdrawals that never exceed the interest: the balance never runs out.
    pub lasts_indefinitely: bool,
    /// Of the account rate, 12 CFR 1030 Appendix A.
    pub apy: ApyResult,
    pub notes: Vec<String>,
}

fn too_many_decimals(currency: Currency) -> String {
    match currency.minor_units() {
        0 => format!("{} amounts have no decimals", currency.code()),
        1 => format!("{} amounts have at most 1 decimal", currency.code()),
        n => format!("{} amounts have at most {n} decimals", currency.code()),
    }
}

/// The number of periods in `months` months at `frequency`, when it is a whole number.
///
/// # Errors
/// A term that is not a whole number of periods, or not 1 to [`MAX_PERIODS`] periods;
/// the error names `term_months`.
///
/// # Example
/// ```
/// use residue::engine::rate::Frequency;
/// use residue::engine::savings::periods_in_months;
/// assert_eq!(periods_in_months(96, Frequency::Monthly).unwrap(), 96);
/// assert_eq!(periods_in_months(12, Frequency::Weekly).unwrap(), 52);
/// assert!(periods_in_months(1, Frequency::Weekly).is_err());
/// ```
pub fn periods_in_months(months: u32, frequency: Frequency) -> Result<u32> {
    let scaled = u64::from(months) * u64::from(frequency.per_year());
    if scaled % 12 != 0 {
        return Err(EngineError::out_of_range(
            "term_months",
            format!(
                "{months} months is not a whole number of {} periods",
                frequency.name()
            ),
        ));
    }
    let n = scaled / 12;
    if n == 0 || n > u64::from(MAX_PERIODS) {
        return Err(EngineError::out_of_range(
            "term_months",
            format!("the term must give 1 to {MAX_PERIODS} periods"),
        ));
    }
    Ok(n as u32)
}

/// The date `k` periods after `start`: calendar months (1, 3, 6 or 12 apart) on the
/// start's day of the month, clamped to shorter months (Jan 31 → Feb 28 → Mar 31);
/// semimonthly on two days 15 apart (d and d + 15 when d ≤ 15, else d − 15 and d,
/// clamped); weekly and biweekly by days. These are the rules of
/// [`super::calendar::due_date`], the one rule that dates every schedule.
///
/// # Errors
/// A date past the calendar's end (9999-12-31), naming `start_date`.
///
/// # Example
/// ```
/// use residue::engine::rate::Frequency;
/// use residue::engine::savings::period_date;
/// let start = "2027-01-31".parse().unwrap();
/// assert_eq!(period_date(start, Frequency::Monthly, 1).unwrap().to_string(), "2027-02-28");
/// assert_eq!(period_date(start, Frequency::Monthly, 2).unwrap().to_string(), "2027-03-31");
/// ```
pub fn period_date(start: Date, frequency: Frequency, k: u32) -> Result<Date> {
    super::calendar::due_date(start, frequency, i64::from(k), "start_date").map_err(|_| {
        EngineError::out_of_range("start_date", "the plan's dates run past 9999-12-31")
    })
}

impl SavingsTerms {
    /// The periodic rate i for the deposit frequency.
    ///
    /// # Errors
    /// An overflow of the compounding factor.
    pub fn periodic_rate(&self) -> Result<Decimal> {
        self.rate
            .periodic_rate(self.frequency, self.compounding.unwrap_or(self.frequency))
            .map_err(|e| e.at("annual_rate_percent"))
    }

    /// [`Self::periodic_rate`] as the exact ratio it rounds, when it is one
    /// ([`AnnualRate::periodic_ratio`](super::rate::AnnualRate::periodic_ratio)).
    pub fn periodic_ratio(&self) -> Option<(i128, i128)> {
        self.rate
            .periodic_ratio(self.frequency, self.compounding.unwrap_or(self.frequency))
    }

    /// The yearly step as applied: with the flow's sign.
    fn signed_step(&self) -> Decimal {
        if self.question.is_drawdown() {
            -self.deposit_step
        } else {
            self.deposit_step
        }
    }

    /// The pattern of the deposits.
    pub fn pattern(&self) -> Pattern {
        match self.growth {
            Some(g) if !g.percent.is_zero() => match g.every {
                GrowthEvery::Period => Pattern::EachPeriod { ratio: g.ratio() },
                GrowthEvery::Year => Pattern::EachYear { ratio: g.ratio() },
            },
            _ if !self.deposit_step.is_zero() => Pattern::EachYear {
                ratio: Decimal::ONE,
            },
            _ => Pattern::Level,
        }
    }

    /// Every range problem of the terms, each naming its field.
    pub fn problems(&self) -> Vec<EngineError> {
        let mut out = Vec::new();
        let c = self.currency;
        let amount = |field: &'static str, v: Decimal, out: &mut Vec<EngineError>| {
            out.extend(check_amount(field, v, c).err());
        };
        let term = |periods: u32, out: &mut Vec<EngineError>| {
            out.extend(check_periods(periods, "term_periods").err());
        };
        amount("opening_balance", self.opening_balance, &mut out);
        match self.question {
            Question::FinalBalance { flow, periods } => {
                match flow {
                    Flow::Deposit(d) => amount("deposit", d, &mut out),
                    Flow::Withdrawal(w) => amount("withdrawal", w, &mut out),
                }
                term(periods, &mut out);
            }
            Question::DepositForGoal { goal, periods } => {
                amount("goal", goal, &mut out);
                term(periods, &mut out);
            }
            Question::PeriodsToGoal { deposit, goal } => {
                amount("deposit", deposit, &mut out);
                amount("goal", goal, &mut out);
            }
            Question::WithdrawalForTerm { periods } => term(periods, &mut out),
            Question::WithdrawalsSupported { withdrawal } => {
                amount("withdrawal", withdrawal, &mut out);
            }
        }
        amount("deposit_step", self.deposit_step, &mut out);
        if self.question.is_drawdown() && self.opening_balance <= Decimal::ZERO {
            out.push(EngineError::out_of_range(
                "opening_balance",
                "a drawdown needs an opening balance of more than zero",
            ));
        }
        if self.frequency == Frequency::Daily {
            out.push(EngineError::out_of_range(
                "deposit_frequency",
                "deposits cannot be daily; daily is a compounding frequency",
            ));
        }
        if let Some(g) = self.growth {
            let p = self.frequency.per_year();
            if g.percent.is_sign_negative() && !g.percent.is_zero() {
                out.push(EngineError::out_of_range(
                    "deposit_growth_percent",
                    "cannot be negative",
                ));
            } else {
                let too_fast = match g.every {
                    GrowthEvery::Year => g.percent > MAX_GROWTH_PERCENT_A_YEAR,
                    GrowthEvery::Period => {
                        g.percent > MAX_GROWTH_PERCENT_A_YEAR
                            || g.ratio()
                                .checked_powi(i64::from(p))
                                .is_none_or(|y| y > Decimal::TWO)
                    }
                };
                if too_fast {
                    out.push(EngineError::out_of_range(
                        "deposit_growth_percent",
                        match g.every {
                            GrowthEvery::Year => "growth cannot exceed 100 % a year".to_string(),
                            GrowthEvery::Period => format!(
                                "growth cannot exceed 100 % a year: {} % every {} period compounds past it",
                                g.percent.normalize(),
                                self.frequency.name()
                            ),
                        },
                    ));
                }
            }
            if g.every == GrowthEvery::Period && !self.deposit_step.is_zero() {
                out.push(EngineError::out_of_range(
                    "deposit_step",
                    "the fixed step is added once a year; it cannot be combined with growth every period",
                ));
            }
        }
        out
    }

    /// Checks every range at once and returns the first problem.
    ///
    /// # Errors
    /// See [`SavingsTerms::problems`].
    pub fn check(&self) -> Result<()> {
        match self.problems().into_iter().next() {
            Some(e) => Err(e),
            None => Ok(()),
        }
    }
}

/// An amount of a savings plan alone (a balance, deposit, withdrawal, goal or
/// step): not negative, at most 1,000,000,000,000, in the currency's minor units.
///
/// # Errors
/// Out of range, naming `field`.
pub fn check_amount(field: &'static str, v: Decimal, currency: Currency) -> Result<()> {
    if v.is_sign_negative() && !v.is_zero() {
        Err(EngineError::out_of_range(field, "cannot be negative"))
    } else if v > MAX_AMOUNT {
        Err(EngineError::out_of_range(
            field,
            "cannot exceed 1,000,000,000,000",
        ))
    } else if !currency.fits(v) {
        Err(EngineError::out_of_range(
            field,
            too_many_decimals(currency),
        ))
    } else {
        Ok(())
    }
}

/// A savings term in periods alone: 1 to [`MAX_PERIODS`].
///
/// # Errors
/// Out of range, naming `field`.
pub fn check_periods(periods: u32, field: &'static str) -> Result<()> {
    if periods == 0 || periods > MAX_PERIODS {
        return Err(EngineError::out_of_range(
            field,
            format!("the term must be 1 to {MAX_PERIODS} periods"),
        ));
    }
    Ok(())
}

/// Overflow of a balance means a balance far beyond any goal or far below zero:
/// the monotone searches treat it as reached (deposits toward a goal only raise the
/// balance; level withdrawals above the interest only lower it).
fn reached(v: Result<Decimal>, test: impl Fn(Decimal) -> bool) -> Result<bool> {
    match v {
        Ok(v) => Ok(test(v)),
        Err(e) if e.kind == ErrorKind::Overflow => Ok(true),
        Err(e) => Err(e),
    }
}

/// The smallest n in 1..=MAX_PERIODS with done(n), for done monotone, walking from an
/// estimate (off by a step or two) and bisecting should the walk not settle.
fn walk_from(estimate: u32, done: &dyn Fn(u32) -> Result<bool>) -> Result<Option<u32>> {
    if !done(MAX_PERIODS)? {
        return Ok(None);
    }
    let mut n = estimate.clamp(1, MAX_PERIODS);
    for _ in 0..64 {
        if !done(n)? {
            n += 1;
        } else if n > 1 && done(n - 1)? {
            n -= 1;
        } else {
            return Ok(Some(n));
        }
    }
    Ok(bisect(done)?.map(|(n, _)| n))
}

/// [`bisect`] over a binary-floating-point test: the estimate and its evaluations.
fn bisect_estimate(done: &dyn Fn(u32) -> bool) -> Option<(u32, u32)> {
    bisect(&|n| Ok(done(n))).ok().flatten()
}

/// The smallest n with done(n) near an estimate, confirmed exactly: done(n) and
/// not done(n − 1), walking a few periods when the estimate is off; `None` when
/// the walk does not settle (the caller then bisects in decimal).
fn confirm_from(estimate: u32, done: &dyn Fn(u32) -> Result<bool>) -> Result<Option<u32>> {
    let mut n = estimate.clamp(1, MAX_PERIODS);
    for _ in 0..16 {
        if !done(n)? {
            if n == MAX_PERIODS {
                return Ok(None);
            }
            n += 1;
        } else if n > 1 && done(n - 1)? {
            n -= 1;
        } else {
            return Ok(Some(n));
        }
    }
    Ok(None)
}

/// The smallest n in 1..=MAX_PERIODS with done(n) by bisection (done monotone, false at 0),
/// with the number of evaluations.
///
/// The bracket is found by doubling from 16 periods (most goals are reached long
/// before the 6,000-period limit, and early periods have cheaper powers), then
/// bisected.
fn bisect(done: &dyn Fn(u32) -> Result<bool>) -> Result<Option<(u32, u32)>> {
    let mut evaluations = 0;
    let (mut lo, mut hi) = (0u32, 16u32);
    loop {
        evaluations += 1;
        if done(hi)? {
            break;
        }
        if hi == MAX_PERIODS {
            return Ok(None);
        }
        lo = hi;
        hi = (hi * 2).min(MAX_PERIODS);
    }
    while hi - lo > 1 {
        let mid = lo + (hi - lo) / 2;
        evaluations += 1;
        if done(mid)? {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Ok(Some((hi, evaluations)))
}

/// The first k ≥ 1 whose closed-form balance is at or below zero, scanning in growing
/// chunks (growing withdrawals can let the balance rise before it falls).
fn first_at_or_below_zero(form: &PlanForm) -> Result<Option<u32>> {
    let mut n = 64u32;
    let mut scanned = 0u32; // every k ≤ scanned is above zero
    loop {
        let upto = n.min(MAX_PERIODS);
        let values = match form.balances(upto) {
            Ok(v) => v,
            Err(e) if e.kind == ErrorKind::Overflow => {
                // Beyond the decimal range somewhere after the last chunk: one period
                // at a time from there. The balance may have grown past the range
                // (interest outrunning the withdrawals) as well as fallen: an overflow
                // before it reaches zero stays an overflow.
                for k in scanned + 1..=upto {
                    if form.balance_at(k)? <= Decimal::ZERO {
                        return Ok(Some(k));
                    }
                }
                return Err(e);
            }
            Err(e) => return Err(e),
        };
        if let Some(k) = values
            .iter()
            .enumerate()
            .skip(1)
            .find(|(_, v)| **v <= Decimal::ZERO)
            .map(|(k, _)| k as u32)
        {
            return Ok(Some(k));
        }
        if upto == MAX_PERIODS {
            return Ok(None);
        }
        scanned = upto;
        n = n.saturating_mul(4);
    }
}

fn f64_of(d: Decimal) -> f64 {
    d.to_f64().unwrap_or(f64::NAN)
}

/// n ≈ ln((G·i + c)/(x0·i + c))/ln(1 + i), or (G − x0)/c at 0 %: an estimate only.
fn estimate_periods_to_goal(x0: Decimal, i: Decimal, c: Decimal, goal: Decimal) -> u32 {
    let (x0, i, c, g) = (f64_of(x0), f64_of(i), f64_of(c), f64_of(goal));
    let n = if i == 0.0 {
        (g - x0) / c
    } else {
        ((g * i + c) / (x0 * i + c)).ln() / i.ln_1p()
    };
    clamp_estimate(n)
}

/// n ≈ −ln(1 − x0·i/c)/ln(1 + i), or x0/c at 0 %: an estimate only.
fn estimate_withdrawals(x0: Decimal, i: Decimal, c: Decimal) -> u32 {
    let (x0, i, c) = (f64_of(x0), f64_of(i), f64_of(c));
    let n = if i == 0.0 {
        x0 / c
    } else {
        -(1.0 - x0 * i / c).ln() / i.ln_1p()
    };
    clamp_estimate(n)
}

fn clamp_estimate(n: f64) -> u32 {
    if n.is_finite() && n > 0.0 {
        n.ceil().min(f64::from(MAX_PERIODS)) as u32
    } else {
        1
    }
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

/// The deposit that reaches `goal`: the exact one rounded up to the minor unit, raised
/// by a minor unit at a time should interest credited to the minor unit leave the
/// posted ledger short.
#[allow(clippy::too_many_arguments)]
fn post_solved_deposit(
    shape: &FlowShape,
    x0: Decimal,
    step: Decimal,
    i: Decimal,
    currency: Currency,
    goal: Decimal,
    exact: Decimal,
    periods: u32,
    notes: &mut Vec<String>,
) -> Result<(Decimal, SavingsLedger)> {
    let mut deposit = currency.round(exact, RoundingStrategy::AwayFromZero);
    if deposit > MAX_AMOUNT {
        return Err(EngineError::no_solution(
            Some("goal"),
            "the goal needs a deposit above 1,000,000,000,000 a period in this term",
        ));
    }
    let rule = Posting::periods(periods);
    let mut ledger = post(shape, x0, deposit, step, i, currency, rule)?;
    let mut raised = 0;
    while ledger.final_balance < goal && raised < 8 {
        deposit += currency.minor_unit();
        raised += 1;
        ledger = post(shape, x0, deposit, step, i, currency, rule)?;
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

/// Solves and posts a savings plan.
///
/// # Errors
/// Out-of-range terms (each naming its field), a goal that can never be reached or
/// needs more than [`MAX_PERIODS`] periods (no solution), or an overflow.
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
    let currency = terms.currency;
    let frequency = terms.frequency;
    let x0 = terms.opening_balance;
    let shape = FlowShape {
        a,
        exact_rate: terms.periodic_ratio(),
        periods_per_year: frequency.per_year(),
        timing: terms.timing,
        pattern: terms.pattern(),
    };
    let step = terms.signed_step();
    let tf = shape.timing_factor();
    let money = |d: Decimal| currency.format(d);
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
    if let Some(caution) = step_precision_note(&shape, step, currency)? {
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

    let mut solved_flow = None;
    let mut periods_search = None;
    let mut lasts_indefinitely = false;
    let mut goal_period: Option<u32> = None;
    let (flow, ledger) = match terms.question {
        Question::FinalBalance { flow, periods } => {
            let f = flow.signed();
            let ledger = post(&shape, x0, f, step, i, currency, Posting::periods(periods))?;
            if ledger.exhausted {
                let count = ledger.rows.len() as u32;
                let last = -ledger.rows.last().map_or(Decimal::ZERO, |r| r.deposit);
                notes.push(if count < periods {
                    format!(
                        "The balance runs out at withdrawal {count} of the {periods} asked for; the last withdrawal is {}.",
                        money(last)
                    )
                } else {
                    format!(
                        "The last withdrawal, {}, takes what is left of the balance.",
                        money(last)
                    )
                });
            }
            (f, ledger)
        }
        Question::DepositForGoal { goal, periods } => {
            if goal <= x0 {
                notes.push(format!(
                    "The opening balance already meets the goal of {}: no deposit is needed.",
                    money(goal)
                ));
                goal_period = Some(0);
                let rule = Posting::periods(periods);
                let ledger = post(&shape, x0, Decimal::ZERO, step, i, currency, rule)?;
                (Decimal::ZERO, ledger)
            } else {
                let base = shape.solve(x0, Decimal::ZERO, step)?.balance_at(periods)?;
                let unit = shape
                    .solve(Decimal::ZERO, Decimal::ONE, Decimal::ZERO)?
                    .balance_at(periods)?;
                let exact = goal
                    .checked_sub(base)
                    .and_then(|v| v.checked_div(unit))
                    .or_overflow("the deposit")?;
                solved_flow = Some(FlowDerivation {
                    n: periods,
                    target: goal,
                    base_response: base,
                    unit_response: unit,
                    exact,
                });
                if exact <= Decimal::ZERO {
                    notes.push(format!(
                        "The opening balance{} reaches the goal of {} by the end of the term: the deposit needed is zero.",
                        if step.is_zero() { " with its interest" } else { " with its interest and the yearly step" },
                        money(goal)
                    ));
                    let rule = Posting::periods(periods);
                    let ledger = post(&shape, x0, Decimal::ZERO, step, i, currency, rule)?;
                    (Decimal::ZERO, ledger)
                } else {
                    post_solved_deposit(
                        &shape, x0, step, i, currency, goal, exact, periods, &mut notes,
                    )?
                }
            }
        }
        Question::PeriodsToGoal { deposit, goal } => {
            if goal <= x0 {
                notes.push(format!(
                    "The opening balance already meets the goal of {}: no period is needed.",
                    money(goal)
                ));
                goal_period = Some(0);
                let ledger = post(&shape, x0, deposit, step, i, currency, Posting::periods(0))?;
                (deposit, ledger)
            } else {
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
                let form = shape.solve(x0, deposit, step)?;
                let done = |n: u32| reached(form.balance_at(n), |v| v >= goal);
                let (n, method) = if shape.is_level() {
                    let c = deposit.checked_mul(tf).or_overflow("the deposit")?;
                    let estimate = estimate_periods_to_goal(x0, i, c, goal);
                    (
                        walk_from(estimate, &done)?,
                        PeriodSearch::Logarithm { estimate },
                    )
                } else {
                    // Bisection in binary floating point picks n; the decimal closed
                    // form confirms it at n − 1 and n (walking should they disagree).
                    use rust_decimal::prelude::ToPrimitive;
                    let target = goal.to_f64().unwrap_or(f64::NAN);
                    let screened = bisect_estimate(&|n| form.estimate_at(n) >= target);
                    let confirmed = match screened {
                        Some((estimate, _)) => confirm_from(estimate, &done)?,
                        None => None,
                    };
                    match (confirmed, screened) {
                        (Some(n), Some((_, evaluations))) => {
                            (Some(n), PeriodSearch::Bisection { evaluations })
                        }
                        _ => match bisect(&done)? {
                            Some((n, evaluations)) => {
                                (Some(n), PeriodSearch::Bisection { evaluations })
                            }
                            None => (None, PeriodSearch::Bisection { evaluations: 1 }),
                        },
                    }
                };
                let Some(n) = n else {
                    return Err(EngineError::no_solution(
                        Some("goal"),
                        format!(
                            "the goal would take more than {MAX_PERIODS} periods to reach with this deposit"
                        ),
                    ));
                };
                periods_search = Some(PeriodsDerivation {
                    method,
                    n,
                    target: goal,
                    before: form.balance_at(n - 1)?,
                    at: form.balance_at(n).unwrap_or(Decimal::MAX),
                });
                let rule = Posting {
                    limit: MAX_PERIODS,
                    goal: Some(to_minor(goal, currency.minor_units())?),
                    absorb_last: false,
                };
                let ledger = post(&shape, x0, deposit, step, i, currency, rule)?;
                if ledger.final_balance < goal {
                    return Err(EngineError::no_solution(
                        Some("goal"),
                        format!(
                            "with interest credited to the minor unit the goal takes more than {MAX_PERIODS} periods"
                        ),
                    ));
                }
                let posted = ledger.rows.len() as u32;
                goal_period = Some(posted);
                if posted != n {
                    notes.push(format!(
                        "The closed form reaches the goal after {n} periods; with interest credited to the minor unit the posted ledger reaches it after {posted}."
                    ));
                }
                notes.push(format!(
                    "The goal of {} is reached after {posted} periods ({}).",
                    money(goal),
                    duration_text(posted, frequency)
                ));
                (deposit, ledger)
            }
        }
        Question::WithdrawalForTerm { periods } => {
            let base = shape.solve(x0, Decimal::ZERO, step)?.balance_at(periods)?;
            let unit = shape
                .solve(Decimal::ZERO, Decimal::ONE, Decimal::ZERO)?
                .balance_at(periods)?;
            let exact = base
                .checked_div(unit)
                .map(|v| -v)
                .or_overflow("the withdrawal")?;
            solved_flow = Some(FlowDerivation {
                n: periods,
                target: Decimal::ZERO,
                base_response: base,
                unit_response: unit,
                exact,
            });
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
            let ledger = post(&shape, x0, -withdrawal, step, i, currency, rule)?;
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
                money(withdrawal),
                money(last)
            ));
            (-withdrawal, ledger)
        }
        Question::WithdrawalsSupported { withdrawal } => {
            let form = shape.solve(x0, -withdrawal, step)?;
            let c = withdrawal.checked_mul(tf).or_overflow("the withdrawal")?;
            let interest = x0
                .checked_mul(i)
                .or_overflow("the first period's interest")?;
            if shape.is_level() && c <= interest {
                lasts_indefinitely = true;
                notes.push(format!(
                    "The withdrawal{} never exceeds the interest the balance earns ({} a period): it lasts indefinitely. The schedule shows the first year.",
                    if terms.timing == Timing::Start { ", with the interest it would have earned," } else { "" },
                    money(interest)
                ));
                let rule = Posting::periods(shape.periods_per_year);
                let ledger = post(&shape, x0, -withdrawal, step, i, currency, rule)?;
                (-withdrawal, ledger)
            } else {
                let (n, method) = if shape.is_level() {
                    let done = |n: u32| reached(form.balance_at(n), |v| v <= Decimal::ZERO);
                    let estimate = estimate_withdrawals(x0, i, c);
                    (
                        walk_from(estimate, &done)?,
                        PeriodSearch::Logarithm { estimate },
                    )
                } else {
                    (first_at_or_below_zero(&form)?, PeriodSearch::Scan)
                };
                let Some(n) = n else {
                    return Err(EngineError::no_solution(
                        Some("withdrawal"),
                        format!("the balance supports more than {MAX_PERIODS} withdrawals"),
                    ));
                };
                periods_search = Some(PeriodsDerivation {
                    method,
                    n,
                    target: Decimal::ZERO,
                    before: form.balance_at(n - 1)?,
                    at: form.balance_at(n).unwrap_or(Decimal::MIN),
                });
                let rule = Posting::periods(MAX_PERIODS);
                let ledger = post(&shape, x0, -withdrawal, step, i, currency, rule)?;
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
                    duration_text(count, frequency),
                    money(last),
                    if count == n {
                        String::new()
                    } else {
                        format!(" (the closed form, without rounding, runs out at withdrawal {n})")
                    }
                ));
                (-withdrawal, ledger)
            }
        }
    };

    let form = shape.solve(x0, flow, step)?;
    let mut ledger = ledger;
    if let Some(start) = terms.start_date {
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
    }
    if goal_period.is_none() {
        if let Question::DepositForGoal { goal, .. } = terms.question {
            goal_period = ledger
                .rows
                .iter()
                .find(|r| r.balance >= goal)
                .map(|r| r.number);
        }
    }
    let goal_reached_at = match goal_period {
        Some(period) => Some(GoalReached {
            period,
            date: match terms.start_date {
                Some(start) => Some(period_date(start, frequency, period)?),
                None => None,
            },
        }),
        None => None,
    };
    let reconciliation = match reconcile(&ledger, &form, i, currency) {
        Ok(r) => Some(r),
        Err(e) if e.kind == ErrorKind::Overflow => {
            notes.push("The ledger could not be reconciled with the closed form: a^k leaves the range of 28-digit decimals for this term and rate.".into());
            None
        }
        Err(e) => return Err(e),
    };
    let apy = apy_of_rate(
        terms.rate.percent(),
        terms.compounding.unwrap_or(frequency).per_year(),
    )
    .map_err(|e| e.at("annual_rate_percent"))?;
    Ok(SavingsPlan {
        terms: terms.clone(),
        periodic_rate: i,
        flow,
        step,
        solved_flow,
        periods_search,
        form,
        ledger,
        reconciliation,
        goal_reached_at,
        lasts_indefinitely,
        apy,
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    fn close(x: Decimal, want: Decimal, tolerance: &str) {
        assert!(
            (x - want).abs() <= d(tolerance),
            "{x} is not within {tolerance} of {want}"
        );
    }

    fn shape(i: &str, m: u32, timing: Timing, pattern: Pattern) -> FlowShape {
        FlowShape {
            a: Decimal::ONE + d(i),
            exact_rate: None,
            periods_per_year: m,
            timing,
            pattern,
        }
    }

    fn terms(rate: &str, question: Question) -> SavingsTerms {
        SavingsTerms {
            opening_balance: Decimal::ZERO,
            currency: Currency::USD,
            rate: AnnualRate::from_percent(d(rate)).unwrap(),
            frequency: Frequency::Monthly,
            compounding: None,
            timing: Timing::End,
            growth: None,
            deposit_step: Decimal::ZERO,
            question,
            start_date: None,
        }
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

    /// x[0..=n] stepped in decimals with the deposits of the shape (a check, not an answer).
    fn stepped(s: &FlowShape, x0: Decimal, amount: Decimal, step: Decimal, n: u32) -> Vec<Decimal> {
        let mut x = x0;
        let mut out = vec![x];
        for k in 0..n {
            let f = s.flow_at(amount, step, k).unwrap();
            x = match s.timing {
                Timing::End => s.a * x + f,
                Timing::Start => s.a * (x + f),
            };
            out.push(x);
        }
        out
    }

    #[test]
    fn future_value_of_an_ordinary_annuity() {
        // Future value = P·((1 + i)^n − 1)/i (common practice, no source): 100 a month for 120
        // months at 0.5 % a month.
        let s = shape("0.005", 12, Timing::End, Pattern::Level);
        let accumulated = s.solve(Decimal::ZERO, d("100"), Decimal::ZERO).unwrap();
        let want = d("100") * (d("1.005").powi(120) - Decimal::ONE) / d("0.005");
        close(accumulated.balance_at(120).unwrap(), want, "1e-18");
        // Rounded to the cent: 16387.93 (the same formula, evaluated here).
        assert_eq!(Currency::USD.format(want), "16387.93");
    }

    #[test]
    fn future_value_of_an_annuity_due_is_the_ordinary_one_times_one_plus_i() {
        // Future value of an annuity due = P·((1 + i)^n − 1)/i·(1 + i) (common practice, no source).
        let s = shape("0.005", 12, Timing::Start, Pattern::Level);
        let accumulated = s.solve(Decimal::ZERO, d("100"), Decimal::ZERO).unwrap();
        let want = d("100") * (d("1.005").powi(120) - Decimal::ONE) / d("0.005") * d("1.005");
        close(accumulated.balance_at(120).unwrap(), want, "1e-18");
        // The derivation's recurrence is the end-of-period one with the deposit a·d.
        assert_eq!(
            accumulated.period.recurrence.inputs,
            vec![Input::Step {
                amount: d("100.500")
            }]
        );
    }

    #[test]
    fn growing_annuity_matches_its_formula() {
        // Future value = P·(a^n − g^n)/(a − g) for deposits P·g^k at the end of period k + 1
        // (common practice, no source).
        let s = shape(
            "0.004",
            12,
            Timing::End,
            Pattern::EachPeriod { ratio: d("1.002") },
        );
        let accumulated = s.solve(d("0"), d("250"), Decimal::ZERO).unwrap();
        let want = d("250") * (d("1.004").powi(240) - d("1.002").powi(240)) / d("0.002");
        close(accumulated.balance_at(240).unwrap(), want, "1e-16");
    }

    #[test]
    fn growth_equal_to_the_rate_takes_the_double_pole_at_a() {
        // Σ_{j<n} P·a^j·a^(n−1−j) = P·n·a^(n−1) (summed by hand).
        let s = shape(
            "0.004",
            12,
            Timing::End,
            Pattern::EachPeriod { ratio: d("1.004") },
        );
        let accumulated = s.solve(Decimal::ZERO, d("100"), Decimal::ZERO).unwrap();
        assert!(accumulated
            .period
            .fractions
            .iter()
            .any(|f| f.pole == d("1.004") && f.multiplicity == 2));
        let want = d("100") * d("360") * d("1.004").powi(359);
        close(accumulated.balance_at(360).unwrap(), want, "1e-16");
    }

    #[test]
    fn zero_interest_level_deposits_have_a_double_pole_at_one() {
        let s = shape("0", 12, Timing::End, Pattern::Level);
        let accumulated = s.solve(d("500"), d("25"), Decimal::ZERO).unwrap();
        assert_eq!(accumulated.period.fractions.len(), 1);
        assert_eq!(
            (
                accumulated.period.fractions[0].pole,
                accumulated.period.fractions[0].multiplicity
            ),
            (Decimal::ONE, 2)
        );
        assert_eq!(accumulated.balance_at(48).unwrap().normalize(), d("1700"));
    }

    #[test]
    fn zero_interest_with_growing_deposits() {
        // Every period: Σ_{j<n} P·g^j = P·(g^n − 1)/(g − 1), poles at 1 (a) and g.
        let s = shape(
            "0",
            12,
            Timing::End,
            Pattern::EachPeriod { ratio: d("1.01") },
        );
        let accumulated = s.solve(Decimal::ZERO, d("10"), Decimal::ZERO).unwrap();
        close(
            accumulated.balance_at(100).unwrap(),
            d("10") * (d("1.01").powi(100) - Decimal::ONE) / d("0.01"),
            "1e-18",
        );
        // Each year by a fixed step: B[y+1] = B[y] + 12·(c + s·y) has a step and a ramp at
        // A = 1: the ramp's double pole at z = 1 times the pole of A = 1, a triple pole.
        let s = shape(
            "0",
            12,
            Timing::End,
            Pattern::EachYear {
                ratio: Decimal::ONE,
            },
        );
        let accumulated = s.solve(Decimal::ZERO, d("100"), d("10")).unwrap();
        let yearly = accumulated.yearly.as_ref().unwrap();
        assert_eq!(yearly.year.fractions[0].pole, Decimal::ONE);
        assert_eq!(yearly.year.fractions[0].multiplicity, 3);
        // 12·Σ_{y<5} (100 + 10y) = 12·(500 + 100) = 7200.
        assert_eq!(accumulated.balance_at(60).unwrap().normalize(), d("7200"));
        // Each year by a percentage: poles at 1 and g.
        let s = shape("0", 12, Timing::End, Pattern::EachYear { ratio: d("1.03") });
        let accumulated = s.solve(Decimal::ZERO, d("100"), Decimal::ZERO).unwrap();
        let stepped = stepped(&s, Decimal::ZERO, d("100"), Decimal::ZERO, 120);
        for k in [0u32, 1, 11, 12, 13, 59, 60, 119, 120] {
            close(
                accumulated.balance_at(k).unwrap(),
                stepped[k as usize],
                "1e-18",
            );
        }
    }

    #[test]
    fn yearly_growth_two_level_form_matches_stepping_with_staircase_deposits() {
        for timing in [Timing::End, Timing::Start] {
            let s = shape("0.0035", 12, timing, Pattern::EachYear { ratio: d("1.03") });
            let accumulated = s.solve(d("1000"), d("200"), d("15")).unwrap();
            let want = stepped(&s, d("1000"), d("200"), d("15"), 480);
            let all = accumulated.balances(480).unwrap();
            for k in 0..=480u32 {
                close(
                    accumulated.balance_at(k).unwrap(),
                    want[k as usize],
                    "1e-17",
                );
                close(all[k as usize], want[k as usize], "1e-17");
            }
        }
    }

    #[test]
    fn yearly_growth_equal_to_the_yearly_factor_gives_a_double_pole() {
        // Annual deposits growing 5 % a year at 5 %: A = g = 1.05.
        let s = shape(
            "0.05",
            1,
            Timing::End,
            Pattern::EachYear { ratio: d("1.05") },
        );
        let accumulated = s.solve(Decimal::ZERO, d("1000"), Decimal::ZERO).unwrap();
        let yearly = accumulated.yearly.as_ref().unwrap();
        assert!(yearly
            .year
            .fractions
            .iter()
            .any(|f| f.pole == d("1.05") && f.multiplicity == 2));
        close(
            accumulated.balance_at(30).unwrap(),
            d("1000") * d("30") * d("1.05").powi(29),
            "1e-16",
        );
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
    fn bad_terms_name_their_fields() {
        let mut t = terms(
            "4",
            Question::FinalBalance {
                flow: Flow::Deposit(d("-5")),
                periods: 6001,
            },
        );
        t.opening_balance = d("-1");
        t.growth = Some(Growth {
            percent: d("100.01"),
            every: GrowthEvery::Year,
        });
        let fields: Vec<_> = t.problems().into_iter().map(|e| e.field.unwrap()).collect();
        assert_eq!(
            fields,
            vec![
                "opening_balance",
                "deposit",
                "term_periods",
                "deposit_growth_percent"
            ]
        );
        // 6 % a month compounds to more than 100 % a year (1.06^12 ≈ 2.01).
        t = terms(
            "4",
            Question::FinalBalance {
                flow: Flow::Deposit(d("5")),
                periods: 12,
            },
        );
        t.growth = Some(Growth {
            percent: d("6"),
            every: GrowthEvery::Period,
        });
        assert_eq!(t.check().unwrap_err().field, Some("deposit_growth_percent"));
        t.growth = Some(Growth {
            percent: d("5.9"),
            every: GrowthEvery::Period,
        });
        assert!(t.check().is_ok());
        t.deposit_step = d("10");
        assert_eq!(t.check().unwrap_err().field, Some("deposit_step"));
        // A drawdown needs a balance.
        let t = terms(
            "4",
            Question::WithdrawalsSupported {
                withdrawal: d("10"),
            },
        );
        assert_eq!(t.check().unwrap_err().field, Some("opening_balance"));
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

    #[test]
    fn dates_follow_the_payment_series_rules() {
        use crate::engine::apr::PaymentSeries;
        for start in ["2027-01-31", "2027-03-15", "2027-05-16", "2028-02-29"] {
            let start: Date = start.parse().unwrap();
            for frequency in [
                Frequency::Monthly,
                Frequency::Quarterly,
                Frequency::Semiannual,
                Frequency::Annual,
                Frequency::Semimonthly,
                Frequency::Biweekly,
                Frequency::Weekly,
            ] {
                let series = PaymentSeries {
                    amount: Decimal::ZERO,
                    count: 120,
                    first_date: start,
                    frequency,
                }
                .dates()
                .unwrap();
                for (k, want) in series.iter().enumerate() {
                    assert_eq!(period_date(start, frequency, k as u32).unwrap(), *want);
                }
            }
        }
        let start: Date = "2027-01-31".parse().unwrap();
        assert!(period_date(start, Frequency::Annual, 8000).is_err());
    }
}
