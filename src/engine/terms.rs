//! The terms of a level-payment loan: principal, currency, rate, payment
//! frequency and term (a number of payments, or a payment), and the ranges each
//! accepts. A plan's posting and the loan schedule both start from them.

use rust_decimal::Decimal;

use super::error::{EngineError, Result};
use super::money::{Currency, InterestRounding, PaymentRounding};
use super::rate::{AnnualRate, Frequency};

/// The most payments a schedule may have.
pub const MAX_PAYMENTS: u32 = 6000;

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
    /// The amount lent.
    pub principal: Decimal,
    /// The currency of every amount.
    pub currency: Currency,
    /// The nominal annual rate.
    pub rate: AnnualRate,
    /// How often payments fall due.
    pub payment_frequency: Frequency,
    /// `None`: interest compounds at the payment frequency.
    pub compounding: Option<Frequency>,
    /// The number of payments, or the payment.
    pub term: LoanTerm,
    /// How the payment is rounded.
    pub payment_rounding: PaymentRounding,
    /// How each period's interest is rounded.
    pub interest_rounding: InterestRounding,
}

impl LoanTerms {
    /// Checks ranges that need more than one field.
    ///
    /// # Errors
    /// Principal out of range, a payment with too many decimals, a term out of range.
    pub fn check(&self) -> Result<()> {
        check_principal(self.principal, self.currency)?;
        match self.term {
            LoanTerm::Payments(n) => check_payment_count(n, "term_payments"),
            LoanTerm::Payment(p) => check_payment(p, self.currency),
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

    /// [`Self::periodic_rate`] as the exact ratio it rounds, when it is one
    /// ([`AnnualRate::periodic_ratio`](super::rate::AnnualRate::periodic_ratio)).
    pub fn periodic_ratio(&self) -> Option<(i128, i128)> {
        self.rate.periodic_ratio(
            self.payment_frequency,
            self.compounding.unwrap_or(self.payment_frequency),
        )
    }
}

/// The principal alone: more than zero, at most 1,000,000,000,000, and in the
/// currency's minor units.
///
/// # Errors
/// Each out of range, naming `principal`.
pub fn check_principal(principal: Decimal, currency: Currency) -> Result<()> {
    if principal <= Decimal::ZERO {
        return Err(EngineError::out_of_range(
            "principal",
            "the principal must be more than zero",
        ));
    }
    if principal > MAX_PRINCIPAL {
        return Err(EngineError::out_of_range(
            "principal",
            "the principal cannot exceed 1,000,000,000,000",
        ));
    }
    if !currency.fits(principal) {
        return Err(EngineError::out_of_range(
            "principal",
            too_many_decimals(currency),
        ));
    }
    Ok(())
}

/// A number of payments alone: 1 to [`MAX_PAYMENTS`].
///
/// # Errors
/// Out of range, naming `field`.
pub fn check_payment_count(n: u32, field: &'static str) -> Result<()> {
    if n == 0 || n > MAX_PAYMENTS {
        return Err(EngineError::out_of_range(
            field,
            format!("the number of payments must be 1 to {MAX_PAYMENTS}"),
        ));
    }
    Ok(())
}

/// A payment alone: more than zero, in the currency's minor units.
///
/// # Errors
/// Out of range, naming `payment`.
pub fn check_payment(payment: Decimal, currency: Currency) -> Result<()> {
    if payment <= Decimal::ZERO {
        return Err(EngineError::out_of_range(
            "payment",
            "the payment must be more than zero",
        ));
    }
    if !currency.fits(payment) {
        return Err(EngineError::out_of_range(
            "payment",
            too_many_decimals(currency),
        ));
    }
    Ok(())
}

pub(crate) fn too_many_decimals(currency: Currency) -> String {
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn term_months_must_be_whole_payments() {
        assert_eq!(payments_in_months(360, Frequency::Biweekly).unwrap(), 780);
        assert!(payments_in_months(13, Frequency::Biweekly).is_err());
        assert!(payments_in_months(6001, Frequency::Monthly).is_err());
    }
}
