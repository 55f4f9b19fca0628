//! The terms of an adjustable-rate note (index, margin, changes, caps, floor,
//! maximum, rounding, payment cap), the rate paths they allow, and the
//! mortgage insurance paid with a loan's payments: what a plan's options hold.

use rust_decimal::{Decimal, RoundingStrategy};

use crate::engine::error::{EngineError, Result};
use crate::engine::rate::AnnualRate;

/// Mortgage insurance paid with each payment.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct MortgageInsurance {
    /// The premium with each payment.
    pub monthly: Decimal,
    /// The payments it is paid with (from payment 1); `None`: every payment.
    pub payments: Option<u32>,
}

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

    /// The rate changes of `path` that move the rate, as (payment, new rate):
    /// a change that leaves the rate as it was re-amortises nothing.
    ///
    /// # Errors
    /// As [`AdjustableRate::path_rates`], or a rate out of range.
    pub fn rate_changes(
        &self,
        initial: Decimal,
        path: &RatePath,
        n: u32,
    ) -> Result<Vec<(u32, AnnualRate)>> {
        let mut last = initial;
        let mut out = Vec::new();
        for (at, rate) in self.path_rates(initial, path, n)? {
            if rate != last {
                out.push((
                    at,
                    AnnualRate::from_percent(rate).map_err(|e| e.at("adjustable"))?,
                ));
                last = rate;
            }
        }
        Ok(out)
    }
}
