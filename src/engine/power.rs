//! Whole powers p^k of a decimal, through a 128-bit binary mantissa.
//!
//! rust_decimal's `powi` multiplies 28-digit decimals, rounding back to 96 bits
//! after every squaring (a slow decimal rescale each time), and keeps about 26
//! significant digits for k ≤ 6,000. Here p is read once into m·2^e with a
//! 128-bit mantissa m (the decimal divided by 10^scale in exact long division,
//! truncated), squared and multiplied in 256-bit products truncated back to 128
//! bits, and the result written back as the nearest decimal with as many
//! digits as a decimal holds. Each step loses less than 2^−125 of the value,
//! and the relative error of p^k stays below (2·log2(k) + k + 2)·2^−125, about
//! 7·10^−35 for k = 6,000: the answer is the exact power rounded once to a
//! decimal's precision (28 or 29 significant digits), except within that
//! margin of a rounding boundary. The unit tests hold it to exact big-integer
//! powers.

use rust_decimal::Decimal;

const LOW: u128 = u64::MAX as u128;

/// m · 2^e, m with its top bit set.
#[derive(Debug, Clone, Copy)]
struct Wide {
    m: u128,
    e: i64,
}

/// 10^−s for s = 0 to 28, each ⌊2^(127+j)/10^s⌋·2^−(127+j) with j chosen so the
/// mantissa has its top bit set (exact long division, truncated once).
const TENTHS: [Wide; 29] = {
    let mut table = [Wide {
        m: 1 << 127,
        e: -127,
    }; 29];
    let mut s = 1;
    while s < 29 {
        table[s] = reciprocal_of_power_of_ten(s as u32);
        s += 1;
    }
    table
};

/// ⌊2^(128+j)/d⌋ with d = 10^s < 2^(j+1), normalized: long division of the
/// 256-bit 2^(128+j) by d in 32-bit steps (each partial remainder below 2^126).
const fn reciprocal_of_power_of_ten(s: u32) -> Wide {
    let d = 10u128.pow(s);
    let j = 127 - d.leading_zeros(); // d < 2^(j+1)
                                     // The numerator 2^(127+j) as eight 32-bit words, most significant first:
                                     // the quotient 2^(127+j)/d lies in (2^126, 2^127].
    let bit = 127 + j; // position of the single set bit, counted from 0
    let mut q: u128 = 0;
    let mut r: u128 = 0;
    let mut word = 0;
    while word < 8 {
        let low_bit = 32 * (7 - word); // the word holds bits low_bit .. low_bit + 31
        let value: u128 = if bit >= low_bit && bit < low_bit + 32 {
            1u128 << (bit - low_bit)
        } else {
            0
        };
        let current = (r << 32) | value;
        q = (q << 32) | (current / d);
        r = current % d;
        word += 1;
    }
    let top = q.leading_zeros();
    Wide {
        m: q << top,
        e: -(bit as i64) - top as i64,
    }
}

/// The 256-bit product a·b as (high, low) halves.
fn mul_256(a: u128, b: u128) -> (u128, u128) {
    let (a1, a0) = (a >> 64, a & LOW);
    let (b1, b0) = (b >> 64, b & LOW);
    let p00 = a0 * b0;
    let p01 = a0 * b1;
    let p10 = a1 * b0;
    let p11 = a1 * b1;
    let (mid, c1) = p01.overflowing_add(p10);
    let (mid, c2) = mid.overflowing_add(p00 >> 64);
    let carry = (u128::from(c1) + u128::from(c2)) << 64;
    ((p11 + (mid >> 64)) + carry, (mid << 64) | (p00 & LOW))
}

impl Wide {
    fn mul(self, other: Wide) -> Wide {
        let (hi, lo) = mul_256(self.m, other.m);
        // Both mantissas are at least 2^127, so the product is at least 2^254.
        if hi >> 127 == 1 {
            Wide {
                m: hi,
                e: self.e + other.e + 128,
            }
        } else {
            Wide {
                m: (hi << 1) | (lo >> 127),
                e: self.e + other.e + 127,
            }
        }
    }

    /// mantissa / 10^scale for a mantissa above zero (below 2^96) and scale ≤ 28:
    /// the mantissa times the table's 10^−scale.
    fn from_parts(mantissa: u128, scale: u32) -> Wide {
        let shift = mantissa.leading_zeros();
        let m = Wide {
            m: mantissa << shift,
            e: -(shift as i64),
        };
        if scale == 0 {
            m
        } else {
            m.mul(TENTHS[scale as usize])
        }
    }

    fn pow(self, mut k: u32) -> Wide {
        let mut base = self;
        let mut result: Option<Wide> = None;
        loop {
            if k & 1 == 1 {
                result = Some(match result {
                    None => base,
                    Some(r) => r.mul(base),
                });
            }
            k >>= 1;
            if k == 0 {
                break;
            }
            base = base.mul(base);
        }
        result.unwrap_or(Wide {
            m: 1 << 127,
            e: -127,
        })
    }

    /// The nearest decimal with the largest scale (at most 28) whose mantissa
    /// fits 96 bits; `None` when the value is 2^96 or more.
    fn to_decimal(self, negative: bool) -> Option<Decimal> {
        // 2^(e+127) ≤ value < 2^(e+128).
        let bits = self.e + 128;
        if bits > 96 {
            return None;
        }
        // value·10^s < 2^(bits + 3.33·s) ≤ 2^96 for this s.
        let estimate = ((96 - bits) as f64 / std::f64::consts::LOG2_10).floor();
        let mut scale = estimate.clamp(0.0, 28.0) as u32;
        let written = |scale: u32| -> Option<u128> {
            let (hi, lo) = mul_256(self.m, 10u128.pow(scale));
            // value·10^scale = (hi, lo)·2^e; e < 0 here (the value is below 2^96).
            // A shift past 255 bits leaves nothing: the value underflows to zero.
            let shift = u32::try_from(-self.e).unwrap_or(u32::MAX);
            let (q, half) = shift_right_256(hi, lo, shift);
            let q = q + u128::from(half);
            (q < 1 << 96).then_some(q)
        };
        // Rounding up may reach 2^96 exactly: one place fewer then.
        let mut best = loop {
            match written(scale) {
                Some(q) => break q,
                None if scale > 0 => scale -= 1,
                None => return None,
            }
        };
        while scale < 28 {
            match written(scale + 1) {
                Some(q) => {
                    best = q;
                    scale += 1;
                }
                None => break,
            }
        }
        Some(
            Decimal::from_parts(
                best as u32,
                (best >> 32) as u32,
                (best >> 64) as u32,
                negative,
                scale,
            )
            .normalize(),
        )
    }
}

/// ((hi, lo) >> shift, whether the first bit shifted out is 1), for a result
/// that fits 128 bits.
fn shift_right_256(hi: u128, lo: u128, shift: u32) -> (u128, bool) {
    let bit = |s: u32| -> bool {
        match s {
            0..=127 => (lo >> s) & 1 == 1,
            128..=255 => (hi >> (s - 128)) & 1 == 1,
            _ => false,
        }
    };
    let half = shift > 0 && bit(shift - 1);
    let q = match shift {
        0 => lo,
        1..=127 => (lo >> shift) | (hi << (128 - shift)),
        128..=255 => hi >> (shift - 128),
        _ => 0,
    };
    (q, half)
}

/// p^k as the nearest decimal of full precision; `None` when it overflows a decimal.
pub fn pow(p: Decimal, k: u32) -> Option<Decimal> {
    if k == 0 || p == Decimal::ONE {
        return Some(Decimal::ONE);
    }
    if p.is_zero() {
        return Some(Decimal::ZERO);
    }
    if k == 1 {
        return Some(p);
    }
    let negative = p.is_sign_negative() && k % 2 == 1;
    Wide::from_parts(p.mantissa().unsigned_abs(), p.scale())
        .pow(k)
        .to_decimal(negative)
}

#[cfg(test)]
mod tests {
    use super::*;
    use num_bigint::BigInt;
    use num_traits::Signed;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    /// |computed − p^k| ≤ one unit in the computed value's last place (10^−scale), exactly.
    fn within_last_place(p: Decimal, k: u32) {
        let got = pow(p, k).unwrap();
        let scale_p = p.scale();
        // p^k = mantissa^k / 10^(scale·k); got = g / 10^s.
        let exact_num = BigInt::from(p.mantissa()).pow(k);
        let exact_scale = scale_p * k;
        let s = got.scale();
        let common = exact_scale.max(s);
        let exact = exact_num * BigInt::from(10).pow(common - exact_scale);
        let computed = BigInt::from(got.mantissa()) * BigInt::from(10).pow(common - s);
        let unit = BigInt::from(10).pow(common - s);
        let diff = (exact - computed).abs();
        assert!(
            diff <= unit,
            "{p}^{k} = {got}: off by {diff} in units of 10^-{common}"
        );
    }

    #[test]
    fn powers_are_the_exact_power_rounded_once() {
        // Reference: exact big-integer powers (num-bigint, crates.io).
        for (p, k) in [
            ("1.005", 360),
            ("1.005", 6000),
            ("1.0055833333333333333333333333", 360),
            ("0.9950248756218905472636815920", 360),
            ("1.0004166666666666666666666667", 6000),
            ("1.8333333333333333333333333333", 100),
            ("0.5", 90),
            ("2", 95),
            ("7", 33),
            ("1.1", 2),
            ("0.1", 28),
            ("-1.03", 7),
            ("12345.6789", 6),
        ] {
            within_last_place(d(p), k);
        }
    }

    #[test]
    fn exact_decimal_powers_come_back_exact() {
        assert_eq!(pow(d("1.005"), 2).unwrap().to_string(), "1.010025");
        assert_eq!(pow(d("0.1"), 28).unwrap(), d("1e-28"));
        assert_eq!(pow(d("10"), 28).unwrap(), d("1e28"));
        assert_eq!(pow(d("-2"), 3).unwrap(), d("-8"));
        assert_eq!(pow(d("1.5"), 2).unwrap().to_string(), "2.25");
    }

    #[test]
    fn powers_beyond_a_decimal_overflow_and_tiny_ones_vanish() {
        assert!(pow(d("10"), 29).is_none());
        assert!(pow(d("1.5"), 6000).is_none());
        assert!(pow(d("0.5"), 6000).unwrap().is_zero());
        assert!(pow(d("0.9"), 6000).unwrap().is_zero());
        assert!(pow(d("1e-28"), u32::MAX).unwrap().is_zero());
        assert!(pow(d("79228162514264337593543950335"), 2).is_none());
        assert_eq!(pow(d("-0.5"), 2).unwrap(), d("0.25"));
    }

    #[test]
    fn powers_agree_with_rust_decimal_to_its_own_precision() {
        use rust_decimal::MathematicalOps;
        for (p, k) in [("1.005", 360), ("1.0005", 6000), ("0.99", 1000)] {
            let ours = pow(d(p), k).unwrap();
            let theirs = d(p).powi(i64::from(k));
            let gap = ((ours - theirs) / ours).abs();
            assert!(gap < d("1e-25"), "{p}^{k}: {ours} vs {theirs}");
        }
    }
}
