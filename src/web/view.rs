//! Pieces every result page shares: figures written for reading, the summary
//! list, and the schedule grouped by year.

use rust_decimal::Decimal;

use crate::engine::money::Currency;

/// "1234567.89" as "1,234,567.89" (the figure itself is the API's, to the minor unit).
pub fn group_thousands(text: &str) -> String {
    let (sign, body) = match text.strip_prefix('-') {
        Some(rest) => ("−", rest),
        None => ("", text),
    };
    let (int, frac) = match body.split_once('.') {
        Some((i, f)) => (i, Some(f)),
        None => (body, None),
    };
    let mut out = String::with_capacity(text.len() + int.len() / 3 + 2);
    out.push_str(sign);
    let digits = int.len();
    for (i, ch) in int.chars().enumerate() {
        if i > 0 && (digits - i) % 3 == 0 {
            out.push(',');
        }
        out.push(ch);
    }
    if let Some(f) = frac {
        out.push('.');
        out.push_str(f);
    }
    out
}

/// Running text with its amounts grouped by thousands: "the final payment is
/// 1679.59" as "… 1,679.59". An amount is a number with a decimal point and at
/// least four digits before it; a section of a regulation ("§1026.22",
/// "12 CFR 1026.18(d)") is left alone, as are whole numbers (payment numbers, years).
pub fn grouped_in_text(text: &str) -> String {
    let bytes = text.as_bytes();
    let mut out = String::with_capacity(text.len() + 8);
    let mut i = 0;
    while i < bytes.len() {
        if !bytes[i].is_ascii_digit()
            || (i > 0 && (bytes[i - 1].is_ascii_digit() || bytes[i - 1] == b'.'))
        {
            let ch = text[i..].chars().next().unwrap_or(' ');
            out.push(ch);
            i += ch.len_utf8();
            continue;
        }
        let start = i;
        while i < bytes.len() && bytes[i].is_ascii_digit() {
            i += 1;
        }
        let int_end = i;
        let mut end = i;
        if i + 1 < bytes.len() && bytes[i] == b'.' && bytes[i + 1].is_ascii_digit() {
            end = i + 1;
            while end < bytes.len() && bytes[end].is_ascii_digit() {
                end += 1;
            }
        }
        let before = &text[..start];
        let section =
            before.ends_with('§') || before.ends_with("CFR ") || before.ends_with("Part ");
        let cited = bytes.get(end) == Some(&b'(');
        if end > int_end && int_end - start >= 4 && !section && !cited {
            out.push_str(&group_thousands(&text[start..end]));
        } else {
            out.push_str(&text[start..end]);
        }
        i = end;
    }
    out
}

/// An amount with the currency's minor units, grouped by thousands.
pub fn money(c: Currency, d: Decimal) -> String {
    group_thousands(&c.format(d))
}

/// A rate in percent for reading: at most 6 decimals, trailing zeros dropped.
pub fn percent(d: Decimal) -> String {
    let r = d.round_dp(6).normalize();
    format!("{r} %")
}

/// One figure of a summary.
pub struct Figure {
    pub label: String,
    /// As shown.
    pub value: String,
    /// As the JSON answer writes it (for tests and copy): `data-value`.
    pub raw: String,
    /// A short explanation under the figure (may be empty).
    pub note: String,
    /// The API's field name for this figure (`data-figure`), or empty.
    pub key: &'static str,
}

impl Figure {
    pub fn new(
        label: impl Into<String>,
        value: impl Into<String>,
        raw: impl Into<String>,
        note: impl Into<String>,
    ) -> Self {
        Self {
            label: label.into(),
            value: value.into(),
            raw: raw.into(),
            note: note.into(),
            key: "",
        }
    }

    /// Names the figure by the API's field (`data-figure="…"`), a stable hook for tests and scripts.
    #[must_use]
    pub fn keyed(mut self, key: &'static str) -> Self {
        self.key = key;
        self
    }
}

/// One year of a schedule.
pub struct Year {
    pub title: String,
    /// The year's totals in a sentence (the `<summary>`).
    pub summary: String,
    /// Shown unfolded.
    pub open: bool,
    pub rows: Vec<Vec<String>>,
    /// The subtotal row, aligned with the columns.
    pub totals: Vec<String>,
}

/// A schedule as tables, one a year.
pub struct Schedule {
    pub caption: String,
    pub columns: Vec<&'static str>,
    pub years: Vec<Year>,
}

/// Schedules this long or shorter are not folded.
pub const UNFOLDED_ROWS: usize = 24;

/// The year a period falls in (1-based), by periods per year.
pub fn year_of(number: u32, per_year: u32) -> u32 {
    (number.saturating_sub(1)) / per_year.max(1) + 1
}

/// "payments 13–24, 2027-05-01 to 2028-04-01".
pub fn span(
    noun: &str,
    first: u32,
    last: u32,
    first_date: Option<jiff::civil::Date>,
    last_date: Option<jiff::civil::Date>,
) -> String {
    let mut s = if first == last {
        format!("{noun} {first}")
    } else {
        format!("{noun}s {first}–{last}")
    };
    if let (Some(a), Some(b)) = (first_date, last_date) {
        if a == b {
            s.push_str(&format!(", {a}"));
        } else {
            s.push_str(&format!(", {a} to {b}"));
        }
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn amounts_in_running_text_are_grouped_and_citations_are_not() {
        assert_eq!(
            grouped_in_text(
                "The final payment is 1679.59; 360 payments from 2027; total 497225.73."
            ),
            "The final payment is 1,679.59; 360 payments from 2027; total 497,225.73."
        );
        assert_eq!(
            grouped_in_text(
                "By §1026.22(a)(2) and 12 CFR 1026.18, the amount financed (197000.00)."
            ),
            "By §1026.22(a)(2) and 12 CFR 1026.18, the amount financed (197,000.00)."
        );
        assert_eq!(grouped_in_text("a rate of 6.6203 %"), "a rate of 6.6203 %");
        assert_eq!(grouped_in_text("−1234.5 and 999.99"), "−1,234.5 and 999.99");
    }
}
