//! Answer values written straight into the output, without a heap string each.
//!
//! Why: a 360-payment schedule answer is 1,800 amounts and 360 dates, most of
//! its 48 KB; formatting each through `String` was most of the answer's cost.
//! `Line` builds a whole schedule row on the stack (eight digits at a time) and
//! `AmountText` serializes an amount from its integer minor units.
//!
//! How they are held to the ordinary serializer: the tests below compare every
//! writer with `Decimal`'s and jiff's own `Display`, and a property test in
//! `tests/library/answer_properties.rs` holds the whole JSON answer written
//! row by row to serde_json's serialization of the answer's types, byte for byte.

use jiff::civil::Date;

use rust_decimal::Decimal;

use serde::{Serialize, Serializer};

use crate::engine::money::{AmountText, Currency};

impl Serialize for AmountText {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(self.as_str())
    }
}

/// One line of an answer (a schedule row of JSON or CSV) written into a buffer on
/// the stack, then appended to the output in one copy. Constant pieces are copied
/// with their length known; numbers and amounts are written digit pair by digit
/// pair straight into place, without an intermediate text.
pub struct Line {
    bytes: [u8; Line::CAPACITY],
    at: usize,
}

const PAIRS: &[u8; 200] = b"00010203040506070809101112131415161718192021222324252627282930313233343536373839404142434445464748495051525354555657585960616263646566676869707172737475767778798081828384858687888990919293949596979899";

impl Line {
    /// Room for a schedule row at its longest: about 90 bytes of keys, a number of
    /// 10 digits, a date of 10 and five amounts of at most 50 bytes each; and 8
    /// bytes to spare after the last (digits are stored eight bytes at a time).
    const CAPACITY: usize = 512;

    /// An empty line.
    pub fn new() -> Self {
        Self {
            bytes: [0; Self::CAPACITY],
            at: 0,
        }
    }

    /// Starts the line again, empty.
    pub fn clear(&mut self) {
        self.at = 0;
    }

    /// The bytes written so far.
    pub fn as_bytes(&self) -> &[u8] {
        &self.bytes[..self.at]
    }

    /// Appends `piece` (at most 64 bytes at a time: the keys between the values).
    pub fn put(&mut self, piece: &[u8]) {
        self.bytes[self.at..self.at + piece.len()].copy_from_slice(piece);
        self.at += piece.len();
    }

    /// Appends `v` in decimal, at least one digit.
    pub fn number(&mut self, v: u64) {
        if v < 100_000_000 {
            let values = digit_values(v as u32);
            let zeros = (values.trailing_zeros() / 8) as usize;
            let digits = 8usize.saturating_sub(zeros).max(1);
            let text = (values | 0x3030_3030_3030_3030) >> (8 * (8 - digits));
            self.bytes[self.at..self.at + 8].copy_from_slice(&text.to_le_bytes());
            self.at += digits;
        } else {
            let digits = v.checked_ilog10().map_or(1, |d| d as usize + 1);
            self.digits(v, digits);
        }
    }

    /// Writes the last `width` (1 to 8) decimal digits of `v` (below 10^8), zeros
    /// to the left, in one store.
    fn eight(&mut self, v: u32, width: usize) {
        let text = eight_digits(v) >> (8 * (8 - width));
        self.bytes[self.at..self.at + 8].copy_from_slice(&text.to_le_bytes());
        self.at += width;
    }

    /// Writes the last `width` decimal digits of `v` (zeros to the left), forwards.
    fn digits(&mut self, mut v: u64, width: usize) {
        let end = self.at + width;
        let mut p = end;
        while p >= self.at + 2 {
            let pair = 2 * (v % 100) as usize;
            v /= 100;
            self.bytes[p - 2] = PAIRS[pair];
            self.bytes[p - 1] = PAIRS[pair + 1];
            p -= 2;
        }
        if p > self.at {
            self.bytes[p - 1] = b'0' + (v % 10) as u8;
        }
        self.at = end;
    }

    /// Appends the date as [`crate::answer::text::write_iso_date`] writes it.
    pub fn date(&mut self, d: Date) {
        let year = d.year();
        if !(0..=9999).contains(&year) {
            self.put(d.to_string().as_bytes());
            return;
        }
        self.digits(year as u64, 4);
        self.put(b"-");
        self.digits(d.month() as u64, 2);
        self.put(b"-");
        self.digits(d.day() as u64, 2);
    }

    /// Appends the amount as [`Currency::text`] writes it (rounded half away from
    /// zero to the minor unit, no sign on zero). The ledger's amounts already
    /// carry the currency's decimals and fit 64 bits: those are written here digit
    /// pair by digit pair; any other is handed to [`Currency::text`].
    pub fn amount(&mut self, currency: Currency, amount: Decimal) {
        let decimals = currency.minor_units();
        let m = amount.mantissa();
        let Ok(v) = u64::try_from(m.unsigned_abs()) else {
            self.put(currency.text(amount).as_bytes());
            return;
        };
        if amount.scale() != decimals || decimals > 18 {
            self.put(currency.text(amount).as_bytes());
            return;
        }
        if m < 0 {
            self.put(b"-");
        }
        if v < 100_000_000 && (1..=7).contains(&decimals) {
            // All eight digits at once; the integer part (at least one digit,
            // its leading zeros dropped) and the decimals stored as two words
            // around the point, each store overwriting the last one's spare bytes.
            let d = decimals as usize;
            let values = digit_values(v as u32);
            // Leading zero digits (the low bytes, first digits, that are 0).
            let zeros = (values.trailing_zeros() / 8) as usize;
            let n = (8 - d).saturating_sub(zeros).max(1);
            let text = values | 0x3030_3030_3030_3030;
            let at = self.at;
            self.bytes[at..at + 8].copy_from_slice(&(text >> (8 * (8 - d - n))).to_le_bytes());
            self.bytes[at + n] = b'.';
            self.bytes[at + n + 1..at + n + 9]
                .copy_from_slice(&(text >> (8 * (8 - d))).to_le_bytes());
            self.at = at + n + 1 + d;
        } else if decimals <= 8 {
            let unit = POWERS[decimals as usize];
            self.number(v / unit);
            if decimals > 0 {
                self.put(b".");
                self.eight((v % unit) as u32, decimals as usize);
            }
        } else {
            let unit = 10u64.pow(decimals);
            self.number(v / unit);
            self.put(b".");
            self.digits(v % unit, decimals as usize);
        }
    }
}

/// The eight decimal digits of `v` (below 10^8, zeros to the left) as ASCII in
/// the bytes of one word, the first digit in the lowest byte.
fn eight_digits(v: u32) -> u64 {
    digit_values(v) | 0x3030_3030_3030_3030
}

/// The eight decimal digits of `v` (below 10^8) as values 0 to 9 in the bytes of
/// one word, the first digit in the lowest byte: halved into 4-digit, 2-digit and
/// 1-digit lanes by multiplying with reciprocals, exact for these ranges.
fn digit_values(v: u32) -> u64 {
    let v = u64::from(v);
    // Lanes of 32 bits: the first four digits (low lane), the last four.
    let mut x = (v / 10_000) | ((v % 10_000) << 32);
    // n·10486 >> 20 = ⌊n/100⌋ for n < 43,699: lanes of 16 bits, two digits each.
    let hundreds = ((x * 10_486) >> 20) & 0x0000_007F_0000_007F;
    x = hundreds | ((x - hundreds * 100) << 16);
    // n·103 >> 10 = ⌊n/10⌋ for n < 179: one digit a byte.
    let tens = ((x * 103) >> 10) & 0x000F_000F_000F_000F;
    tens | ((x - tens * 10) << 8)
}

/// 10^0 to 10^8.
const POWERS: [u64; 9] = [
    1,
    10,
    100,
    1_000,
    10_000,
    100_000,
    1_000_000,
    10_000_000,
    100_000_000,
];

/// The amount a column wrote last, with its text: a schedule's payment and extra
/// repeat row after row, and are copied rather than written again.
pub struct Repeated {
    key: Option<[u8; 16]>,
    text: [u8; 48],
    len: usize,
}

impl Repeated {
    pub fn new() -> Self {
        Self {
            key: None,
            text: [0; 48],
            len: 0,
        }
    }
}

impl Default for Repeated {
    fn default() -> Self {
        Self::new()
    }
}

impl Line {
    /// [`Line::amount`], copying the text of the column's previous amount when
    /// this one is the same decimal (same digits and scale).
    pub fn amount_again(&mut self, currency: Currency, amount: Decimal, last: &mut Repeated) {
        let key = amount.serialize();
        if last.key == Some(key) {
            self.put(&last.text[..last.len]);
            return;
        }
        let start = self.at;
        self.amount(currency, amount);
        let len = self.at - start;
        if len <= last.text.len() {
            last.text[..len].copy_from_slice(&self.bytes[start..self.at]);
            last.len = len;
            last.key = Some(key);
        } else {
            last.key = None;
        }
    }
}

impl Default for Line {
    fn default() -> Self {
        Self::new()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::answer::text::{decimal_string, IsoDate};

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

    #[test]
    fn decimal_text_is_the_decimal_libraries_own() {
        // The reference: rust_decimal's Display.
        let mut values = vec![
            Decimal::ZERO,
            Decimal::new(0, 5),
            Decimal::new(-0, 3),
            -Decimal::new(0, 3),
            Decimal::MAX,
            Decimal::MIN,
            Decimal::new(1, 28),
            Decimal::new(-15, 1),
            Decimal::new(100, 0),
        ];
        values.extend(crate::engine::testing::random_decimals(
            0x853c_49e6_748f_ea9b,
            20_000,
            None,
        ));
        for d in values {
            assert_eq!(decimal_string(d), d.to_string(), "{d:?}");
            assert_eq!(decimal_string(d.normalize()), d.normalize().to_string());
        }
    }

    #[test]
    fn a_line_writes_numbers_dates_and_amounts_as_the_general_writers_do() {
        // The references: the standard library's integer Display, jiff's date
        // Display, and `Currency::text` (its own tests hold it to rust_decimal's
        // rounding and Display).
        let mut line = Line::new();
        let mut numbers: Vec<u64> = (0..=100_000).collect();
        for d in 1..=19 {
            let p = 10u64.pow(d);
            numbers.extend([p - 1, p, p + 1, p / 2 * 3 + 7]);
        }
        numbers.extend([12_345_678, 87_654_321, 99_999_999, 43_699, u64::MAX]);
        numbers
            .extend((0..100_000u64).map(|i| i.wrapping_mul(0x9e37_79b9_7f4a_7c15) % 100_000_000));
        for v in numbers {
            line.clear();
            line.number(v);
            assert_eq!(line.as_bytes(), v.to_string().as_bytes());
        }
        for (y, m, d) in [
            (2027, 1, 5),
            (1978, 12, 31),
            (9999, 2, 28),
            (0, 1, 1),
            (-3, 4, 5),
        ] {
            let date = Date::new(y, m, d).unwrap();
            line.clear();
            line.date(date);
            assert_eq!(line.as_bytes(), date.to_string().as_bytes());
        }
        let currencies: Vec<Currency> = Currency::codes().filter_map(Currency::parse).collect();
        // Every amount up to 1,000.00 (in cents), and each side of every power of ten.
        let mut mantissas: Vec<i64> = (0..100_000).collect();
        for d in 1..=18 {
            let p = 10i64.pow(d);
            mantissas.extend([p - 1, p, p + 1, -(p - 1), -p]);
        }
        for m in mantissas {
            for scale in [0, 1, 2, 3, 4] {
                let value = Decimal::new(m, scale);
                for c in &currencies {
                    line.clear();
                    line.amount(*c, value);
                    assert_eq!(
                        line.as_bytes(),
                        c.text(value).as_bytes(),
                        "{value} in {}",
                        c.code()
                    );
                }
            }
        }
        // Mantissas of every size from 0 to 96 bits, both signs; a third of them
        // with scales 0 to 28, the rest with the ledger's 2.
        let mut values =
            crate::engine::testing::random_decimals(0x9e37_79b9_7f4a_7c15, 6_667, None);
        values.extend(crate::engine::testing::random_decimals(
            0x6a09_e667_f3bc_c909,
            13_333,
            Some(2),
        ));
        for value in values {
            for c in &currencies {
                line.clear();
                line.put(b"[");
                line.amount(*c, value);
                line.put(b"]");
                let expected = format!("[{}]", c.text(value).as_str());
                assert_eq!(
                    line.as_bytes(),
                    expected.as_bytes(),
                    "{value} in {}",
                    c.code()
                );
            }
            // The same amount twice, then another: copied, then written.
            let other = value
                .checked_add(Decimal::new(1, 2))
                .unwrap_or(Decimal::ONE);
            let mut last = Repeated::new();
            line.clear();
            for v in [value, value, other, other, value] {
                line.amount_again(currencies[0], v, &mut last);
                line.put(b";");
            }
            let t = |v: Decimal| currencies[0].text(v).as_str().to_owned();
            let expected = format!(
                "{};{};{};{};{};",
                t(value),
                t(value),
                t(other),
                t(other),
                t(value)
            );
            assert_eq!(line.as_bytes(), expected.as_bytes());
        }
    }
}
