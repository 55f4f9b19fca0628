//! Adjustable rates: the terms of an adjustable-rate note (index, margin,
//! changes, caps, floor, maximum, rounding, payment cap), and the rate paths
//! they allow.
//!
//! Each rate period is a segment of the same recurrence: the plan posts the
//! path's rates as rate changes, and at every change the balance then due is
//! re-amortised over the remaining term at the new rate (§1026.20(c)(2)(v)).
//!
//! - `disclose`: what a lender's disclosures say of an adjustable loan: the
//!   summary, the rate table of §1026.37(j), the $10,000 example of
//!   §1026.19(b)(2)(viii)(B) and the underwriting payments of §1026.43;
//! - `projected`: the projected payments of §1026.37(c), for any loan, with
//!   escrow and mortgage insurance.

mod disclose;
mod projected;

pub use disclose::{
    disclose_adjustable, path_payments, AdjustableDisclosure, AdjustableSummary, PathPayments,
    PathStep, ProgramExample, RateTable, Underwriting,
};
pub use projected::{insurance_until, projected_payments, MortgageInsurance, ProjectedColumn};

use rust_decimal::{Decimal, RoundingStrategy};

use crate::engine::error::{EngineError, Result};
use crate::engine::plan::{PlanOptions, RateChange};
use crate::engine::rate::AnnualRate;
use crate::engine::terms::{LoanTerm, LoanTerms};

/// How index + margin is rounded before the caps.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum RateRounding {
    /// Not rounded.
    #[default]
    None,
    /// To the nearest 1/8 point (halves up).
    NearestEighth,
    /// Up to the next 1/8 point.
    UpEighth,
    /// Down to the 1/8 point below.
    DownEighth,
}

impl RateRounding {
    /// The rule's name in the interface.
    pub fn name(self) -> &'static str {
        match self {
            Self::None => "none",
            Self::NearestEighth => "nearest_eighth",
            Self::UpEighth => "up_eighth",
            Self::DownEighth => "down_eighth",
        }
    }

    /// Reads a rule by its name.
    pub fn parse(name: &str) -> Option<Self> {
        match name {
            "none" => Some(Self::None),
            "nearest_eighth" => Some(Self::NearestEighth),
            "up_eighth" => Some(Self::UpEighth),
            "down_eighth" => Some(Self::DownEighth),
            _ => None,
        }
    }

    /// `percent` rounded by the rule: eighths are counted exactly (× 8, round
    /// to a whole number, ÷ 8), so 7.0625 is a tie and goes up.
    pub fn apply(self, percent: Decimal) -> Decimal {
        let strategy = match self {
            Self::None => return percent,
            Self::NearestEighth => RoundingStrategy::MidpointAwayFromZero,
            Self::UpEighth => RoundingStrategy::ToPositiveInfinity,
            Self::DownEighth => RoundingStrategy::ToNegativeInfinity,
        };
        let eight = Decimal::from(8);
        ((percent * eight).round_dp_with_strategy(0, strategy) / eight).normalize()
    }
}

/// The path the rates are assumed to take.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub enum RatePath {
    /// The initial rate while it lasts, then index + margin at consummation,
    /// reached through the caps (comment 17(c)(1)-10): the basis of the APR,
    /// the finance charge, the total of payments and "In 5 years".
    #[default]
    Composite,
    /// Every change takes its full cap up, to the maximum
    /// (§1026.19(b)(2)(viii)(B); comment 37(c)(2)(i)-1).
    Highest,
    /// Every change takes its full cap down, to the floor.
    Lowest,
    /// The index at each change, in order (the last carried forward).
    IndexValues(Vec<Decimal>),
}

impl RatePath {
    /// The path's name in the interface.
    pub fn name(&self) -> &'static str {
        match self {
            Self::Composite => "composite",
            Self::Highest => "highest",
            Self::Lowest => "lowest",
            Self::IndexValues(_) => "index_values",
        }
    }
}

/// The terms of an adjustable-rate note, in percent. The initial rate is the
/// loan's own `annual_rate_percent`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AdjustableRate {
    /// The index value at consummation.
    pub index_percent: Decimal,
    /// The margin added to the index.
    pub margin_percent: Decimal,
    /// The number of the first payment at a new rate.
    pub first_change_payment: u32,
    /// The number of payments between changes.
    pub change_every: u32,
    /// The most the rate may move at the first change (default: the periodic cap).
    pub first_change_cap_percent: Option<Decimal>,
    /// The most the rate may move at each later change (default: no limit).
    pub periodic_cap_percent: Option<Decimal>,
    /// The contract's maximum rate (§1026.30).
    pub lifetime_max_percent: Decimal,
    /// The lowest rate (default: the margin, comment 37(j)(4)-1).
    pub floor_percent: Option<Decimal>,
    /// How index + margin is rounded before the caps.
    pub rounding: RateRounding,
    /// The most the payment may rise at a change, in percent of the payment
    /// before it; interest it leaves unpaid is added to the balance.
    pub payment_cap_percent: Option<Decimal>,
}

/// With a payment cap, the payment is recast to the fully amortising one, the
/// cap set aside, every this many payments (payment 61, 121, …): common
/// practice for payment-capped notes, no source; a note states its own.
pub const RECAST_EVERY: u32 = 60;

fn err(field: &'static str, message: impl Into<String>) -> EngineError {
    EngineError::out_of_range(field, message)
}

impl AdjustableRate {
    /// The floor: as given, else the margin (comment 37(j)(4)-1).
    pub fn floor(&self) -> Decimal {
        self.floor_percent.unwrap_or(self.margin_percent)
    }

    /// The cap at the first change, when there is one.
    pub fn first_cap(&self) -> Option<Decimal> {
        self.first_change_cap_percent.or(self.periodic_cap_percent)
    }

    /// Index + margin at consummation, rounded as the note says (the fully
    /// indexed rate of §1026.37(b)(2) and §1026.18(s)).
    pub fn fully_indexed(&self) -> Decimal {
        self.rounding
            .apply(self.index_percent + self.margin_percent)
    }

    /// The payments at which the rate may change, up to payment `n`.
    pub fn changes(&self, n: u32) -> impl Iterator<Item = u32> + '_ {
        let every = self.change_every.max(1);
        (0..)
            .map(move |j: u32| {
                self.first_change_payment
                    .saturating_add(j.saturating_mul(every))
            })
            .take_while(move |k| *k <= n)
    }

    /// Checks each term alone; the error names its field (without the
    /// `adjustable` prefix, which the interface adds).
    ///
    /// # Errors
    /// The first of [`AdjustableRate::problems`].
    pub fn check_alone(&self) -> Result<()> {
        match self.problems().into_iter().next() {
            Some(e) => Err(e),
            None => Ok(()),
        }
    }

    /// Every term that is wrong alone: a cap or floor below zero, a change
    /// every 0 payments, a first change before payment 2, a floor above the
    /// maximum.
    pub fn problems(&self) -> Vec<EngineError> {
        let mut out = Vec::new();
        for (field, v) in [
            ("first_change_cap_percent", self.first_change_cap_percent),
            ("periodic_cap_percent", self.periodic_cap_percent),
            ("payment_cap_percent", self.payment_cap_percent),
            ("floor_percent", self.floor_percent),
            ("lifetime_max_percent", Some(self.lifetime_max_percent)),
        ] {
            if v.is_some_and(|v| v.is_sign_negative() && !v.is_zero()) {
                out.push(err(field, "cannot be below zero, e.g. 2"));
            }
        }
        if self.floor_percent.is_none()
            && self.margin_percent.is_sign_negative()
            && !self.margin_percent.is_zero()
        {
            out.push(err(
                "floor_percent",
                "is needed with a negative margin (without it the floor is the margin, and a rate cannot be below zero), e.g. 0",
            ));
        }
        if self.change_every == 0 {
            out.push(err(
                "change_every",
                "must be at least 1 payment, e.g. 12 for yearly changes",
            ));
        }
        if self.first_change_payment < 2 {
            out.push(err(
                "first_change_payment",
                "must be payment 2 or later, e.g. 61 after five years of monthly payments",
            ));
        }
        if self.floor() > self.lifetime_max_percent {
            out.push(err(
                "floor_percent",
                format!(
                    "the floor ({} %) cannot be above the maximum rate ({} %); without floor_percent the floor is the margin",
                    self.floor().normalize(),
                    self.lifetime_max_percent.normalize()
                ),
            ));
        }
        out
    }

    /// Checks the terms against the loan: its initial rate and `n` payments.
    ///
    /// # Errors
    /// As [`AdjustableRate::check_alone`]; an initial rate above the maximum;
    /// a first change beyond the term.
    pub fn check(&self, initial_percent: Decimal, n: u32) -> Result<()> {
        self.check_alone()?;
        if initial_percent > self.lifetime_max_percent {
            return Err(err(
                "lifetime_max_percent",
                format!(
                    "the maximum rate ({} %) cannot be below the initial rate ({} %)",
                    self.lifetime_max_percent.normalize(),
                    initial_percent.normalize()
                ),
            ));
        }
        if self.first_change_payment > n {
            return Err(err(
                "first_change_payment",
                format!(
                    "the first change must fall within the term: a payment from 2 to {n}, not {}",
                    self.first_change_payment
                ),
            ));
        }
        Ok(())
    }

    /// The rate (percent) at each change of `path` up to payment `n`, starting
    /// from `initial`: the target (index + margin, rounded; the maximum; the
    /// floor) limited by the change's cap, then kept within floor and maximum.
    /// A path that has reached its fixed target and stayed there for a change
    /// ends the list (every later change would keep the rate).
    ///
    /// # Errors
    /// An `index_values` path with no value.
    pub fn path_rates(
        &self,
        initial: Decimal,
        path: &RatePath,
        n: u32,
    ) -> Result<Vec<(u32, Decimal)>> {
        if let RatePath::IndexValues(v) = path {
            if v.is_empty() {
                return Err(err(
                    "index_values",
                    "give at least one index value, e.g. 4.25",
                ));
            }
        }
        let floor = self.floor();
        let max = self.lifetime_max_percent;
        let mut rate = initial;
        let mut out = Vec::new();
        for (j, at) in self.changes(n).enumerate() {
            let cap = if j == 0 {
                self.first_cap()
            } else {
                self.periodic_cap_percent
            };
            let target = match path {
                RatePath::Composite => self.fully_indexed(),
                RatePath::Highest => max,
                RatePath::Lowest => floor,
                RatePath::IndexValues(v) => {
                    let index = v.get(j).or(v.last()).copied().unwrap_or_default();
                    self.rounding.apply(index + self.margin_percent)
                }
            };
            let mut next = target;
            if let Some(cap) = cap {
                next = next.min(rate + cap).max(rate - cap);
            }
            next = next.min(max).max(floor);
            out.push((at, next.normalize()));
            // A path whose target does not move stays where it arrived: the
            // changes left would all keep the rate.
            let settled = next == rate && next == target.min(max).max(floor);
            rate = next;
            if settled && !matches!(path, RatePath::IndexValues(_)) {
                break;
            }
        }
        Ok(out)
    }

    /// The rate changes of `path` that move the rate: a change that leaves the
    /// rate as it was re-amortises nothing.
    ///
    /// # Errors
    /// As [`AdjustableRate::path_rates`], or a rate out of range.
    pub fn rate_changes(
        &self,
        initial: Decimal,
        path: &RatePath,
        n: u32,
    ) -> Result<Vec<RateChange>> {
        let mut last = initial;
        let mut out = Vec::new();
        for (at, rate) in self.path_rates(initial, path, n)? {
            if rate != last {
                out.push(RateChange {
                    at,
                    rate: AnnualRate::from_percent(rate).map_err(|e| e.at("adjustable"))?,
                });
                last = rate;
            }
        }
        Ok(out)
    }
}

/// The full monthly payment of a loan, fixed or adjustable.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FullPayment {
    /// The columns of §1026.37(c).
    pub columns: Vec<ProjectedColumn>,
    /// The last payment with mortgage insurance (0: none).
    pub insurance_until: u32,
}

/// The projected payments of a loan with adjustable terms, escrow or mortgage
/// insurance (`None` for a loan with none of them, or a term given as a
/// payment); `adjustable` the loan's disclosure, when it has one, whose paths
/// are reused.
///
/// # Errors
/// The errors of posting.
pub fn full_payment(
    terms: &LoanTerms,
    options: &PlanOptions,
    adjustable: Option<&AdjustableDisclosure>,
) -> Result<Option<FullPayment>> {
    let LoanTerm::Payments(n) = terms.term else {
        return Ok(None);
    };
    if adjustable.is_none()
        && options.escrow_monthly.is_none()
        && options.mortgage_insurance.is_none()
    {
        return Ok(None);
    }
    let needs_balances = options
        .mortgage_insurance
        .is_some_and(|m| m.payments.is_none() && options.property_value.is_some());
    let own;
    let paths: Vec<&PathPayments> = match adjustable {
        Some(x) if !needs_balances => x.paths.iter().collect(),
        Some(x) => {
            own = path_payments(terms, options, RatePath::Composite, true)?;
            vec![&own, &x.paths[1], &x.paths[2]]
        }
        None => {
            own = path_payments(terms, options, RatePath::Composite, needs_balances)?;
            vec![&own]
        }
    };
    let until = options.mortgage_insurance.map_or(0, |m| {
        insurance_until(&m, options.property_value, &paths[0].balances, n)
    });
    Ok(Some(FullPayment {
        columns: projected_payments(
            &paths,
            terms.payment_frequency.per_year(),
            options.interest_only_payments,
            options.mortgage_insurance,
            until,
            options.escrow_monthly.unwrap_or_default(),
        ),
        insurance_until: until,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::testing::d;

    fn note() -> AdjustableRate {
        AdjustableRate {
            index_percent: d("4.3"),
            margin_percent: d("2.75"),
            first_change_payment: 61,
            change_every: 12,
            first_change_cap_percent: Some(d("5")),
            periodic_cap_percent: Some(d("2")),
            lifetime_max_percent: d("11.5"),
            floor_percent: None,
            rounding: RateRounding::NearestEighth,
            payment_cap_percent: None,
        }
    }

    #[test]
    fn eighths_round_by_the_note_s_rule() {
        // 7.05 lies between 7 and 7.125: nearest 7, up 7.125, down 7.
        assert_eq!(RateRounding::NearestEighth.apply(d("7.05")), d("7"));
        assert_eq!(RateRounding::UpEighth.apply(d("7.05")), d("7.125"));
        assert_eq!(RateRounding::DownEighth.apply(d("7.05")), d("7"));
        // 7.0625 is half way: halves go up.
        assert_eq!(RateRounding::NearestEighth.apply(d("7.0625")), d("7.125"));
        assert_eq!(RateRounding::None.apply(d("7.05")), d("7.05"));
    }

    #[test]
    fn the_paths_take_their_caps_and_stay_within_floor_and_maximum() {
        let a = note();
        // Index + margin = 7.05, rounded to 7; initial 6.5: the composite rises
        // to 7 at payment 61 and stays there.
        let c = a.path_rates(d("6.5"), &RatePath::Composite, 360).unwrap();
        assert_eq!(c[0], (61, d("7")));
        assert!(c.iter().all(|(_, r)| *r == d("7")));
        // Highest: +5 at the first change (11.5, the maximum).
        let h = a.path_rates(d("6.5"), &RatePath::Highest, 360).unwrap();
        assert_eq!(h[0], (61, d("11.5")));
        // Lowest: −5 would be 1.5, the floor is the margin 2.75.
        let l = a.path_rates(d("6.5"), &RatePath::Lowest, 360).unwrap();
        assert_eq!(l[0], (61, d("2.75")));
        // 11.5 at payment 61, kept at 73: the path has settled, and the list ends.
        assert_eq!(h.len(), 2);
        // Only changes that move the rate become rate changes.
        assert_eq!(
            a.rate_changes(d("6.5"), &RatePath::Composite, 360)
                .unwrap()
                .len(),
            1
        );
    }

    #[test]
    fn a_periodic_cap_spreads_the_rise_of_the_composite_path() {
        // Comment 17(c)(1)-10's reading with caps (from memory of the
        // commentary): initial 9 %, index + margin 12 %, a 2-point yearly cap:
        // 9 % in year 1, 11 % in year 2, 12 % after.
        let a = AdjustableRate {
            index_percent: d("10"),
            margin_percent: d("2"),
            first_change_payment: 13,
            change_every: 12,
            first_change_cap_percent: None,
            periodic_cap_percent: Some(d("2")),
            lifetime_max_percent: d("15"),
            floor_percent: None,
            rounding: RateRounding::None,
            payment_cap_percent: None,
        };
        let c = a.path_rates(d("9"), &RatePath::Composite, 360).unwrap();
        assert_eq!(&c[..2], &[(13, d("11")), (25, d("12"))]);
    }

    #[test]
    fn index_values_carry_the_last_value_forward() {
        let a = note();
        let p = RatePath::IndexValues(vec![d("5"), d("3.1")]);
        let r = a.path_rates(d("6.5"), &p, 120).unwrap();
        // 5 + 2.75 = 7.75; then 3.1 + 2.75 = 5.85 → 5.875, within the 2-point cap.
        assert_eq!(
            r,
            vec![
                (61, d("7.75")),
                (73, d("5.875")),
                (85, d("5.875")),
                (97, d("5.875")),
                (109, d("5.875"))
            ]
        );
    }

    #[test]
    fn bad_terms_name_their_field() {
        let mut a = note();
        a.floor_percent = Some(d("12"));
        assert_eq!(
            a.check(d("6"), 360).unwrap_err().field,
            Some("floor_percent")
        );
        let mut a = note();
        a.first_change_payment = 400;
        assert_eq!(
            a.check(d("6"), 360).unwrap_err().field,
            Some("first_change_payment")
        );
        let mut a = note();
        a.periodic_cap_percent = Some(d("-1"));
        assert_eq!(
            a.check(d("6"), 360).unwrap_err().field,
            Some("periodic_cap_percent")
        );
        assert_eq!(
            note().check(d("12"), 360).unwrap_err().field,
            Some("lifetime_max_percent")
        );
    }
}
