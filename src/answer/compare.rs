//! The comparison's answer: each plan's payment, term, interest and what it
//! saves against the base, computed once for the API and the compare page.

use crate::engine::schedule::{schedule_for_comparison, LoanSchedule, CAUTION};
use crate::input::json::Json;
use crate::input::loan::ScheduleRequest;
use crate::input::problem::{ApiError, FieldError};
use rust_decimal::Decimal;
use serde::Serialize;

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct CompareRowDto {
    pub label: String,
    pub payment: String,
    pub number_of_payments: u32,
    pub total_interest: String,
    pub total_paid: String,
    pub payoff_date: Option<String>,
    /// Against the base plan (negative: this plan costs more).
    pub interest_saved: String,
    /// Against the base plan; null when this plan's payments fall at another
    /// frequency than the base's (counts of unlike payments are not compared).
    pub payments_saved: Option<i64>,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct CompareDto {
    pub currency: &'static str,
    pub rows: Vec<CompareRowDto>,
    pub notes: Vec<String>,
}

/// The computed plans of a comparison, base first, with their labels.
pub struct Comparison {
    pub plans: Vec<(String, LoanSchedule)>,
}

/// Computes every plan of a comparison (in the base's currency).
///
/// # Errors
/// The problem to answer.
pub fn compute(requests: Vec<(ScheduleRequest, String)>) -> Result<Comparison, ApiError> {
    // Savings are differences of amounts: every plan in the base's currency.
    let base_currency = requests.first().map(|(r, _)| r.terms.currency);
    let errors: Vec<FieldError> = requests
        .iter()
        .filter(|(r, _)| Some(r.terms.currency) != base_currency)
        .map(|(r, pointer)| {
            FieldError::new(
                format!("{pointer}currency"),
                format!(
                    "must be the base plan's currency ({}), not {}: savings are compared in one currency",
                    base_currency.map_or("", |c| c.code()),
                    r.terms.currency.code()
                ),
            )
        })
        .collect();
    if !errors.is_empty() {
        return Err(ApiError::fields(errors));
    }
    let work = requests
        .iter()
        .map(|(r, _)| crate::engine::plan::expected_work(&r.terms, &r.options))
        .sum();
    let _weight = crate::weight::weigh(work)?;
    let mut plans = Vec::with_capacity(requests.len());
    for (index, (r, pointer)) in requests.into_iter().enumerate() {
        let s =
            schedule_for_comparison(&r.terms, &r.options).map_err(|e| r.problem(e, &pointer))?;
        let label = r.label.unwrap_or_else(|| {
            if index == 0 {
                "base".into()
            } else {
                format!("plan {}", index + 1)
            }
        });
        plans.push((label, s));
    }
    Ok(Comparison { plans })
}

impl CompareDto {
    pub fn from_comparison(c: &Comparison) -> Self {
        let base = &c.plans[0].1;
        let currency = base.terms.currency;
        let rows = c
            .plans
            .iter()
            .map(|(label, s)| {
                let money = |d: Decimal| s.terms.currency.format(d);
                CompareRowDto {
                    label: label.clone(),
                    payment: money(s.payment),
                    number_of_payments: s.number_of_payments,
                    total_interest: money(s.ledger.total_interest),
                    total_paid: money(s.ledger.total_paid),
                    payoff_date: s.payoff_date.map(|d| d.to_string()),
                    interest_saved: money(base.ledger.total_interest - s.ledger.total_interest),
                    payments_saved: (s.terms.payment_frequency == base.terms.payment_frequency)
                        .then(|| {
                            i64::from(base.number_of_payments) - i64::from(s.number_of_payments)
                        }),
                }
            })
            .collect();
        let mut notes = vec![
            CAUTION.to_string(),
            "Savings are measured against the first plan (the base).".to_string(),
        ];
        if c.plans
            .iter()
            .any(|(_, s)| s.terms.payment_frequency != base.terms.payment_frequency)
        {
            notes.push(format!(
                "Plans paid at another frequency than the base ({}) leave payments saved empty: their payments are not alike, so their counts are not compared; compare their interest and payoff instead.",
                base.terms.payment_frequency.name()
            ));
        }
        CompareDto {
            currency: currency.code(),
            rows,
            notes,
        }
    }
}

/// Reads and computes a JSON comparison.
///
/// # Errors
/// The problem to answer, pointing into `base` or `variants/N`.
pub fn from_json(body: &Json) -> Result<Comparison, ApiError> {
    compute(crate::input::compare::read_json(body)?)
}

/// Reads and computes a query comparison.
///
/// # Errors
/// The problem to answer.
pub fn from_query(pairs: &[(String, String)]) -> Result<Comparison, ApiError> {
    compute(crate::input::compare::read_query(pairs)?)
}

/// As [`from_query`]; with `lenient`, each plan's fields are read as a person
/// types them ("6.5%", "$1,250"), as the pages read them.
///
/// # Errors
/// The problem to answer.
pub fn from_query_with(pairs: &[(String, String)], lenient: bool) -> Result<Comparison, ApiError> {
    compute(crate::input::compare::read_query_with(pairs, lenient)?)
}
