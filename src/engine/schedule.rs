//! The loan schedule job: terms in, payment, posted ledger, derivation and notes out.

use rust_decimal::Decimal;

use super::error::{EngineError, OrOverflow, Result};
use super::ledger::{post_level, reconcile, Ledger, Reconciliation};
use super::loan::{payment_for_term, solve_balance, term_for_payment, UnitResponses, MAX_PAYMENTS};
use super::money::{Currency, InterestRounding, PaymentRounding};
use super::rate::{AnnualRate, Frequency};
use super::recurrence::Solution;

/// The caution every result carries.
pub const CAUTION: &str = "Estimates for discussion only: not an offer of credit, a disclosure, or financial, legal or tax advice. \
The lender's system of record, local regulation and licensed professionals decide.";

/// The largest principal accepted.
pub const MAX_PRINCIPAL: Decimal = Decimal::from_parts(3_567_587_328, 232, 0, false, 0); // 1,000,000,000,000

/// How long the loan runs, or what is paid: the other one is solved.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LoanTerm {
    /// This many payments; the payment is solved.
    Payments(u32),
    /// This regular payment; the number of payments is solved.
    Payment(Decimal),
}

/// A level-payment loan, parsed and in range.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LoanTerms {
    pub principal: Decimal,
    pub currency: Currency,
    pub rate: AnnualRate,
    pub payment_frequency: Frequency,
    /// `None`: interest compounds at the payment frequency.
    pub compounding: Option<Frequency>,
    pub term: LoanTerm,
    pub payment_rounding: PaymentRounding,
    pub interest_rounding: InterestRounding,
}

/// How the payment was found from the closed form (when it was solved).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PaymentDerivation {
    pub n: u32,
    /// h[n]/s^n: a unit principal after n periods with no payment (s = max(a, 1)).
    pub principal_response: Decimal,
    /// u[n]/s^n: a unit payment each period accumulated over n periods.
    pub payment_response: Decimal,
    /// principal·h[n]/u[n], unrounded.
    pub exact_payment: Decimal,
    pub unit: UnitResponses,
}

/// The answer to a loan schedule request.
#[derive(Debug, Clone)]
pub struct LoanSchedule {
    pub terms: LoanTerms,
    pub periodic_rate: Decimal,
    pub payment: Decimal,
    pub number_of_payments: u32,
    pub final_payment: Decimal,
    pub payment_derivation: Option<PaymentDerivation>,
    /// The balance recurrence with the posted payment, solved.
    pub solution: Solution,
    pub ledger: Ledger,
    /// `None` when the closed form's powers leave the decimal range (very long terms at high rates).
    pub reconciliation: Option<Reconciliation>,
    pub notes: Vec<String>,
}

impl LoanTerms {
    /// Checks ranges that need more than one field.
    ///
    /// # Errors
    /// Principal out of range, a payment with too many decimals, a term out of range.
    pub fn check(&self) -> Result<()> {
        if self.principal <= Decimal::ZERO {
            return Err(EngineError::out_of_range(
                "principal",
                "the principal must be more than zero",
            ));
        }
        if self.principal > MAX_PRINCIPAL {
            return Err(EngineError::out_of_range(
                "principal",
                "the principal cannot exceed 1,000,000,000,000",
            ));
        }
        if !self.currency.fits(self.principal) {
            return Err(EngineError::out_of_range(
                "principal",
                too_many_decimals(self.currency),
            ));
        }
        match self.term {
            LoanTerm::Payments(n) if n == 0 || n > MAX_PAYMENTS => Err(EngineError::out_of_range(
                "term_payments",
                format!("the number of payments must be 1 to {MAX_PAYMENTS}"),
            )),
            LoanTerm::Payment(p) if p <= Decimal::ZERO => Err(EngineError::out_of_range(
                "payment",
                "the payment must be more than zero",
            )),
            LoanTerm::Payment(p) if !self.currency.fits(p) => Err(EngineError::out_of_range(
                "payment",
                too_many_decimals(self.currency),
            )),
            _ => Ok(()),
        }
    }

    /// The periodic rate i for the payment frequency.
    ///
    /// # Errors
    /// An overflow of the compounding factor.
    pub fn periodic_rate(&self) -> Result<Decimal> {
        self.rate
            .periodic_rate(
                self.payment_frequency,
                self.compounding.unwrap_or(self.payment_frequency),
            )
            .map_err(|e| e.at("annual_rate_percent"))
    }
}

fn too_many_decimals(currency: Currency) -> String {
    match currency.minor_units() {
        0 => format!("{} amounts have no decimals", currency.code()),
        1 => format!("{} amounts have at most 1 decimal", currency.code()),
        n => format!("{} amounts have at most {n} decimals", currency.code()),
    }
}

/// Number of payments in `months` months at `frequency`, when it is a whole number.
///
/// # Errors
/// A term that is not a whole number of payments, or out of range.
pub fn payments_in_months(months: u32, frequency: Frequency) -> Result<u32> {
    let scaled = u64::from(months) * u64::from(frequency.per_year());
    if scaled % 12 != 0 {
        return Err(EngineError::out_of_range(
            "term_months",
            format!(
                "{months} months is not a whole number of {} payments",
                frequency.name()
            ),
        ));
    }
    let n = scaled / 12;
    if n == 0 || n > u64::from(MAX_PAYMENTS) {
        return Err(EngineError::out_of_range(
            "term_months",
            format!("the term must give 1 to {MAX_PAYMENTS} payments"),
        ));
    }
    Ok(n as u32)
}

/// Solves and posts a level-payment loan.
///
/// # Errors
/// Out-of-range terms, a payment that never repays, or an overflow; each names its field.
pub fn schedule(terms: &LoanTerms) -> Result<LoanSchedule> {
    terms.check()?;
    let i = terms.periodic_rate()?;
    let currency = terms.currency;
    let mut notes = vec![CAUTION.to_string()];
    if terms.compounding.is_none() {
        notes.push(format!(
            "Compounding taken equal to the payment frequency ({}).",
            terms.payment_frequency.name()
        ));
    } else if terms.compounding != Some(terms.payment_frequency) {
        notes.push(format!(
            "Interest compounds {} and payments are {}: the periodic rate is the equivalent rate (1 + j/m)^(m/p) − 1.",
            terms.compounding.map_or("", |f| f.name()),
            terms.payment_frequency.name()
        ));
    }
    let (payment, max_payments, derivation) = match terms.term {
        LoanTerm::Payments(n) => {
            let exact = payment_for_term(terms.principal, i, n)?;
            let posted = currency.round(exact, terms.payment_rounding.strategy());
            let unit = UnitResponses::for_rate(i)?;
            let (h, u) = unit.at_scaled(n)?;
            let derivation = PaymentDerivation {
                n,
                principal_response: h,
                payment_response: u,
                exact_payment: exact,
                unit,
            };
            (posted, n, Some(derivation))
        }
        LoanTerm::Payment(p) => {
            // The closed form's term checks that the payment repays at all; the
            // posted ledger, whose rounded interest may need a payment or two
            // more, then runs until it is repaid.
            term_for_payment(terms.principal, i, p)?;
            (p, MAX_PAYMENTS, None)
        }
    };
    if payment <= Decimal::ZERO {
        return Err(EngineError::no_solution(
            Some("principal"),
            format!(
                "the payment rounds to zero in {}: the principal is too small for this term",
                currency.code()
            ),
        ));
    }
    let first_interest = currency.round(terms.principal * i, terms.interest_rounding.strategy());
    if payment <= first_interest && terms.principal > currency.minor_unit() {
        return Err(EngineError::no_solution(
            Some(match terms.term {
                LoanTerm::Payments(_) => "principal",
                LoanTerm::Payment(_) => "payment",
            }),
            "the rounded payment does not exceed the first period's posted interest, so the balance never falls",
        ));
    }
    let ledger = post_level(
        terms.principal,
        i,
        payment,
        max_payments,
        currency,
        terms.interest_rounding,
    )?;
    let solution = solve_balance(terms.principal, i, payment)?;
    let a = Decimal::ONE
        .checked_add(i)
        .or_overflow("the interest factor")?;
    let reconciliation = match reconcile(&ledger, &solution.closed_form, a, currency) {
        Ok(r) => Some(r),
        Err(e) if e.kind == super::error::ErrorKind::Overflow => {
            notes.push("The ledger could not be reconciled with the closed form: a^k leaves the range of 28-digit decimals for this term and rate.".into());
            None
        }
        Err(e) => return Err(e),
    };
    let number_of_payments = ledger.rows.len() as u32;
    let final_payment = ledger.rows.last().map_or(Decimal::ZERO, |r| r.payment);
    if matches!(terms.term, LoanTerm::Payment(_)) && final_payment > payment {
        return Err(EngineError::no_solution(
            Some("payment"),
            format!("with interest posted to the minor unit, the payment needs more than {MAX_PAYMENTS} payments to repay the loan"),
        ));
    }
    if number_of_payments < max_payments && matches!(terms.term, LoanTerm::Payments(_)) {
        notes.push(format!(
            "The rounded payment repays the loan after {number_of_payments} payments, {} fewer than the term.",
            max_payments - number_of_payments
        ));
    }
    if final_payment != payment {
        notes.push(format!(
            "The final payment is {} so that the balance ends at exactly zero.",
            currency.format(final_payment)
        ));
    }
    Ok(LoanSchedule {
        terms: terms.clone(),
        periodic_rate: i,
        payment,
        number_of_payments,
        final_payment,
        payment_derivation: derivation,
        solution,
        ledger,
        reconciliation,
        notes,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    fn terms(principal: &str, percent: &str, term: LoanTerm) -> LoanTerms {
        LoanTerms {
            principal: d(principal),
            currency: Currency::USD,
            rate: AnnualRate::from_percent(d(percent)).unwrap(),
            payment_frequency: Frequency::Monthly,
            compounding: None,
            term,
            payment_rounding: PaymentRounding::Nearest,
            interest_rounding: InterestRounding::HalfUp,
        }
    }

    #[test]
    fn the_ledger_repays_exactly_and_the_principal_parts_add_up() {
        let s = schedule(&terms("100000", "6", LoanTerm::Payments(360))).unwrap();
        assert_eq!(s.payment, d("599.55"));
        assert_eq!(s.number_of_payments, 360);
        assert_eq!(s.ledger.rows.last().unwrap().balance, d("0.00"));
        let principal: Decimal = s.ledger.rows.iter().map(|r| r.principal).sum();
        assert_eq!(principal, d("100000"));
        let r = s.reconciliation.unwrap();
        assert!(r.largest_drift <= r.bound);
    }

    #[test]
    fn a_zero_rate_schedule_is_level() {
        let s = schedule(&terms("12000", "0", LoanTerm::Payments(48))).unwrap();
        assert!(s
            .ledger
            .rows
            .iter()
            .all(|r| r.payment == d("250") && r.interest.is_zero()));
    }

    #[test]
    fn a_payment_below_the_first_interest_names_the_payment_field() {
        let e = schedule(&terms("100000", "6", LoanTerm::Payment(d("500")))).unwrap_err();
        assert_eq!(e.field, Some("payment"));
    }

    #[test]
    fn term_months_must_be_whole_payments() {
        assert_eq!(payments_in_months(360, Frequency::Biweekly).unwrap(), 780);
        assert!(payments_in_months(13, Frequency::Biweekly).is_err());
        assert!(payments_in_months(6001, Frequency::Monthly).is_err());
    }
}
