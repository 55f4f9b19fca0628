//! What a lender's disclosures say of an adjustable-rate loan, each figure
//! posted on its own rate path: the summary, the adjustable interest rate
//! table (§1026.37(j)), the $10,000 example (§1026.19(b)(2)(viii)(B)) and the
//! underwriting payments (§1026.43(c)(5), §1026.43(e)(2)(iv)).

use rust_decimal::{Decimal, RoundingStrategy};

use super::terms::RatePath;
use crate::engine::error::{EngineError, Result};
use crate::engine::loan::payment_for_term;
use crate::engine::plan::{post_summary, post_totals, PlanOptions};
use crate::engine::rate::AnnualRate;
use crate::engine::terms::{LoanTerm, LoanTerms};

/// A run of payments at one rate and one scheduled amount.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PathStep {
    /// The first payment of the run.
    pub from_payment: u32,
    /// The nominal annual rate, percent.
    pub rate_percent: Decimal,
    /// The scheduled payment (principal and interest; interest only in an
    /// interest-only period).
    pub payment: Decimal,
}

/// A rate path posted: its scheduled payments (no extra payments, no odd-days
/// interest) and its rates.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PathPayments {
    /// The path.
    pub path: RatePath,
    /// Runs of equal rate and payment, in order; the final payment (which
    /// absorbs the rounding, or carries a balloon) is not a run of its own.
    pub steps: Vec<PathStep>,
    /// Every scheduled payment, in order.
    pub payments: Vec<Decimal>,
    /// The rate (percent) of every payment, in order.
    pub rates: Vec<Decimal>,
    /// The balance after each payment (filled only when asked).
    pub balances: Vec<Decimal>,
    /// The balloon beyond the regular payment, when one falls due.
    pub balloon: Option<Decimal>,
    /// The principal repaid by the first five years' payments.
    pub early_principal: Decimal,
}

impl PathPayments {
    /// The highest rate, and the first payment at it (the final payment's
    /// rate counted too: a change may fall on it).
    pub fn highest_rate(&self) -> Option<(Decimal, u32)> {
        let mut best: Option<(Decimal, u32)> = None;
        let last = self.rates.last().map(|r| (*r, self.rates.len() as u32));
        for (rate, at) in self
            .steps
            .iter()
            .map(|s| (s.rate_percent, s.from_payment))
            .chain(last)
        {
            if best.is_none_or(|(b, _)| rate > b) {
                best = Some((rate, at));
            }
        }
        best
    }

    /// The highest regular payment, and the first payment of that amount.
    pub fn highest_payment(&self) -> Option<(Decimal, u32)> {
        let mut best: Option<(Decimal, u32)> = None;
        for s in &self.steps {
            if best.is_none_or(|(b, _)| s.payment > b) {
                best = Some((s.payment, s.from_payment));
            }
        }
        best
    }
}

/// Posts `path` for `terms` and `options` without extra payments or odd days,
/// keeping the balances when `balances`.
///
/// # Errors
/// As the plan's posting.
pub fn path_payments(
    terms: &LoanTerms,
    options: &PlanOptions,
    path: RatePath,
    balances: bool,
) -> Result<PathPayments> {
    let o = PlanOptions {
        funding_date: None,
        extras: Vec::new(),
        rate_path: path.clone(),
        ..options.clone()
    };
    let (plan, balances) = if balances {
        let plan = post_totals(terms, &o)?;
        let b = plan.rows.iter().map(|r| r.balance).collect();
        (plan, b)
    } else {
        (post_summary(terms, &o)?, Vec::new())
    };
    let payments: Vec<Decimal> = plan
        .summary
        .runs
        .iter()
        .flat_map(|r| std::iter::repeat_n(r.amount, r.count as usize))
        .collect();
    let n = payments.len() as u32;
    let initial = terms.rate.percent();
    let changes = match (&options.adjustable, terms.term) {
        (Some(a), LoanTerm::Payments(term)) => a.rate_changes(initial, &path, term)?,
        _ => options
            .rate_changes
            .iter()
            .map(|c| (c.at, c.rate))
            .collect(),
    };
    let mut rates = Vec::with_capacity(payments.len());
    let mut rate = initial;
    let mut next = changes.iter().peekable();
    for k in 1..=n {
        while let Some((_, r)) = next.next_if(|c| c.0 <= k) {
            rate = r.percent();
        }
        rates.push(rate);
    }
    // The steps: where a run of equal payments starts, or the rate changes,
    // before the final payment (boundaries only, not payment by payment).
    let mut bounds: Vec<u32> = Vec::with_capacity(plan.summary.runs.len() + changes.len() + 1);
    let mut at = 1u32;
    for r in &plan.summary.runs {
        bounds.push(at);
        at += r.count;
    }
    bounds.extend(changes.iter().map(|c| c.0));
    bounds.sort_unstable();
    bounds.dedup();
    let mut steps: Vec<PathStep> = Vec::with_capacity(bounds.len());
    for k in bounds {
        if k > n || (k == n && n > 1) {
            break;
        }
        let (p, r) = (payments[k as usize - 1], rates[k as usize - 1]);
        match steps.last() {
            Some(s) if s.payment == p && s.rate_percent == r => {}
            _ => steps.push(PathStep {
                from_payment: k,
                rate_percent: r,
                payment: p,
            }),
        }
    }
    Ok(PathPayments {
        path,
        steps,
        payments,
        rates,
        balances,
        balloon: plan.balloon,
        early_principal: plan.summary.early_principal,
    })
}

/// The figures of an adjustable loan's summary.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AdjustableSummary {
    /// Index + margin at consummation, rounded as the note says (§1026.37(b)(2)).
    pub fully_indexed_rate_percent: Decimal,
    /// The highest rate the highest path reaches.
    pub highest_rate_percent: Decimal,
    /// The first payment at that rate, and its year.
    pub highest_rate_first_payment: u32,
    /// The year (of the loan) of that payment.
    pub highest_rate_year: u32,
    /// The highest regular payment on the highest path.
    pub highest_payment: Decimal,
    /// Its first payment, and the year of it.
    pub highest_payment_first_payment: u32,
    /// The year (of the loan) of that payment.
    pub highest_payment_year: u32,
    /// The lowest regular payment on the lowest path.
    pub lowest_payment: Decimal,
}

/// The adjustable interest rate table of §1026.37(j), as data.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RateTable {
    /// The index at consummation.
    pub index_percent: Decimal,
    /// The margin.
    pub margin_percent: Decimal,
    /// The initial rate.
    pub initial_rate_percent: Decimal,
    /// The minimum rate (the floor).
    pub minimum_rate_percent: Decimal,
    /// The maximum rate.
    pub maximum_rate_percent: Decimal,
    /// The first payment at a new rate.
    pub first_change_payment: u32,
    /// The month of the first change, counted from the start of the first
    /// payment's period (§1026.37(j)(5)).
    pub first_change_month: u32,
    /// Payments between changes.
    pub change_every: u32,
    /// Months between changes (rounded down for frequencies other than monthly).
    pub change_every_months: u32,
    /// The limit at the first change (`None`: no limit).
    pub first_change_limit_percent: Option<Decimal>,
    /// The greatest limit at a later change (`None`: no limit).
    pub subsequent_limit_percent: Option<Decimal>,
}

/// §1026.19(b)(2)(viii)(B): a $10,000 loan at the initial rate, with the
/// greatest increases the note allows.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ProgramExample {
    /// The amount of the example (10,000 in the loan's currency).
    pub principal: Decimal,
    /// Its payment at the initial rate.
    pub initial_payment: Decimal,
    /// The highest rate it reaches.
    pub highest_rate_percent: Decimal,
    /// The highest regular payment.
    pub highest_payment: Decimal,
    /// The year (of the loan) that payment first falls due.
    pub highest_payment_year: u32,
}

/// The underwriting payments of §1026.43.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Underwriting {
    /// §1026.43(c)(5)(i): the greater of the fully indexed rate (capped by the
    /// maximum) and the initial rate.
    pub ability_to_repay_rate_percent: Decimal,
    /// The level, fully amortising payment at that rate over the term (after
    /// any interest-only period), cent-rounded.
    pub ability_to_repay_payment: Decimal,
    /// §1026.43(e)(2)(iv): the highest rate that can apply in the first five
    /// years after the first payment is due (through the payment five years
    /// after it).
    pub qualified_mortgage_rate_percent: Decimal,
    /// The loan amount repaid at that rate over the term remaining after any
    /// interest-only period, cent-rounded.
    pub qualified_mortgage_payment: Decimal,
    /// The scheduled balance after five years of payments, at the initial terms.
    pub balance_after_five_years: Option<Decimal>,
    /// That balance re-amortised at the qualified-mortgage rate over the
    /// payments left (the payment the borrower would meet then).
    pub recast_payment_after_five_years: Option<Decimal>,
}

/// Everything disclosed of an adjustable loan.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AdjustableDisclosure {
    /// The summary.
    pub summary: AdjustableSummary,
    /// §1026.37(j).
    pub rate_table: RateTable,
    /// §1026.19(b)(2)(viii)(B).
    pub program_example: ProgramExample,
    /// §1026.43(c)(5) and (e)(2)(iv).
    pub underwriting: Underwriting,
    /// The composite, highest and lowest paths, in that order.
    pub paths: [PathPayments; 3],
    /// The path the loan's own schedule follows.
    pub schedule_path: RatePath,
}

fn year_of(k: u32, per_year: u32) -> u32 {
    (k.max(1) - 1) / per_year.max(1) + 1
}

fn cents(terms: &LoanTerms, v: Decimal) -> Decimal {
    terms
        .currency
        .round(v, RoundingStrategy::MidpointAwayFromZero)
}

/// The level payment repaying `principal` over `n` payments at `percent` a
/// year, cent-rounded.
fn level_payment(
    terms: &LoanTerms,
    principal: Decimal,
    percent: Decimal,
    n: u32,
) -> Result<Decimal> {
    let rate = AnnualRate::from_percent(percent)?;
    let i = rate.periodic_rate(
        terms.payment_frequency,
        terms.compounding.unwrap_or(terms.payment_frequency),
    )?;
    Ok(cents(terms, payment_for_term(principal, i, n)?))
}

/// Discloses an adjustable loan: posts its composite, highest and lowest paths
/// and the $10,000 example, and works out the underwriting payments.
///
/// # Errors
/// A loan without adjustable terms, or whose term is given as a payment; the
/// errors of posting.
pub fn disclose_adjustable(
    terms: &LoanTerms,
    options: &PlanOptions,
) -> Result<AdjustableDisclosure> {
    let Some(a) = &options.adjustable else {
        return Err(EngineError::no_solution(
            Some("adjustable"),
            "the loan has no adjustable terms",
        ));
    };
    let LoanTerm::Payments(n) = terms.term else {
        return Err(EngineError::out_of_range(
            "payment",
            "an adjustable-rate loan needs its term (term_months or term_payments): the payment is worked out at each change",
        ));
    };
    let per_year = terms.payment_frequency.per_year();
    let initial = terms.rate.percent();
    let composite = path_payments(terms, options, RatePath::Composite, false)?;
    let high = path_payments(terms, options, RatePath::Highest, false)?;
    let low = path_payments(terms, options, RatePath::Lowest, false)?;

    let (highest_rate, highest_rate_at) = high.highest_rate().unwrap_or((initial, 1));
    let (highest_payment, highest_payment_at) =
        high.highest_payment().unwrap_or((Decimal::ZERO, 1));
    let lowest_payment = low
        .steps
        .iter()
        .map(|s| s.payment)
        .min()
        .unwrap_or_default();
    let summary = AdjustableSummary {
        fully_indexed_rate_percent: a.fully_indexed(),
        highest_rate_percent: highest_rate,
        highest_rate_first_payment: highest_rate_at,
        highest_rate_year: year_of(highest_rate_at, per_year),
        highest_payment,
        highest_payment_first_payment: highest_payment_at,
        highest_payment_year: year_of(highest_payment_at, per_year),
        lowest_payment,
    };
    let months = |payments: u32| payments.saturating_mul(12) / per_year;
    let rate_table = RateTable {
        index_percent: a.index_percent,
        margin_percent: a.margin_percent,
        initial_rate_percent: initial,
        minimum_rate_percent: a.floor(),
        maximum_rate_percent: a.lifetime_max_percent,
        first_change_payment: a.first_change_payment,
        first_change_month: months(a.first_change_payment - 1) + 1,
        change_every: a.change_every,
        change_every_months: months(a.change_every),
        first_change_limit_percent: a.first_cap(),
        subsequent_limit_percent: a.periodic_cap_percent,
    };

    // §1026.19(b)(2)(viii)(B): $10,000 at the initial rate, over the term,
    // the rate rising by the most the note allows.
    let example_terms = LoanTerms {
        principal: Decimal::from(10_000),
        ..terms.clone()
    };
    let example_options = PlanOptions {
        adjustable: Some(a.clone()),
        ..PlanOptions::default()
    };
    let example = path_payments(&example_terms, &example_options, RatePath::Highest, false)?;
    let (example_payment, example_at) = example.highest_payment().unwrap_or((Decimal::ZERO, 1));
    let program_example = ProgramExample {
        principal: example_terms.principal,
        initial_payment: example.payments.first().copied().unwrap_or_default(),
        highest_rate_percent: example.highest_rate().map_or(initial, |r| r.0),
        highest_payment: example_payment,
        highest_payment_year: year_of(example_at, per_year),
    };

    // §1026.43(c)(5)(i) and (ii)(B): the greater of the fully indexed rate
    // (index + margin, capped by the maximum, §1026.43(b)(3)) and the initial
    // rate; level payments over the term left after any interest-only period.
    let amortizing = n - options.interest_only_payments.min(n - 1);
    let atr_rate = a.fully_indexed().min(a.lifetime_max_percent).max(initial);
    // §1026.43(e)(2)(iv)(A): the highest rate in the first five years after
    // the first payment's due date: payments 1 to 5 × (payments a year) + 1,
    // the last falling due five years after the first.
    let five_years = 5 * per_year;
    let qm_rate = high
        .steps
        .iter()
        .take_while(|s| s.from_payment <= five_years + 1)
        .map(|s| s.rate_percent)
        .max()
        .unwrap_or(initial)
        .max(initial);
    // The balance after five years at the initial terms (before any change
    // that falls later): the highest path's, which agrees with every path
    // until its first change; the principal less what the first five years'
    // payments repaid.
    let composite_balances = (five_years < n).then(|| terms.principal - high.early_principal);
    let recast = match composite_balances {
        Some(b) if b > Decimal::ZERO => Some(level_payment(terms, b, qm_rate, n - five_years)?),
        _ => None,
    };
    let underwriting = Underwriting {
        ability_to_repay_rate_percent: atr_rate,
        ability_to_repay_payment: level_payment(terms, terms.principal, atr_rate, amortizing)?,
        qualified_mortgage_rate_percent: qm_rate,
        qualified_mortgage_payment: level_payment(terms, terms.principal, qm_rate, amortizing)?,
        balance_after_five_years: composite_balances,
        recast_payment_after_five_years: recast,
    };
    Ok(AdjustableDisclosure {
        summary,
        rate_table,
        program_example,
        underwriting,
        paths: [composite, high, low],
        schedule_path: options.rate_path.clone(),
    })
}

#[cfg(test)]
mod tests {
    use super::super::terms::{AdjustableRate, RateRounding};
    use super::*;
    use crate::engine::testing::{d, level_loan};

    fn arm(
        index: &str,
        margin: &str,
        first: u32,
        first_cap: Option<&str>,
        cap: Option<&str>,
        max: &str,
    ) -> AdjustableRate {
        AdjustableRate {
            index_percent: d(index),
            margin_percent: d(margin),
            first_change_payment: first,
            change_every: 12,
            first_change_cap_percent: first_cap.map(d),
            periodic_cap_percent: cap.map(d),
            lifetime_max_percent: d(max),
            floor_percent: None,
            rounding: RateRounding::None,
            payment_cap_percent: None,
        }
    }

    #[test]
    fn appendix_h_14_the_ten_thousand_dollar_example() {
        // Regulation Z Appendix H-14: 12.41 %, at most 2 points a year and 5
        // over the life, yearly changes, 30 years: 106.03 in year 1; 17.41 %
        // in year 4, with a payment of 145.34.
        let a = arm("10.41", "2", 13, None, Some("2"), "17.41");
        let terms = level_loan("10000", "12.41", 360);
        let o = PlanOptions {
            adjustable: Some(a),
            ..PlanOptions::default()
        };
        let x = disclose_adjustable(&terms, &o).unwrap();
        assert_eq!(x.program_example.initial_payment, d("106.03"));
        assert_eq!(x.program_example.highest_rate_percent, d("17.41"));
        assert_eq!(x.program_example.highest_payment, d("145.34"));
        assert_eq!(x.program_example.highest_payment_year, 4);
        assert_eq!(x.summary.highest_rate_year, 4);
    }

    #[test]
    fn comment_43_c_5_i_5_ii_the_ability_to_repay_payment() {
        // Comment 43(c)(5)(i)-5.ii: $200,000 over 30 years, 6 % fixed for five
        // years, fully indexed 7.5 %: scheduled 1,199, ability to repay 1,398.
        let a = arm("5", "2.5", 61, Some("2"), Some("2"), "11");
        let terms = level_loan("200000", "6", 360);
        let o = PlanOptions {
            adjustable: Some(a),
            ..PlanOptions::default()
        };
        let x = disclose_adjustable(&terms, &o).unwrap();
        assert_eq!(x.paths[0].payments[0].round(), d("1199"));
        assert_eq!(x.underwriting.ability_to_repay_rate_percent, d("7.5"));
        assert_eq!(x.underwriting.ability_to_repay_payment.round(), d("1398"));
    }

    #[test]
    fn comment_43_e_2_iv_7_iii_the_qualified_mortgage_payment() {
        // Comment 43(e)(2)(iv)-7.iii: $200,000, 6 % for 60 months, then 8 %:
        // balance after payment 60 186,109; 1,436 over 300 months, 1,468 over 360.
        let a = arm("6", "2", 61, Some("2"), Some("2"), "8");
        let terms = level_loan("200000", "6", 360);
        let o = PlanOptions {
            adjustable: Some(a),
            ..PlanOptions::default()
        };
        let x = disclose_adjustable(&terms, &o).unwrap();
        let u = &x.underwriting;
        assert_eq!(u.qualified_mortgage_rate_percent, d("8"));
        assert_eq!(u.balance_after_five_years.unwrap().round(), d("186109"));
        assert_eq!(
            u.recast_payment_after_five_years.unwrap().round(),
            d("1436")
        );
        assert_eq!(u.qualified_mortgage_payment.round(), d("1468"));
    }

    #[test]
    fn the_paths_are_ordered_and_within_floor_and_maximum() {
        let a = arm("4.5", "2.75", 61, Some("5"), Some("1"), "11.5");
        let terms = level_loan("300000", "6", 360);
        let o = PlanOptions {
            adjustable: Some(a.clone()),
            ..PlanOptions::default()
        };
        let x = disclose_adjustable(&terms, &o).unwrap();
        let [c, h, l] = &x.paths;
        for k in 0..359 {
            assert!(
                h.payments[k] >= c.payments[k] && c.payments[k] >= l.payments[k],
                "payment {}",
                k + 1
            );
            for p in [c, h, l] {
                assert!(p.rates[k] <= d("11.5") && (k < 60 || p.rates[k] >= a.floor()));
            }
        }
        assert_eq!(x.summary.highest_rate_percent, d("11.5"));
        // 6 + 5 = 11 at payment 61, then 1 more (capped at 11.5) at 73.
        assert_eq!(x.summary.highest_rate_first_payment, 73);
        assert_eq!(x.summary.lowest_payment, l.payments[60]);
    }
}
