//! Currencies, their minor units, and rounding to them.

use std::fmt;

use rust_decimal::{Decimal, RoundingStrategy};

/// A currency Residue knows, with its ISO 4217 minor-unit exponent.
///
/// The exponents are those of the ISO 4217 list (from memory of the published
/// table): two decimals for most currencies, none for JPY, KRW, ISK and CLP,
/// three for the dinars of Kuwait, Bahrain, Jordan and Tunisia and the rial of Oman.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Currency {
    code: &'static str,
    minor_units: u32,
}

const CURRENCIES: &[Currency] = &[
    Currency {
        code: "USD",
        minor_units: 2,
    },
    Currency {
        code: "EUR",
        minor_units: 2,
    },
    Currency {
        code: "GBP",
        minor_units: 2,
    },
    Currency {
        code: "CAD",
        minor_units: 2,
    },
    Currency {
        code: "AUD",
        minor_units: 2,
    },
    Currency {
        code: "NZD",
        minor_units: 2,
    },
    Currency {
        code: "CHF",
        minor_units: 2,
    },
    Currency {
        code: "SEK",
        minor_units: 2,
    },
    Currency {
        code: "NOK",
        minor_units: 2,
    },
    Currency {
        code: "DKK",
        minor_units: 2,
    },
    Currency {
        code: "MXN",
        minor_units: 2,
    },
    Currency {
        code: "INR",
        minor_units: 2,
    },
    Currency {
        code: "ZAR",
        minor_units: 2,
    },
    Currency {
        code: "JPY",
        minor_units: 0,
    },
    Currency {
        code: "KRW",
        minor_units: 0,
    },
    Currency {
        code: "ISK",
        minor_units: 0,
    },
    Currency {
        code: "CLP",
        minor_units: 0,
    },
    Currency {
        code: "KWD",
        minor_units: 3,
    },
    Currency {
        code: "BHD",
        minor_units: 3,
    },
    Currency {
        code: "JOD",
        minor_units: 3,
    },
    Currency {
        code: "OMR",
        minor_units: 3,
    },
    Currency {
        code: "TND",
        minor_units: 3,
    },
];

impl Currency {
    /// The US dollar.
    pub const USD: Currency = CURRENCIES[0];

    /// The currency with this ISO 4217 code (upper case).
    ///
    /// # Errors
    /// `None` for a code Residue does not know.
    pub fn parse(code: &str) -> Option<Currency> {
        CURRENCIES.iter().copied().find(|c| c.code == code)
    }

    /// Every known currency code.
    pub fn codes() -> impl Iterator<Item = &'static str> {
        CURRENCIES.iter().map(|c| c.code)
    }

    /// The ISO 4217 code.
    pub fn code(&self) -> &'static str {
        self.code
    }

    /// Digits after the decimal point (the ISO 4217 exponent).
    pub fn minor_units(&self) -> u32 {
        self.minor_units
    }

    /// One minor unit (0.01 for USD, 1 for JPY, 0.001 for KWD).
    pub fn minor_unit(&self) -> Decimal {
        Decimal::new(1, self.minor_units)
    }

    /// Rounds to the minor unit with an explicit rule.
    pub fn round(&self, amount: Decimal, rule: RoundingStrategy) -> Decimal {
        let mut r = amount.round_dp_with_strategy(self.minor_units, rule);
        r.rescale(self.minor_units);
        r
    }

    /// True when `amount` has no more decimals than the currency allows.
    pub fn fits(&self, amount: Decimal) -> bool {
        amount.normalize().scale() <= self.minor_units
    }

    /// The amount as text with exactly the currency's decimals ("1110.21", "1234", "0.125").
    pub fn format(&self, amount: Decimal) -> String {
        self.text(amount).as_str().to_owned()
    }

    /// As [`Currency::format`], written on the stack: rounded half away from zero
    /// to the minor unit, no sign on zero.
    pub fn text(&self, amount: Decimal) -> AmountText {
        let rounded = if amount.scale() == self.minor_units {
            amount
        } else {
            self.round(amount, RoundingStrategy::MidpointAwayFromZero)
        };
        AmountText::new(rounded, self.minor_units)
    }
}

/// A decimal amount as text with a fixed number of decimals, held on the stack.
#[derive(Clone, Copy)]
pub struct AmountText {
    /// The text is `bytes[start..]`, written from the end.
    bytes: [u8; 40],
    start: u8,
}

impl AmountText {
    /// `value` (whose scale is at most 28) with exactly `decimals` decimals; extra
    /// decimals of `value` are cut, missing ones written as zeros.
    fn new(value: Decimal, decimals: u32) -> Self {
        let m = value.mantissa().unsigned_abs();
        match u64::try_from(m) {
            // The common case: as many decimals as wanted, a mantissa of 64 bits.
            Ok(v) if value.scale() == decimals => {
                Self::exact(v, decimals, value.is_sign_negative() && v != 0)
            }
            _ => Self::general(value, decimals),
        }
    }

    /// Writes `b` before the text written so far.
    fn push(&mut self, b: u8) {
        self.start -= 1;
        self.bytes[self.start as usize] = b;
    }

    /// `v` × 10^−decimals, the integer part two digits at a time. The position
    /// is a local (a register), not the struct's field, while digits are written.
    fn exact(mut v: u64, decimals: u32, negative: bool) -> Self {
        const PAIRS: &[u8; 200] = b"00010203040506070809101112131415161718192021222324252627282930313233343536373839404142434445464748495051525354555657585960616263646566676869707172737475767778798081828384858687888990919293949596979899";
        let mut bytes = [b'0'; 40];
        let mut at = bytes.len();
        // `decimals` is the value's scale (at most 28): with at most 20 integer
        // digits, the point and the sign, 40 bytes hold it.
        for _ in 0..decimals.min(28) {
            at -= 1;
            bytes[at] = b'0' + (v % 10) as u8;
            v /= 10;
        }
        if decimals > 0 {
            at -= 1;
            bytes[at] = b'.';
        }
        // The integer part, at least one digit.
        while v >= 100 {
            let pair = 2 * (v % 100) as usize;
            v /= 100;
            bytes[at - 1] = PAIRS[pair + 1];
            bytes[at - 2] = PAIRS[pair];
            at -= 2;
        }
        if v >= 10 {
            bytes[at - 1] = PAIRS[2 * v as usize + 1];
            bytes[at - 2] = PAIRS[2 * v as usize];
            at -= 2;
        } else {
            at -= 1;
            bytes[at] = b'0' + v as u8;
        }
        if negative {
            at -= 1;
            bytes[at] = b'-';
        }
        AmountText {
            bytes,
            start: at as u8,
        }
    }

    /// [`Self::new`] for any value: digits taken one at a time off the mantissa.
    fn general(value: Decimal, decimals: u32) -> Self {
        let mut out = AmountText {
            bytes: [b'0'; 40],
            start: 40,
        };
        let mut push = |b: u8| out.push(b);
        // One decimal digit off the end; u64 division by ten is a multiplication,
        // u128 division a library call, so the narrow path is taken when it fits.
        let take = |m: &mut u128| -> u8 {
            match u64::try_from(*m) {
                Ok(v) => {
                    *m = u128::from(v / 10);
                    b'0' + (v % 10) as u8
                }
                Err(_) => {
                    let d = (*m % 10) as u8;
                    *m /= 10;
                    b'0' + d
                }
            }
        };
        let scale = value.scale();
        let mut m = value.mantissa().unsigned_abs();
        for _ in decimals..scale {
            take(&mut m);
        }
        let negative = value.is_sign_negative() && m != 0;
        let shown = scale.min(decimals);
        for _ in shown..decimals {
            push(b'0');
        }
        for _ in 0..shown {
            push(take(&mut m));
        }
        if decimals > 0 {
            push(b'.');
        }
        loop {
            push(take(&mut m));
            if m == 0 {
                break;
            }
        }
        if negative {
            push(b'-');
        }
        out
    }

    /// The text's bytes (ASCII).
    pub fn as_bytes(&self) -> &[u8] {
        &self.bytes[self.start as usize..]
    }

    /// The text.
    pub fn as_str(&self) -> &str {
        // Only ASCII digits, '-' and '.' are ever written.
        std::str::from_utf8(&self.bytes[self.start as usize..]).unwrap_or("")
    }
}

impl fmt::Display for AmountText {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

impl fmt::Debug for AmountText {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

impl fmt::Display for Currency {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.code)
    }
}

/// How the posted payment is rounded to the minor unit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum PaymentRounding {
    /// To the nearest minor unit, halves away from zero.
    #[default]
    Nearest,
    /// Up to the next minor unit, so the regular payments never fall short.
    Up,
}

impl PaymentRounding {
    /// The rounding strategy of this rule.
    pub fn strategy(self) -> RoundingStrategy {
        match self {
            PaymentRounding::Nearest => RoundingStrategy::MidpointAwayFromZero,
            PaymentRounding::Up => RoundingStrategy::AwayFromZero,
        }
    }
}

/// How each period's interest is rounded to the minor unit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum InterestRounding {
    /// Halves away from zero (common practice, no source).
    #[default]
    HalfUp,
    /// Halves to the even minor unit.
    HalfEven,
}

impl InterestRounding {
    /// The rounding strategy of this rule.
    pub fn strategy(self) -> RoundingStrategy {
        match self {
            InterestRounding::HalfUp => RoundingStrategy::MidpointAwayFromZero,
            InterestRounding::HalfEven => RoundingStrategy::MidpointNearestEven,
        }
    }
}

/// A dollar amount as a disclosure form shows it (§1026.37(o)(4)): to the
/// nearest whole dollar (halves up: common practice, no source).
pub fn form_dollars(amount: Decimal) -> Decimal {
    let mut r = amount.round_dp_with_strategy(0, RoundingStrategy::MidpointAwayFromZero);
    r.rescale(0);
    r
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn minor_units_follow_iso_4217() {
        // ISO 4217 exponents (from memory of the published list).
        assert_eq!(Currency::parse("USD").unwrap().minor_units(), 2);
        assert_eq!(Currency::parse("JPY").unwrap().minor_units(), 0);
        assert_eq!(Currency::parse("KWD").unwrap().minor_units(), 3);
        assert!(Currency::parse("XYZ").is_none());
        assert!(Currency::parse("usd").is_none());
    }

    #[test]
    fn stack_text_agrees_with_the_decimal_display() {
        // The decimal crate's own Display is the reference for every shape of amount.
        let samples = [
            "0",
            "0.00",
            "-0.00",
            "0.004",
            "-0.005",
            "0.005",
            "1110.205",
            "-1110.215",
            "79228162514264337593543950.335",
            "18446744073709551615.99",
            "18446744073709551616.01",
            "0.0000000000000000000000000001",
            "123456789.123456789",
        ];
        for c in ["USD", "JPY", "KWD"] {
            let c = Currency::parse(c).unwrap();
            for v in samples {
                let v = d(v);
                let mut want = c
                    .round(v, RoundingStrategy::MidpointAwayFromZero)
                    .to_string();
                if want.starts_with('-') && want[1..].chars().all(|ch| ch == '0' || ch == '.') {
                    want.remove(0);
                }
                assert_eq!(c.format(v), want, "{v} in {}", c.code());
            }
        }
        // Where the decimal cannot hold two more digits, the text still shows them.
        assert_eq!(
            Currency::USD.format(d("-7922816251426433759354395033")),
            "-7922816251426433759354395033.00"
        );
    }

    #[test]
    fn the_two_digit_writer_agrees_with_the_digit_by_digit_one() {
        // Every mantissa length up to 20 digits, both signs, zero and minus zero,
        // 0 to 4 decimals, against the general path (and against Decimal's own
        // Display for the value).
        let mut seed = 0x9E37_79B9_7F4A_7C15u64;
        let mut values: Vec<u64> =
            vec![0, 1, 9, 10, 99, 100, 101, 999, 1000, u64::MAX, u64::MAX - 1];
        for digits in 1..=20u32 {
            for _ in 0..40 {
                seed ^= seed << 13;
                seed ^= seed >> 7;
                seed ^= seed << 17;
                values.push(seed % 10u64.saturating_pow(digits).max(1));
            }
        }
        for v in values {
            for decimals in 0..=4u32 {
                for negative in [false, true] {
                    let d = Decimal::from_i128_with_scale(
                        if negative {
                            -i128::from(v)
                        } else {
                            i128::from(v)
                        },
                        decimals,
                    );
                    let fast = AmountText::new(d, decimals);
                    let general = AmountText::general(d, decimals);
                    assert_eq!(fast.as_str(), general.as_str(), "{v} {decimals} {negative}");
                    assert_eq!(fast.as_bytes(), fast.as_str().as_bytes());
                    let shown = if d.is_zero() {
                        Decimal::ZERO.to_string()
                    } else {
                        d.to_string()
                    };
                    assert_eq!(
                        fast.as_str().parse::<Decimal>().unwrap(),
                        shown.parse::<Decimal>().unwrap()
                    );
                }
            }
        }
    }

    #[test]
    fn formatting_keeps_exactly_the_minor_units() {
        let usd = Currency::USD;
        assert_eq!(usd.format(d("1110.2")), "1110.20");
        assert_eq!(usd.format(d("5")), "5.00");
        assert_eq!(Currency::parse("JPY").unwrap().format(d("1234")), "1234");
        assert_eq!(Currency::parse("KWD").unwrap().format(d("0.1")), "0.100");
    }

    #[test]
    fn rounding_rules_differ_only_at_halves_and_for_up() {
        let usd = Currency::USD;
        assert_eq!(
            usd.round(d("0.125"), InterestRounding::HalfUp.strategy()),
            d("0.13")
        );
        assert_eq!(
            usd.round(d("0.125"), InterestRounding::HalfEven.strategy()),
            d("0.12")
        );
        assert_eq!(
            usd.round(d("599.5505"), PaymentRounding::Nearest.strategy()),
            d("599.55")
        );
        assert_eq!(
            usd.round(d("599.5505"), PaymentRounding::Up.strategy()),
            d("599.56")
        );
        assert!(usd.fits(d("1.50")) && usd.fits(d("1.500")) && !usd.fits(d("1.505")));
    }
}
