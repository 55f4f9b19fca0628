//! The loan check's answer: the computed payment and disclosure figures beside the quotes,
//! each verdict with its tolerance, and the disclosure rounding. The API serializes it; the
//! check page renders it.

use crate::answer::derivation::full;
use crate::engine::disclosure::{check_loan_with, form_dollars, form_percent, LoanCheck};
use crate::input::check::read_check;
use crate::input::fields::Fields;
use crate::input::problem::ApiError;
use rust_decimal::Decimal;
use serde::Serialize;

#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct ChargeDto {
    pub name: String,
    pub amount: String,
}

#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct InFiveYearsDto {
    /// The last payment counted (60 months of payments, or the whole term).
    pub through_payment: u32,
    /// The scheduled payments through it.
    pub payments: String,
    /// The prepaid finance charges, counted as loan costs paid at consummation.
    pub loan_costs: String,
    /// payments + loan costs.
    pub total_paid: String,
    pub principal_paid: String,
}

#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct FinanceChargeToleranceDto {
    pub quoted_finance_charge: String,
    pub finance_charge: String,
    /// Quoted − computed: negative when the quote understates it.
    pub difference: String,
    pub tolerance: String,
    pub rule: &'static str,
    pub within_tolerance: bool,
}

#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct RoundingDto {
    /// The answer's field.
    pub figure: &'static str,
    pub value: String,
    /// As a disclosure form shows it.
    pub disclosed: String,
    pub rule: &'static str,
}

/// The JSON answer of the check.
#[derive(Debug, Clone, Serialize, utoipa::ToSchema)]
pub struct CheckAnswer {
    pub currency: &'static str,
    pub mortgage: bool,
    pub computed_payment: String,
    pub number_of_payments: u32,
    pub final_payment: String,
    pub quoted_payment: Option<String>,
    pub payment_difference: Option<String>,
    pub payment_matches: Option<bool>,
    pub implied_annual_rate_percent: Option<String>,
    pub apr_percent: String,
    pub apr_percent_full: String,
    pub quoted_apr_percent: Option<String>,
    pub apr_difference_points: Option<String>,
    pub apr_tolerance_points: String,
    /// `regular` or `irregular` (§1026.22(a)(3)).
    pub apr_transaction: &'static str,
    pub apr_tolerance_reason: String,
    pub apr_within_tolerance: Option<bool>,
    pub prepaid_finance_charges: Vec<ChargeDto>,
    pub prepaid_finance_charges_total: String,
    pub amount_financed: String,
    pub finance_charge: String,
    pub total_of_payments: String,
    pub total_interest: String,
    pub total_interest_percentage: String,
    pub total_interest_percentage_full: String,
    pub in_five_years: InFiveYearsDto,
    pub finance_charge_tolerance: Option<FinanceChargeToleranceDto>,
    /// How a disclosure form would show each figure (left out of a batch's summary).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub disclosure_rounding: Vec<RoundingDto>,
    pub notes: Vec<String>,
}

impl CheckAnswer {
    /// The answer to a check, taking its notes and texts; the form-rounding
    /// table only `with_rounding` (a batch's summary leaves it out).
    pub fn from_check(mut c: LoanCheck, with_rounding: bool) -> Self {
        let cur = c.scheduled.terms.currency;
        let reason = std::mem::take(&mut c.disclosure.apr_tolerance.reason);
        let charges = std::mem::take(&mut c.disclosure.prepaid_finance_charges);
        let notes = std::mem::take(&mut c.notes);
        let money = |d: Decimal| cur.format(d);
        let f = &c.disclosure;
        let mut apr_rounded = f.apr.apr_percent_rounded;
        apr_rounded.rescale(2);
        let five = &f.in_five_years;
        const CENT: &str = "not rounded: shown to the minor unit; §1026.37(o)(4) rounds the Loan Estimate's figures, and this is a §1026.18 figure (Residue's reading, unconfirmed)";
        const DOLLARS: &str =
            "to the nearest whole dollar (§1026.37(l)(1), (o)(4); halves up, common practice)";
        const PERCENT: &str = "to three decimals, trailing zeros dropped (§1026.37(o)(4); halves up, common practice)";
        let dollars = |d: Decimal| form_dollars(d).to_string();
        let disclosure_rounding = if !with_rounding {
            Vec::new()
        } else {
            vec![
            RoundingDto {
                figure: "apr_percent",
                value: full(f.apr.apr_percent),
                disclosed: form_percent(f.apr.apr_percent).to_string(),
                rule: PERCENT,
            },
            RoundingDto {
                figure: "total_interest_percentage",
                value: full(f.total_interest_percentage),
                disclosed: form_percent(f.total_interest_percentage).to_string(),
                rule: "to three decimals, trailing zeros dropped (§1026.37(l)(3), (o)(4); halves up, common practice)",
            },
            RoundingDto {
                figure: "in_five_years.total_paid",
                value: money(five.total_paid),
                disclosed: dollars(five.total_paid),
                rule: DOLLARS,
            },
            RoundingDto {
                figure: "in_five_years.principal_paid",
                value: money(five.principal_paid),
                disclosed: dollars(five.principal_paid),
                rule: DOLLARS,
            },
            RoundingDto {
                figure: "amount_financed",
                value: money(f.amount_financed),
                disclosed: money(f.amount_financed),
                rule: CENT,
            },
            RoundingDto {
                figure: "finance_charge",
                value: money(f.finance_charge),
                disclosed: money(f.finance_charge),
                rule: CENT,
            },
            RoundingDto {
                figure: "total_of_payments",
                value: money(f.total_of_payments),
                disclosed: money(f.total_of_payments),
                rule: CENT,
            },
            ]
        };
        CheckAnswer {
            currency: cur.code(),
            mortgage: c.mortgage,
            computed_payment: money(c.scheduled.payment),
            number_of_payments: c.scheduled.number_of_payments,
            final_payment: money(c.scheduled.final_payment),
            quoted_payment: c.payment.as_ref().map(|p| money(p.quoted)),
            payment_difference: c.payment.as_ref().map(|p| money(p.difference)),
            payment_matches: c.payment.as_ref().map(|p| p.matches),
            implied_annual_rate_percent: c
                .payment
                .as_ref()
                .and_then(|p| p.implied_annual_rate_percent)
                .map(full),
            apr_percent: apr_rounded.to_string(),
            apr_percent_full: full(f.apr.apr_percent),
            quoted_apr_percent: c.apr.as_ref().map(|a| full(a.quoted_percent)),
            apr_difference_points: c.apr.as_ref().map(|a| full(a.difference_points)),
            apr_tolerance_points: f.apr_tolerance.points.to_string(),
            apr_transaction: if f.apr_tolerance.regular {
                "regular"
            } else {
                "irregular"
            },
            apr_tolerance_reason: reason,
            apr_within_tolerance: c.apr.as_ref().map(|a| a.within_tolerance),
            prepaid_finance_charges: charges
                .into_iter()
                .map(|ch| ChargeDto {
                    name: ch.name,
                    amount: money(ch.amount),
                })
                .collect(),
            prepaid_finance_charges_total: money(f.prepaid_total),
            amount_financed: money(f.amount_financed),
            finance_charge: money(f.finance_charge),
            total_of_payments: money(f.total_of_payments),
            total_interest: money(f.total_interest),
            total_interest_percentage: form_percent(f.total_interest_percentage).to_string(),
            total_interest_percentage_full: full(f.total_interest_percentage),
            in_five_years: InFiveYearsDto {
                through_payment: five.through_payment,
                payments: money(five.payments),
                loan_costs: money(five.loan_costs),
                total_paid: money(five.total_paid),
                principal_paid: money(five.principal_paid),
            },
            finance_charge_tolerance: c.finance_charge.as_ref().map(|t| {
                FinanceChargeToleranceDto {
                    quoted_finance_charge: money(t.quoted),
                    finance_charge: money(f.finance_charge),
                    difference: money(t.difference),
                    tolerance: money(t.tolerance),
                    rule: t.rule.text(),
                    within_tolerance: t.within_tolerance,
                }
            }),
            disclosure_rounding,
            notes,
        }
    }
}

/// Reads, checks and answers.
///
/// # Errors
/// Bad fields, or the engine's refusal pointed at its field.
pub fn check_answer(f: Fields<'_>) -> Result<CheckAnswer, ApiError> {
    check_answer_with(f, true)
}

/// As [`check_answer`]; the form-rounding table only `with_rounding`.
///
/// # Errors
/// As [`check_answer`].
pub fn check_answer_with(f: Fields<'_>, with_rounding: bool) -> Result<CheckAnswer, ApiError> {
    let prefix = f.pointer("");
    let mut f = f;
    let term_in_months = f.has("term_months");
    let req = read_check(f)?;
    let c = check_loan_with(
        &req.terms,
        &req.options,
        &req.prepaid,
        &req.quotes,
        req.mortgage,
    )
    .map_err(|e| {
        crate::input::loan::engine_problem(e, &prefix, term_in_months).naming(
            &prefix,
            &[
                "annual_rate_percent",
                if term_in_months {
                    "term_months"
                } else {
                    "term_payments"
                },
            ],
        )
    })?;
    Ok(CheckAnswer::from_check(c, with_rounding))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::disclosure::PrepaidFinanceCharge;
    use crate::engine::money::Currency;
    use crate::input::check::parse_charges_text;
    use crate::input::fields::Source;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    fn query(q: &str) -> Result<CheckAnswer, ApiError> {
        let pairs: Vec<(String, String)> =
            form_urlencoded::parse(q.as_bytes()).into_owned().collect();
        check_answer(Fields::new(Source::Query(&pairs)))
    }

    #[test]
    fn charges_are_read_from_the_query_syntax() {
        let c = parse_charges_text("origination:1250.00, points:2500", Currency::USD).unwrap();
        assert_eq!(
            c,
            vec![
                PrepaidFinanceCharge {
                    name: "origination".into(),
                    amount: d("1250.00")
                },
                PrepaidFinanceCharge {
                    name: "points".into(),
                    amount: d("2500")
                }
            ]
        );
        for (bad, says) in [
            ("origination", "name:amount"),
            (":5", "needs a name"),
            ("fee:-5", "negative"),
            ("fee:5.001", "decimals"),
            ("fee:abc", "the amount"),
        ] {
            let e = parse_charges_text(bad, Currency::USD).unwrap_err();
            assert!(e.contains(says), "{bad}: {e}");
        }
    }

    #[test]
    fn a_check_from_the_query_names_its_fields() {
        let a = query(
            "principal=100000&annual_rate_percent=6&term_months=360&quoted_payment=599.55&quoted_apr_percent=6&prepaid_finance_charges=points:1000&mortgage=false",
        )
        .unwrap();
        assert_eq!(a.payment_matches, Some(true));
        assert_eq!(a.amount_financed, "99000.00");
        assert!(!a.mortgage);
        let e = query("principal=100000&annual_rate_percent=6&term_months=360&mortgage=maybe")
            .unwrap_err();
        assert_eq!(e.errors[0].pointer, "mortgage");
        let e = query(
            "principal=100000&annual_rate_percent=6&term_months=360&prepaid_finance_charges=points:100000",
        )
        .unwrap_err();
        assert_eq!(e.errors[0].pointer, "prepaid_finance_charges");
        let e =
            query("principal=100000&annual_rate_percent=6&term_months=360&quoted_payment=1.234")
                .unwrap_err();
        assert_eq!(e.errors[0].pointer, "quoted_payment");
    }
}
