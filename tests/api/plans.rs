//! Loan plans over HTTP: dates and an odd first period, extra payments,
//! interest-only periods, balloons, rate steps, milestones and comparisons.
//!
//! Every figure is checked against arithmetic written here, independently of
//! the engine: a posted ledger stepped in `rust_decimal` (interest rounded half
//! away from zero to the cent each month), calendar-month addition done by hand,
//! and odd-days interest worked by hand.

use rust_decimal::{Decimal, RoundingStrategy};
use serde_json::{json, Value};

use crate::helpers::{
    assert_field_problem, assert_problem, assert_still_healthy, dec, dec_of, pointers, shared_app,
    Response, TestApp, SCHEDULE, SCHEDULE_CSV,
};

/// The comparison path.
const COMPARE: &str = "/api/v1/loans/compare";
/// The CSV comparison path.
const COMPARE_CSV: &str = "/api/v1/loans/compare.csv";

// ---------------------------------------------------------------------------
// Requests
// ---------------------------------------------------------------------------

/// Posts a schedule request; the answer must be 200 JSON.
fn schedule_of(app: &TestApp, body: &Value) -> Value {
    let r = app.post_json(SCHEDULE, body);
    assert_eq!(r.status, 200, "{body}: {}", r.text());
    assert_eq!(r.media_type(), "application/json");
    r.json()
}

/// GETs a schedule by query; the answer must be 200 JSON.
fn schedule_by_query(app: &TestApp, query: &str) -> Value {
    let r = app.get(&format!("{SCHEDULE}?{query}"));
    assert_eq!(r.status, 200, "{query}: {}", r.text());
    assert_eq!(r.media_type(), "application/json");
    r.json()
}

/// `base` with `changes` merged in (a `null` removes a field).
fn with(base: &Value, changes: Value) -> Value {
    let mut body = base.clone();
    for (k, v) in changes.as_object().expect("an object of changes") {
        if v.is_null() {
            body.as_object_mut().unwrap().remove(k);
        } else {
            body[k] = v.clone();
        }
    }
    body
}

/// 100,000 at 6 % over 360 months: 599.55 a month.
fn loan_100k() -> Value {
    json!({"principal": "100000", "annual_rate_percent": "6", "term_months": 360})
}

/// 250,000 at 6.5 % over 360 months.
fn loan_250k() -> Value {
    json!({"principal": "250000", "annual_rate_percent": "6.5", "term_months": 360})
}

fn rows(s: &Value) -> &Vec<Value> {
    s["schedule"].as_array().expect("a schedule array")
}

fn notes(s: &Value) -> Vec<&str> {
    s["notes"]
        .as_array()
        .expect("a notes array")
        .iter()
        .map(|n| n.as_str().expect("a note is text"))
        .collect()
}

fn has_note(s: &Value, words: &str) -> bool {
    notes(s).iter().any(|n| n.contains(words))
}

/// A 422 invalid-fields problem naming `pointer`; the server still answers after it.
fn assert_invalid(app: &TestApp, r: &Response, pointer: &str) -> Value {
    let p = assert_field_problem(r, 422, "invalid-fields", pointer);
    assert_still_healthy(app);
    p
}

// ---------------------------------------------------------------------------
// Reference calendar (calendar-month addition with the day clamped to the
// month's last day: common practice, no source; done by hand here)
// ---------------------------------------------------------------------------

/// A calendar date as year, month, day.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Ymd(i32, u32, u32);

impl std::fmt::Display for Ymd {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{:04}-{:02}-{:02}", self.0, self.1, self.2)
    }
}

/// Gregorian leap years: every 4th, except centuries not divisible by 400.
fn is_leap_year(y: i32) -> bool {
    (y % 4 == 0 && y % 100 != 0) || y % 400 == 0
}

/// Days in a month of the Gregorian calendar.
fn days_in_month(y: i32, m: u32) -> u32 {
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
fn reference_add_months(first: Ymd, months: u32) -> Ymd {
    let index = i64::from(first.0) * 12 + i64::from(first.1) - 1 + i64::from(months);
    let y = i32::try_from(index / 12).expect("a year");
    let m = u32::try_from(index % 12).expect("a month") + 1;
    Ymd(y, m, first.2.min(days_in_month(y, m)))
}

/// The first day of the month after `d`.
fn first_of_next_month(d: Ymd) -> Ymd {
    if d.1 == 12 {
        Ymd(d.0 + 1, 1, 1)
    } else {
        Ymd(d.0, d.1 + 1, 1)
    }
}

/// Asserts that row k (from 1) is due `k − 1` months after `first`, for every row.
fn assert_monthly_dates(s: &Value, first: Ymd) {
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
fn cents(x: Decimal) -> Decimal {
    x.round_dp_with_strategy(2, RoundingStrategy::MidpointAwayFromZero)
}

/// One month's interest on `balance` at `percent` a year: round(balance × rate/12).
fn monthly_interest(balance: Decimal, percent: Decimal) -> Decimal {
    cents(balance * percent / Decimal::from(1200))
}

/// The level payment that repays `balance` in `n` months at `percent` a year,
/// P·i·(1+i)^n / ((1+i)^n − 1), rounded to the nearest cent (common practice, no source).
fn level_payment(balance: Decimal, percent: Decimal, n: u32) -> Decimal {
    let i = percent / Decimal::from(1200);
    let mut growth = Decimal::ONE;
    for _ in 0..n {
        growth *= Decimal::ONE + i;
    }
    cents(balance * i * growth / (growth - Decimal::ONE))
}

/// A monthly loan as the reference ledger understands it.
#[derive(Debug, Clone, Default)]
struct RefLoan {
    principal: Decimal,
    percent: Decimal,
    n: u32,
    interest_only: u32,
    balloon_after: Option<u32>,
    /// A new annual rate from this payment on.
    rate_change: Option<(u32, Decimal)>,
    /// At the rate change keep the payment (and let the term run) instead of the term.
    keep_payment: bool,
    /// (from, to inclusive, amount): a lump sum is from = to.
    extras: Vec<(u32, Option<u32>, Decimal)>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct RefRow {
    payment: Decimal,
    extra: Decimal,
    interest: Decimal,
    principal: Decimal,
    balance: Decimal,
}

#[derive(Debug, Clone)]
struct RefLedger {
    rows: Vec<RefRow>,
    /// The regular payment when amortization starts.
    payment: Decimal,
    balloon: Option<Decimal>,
    total_interest: Decimal,
    total_paid: Decimal,
    total_extra: Decimal,
}

impl RefLoan {
    fn new(principal: &str, percent: &str, n: u32) -> Self {
        Self {
            principal: dec(principal),
            percent: dec(percent),
            n,
            ..Self::default()
        }
    }

    fn extra_at(&self, k: u32) -> Decimal {
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
    fn post(&self) -> RefLedger {
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
fn assert_matches_reference(s: &Value, reference: &RefLedger) {
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

fn parse_csv(text: &str) -> Vec<Vec<String>> {
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

const COMPARE_HEADER: &str = "label,payment,number_of_payments,total_interest,total_paid,payoff_date,interest_saved,payments_saved";

/// Asserts a comparison CSV has the header and exactly the JSON rows' figures.
fn assert_compare_csv_matches(csv: &str, json_rows: &[Value]) {
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

// ---------------------------------------------------------------------------
// Dates and the odd first period
// ---------------------------------------------------------------------------

// Funded 2027-01-10, first payment 2027-03-01: the regular month before the first
// payment starts 2027-02-01, so the odd period runs 2027-01-10 to 2027-02-01.
// Worked by hand: actual days 31 − 10 + 1 = 22; 30/360 (ISDA 2006 Definitions,
// section 4.16(f), from memory) 30 × (2 − 1) + (1 − 10) = 21. Interest on 100,000
// at 6 %: 6,000 × 22/365 = 361.6438… → 361.64; 6,000 × 22/360 = 366.666… → 366.67;
// 6,000 × 21/360 = 350.00 (halves rounded up).

fn dated_100k() -> Value {
    with(
        &loan_100k(),
        json!({"funding_date": "2027-01-10", "first_payment_date": "2027-03-01"}),
    )
}

#[test]
fn a_loan_funded_january_10th_paying_from_march_1st_adds_22_days_of_interest_to_the_first_payment()
{
    // Arrange
    let app = shared_app();
    let undated = schedule_of(&app, &loan_100k());

    // Act
    let s = schedule_of(&app, &dated_100k());

    // Assert
    let summary = &s["summary"];
    assert_eq!(summary["payment"], "599.55");
    assert_eq!(summary["odd_days"], 22);
    assert_eq!(summary["odd_days_interest"], "361.64");
    assert_eq!(summary["prepaid_interest"], "0.00");
    assert_eq!(rows(&s).len(), 360);
    assert_eq!(rows(&s)[0]["date"], "2027-03-01");
    assert_eq!(rows(&s)[359]["date"], "2057-02-01");
    assert_eq!(summary["payoff_date"], "2057-02-01");
    assert_monthly_dates(&s, Ymd(2027, 3, 1));
    let first = &rows(&s)[0];
    assert_eq!(
        dec_of(&first["payment"]),
        dec("599.55") + dec("361.64"),
        "the first payment carries the odd days' interest: {first}"
    );
    // The odd days' interest is paid, not amortized: every balance is the undated one.
    for (dated, plain) in rows(&s).iter().zip(rows(&undated)) {
        assert_eq!(dated["balance"], plain["balance"], "{dated} vs {plain}");
        assert_eq!(dated["principal"], plain["principal"], "{dated} vs {plain}");
    }
    assert_eq!(
        dec_of(&summary["total_interest"]),
        dec_of(&undated["summary"]["total_interest"]) + dec("361.64")
    );
    assert!(
        undated["schedule"][0]["date"].is_null(),
        "undated rows have a null date"
    );
    assert!(undated["summary"]["payoff_date"].is_null());
    assert!(
        has_note(&s, "22 days longer than a regular one"),
        "a note explains the odd period: {:?}",
        notes(&s)
    );
}

#[test]
fn thirty_360_counts_21_odd_days_and_actual_360_divides_22_days_by_360() {
    // Arrange
    let app = shared_app();
    let cases = [
        ("actual_365", 22, "361.64"),
        ("actual_360", 22, "366.67"),
        ("thirty_360", 21, "350.00"),
    ];

    for (day_count, days, interest) in cases {
        // Act
        let s = schedule_of(&app, &with(&dated_100k(), json!({"day_count": day_count})));

        // Assert
        let summary = &s["summary"];
        assert_eq!(summary["odd_days"], days, "{day_count}");
        assert_eq!(summary["odd_days_interest"], interest, "{day_count}");
        assert_eq!(
            dec_of(&rows(&s)[0]["payment"]),
            dec_of(&summary["payment"]) + dec(interest),
            "{day_count}: the first payment is the regular one plus the odd days' interest"
        );
        assert_eq!(rows(&s)[1]["payment"], "599.55", "{day_count}");
    }
}

#[test]
fn prepaid_odd_days_interest_leaves_the_first_payment_regular() {
    // Arrange
    let app = shared_app();
    let body = with(
        &dated_100k(),
        json!({"day_count": "thirty_360", "odd_days_interest": "prepaid"}),
    );

    // Act
    let s = schedule_of(&app, &body);

    // Assert
    let summary = &s["summary"];
    assert_eq!(summary["prepaid_interest"], "350.00");
    assert_eq!(summary["odd_days"], 21);
    assert_eq!(rows(&s)[0]["payment"], "599.55");
    assert_eq!(rows(&s)[0]["payment"], summary["payment"]);
    assert_eq!(
        rows(&s)[0]["interest"],
        "500.00",
        "one regular month at 0.5 %"
    );
    assert!(has_note(&s, "prepaid interest"), "{:?}", notes(&s));
}

#[test]
fn a_dated_schedule_by_query_equals_the_same_schedule_by_json() {
    // Arrange
    let app = shared_app();
    let body = with(&dated_100k(), json!({"day_count": "actual_360"}));
    let query = "principal=100000&annual_rate_percent=6&term_months=360\
                 &funding_date=2027-01-10&first_payment_date=2027-03-01&day_count=actual_360";

    // Act
    let posted = schedule_of(&app, &body);
    let got = schedule_by_query(&app, query);

    // Assert
    assert_eq!(posted, got);
}

#[test]
fn a_loan_paying_on_the_31st_pays_on_the_last_day_of_shorter_months() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule_of(
        &app,
        &with(&loan_100k(), json!({"first_payment_date": "2027-01-31"})),
    );

    // Assert
    let dates: Vec<&str> = rows(&s)[..5]
        .iter()
        .map(|r| r["date"].as_str().unwrap())
        .collect();
    assert_eq!(
        dates,
        [
            "2027-01-31",
            "2027-02-28",
            "2027-03-31",
            "2027-04-30",
            "2027-05-31"
        ]
    );
    assert_eq!(rows(&s)[13]["date"], "2028-02-29", "2028 is a leap year");
    assert_monthly_dates(&s, Ymd(2027, 1, 31));
    assert_eq!(s["summary"]["payoff_date"], "2056-12-31");
}

#[test]
fn due_dates_from_month_ends_and_leap_day_follow_calendar_month_addition_for_all_payments() {
    // Arrange
    let app = shared_app();
    let firsts = [
        Ymd(2027, 1, 31),
        Ymd(2027, 1, 30),
        Ymd(2027, 1, 29),
        Ymd(2028, 2, 29),
        Ymd(2027, 8, 31),
        Ymd(2099, 12, 31), // 2100 is not a leap year
    ];

    for first in firsts {
        // Act
        let s = schedule_of(
            &app,
            &with(
                &loan_100k(),
                json!({"first_payment_date": first.to_string()}),
            ),
        );

        // Assert
        assert_eq!(rows(&s).len(), 360, "{first}");
        assert_monthly_dates(&s, first);
    }
}

#[test]
fn a_loan_first_paying_on_leap_day_pays_on_february_28th_in_common_years() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule_of(
        &app,
        &with(&loan_100k(), json!({"first_payment_date": "2028-02-29"})),
    );

    // Assert
    let r = rows(&s);
    assert_eq!(
        r[1]["date"], "2028-03-29",
        "the 29th comes back after February"
    );
    assert_eq!(r[12]["date"], "2029-02-28");
    assert_eq!(r[13]["date"], "2029-03-29");
    assert_eq!(r[48]["date"], "2032-02-29");
}

// ---------------------------------------------------------------------------
// Extra payments
// ---------------------------------------------------------------------------

/// 150 a month from payment 13 and a 5,000 lump sum with payment 36.
fn extras_json() -> Value {
    json!([{"amount": "150", "from": 13}, {"amount": "5000", "at": 36}])
}

fn extras_reference() -> RefLoan {
    RefLoan {
        extras: vec![(13, None, dec("150")), (36, Some(36), dec("5000"))],
        ..RefLoan::new("250000", "6.5", 360)
    }
}

#[test]
fn extra_payments_in_json_and_in_query_form_give_identical_answers() {
    // Arrange
    let app = shared_app();
    let body = with(&loan_250k(), json!({"extra_payments": extras_json()}));
    let query = "principal=250000&annual_rate_percent=6.5&term_months=360\
                 &extra_payments=150@13-,5000@36";

    // Act
    let posted = schedule_of(&app, &body);
    let got = schedule_by_query(&app, query);

    // Assert
    assert_eq!(posted, got);
    assert!(dec_of(&posted["summary"]["total_extra"]) > Decimal::ZERO);
}

#[test]
fn extra_payments_post_like_an_independent_ledger_and_save_the_difference_of_two_ledgers() {
    // Arrange
    let app = shared_app();
    let reference_with = extras_reference().post();
    let reference_without = RefLoan::new("250000", "6.5", 360).post();
    assert_eq!(
        reference_without.payment,
        dec("1580.17"),
        "the textbook payment"
    );

    // Act
    let s = schedule_of(
        &app,
        &with(&loan_250k(), json!({"extra_payments": extras_json()})),
    );
    let plain = schedule_of(&app, &loan_250k());

    // Assert
    assert_matches_reference(&s, &reference_with);
    assert_matches_reference(&plain, &reference_without);
    let summary = &s["summary"];
    assert_eq!(summary["payment"], "1580.17", "the regular payment stays");
    assert_eq!(rows(&s)[12]["extra"], "150.00");
    assert_eq!(rows(&s)[11]["extra"], "0.00");
    assert_eq!(rows(&s)[35]["extra"], "5150.00");
    assert_eq!(
        dec_of(&summary["interest_saved"]),
        reference_without.total_interest - reference_with.total_interest,
        "interest saved = difference of the two ledgers"
    );
    assert_eq!(
        summary["payments_saved"],
        reference_without.rows.len() - reference_with.rows.len(),
        "payments saved = difference of the two ledgers"
    );
    assert!(dec_of(&summary["interest_saved"]) > Decimal::ZERO);
    assert!(
        plain["summary"]["interest_saved"].is_null(),
        "no savings without extras"
    );
    // Each row: principal = payment + extra − interest.
    for row in rows(&s) {
        assert_eq!(
            dec_of(&row["principal"]),
            dec_of(&row["payment"]) + dec_of(&row["extra"]) - dec_of(&row["interest"]),
            "{row}"
        );
    }
}

#[test]
fn an_extra_payment_on_a_date_goes_with_the_payment_due_on_or_after_it() {
    // Arrange: payments fall due on the 1st from 2027-03-01, so 2030-02-01 is payment 36.
    let app = shared_app();
    let dated = with(&loan_250k(), json!({"first_payment_date": "2027-03-01"}));
    let by_number = |at: u32| {
        schedule_of(
            &app,
            &with(
                &dated,
                json!({"extra_payments": [{"amount": "5000", "at": at}]}),
            ),
        )
    };
    let cases = [("2030-02-01", 36), ("2030-01-15", 36), ("2030-02-02", 37)];

    for (date, number) in cases {
        // Act
        let s = schedule_of(
            &app,
            &with(
                &dated,
                json!({"extra_payments": [{"amount": "5000", "at": date}]}),
            ),
        );

        // Assert
        assert_eq!(s, by_number(number), "{date} goes with payment {number}");
        let row = &rows(&s)[number as usize - 1];
        assert_eq!(row["extra"], "5000.00", "{date}: {row}");
        assert!(row["date"].as_str().unwrap() >= date, "{row}");
    }
    let query = schedule_by_query(
        &app,
        "principal=250000&annual_rate_percent=6.5&term_months=360\
         &first_payment_date=2027-03-01&extra_payments=5000@2030-02-01",
    );
    assert_eq!(query, by_number(36), "the query form AMOUNT@YYYY-MM-DD");
}

#[test]
fn extra_payments_after_payoff_are_ignored_with_a_note_not_refused() {
    // Arrange
    let app = shared_app();
    let mut reference = extras_reference();
    reference.extras.push((340, Some(340), dec("1000")));
    let reference = reference.post();
    assert!(
        reference.rows.len() < 340,
        "the reference loan is repaid before 340"
    );
    let body = with(
        &loan_250k(),
        json!({"extra_payments": [
            {"amount": "150", "from": 13},
            {"amount": "5000", "at": 36},
            {"amount": "1000", "at": 340}
        ]}),
    );

    // Act
    let s = schedule_of(&app, &body);
    let beyond_term = schedule_by_query(
        &app,
        "principal=100000&annual_rate_percent=6&term_months=360&extra_payments=1000@400",
    );

    // Assert
    assert_matches_reference(&s, &reference);
    assert!(has_note(&s, "ignored"), "a note says so: {:?}", notes(&s));
    assert_eq!(beyond_term["summary"]["number_of_payments"], 360);
    assert_eq!(beyond_term["summary"]["total_extra"], "0.00");
    assert!(
        has_note(&beyond_term, "ignored"),
        "a note says so: {:?}",
        notes(&beyond_term)
    );
}

// ---------------------------------------------------------------------------
// Interest-only, balloons, rate steps
// ---------------------------------------------------------------------------

#[test]
fn an_interest_only_year_pays_the_interest_then_amortizes_over_the_remaining_348_payments() {
    // Arrange: 120,000 at 7.2 %: 0.6 % a month, 720.00 of interest.
    let app = shared_app();
    let reference = RefLoan {
        interest_only: 12,
        ..RefLoan::new("120000", "7.2", 360)
    }
    .post();

    // Act
    let s = schedule_of(
        &app,
        &json!({"principal": "120000", "annual_rate_percent": "7.2", "term_months": 360,
                "interest_only_payments": 12}),
    );

    // Assert
    assert_matches_reference(&s, &reference);
    for row in &rows(&s)[..12] {
        assert_eq!(row["payment"], "720.00", "{row}");
        assert_eq!(row["interest"], "720.00", "{row}");
        assert_eq!(row["principal"], "0.00", "{row}");
        assert_eq!(row["balance"], "120000.00", "{row}");
    }
    let amortizing = level_payment(dec("120000"), dec("7.2"), 348);
    assert_eq!(dec_of(&rows(&s)[12]["payment"]), amortizing);
    assert_eq!(dec_of(&s["summary"]["payment"]), amortizing);
    assert_eq!(rows(&s).len(), 360);
}

#[test]
fn a_balloon_after_84_of_300_payments_falls_due_with_the_84th_payment() {
    // Arrange: amortized over 25 years, due after 7.
    let app = shared_app();
    let reference = RefLoan {
        balloon_after: Some(84),
        ..RefLoan::new("500000", "7", 300)
    }
    .post();

    // Act
    let s = schedule_of(
        &app,
        &json!({"principal": "500000", "annual_rate_percent": "7", "term_months": 300,
                "balloon_after_payments": 84}),
    );

    // Assert
    assert_matches_reference(&s, &reference);
    let summary = &s["summary"];
    let balloon = dec_of(&summary["balloon"]);
    assert_eq!(Some(balloon), reference.balloon);
    assert_eq!(rows(&s).len(), 84);
    let last = &rows(&s)[83];
    assert_eq!(
        dec_of(&last["payment"]),
        dec_of(&summary["payment"]) + balloon,
        "the last payment is the regular one plus the balloon: {last}"
    );
    assert_eq!(last["balance"], "0.00");
    assert_eq!(
        balloon + dec_of(&summary["payment"]),
        dec_of(&rows(&s)[82]["balance"])
            + monthly_interest(dec_of(&rows(&s)[82]["balance"]), dec("7")),
        "the 84th payment is what is owed then"
    );
    assert!(has_note(&s, "balloon"), "{:?}", notes(&s));
}

/// 100,000 at 6 % over 360, stepping to 7 % from payment 61.
fn rate_step_reference(keep_payment: bool) -> RefLedger {
    RefLoan {
        rate_change: Some((61, dec("7"))),
        keep_payment,
        ..RefLoan::new("100000", "6", 360)
    }
    .post()
}

fn rate_step_json() -> Value {
    with(
        &loan_100k(),
        json!({"rate_changes": [{"at": 61, "annual_rate_percent": "7"}]}),
    )
}

#[test]
fn a_rate_step_at_payment_61_re_amortizes_the_balance_over_the_remaining_300_payments() {
    // Arrange
    let app = shared_app();
    let reference = rate_step_reference(false);

    // Act
    let s = schedule_of(&app, &rate_step_json());

    // Assert
    assert_matches_reference(&s, &reference);
    let r = rows(&s);
    assert_eq!(r.len(), 360);
    assert_eq!(r[59]["payment"], "599.55");
    let stepped = level_payment(dec_of(&r[59]["balance"]), dec("7"), 300);
    assert_eq!(dec_of(&r[60]["payment"]), stepped);
    assert!(stepped > dec("599.55"));
    assert_eq!(
        dec_of(&r[60]["interest"]),
        monthly_interest(dec_of(&r[59]["balance"]), dec("7")),
        "7 % from payment 61"
    );
}

#[test]
fn a_rate_step_keeping_the_payment_lengthens_the_term() {
    // Arrange
    let app = shared_app();
    let reference = rate_step_reference(true);
    assert!(reference.rows.len() > 360);

    // Act
    let s = schedule_of(
        &app,
        &with(&rate_step_json(), json!({"rate_change_keeps": "payment"})),
    );

    // Assert
    assert_matches_reference(&s, &reference);
    let r = rows(&s);
    assert!(r.len() > 360, "the term grows: {} payments", r.len());
    for row in &r[..r.len() - 1] {
        assert_eq!(row["payment"], "599.55", "the payment stays: {row}");
    }
}

#[test]
fn rate_changes_in_query_form_give_the_same_answer_as_json() {
    // Arrange
    let app = shared_app();
    let query = "principal=100000&annual_rate_percent=6&term_months=360&rate_changes=61:7";

    // Act
    let got = schedule_by_query(&app, query);
    let kept = schedule_by_query(&app, &format!("{query}&rate_change_keeps=payment"));

    // Assert
    assert_eq!(got, schedule_of(&app, &rate_step_json()));
    assert_eq!(
        kept,
        schedule_of(
            &app,
            &with(&rate_step_json(), json!({"rate_change_keeps": "payment"}))
        )
    );
}

// ---------------------------------------------------------------------------
// Milestones (Homeowners Protection Act of 1998, 12 U.S.C. 4901–4902, cited
// from memory: borrower-requested cancellation when the balance is first
// scheduled to reach 80 % of the original value, automatic termination at 78 %,
// both on the initial amortization schedule; final termination under 4902(c) on
// the first day of the month after the midpoint of the amortization period)
// ---------------------------------------------------------------------------

/// 225,000 at 6 % over 360 on a property worth 250,000, first due 2027-01-15,
/// with 150 a month extra from payment 13.
fn milestone_loan(with_extras: bool) -> Value {
    let mut body = json!({
        "principal": "225000", "annual_rate_percent": "6", "term_months": 360,
        "first_payment_date": "2027-01-15", "property_value": "250000"
    });
    if with_extras {
        body["extra_payments"] = json!([{"amount": "150", "from": 13}]);
    }
    body
}

/// The first row whose balance is at or below `threshold`, as (number, date).
fn first_row_at_or_below(s: &Value, threshold: Decimal) -> (u64, String) {
    let row = rows(s)
        .iter()
        .find(|r| dec_of(&r["balance"]) <= threshold)
        .expect("the balance reaches the threshold");
    (
        row["number"].as_u64().unwrap(),
        row["date"].as_str().unwrap().to_string(),
    )
}

#[test]
fn hpa_milestones_are_read_from_the_schedule_without_extras() {
    // Arrange
    let app = shared_app();
    let initial = schedule_of(&app, &milestone_loan(false));

    // Act
    let s = schedule_of(&app, &milestone_loan(true));

    // Assert
    let m = &s["summary"]["milestones"];
    // 80 % of 250,000 = 200,000; 78 % = 195,000: scanned on the initial schedule.
    for (name, threshold) in [
        ("balance_80_percent_of_value", dec("200000")),
        ("balance_78_percent_of_value", dec("195000")),
    ] {
        let (number, date) = first_row_at_or_below(&initial, threshold);
        assert_eq!(m[name]["payment"], number, "{name}: {m}");
        assert_eq!(m[name]["date"], date.as_str(), "{name}: {m}");
        let (with_extras, _) = first_row_at_or_below(&s, threshold);
        assert!(
            with_extras < number,
            "the extras reach {threshold} sooner ({with_extras}), but the milestone keeps the initial schedule"
        );
    }
    assert!(
        m["balance_78_percent_of_value"]["payment"].as_u64()
            > m["balance_80_percent_of_value"]["payment"].as_u64()
    );
    // The midpoint of 360 payments is payment 180, due 179 months after 2027-01-15.
    let midpoint = reference_add_months(Ymd(2027, 1, 15), 179);
    assert_eq!(midpoint, Ymd(2041, 12, 15));
    assert_eq!(m["amortization_midpoint"]["payment"], 180);
    assert_eq!(m["amortization_midpoint"]["date"], midpoint.to_string());
    assert_eq!(
        m["final_termination_date"],
        first_of_next_month(midpoint).to_string(),
        "12 U.S.C. 4902(c): the first day of the month after the midpoint"
    );
    assert_eq!(m["final_termination_date"], "2042-01-01");
    // The principal part (less any extra) first exceeds the interest part.
    let crossing = rows(&s)
        .iter()
        .find(|r| dec_of(&r["principal"]) - dec_of(&r["extra"]) > dec_of(&r["interest"]))
        .expect("the principal part overtakes the interest");
    assert_eq!(
        m["principal_exceeds_interest"]["payment"], crossing["number"],
        "{m}"
    );
    assert_eq!(m["principal_exceeds_interest"]["date"], crossing["date"]);
    // Totals through payment 60.
    let first_60 = &rows(&s)[..60];
    assert_eq!(m["payments_counted"], 60);
    assert_eq!(
        dec_of(&m["total_paid_through_60"]),
        first_60
            .iter()
            .map(|r| dec_of(&r["payment"]) + dec_of(&r["extra"]))
            .sum::<Decimal>()
    );
    assert_eq!(
        dec_of(&m["principal_paid_through_60"]),
        first_60
            .iter()
            .map(|r| dec_of(&r["principal"]))
            .sum::<Decimal>()
    );
    assert!(
        has_note(&s, "lender and investor rules"),
        "the caution about lender and investor rules: {:?}",
        notes(&s)
    );
}

#[test]
fn the_principal_part_first_exceeds_the_interest_part_at_the_first_such_row_of_any_plan() {
    // Arrange
    let app = shared_app();
    let plans = [
        loan_100k(),
        loan_250k(),
        milestone_loan(false),
        milestone_loan(true),
        dated_100k(),
        with(
            &dated_100k(),
            json!({"day_count": "thirty_360", "odd_days_interest": "prepaid"}),
        ),
        with(&loan_250k(), json!({"extra_payments": extras_json()})),
        with(
            &loan_100k(),
            json!({"extra_payments": [{"amount": "1000", "from": 1}]}),
        ),
        with(&loan_100k(), json!({"interest_only_payments": 24})),
        rate_step_json(),
        with(
            &loan_100k(),
            json!({"rate_changes": [{"at": 61, "annual_rate_percent": "2"}]}),
        ),
        with(&rate_step_json(), json!({"rate_change_keeps": "payment"})),
        json!({"principal": "500000", "annual_rate_percent": "3", "term_months": 120}),
    ];

    for body in plans {
        // Act
        let s = schedule_of(&app, &body);

        // Assert
        let crossing = rows(&s)
            .iter()
            .find(|r| dec_of(&r["principal"]) - dec_of(&r["extra"]) > dec_of(&r["interest"]));
        let milestone = &s["summary"]["milestones"]["principal_exceeds_interest"];
        match crossing {
            Some(row) => {
                assert_eq!(milestone["payment"], row["number"], "{body}: {milestone}");
                assert_eq!(milestone["date"], row["date"], "{body}: {milestone}");
            }
            None => assert!(milestone.is_null(), "{body}: {milestone}"),
        }
    }
}

#[test]
fn hpa_80_and_78_percent_points_are_the_first_rows_of_the_initial_schedule_of_any_plan() {
    // Arrange
    let app = shared_app();
    let value = json!({"property_value": "125000", "first_payment_date": "2027-01-01"});
    let plans = [
        with(&loan_100k(), value.clone()),
        with(
            &with(&loan_100k(), value.clone()),
            json!({"interest_only_payments": 24}),
        ),
        with(&rate_step_json(), value.clone()),
        with(
            &with(&loan_100k(), value.clone()),
            json!({"rate_changes": [{"at": 61, "annual_rate_percent": "2"}]}),
        ),
        with(
            &with(&loan_100k(), value.clone()),
            json!({"rate_changes": [{"at": 13, "annual_rate_percent": "9"},
                                    {"at": 121, "annual_rate_percent": "3"}]}),
        ),
        with(&loan_100k(), json!({"property_value": "126000"})),
        // 80 % of 200,000 is 160,000: reached with the first payment.
        with(&loan_100k(), json!({"property_value": "200000"})),
    ];

    for body in plans {
        let initial = schedule_of(&app, &body);

        // Act
        let s = schedule_of(
            &app,
            &with(
                &body,
                json!({"extra_payments": [{"amount": "300", "from": 2}]}),
            ),
        );

        // Assert
        let m = &s["summary"]["milestones"];
        let value = dec_of(&body["property_value"]);
        for (name, share) in [
            ("balance_80_percent_of_value", dec("0.80")),
            ("balance_78_percent_of_value", dec("0.78")),
        ] {
            let threshold = value * share;
            let row = rows(&initial)
                .iter()
                .find(|r| dec_of(&r["balance"]) <= threshold)
                .expect("the initial schedule reaches the threshold");
            assert_eq!(m[name]["payment"], row["number"], "{body}: {name}: {m}");
            assert_eq!(m[name]["date"], row["date"], "{body}: {name}: {m}");
        }
    }
}

#[test]
fn a_property_value_below_the_principal_gives_a_note_not_an_error() {
    // Arrange
    let app = shared_app();

    // Act
    let s = schedule_of(
        &app,
        &with(
            &loan_100k(),
            json!({"property_value": "90000", "first_payment_date": "2027-01-01"}),
        ),
    );

    // Assert
    assert!(
        has_note(&s, "below the principal"),
        "a note says so: {:?}",
        notes(&s)
    );
    let m = &s["summary"]["milestones"];
    let (number, _) = first_row_at_or_below(&s, dec("72000"));
    assert_eq!(m["balance_80_percent_of_value"]["payment"], number);
    assert_eq!(m["amortization_midpoint"]["payment"], 180);
}

// ---------------------------------------------------------------------------
// Comparisons
// ---------------------------------------------------------------------------

const TERMS_QUERY: &str = "principal=278000&annual_rate_percent=6.375&term_months=180,240,360";

#[test]
fn compare_by_query_gives_one_row_per_term_with_the_figures_of_separate_schedules() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.get(&format!("{COMPARE}?{TERMS_QUERY}"));

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    assert_eq!(r.media_type(), "application/json");
    let c = r.json();
    assert_eq!(c["currency"], "USD");
    let rows = c["rows"].as_array().expect("rows");
    assert_eq!(rows.len(), 3);
    let base_interest = {
        let s = schedule_by_query(
            &app,
            "principal=278000&annual_rate_percent=6.375&term_months=180",
        );
        dec_of(&s["summary"]["total_interest"])
    };
    for (row, months) in rows.iter().zip([180u32, 240, 360]) {
        let s = schedule_by_query(
            &app,
            &format!("principal=278000&annual_rate_percent=6.375&term_months={months}"),
        );
        let summary = &s["summary"];
        assert_eq!(row["label"], format!("term_months {months}"), "{row}");
        for k in [
            "payment",
            "number_of_payments",
            "total_interest",
            "total_paid",
            "payoff_date",
        ] {
            assert_eq!(row[k], summary[k], "{months} months: {k}");
        }
        assert_eq!(
            dec_of(&row["interest_saved"]),
            base_interest - dec_of(&summary["total_interest"]),
            "{row}"
        );
        assert_eq!(row["payments_saved"], 180 - i64::from(months), "{row}");
    }
    assert!(
        c["notes"][0].as_str().unwrap().contains("not an offer"),
        "{c}"
    );
}

#[test]
fn compare_as_csv_by_suffix_or_by_accept_gives_rfc_4180_records_with_the_json_figures() {
    // Arrange
    let app = shared_app();
    let json_rows = app.get(&format!("{COMPARE}?{TERMS_QUERY}")).json()["rows"]
        .as_array()
        .unwrap()
        .clone();

    // Act
    let by_suffix = app.get(&format!("{COMPARE_CSV}?{TERMS_QUERY}"));
    let by_accept = app.get_with(
        &format!("{COMPARE}?{TERMS_QUERY}"),
        &[("Accept", "text/csv")],
    );

    // Assert
    for r in [&by_suffix, &by_accept] {
        assert_eq!(r.status, 200, "{}", r.text());
        assert_eq!(r.media_type(), "text/csv");
        assert_eq!(
            r.text().matches('\n').count(),
            r.text().matches("\r\n").count(),
            "every line ends with CRLF"
        );
        assert_compare_csv_matches(r.text(), &json_rows);
    }
    assert_eq!(by_suffix.text(), by_accept.text());
    assert!(by_suffix
        .text()
        .contains("\r\nterm_months 240,2052.29,240,"));
}

/// A 30-year base and two variants: 15 years, and 200 a month extra.
fn compare_body() -> Value {
    json!({
        "base": {"principal": "278000", "annual_rate_percent": "6.375", "term_months": 360,
                 "first_payment_date": "2027-01-01", "label": "30 years"},
        "variants": [
            {"label": "15 years", "term_months": 180},
            {"label": "30 years, \"200 extra\"", "extra_payments": [{"amount": "200", "from": 1}]}
        ]
    })
}

#[test]
fn compare_by_post_measures_each_variant_against_the_base() {
    // Arrange
    let app = shared_app();
    let base = json!({"principal": "278000", "annual_rate_percent": "6.375",
                      "term_months": 360, "first_payment_date": "2027-01-01"});
    let separate = [
        schedule_of(&app, &base),
        schedule_of(&app, &with(&base, json!({"term_months": 180}))),
        schedule_of(
            &app,
            &with(
                &base,
                json!({"extra_payments": [{"amount": "200", "from": 1}]}),
            ),
        ),
    ];

    // Act
    let r = app.post_json(COMPARE, &compare_body());

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    let c = r.json();
    let rows = c["rows"].as_array().expect("rows");
    let labels: Vec<&str> = rows.iter().map(|r| r["label"].as_str().unwrap()).collect();
    assert_eq!(labels, ["30 years", "15 years", "30 years, \"200 extra\""]);
    let base_interest = dec_of(&separate[0]["summary"]["total_interest"]);
    for (row, s) in rows.iter().zip(&separate) {
        let summary = &s["summary"];
        for k in [
            "payment",
            "number_of_payments",
            "total_interest",
            "total_paid",
            "payoff_date",
        ] {
            assert_eq!(row[k], summary[k], "{}: {k}", row["label"]);
        }
        assert_eq!(
            dec_of(&row["interest_saved"]),
            base_interest - dec_of(&row["total_interest"]),
            "{row}"
        );
        assert_eq!(
            row["payments_saved"].as_i64().unwrap(),
            360 - summary["number_of_payments"].as_i64().unwrap(),
            "{row}"
        );
    }
    assert_eq!(rows[0]["interest_saved"], "0.00");
    assert_eq!(rows[0]["payoff_date"], "2056-12-01");
    let extra = &rows[2];
    assert!(dec_of(&extra["interest_saved"]) > Decimal::ZERO, "{extra}");
    assert_eq!(
        extra["interest_saved"], separate[2]["summary"]["interest_saved"],
        "the same saving as the schedule with extras reports"
    );
    assert!(extra["payments_saved"].as_i64().unwrap() > 0, "{extra}");
    assert!(
        dec_of(&rows[1]["interest_saved"]) > Decimal::ZERO,
        "15 years cost less interest"
    );
}

#[test]
fn compare_csv_quotes_labels_holding_commas_or_quotes() {
    // Arrange
    let app = shared_app();
    let json_rows = app.post_json(COMPARE, &compare_body()).json()["rows"]
        .as_array()
        .unwrap()
        .clone();

    // Act
    let r = app.request(
        "POST",
        COMPARE,
        &[("Content-Type", "application/json"), ("Accept", "text/csv")],
        Some(&serde_json::to_vec(&compare_body()).unwrap()),
    );

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    assert_eq!(r.media_type(), "text/csv");
    let lines: Vec<&str> = r.text().split("\r\n").collect();
    assert!(lines[1].starts_with("30 years,"), "{}", lines[1]);
    assert!(lines[2].starts_with("15 years,"), "{}", lines[2]);
    assert!(
        lines[3].starts_with("\"30 years, \"\"200 extra\"\"\","),
        "RFC 4180: quoted, inner quotes doubled: {}",
        lines[3]
    );
    assert_compare_csv_matches(r.text(), &json_rows);
}

#[test]
fn more_than_four_plans_are_refused_with_422() {
    // Arrange
    let app = shared_app();
    let mut body = compare_body();
    body["variants"] = json!([
        {"term_months": 120}, {"term_months": 180}, {"term_months": 240}, {"term_months": 300}
    ]);

    // Act
    let posted = app.post_json(COMPARE, &body);
    let got = app.get(&format!(
        "{COMPARE}?principal=278000&annual_rate_percent=6.375&term_months=120,180,240,300,360"
    ));
    let four = app.get(&format!(
        "{COMPARE}?principal=278000&annual_rate_percent=6.375&term_months=180,240,300,360"
    ));

    // Assert
    assert_invalid(&app, &posted, "/variants");
    assert_invalid(&app, &got, "term_months");
    assert_eq!(four.status, 200, "four plans are allowed: {}", four.text());
    assert_eq!(four.json()["rows"].as_array().unwrap().len(), 4);
}

#[test]
fn a_bad_field_of_a_variant_is_refused_at_its_pointer_inside_the_variant() {
    // Arrange
    let app = shared_app();
    let cases = [
        (
            json!({"label": "none", "term_months": 0}),
            "/variants/0/term_months",
        ),
        (
            json!({"label": "all interest", "interest_only_payments": 360}),
            "/variants/0/interest_only_payments",
        ),
        (
            json!({"label": "typo", "term_monts": 180}),
            "/variants/0/term_monts",
        ),
    ];

    for (variant, pointer) in cases {
        let mut body = compare_body();
        body["variants"] = json!([variant]);

        // Act
        let r = app.post_json(COMPARE, &body);

        // Assert
        assert_invalid(&app, &r, pointer);
    }
}

#[test]
fn two_listed_fields_in_a_query_comparison_are_refused_with_422() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.get(&format!(
        "{COMPARE}?principal=278000&annual_rate_percent=6,7&term_months=180,360"
    ));

    // Assert
    let p = assert_problem(&r, 422, "invalid-fields");
    let found = pointers(&p);
    assert!(
        found
            .iter()
            .any(|q| q == "term_months" || q == "annual_rate_percent"),
        "names a listed field: {found:?}"
    );
    assert_still_healthy(&app);
}

#[test]

fn a_query_comparison_may_list_values_by_repeating_the_field_anywhere() {
    // Arrange: the module documents "a comma-separated (or repeated) list".
    let app = shared_app();
    let adjacent = app.get(&format!(
        "{COMPARE}?principal=278000&annual_rate_percent=6.375&term_months=180&term_months=360"
    ));
    assert_eq!(adjacent.status, 200, "{}", adjacent.text());

    // Act
    let apart = app.get(&format!(
        "{COMPARE}?term_months=180&principal=278000&annual_rate_percent=6.375&term_months=360"
    ));

    // Assert
    assert_eq!(apart.status, 200, "{}", apart.text());
    assert_eq!(apart.json()["rows"], adjacent.json()["rows"]);
}

// ---------------------------------------------------------------------------
// CSV schedule with dates and extras
// ---------------------------------------------------------------------------

#[test]
fn the_dated_csv_schedule_with_extras_carries_every_json_figure() {
    // Arrange
    let app = shared_app();
    let query = "principal=250000&annual_rate_percent=6.5&term_months=360\
                 &first_payment_date=2027-01-31&extra_payments=150@13-,5000@36";
    let s = schedule_by_query(&app, query);

    // Act
    let r = app.get(&format!("{SCHEDULE_CSV}?{query}"));

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    assert_eq!(r.media_type(), "text/csv");
    let records = parse_csv(r.text());
    assert_eq!(
        records[0],
        [
            "number",
            "date",
            "payment",
            "extra",
            "interest",
            "principal",
            "balance"
        ]
    );
    assert_eq!(records.len() - 1, rows(&s).len());
    for (record, row) in records[1..].iter().zip(rows(&s)) {
        let expected = vec![
            row["number"].to_string(),
            row["date"].as_str().unwrap().to_string(),
            row["payment"].as_str().unwrap().to_string(),
            row["extra"].as_str().unwrap().to_string(),
            row["interest"].as_str().unwrap().to_string(),
            row["principal"].as_str().unwrap().to_string(),
            row["balance"].as_str().unwrap().to_string(),
        ];
        assert_eq!(*record, expected);
    }
}

// ---------------------------------------------------------------------------
// Bad input: problem details with pointers
// ---------------------------------------------------------------------------

#[test]
fn a_first_payment_on_or_before_funding_is_refused_at_first_payment_date() {
    // Arrange
    let app = shared_app();

    for (funding, first) in [("2027-03-01", "2027-02-01"), ("2027-03-01", "2027-03-01")] {
        // Act
        let posted = app.post_json(
            SCHEDULE,
            &with(
                &loan_100k(),
                json!({"funding_date": funding, "first_payment_date": first}),
            ),
        );
        let got = app.get(&format!(
            "{SCHEDULE}?principal=100000&annual_rate_percent=6&term_months=360\
             &funding_date={funding}&first_payment_date={first}"
        ));

        // Assert
        assert_invalid(&app, &posted, "/first_payment_date");
        assert_invalid(&app, &got, "first_payment_date");
    }
}

#[test]
fn a_first_period_longer_than_a_year_is_refused_at_first_payment_date() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.post_json(
        SCHEDULE,
        &with(
            &loan_100k(),
            json!({"funding_date": "2026-01-01", "first_payment_date": "2027-02-01"}),
        ),
    );

    // Assert
    assert_invalid(&app, &r, "/first_payment_date");
}

#[test]
fn two_rate_changes_at_the_same_payment_are_refused_at_rate_changes() {
    // Arrange
    let app = shared_app();
    let body = with(
        &loan_100k(),
        json!({"rate_changes": [
            {"at": 61, "annual_rate_percent": "7"},
            {"at": 61, "annual_rate_percent": "8"}
        ]}),
    );

    // Act
    let posted = app.post_json(SCHEDULE, &body);
    let got = app.get(&format!(
        "{SCHEDULE}?principal=100000&annual_rate_percent=6&term_months=360&rate_changes=61:7,61:8"
    ));

    // Assert
    assert_invalid(&app, &posted, "/rate_changes");
    assert_invalid(&app, &got, "rate_changes");
}

#[test]
fn an_interest_only_period_as_long_as_the_term_is_refused_at_interest_only_payments() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.post_json(
        SCHEDULE,
        &with(&loan_100k(), json!({"interest_only_payments": 360})),
    );

    // Assert
    assert_invalid(&app, &r, "/interest_only_payments");
}

#[test]
fn a_balloon_after_as_many_payments_as_the_term_or_more_is_refused_at_balloon_after_payments() {
    // Arrange
    let app = shared_app();

    for after in [400, 360] {
        // Act
        let r = app.post_json(
            SCHEDULE,
            &with(&loan_100k(), json!({"balloon_after_payments": after})),
        );

        // Assert
        assert_invalid(&app, &r, "/balloon_after_payments");
    }
}

#[test]
fn february_30th_is_refused_at_funding_date_in_json_and_in_a_query() {
    // Arrange
    let app = shared_app();

    // Act
    let posted = app.post_json(
        SCHEDULE,
        &with(
            &loan_100k(),
            json!({"funding_date": "2027-02-30", "first_payment_date": "2027-04-01"}),
        ),
    );
    let got = app.get(&format!(
        "{SCHEDULE}?principal=100000&annual_rate_percent=6&term_months=360\
         &funding_date=2027-02-30&first_payment_date=2027-04-01"
    ));

    // Assert
    assert_invalid(&app, &posted, "/funding_date");
    assert_invalid(&app, &got, "funding_date");
}

#[test]
fn the_year_10000_is_refused_at_its_date_field() {
    // Arrange
    let app = shared_app();

    // Act
    let posted = app.post_json(
        SCHEDULE,
        &with(&loan_100k(), json!({"first_payment_date": "10000-01-01"})),
    );
    let got = app.get(&format!(
        "{SCHEDULE}?principal=100000&annual_rate_percent=6&term_months=360\
         &first_payment_date=10000-01-01"
    ));

    // Assert
    assert_invalid(&app, &posted, "/first_payment_date");
    assert_invalid(&app, &got, "first_payment_date");
}

#[test]
fn an_unparseable_extra_payment_item_is_refused_at_extra_payments() {
    // Arrange
    let app = shared_app();

    for item in ["150", "150@abc", "abc@13", "150@13-x", "150@13-/0x"] {
        // Act
        let r = app.get(&format!(
            "{SCHEDULE}?principal=100000&annual_rate_percent=6&term_months=360&extra_payments={item}"
        ));

        // Assert
        assert_invalid(&app, &r, "extra_payments");
    }
}

#[test]
fn an_extra_payment_with_both_at_and_from_is_refused_at_its_at() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.post_json(
        SCHEDULE,
        &with(
            &loan_100k(),
            json!({"extra_payments": [{"amount": "100", "at": 12, "from": 13}]}),
        ),
    );

    // Assert
    assert_invalid(&app, &r, "/extra_payments/0/at");
}

#[test]
fn an_unknown_member_inside_an_extra_payment_is_refused_at_its_own_pointer() {
    // Arrange
    let app = shared_app();

    // Act
    let r = app.post_json(
        SCHEDULE,
        &with(
            &loan_100k(),
            json!({"extra_payments": [{"amount": "100", "from": 13, "foo": 1}]}),
        ),
    );

    // Assert
    assert_invalid(&app, &r, "/extra_payments/0/foo");
}

#[test]
fn an_extra_payment_on_a_date_without_a_first_payment_date_is_refused() {
    // Arrange
    let app = shared_app();

    // Act
    let posted = app.post_json(
        SCHEDULE,
        &with(
            &loan_100k(),
            json!({"extra_payments": [{"amount": "100", "at": "2030-02-01"}]}),
        ),
    );
    let got = app.get(&format!(
        "{SCHEDULE}?principal=100000&annual_rate_percent=6&term_months=360\
         &extra_payments=100@2030-02-01"
    ));

    // Assert
    assert_invalid(&app, &posted, "/extra_payments/0/at");
    assert_invalid(&app, &got, "extra_payments");
}

#[test]
fn a_compare_csv_label_that_reads_as_a_formula_is_neutralized() {
    // Arrange: labels a spreadsheet would evaluate on import (the OWASP advice on
    // CSV injection: a leading =, +, -, @ is made text with a leading ').
    let app = shared_app();
    let body = json!({
        "base": {"principal": "1000", "annual_rate_percent": "6", "term_months": 12,
                 "label": "=HYPERLINK(\"http://example.invalid\")"},
        "variants": [{"label": "@SUM(A1)", "term_months": 6}, {"label": "-1+2", "term_months": 9}]
    });

    // Act
    let r = app.request(
        "POST",
        COMPARE,
        &[("Content-Type", "application/json"), ("Accept", "text/csv")],
        Some(&serde_json::to_vec(&body).unwrap()),
    );

    // Assert
    assert_eq!(r.status, 200, "{}", r.text());
    let lines: Vec<&str> = r.text().split("\r\n").collect();
    assert!(
        lines[1].starts_with("\"'=HYPERLINK(\"\"http://example.invalid\"\")\","),
        "{}",
        lines[1]
    );
    assert!(lines[2].starts_with("'@SUM(A1),"), "{}", lines[2]);
    assert!(lines[3].starts_with("'-1+2,"), "{}", lines[3]);
    // The JSON keeps the labels as given.
    let json = app.post_json(COMPARE, &body).json();
    assert_eq!(json["rows"][1]["label"], "@SUM(A1)");
}

#[test]
fn a_compare_across_currencies_is_refused_at_the_variants_currency() {
    let app = shared_app();
    let body = json!({
        "base": {"principal": "250000", "annual_rate_percent": "6", "term_months": 360},
        "variants": [{"currency": "JPY"}]
    });
    let r = app.post_json(COMPARE, &body);
    assert_field_problem(&r, 422, "invalid-fields", "/variants/0/currency");
    let r = app.get(&format!(
        "{COMPARE}?principal=250000&annual_rate_percent=6&term_months=360&currency=USD,JPY"
    ));
    assert_field_problem(&r, 422, "invalid-fields", "currency");
}

#[test]
fn payments_saved_is_left_empty_for_a_plan_paid_at_another_frequency() {
    // A biweekly plan has 780 scheduled payments against the monthly base's 360;
    // their difference counts unlike payments, so it is not given (null, an empty
    // CSV cell); the interest saved still is.
    let app = shared_app();
    let body = json!({
        "base": {"principal": "278000", "annual_rate_percent": "6.375", "term_months": 360},
        "variants": [{"label": "biweekly", "payment_frequency": "biweekly"}, {"label": "25 years", "term_months": 300}]
    });
    let r = app.post_json(COMPARE, &body);
    assert_eq!(r.status, 200, "{}", r.text());
    let c = r.json();
    assert_eq!(c["rows"][1]["payments_saved"], Value::Null, "{c}");
    assert!(
        dec_of(&c["rows"][1]["interest_saved"]) > Decimal::ZERO,
        "{c}"
    );
    assert_eq!(c["rows"][2]["payments_saved"], 60, "{c}");
    assert!(
        c["notes"]
            .as_array()
            .unwrap()
            .iter()
            .any(|n| n.as_str().unwrap().contains("another frequency")),
        "{c}"
    );
    let csv = app.request(
        "POST",
        COMPARE,
        &[("Content-Type", "application/json"), ("Accept", "text/csv")],
        Some(&serde_json::to_vec(&body).unwrap()),
    );
    let lines: Vec<&str> = csv.text().split("\r\n").collect();
    assert!(
        lines[2].starts_with("biweekly,") && lines[2].ends_with(','),
        "{}",
        lines[2]
    );
    assert!(lines[3].ends_with(",60"), "{}", lines[3]);
}

#[test]
fn a_short_first_period_charges_a_full_period_less_a_credit_and_says_so() {
    // Funded 2026-03-25, first payment 2026-04-01: the regular period runs from
    // 2026-03-01, 24 days before funding. By hand: a full month's interest is
    // 250,000 × 0.06/12 = 1,250.00; the credit 250,000 × 0.06 × 24/365 =
    // 986.301… = 986.30 (actual/365); the first interest 1,250.00 − 986.30 = 263.70.
    let app = shared_app();
    let s = app
        .get(&format!(
            "{SCHEDULE}?principal=250000&annual_rate_percent=6&term_months=360&funding_date=2026-03-25&first_payment_date=2026-04-01"
        ))
        .json();
    assert_eq!(
        s["schedule"][0]["interest"], "263.70",
        "{}",
        s["schedule"][0]
    );
    assert!(
        has_note(&s, "24 days shorter than a regular one")
            && has_note(
                &s,
                "986.30 of interest for the days before funding is taken off the first payment"
            ),
        "{:?}",
        notes(&s)
    );
}
