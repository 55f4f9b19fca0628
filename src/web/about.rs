//! `/about`: how the figures are worked out, in plain words, with one worked
//! example computed live by the engine (so the page cannot drift from what the
//! service does), and a glossary.

use askama::Template;
use axum::response::Response;
use rust_decimal::Decimal;

use super::mathml::{self, Step};
use super::page::{render, Layout};
use super::view::money;
use crate::engine::money::{Currency, InterestRounding, PaymentRounding};
use crate::engine::rate::{AnnualRate, Frequency};
use crate::engine::schedule::{schedule, LoanSchedule, LoanTerm, LoanTerms};

/// The about page.
#[derive(Template)]
#[template(path = "about.html")]
pub struct AboutPage {
    pub layout: Layout,
    /// The worked example, or why it could not be computed.
    pub example: Result<Example, String>,
}

/// The worked example: a 0 % furniture plan of 2,400 over 18 monthly payments.
pub struct Example {
    pub principal: String,
    pub payment: String,
    pub final_payment: String,
    pub payments: u32,
    pub steps: Vec<Step>,
    /// The closed form evaluated at a few k, against the posted ledger: (k, closed form, ledger).
    pub checks: Vec<(u32, String, String)>,
    /// (number, payment, interest, principal, balance).
    pub rows: Vec<[String; 5]>,
    pub loan_url: String,
}

/// The example's terms (the "0 % furniture plan" of the demo scenarios).
pub fn example_terms() -> LoanTerms {
    LoanTerms {
        principal: Decimal::new(2400, 0),
        currency: Currency::USD,
        rate: AnnualRate::from_percent(Decimal::ZERO).expect("0 % is in range"),
        payment_frequency: Frequency::Monthly,
        compounding: None,
        term: LoanTerm::Payments(18),
        payment_rounding: PaymentRounding::Nearest,
        interest_rounding: InterestRounding::HalfUp,
    }
}

fn example(s: &LoanSchedule) -> Example {
    let c = s.terms.currency;
    let checks = [1u32, 9, 17]
        .iter()
        .filter_map(|&k| {
            let closed = s.solution.closed_form.eval(k).ok()?;
            let posted = s.ledger.rows.get(k as usize - 1)?.balance;
            Some((k, money(c, closed), money(c, posted)))
        })
        .collect();
    Example {
        principal: money(c, s.terms.principal),
        payment: money(c, s.payment),
        final_payment: money(c, s.final_payment),
        payments: s.number_of_payments,
        steps: mathml::steps(&s.solution, "payment"),
        checks,
        rows: s
            .ledger
            .rows
            .iter()
            .map(|r| {
                [
                    r.number.to_string(),
                    money(c, r.payment),
                    money(c, r.interest),
                    money(c, r.principal),
                    money(c, r.balance),
                ]
            })
            .collect(),
        loan_url: "/loan?principal=2400&annual_rate_percent=0&term_months=18".into(),
    }
}

/// `GET /about`
pub async fn page() -> Response {
    render(&AboutPage {
        layout: Layout::new("How the figures are worked out", "/about"),
        example: schedule(&example_terms())
            .map(|s| example(&s))
            .map_err(|e| e.to_string()),
    })
}
