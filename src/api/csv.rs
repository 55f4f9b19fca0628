//! Every CSV answer (RFC 4180, CRLF line ends): the loan schedule, the savings
//! plan and the comparison, and the one guard of a free-text cell against being
//! read as a formula by a spreadsheet.

use super::text::Line;
use crate::answer::compare::CompareDto;
use crate::engine::savings::SavingsPlan;
use crate::engine::schedule::LoanSchedule;

/// The comparison as CSV (RFC 4180).
pub fn compare_csv(c: &CompareDto) -> String {
    let mut out = String::from("label,payment,number_of_payments,total_interest,total_paid,payoff_date,interest_saved,payments_saved\r\n");
    for r in &c.rows {
        out.push_str(&format!(
            "{},{},{},{},{},{},{},{}\r\n",
            csv_field(&r.label),
            r.payment,
            r.number_of_payments,
            r.total_interest,
            r.total_paid,
            r.payoff_date.as_deref().unwrap_or(""),
            r.interest_saved,
            r.payments_saved.map_or(String::new(), |v| v.to_string())
        ));
    }
    out
}

/// A text field (a label) quoted per RFC 4180 when it holds a comma, quote or
/// line break. Text that a spreadsheet would take for a formula (a first
/// character `=`, `+`, `-`, `@`, after any leading spaces, zero-width or control
/// characters, or a first tab or carriage return) gets a leading `'`, so
/// an imported label is shown, never evaluated (the OWASP advice on CSV
/// injection). Only labels are text here; the figures are plain numbers.
pub fn csv_field(s: &str) -> String {
    // A spreadsheet may skip leading spaces (no-break, ideographic and zero-width
    // ones too) before it looks for a formula: the guard looks past them.
    let start = s.trim_start_matches(|c: char| {
        c.is_whitespace()
            || c.is_control()
            || matches!(c, '\u{200b}'..='\u{200d}' | '\u{2060}' | '\u{feff}')
    });
    let s = if start.starts_with(['=', '+', '-', '@']) || s.starts_with(['\t', '\r']) {
        std::borrow::Cow::Owned(format!("'{s}"))
    } else {
        std::borrow::Cow::Borrowed(s)
    };
    if s.contains([',', '"', '\r', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.into_owned()
    }
}

/// The schedule as CSV (RFC 4180): a header row, then one row a payment.
pub fn schedule_csv(s: &LoanSchedule) -> String {
    let c = s.terms.currency;
    let mut out = Vec::with_capacity(64 * (s.ledger.rows.len() + 1));
    out.extend_from_slice(b"number,date,payment,extra,interest,principal,balance\r\n");
    let mut line = Line::new();
    for r in &s.ledger.rows {
        line.clear();
        line.number(u64::from(r.number));
        line.put(b",");
        if let Some(d) = r.date {
            line.date(d);
        }
        for amount in [r.payment, r.extra, r.interest, r.principal, r.balance] {
            line.put(b",");
            line.amount(c, amount);
        }
        line.put(b"\r\n");
        out.extend_from_slice(line.as_bytes());
    }
    // Digits, signs, points, commas, dashes and CRLF only: ASCII.
    String::from_utf8(out).unwrap_or_default()
}

/// The schedule as CSV (RFC 4180): a header row, then one row a period; the date
/// is empty without a `start_date`, and a withdrawal is a negative deposit.
pub fn savings_csv(p: &SavingsPlan) -> String {
    let c = p.terms.currency;
    let mut out = String::with_capacity(48 * (p.ledger.rows.len() + 1));
    out.push_str("number,date,deposit,interest,balance\r\n");
    for r in &p.ledger.rows {
        out.push_str(&format!(
            "{},{},{},{},{}\r\n",
            r.number,
            r.date.map(|d| d.to_string()).unwrap_or_default(),
            c.format(r.deposit),
            c.format(r.interest),
            c.format(r.balance)
        ));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::csv_field;

    #[test]
    fn a_formula_behind_spaces_or_invisible_characters_is_guarded() {
        // The OWASP advice on CSV injection (from memory): a cell a spreadsheet
        // would evaluate gets a leading quote, whatever blank comes first.
        for label in [
            "=1+1",
            " =1+1",
            "\u{a0}=1+1",
            "\u{3000}+1",
            "\u{200b}@SUM(A1)",
            "\u{feff}-2",
            "\t=1",
        ] {
            assert!(csv_field(label).starts_with('\''), "{label:?}");
        }
        for label in ["15 years", " 15 years", "extra 200"] {
            assert_eq!(csv_field(label), label);
        }
    }
}
