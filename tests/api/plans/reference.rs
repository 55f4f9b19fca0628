//! The reference arithmetic of the plan tests, written here independently of
//! the engine: calendar-month addition, a posted ledger and an RFC 4180 reader.

use rust_decimal::{Decimal, RoundingStrategy};
use serde_json::Value;

use super::rows;
use crate::helpers::{dec, dec_of};

// ---------------------------------------------------------------------------
// Reference calendar (calendar-month addition with the day clamped to the
// month's last day: common practice, no source; done by hand here)
// ---------------------------------------------------------------------------

/// A calendar date as year, month, day.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Ymd(pub i32, pub u32, pub u32);

impl std::fmt::Display for Ymd {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{:04}-{:02}-{:02}", self.0, self.1, self.2)
    }
}

/// Gregorian leap years: every 4th, except centuries not divisible by 400.
pub fn is_leap_year(y: i32) -> bool {
    (y % 4 == 0 && y % 100 != 0) || y % 400 == 0
}

/// Days in a month of the Gregorian calendar.
pub fn days_in_month(y: i32, m: u32) -> u32 {
    match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if is_leap_year(y) => 29,
        2 => 28,
        _ => panic!("no month {m}"),
    }
}

/// The reference due date: `months` calendar months after `first`, the day of
/// `first` clamped to the last day of the month reached (never carried over
/// from a clamped month).
pub fn reference_add_months(first: Ymd, months: u32) -> Ymd {
    let index = i64::from(first.0) * 12 + i64::from(first.1) - 1 + i64::from(months);
    let y = i32::try_from(index / 12).expect("a year");
    let m = u32::try_from(index % 12).expect("a month") + 1;
    Ymd(y, m, first.2.min(days_in_month(y, m)))
}

/// The first day of the month after `d`.
pub fn first_of_next_month(d: Ymd) -> Ymd {
    if d.1 == 12 {
        Ymd(d.0 + 1, 1, 1)
    } else {
        Ymd(d.0, d.1 + 1, 1)
    }
}

/// Asserts that row k (from 1) is due `k − 1` months after `first`, for every row.
pub fn assert_monthly_dates(s: &Value, first: Ymd) {
    for (index, row) in rows(s).iter().enumerate() {
        let expected = reference_add_months(first, index as u32).to_string();
        assert_eq!(
            row["date"].as_str(),
            Some(expected.as_str()),
            "payment {} from {first}: {row}",
            index + 1
        );
    }
}

// ---------------------------------------------------------------------------
// Reference ledger (stepped here in rust_decimal, independently of the engine)
// ---------------------------------------------------------------------------

/// Rounds to the cent, halves away from zero.
pub fn cents(x: Decimal) -> Decimal {
    x.round_dp_with_strategy(2, RoundingStrategy::MidpointAwayFromZero)
}

/// One month's interest on `balance` at `percent` a year: round(balance × rate/12).
pub fn monthly_interest(balance: Decimal, percent: Decimal) -> Decimal {
    cents(balance * percent / Decimal::from(1200))
}

/// The level payment that repays `balance` in `n` months at `percent` a year,
/// P·i·(1+i)^n / ((1+i)^n − 1), rounded to the nearest cent (common practice, no source).
pub fn level_payment(balance: Decimal, percent: Decimal, n: u32) -> Decimal {
    let i = percent / Decimal::from(1200);
    let mut growth = Decimal::ONE;
    for _ in 0..n {
        growth *= Decimal::ONE + i;
    }
    cents(balance * i * growth / (growth - Decimal::ONE))
}

/// A monthly loan as the reference ledger understands it.
#[derive(Debug, Clone, Default)]
pub struct RefLoan {
    pub principal: Decimal,
    pub percent: Decimal,
    pub n: u32,
    pub interest_only: u32,
    pub balloon_after: Option<u32>,
    /// A new annual rate from this payment on.
    pub rate_change: Option<(u32, Decimal)>,
    /// At the rate change keep the payment (and let the term run) instead of the term.
    pub keep_payment: bool,
    /// (from, to inclusive, amount): a lump sum is from = to.
    pub extras: Vec<(u32, Option<u32>, Decimal)>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RefRow {
    pub payment: Decimal,
    pub extra: Decimal,
    pub interest: Decimal,
    pub principal: Decimal,
    pub balance: Decimal,
}

#[derive(Debug, Clone)]
pub struct RefLedger {
    pub rows: Vec<RefRow>,
    /// The regular payment when amortization starts.
    pub payment: Decimal,
    pub balloon: Option<Decimal>,
    pub total_interest: Decimal,
    pub total_paid: Decimal,
    pub total_extra: Decimal,
}

impl RefLoan {
    pub fn new(principal: &str, percent: &str, n: u32) -> Self {
        Self {
            principal: dec(principal),
            percent: dec(percent),
            n,
            ..Self::default()
        }
    }

    pub fn extra_at(&self, k: u32) -> Decimal {
        self.extras
            .iter()
            .filter(|(from, to, _)| k >= *from && to.is_none_or(|t| k <= t))
            .map(|(_, _, a)| *a)
            .sum()
    }

    /// Posts the loan month by month: interest = round(balance × rate/12);
    /// principal = payment + extra − interest; the payment that would repay the
    /// balance (or the last scheduled one, or the balloon) is balance + interest,
    /// an extra beyond what is owed shrinks to what is owed.
    pub fn post(&self) -> RefLedger {
        let mut percent = self.percent;
        let mut balance = self.principal;
        let mut payment = level_payment(balance, percent, self.n - self.interest_only);
        let amortizing_payment = payment;
        let mut limit = self.n;
        let mut rows = Vec::new();
        let mut balloon = None;
        let mut k = 0;
        while balance > Decimal::ZERO {
            k += 1;
            assert!(k <= 6000, "the reference ledger repays");
            if let Some((at, new_percent)) = self.rate_change {
                if k == at {
                    percent = new_percent;
                    if self.keep_payment {
                        limit = u32::MAX;
                    } else {
                        payment = level_payment(balance, percent, self.n - (k - 1));
                    }
                }
            }
            let interest = monthly_interest(balance, percent);
            let owed = balance + interest;
            let regular = if k <= self.interest_only {
                interest
            } else {
                payment
            };
            let scheduled_extra = self.extra_at(k);
            let last = k == limit || self.balloon_after == Some(k);
            let (paid, extra) = if owed <= regular {
                (owed, Decimal::ZERO)
            } else if last {
                (owed - scheduled_extra, scheduled_extra)
            } else if owed <= regular + scheduled_extra {
                (regular, owed - regular)
            } else {
                (regular, scheduled_extra)
            };
            if self.balloon_after == Some(k) {
                balloon = Some(paid - regular);
            }
            let principal = paid + extra - interest;
            balance -= principal;
            rows.push(RefRow {
                payment: paid,
                extra,
                interest,
                principal,
                balance,
            });
            if last {
                break;
            }
        }
        RefLedger {
            payment: amortizing_payment,
            balloon,
            total_interest: rows.iter().map(|r| r.interest).sum(),
            total_paid: rows.iter().map(|r| r.payment + r.extra).sum(),
            total_extra: rows.iter().map(|r| r.extra).sum(),
            rows,
        }
    }
}

/// Asserts every row of the answer equals the reference ledger's, figure by figure,
/// and the summary's totals equal the reference totals.
pub fn assert_matches_reference(s: &Value, reference: &RefLedger) {
    let got = rows(s);
    assert_eq!(got.len(), reference.rows.len(), "the number of payments");
    for (index, (row, want)) in got.iter().zip(&reference.rows).enumerate() {
        assert_eq!(row["number"], index + 1, "{row}");
        for (name, value) in [
            ("payment", want.payment),
            ("extra", want.extra),
            ("interest", want.interest),
            ("principal", want.principal),
            ("balance", want.balance),
        ] {
            assert_eq!(
                dec_of(&row[name]),
                value,
                "payment {}: {name}; row {row}, reference {want:?}",
                index + 1
            );
        }
    }
    let summary = &s["summary"];
    assert_eq!(summary["number_of_payments"], reference.rows.len());
    assert_eq!(
        dec_of(&summary["total_interest"]),
        reference.total_interest,
        "total interest"
    );
    assert_eq!(
        dec_of(&summary["total_paid"]),
        reference.total_paid,
        "total paid"
    );
    assert_eq!(
        dec_of(&summary["total_extra"]),
        reference.total_extra,
        "total extra"
    );
    assert_eq!(
        rows(s).last().unwrap()["balance"],
        "0.00",
        "the loan is repaid"
    );
}

// ---------------------------------------------------------------------------
// A minimal RFC 4180 reader (quoted fields, doubled quotes, CRLF records)
// ---------------------------------------------------------------------------

pub fn parse_csv(text: &str) -> Vec<Vec<String>> {
    assert!(text.ends_with("\r\n"), "the last record ends with CRLF");
    let mut records = Vec::new();
    let mut record = Vec::new();
    let mut field = String::new();
    let mut chars = text.chars().peekable();
    let mut quoted = false;
    while let Some(c) = chars.next() {
        if quoted {
            match c {
                '"' if chars.peek() == Some(&'"') => {
                    chars.next();
                    field.push('"');
                }
                '"' => quoted = false,
                _ => field.push(c),
            }
            continue;
        }
        match c {
            '"' if field.is_empty() => quoted = true,
            ',' => record.push(std::mem::take(&mut field)),
            '\r' => {
                assert_eq!(chars.next(), Some('\n'), "CR is followed by LF");
                record.push(std::mem::take(&mut field));
                records.push(std::mem::take(&mut record));
            }
            '\n' => panic!("a bare LF ends a record: {text:?}"),
            _ => field.push(c),
        }
    }
    assert!(!quoted, "a quoted field is closed");
    records
}

pub const COMPARE_HEADER: &str = "label,payment,number_of_payments,total_interest,total_paid,payoff_date,interest_saved,payments_saved";

/// Asserts a comparison CSV has the header and exactly the JSON rows' figures.
pub fn assert_compare_csv_matches(csv: &str, json_rows: &[Value]) {
    assert!(
        csv.starts_with(&format!("{COMPARE_HEADER}\r\n")),
        "the header: {csv:?}"
    );
    let records = parse_csv(csv);
    assert_eq!(records.len(), json_rows.len() + 1, "one record per plan");
    for (record, row) in records[1..].iter().zip(json_rows) {
        let expected: Vec<String> = [
            "label",
            "payment",
            "number_of_payments",
            "total_interest",
            "total_paid",
            "payoff_date",
            "interest_saved",
            "payments_saved",
        ]
        .iter()
        .map(|k| match &row[*k] {
            Value::String(s) => s.clone(),
            Value::Null => String::new(),
            other => other.to_string(),
        })
        .collect();
        assert_eq!(*record, expected, "{row}");
    }
}
