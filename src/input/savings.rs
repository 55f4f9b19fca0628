//! The savings plan request: its fields, and the rules across them that decide
//! what is solved (see [`crate::api::savings`] for the table).

use crate::engine::money::Currency;
use crate::engine::rate::{AnnualRate, Frequency};
use crate::engine::savings::{
    check_amount, check_periods, periods_in_months, Flow, Growth, GrowthEvery, Question,
    SavingsTerms, Timing,
};
use crate::input::fields::{parse_date, Fields};
use crate::input::problem::{ApiError, FieldError};
use rust_decimal::Decimal;

use super::table::{
    choice, Choice, Field, Kind, Table, COMPOUNDINGS, CURRENCY, PAYMENT_FREQUENCIES,
};

const TIMINGS: &[Choice] = &[
    choice("start", "At the start of each period"),
    choice("end", "At the end of each period"),
];
const GROWTH_EVERY: &[Choice] = &[
    choice("period", "Every period"),
    choice("year", "Once a year"),
];

/// The fields of a savings plan request; what is solved follows from what is given.
pub const SAVINGS_FIELDS: &[Field] = &[
    Field::new(
        "opening_balance",
        Kind::Money,
        "What is in the account at the start (default 0).",
    )
    .example("1000")
    .form(
        "Opening balance",
        "What is in the account today, for example 1,000. Leave empty for none.",
        "",
    ),
    Field::new("deposit", Kind::Money, "Each period's deposit.")
        .example("300")
        .form(
            "Deposit",
            "Paid in each period, for example 300. Leave empty to work out the deposit that reaches the goal.",
            "",
        ),
    Field::new(
        "withdrawal",
        Kind::Money,
        "Each period's withdrawal, for a drawdown (instead of a deposit).",
    )
    .example("2500")
    .form(
        "Withdrawal",
        "Taken out each period instead of a deposit, for example 1,400. Leave the term empty to see how long the balance lasts.",
        "",
    ),
    Field::new(
        "deposit_timing",
        Kind::Choice {
            choices: TIMINGS,
            default: "At the end of each period (default)",
        },
        "When deposits are made in each period (default end).",
    )
    .example("end")
    .form("Deposits made", "", ""),
    Field::new(
        "deposit_frequency",
        Kind::Choice {
            choices: PAYMENT_FREQUENCIES,
            default: "Monthly (default)",
        },
        "How often deposits are made (default monthly).",
    )
    .example("monthly")
    .form(
        "Deposits every",
        "Also sets the length of a period, and how often withdrawals are made.",
        "",
    ),
    Field::new(
        "deposit_growth_percent",
        Kind::Percent,
        "Deposits grow by this percentage.",
    )
    .example("3")
    .form(
        "Deposit grows by (%)",
        "For example 3, to raise the deposit by 3 % each time growth is applied.",
        "",
    ),
    Field::new(
        "deposit_growth_every",
        Kind::Choice {
            choices: GROWTH_EVERY,
            default: "Once a year (default)",
        },
        "How often deposit growth applies (default year).",
    )
    .example("year")
    .form("Growth applied", "", ""),
    Field::new(
        "deposit_step",
        Kind::Money,
        "Deposits grow each year by this amount.",
    )
    .example("10")
    .form(
        "Deposit grows each year by",
        "A fixed amount, for example 10 more each year.",
        "",
    ),
    Field::new(
        "annual_rate_percent",
        Kind::Percent,
        "The nominal annual rate in percent.",
    )
    .required()
    .example("4")
    .form(
        "Interest rate (% a year)",
        "The nominal annual rate the account pays, for example 4.",
        "",
    ),
    Field::new(
        "compounding",
        Kind::Choice {
            choices: COMPOUNDINGS,
            default: "As often as deposits are made",
        },
        "How often interest compounds (default: the deposit frequency).",
    )
    .example("monthly")
    .form("Interest compounds", "", ""),
    Field::new(
        "term_months",
        Kind::Whole { min: 0, max: None },
        "The term in months. A term is term_months or term_periods.",
    )
    .example("120")
    .form(
        "Term in months",
        "For example 120 for 10 years. Leave empty to see when the goal is reached, or how long the balance lasts.",
        "",
    ),
    Field::new(
        "term_periods",
        Kind::Whole { min: 0, max: None },
        "The term in periods of the deposit frequency.",
    )
    .example("120")
    .form(
        "Number of periods",
        "Instead of the term in months: how many deposits or withdrawals, for example 40 for 10 years of quarterly deposits.",
        "",
    ),
    Field::new("goal", Kind::Money, "The balance to reach.")
        .example("25000")
        .form(
            "Goal",
            "The balance to reach, for example 25,000. Leave the deposit or the term empty to have it worked out.",
            "",
        ),
    Field::new("start_date", Kind::Date, "ISO 8601; dates every period.")
        .example("2027-01-04")
        .form(
            "Start date",
            "Optional: gives every period a date (YYYY-MM-DD, for example 2027-01-04).",
            "",
        ),
    CURRENCY,
];

/// The savings plan request.
pub const SAVINGS: Table = Table {
    schema: "SavingsPlanRequest",
    doc: "The fields of a savings plan request; what is solved follows from what is given (see the guide).",
    groups: &[SAVINGS_FIELDS],
    except: &[],
    all_optional: false,
};

fn present_without_error(f: &Fields<'_>, name: &str) -> bool {
    let pointer = f.pointer(name);
    !f.errors.iter().any(|e| e.pointer == pointer)
}

/// Reads savings terms from request fields (JSON body or query string).
///
/// Returns `None` when a field is bad or missing; every problem is recorded in `f`
/// with its pointer, range problems of the engine included.
pub fn read_savings_terms(f: &mut Fields<'_>) -> Option<SavingsTerms> {
    let currency = f.currency(Currency::USD);
    let opening = f.decimal("opening_balance");
    let deposit = f.decimal("deposit");
    let withdrawal = f.decimal("withdrawal");
    let timing = f.pick(SAVINGS_FIELDS, "deposit_timing", Timing::parse);
    let frequency = f
        .pick(SAVINGS_FIELDS, "deposit_frequency", |s| {
            Frequency::parse(s).filter(|f| *f != Frequency::Daily)
        })
        .or_else(|| present_without_error(f, "deposit_frequency").then_some(Frequency::Monthly));
    let growth_percent = f.decimal("deposit_growth_percent");
    let growth_every = f.pick(SAVINGS_FIELDS, "deposit_growth_every", GrowthEvery::parse);
    let step = f.decimal("deposit_step");
    let rate = f.decimal("annual_rate_percent");
    let compounding = f.pick(SAVINGS_FIELDS, "compounding", Frequency::parse);
    let months = f.whole("term_months", "120");
    let periods = f.whole("term_periods", "120");
    let goal = f.decimal("goal");
    let start_date = match f.text("start_date") {
        None => None,
        Some(t) => match parse_date(t) {
            Ok(d) => Some(d),
            Err(message) => {
                f.error("start_date", message);
                None
            }
        },
    };

    // Each field's own range first, so that every bad field is named at once; the
    // rules across fields only once each field alone is valid.
    let amounts_in = currency.unwrap_or(Currency::USD);
    let opening = opening.filter(|v| f.in_range(check_amount("opening_balance", *v, amounts_in)));
    let deposit = deposit.filter(|v| f.in_range(check_amount("deposit", *v, amounts_in)));
    let withdrawal = withdrawal.filter(|v| f.in_range(check_amount("withdrawal", *v, amounts_in)));
    let goal = goal.filter(|v| f.in_range(check_amount("goal", *v, amounts_in)));
    let step = step.filter(|v| f.in_range(check_amount("deposit_step", *v, amounts_in)));
    let months = months.filter(|m| match frequency {
        Some(frequency) => f.in_range(periods_in_months(*m, frequency).map(|_| ())),
        None => true,
    });
    let periods = periods.filter(|n| f.in_range(check_periods(*n, "term_periods")));
    let rate = rate.and_then(|r| match AnnualRate::from_percent(r) {
        Ok(r) => Some(r),
        Err(e) => {
            f.error("annual_rate_percent", e.message);
            None
        }
    });
    let fields_ok = f.errors.is_empty();

    let has_deposit = f.has("deposit");
    let has_withdrawal = f.has("withdrawal");
    let has_months = f.has("term_months");
    let has_periods = f.has("term_periods");
    let has_goal = f.has("goal");
    let combination_ok = !fields_ok
        || cross_field_rules(
            f,
            has_deposit,
            has_withdrawal,
            has_months,
            has_periods,
            has_goal,
        );
    if rate.is_none() && present_without_error(f, "annual_rate_percent") {
        f.error("annual_rate_percent", "is required");
    }
    let (Some(currency), Some(rate), Some(frequency)) = (currency, rate, frequency) else {
        return None;
    };
    if !f.errors.is_empty() || !combination_ok {
        return None;
    }
    let term = if let Some(m) = months {
        match periods_in_months(m, frequency) {
            Ok(n) => Some(n),
            Err(e) => {
                f.error("term_months", e.message);
                return None;
            }
        }
    } else {
        periods
    };
    let question = match (deposit, withdrawal, term, goal) {
        (Some(deposit), None, Some(periods), None) => Question::FinalBalance {
            flow: Flow::Deposit(deposit),
            periods,
        },
        (Some(deposit), None, None, Some(goal)) => Question::PeriodsToGoal { deposit, goal },
        (None, None, Some(periods), Some(goal)) => Question::DepositForGoal { goal, periods },
        (None, Some(w), Some(periods), None) => Question::FinalBalance {
            flow: Flow::Withdrawal(w),
            periods,
        },
        (None, Some(withdrawal), None, None) => Question::WithdrawalsSupported { withdrawal },
        (None, None, Some(periods), None) => Question::WithdrawalForTerm { periods },
        // Each other combination was recorded as an error above.
        _ => return None,
    };
    let growth = growth_percent.map(|percent| Growth {
        percent,
        every: growth_every.unwrap_or_default(),
    });
    let terms = SavingsTerms {
        opening_balance: opening.unwrap_or(Decimal::ZERO),
        currency,
        rate,
        frequency,
        compounding,
        timing: timing.unwrap_or_default(),
        growth,
        deposit_step: step.unwrap_or(Decimal::ZERO),
        question,
        start_date,
    };
    let problems = terms.problems();
    for e in &problems {
        f.error(e.field.unwrap_or(""), e.message.clone());
    }
    problems.is_empty().then_some(terms)
}

/// The rules across the savings fields (which combination asks which question),
/// recorded in `f`; true when the combination is one Residue answers.
fn cross_field_rules(
    f: &mut Fields<'_>,
    has_deposit: bool,
    has_withdrawal: bool,
    has_months: bool,
    has_periods: bool,
    has_goal: bool,
) -> bool {
    let has_term = has_months || has_periods;
    if has_deposit && has_withdrawal {
        f.error(
            "withdrawal",
            "give either deposit or withdrawal, not both: a plan either saves or draws down",
        );
    }
    if has_months && has_periods {
        f.error(
            "term_periods",
            "give only one of term_months and term_periods",
        );
    }
    if f.has("deposit_growth_every") && !f.has("deposit_growth_percent") {
        f.error(
            "deposit_growth_every",
            "has no effect without deposit_growth_percent",
        );
    }
    match (has_deposit, has_withdrawal, has_term, has_goal) {
        (true, true, _, _) => false,
        (true, false, true, true) => {
            f.error(
                "goal",
                "with a deposit give a term (to find the final balance) or a goal (to find when it is reached), not both",
            );
            false
        }
        (true, false, false, false) => {
            f.error(
                "term_months",
                "give term_months or term_periods (to find the final balance) or goal (to find when it is reached)",
            );
            false
        }
        (false, true, _, true) => {
            f.error(
                "goal",
                "a goal is for deposits: with a withdrawal give a term (to find the final balance) or nothing more (to find how many withdrawals the balance supports)",
            );
            false
        }
        (false, false, false, true) => {
            f.error(
                "deposit",
                "with a goal give a deposit (to find when the goal is reached) or a term (to find the deposit that reaches it)",
            );
            false
        }
        (false, false, false, false) => {
            f.error(
                "deposit",
                "give a deposit or a withdrawal with a term or a goal; or a term and a goal (to find the deposit); or a term alone (to find the withdrawal that exhausts the opening balance)",
            );
            false
        }
        _ => true,
    }
}

/// Turns fields into terms, or into one problem naming every bad field.
///
/// # Errors
/// The problem to answer.
pub fn savings_terms_from(mut f: Fields<'_>) -> Result<SavingsTerms, ApiError> {
    let terms = read_savings_terms(&mut f);
    let errors: Vec<FieldError> = match f.finish() {
        Ok(()) => vec![],
        Err(e) => e,
    };
    match terms {
        Some(t) if errors.is_empty() => Ok(t),
        _ => Err(ApiError::fields(errors)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::fields::Source;

    #[test]
    fn exactly_enough_fields_fix_the_unknown() {
        let read = |pairs: &[(&str, &str)]| {
            let owned: Vec<(String, String)> = pairs
                .iter()
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect();
            let mut f = Fields::new(Source::Query(&owned));
            let t = read_savings_terms(&mut f).map(|t| t.question);
            (t, f.errors)
        };
        let (q, _) = read(&[
            ("annual_rate_percent", "4"),
            ("deposit", "100"),
            ("term_months", "12"),
        ]);
        assert!(matches!(
            q,
            Some(Question::FinalBalance {
                flow: Flow::Deposit(_),
                periods: 12
            })
        ));
        let (q, _) = read(&[
            ("annual_rate_percent", "4"),
            ("goal", "1000"),
            ("term_periods", "12"),
        ]);
        assert!(matches!(q, Some(Question::DepositForGoal { .. })));
        let (q, _) = read(&[
            ("annual_rate_percent", "4"),
            ("opening_balance", "1000"),
            ("term_periods", "12"),
        ]);
        assert!(matches!(
            q,
            Some(Question::WithdrawalForTerm { periods: 12 })
        ));
        let (q, errors) = read(&[
            ("annual_rate_percent", "4"),
            ("deposit", "100"),
            ("goal", "1000"),
            ("term_periods", "12"),
        ]);
        assert!(q.is_none());
        assert_eq!(errors[0].pointer, "goal");
    }
}
