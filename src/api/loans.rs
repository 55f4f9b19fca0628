//! The loan schedule operation: request fields in, JSON or CSV out.

use rust_decimal::Decimal;
use serde::Serialize;

use super::derivation::{full, DerivationDto};
use super::fields::Fields;
use super::problem::{ApiError, FieldError};
use crate::engine::money::{Currency, InterestRounding, PaymentRounding};
use crate::engine::rate::{AnnualRate, Frequency};
use crate::engine::schedule::{payments_in_months, LoanSchedule, LoanTerm, LoanTerms};

const PAYMENT_FREQUENCIES: [&str; 7] = [
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

/// The field names of a loan schedule request, in the order the guide lists them.
pub const LOAN_FIELDS: [&str; 10] = [
    "principal",
    "annual_rate_percent",
    "term_months",
    "term_payments",
    "payment",
    "payment_frequency",
    "compounding",
    "currency",
    "payment_rounding",
    "interest_rounding",
];

/// Reads loan terms from request fields (JSON body or query string).
///
/// # Errors
/// Every bad or missing field, each with its pointer; then any engine range error.
pub fn read_loan_terms(f: &mut Fields<'_>) -> Option<LoanTerms> {
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
    let principal = f.decimal("principal");
    let rate = f.decimal("annual_rate_percent");
    let payment_frequency = f
        .choice(
            "payment_frequency",
            |s| Frequency::parse(s).filter(|f| *f != Frequency::Daily),
            &PAYMENT_FREQUENCIES,
        )
        .or_else(|| {
            (!f.errors
                .iter()
                .any(|e| e.pointer.ends_with("payment_frequency")))
            .then_some(Frequency::Monthly)
        });
    let compounding = f.choice("compounding", Frequency::parse, &COMPOUNDINGS);
    let payment_rounding = f.choice(
        "payment_rounding",
        |s| match s {
            "nearest" => Some(PaymentRounding::Nearest),
            "up" => Some(PaymentRounding::Up),
            _ => None,
        },
        &["nearest", "up"],
    );
    let interest_rounding = f.choice(
        "interest_rounding",
        |s| match s {
            "half_up" => Some(InterestRounding::HalfUp),
            "half_even" => Some(InterestRounding::HalfEven),
            _ => None,
        },
        &["half_up", "half_even"],
    );
    let months = f.count("term_months", 100_000);
    let payments = f.count("term_payments", 100_000);
    let payment = f.decimal("payment");
    let given = [
        f.has("term_months"),
        f.has("term_payments"),
        f.has("payment"),
    ];
    let count = given.iter().filter(|g| **g).count();
    if count == 0 {
        f.error(
            "term_months",
            "give one of term_months, term_payments or payment (the other is solved)",
        );
    } else if count > 1 {
        let name = if given[2] { "payment" } else { "term_payments" };
        f.error(
            name,
            "give only one of term_months, term_payments and payment: the other is solved",
        );
    }
    if principal.is_none() && !f.errors.iter().any(|e| e.pointer.ends_with("principal")) {
        f.error("principal", "is required");
    }
    if rate.is_none()
        && !f
            .errors
            .iter()
            .any(|e| e.pointer.ends_with("annual_rate_percent"))
    {
        f.error("annual_rate_percent", "is required");
    }
    let rate = rate.and_then(|r| match AnnualRate::from_percent(r) {
        Ok(r) => Some(r),
        Err(e) => {
            f.error("annual_rate_percent", e.message);
            None
        }
    });
    let (Some(currency), Some(principal), Some(rate), Some(payment_frequency)) =
        (currency, principal, rate, payment_frequency)
    else {
        return None;
    };
    if !f.errors.is_empty() || count != 1 {
        return None;
    }
    let term = if let Some(m) = months {
        match payments_in_months(m, payment_frequency) {
            Ok(n) => LoanTerm::Payments(n),
            Err(e) => {
                f.error("term_months", e.message);
                return None;
            }
        }
    } else if let Some(n) = payments {
        LoanTerm::Payments(n)
    } else {
        LoanTerm::Payment(payment?)
    };
    Some(LoanTerms {
        principal,
        currency,
        rate,
        payment_frequency,
        compounding,
        term,
        payment_rounding: payment_rounding.unwrap_or_default(),
        interest_rounding: interest_rounding.unwrap_or_default(),
    })
}

/// Turns fields into terms, or into one problem naming every bad field.
///
/// # Errors
/// The problem to answer.
pub fn loan_terms_from(mut f: Fields<'_>) -> Result<LoanTerms, ApiError> {
    let terms = read_loan_terms(&mut f);
    let errors: Vec<FieldError> = match f.finish() {
        Ok(()) => vec![],
        Err(e) => e,
    };
    match terms {
        Some(t) if errors.is_empty() => Ok(t),
        _ => Err(ApiError::fields(errors)),
    }
}

#[derive(Debug, Serialize)]
pub struct SummaryDto {
    pub payment: String,
    pub number_of_payments: u32,
    pub final_payment: String,
    pub total_paid: String,
    pub total_interest: String,
    pub periodic_rate: String,
    pub currency: &'static str,
    pub payment_frequency: &'static str,
}

#[derive(Debug, Serialize)]
pub struct PaymentSolutionDto {
    pub n: u32,
    /// h[n]/s^n with s = max(a, 1).
    pub principal_response_scaled: String,
    /// u[n]/s^n.
    pub payment_response_scaled: String,
    pub exact_payment: String,
    pub posted_payment: String,
    pub text: String,
}

#[derive(Debug, Serialize)]
pub struct ReconciliationDto {
    pub largest_drift: String,
    pub at_payment: u32,
    pub final_payment_drift: String,
    pub drift_bound: String,
    pub text: String,
}

#[derive(Debug, Serialize)]
pub struct RowDto {
    pub number: u32,
    pub payment: String,
    pub interest: String,
    pub principal: String,
    pub balance: String,
}

#[derive(Debug, Serialize)]
pub struct LoanDerivationDto {
    #[serde(flatten)]
    pub closed_form: DerivationDto,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub payment: Option<PaymentSolutionDto>,
}

/// The JSON answer of the schedule operation.
#[derive(Debug, Serialize)]
pub struct LoanScheduleDto {
    pub summary: SummaryDto,
    pub derivation: LoanDerivationDto,
    pub reconciliation: Option<ReconciliationDto>,
    pub schedule: Vec<RowDto>,
    pub notes: Vec<String>,
}

impl LoanScheduleDto {
    pub fn from_schedule(s: &LoanSchedule) -> Self {
        let c = s.terms.currency;
        let money = |d: Decimal| c.format(d);
        let mut closed_form = DerivationDto::from_solution(&s.solution);
        let payment = s.payment_derivation.as_ref().map(|p| {
            let rule = match s.terms.payment_rounding {
                PaymentRounding::Nearest => "to the nearest minor unit",
                PaymentRounding::Up => "up to the next minor unit",
            };
            PaymentSolutionDto {
                n: p.n,
                principal_response_scaled: full(p.principal_response),
                payment_response_scaled: full(p.payment_response),
                exact_payment: full(p.exact_payment),
                posted_payment: money(s.payment),
                text: format!(
                    "Setting x[{n}] = 0 in principal·h[{n}] − P·u[{n}] = 0 gives P = principal·h[{n}]/u[{n}] = {} ({}), posted as {} (rounded {rule}).",
                    full(p.exact_payment.round_dp(12)),
                    "h is the closed form of a unit principal with no payment, u of a unit payment with no principal",
                    money(s.payment),
                    n = p.n
                ),
            }
        });
        if let Some(p) = &payment {
            closed_form.steps.push(p.text.clone());
        }
        let reconciliation = s.reconciliation.map(|r| {
            let text = format!(
                "The posted ledger rounds each period's interest to the minor unit. Against the closed form with the posted payment its balance drifts at most {} (at payment {}); rounding can drift it no more than {} by then. The final payment differs from the closed form's a·x[n−1] by {}.",
                full(r.largest_drift.round_dp(6)),
                r.at_payment,
                full(r.bound.round_dp(6)),
                full(r.final_payment_drift.round_dp(6))
            );
            ReconciliationDto {
                largest_drift: full(r.largest_drift.round_dp(12)),
                at_payment: r.at_payment,
                final_payment_drift: full(r.final_payment_drift.round_dp(12)),
                drift_bound: full(r.bound.round_dp(12)),
                text,
            }
        });
        if let Some(r) = &reconciliation {
            closed_form.steps.push(r.text.clone());
        }
        LoanScheduleDto {
            summary: SummaryDto {
                payment: money(s.payment),
                number_of_payments: s.number_of_payments,
                final_payment: money(s.final_payment),
                total_paid: money(s.ledger.total_paid),
                total_interest: money(s.ledger.total_interest),
                periodic_rate: full(s.periodic_rate),
                currency: c.code(),
                payment_frequency: s.terms.payment_frequency.name(),
            },
            derivation: LoanDerivationDto {
                closed_form,
                payment,
            },
            reconciliation,
            schedule: s
                .ledger
                .rows
                .iter()
                .map(|r| RowDto {
                    number: r.number,
                    payment: money(r.payment),
                    interest: money(r.interest),
                    principal: money(r.principal),
                    balance: money(r.balance),
                })
                .collect(),
            notes: s.notes.clone(),
        }
    }
}

/// The schedule as CSV (RFC 4180): a header row, then one row a payment.
pub fn schedule_csv(s: &LoanSchedule) -> String {
    let c = s.terms.currency;
    let mut out = String::with_capacity(64 * (s.ledger.rows.len() + 1));
    out.push_str("number,payment,interest,principal,balance\r\n");
    for r in &s.ledger.rows {
        out.push_str(&format!(
            "{},{},{},{},{}\r\n",
            r.number,
            c.format(r.payment),
            c.format(r.interest),
            c.format(r.principal),
            c.format(r.balance)
        ));
    }
    out
}
