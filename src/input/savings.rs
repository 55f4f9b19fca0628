//! The savings plan request: its fields, and the rules across them that decide
//! what is solved (see [`crate::api::savings`] for the table).

use crate::engine::money::Currency;
use crate::engine::rate::{AnnualRate, Frequency};
use crate::engine::savings::{
    check_amount, check_periods, periods_in_months, Flow, Growth, GrowthEvery, Question,
    SavingsTerms, Timing,
};
use crate::input::fields::Fields;
use crate::input::problem::{ApiError, FieldError};
use jiff::civil::Date;
use rust_decimal::Decimal;

const DEPOSIT_FREQUENCIES: [&str; 7] = [
    "annual",
    "semiannual",
    "quarterly",
    "monthly",
    "semimonthly",
    "biweekly",
    "weekly",
];

const COMPOUNDINGS: [&str; 8] = [
    "annual",
    "semiannual",
    "quarterly",
    "monthly",
    "semimonthly",
    "biweekly",
    "weekly",
    "daily",
];

/// The field names of a savings plan request, in the order the guide lists them.
pub const SAVINGS_FIELDS: [&str; 15] = [
    "opening_balance",
    "deposit",
    "withdrawal",
    "deposit_timing",
    "deposit_frequency",
    "deposit_growth_percent",
    "deposit_growth_every",
    "deposit_step",
    "annual_rate_percent",
    "compounding",
    "term_months",
    "term_periods",
    "goal",
    "start_date",
    "currency",
];

/// A date written as ISO 8601 `YYYY-MM-DD`, and a real calendar date.
fn parse_date(text: &str) -> Result<Date, String> {
    let b = text.as_bytes();
    let shaped = b.len() == 10
        && b[4] == b'-'
        && b[7] == b'-'
        && b.iter()
            .enumerate()
            .all(|(i, c)| i == 4 || i == 7 || c.is_ascii_digit());
    if !shaped {
        return Err("must be a date written YYYY-MM-DD (ISO 8601), e.g. 2027-03-01".into());
    }
    let number = |range: std::ops::Range<usize>| text[range].parse::<i16>().unwrap_or(0);
    let (y, m, d) = (number(0..4), number(5..7), number(8..10));
    Date::new(y, m as i8, d as i8).map_err(|_| format!("{text} is not a date of the calendar"))
}

fn present_without_error(f: &Fields<'_>, name: &str) -> bool {
    let pointer = f.pointer(name);
    !f.errors.iter().any(|e| e.pointer == pointer)
}

/// Reads savings terms from request fields (JSON body or query string).
///
/// Returns `None` when a field is bad or missing; every problem is recorded in `f`
/// with its pointer, range problems of the engine included.
pub fn read_savings_terms(f: &mut Fields<'_>) -> Option<SavingsTerms> {
    let currency = match f.text("currency") {
        None => Some(Currency::USD),
        Some(code) => {
            let c = Currency::parse(code);
            if c.is_none() {
                let known: Vec<&str> = Currency::codes().collect();
                f.error(
                    "currency",
                    format!(
                        "is not a currency Residue knows; use one of {}",
                        known.join(", ")
                    ),
                );
            }
            c
        }
    };
    let opening = f.decimal("opening_balance");
    let deposit = f.decimal("deposit");
    let withdrawal = f.decimal("withdrawal");
    let timing = f.choice("deposit_timing", Timing::parse, &["start", "end"]);
    let frequency = f
        .choice(
            "deposit_frequency",
            |s| Frequency::parse(s).filter(|f| *f != Frequency::Daily),
            &DEPOSIT_FREQUENCIES,
        )
        .or_else(|| present_without_error(f, "deposit_frequency").then_some(Frequency::Monthly));
    let growth_percent = f.decimal("deposit_growth_percent");
    let growth_every = f.choice(
        "deposit_growth_every",
        GrowthEvery::parse,
        &["period", "year"],
    );
    let step = f.decimal("deposit_step");
    let rate = f.decimal("annual_rate_percent");
    let compounding = f.choice("compounding", Frequency::parse, &COMPOUNDINGS);
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
    fn dates_must_be_iso_calendar_dates() {
        assert_eq!(parse_date("2027-03-01").unwrap().to_string(), "2027-03-01");
        for bad in [
            "2027-3-01",
            "20270301",
            "2027-02-30",
            "2027-13-01",
            "",
            "2027-03-01T00:00",
        ] {
            assert!(parse_date(bad).is_err(), "{bad}");
        }
    }

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
