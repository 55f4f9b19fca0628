//! The terms of a savings plan: opening balance, rate, deposit frequency and
//! timing, growth, and the one question asked; the ranges each accepts, and the
//! dates of its periods.

use jiff::civil::Date;
use rust_decimal::{Decimal, MathematicalOps};

use crate::engine::error::{EngineError, Result};
use crate::engine::money::Currency;
use crate::engine::rate::{AnnualRate, Frequency};
use crate::engine::terms::{too_many_decimals, MAX_PAYMENTS, MAX_PRINCIPAL};

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
    /// The growth in percent.
    pub percent: Decimal,
    /// How often the deposits grow.
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
    /// Money put in each period.
    Deposit(Decimal),
    /// Money taken out each period.
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
    FinalBalance {
        /// The deposit or withdrawal each period.
        flow: Flow,
        /// How many periods.
        periods: u32,
    },
    /// The level (or first) deposit that reaches `goal` at the end of `periods` periods.
    DepositForGoal {
        /// The balance wanted.
        goal: Decimal,
        /// How many periods.
        periods: u32,
    },
    /// The number of periods `deposit` needs to reach `goal`.
    PeriodsToGoal {
        /// The level (or first) deposit.
        deposit: Decimal,
        /// The balance wanted.
        goal: Decimal,
    },
    /// The level (or first) withdrawal that exhausts the opening balance in `periods` periods.
    WithdrawalForTerm {
        /// How many periods.
        periods: u32,
    },
    /// How many withdrawals of `withdrawal` the opening balance supports.
    WithdrawalsSupported {
        /// The level (or first) withdrawal.
        withdrawal: Decimal,
    },
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
    /// The balance at the start.
    pub opening_balance: Decimal,
    /// The currency of every amount.
    pub currency: Currency,
    /// The nominal annual rate.
    pub rate: AnnualRate,
    /// How often deposits (or withdrawals) are made; also the ledger's period.
    pub frequency: Frequency,
    /// `None`: interest compounds at the deposit frequency.
    pub compounding: Option<Frequency>,
    /// When in each period the deposit (or withdrawal) is made.
    pub timing: Timing,
    /// How the deposits grow, when they do.
    pub growth: Option<Growth>,
    /// A fixed amount added to the deposit (or withdrawal) once a year; zero for none.
    pub deposit_step: Decimal,
    /// What is asked.
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
    EachPeriod {
        /// g.
        ratio: Decimal,
    },
    /// c·g^y + s·y in every period of year y (s the yearly step; g may be 1).
    EachYear {
        /// g.
        ratio: Decimal,
    },
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
/// [`crate::engine::calendar::due_date`], the one rule that dates every schedule.
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
    crate::engine::calendar::due_date(start, frequency, i64::from(k), "start_date").map_err(|_| {
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
    /// ([`AnnualRate::periodic_ratio`](crate::engine::rate::AnnualRate::periodic_ratio)).
    pub fn periodic_ratio(&self) -> Option<(i128, i128)> {
        self.rate
            .periodic_ratio(self.frequency, self.compounding.unwrap_or(self.frequency))
    }

    /// The yearly step as applied: with the flow's sign.
    pub(super) fn signed_step(&self) -> Decimal {
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

#[cfg(test)]
pub(super) mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    /// Monthly USD terms with no opening balance, asking `question` at `rate` percent.
    pub(in crate::engine::savings) fn terms(rate: &str, question: Question) -> SavingsTerms {
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
