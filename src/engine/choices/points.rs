//! Is it worth paying points: one loan at two to six rate-and-points options,
//! each costed month by month against the first (see [the module above](super)).

use rust_decimal::Decimal;

use super::refinance::{horizon_cost, points_amount, HorizonCost};
use super::{balance_break_even, horizons, simple_break_even, within, CostPath};
use crate::engine::error::{EngineError, Result};
use crate::engine::plan::PlanOptions;
use crate::engine::rate::AnnualRate;
use crate::engine::schedule::{schedule_for_comparison, LoanSchedule, LoanTerms};

/// The fewest and most options a request may list.
pub const OPTIONS_RANGE: (usize, usize) = (2, 6);

/// One rate-and-points option.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PricingOption {
    /// The option's name.
    pub label: String,
    /// The option's nominal annual rate.
    pub rate: AnnualRate,
    /// Points in percent of the principal (negative: a lender credit).
    pub points_percent: Decimal,
    /// Other upfront costs of this option.
    pub other_costs: Decimal,
}

/// One option costed.
#[derive(Debug, Clone)]
pub struct CostedOption {
    /// The option as given.
    pub option: PricingOption,
    /// The loan at the option's rate, posted.
    pub schedule: LoanSchedule,
    /// The points in money.
    pub points: Decimal,
    /// points + other costs.
    pub upfront_cost: Decimal,
    /// This payment − the first option's.
    pub monthly_difference: Decimal,
    /// The month the option costing more upfront has recovered the difference
    /// through its lower payment (zero when the upfront costs are equal; `None`
    /// for the first option, or when the dearer option's payment is not lower).
    pub break_even_months: Option<u32>,
    /// The first month the option that cost more at the start costs no more than
    /// the other, balances counted (`None` for the first option, or never).
    pub break_even_months_with_balances: Option<u32>,
    /// True when this option is the one costing more upfront against the first.
    pub costs_more_upfront: bool,
    /// The option's cost month by month.
    pub path: CostPath,
    /// At 5, 7 and 10 years and the chosen horizon.
    pub horizons: Vec<HorizonCost>,
    /// To the end of the term.
    pub to_the_end: HorizonCost,
}

/// The options costed, with the cheapest at each horizon.
#[derive(Debug, Clone)]
pub struct OptionsAnswer {
    /// The options in the order given.
    pub options: Vec<CostedOption>,
    /// (months, index of the cheapest option) for each horizon, then the end of the term.
    pub cheapest: Vec<(u32, usize)>,
    /// (month, index): from this month on, this option is the cheapest; the
    /// first entry is month 0.
    pub cheapest_changes: Vec<(u32, usize)>,
}

/// The index of the least of `costs` (the first listed on a tie).
fn least(costs: impl Iterator<Item = Decimal>) -> usize {
    let mut best: Option<(usize, Decimal)> = None;
    for (i, c) in costs.enumerate() {
        if best.is_none_or(|(_, b)| c < b) {
            best = Some((i, c));
        }
    }
    best.map_or(0, |(i, _)| i)
}

/// Costs each option of one loan.
///
/// # Errors
/// Fewer than two or more than six options (`options`), points out of range
/// (`points_percent`, the caller prefixes the option), or a loan the engine refuses.
pub fn compare_options(
    terms: &LoanTerms,
    plan: &PlanOptions,
    options: &[PricingOption],
    horizon: Option<u32>,
) -> Result<OptionsAnswer> {
    if options.len() < OPTIONS_RANGE.0 || options.len() > OPTIONS_RANGE.1 {
        return Err(EngineError::out_of_range(
            "options",
            format!(
                "list {} to {} options to compare",
                OPTIONS_RANGE.0, OPTIONS_RANGE.1
            ),
        ));
    }
    let hs = horizons(horizon);
    let mut costed: Vec<CostedOption> = Vec::with_capacity(options.len());
    for o in options {
        let t = LoanTerms {
            rate: o.rate,
            ..terms.clone()
        };
        let schedule = schedule_for_comparison(&t, plan)?;
        let points = points_amount(
            o.points_percent,
            terms.principal,
            terms.currency,
            "points_percent",
        )?;
        let upfront_cost = points + o.other_costs;
        let path = CostPath::posted(upfront_cost, terms.principal, &schedule.ledger.rows)?;
        let end = path.months();
        costed.push(CostedOption {
            option: o.clone(),
            points,
            upfront_cost,
            monthly_difference: Decimal::ZERO,
            break_even_months: None,
            break_even_months_with_balances: None,
            costs_more_upfront: false,
            horizons: hs.iter().map(|&m| horizon_cost(&path, m)).collect(),
            to_the_end: horizon_cost(&path, end),
            path,
            schedule,
        });
    }
    let (first, rest) = costed.split_first_mut().expect("at least two options");
    for o in rest.iter_mut() {
        o.monthly_difference = o.schedule.payment - first.schedule.payment;
        let extra = o.upfront_cost - first.upfront_cost;
        o.costs_more_upfront = extra > Decimal::ZERO;
        if extra >= Decimal::ZERO {
            o.break_even_months = within(
                simple_break_even(extra, -o.monthly_difference),
                o.path.months(),
            );
            o.break_even_months_with_balances = balance_break_even(&first.path, &o.path);
        } else {
            // The first option costs more upfront: when does it catch up?
            o.break_even_months = within(
                simple_break_even(-extra, o.monthly_difference),
                first.path.months(),
            );
            o.break_even_months_with_balances = balance_break_even(&o.path, &first.path);
        }
    }
    let end = costed.iter().map(|o| o.path.months()).max().unwrap_or(0);
    let mut cheapest: Vec<(u32, usize)> = hs
        .iter()
        .map(|&m| (m, least(costed.iter().map(|o| o.path.cost(m)))))
        .collect();
    if !hs.contains(&end) {
        cheapest.push((end, least(costed.iter().map(|o| o.path.cost(end)))));
    }
    let mut cheapest_changes: Vec<(u32, usize)> = Vec::new();
    for m in 0..=end {
        let i = least(costed.iter().map(|o| o.path.cost(m)));
        if cheapest_changes.last().is_none_or(|&(_, j)| j != i) {
            cheapest_changes.push((m, i));
        }
    }
    Ok(OptionsAnswer {
        options: costed,
        cheapest,
        cheapest_changes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::money::Currency;
    use crate::engine::rate::Frequency;
    use crate::engine::schedule::LoanTerm;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    fn option(label: &str, rate: &str, points: &str) -> PricingOption {
        PricingOption {
            label: label.into(),
            rate: AnnualRate::from_percent(d(rate)).unwrap(),
            points_percent: d(points),
            other_costs: Decimal::ZERO,
        }
    }

    #[test]
    fn two_points_for_half_a_point_of_rate_break_even_in_61_months() {
        // 200,000 over 30 years at 6.75 % with no points against 6.25 % with 2
        // points: payments 1,297.20 and 1,231.43 (the level-payment formula),
        // 4,000 of points, ⌈4000 / 65.77⌉ = 61 months (common practice, no source).
        let terms = LoanTerms {
            principal: d("200000"),
            currency: Currency::USD,
            rate: AnnualRate::from_percent(d("6.75")).unwrap(),
            payment_frequency: Frequency::Monthly,
            compounding: None,
            term: LoanTerm::Payments(360),
            payment_rounding: Default::default(),
            interest_rounding: Default::default(),
        };
        let a = compare_options(
            &terms,
            &PlanOptions::default(),
            &[
                option("no points", "6.75", "0"),
                option("two points", "6.25", "2"),
            ],
            None,
        )
        .unwrap();
        assert_eq!(a.options[0].schedule.payment, d("1297.20"));
        assert_eq!(a.options[1].schedule.payment, d("1231.43"));
        assert_eq!(a.options[1].upfront_cost, d("4000.00"));
        assert_eq!(a.options[1].monthly_difference, d("-65.77"));
        assert_eq!(a.options[1].break_even_months, Some(61));
        // Balances counted the lower rate also repays faster, so it is ahead sooner.
        let b = a.options[1].break_even_months_with_balances.unwrap();
        assert!(b <= 61, "{b}");
        // Whatever is cheapest at a horizon is the least of the costs there.
        for &(m, i) in &a.cheapest {
            let least = a.options.iter().map(|o| o.path.cost(m)).min().unwrap();
            assert_eq!(a.options[i].path.cost(m), least);
        }
        assert_eq!(a.cheapest_changes.first(), Some(&(0, 0)));
        assert_eq!(a.cheapest_changes.last().unwrap().1, 1);
    }
}
