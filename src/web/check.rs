//! `/check`: a quoted payment, APR and finance charge checked against the posted
//! loan; the page twin of `GET /api/v1/loans/check`, with the verdicts in words.

use askama::Template;
use axum::extract::RawQuery;
use axum::response::Response;

use super::form::{normalize, query_string, Form};
use super::page::{render_form, Layout};
use super::view::{group_thousands as g, Figure};
use crate::answer::check::{check_answer, CheckAnswer};
use crate::input::fields::{Fields, Source};
use crate::input::http::query_pairs;
use crate::input::problem::ApiError;

/// The check form's groups.
pub const CHECK_FORM: [(&str, bool, &[&str]); 6] = [
    (
        "The loan",
        false,
        &[
            "principal",
            "annual_rate_percent",
            "term_months",
            "term_payments",
            "payment",
        ],
    ),
    (
        "The quote",
        false,
        &[
            "quoted_payment",
            "quoted_apr_percent",
            "quoted_finance_charge",
            "prepaid_finance_charges",
            "mortgage",
        ],
    ),
    (
        "Payments, currency and rounding",
        true,
        &[
            "payment_frequency",
            "compounding",
            "currency",
            "payment_rounding",
            "interest_rounding",
        ],
    ),
    (
        "Dates (an odd first period) and changes over time",
        true,
        &[
            "funding_date",
            "first_payment_date",
            "day_count",
            "odd_days_interest",
            "interest_only_payments",
            "balloon_after_payments",
            "rate_changes",
            "rate_change_keeps",
        ],
    ),
    (
        "Adjustable rate (leave blank for a fixed rate)",
        true,
        &[
            "adjustable.index_percent",
            "adjustable.margin_percent",
            "adjustable.first_change_payment",
            "adjustable.change_every",
            "adjustable.first_change_cap_percent",
            "adjustable.periodic_cap_percent",
            "adjustable.lifetime_max_percent",
            "adjustable.floor_percent",
            "adjustable.rounding",
            "adjustable.payment_cap_percent",
        ],
    ),
    (
        "Mortgage insurance (for In 5 years)",
        true,
        &[
            "mortgage_insurance_monthly",
            "mortgage_insurance_payments",
            "property_value",
        ],
    ),
];

const CHECK_DEFAULTS: [(&str, &str); 2] =
    [("term_months", "360"), ("payment_frequency", "monthly")];

/// A verdict: a headline, whether the quote holds, and the reasoning.
pub struct Verdict {
    pub title: &'static str,
    pub headline: String,
    /// `Some(true)` within tolerance (or matching), `Some(false)` not, `None` nothing quoted.
    pub holds: Option<bool>,
    pub reasoning: Vec<String>,
}

impl Verdict {
    pub fn class(&self) -> &'static str {
        match self.holds {
            Some(true) => "verdict ok",
            Some(false) => "verdict off",
            None => "verdict",
        }
    }
}

/// A computed check.
pub struct CheckResult {
    pub currency: &'static str,
    pub verdicts: Vec<Verdict>,
    pub figures: Vec<Figure>,
    /// (figure, value, as disclosed, rule).
    pub rounding: Vec<(String, String, String, String)>,
    pub notes: Vec<String>,
    pub json_url: String,
    pub loan_url: String,
}

/// The check page.
#[derive(Template)]
#[template(path = "check.html")]
pub struct CheckPage {
    pub layout: Layout,
    pub form: Form,
    pub result: Option<CheckResult>,
}

/// A long figure rounded to four decimals for a sentence (the table keeps it whole).
fn r4(text: &str) -> String {
    text.parse::<rust_decimal::Decimal>()
        .map(|d| d.round_dp(4).normalize().to_string())
        .unwrap_or_else(|_| text.to_string())
}

fn verdicts(a: &CheckAnswer) -> Vec<Verdict> {
    let cur = a.currency;
    let mut v = Vec::new();
    let mut payment = Verdict {
        title: "The payment",
        headline: format!("The computed payment is {} {cur}.", g(&a.computed_payment)),
        holds: a.payment_matches,
        reasoning: vec![format!(
            "Solved in closed form for {} payments and rounded to the cent; the posted ledger then repays the loan exactly, the last payment being {}.",
            a.number_of_payments,
            g(&a.final_payment)
        )],
    };
    if let (Some(q), Some(d), Some(m)) =
        (&a.quoted_payment, &a.payment_difference, a.payment_matches)
    {
        payment.headline = if m {
            format!(
                "The quoted payment of {} matches the computed payment to the cent.",
                g(q)
            )
        } else {
            format!(
                "The quoted payment of {} differs from the computed {} by {} (quote minus computed).",
                g(q),
                g(&a.computed_payment),
                g(d)
            )
        };
        match &a.implied_annual_rate_percent {
            Some(r) => payment.reasoning.push(format!(
                "Over the same term, the quoted payment implies a note rate of {} % a year (found by root finding on the closed form).",
                r4(r)
            )),
            None => payment.reasoning.push(
                "No rate of 0 % or more gives the quoted payment over the same term: it is below what repays the principal alone.".into(),
            ),
        }
    }
    v.push(payment);
    let mut apr = Verdict {
        title: "The APR",
        headline: format!("The computed APR is {} %.", a.apr_percent),
        holds: a.apr_within_tolerance,
        reasoning: vec![
            format!(
                "The APR is the rate at which the payments repay the amount financed, {} (the loan less the prepaid finance charges of {}), by the actuarial method of Regulation Z, Appendix J. Unrounded it is {} %.",
                g(&a.amount_financed),
                g(&a.prepaid_finance_charges_total),
                r4(&a.apr_percent_full)
            ),
            format!(
                "The tolerance is {} of a percentage point (Regulation Z, §1026.22(a)(2) for a regular transaction, §1026.22(a)(3) for an irregular one): the transaction is {}. {}",
                a.apr_tolerance_points, a.apr_transaction, a.apr_tolerance_reason
            ),
        ],
    };
    if let (Some(q), Some(d), Some(ok)) = (
        &a.quoted_apr_percent,
        &a.apr_difference_points,
        a.apr_within_tolerance,
    ) {
        apr.headline = format!(
            "The quoted APR of {q} % is {} the tolerance: it differs from the computed {} % by {} points, against a tolerance of {} points.",
            if ok { "within" } else { "outside" },
            r4(&a.apr_percent_full),
            r4(d),
            a.apr_tolerance_points
        );
    }
    v.push(apr);
    if let Some(t) = &a.finance_charge_tolerance {
        v.push(Verdict {
            title: "The finance charge",
            headline: format!(
                "The quoted finance charge of {} is {} the tolerance: it differs from the computed {} by {}, against a tolerance of {}.",
                g(&t.quoted_finance_charge),
                if t.within_tolerance { "within" } else { "outside" },
                g(&t.finance_charge),
                g(&t.difference),
                g(&t.tolerance)
            ),
            holds: Some(t.within_tolerance),
            reasoning: vec![format!("The rule: {}.", t.rule)],
        });
    }
    v
}

/// Reads and computes with the check API's reader and computation.
///
/// # Errors
/// The API's problem for this query.
pub fn compute(pairs: &[(String, String)]) -> Result<CheckResult, ApiError> {
    let normalized = normalize(pairs, false);
    let mut f = Fields::new(Source::Query(&normalized));
    f.lenient = true;
    let a = check_answer(f)?;
    let query = query_string(&normalized);
    let loan: Vec<(String, String)> = normalized
        .iter()
        .filter(|(k, _)| crate::input::loan::SCHEDULE.field(k).is_some())
        .cloned()
        .collect();
    let five = &a.in_five_years;
    let mut figures = vec![
        Figure::new(
            "Payment",
            g(&a.computed_payment),
            a.computed_payment.clone(),
            a.currency,
        )
        .keyed("computed_payment"),
        Figure::new(
            "Number of payments",
            a.number_of_payments.to_string(),
            a.number_of_payments.to_string(),
            "",
        )
        .keyed("number_of_payments"),
        Figure::new(
            "APR",
            format!("{} %", a.apr_percent),
            a.apr_percent.clone(),
            format!("unrounded {} %", a.apr_percent_full),
        )
        .keyed("apr_percent"),
        Figure::new(
            "Amount financed",
            g(&a.amount_financed),
            a.amount_financed.clone(),
            "",
        )
        .keyed("amount_financed"),
        Figure::new(
            "Finance charge",
            g(&a.finance_charge),
            a.finance_charge.clone(),
            "",
        )
        .keyed("finance_charge"),
        Figure::new(
            "Total of payments",
            g(&a.total_of_payments),
            a.total_of_payments.clone(),
            "",
        )
        .keyed("total_of_payments"),
        Figure::new(
            "Total interest",
            g(&a.total_interest),
            a.total_interest.clone(),
            "",
        )
        .keyed("total_interest"),
        Figure::new(
            "Total interest percentage",
            format!("{} %", a.total_interest_percentage),
            a.total_interest_percentage.clone(),
            "of the loan amount",
        )
        .keyed("total_interest_percentage"),
        Figure::new(
            "In five years",
            g(&five.total_paid),
            five.total_paid.clone(),
            format!(
                "paid through payment {}, of which principal {}",
                five.through_payment,
                g(&five.principal_paid)
            ),
        ),
    ];
    if let Some(r) = &a.implied_annual_rate_percent {
        figures.insert(
            3,
            Figure::new(
                "Rate implied by the quoted payment",
                format!("{} %", r4(r)),
                r.clone(),
                "a year, over the same term",
            )
            .keyed("implied_annual_rate_percent"),
        );
    }
    Ok(CheckResult {
        currency: a.currency,
        verdicts: verdicts(&a),
        figures,
        rounding: a
            .disclosure_rounding
            .iter()
            .map(|r| {
                (
                    r.figure.to_string(),
                    r.value.clone(),
                    r.disclosed.clone(),
                    r.rule.to_string(),
                )
            })
            .collect(),
        notes: a.notes.iter().skip(1).cloned().collect(),
        json_url: format!("/api/v1/loans/check?{query}"),
        loan_url: format!("/loan?{}", query_string(&loan)),
    })
}

/// Builds the page for a query string.
pub fn build(q: Option<&str>) -> CheckPage {
    let (pairs, problem) = match query_pairs(q) {
        Ok(p) => (p, None),
        Err(e) => (vec![], Some(e)),
    };
    let (result, problem) = if pairs.is_empty() {
        (None, problem)
    } else {
        match compute(&pairs) {
            Ok(r) => (Some(r), None),
            Err(e) => (None, Some(e)),
        }
    };
    CheckPage {
        layout: Layout::new("Check a quote", "/check"),
        form: Form::new(
            "/check",
            &[
                crate::input::loan::LOAN,
                crate::input::loan::PLAN,
                crate::input::check::QUOTES,
            ],
            &CHECK_FORM,
            &pairs,
            &CHECK_DEFAULTS,
            problem.as_ref(),
        ),
        result,
    }
}

/// `GET /check?…`
pub async fn page(RawQuery(q): RawQuery) -> Response {
    let page = build(q.as_deref());
    render_form(&page, page.form.status)
}
