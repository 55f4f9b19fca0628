//! Answer values written straight into the JSON output, without a heap string each.

use jiff::civil::Date;
use serde::{Serialize, Serializer};

use crate::engine::money::AmountText;

impl Serialize for AmountText {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(self.as_str())
    }
}

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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_read_as_the_calendar_library_writes_them() {
        // jiff's own Display is the reference.
        for (y, m, d) in [
            (2027, 1, 5),
            (1978, 12, 31),
            (9999, 2, 28),
            (0, 1, 1),
            (31, 7, 9),
        ] {
            let date = Date::new(y, m, d).unwrap();
            let json = serde_json::to_string(&IsoDate(date)).unwrap();
            assert_eq!(json, format!("\"{date}\""));
        }
    }
}
