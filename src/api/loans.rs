//! The loan schedule operation: request fields in, JSON or CSV out.

/// The schedule as CSV (written by the one CSV module).
pub use super::csv::schedule_csv;

use rust_decimal::Decimal;
use serde::Serialize;

use super::text::{Line, Repeated};
use crate::answer::adjustable::{
    projected_dto, AdjustableDto, AdjustableSummaryDto, ProgramExampleDto, ProjectedColumnDto,
    RatePathDto, RateTableDto, UnderwritingDto,
};
use crate::answer::derivation::{full, DerivationDto};
use crate::answer::text::IsoDate;
use crate::engine::money::{AmountText, PaymentRounding};
use crate::engine::schedule::{LoanSchedule, SEGMENTS_IN_FULL, SEGMENTS_LISTED};

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct SummaryDto {
    pub payment: String,
    pub number_of_payments: u32,
    pub final_payment: String,
    pub total_paid: String,
    pub total_interest: String,
    pub periodic_rate: String,
    pub currency: &'static str,
    pub payment_frequency: &'static str,
    pub payoff_date: Option<String>,
    pub total_extra: String,
    pub interest_saved: Option<String>,
    pub payments_saved: Option<u32>,
    pub balloon: Option<String>,
    pub odd_days: i64,
    pub odd_days_interest: String,
    pub prepaid_interest: String,
    pub milestones: MilestonesDto,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct PaymentSolutionDto {
    pub n: u32,
    /// h[n]/s^n with s = max(a, 1).
    pub principal_response_scaled: String,
    /// u[n]/s^n.
    pub payment_response_scaled: String,
    pub exact_payment: String,
    pub posted_payment: String,
    pub text: String,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct ReconciliationDto {
    pub largest_drift: String,
    pub at_payment: u32,
    pub final_payment_drift: String,
    pub drift_bound: String,
    pub text: String,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct RowDto {
    pub number: u32,
    #[schema(value_type = Option<String>)]
    pub date: Option<IsoDate>,
    #[schema(value_type = String)]
    pub payment: AmountText,
    #[schema(value_type = String)]
    pub extra: AmountText,
    #[schema(value_type = String)]
    pub interest: AmountText,
    #[schema(value_type = String)]
    pub principal: AmountText,
    #[schema(value_type = String)]
    pub balance: AmountText,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct LoanDerivationDto {
    #[serde(flatten)]
    pub closed_form: DerivationDto,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub payment: Option<PaymentSolutionDto>,
    /// One closed form per run of payments with the same rate, payment and extra:
    /// the first 24 with their derivation, then by their figures alone, at most 600.
    pub segments: Vec<SegmentDto>,
    /// How many segments the plan has, when not all are listed.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub segments_total: Option<usize>,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct SegmentDto {
    pub first_payment: u32,
    pub last_payment: u32,
    pub periodic_rate: String,
    /// Regular payment plus recurring extra, each period.
    pub outflow: String,
    /// A lump sum at the segment's first payment (negative: paid in).
    pub impulse: String,
    pub start_balance: String,
    pub end_balance: String,
    /// Absent past the first 24 segments (the answer's size stays bounded).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub derivation: Option<DerivationDto>,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct MilestoneDto {
    pub payment: u32,
    pub date: Option<String>,
}

#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct MilestonesDto {
    pub principal_exceeds_interest: Option<MilestoneDto>,
    pub balance_80_percent_of_value: Option<MilestoneDto>,
    pub balance_78_percent_of_value: Option<MilestoneDto>,
    pub amortization_midpoint: Option<MilestoneDto>,
    pub final_termination_date: Option<String>,
    pub payments_counted: u32,
    pub total_paid_through_60: String,
    pub principal_paid_through_60: String,
}

/// The JSON answer of the schedule operation.
#[derive(Debug, Serialize, utoipa::ToSchema)]
pub struct LoanScheduleDto {
    pub summary: SummaryDto,
    /// An adjustable loan's highest and lowest figures.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub adjustable_summary: Option<AdjustableSummaryDto>,
    /// §1026.37(j), for an adjustable loan.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rate_table: Option<RateTableDto>,
    /// §1026.19(b)(2)(viii)(B), for an adjustable loan.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub program_example: Option<ProgramExampleDto>,
    /// §1026.43(c)(5) and (e)(2)(iv), for an adjustable loan.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub underwriting: Option<UnderwritingDto>,
    /// The composite, highest and lowest paths of an adjustable loan.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rate_paths: Option<Vec<RatePathDto>>,
    /// §1026.37(c), for an adjustable loan or one with escrow or mortgage insurance.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub projected_payments: Option<Vec<ProjectedColumnDto>>,
    pub derivation: LoanDerivationDto,
    pub reconciliation: Option<ReconciliationDto>,
    pub schedule: Vec<RowDto>,
    pub notes: Vec<String>,
}

/// The answer's members before its schedule, in the order of [`LoanScheduleDto`].
#[derive(Serialize)]
struct ScheduleHead<'a> {
    summary: &'a SummaryDto,
    #[serde(skip_serializing_if = "Option::is_none")]
    adjustable_summary: &'a Option<AdjustableSummaryDto>,
    #[serde(skip_serializing_if = "Option::is_none")]
    rate_table: &'a Option<RateTableDto>,
    #[serde(skip_serializing_if = "Option::is_none")]
    program_example: &'a Option<ProgramExampleDto>,
    #[serde(skip_serializing_if = "Option::is_none")]
    underwriting: &'a Option<UnderwritingDto>,
    #[serde(skip_serializing_if = "Option::is_none")]
    rate_paths: &'a Option<Vec<RatePathDto>>,
    #[serde(skip_serializing_if = "Option::is_none")]
    projected_payments: &'a Option<Vec<ProjectedColumnDto>>,
    derivation: &'a LoanDerivationDto,
    reconciliation: &'a Option<ReconciliationDto>,
}

impl LoanScheduleDto {
    pub fn from_schedule(s: &LoanSchedule) -> Self {
        Self::build(s, true)
    }

    /// The JSON of [`LoanScheduleDto::from_schedule`], byte for byte, with the
    /// schedule's rows written straight from the ledger: numbers, dates and amounts
    /// need no escaping, and a 360-row answer is most of its length.
    pub fn answer_json(s: &LoanSchedule) -> Vec<u8> {
        let head = Self::build(s, false);
        let c = s.terms.currency;
        let mut out = Vec::with_capacity(112 * s.ledger.rows.len() + 8192);
        let written = super::emit::to_writer(
            &mut out,
            &ScheduleHead {
                summary: &head.summary,
                adjustable_summary: &head.adjustable_summary,
                rate_table: &head.rate_table,
                program_example: &head.program_example,
                underwriting: &head.underwriting,
                rate_paths: &head.rate_paths,
                projected_payments: &head.projected_payments,
                derivation: &head.derivation,
                reconciliation: &head.reconciliation,
            },
        );
        if written.is_err() || out.pop() != Some(b'}') {
            return serde_json::to_vec(&Self::from_schedule(s)).unwrap_or_default();
        }
        out.extend_from_slice(b",\"schedule\":[");
        // Each row written whole on the stack, then appended in one copy.
        let mut line = Line::new();
        let (mut payment, mut extra) = (Repeated::new(), Repeated::new());
        for (k, r) in s.ledger.rows.iter().enumerate() {
            line.clear();
            line.put(if k > 0 {
                b",{\"number\":"
            } else {
                b"{\"number\":"
            });
            line.number(u64::from(r.number));
            match r.date {
                Some(d) => {
                    line.put(b",\"date\":\"");
                    line.date(d);
                    line.put(b"\"");
                }
                None => line.put(b",\"date\":null"),
            }
            line.put(b",\"payment\":\"");
            line.amount_again(c, r.payment, &mut payment);
            line.put(b"\",\"extra\":\"");
            line.amount_again(c, r.extra, &mut extra);
            line.put(b"\",\"interest\":\"");
            line.amount(c, r.interest);
            line.put(b"\",\"principal\":\"");
            line.amount(c, r.principal);
            line.put(b"\",\"balance\":\"");
            line.amount(c, r.balance);
            line.put(b"\"}");
            out.extend_from_slice(line.as_bytes());
        }
        out.extend_from_slice(b"],\"notes\":");
        if super::emit::to_writer(&mut out, &head.notes).is_err() {
            return serde_json::to_vec(&Self::from_schedule(s)).unwrap_or_default();
        }
        out.push(b'}');
        out
    }

    /// The answer, with or without the schedule's rows.
    pub(crate) fn build(s: &LoanSchedule, with_rows: bool) -> Self {
        let c = s.terms.currency;
        let money = |d: Decimal| c.format(d);
        let date = |d: Option<jiff::civil::Date>| d.map(|d| d.to_string());
        let milestone = |m: Option<crate::engine::plan::Milestone>| {
            m.map(|m| MilestoneDto {
                payment: m.payment,
                date: date(m.date),
            })
        };
        let segments: Vec<SegmentDto> = if s.plan.segments.len() > 1 {
            s.plan
                .segments
                .iter()
                .take(SEGMENTS_LISTED)
                .enumerate()
                .map(|(k, g)| SegmentDto {
                    first_payment: g.first_payment,
                    last_payment: g.last_payment,
                    periodic_rate: full(g.periodic_rate),
                    outflow: money(g.outflow),
                    impulse: money(if g.impulse.is_zero() {
                        Decimal::ZERO
                    } else {
                        g.impulse
                    }),
                    start_balance: full(g.solution.recurrence.x0.round_dp(12)),
                    end_balance: full(g.end_balance.round_dp(12)),
                    derivation: (k < SEGMENTS_IN_FULL)
                        .then(|| DerivationDto::from_solution(&g.solution)),
                })
                .collect()
        } else {
            vec![]
        };
        let segments_total =
            (s.plan.segments.len() > SEGMENTS_IN_FULL).then_some(s.plan.segments.len());
        let mut closed_form = DerivationDto::from_solution(&s.solution);
        let payment = s.payment_derivation.as_ref().map(|p| {
            let rule = match s.terms.payment_rounding {
                PaymentRounding::Nearest => "to the nearest minor unit",
                PaymentRounding::Up => "up to the next minor unit",
            };
            PaymentSolutionDto {
                n: p.n,
                principal_response_scaled: full(p.principal_response),
                payment_response_scaled: full(p.payment_response),
                exact_payment: full(p.exact_payment),
                posted_payment: money(s.payment),
                text: format!(
                    "Setting x[{n}] = 0 in principal·h[{n}] − P·u[{n}] = 0 gives P = principal·h[{n}]/u[{n}] = {} ({}), posted as {} (rounded {rule}).",
                    full(p.exact_payment.round_dp(12)),
                    "h is the closed form of a unit principal with no payment, u of a unit payment with no principal",
                    money(s.payment),
                    n = p.n
                ),
            }
        });
        if let Some(p) = &payment {
            closed_form.steps.push(p.text.clone());
        }
        let reconciliation = s.reconciliation.map(|r| {
            let text = format!(
                "The posted ledger rounds each period's interest to the minor unit. Against the closed form with the posted payment its balance drifts at most {} (at payment {}); rounding can drift it no more than {} by then. The final payment differs from the closed form's a·x[n−1] by {}.",
                full(r.largest_drift.round_dp(6)),
                r.at_payment,
                full(r.bound.round_dp(6)),
                full(r.final_payment_drift.round_dp(6))
            );
            ReconciliationDto {
                largest_drift: full(r.largest_drift.round_dp(12)),
                at_payment: r.at_payment,
                final_payment_drift: full(r.final_payment_drift.round_dp(12)),
                drift_bound: full(r.bound.round_dp(12)),
                text,
            }
        });
        if let Some(r) = &reconciliation {
            closed_form.steps.push(r.text.clone());
        }
        let adjustable = s.adjustable.as_ref().map(|x| AdjustableDto::new(x, c));
        let (adjustable_summary, rate_table, program_example, underwriting, rate_paths) =
            match adjustable {
                Some(a) => (
                    Some(a.adjustable_summary),
                    Some(a.rate_table),
                    Some(a.program_example),
                    Some(a.underwriting),
                    Some(a.rate_paths),
                ),
                None => (None, None, None, None, None),
            };
        LoanScheduleDto {
            adjustable_summary,
            rate_table,
            program_example,
            underwriting,
            rate_paths,
            projected_payments: s.full_payment.as_ref().map(projected_dto),
            summary: SummaryDto {
                payment: money(s.payment),
                number_of_payments: s.number_of_payments,
                final_payment: money(s.final_payment),
                total_paid: money(s.ledger.total_paid),
                total_interest: money(s.ledger.total_interest),
                periodic_rate: full(s.periodic_rate),
                currency: c.code(),
                payment_frequency: s.terms.payment_frequency.name(),
                payoff_date: date(s.payoff_date),
                total_extra: money(s.plan.total_extra),
                interest_saved: s.savings.map(|v| money(v.interest_saved)),
                payments_saved: s.savings.map(|v| v.payments_saved),
                balloon: s.plan.balloon.map(money),
                odd_days: s.plan.odd_days,
                odd_days_interest: money(s.plan.odd_days_interest),
                prepaid_interest: money(s.plan.prepaid_interest),
                milestones: MilestonesDto {
                    principal_exceeds_interest: milestone(s.milestones.principal_exceeds_interest),
                    balance_80_percent_of_value: milestone(s.milestones.balance_80_percent),
                    balance_78_percent_of_value: milestone(s.milestones.balance_78_percent),
                    amortization_midpoint: milestone(s.milestones.midpoint),
                    final_termination_date: date(s.milestones.final_termination_date),
                    payments_counted: s.milestones.payments_counted,
                    total_paid_through_60: money(s.milestones.total_paid_60),
                    principal_paid_through_60: money(s.milestones.principal_paid_60),
                },
            },
            derivation: LoanDerivationDto {
                closed_form,
                payment,
                segments,
                segments_total,
            },
            reconciliation,
            schedule: s
                .ledger
                .rows
                .iter()
                .take(if with_rows { usize::MAX } else { 0 })
                .map(|r| RowDto {
                    number: r.number,
                    date: r.date.map(IsoDate),
                    payment: c.text(r.payment),
                    extra: c.text(r.extra),
                    interest: c.text(r.interest),
                    principal: c.text(r.principal),
                    balance: c.text(r.balance),
                })
                .collect(),
            notes: s.notes.clone(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::fields::{Fields, Source};
    use crate::input::loan::schedule_request_from;

    fn answer(query: &str) -> LoanSchedule {
        let pairs: Vec<(String, String)> = form_urlencoded::parse(query.as_bytes())
            .into_owned()
            .collect();
        let r = schedule_request_from(Fields::new(Source::Query(&pairs))).expect("valid");
        crate::engine::schedule::schedule_with(&r.terms, &r.options).expect("solved")
    }

    #[test]
    fn the_hand_written_answer_is_the_serialized_answer_byte_for_byte() {
        // serde_json's own serialization of the whole answer is the reference.
        for query in [
            "principal=100000&annual_rate_percent=6&term_months=360",
            "principal=250000&annual_rate_percent=7.125&term_months=360&funding_date=2027-01-17&first_payment_date=2027-03-01&extra_payments=150@13-,5000@36",
            "principal=1500000&annual_rate_percent=1.9&term_months=120&currency=JPY",
            "principal=8000.125&annual_rate_percent=4&term_months=24&currency=KWD&rate_changes=13:6",
            "principal=12000&annual_rate_percent=0&term_months=48&first_payment_date=2027-01-31",
        ] {
            let s = answer(query);
            let want = serde_json::to_vec(&LoanScheduleDto::from_schedule(&s)).unwrap();
            let got = LoanScheduleDto::answer_json(&s);
            assert_eq!(
                String::from_utf8(got).unwrap(),
                String::from_utf8(want).unwrap(),
                "{query}"
            );
        }
    }
}
