//! A pipeline of quotes checked row by row: each row's verdict (`ok`, `differs`
//! or `error`), its figures, and its reason in a few words. The API writes the
//! verdicts as CSV or NDJSON and the `/pipeline` page as a table; both take them
//! from here.

use crate::input::csv::{row_fields, row_id, Header};
use crate::input::fields::{Fields, Source};
use crate::input::problem::ApiError;

use super::check::{check_answer_with, CheckAnswer};

/// A row's verdict.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Status {
    /// A figure quoted is off: the payment by a minor unit or more, or the APR
    /// or the finance charge beyond its tolerance. Listed first on the page.
    Differs,
    /// The row could not be read or computed.
    Error,
    /// Every figure quoted holds (or nothing was quoted).
    Ok,
}

impl Status {
    /// The name in answers.
    pub fn name(self) -> &'static str {
        match self {
            Status::Ok => "ok",
            Status::Differs => "differs",
            Status::Error => "error",
        }
    }

    /// Every status, in the order of the metrics.
    pub const ALL: [Status; 3] = [Status::Ok, Status::Differs, Status::Error];
}

/// One row's answer. Figures are text as the check's JSON answer writes them;
/// `None` where the row has no such figure (nothing quoted, or an error).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RowVerdict {
    pub id: String,
    /// The line of the file the row starts on (the header is line 1).
    pub line: usize,
    pub status: Status,
    pub computed_payment: Option<String>,
    pub quoted_payment: Option<String>,
    /// Quoted − computed.
    pub payment_difference: Option<String>,
    pub payment_matches: Option<bool>,
    pub apr_percent: Option<String>,
    pub quoted_apr_percent: Option<String>,
    /// Quoted − computed, in percentage points.
    pub apr_difference_points: Option<String>,
    pub apr_tolerance_points: Option<String>,
    pub apr_within_tolerance: Option<bool>,
    pub finance_charge: Option<String>,
    pub quoted_finance_charge: Option<String>,
    /// Quoted − computed.
    pub finance_charge_difference: Option<String>,
    pub finance_charge_tolerance: Option<String>,
    pub finance_charge_within_tolerance: Option<bool>,
    /// What holds or what is off, or each field's error.
    pub reason: String,
    /// The row's single check: `/check?` and its fields.
    pub check_url: String,
}

impl RowVerdict {
    /// The last row of an answer cut short: no id, no line, and `reason`.
    pub fn closing(reason: String) -> Self {
        let mut v = Self::empty(String::new(), 0);
        v.reason = reason;
        v
    }

    fn empty(id: String, line: usize) -> Self {
        Self {
            id,
            line,
            status: Status::Error,
            computed_payment: None,
            quoted_payment: None,
            payment_difference: None,
            payment_matches: None,
            apr_percent: None,
            quoted_apr_percent: None,
            apr_difference_points: None,
            apr_tolerance_points: None,
            apr_within_tolerance: None,
            finance_charge: None,
            quoted_finance_charge: None,
            finance_charge_difference: None,
            finance_charge_tolerance: None,
            finance_charge_within_tolerance: None,
            reason: String::new(),
            check_url: String::new(),
        }
    }
}

/// The reason of a row that failed: each field's error, or the problem's detail.
fn error_reason(e: &ApiError) -> String {
    if e.errors.is_empty() {
        return e.detail.clone();
    }
    e.errors
        .iter()
        .map(|f| {
            if f.pointer.is_empty() {
                f.message.clone()
            } else {
                format!("{}: {}", f.pointer, f.message)
            }
        })
        .collect::<Vec<_>>()
        .join("; ")
}

fn strip_sign(s: &str) -> &str {
    s.strip_prefix('-').unwrap_or(s)
}

/// A figure in percent or points, for words: to four decimals, trailing zeros
/// dropped (the answer's columns keep every digit).
fn short(s: &str) -> String {
    match s.parse::<rust_decimal::Decimal>() {
        Ok(d) => d
            .round_dp_with_strategy(4, rust_decimal::RoundingStrategy::MidpointAwayFromZero)
            .normalize()
            .to_string(),
        Err(_) => s.to_string(),
    }
}

/// The verdict of a computed check.
fn from_answer(v: &mut RowVerdict, a: CheckAnswer) {
    let mut holds = Vec::new();
    let mut off = Vec::new();
    match (a.payment_matches, &a.payment_difference) {
        (Some(true), _) => holds.push("payment matches".to_string()),
        (Some(false), Some(d)) => off.push(format!(
            "payment {} by {} (quoted {}, computed {})",
            if d.starts_with('-') { "under" } else { "over" },
            strip_sign(d),
            a.quoted_payment.as_deref().unwrap_or(""),
            a.computed_payment
        )),
        _ => {}
    }
    match (a.apr_within_tolerance, &a.apr_difference_points) {
        (Some(true), _) => holds.push(format!("APR within {} points", a.apr_tolerance_points)),
        (Some(false), Some(d)) => off.push(format!(
            "APR {} by {} points, beyond the {}-point tolerance (quoted {}, computed {})",
            if d.starts_with('-') { "under" } else { "over" },
            short(strip_sign(d)),
            a.apr_tolerance_points,
            a.quoted_apr_percent.as_deref().unwrap_or(""),
            short(&a.apr_percent_full)
        )),
        _ => {}
    }
    if let Some(t) = &a.finance_charge_tolerance {
        if t.within_tolerance {
            holds.push("finance charge within tolerance".into());
        } else {
            off.push(format!(
                "finance charge {} by {}, beyond the tolerance of {}",
                if t.difference.starts_with('-') {
                    "understated"
                } else {
                    "overstated"
                },
                strip_sign(&t.difference),
                t.tolerance
            ));
        }
    }
    v.status = if off.is_empty() {
        Status::Ok
    } else {
        Status::Differs
    };
    v.reason = if !off.is_empty() {
        off.join("; ")
    } else if holds.is_empty() {
        "nothing quoted: the computed figures only".into()
    } else {
        holds.join("; ")
    };
    v.payment_matches = a.payment_matches;
    v.apr_within_tolerance = a.apr_within_tolerance;
    v.quoted_payment = a.quoted_payment;
    v.payment_difference = a.payment_difference;
    v.computed_payment = Some(a.computed_payment);
    v.apr_percent = Some(a.apr_percent);
    v.quoted_apr_percent = a.quoted_apr_percent;
    v.apr_difference_points = a.apr_difference_points;
    v.apr_tolerance_points = Some(a.apr_tolerance_points);
    v.finance_charge = Some(a.finance_charge);
    if let Some(t) = a.finance_charge_tolerance {
        v.quoted_finance_charge = Some(t.quoted_finance_charge);
        v.finance_charge_difference = Some(t.difference);
        v.finance_charge_tolerance = Some(t.tolerance);
        v.finance_charge_within_tolerance = Some(t.within_tolerance);
    }
}

/// Checks one row of a file: never fails (a row that cannot be read or computed
/// is an `error` verdict with each field's error).
pub fn check_row(header: &Header, record: &str, line: usize) -> RowVerdict {
    let row = match row_fields(header, record) {
        Ok(r) => r,
        Err(message) => {
            let mut v = RowVerdict::empty(row_id(header, record), line);
            v.reason = format!("line {line}: {message}");
            return v;
        }
    };
    let mut v = RowVerdict::empty(row.id, line);
    v.check_url = format!(
        "/check?{}",
        form_urlencoded::Serializer::new(String::new())
            .extend_pairs(row.pairs.iter())
            .finish()
    );
    if v.id.is_empty() {
        v.reason = "id: is required: each row needs an id, echoed in its answer".into();
        return v;
    }
    match check_answer_with(Fields::new(Source::Query(&row.pairs)), false) {
        Ok(a) if row.errors.is_empty() => from_answer(&mut v, a),
        Ok(_) => v.reason = error_reason(&ApiError::fields(row.errors)),
        Err(mut e) => {
            // An error found before the reader (an ambiguous comma) replaces the
            // reader's message for its field.
            for pre in row.errors {
                e.errors.retain(|f| f.pointer != pre.pointer);
                e.errors.push(pre);
            }
            v.reason = error_reason(&e);
        }
    }
    v
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::csv::read_sheet;

    fn verdicts(file: &str) -> Vec<RowVerdict> {
        let (sheet, offset) = read_sheet(file.as_bytes()).unwrap();
        assert_eq!(offset, 0);
        sheet
            .rows
            .iter()
            .map(|r| check_row(&sheet.header, &file[r.start..r.end], r.line))
            .collect()
    }

    /// The level payment of 100,000 at 6 % a year over 360 months is 599.55
    /// (P·i/(1 − (1 + i)^−n) with i = 0.005: 599.5505…; the handbook value of
    /// a 6 %, 30-year loan, 5.9955 per 1,000, from memory).
    #[test]
    fn each_row_is_ok_differs_or_error_with_its_reason() {
        let v = verdicts(
            "id,principal,annual_rate_percent,term_months,quoted_payment,quoted_apr_percent\n\
             a,100000,6,360,599.55,6\n\
             b,100000,6,360,599.56,6.126\n\
             c,lots,6,360,599.55,6\n\
             ,100000,6,360,,\n\
             e,100000,6,360,,\n",
        );
        assert_eq!(
            v.iter().map(|r| r.status).collect::<Vec<_>>(),
            [
                Status::Ok,
                Status::Differs,
                Status::Error,
                Status::Error,
                Status::Ok
            ]
        );
        assert_eq!(v[0].computed_payment.as_deref(), Some("599.55"));
        assert_eq!(v[0].reason, "payment matches; APR within 0.125 points");
        assert!(
            v[1].reason.contains("payment over by 0.01"),
            "{}",
            v[1].reason
        );
        assert!(
            v[1].reason.contains("APR over by 0.126 points"),
            "{}",
            v[1].reason
        );
        assert_eq!(v[1].payment_difference.as_deref(), Some("0.01"));
        assert!(v[2].reason.starts_with("principal: "), "{}", v[2].reason);
        assert_eq!(v[2].computed_payment, None);
        assert!(v[3].reason.starts_with("id: is required"));
        assert_eq!(v[4].reason, "nothing quoted: the computed figures only");
        assert_eq!(
            v.iter().map(|r| r.line).collect::<Vec<_>>(),
            [2, 3, 4, 5, 6]
        );
        assert!(v[0].check_url.starts_with("/check?principal=100000&"));
    }

    #[test]
    fn an_ambiguous_comma_is_the_rows_error() {
        let v = verdicts("id;principal;annual_rate_percent;term_months\nx;\"1,5\";6;12\n");
        assert_eq!(v[0].status, Status::Error);
        assert!(
            v[0].reason.contains("decimal with a point"),
            "{}",
            v[0].reason
        );
        assert_eq!(
            v[0].reason.matches("principal:").count(),
            1,
            "{}",
            v[0].reason
        );
    }
}
