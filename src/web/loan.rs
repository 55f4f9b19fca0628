//! `/loan`: one loan's schedule, the page twin of `GET /api/v1/loans/schedule`.

use askama::Template;
use axum::extract::RawQuery;
use axum::response::Response;
use rust_decimal::Decimal;

use super::charts::{balance_chart, stacked_bars, Bar, BarWords, Series};
use super::form::{normalize, query_string, Form};
use super::mathml::{self, Step};
use super::page::{render_form, Layout};
use super::view::{money, percent, span, year_of, Figure, Schedule, Year, UNFOLDED_ROWS};
use crate::engine::schedule::{schedule_with, LoanSchedule};
use crate::input::fields::{Fields, Source};
use crate::input::http::query_pairs;
use crate::input::loan::schedule_request_from;
use crate::input::problem::ApiError;

/// The loan form's groups: (legend, folded, fields).
pub const LOAN_FORM: [(&str, bool, &[&str]); 5] = [
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
        "Payments and currency",
        false,
        &["payment_frequency", "compounding", "currency"],
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
            "property_value",
            "payment_rounding",
            "interest_rounding",
            "label",
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
            "rate_path",
            "index_values",
        ],
    ),
    (
        "Full monthly payment: escrow and mortgage insurance",
        true,
        &[
            "escrow_monthly",
            "mortgage_insurance_monthly",
            "mortgage_insurance_payments",
        ],
    ),
];

/// The values of an empty form.
pub const LOAN_DEFAULTS: [(&str, &str); 3] = [
    ("term_months", "360"),
    ("payment_frequency", "monthly"),
    ("currency", "USD"),
];

/// The loan schedule page.
#[derive(Template)]
#[template(path = "loan.html")]
pub struct LoanPage {
    pub layout: Layout,
    /// The form, with the values typed and the errors next to their fields.
    pub form: Form,
    /// The result, when the query computed one.
    pub result: Option<LoanResult>,
}

/// A segment's closed form, for the derivation panel.
pub struct SegmentView {
    pub title: String,
    pub words: String,
    pub recurrence: String,
    pub closed_form: String,
}

/// The derivation panel of a loan.
pub struct LoanDerivation {
    pub steps: Vec<Step>,
    /// How the payment was solved (MathML), and in words.
    pub payment: Option<(String, String)>,
    /// One closed form per segment, when the plan changes over time.
    pub segments: Vec<SegmentView>,
    /// The ledger's reconciliation (MathML, words).
    pub reconciliation: Option<(String, String)>,
}

/// What a computed loan shows.
pub struct LoanResult {
    /// The plan's label, or a description of the loan.
    pub heading: String,
    pub currency: &'static str,
    pub figures: Vec<Figure>,
    /// What changed against the same loan without extra payments.
    pub changed: Vec<Figure>,
    pub milestones: Vec<Figure>,
    pub balance_chart: String,
    pub yearly_chart: String,
    pub schedule: Schedule,
    pub derivation: LoanDerivation,
    /// An adjustable loan's paths, rate table, example and underwriting payments.
    pub adjustable: Option<super::adjustable::AdjustableView>,
    /// The projected payments with escrow and mortgage insurance.
    pub projected: Option<super::adjustable::Projected>,
    /// The engine's notes after the caution (the caution is shown on its own).
    pub notes: Vec<String>,
    pub json_url: String,
    pub csv_url: String,
}

/// The loan in one line: "250,000.00 USD at 7.125 % over 360 monthly payments".
pub fn describe(s: &LoanSchedule) -> String {
    let c = s.terms.currency;
    format!(
        "{} {} at {} over {} {} payments",
        money(c, s.terms.principal),
        c.code(),
        percent(s.terms.rate.percent()),
        s.number_of_payments,
        s.terms.payment_frequency.name()
    )
}

/// The balance after each payment, starting from the principal.
pub fn balance_series(label: &str, s: &LoanSchedule) -> Series {
    let mut points = Vec::with_capacity(s.ledger.rows.len() + 1);
    points.push((0, s.terms.principal));
    points.extend(s.ledger.rows.iter().map(|r| (r.number, r.balance)));
    Series {
        label: label.to_string(),
        points,
    }
}

fn schedule_view(s: &LoanSchedule) -> (Schedule, Vec<Bar>) {
    let c = s.terms.currency;
    let per_year = s.terms.payment_frequency.per_year();
    let dated = s.ledger.rows.iter().any(|r| r.date.is_some());
    let extras = s.ledger.rows.iter().any(|r| !r.extra.is_zero());
    let mut columns = vec!["No."];
    if dated {
        columns.push("Date");
    }
    columns.push("Payment");
    if extras {
        columns.push("Extra");
    }
    columns.extend(["Interest", "Principal", "Balance"]);
    let fold = s.ledger.rows.len() > UNFOLDED_ROWS;
    let mut years: Vec<Year> = Vec::new();
    let mut bars = Vec::new();
    let rows = &s.ledger.rows;
    let mut start = 0;
    while start < rows.len() {
        let y = year_of(rows[start].number, per_year);
        let end = rows[start..]
            .iter()
            .position(|r| year_of(r.number, per_year) != y)
            .map_or(rows.len(), |p| start + p);
        let chunk = &rows[start..end];
        let (mut paid, mut extra, mut interest, mut principal) =
            (Decimal::ZERO, Decimal::ZERO, Decimal::ZERO, Decimal::ZERO);
        let mut body = Vec::with_capacity(chunk.len());
        for r in chunk {
            paid += r.payment;
            extra += r.extra;
            interest += r.interest;
            principal += r.principal;
            let mut cells = Vec::with_capacity(columns.len());
            cells.push(r.number.to_string());
            if dated {
                cells.push(r.date.map(|d| d.to_string()).unwrap_or_default());
            }
            cells.push(money(c, r.payment));
            if extras {
                cells.push(money(c, r.extra));
            }
            cells.push(money(c, r.interest));
            cells.push(money(c, r.principal));
            cells.push(money(c, r.balance));
            body.push(cells);
        }
        let last = chunk[chunk.len() - 1];
        let mut totals = vec![format!("Year {y}")];
        if dated {
            totals.push(String::new());
        }
        totals.push(money(c, paid));
        if extras {
            totals.push(money(c, extra));
        }
        totals.extend([
            money(c, interest),
            money(c, principal),
            money(c, last.balance),
        ]);
        let summary = format!(
            "paid {}{}, interest {}, principal {}; balance {}",
            money(c, paid + extra),
            if extra.is_zero() {
                String::new()
            } else {
                format!(" (extra {})", money(c, extra))
            },
            money(c, interest),
            money(c, principal),
            money(c, last.balance)
        );
        years.push(Year {
            title: format!(
                "Year {y}: {}",
                span(
                    "payment",
                    chunk[0].number,
                    last.number,
                    chunk[0].date,
                    last.date
                )
            ),
            summary,
            open: !fold || y == 1,
            rows: body,
            totals,
        });
        bars.push(Bar {
            label: y.to_string(),
            lower: principal,
            upper: interest,
        });
        start = end;
    }
    (
        Schedule {
            caption: format!("Amortization schedule, {} ({})", describe(s), c.code()),
            columns,
            years,
        },
        bars,
    )
}

fn derivation(s: &LoanSchedule) -> LoanDerivation {
    let c = s.terms.currency;
    let steps = mathml::steps(&s.solution, "payment");
    let payment = s.payment_derivation.as_ref().map(|p| {
        (
            mathml::payment(
                amortized_principal(s, p),
                p.n,
                p.exact_payment,
                &money(c, s.payment),
            ),
            format!(
                "h[n] is what one unit of principal grows to after n periods with nothing paid; u[n] is what a payment of one each period adds up to over the same n periods. The loan is repaid when the principal's growth equals the payments' total: principal·h[{n}] = P·u[{n}]. That gives the exact payment {}, and the posted payment is rounded to the cent: {}.",
                crate::answer::derivation::short(p.exact_payment.round_dp(8)),
                money(c, s.payment),
                n = p.n
            ),
        )
    });
    let segments = if s.plan.segments.len() > 1 {
        s.plan
            .segments
            .iter()
            .take(crate::engine::schedule::SEGMENTS_IN_FULL)
            .map(|g| SegmentView {
                title: format!(
                    "Payments {}–{}",
                    g.first_payment, g.last_payment
                ),
                words: format!(
                    "From a balance of {}, at a periodic rate of {} and {} paid each period{}: this run is solved in closed form from where the previous one ended, and ends at {}. Here k counts the payments of this run.",
                    money(c, g.solution.recurrence.x0),
                    percent(g.periodic_rate * Decimal::ONE_HUNDRED),
                    money(c, g.outflow),
                    if g.impulse.is_zero() {
                        String::new()
                    } else {
                        format!(", with {} at its first payment", money(c, g.impulse.abs()))
                    },
                    money(c, g.end_balance)
                ),
                recurrence: mathml::recurrence(&g.solution.recurrence),
                closed_form: mathml::closed_form(&g.solution.closed_form),
            })
            .collect()
    } else {
        vec![]
    };
    let reconciliation = s.reconciliation.map(|r| {
        (
            mathml::reconciliation(r.largest_drift, r.at_payment.max(1), r.bound),
            format!(
                "The closed form keeps every fraction of a cent; the posted ledger rounds each period's interest to the cent, as a servicing system books it. The two drift apart by at most {} (at payment {}), within what rounding can cause by then, {}. The final payment takes up what is left so the balance ends at exactly zero.",
                crate::answer::derivation::short(r.largest_drift.round_dp(6)),
                r.at_payment,
                crate::answer::derivation::short(r.bound.round_dp(6)),
            ),
        )
    });
    LoanDerivation {
        steps,
        payment,
        segments,
        reconciliation,
    }
}

/// The balance the level payments repay: the principal, or the balance after an
/// interest-only start (principal·h[n] = P·u[n], so it is P·u[n]/h[n]).
fn amortized_principal(
    s: &LoanSchedule,
    p: &crate::engine::schedule::PaymentDerivation,
) -> Decimal {
    let interest_only = s
        .ledger
        .rows
        .first()
        .is_some_and(|r| r.principal.is_zero() && !r.interest.is_zero());
    if !interest_only || p.principal_response.is_zero() {
        return s.terms.principal;
    }
    let start = p.exact_payment * p.payment_response / p.principal_response;
    s.terms
        .currency
        .round(start, rust_decimal::RoundingStrategy::MidpointAwayFromZero)
}

/// Builds everything the page shows of a computed loan.
pub fn result(s: &LoanSchedule, label: Option<&str>, query: &str) -> LoanResult {
    let c = s.terms.currency;
    let years_text = {
        let years = Decimal::from(s.number_of_payments)
            / Decimal::from(s.terms.payment_frequency.per_year());
        format!("about {} years", years.round_dp(1).normalize())
    };
    let mut figures = vec![
        Figure::new(
            "Payment",
            money(c, s.payment),
            c.format(s.payment),
            format!(
                "{} {}, principal and interest",
                s.terms.payment_frequency.name(),
                c.code()
            ),
        )
        .keyed("payment"),
        Figure::new(
            "Number of payments",
            s.number_of_payments.to_string(),
            s.number_of_payments.to_string(),
            years_text,
        )
        .keyed("number_of_payments"),
        Figure::new(
            "Total interest",
            money(c, s.ledger.total_interest),
            c.format(s.ledger.total_interest),
            "",
        )
        .keyed("total_interest"),
        Figure::new(
            "Total paid",
            money(c, s.ledger.total_paid),
            c.format(s.ledger.total_paid),
            "",
        )
        .keyed("total_paid"),
    ];
    figures.push(match s.payoff_date {
        Some(d) => Figure::new(
            "Pays off with",
            format!("payment {} ({})", s.number_of_payments, month_year(d)),
            d.to_string(),
            format!("due {d}"),
        )
        .keyed("payoff_date"),
        None => Figure::new(
            "Pays off with",
            format!("payment {}", s.number_of_payments),
            String::new(),
            "give a first payment date to date the schedule",
        ),
    });
    let level = s.final_payment
        == s.payment + s.ledger.rows.last().map_or(Decimal::ZERO, |r| r.extra)
        && s.plan.balloon.is_none();
    figures.push(
        Figure::new(
            if s.plan.balloon.is_some() {
                "Final payment with balloon"
            } else {
                "Final payment"
            },
            money(c, s.final_payment),
            c.format(s.final_payment),
            if s.plan.balloon.is_some() {
                "the balance still due, paid with the last payment"
            } else if level {
                "the same as the others"
            } else {
                "adjusted by the cents rounding leaves, so the loan ends at exactly zero"
            },
        )
        .keyed("final_payment"),
    );
    figures.push(Figure::new(
        "Periodic rate",
        percent(s.periodic_rate * Decimal::ONE_HUNDRED),
        crate::answer::derivation::full(s.periodic_rate),
        "per payment period",
    ));
    let mut changed = Vec::new();
    if let Some(v) = s.savings {
        changed.push(
            Figure::new(
                "Interest saved",
                money(c, v.interest_saved),
                c.format(v.interest_saved),
                "against the same loan without extra payments",
            )
            .keyed("interest_saved"),
        );
        changed.push(
            Figure::new(
                "Payments saved",
                v.payments_saved.to_string(),
                v.payments_saved.to_string(),
                "",
            )
            .keyed("payments_saved"),
        );
        changed.push(Figure::new(
            "Extra paid",
            money(c, s.plan.total_extra),
            c.format(s.plan.total_extra),
            "",
        ));
    }
    if !s.plan.prepaid_interest.is_zero() {
        // A short first period credits its days before funding at closing:
        // shown as a credit of a positive amount, not a negative charge.
        let (label, amount, days) = if s.plan.prepaid_interest.is_sign_negative() {
            (
                "Interest credited at closing",
                -s.plan.prepaid_interest,
                format!("first period {} days short", -s.plan.odd_days),
            )
        } else {
            (
                "Prepaid interest at closing",
                s.plan.prepaid_interest,
                format!("{} odd days", s.plan.odd_days),
            )
        };
        changed.push(Figure::new(
            label,
            money(c, amount),
            c.format(s.plan.prepaid_interest),
            days,
        ));
    }
    let mut milestones = Vec::new();
    let m = &s.milestones;
    let at = |m: crate::engine::plan::Milestone| match m.date {
        Some(d) => format!("payment {}, {d}", m.payment),
        None => format!("payment {}", m.payment),
    };
    if let Some(x) = m.principal_exceeds_interest {
        milestones.push(Figure::new(
            "Principal first exceeds interest",
            at(x),
            x.payment.to_string(),
            "",
        ));
    }
    if let Some(x) = m.balance_80_percent {
        milestones.push(Figure::new(
            "Balance at 80 % of the value",
            at(x),
            x.payment.to_string(),
            "the borrower may ask to cancel mortgage insurance",
        ));
    }
    if let Some(x) = m.balance_78_percent {
        milestones.push(Figure::new(
            "Balance at 78 % of the value",
            at(x),
            x.payment.to_string(),
            "mortgage insurance ends automatically",
        ));
    }
    if let Some(x) = m.midpoint {
        milestones.push(Figure::new(
            "Midpoint of the amortization",
            at(x),
            x.payment.to_string(),
            "",
        ));
    }
    let (schedule, bars) = schedule_view(s);
    let heading = label.map_or_else(|| describe(s), str::to_string);
    let balance = balance_series(&heading, s);
    let per_year = s.terms.payment_frequency.per_year();
    let balance_chart = balance_chart(
        "balance",
        "The balance over time",
        &format!(
            "The balance falls from {} to {} over {} payments ({} a year); the schedule below gives every figure.",
            money(c, s.terms.principal),
            money(c, s.ledger.rows.last().map_or(Decimal::ZERO, |r| r.balance)),
            s.number_of_payments,
            per_year
        ),
        &[balance],
        per_year,
    );
    let yearly_chart = stacked_bars(
        "yearly",
        "Each year's payments, split into interest and principal",
        &format!(
            "{} bars, one a year: the lower part is principal, the upper part interest. Interest is {} in all; the schedule's yearly subtotals give each figure.",
            bars.len(),
            money(c, s.ledger.total_interest)
        ),
        &bars,
        &BarWords {
            lower: "Principal",
            upper: "Interest",
            axis: "paid in the year",
        },
    );
    LoanResult {
        heading,
        currency: c.code(),
        figures,
        changed,
        milestones,
        balance_chart,
        yearly_chart,
        schedule,
        derivation: derivation(s),
        adjustable: super::adjustable::adjustable_view(s),
        projected: super::adjustable::projected_view(s.full_payment.as_ref()),
        notes: super::form::page_notes(&s.notes),
        json_url: format!("/api/v1/loans/schedule?{query}"),
        csv_url: format!("/api/v1/loans/schedule.csv?{query}"),
    }
}

/// "March 2057".
pub fn month_year(d: jiff::civil::Date) -> String {
    const MONTHS: [&str; 12] = [
        "January",
        "February",
        "March",
        "April",
        "May",
        "June",
        "July",
        "August",
        "September",
        "October",
        "November",
        "December",
    ];
    let m = usize::try_from(d.month()).unwrap_or(1).clamp(1, 12);
    format!("{} {}", MONTHS[m - 1], d.year())
}

/// Reads the query with the API's reader and computes with the API's engine call.
///
/// # Errors
/// The API's problem for this query.
pub fn compute(pairs: &[(String, String)]) -> Result<LoanResult, ApiError> {
    let normalized = normalize(pairs, false);
    let mut f = Fields::new(Source::Query(&normalized));
    f.lenient = true;
    let request = schedule_request_from(f)?;
    let _weight = crate::weight::weigh(crate::engine::plan::expected_work(
        &request.terms,
        &request.options,
    ))?;
    let s = schedule_with(&request.terms, &request.options).map_err(|e| request.problem(e, ""))?;
    Ok(result(
        &s,
        request.label.as_deref(),
        &query_string(&normalized),
    ))
}

/// Builds the page for a query string.
pub fn build(q: Option<&str>) -> LoanPage {
    let (pairs, problem) = match query_pairs(q) {
        Ok(p) => (p, None),
        Err(e) => (vec![], Some(e)),
    };
    let (pairs, rows, refused) =
        super::rows::expand(&pairs, &[&super::rows::EXTRAS, &super::rows::RATE_CHANGES]);
    let (result, problem) = super::rows::computed(&pairs, refused, problem, compute);
    let title = match &result {
        Some(r) => format!("Loan schedule: {}", r.heading),
        None => "Loan schedule".to_string(),
    };
    LoanPage {
        layout: Layout::new(title, "/loan").with_result(result.is_some()),
        form: Form::new(
            "/loan",
            &[crate::input::loan::LOAN, crate::input::loan::PLAN],
            &LOAN_FORM,
            &pairs,
            &LOAN_DEFAULTS,
            problem.as_ref(),
        )
        .with_all_rows(rows),
        result,
    }
}

/// `GET /loan?…`
pub async fn page(RawQuery(q): RawQuery) -> Response {
    let page = build(q.as_deref());
    render_form(&page, page.form.status)
}
