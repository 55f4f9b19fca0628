//! A loan's quotes checked: the payment against the posted one (with the note
//! rate it implies), the APR and the finance charge within their tolerances, and
//! the notes that say how each figure was found.

use rust_decimal::{Decimal, MathematicalOps};

use super::figures::{disclose_dated, LoanDisclosure, PrepaidFinanceCharge};
use super::tolerance::{check_apr, check_finance_charge, AprCheck, FinanceChargeCheck};
use crate::engine::error::{EngineError, ErrorKind, OrOverflow, Result};
use crate::engine::loan::rate_for_payment;
use crate::engine::money::Currency;
use crate::engine::plan::PlanOptions;
use crate::engine::rate::{nth_root, Frequency};
use crate::engine::schedule::{scheduled_payments, ScheduledPayments, CAUTION};
use crate::engine::terms::{LoanTerm, LoanTerms};

/// The sentence every check carries after the caution.
pub const TOOL_NOT_OPINION: &str = "This check is a tool, not a compliance opinion.";

/// The nominal annual rate, in percent, at which `n` payments of `payment`
/// repay `principal`: the periodic rate i from [`rate_for_payment`] (the closed
/// form, root-found), then j = i × p when interest compounds at the payment
/// frequency, else the inverse of the equivalent rate i = (1 + j/m)^(m/p) − 1:
/// j = m·[(1 + i)^(p/m) − 1], the power taken as (ᵛ√(1 + i))^u with p/m = u/v
/// in lowest terms.
///
/// # Errors
/// Payments totalling less than the principal (no rate of 0 % or more), `n`
/// out of range, or an overflow.
pub fn implied_annual_rate_percent(
    principal: Decimal,
    payment: Decimal,
    n: u32,
    payment_frequency: Frequency,
    compounding: Option<Frequency>,
) -> Result<Decimal> {
    let i = rate_for_payment(principal, payment, n)?;
    let p = payment_frequency.per_year();
    let m = compounding.unwrap_or(payment_frequency).per_year();
    let nominal = if p == m {
        i.checked_mul(Decimal::from(p))
            .or_overflow("the implied rate")?
    } else {
        let g = gcd(p, m);
        let (u, v) = (p / g, m / g);
        let root = nth_root(Decimal::ONE + i, v)?;
        let factor = root
            .checked_powi(i64::from(u))
            .or_overflow("the implied rate")?;
        (factor - Decimal::ONE)
            .checked_mul(Decimal::from(m))
            .or_overflow("the implied rate")?
    };
    nominal
        .checked_mul(Decimal::ONE_HUNDRED)
        .or_overflow("the implied rate")
}

fn gcd(a: u32, b: u32) -> u32 {
    if b == 0 {
        a
    } else {
        gcd(b, a % b)
    }
}

/// The quotes a check compares.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Quotes {
    /// The quoted regular payment.
    pub payment: Option<Decimal>,
    /// The quoted APR, in percent.
    pub apr_percent: Option<Decimal>,
    /// The quoted finance charge.
    pub finance_charge: Option<Decimal>,
}

/// A quoted payment against the posted one.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PaymentCheck {
    /// The quoted payment.
    pub quoted: Decimal,
    /// Quoted − computed.
    pub difference: Decimal,
    /// Equal to the minor unit.
    pub matches: bool,
    /// The note rate the quoted payment implies over the same term; `None`
    /// when no rate of 0 % or more gives it.
    pub implied_annual_rate_percent: Option<Decimal>,
}

/// The answer to a check: the schedule, its disclosure figures, and each quote compared.
#[derive(Debug, Clone)]
pub struct LoanCheck {
    /// The loan's scheduled payments and totals.
    pub scheduled: ScheduledPayments,
    /// The disclosure figures computed from the schedule.
    pub disclosure: LoanDisclosure,
    /// Whether the loan is a mortgage (the finance-charge tolerance of §1026.18(d)(1)).
    pub mortgage: bool,
    /// The quoted payment compared, when one was quoted.
    pub payment: Option<PaymentCheck>,
    /// The quoted APR compared, when one was quoted.
    pub apr: Option<AprCheck>,
    /// The quoted finance charge compared, when one was quoted.
    pub finance_charge: Option<FinanceChargeCheck>,
    /// The caution and the check's own sentence, then the schedule's notes and how
    /// each figure was found.
    pub notes: Vec<String>,
}

/// Posts the loan, computes its disclosure figures and compares the quotes.
///
/// # Errors
/// As [`schedule`](crate::engine::schedule::schedule) and [`disclose`](super::figures::disclose); a quoted payment or finance charge that is
/// negative or has more decimals than the currency, or a negative quoted APR.
pub fn check_loan(
    terms: &LoanTerms,
    prepaid: &[PrepaidFinanceCharge],
    quotes: &Quotes,
    mortgage: bool,
) -> Result<LoanCheck> {
    check_loan_with(terms, &PlanOptions::default(), prepaid, quotes, mortgage)
}

/// Each quoted figure alone: a payment more than zero, a finance charge not
/// negative (both in the currency's minor units), an APR not negative.
pub fn quote_problems(quotes: &Quotes, currency: Currency) -> Vec<EngineError> {
    let mut out = Vec::new();
    let money_field =
        |field: &'static str, value: Decimal, positive: bool| -> Option<EngineError> {
            if value.is_sign_negative() && !value.is_zero() || positive && value.is_zero() {
                return Some(EngineError::out_of_range(
                    field,
                    if positive {
                        "must be more than zero"
                    } else {
                        "cannot be negative"
                    },
                ));
            }
            if !currency.fits(value) {
                return Some(EngineError::out_of_range(
                    field,
                    format!(
                        "{} amounts have at most {} decimals",
                        currency.code(),
                        currency.minor_units()
                    ),
                ));
            }
            None
        };
    if let Some(p) = quotes.payment {
        out.extend(money_field("quoted_payment", p, true));
    }
    if let Some(fc) = quotes.finance_charge {
        out.extend(money_field("quoted_finance_charge", fc, false));
    }
    if let Some(a) = quotes.apr_percent {
        if a.is_sign_negative() && !a.is_zero() {
            out.push(EngineError::out_of_range(
                "quoted_apr_percent",
                "cannot be negative",
            ));
        }
    }
    out
}

/// As [`check_loan`], for a loan with plan options: a funding date and a first
/// payment date (an odd first period, its interest added to the first payment or
/// prepaid at closing), an interest-only start, a balloon, rate steps. Extra
/// payments are not part of a disclosure and are refused.
///
/// # Errors
/// As [`check_loan`], and extra payments.
pub fn check_loan_with(
    terms: &LoanTerms,
    options: &PlanOptions,
    prepaid: &[PrepaidFinanceCharge],
    quotes: &Quotes,
    mortgage: bool,
) -> Result<LoanCheck> {
    if !options.extras.is_empty() {
        return Err(EngineError::out_of_range(
            "extra_payments",
            "a disclosure counts the scheduled payments only: leave extra payments out of a check",
        ));
    }
    let currency = terms.currency;
    if let Some(e) = quote_problems(quotes, currency).into_iter().next() {
        return Err(e);
    }
    for charge in prepaid {
        if !currency.fits(charge.amount) {
            return Err(EngineError::out_of_range(
                "prepaid_finance_charges",
                format!(
                    "{} amounts have at most {} decimals",
                    currency.code(),
                    currency.minor_units()
                ),
            ));
        }
    }
    let s = scheduled_payments(terms, options)?;
    let disclosure = disclose_dated(&s, prepaid, options.funding_date)?;
    let mut notes = vec![CAUTION.to_string(), TOOL_NOT_OPINION.to_string()];
    notes.extend(s.notes.iter().filter(|n| n.as_str() != CAUTION).cloned());
    let n = match terms.term {
        LoanTerm::Payments(n) => n,
        LoanTerm::Payment(_) => s.number_of_payments,
    };
    let payment = match quotes.payment {
        None => None,
        Some(quoted) => {
            let implied = match implied_annual_rate_percent(
                terms.principal,
                quoted,
                n,
                terms.payment_frequency,
                terms.compounding,
            ) {
                Ok(j) => Some(j),
                Err(e) if e.kind == ErrorKind::NoSolution => {
                    notes.push(format!(
                        "The quoted payment of {} over {n} payments totals less than the principal: no rate of 0 % or more gives it, so no note rate is implied.",
                        currency.format(quoted)
                    ));
                    None
                }
                Err(e) => {
                    return Err(EngineError {
                        field: Some("quoted_payment"),
                        ..e
                    })
                }
            };
            Some(PaymentCheck {
                quoted,
                difference: quoted - s.payment,
                matches: quoted == s.payment,
                implied_annual_rate_percent: implied,
            })
        }
    };
    let apr = quotes.apr_percent.map(|quoted| {
        check_apr(
            quoted,
            disclosure.apr.apr_percent,
            disclosure.apr_tolerance.points,
        )
    });
    let finance_charge = quotes.finance_charge.map(|quoted| {
        check_finance_charge(
            quoted,
            disclosure.finance_charge,
            disclosure.amount_financed,
            mortgage,
        )
    });
    match disclosure.dated_from {
        Some(start) => notes.push(format!(
            "APR by 12 CFR 1026 Appendix J: the amount financed ({}) advanced on the funding date {start} and each of the {} posted payments on its due date; the unit-period ({}) chosen by (b)(4), an odd first period counted in whole unit-periods and a fraction (b)(5); equal payments one unit-period apart summed in closed form.",
            currency.format(disclosure.amount_financed),
            s.number_of_payments,
            disclosure.unit_period
        )),
        None => notes.push(format!(
            "APR by 12 CFR 1026 Appendix J: the amount financed ({}) advanced at consummation and the {} posted payments, the first one payment period later (a regular first period); the unit-period is the payment period ({}), solved in closed form over runs of equal payments.",
            currency.format(disclosure.amount_financed),
            s.number_of_payments,
            disclosure.unit_period
        )),
    }
    if !disclosure.prepaid_interest.is_zero() {
        notes.push(format!(
            "Prepaid interest of {} for the odd first period is a prepaid finance charge: it lowers the amount financed and counts in the total interest percentage; it is not a loan cost of the in-5-years figure.",
            currency.format(disclosure.prepaid_interest)
        ));
    }
    if apr.is_some() {
        notes.push("The quoted APR is compared with the computed APR unrounded; a difference of exactly the tolerance is within it.".into());
    }
    if disclosure.prepaid_total > Decimal::ZERO {
        notes.push("In 5 years counts the prepaid finance charges as loan costs paid at consummation (§1026.37(l)(1)(i)); mortgage insurance and loan costs that are not finance charges are not known here and not included.".into());
    }
    if disclosure.prepaid_interest.is_zero() {
        notes.push("The total interest percentage counts the scheduled interest of the posted ledger (odd-days interest added to the first payment included); no interest is prepaid.".into());
    }
    if currency != Currency::USD {
        notes.push(format!(
            "Regulation Z is a US rule stated in US dollars; its dollar tolerances are applied to these {} figures as they stand.",
            currency.code()
        ));
    }
    Ok(LoanCheck {
        scheduled: s,
        disclosure,
        mortgage,
        payment,
        apr,
        finance_charge,
        notes,
    })
}
#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::rate::AnnualRate;
    use crate::engine::testing::{d, level_loan as terms};

    #[test]
    fn the_implied_rate_inverts_the_payment() {
        // The exact payment of 6 % over 360 implies 6 % again.
        let exact = crate::engine::loan::payment_for_term(d("100000"), d("0.005"), 360).unwrap();
        let j =
            implied_annual_rate_percent(d("100000"), exact, 360, Frequency::Monthly, None).unwrap();
        assert!((j - d("6")).abs() < d("1e-18"), "{j}");
        // Monthly payments on a rate compounded semiannually: invert (1 + j/2)^(1/6) − 1.
        let r = AnnualRate::from_percent(d("6")).unwrap();
        let i = r
            .periodic_rate(Frequency::Monthly, Frequency::Semiannual)
            .unwrap();
        let p = crate::engine::loan::payment_for_term(d("100000"), i, 300).unwrap();
        let j = implied_annual_rate_percent(
            d("100000"),
            p,
            300,
            Frequency::Monthly,
            Some(Frequency::Semiannual),
        )
        .unwrap();
        assert!((j - d("6")).abs() < d("1e-16"), "{j}");
        // Daily compounding, monthly payments.
        let i = AnnualRate::from_percent(d("4.1"))
            .unwrap()
            .periodic_rate(Frequency::Monthly, Frequency::Daily)
            .unwrap();
        let p = crate::engine::loan::payment_for_term(d("50000"), i, 60).unwrap();
        let j = implied_annual_rate_percent(
            d("50000"),
            p,
            60,
            Frequency::Monthly,
            Some(Frequency::Daily),
        )
        .unwrap();
        assert!((j - d("4.1")).abs() < d("1e-14"), "{j}");
    }

    #[test]
    fn a_check_compares_each_quote() {
        let quotes = Quotes {
            payment: Some(d("599.56")),
            apr_percent: Some(d("6.00")),
            finance_charge: Some(d("115000")),
        };
        let c = check_loan(&terms("100000", "6", 360), &[], &quotes, true).unwrap();
        let p = c.payment.unwrap();
        assert_eq!((p.difference, p.matches), (d("0.01"), false));
        assert!(p.implied_annual_rate_percent.unwrap() > d("6"));
        assert!(c.apr.unwrap().within_tolerance);
        assert!(
            c.finance_charge.unwrap().within_tolerance
                == (d("115000") >= c.disclosure.finance_charge - d("100"))
        );
        assert_eq!(c.notes[0], CAUTION);
        assert_eq!(c.notes[1], TOOL_NOT_OPINION);
    }

    #[test]
    fn a_check_refuses_bad_quotes_by_field() {
        let t = terms("100000", "6", 360);
        let bad = |q: Quotes| check_loan(&t, &[], &q, true).unwrap_err().field;
        assert_eq!(
            bad(Quotes {
                payment: Some(d("599.555")),
                ..Quotes::default()
            }),
            Some("quoted_payment")
        );
        assert_eq!(
            bad(Quotes {
                payment: Some(d("0")),
                ..Quotes::default()
            }),
            Some("quoted_payment")
        );
        assert_eq!(
            bad(Quotes {
                apr_percent: Some(d("-1")),
                ..Quotes::default()
            }),
            Some("quoted_apr_percent")
        );
        assert_eq!(
            bad(Quotes {
                finance_charge: Some(d("-1")),
                ..Quotes::default()
            }),
            Some("quoted_finance_charge")
        );
    }

    #[test]
    fn a_quoted_payment_too_small_for_any_rate_implies_none() {
        let quotes = Quotes {
            payment: Some(d("100")),
            ..Quotes::default()
        };
        let c = check_loan(&terms("100000", "6", 360), &[], &quotes, true).unwrap();
        assert_eq!(c.payment.unwrap().implied_annual_rate_percent, None);
        assert!(c
            .notes
            .iter()
            .any(|n| n.contains("no note rate is implied")));
    }
}
