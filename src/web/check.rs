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
        super::rows::DATES_GROUP,
        true,
        &[
            "funding_date",
            "first_payment_date",
            "day_count",
            "odd_days_interest",
            "interest_only_payments",
            "balloon_after_payments",
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
        "Mortgage insurance (counted in the In 5 years figures)",
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

/// A verdict: what it is about, whether the quote matches, and why.
pub struct Verdict {
    pub title: &'static str,
    /// "Matches the quote", "Differs from the quote by 15.70", "Within the tolerance"…
    pub status: String,
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

    /// The mark before the status, so a verdict is told by more than colour.
    pub fn mark(&self) -> &'static str {
        match self.holds {
            Some(true) => "✓",
            Some(false) => "✗",
            None => "",
        }
    }
}

/// A computed check.
pub struct CheckResult {
    pub currency: &'static str,
    pub verdicts: Vec<Verdict>,
    pub figures: Vec<Figure>,
    /// (figure, value, as disclosed, rule), for "How this was worked out".
    pub rounding: Vec<(String, String, String, String)>,
    /// The working behind the verdicts, in words (unrounded figures included).
    pub working: Vec<String>,
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

/// A long figure to ten decimals, for a table (the JSON keeps it whole).
fn r10(text: &str) -> String {
    match text.parse::<rust_decimal::Decimal>() {
        Ok(d) if d.scale() > 10 => d.round_dp(10).normalize().to_string(),
        _ => text.to_string(),
    }
}

/// A difference in percentage points, to three decimals as the APR is shown.
fn points(text: &str) -> String {
    text.parse::<rust_decimal::Decimal>()
        .map(|d| crate::engine::disclosure::form_percent(d.abs()).to_string())
        .unwrap_or_else(|_| text.to_string())
}

/// The APR as a disclosure shows it: three decimals, trailing zeros dropped (§1026.37(o)(4)).
fn shown_apr(a: &CheckAnswer) -> String {
    a.apr_percent_full
        .parse::<rust_decimal::Decimal>()
        .map(|d| crate::engine::disclosure::form_percent(d).to_string())
        .unwrap_or_else(|_| a.apr_percent.clone())
}

/// A disclosure figure's name as the form prints it.
fn disclosure_name(figure: &str) -> &str {
    match figure {
        "apr_percent" => "Annual percentage rate",
        "total_interest_percentage" => "Total interest percentage",
        "in_five_years.total_paid" => "In 5 years: total paid",
        "in_five_years.principal_paid" => "In 5 years: principal paid",
        "amount_financed" => "Amount financed",
        "finance_charge" => "Finance charge",
        "total_of_payments" => "Total of payments",
        other => other,
    }
}

/// A disclosure figure written for reading: money grouped by thousands, percentages with "%".
fn readable(figure: &str, value: &str) -> String {
    if figure.ends_with("percent") || figure.ends_with("percentage") {
        format!("{value} %")
    } else {
        g(value)
    }
}

fn verdicts(a: &CheckAnswer) -> Vec<Verdict> {
    let cur = a.currency;
    let apr = shown_apr(a);
    let mut v = Vec::new();
    let mut payment = Verdict {
        title: "The payment",
        status: String::new(),
        headline: format!(
            "The monthly principal and interest come to {} {cur} a payment.",
            g(&a.computed_payment)
        ),
        holds: a.payment_matches,
        reasoning: vec![format!(
            "Over {} payments, rounded to the cent; the last payment, {}, takes up what the rounding leaves.",
            a.number_of_payments,
            g(&a.final_payment)
        )],
    };
    if let (Some(q), Some(d), Some(m)) =
        (&a.quoted_payment, &a.payment_difference, a.payment_matches)
    {
        if m {
            payment.status = "Matches the quote".into();
            payment.headline = format!(
                "The quoted payment of {} is the payment worked out here, to the cent.",
                g(q)
            );
        } else {
            let by = g(d.trim_start_matches('-'));
            payment.status = format!("Differs from the quote by {by}");
            payment.headline = format!(
                "The quote says {}; worked out here it is {}, so the quote is {by} {}.",
                g(q),
                g(&a.computed_payment),
                if d.starts_with('-') { "low" } else { "high" }
            );
        }
        match &a.implied_annual_rate_percent {
            Some(r) => payment.reasoning.push(format!(
                "The quoted payment fits a note rate of {} % a year over the same term.",
                r4(r)
            )),
            None => payment.reasoning.push(
                "No rate of 0 % or more gives the quoted payment over the same term: it is below what repays the principal alone.".into(),
            ),
        }
    }
    v.push(payment);
    let mut apr_verdict = Verdict {
        title: "The APR",
        status: String::new(),
        headline: format!("The APR is {apr} %."),
        holds: a.apr_within_tolerance,
        reasoning: vec![
            format!(
                "The APR is the yearly rate at which the payments repay the amount financed, {} (the loan less the prepaid finance charges of {}), by the actuarial method of Regulation Z, Appendix J.",
                g(&a.amount_financed),
                g(&a.prepaid_finance_charges_total),
            ),
            format!(
                "A quoted APR may differ by up to {} of a percentage point (Regulation Z, §1026.22(a)(2) for a regular transaction, §1026.22(a)(3) for an irregular one); this transaction is {}. {}",
                a.apr_tolerance_points,
                a.apr_transaction,
                super::view::grouped_in_text(&a.apr_tolerance_reason)
            ),
        ],
    };
    if let (Some(q), Some(d), Some(ok)) = (
        &a.quoted_apr_percent,
        &a.apr_difference_points,
        a.apr_within_tolerance,
    ) {
        apr_verdict.status = if ok {
            "Within the tolerance of the quote".into()
        } else {
            "Outside the tolerance of the quote".into()
        };
        apr_verdict.headline = format!(
            "The APR is {apr} %. The quote says {q} %, a difference of {} of a percentage point, against a tolerance of {}.",
            points(d),
            a.apr_tolerance_points
        );
    }
    v.push(apr_verdict);
    if let Some(t) = &a.finance_charge_tolerance {
        v.push(Verdict {
            title: "The finance charge",
            status: if t.within_tolerance {
                "Within the tolerance of the quote".into()
            } else {
                "Outside the tolerance of the quote".into()
            },
            headline: format!(
                "The finance charge is {}. The quote says {}, a difference of {}, against a tolerance of {}.",
                g(&t.finance_charge),
                g(&t.quoted_finance_charge),
                g(t.difference.trim_start_matches('-')),
                g(&t.tolerance)
            ),
            holds: Some(t.within_tolerance),
            reasoning: vec![format!("The rule: {}.", t.rule)],
        });
    }
    v
}

/// The working behind the verdicts: how the payment and the APR were found,
/// with the unrounded figures.
fn working(a: &CheckAnswer) -> Vec<String> {
    let mut w = vec![
        format!(
            "The payment is solved exactly from the loan's period-to-period rule (in closed form) for {} payments and rounded to the cent; the schedule is then posted as a servicing system books it, each period's interest rounded to the cent, and the last payment ({}) repays what is left.",
            a.number_of_payments,
            g(&a.final_payment)
        ),
        format!(
            "Unrounded, the APR is {} % (to ten decimals; the JSON answer gives every digit); a disclosure shows it to three decimals, {} %.",
            r10(&a.apr_percent_full),
            shown_apr(a)
        ),
    ];
    if let (Some(q), Some(d)) = (&a.quoted_apr_percent, &a.apr_difference_points) {
        w.push(format!(
            "The quoted {q} % less the unrounded APR is {} of a percentage point.",
            r4(d)
        ));
    }
    if let Some(r) = &a.implied_annual_rate_percent {
        w.push(format!(
            "The rate that gives the quoted payment, {} % a year, is found by root finding on the closed form.",
            r10(r)
        ));
    }
    w
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
            format!("{}, principal and interest", a.currency),
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
            format!("{} %", shown_apr(&a)),
            a.apr_percent.clone(),
            "",
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
            "In 5 years: total paid",
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
        working: working(&a),
        figures,
        rounding: a
            .disclosure_rounding
            .iter()
            .map(|r| {
                (
                    disclosure_name(r.figure).to_string(),
                    readable(r.figure, &r10(&r.value)),
                    readable(r.figure, &r.disclosed),
                    r.rule.to_string(),
                )
            })
            .collect(),
        notes: super::form::page_notes(&a.notes)
            .into_iter()
            .filter(|n| !n.starts_with("This check is a tool"))
            .collect(),
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
    let (pairs, rows, refused) =
        super::rows::expand(&pairs, &[&super::rows::CHARGES, &super::rows::RATE_CHANGES]);
    let (result, problem) = super::rows::computed(&pairs, refused, problem, compute);
    CheckPage {
        layout: Layout::new("Check a quote", "/check").with_result(result.is_some()),
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
        )
        .with_all_rows(rows),
        result,
    }
}

/// `GET /check?…`
pub async fn page(RawQuery(q): RawQuery) -> Response {
    let page = build(q.as_deref());
    render_form(&page, page.form.status)
}
