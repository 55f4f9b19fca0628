//! What the loan page shows of an adjustable loan (its paths, rate table,
//! $10,000 example and underwriting payments) and of any loan's full monthly
//! payment (projected payments with escrow and mortgage insurance), from the
//! same engine result the JSON answer is written from.

use rust_decimal::Decimal;

use super::charts::{path_chart, Steps};
use super::view::{group_thousands, money, percent, Figure};
use crate::engine::adjustable::{AdjustableDisclosure, FullPayment, RatePath};
use crate::engine::schedule::LoanSchedule;

/// A table of labelled values.
pub struct Rows {
    pub caption: String,
    pub rows: Vec<(String, String)>,
}

/// The projected payments as a table: a column per range of years.
pub struct Projected {
    pub headings: Vec<String>,
    /// (row label, a cell per column).
    pub rows: Vec<(String, Vec<String>)>,
}

/// The adjustable part of the loan page.
pub struct AdjustableView {
    /// Which path the schedule below follows, in words.
    pub path: String,
    pub figures: Vec<Figure>,
    pub chart: String,
    pub rate_table: Rows,
    pub example: Rows,
    pub underwriting: Rows,
}

fn limit(v: Option<Decimal>) -> String {
    v.map_or("no limit".into(), |v| format!("{} points", v.normalize()))
}

fn path_words(p: &RatePath) -> &'static str {
    match p {
        RatePath::Composite => "the composite path (the initial rate, then today's index plus the margin, through the caps)",
        RatePath::Highest => "the highest path (every change up by its full cap)",
        RatePath::Lowest => "the lowest path (every change down by its full cap)",
        RatePath::IndexValues(_) => "the index values given",
    }
}

/// The adjustable part of the page, when the loan is adjustable.
pub fn adjustable_view(s: &LoanSchedule) -> Option<AdjustableView> {
    let x: &AdjustableDisclosure = s.adjustable.as_ref()?;
    let c = s.terms.currency;
    let per_year = s.terms.payment_frequency.per_year();
    let m = &x.summary;
    let figures = vec![
        Figure::new(
            "Rate after the first change",
            percent(m.fully_indexed_rate_percent),
            m.fully_indexed_rate_percent.normalize().to_string(),
            "index today plus the margin, rounded as the note says",
        )
        .keyed("fully_indexed_rate_percent"),
        Figure::new(
            "Highest rate",
            percent(m.highest_rate_percent),
            m.highest_rate_percent.normalize().to_string(),
            format!(
                "from payment {} (year {})",
                m.highest_rate_first_payment, m.highest_rate_year
            ),
        )
        .keyed("highest_rate_percent"),
        Figure::new(
            "Highest payment",
            money(c, m.highest_payment),
            c.format(m.highest_payment),
            format!(
                "principal and interest, from payment {} (year {})",
                m.highest_payment_first_payment, m.highest_payment_year
            ),
        )
        .keyed("highest_payment"),
        Figure::new(
            "Lowest payment",
            money(c, m.lowest_payment),
            c.format(m.lowest_payment),
            "principal and interest, if the rate falls as far as it can",
        )
        .keyed("lowest_payment"),
    ];
    let periods = x
        .paths
        .iter()
        .map(|p| p.payments.len() as u32)
        .max()
        .unwrap_or(1);
    let names = ["Composite", "Highest", "Lowest"];
    let steps = |value: fn(&crate::engine::adjustable::PathStep) -> Decimal| -> Vec<Steps> {
        x.paths
            .iter()
            .zip(names)
            .map(|(p, name)| Steps {
                label: name.to_string(),
                runs: p.steps.iter().map(|s| (s.from_payment, value(s))).collect(),
            })
            .collect()
    };
    let chart = path_chart(
        "paths",
        "Payment and rate over time on three paths",
        &format!(
            "Upper panel: the principal-and-interest payment; lower panel: the rate. Composite: {}; highest: up to {} by year {}; lowest: down to {}.",
            percent(m.fully_indexed_rate_percent),
            percent(m.highest_rate_percent),
            m.highest_rate_year,
            percent(x.rate_table.minimum_rate_percent)
        ),
        &steps(|s| s.payment),
        &steps(|s| s.rate_percent),
        periods,
        per_year,
    );
    let t = &x.rate_table;
    let rate_table = Rows {
        caption: "Adjustable interest rate (as a Loan Estimate's table, §1026.37(j))".into(),
        rows: vec![
            (
                "Index + margin".into(),
                format!(
                    "{} + {} points",
                    percent(t.index_percent),
                    t.margin_percent.normalize()
                ),
            ),
            (
                "Initial interest rate".into(),
                percent(t.initial_rate_percent),
            ),
            (
                "Minimum / maximum rate".into(),
                format!(
                    "{} / {}",
                    percent(t.minimum_rate_percent),
                    percent(t.maximum_rate_percent)
                ),
            ),
            (
                "First change".into(),
                format!(
                    "beginning of month {} (payment {})",
                    t.first_change_month, t.first_change_payment
                ),
            ),
            (
                "Subsequent changes".into(),
                format!("every {} months", t.change_every_months),
            ),
            (
                "Limit at the first change".into(),
                limit(t.first_change_limit_percent),
            ),
            (
                "Limit on later changes".into(),
                limit(t.subsequent_limit_percent),
            ),
        ],
    };
    let e = &x.program_example;
    let example = Rows {
        caption: format!(
            "For every {} borrowed (§1026.19(b)(2)(viii)(B))",
            money(c, e.principal)
        ),
        rows: vec![
            (
                "Payment at the initial rate".into(),
                money(c, e.initial_payment),
            ),
            (
                "Highest rate it can reach".into(),
                percent(e.highest_rate_percent),
            ),
            (
                "Highest payment".into(),
                format!(
                    "{} in year {}",
                    money(c, e.highest_payment),
                    e.highest_payment_year
                ),
            ),
        ],
    };
    let u = &x.underwriting;
    let mut rows = vec![
        (
            format!(
                "Ability to repay, at {}",
                percent(u.ability_to_repay_rate_percent)
            ),
            money(c, u.ability_to_repay_payment),
        ),
        (
            format!(
                "Qualified-mortgage test, at {}",
                percent(u.qualified_mortgage_rate_percent)
            ),
            money(c, u.qualified_mortgage_payment),
        ),
    ];
    if let (Some(b), Some(p)) = (
        u.balance_after_five_years,
        u.recast_payment_after_five_years,
    ) {
        rows.push(("Balance after five years".into(), money(c, b)));
        rows.push((
            format!(
                "That balance over the rest of the term at {}",
                percent(u.qualified_mortgage_rate_percent)
            ),
            money(c, p),
        ));
    }
    Some(AdjustableView {
        path: path_words(&x.schedule_path).to_string(),
        figures,
        chart,
        rate_table,
        example,
        underwriting: Rows {
            caption: "Payments lenders underwrite with (§1026.43(c)(5), (e)(2)(iv))".into(),
            rows,
        },
    })
}

/// The projected payments as a table, when the loan has them.
pub fn projected_view(f: Option<&FullPayment>) -> Option<Projected> {
    let f = f?;
    let dollars = |d: Decimal| group_thousands(&d.to_string());
    let range = |a: Decimal, b: Decimal| {
        if a == b {
            dollars(a)
        } else {
            format!("{} – {}", dollars(a), dollars(b))
        }
    };
    let headings = f
        .columns
        .iter()
        .map(|c| {
            if c.from_year == c.to_year {
                format!("Year {}", c.from_year)
            } else {
                format!("Years {}–{}", c.from_year, c.to_year)
            }
        })
        .collect();
    let row = |label: &str,
               cell: &dyn Fn(&crate::engine::adjustable::ProjectedColumn) -> String| {
        (label.to_string(), f.columns.iter().map(cell).collect())
    };
    Some(Projected {
        headings,
        rows: vec![
            row("Principal and interest", &|c| {
                let r = range(c.principal_interest_min, c.principal_interest_max);
                if c.interest_only {
                    format!("{r} (interest only)")
                } else {
                    r
                }
            }),
            row("Mortgage insurance", &|c| {
                if c.mortgage_insurance.is_zero() {
                    "—".into()
                } else {
                    format!("+ {}", dollars(c.mortgage_insurance))
                }
            }),
            row("Estimated escrow", &|c| {
                if c.escrow.is_zero() {
                    "—".into()
                } else {
                    format!("+ {}", dollars(c.escrow))
                }
            }),
            row("Estimated total monthly payment", &|c| {
                range(c.total_min, c.total_max)
            }),
        ],
    })
}
