//! The engine on arbitrary loan terms: no panic, no overflow escape; when it
//! answers, the ledger ends at zero and its principal parts sum to the principal.
#![no_main]

use arbitrary::Arbitrary;
use libfuzzer_sys::fuzz_target;
use residue::engine::money::{Currency, InterestRounding, PaymentRounding};
use residue::engine::plan::PlanOptions;
use residue::engine::rate::{AnnualRate, Frequency};
use residue::engine::schedule::{schedule_with, LoanTerm, LoanTerms};
use rust_decimal::Decimal;

#[derive(Debug, Arbitrary)]
struct Input {
    principal_minor: u64,
    rate_bp: u32,
    frequency: u8,
    compounding: u8,
    by_payment: bool,
    payments: u16,
    payment_minor: u64,
    round_up: bool,
    half_even: bool,
    currency: u8,
}

const FREQUENCIES: [Frequency; 7] = [
    Frequency::Annual,
    Frequency::Semiannual,
    Frequency::Quarterly,
    Frequency::Monthly,
    Frequency::Semimonthly,
    Frequency::Biweekly,
    Frequency::Weekly,
];

fuzz_target!(|input: Input| {
    let currency = match input.currency % 3 {
        0 => Currency::USD,
        1 => Currency::parse("JPY").expect("JPY"),
        _ => Currency::parse("KWD").expect("KWD"),
    };
    let minor = currency.minor_units();
    let principal = Decimal::from_i128_with_scale(i128::from(input.principal_minor), minor);
    // 0 to 1,000.00 %, in hundredths of a percent.
    let Ok(rate) = AnnualRate::from_percent(Decimal::new(i64::from(input.rate_bp % 100_001), 2))
    else {
        return;
    };
    let frequency = FREQUENCIES[usize::from(input.frequency) % FREQUENCIES.len()];
    let compounding = match input.compounding % 9 {
        7 => None,
        8 => Some(Frequency::Daily),
        i => Some(FREQUENCIES[usize::from(i)]),
    };
    let term = if input.by_payment {
        LoanTerm::Payment(Decimal::from_i128_with_scale(
            i128::from(input.payment_minor),
            minor,
        ))
    } else {
        LoanTerm::Payments(u32::from(input.payments % 6_002))
    };
    let terms = LoanTerms {
        principal,
        currency,
        rate,
        payment_frequency: frequency,
        compounding,
        term,
        payment_rounding: if input.round_up {
            PaymentRounding::Up
        } else {
            PaymentRounding::Nearest
        },
        interest_rounding: if input.half_even {
            InterestRounding::HalfEven
        } else {
            InterestRounding::HalfUp
        },
    };
    if let Ok(s) = schedule_with(&terms, &PlanOptions::default()) {
        let rows = &s.ledger.rows;
        let last = rows.last().expect("a schedule has a payment");
        assert!(
            last.balance.is_zero(),
            "{terms:?}: the balance ends at {}",
            last.balance
        );
        let paid: Decimal = rows.iter().map(|r| r.principal + r.extra).sum();
        assert_eq!(
            paid, principal,
            "{terms:?}: the principal parts sum to {paid}"
        );
        assert_eq!(rows.len() as u32, s.number_of_payments, "{terms:?}");
    }
});
