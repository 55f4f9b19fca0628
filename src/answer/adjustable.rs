//! What an adjustable loan's answer adds, and the projected payments of any
//! loan with escrow or mortgage insurance: one shape for the JSON and the page.

use rust_decimal::Decimal;
use serde::Serialize;

use crate::engine::adjustable::{AdjustableDisclosure, FullPayment, PathPayments};
use crate::engine::money::Currency;

fn pct(d: Decimal) -> String {
    d.normalize().to_string()
}

/// The summary of an adjustable loan.
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct AdjustableSummaryDto {
    /// Index + margin at consummation, rounded as the note says.
    pub fully_indexed_rate_percent: String,
    pub highest_rate_percent: String,
    pub highest_rate_first_payment: u32,
    pub highest_rate_year: u32,
    pub highest_payment: String,
    pub highest_payment_first_payment: u32,
    pub highest_payment_year: u32,
    pub lowest_payment: String,
}

/// The adjustable interest rate table of §1026.37(j).
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct RateTableDto {
    pub index_percent: String,
    pub margin_percent: String,
    pub initial_rate_percent: String,
    pub minimum_rate_percent: String,
    pub maximum_rate_percent: String,
    pub first_change_payment: u32,
    /// Counted from the start of the first payment's period.
    pub first_change_month: u32,
    pub change_every: u32,
    pub change_every_months: u32,
    /// `null`: no limit.
    pub first_change_limit_percent: Option<String>,
    /// `null`: no limit.
    pub subsequent_limit_percent: Option<String>,
}

/// §1026.19(b)(2)(viii)(B): 10,000 at the initial rate with the greatest increases.
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct ProgramExampleDto {
    pub principal: String,
    pub initial_payment: String,
    pub highest_rate_percent: String,
    pub highest_payment: String,
    pub highest_payment_year: u32,
}

/// §1026.43(c)(5) and (e)(2)(iv).
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct UnderwritingDto {
    pub ability_to_repay_rate_percent: String,
    pub ability_to_repay_payment: String,
    pub qualified_mortgage_rate_percent: String,
    pub qualified_mortgage_payment: String,
    pub balance_after_five_years: Option<String>,
    pub recast_payment_after_five_years: Option<String>,
}

/// A run of payments at one rate and amount.
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct PathStepDto {
    pub from_payment: u32,
    pub rate_percent: String,
    pub payment: String,
}

/// A rate path's runs (the final payment, which absorbs the rounding, left out).
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct RatePathDto {
    pub path: &'static str,
    pub final_payment: String,
    pub steps: Vec<PathStepDto>,
}

/// Everything an adjustable loan's answer adds.
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct AdjustableDto {
    pub adjustable_summary: AdjustableSummaryDto,
    pub rate_table: RateTableDto,
    pub program_example: ProgramExampleDto,
    pub underwriting: UnderwritingDto,
    /// The composite, highest and lowest paths.
    pub rate_paths: Vec<RatePathDto>,
}

/// A column of projected payments (§1026.37(c)), whole dollars.
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct ProjectedColumnDto {
    pub from_year: u32,
    pub to_year: u32,
    pub principal_interest_min: String,
    pub principal_interest_max: String,
    pub interest_only: bool,
    pub mortgage_insurance: String,
    pub escrow: String,
    pub total_min: String,
    pub total_max: String,
}

fn path_dto(p: &PathPayments, c: Currency) -> RatePathDto {
    RatePathDto {
        path: p.path.name(),
        final_payment: c.format(p.payments.last().copied().unwrap_or_default()),
        steps: p
            .steps
            .iter()
            .map(|s| PathStepDto {
                from_payment: s.from_payment,
                rate_percent: pct(s.rate_percent),
                payment: c.format(s.payment),
            })
            .collect(),
    }
}

impl AdjustableDto {
    /// The answer's members of an adjustable loan.
    pub fn new(x: &AdjustableDisclosure, c: Currency) -> Self {
        let s = &x.summary;
        let t = &x.rate_table;
        let e = &x.program_example;
        let u = &x.underwriting;
        Self {
            adjustable_summary: AdjustableSummaryDto {
                fully_indexed_rate_percent: pct(s.fully_indexed_rate_percent),
                highest_rate_percent: pct(s.highest_rate_percent),
                highest_rate_first_payment: s.highest_rate_first_payment,
                highest_rate_year: s.highest_rate_year,
                highest_payment: c.format(s.highest_payment),
                highest_payment_first_payment: s.highest_payment_first_payment,
                highest_payment_year: s.highest_payment_year,
                lowest_payment: c.format(s.lowest_payment),
            },
            rate_table: RateTableDto {
                index_percent: pct(t.index_percent),
                margin_percent: pct(t.margin_percent),
                initial_rate_percent: pct(t.initial_rate_percent),
                minimum_rate_percent: pct(t.minimum_rate_percent),
                maximum_rate_percent: pct(t.maximum_rate_percent),
                first_change_payment: t.first_change_payment,
                first_change_month: t.first_change_month,
                change_every: t.change_every,
                change_every_months: t.change_every_months,
                first_change_limit_percent: t.first_change_limit_percent.map(pct),
                subsequent_limit_percent: t.subsequent_limit_percent.map(pct),
            },
            program_example: ProgramExampleDto {
                principal: c.format(e.principal),
                initial_payment: c.format(e.initial_payment),
                highest_rate_percent: pct(e.highest_rate_percent),
                highest_payment: c.format(e.highest_payment),
                highest_payment_year: e.highest_payment_year,
            },
            underwriting: UnderwritingDto {
                ability_to_repay_rate_percent: pct(u.ability_to_repay_rate_percent),
                ability_to_repay_payment: c.format(u.ability_to_repay_payment),
                qualified_mortgage_rate_percent: pct(u.qualified_mortgage_rate_percent),
                qualified_mortgage_payment: c.format(u.qualified_mortgage_payment),
                balance_after_five_years: u.balance_after_five_years.map(|b| c.format(b)),
                recast_payment_after_five_years: u
                    .recast_payment_after_five_years
                    .map(|b| c.format(b)),
            },
            rate_paths: x.paths.iter().map(|p| path_dto(p, c)).collect(),
        }
    }
}

/// The projected payments' columns.
pub fn projected_dto(f: &FullPayment) -> Vec<ProjectedColumnDto> {
    f.columns
        .iter()
        .map(|c| ProjectedColumnDto {
            from_year: c.from_year,
            to_year: c.to_year,
            principal_interest_min: c.principal_interest_min.to_string(),
            principal_interest_max: c.principal_interest_max.to_string(),
            interest_only: c.interest_only,
            mortgage_insurance: c.mortgage_insurance.to_string(),
            escrow: c.escrow.to_string(),
            total_min: c.total_min.to_string(),
            total_max: c.total_max.to_string(),
        })
        .collect()
}
