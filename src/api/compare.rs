//! Comparing plans: a base loan and variants that change some of its fields.
//!
//! `POST /api/v1/loans/compare` takes {`base`: {schedule fields}, `variants`:
//! [{`label`, fields it changes}]} (at most four plans in all).
//! `GET /api/v1/loans/compare?principal=…&annual_rate_percent=…&term_months=180,240,360`
//! compares quickly: exactly one field may hold a comma-separated (or repeated)
//! list, and each value makes one plan; the first is the base.

use crate::answer::compare::CompareDto;

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
