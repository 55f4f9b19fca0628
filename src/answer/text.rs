//! Dates and numbers as answer text, written without a heap string where it is hot.

use jiff::civil::Date;
use rust_decimal::Decimal;
use serde::{Serialize, Serializer};

/// A calendar date as ISO 8601 text (YYYY-MM-DD).
#[derive(Debug, Clone, Copy)]
pub struct IsoDate(pub Date);

impl Serialize for IsoDate {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut b = Vec::with_capacity(10);
        write_iso_date(&mut b, self.0);
        s.serialize_str(std::str::from_utf8(&b).unwrap_or("0000-00-00"))
    }
}

/// Appends the date as ISO 8601 text (YYYY-MM-DD; the calendar library's own text
/// outside the years 0 to 9999).
pub fn write_iso_date(out: &mut Vec<u8>, d: Date) {
    let year = d.year();
    if !(0..=9999).contains(&year) {
        out.extend_from_slice(d.to_string().as_bytes());
        return;
    }
    let mut b = *b"0000-00-00";
    let mut put = |at: usize, value: u32, width: usize| {
        let mut v = value;
        for i in (0..width).rev() {
            b[at + i] = b'0' + (v % 10) as u8;
            v /= 10;
        }
    };
    put(0, year as u32, 4);
    put(5, d.month() as u32, 2);
    put(8, d.day() as u32, 2);
    out.extend_from_slice(&b);
}

/// The decimal's text exactly as its `Display` writes it (sign, every digit of
/// its scale), from the mantissa's integer digits with the point put in place.
pub fn decimal_string(d: Decimal) -> String {
    let m = d.mantissa().unsigned_abs();
    let scale = d.scale() as usize;
    let mut buffer = itoa::Buffer::new();
    let digits = if m == 0 { "" } else { buffer.format(m) };
    let mut out = String::with_capacity(digits.len() + scale + 3);
    if d.is_sign_negative() {
        out.push('-');
    }
    if digits.len() > scale {
        let (whole, fraction) = digits.split_at(digits.len() - scale);
        out.push_str(whole);
        if scale > 0 {
            out.push('.');
            out.push_str(fraction);
        }
    } else if scale == 0 {
        out.push('0');
    } else {
        out.push_str("0.");
        for _ in digits.len()..scale {
            out.push('0');
        }
        out.push_str(digits);
    }
    out
}
