//! The correctly rounded conversion of a decimal digit string to the nearest `f64`.

/// Exact powers of ten that an `f64` holds: 1e0 to 1e22.
pub(crate) const EXACT_POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// Words of [`Big`]: 1536 bits, enough for 40 digits × 10^312 shifted by 2^55.
const BIG_WORDS: usize = 48;
// 10^40 < 2^133 and 10^312 < 2^1037: the largest numerator, shifted, takes 133 + 1037 + 55 bits.
const _: () = assert!(BIG_WORDS * 32 >= 133 + 1037 + 55);

/// A fixed-size unsigned integer (little-endian 32-bit words) for exact decimal conversion.
#[derive(Clone, Copy)]
struct Big([u32; BIG_WORDS]);

impl Big {
    fn from_u32(v: u32) -> Big {
        let mut b = Big([0; BIG_WORDS]);
        if let Some(w) = b.0.first_mut() {
            *w = v;
        }
        b
    }

    /// `self = self × m + a` (the top carry is dropped; callers stay below the capacity).
    fn mul_add(&mut self, m: u32, a: u32) {
        let mut carry = u64::from(a);
        for w in &mut self.0 {
            let t = u64::from(*w) * u64::from(m) + carry;
            *w = t as u32;
            carry = t >> 32;
        }
    }

    /// Number of significant bits.
    fn bits(&self) -> u32 {
        for (i, w) in self.0.iter().enumerate().rev() {
            if *w != 0 {
                return (i as u32) * 32 + (32 - w.leading_zeros());
            }
        }
        0
    }

    /// `self <<= n` (bits shifted past the capacity are dropped).
    fn shl(&mut self, n: u32) {
        let words = (n / 32) as usize;
        let bits = n % 32;
        let old = self.0;
        for (i, w) in self.0.iter_mut().enumerate() {
            let lo = i
                .checked_sub(words)
                .and_then(|j| old.get(j))
                .copied()
                .unwrap_or(0);
            let below = i
                .checked_sub(words + 1)
                .and_then(|j| old.get(j))
                .copied()
                .unwrap_or(0);
            *w = if bits == 0 {
                lo
            } else {
                (lo << bits) | (below >> (32 - bits))
            };
        }
    }

    /// `self >>= 1`.
    fn shr1(&mut self) {
        let mut carry = 0u32;
        for w in self.0.iter_mut().rev() {
            let next = *w << 31;
            *w = (*w >> 1) | carry;
            carry = next;
        }
    }

    /// `self >= other`.
    fn ge(&self, other: &Big) -> bool {
        for (a, b) in self.0.iter().zip(other.0.iter()).rev() {
            if a != b {
                return a > b;
            }
        }
        true
    }

    /// `self -= other` (requires `self >= other`).
    fn sub(&mut self, other: &Big) {
        let mut borrow = false;
        for (a, b) in self.0.iter_mut().zip(other.0.iter()) {
            let (d, b1) = a.overflowing_sub(*b);
            let (d, b2) = d.overflowing_sub(u32::from(borrow));
            *a = d;
            borrow = b1 || b2;
        }
    }

    fn is_zero(&self) -> bool {
        self.0.iter().all(|w| *w == 0)
    }
}

/// The `f64` nearest to `digits × 10^exp` (ties to even), where `digits` is 1 to 40 ASCII
/// digits without leading zeros. Our own rather than `str::parse::<f64>` only for the size of the
/// instrument's image: the standard conversion brings about 16 KB of code and tables into the
/// firmware; the tests check this one bit for bit against it. Values of 1e312 and above give infinity and values below 1e-40
/// give 0 (the caller refuses both as out of range).
pub(super) fn decimal_to_f64(digits: &[u8], exp: i64) -> f64 {
    let n = digits.len() as i64;
    if digits.is_empty() || n > 40 {
        return f64::NAN;
    }
    let magnitude = n - 1 + exp;
    if magnitude >= 312 {
        return f64::INFINITY;
    }
    if magnitude < -40 {
        return 0.0;
    }
    // Fast path: an exact integer of at most 2^53 and an exact power of ten give the
    // correctly rounded result in one IEEE operation.
    let small = if n <= 19 {
        digits
            .iter()
            .fold(0u64, |acc, d| acc * 10 + u64::from(d.wrapping_sub(b'0')))
    } else {
        u64::MAX
    };
    if small <= 1u64 << 53 && (-22..=22).contains(&exp) {
        let m = small;
        let p = EXACT_POW10
            .get(exp.unsigned_abs() as usize)
            .copied()
            .unwrap_or(1.0);
        let m = m as f64;
        return if exp >= 0 { m * p } else { m / p };
    }
    // Exact: value = num / den with big integers, then a 55-bit quotient by long division.
    let mut num = Big::from_u32(0);
    for d in digits {
        num.mul_add(10, u32::from(d.wrapping_sub(b'0')));
    }
    let mut den = Big::from_u32(1);
    for _ in 0..exp.unsigned_abs() {
        if exp > 0 {
            num.mul_add(10, 0);
        } else {
            den.mul_add(10, 0);
        }
    }
    // num / den lies in [2^(k-1), 2^(k+1)); scale it by 2^shift into [2^53, 2^55).
    let k = i64::from(num.bits()) - i64::from(den.bits());
    let shift = 54 - k;
    if shift >= 0 {
        num.shl(shift as u32);
    } else {
        den.shl(shift.unsigned_abs() as u32);
    }
    let mut t = den;
    t.shl(54);
    let mut q = 0u64;
    for i in (0..55).rev() {
        if num.ge(&t) {
            num.sub(&t);
            q |= 1u64 << i;
        }
        t.shr1();
    }
    // value = q × 2^-shift, remainder in `num`.
    let mut e2 = -shift;
    let mut sticky = !num.is_zero();
    while q >= 1u64 << 54 {
        sticky |= q & 1 == 1;
        q >>= 1;
        e2 += 1;
    }
    let guard = q & 1 == 1;
    q >>= 1;
    e2 += 1;
    if guard && (sticky || q & 1 == 1) {
        q += 1;
        if q == 1u64 << 53 {
            q >>= 1;
            e2 += 1;
        }
    }
    // value = q × 2^e2 with q in [2^52, 2^53).
    let biased = e2 + 52 + 1023;
    if biased >= 2047 {
        return f64::INFINITY;
    }
    if biased <= 0 {
        return 0.0;
    }
    f64::from_bits(((biased as u64) << 52) | (q & ((1u64 << 52) - 1)))
}

#[cfg(test)]
mod tests {
    use super::*;
    extern crate std;
    use std::format;

    /// `decimal_to_f64` of a digit string and exponent, against core's correctly rounded parser.
    fn check_decimal(digits: &str, exp: i64) {
        let want: f64 = format!("{digits}e{exp}").parse().unwrap();
        let got = decimal_to_f64(digits.as_bytes(), exp);
        let magnitude = i64::try_from(digits.len()).unwrap() - 1 + exp;
        if (-40..312).contains(&magnitude) {
            assert_eq!(got.to_bits(), want.to_bits(), "{digits}e{exp}");
        } else if magnitude >= 312 {
            assert_eq!(got, f64::INFINITY, "{digits}e{exp}");
        } else {
            assert_eq!(got, 0.0, "{digits}e{exp}");
        }
    }

    #[test]
    fn decimal_conversion_is_correctly_rounded() {
        // Reference: IEEE 754-2019 round-to-nearest-even, as core's `str::parse::<f64>` does.
        let mut next = crate::units::tests::xorshift(0x9E37_79B9_7F4A_7C15);
        for _ in 0..12_000 {
            // Random digit strings of 1 to 40 digits at exponents across the whole range.
            let len = 1 + usize::try_from(next() % 40).unwrap();
            let mut d = std::string::String::new();
            for i in 0..len {
                let c = u8::try_from(next() % 10).unwrap();
                let c = if i == 0 { c % 9 + 1 } else { c };
                d.push(char::from(b'0' + c));
            }
            let exp = i64::try_from(next() % 400).unwrap() - 80;
            check_decimal(&d, exp);
            // Printed doubles with 1 to 40 significant digits (near the rounding boundaries).
            let x = f64::from_bits(next() % 0x7FE0_0000_0000_0000);
            let p = usize::try_from(next() % 40).unwrap();
            let text = format!("{x:.p$e}");
            let (m, e) = text.split_once('e').unwrap();
            let m: std::string::String = m.chars().filter(char::is_ascii_digit).collect();
            let m = m.trim_end_matches('0');
            let m = if m.is_empty() { "1" } else { m };
            let shift = i64::try_from(m.len()).unwrap() - 1;
            check_decimal(m, e.parse::<i64>().unwrap() - shift);
            // Exact halfway cases between neighbouring doubles: odd 54-bit mantissa × 2^-j.
            let mant = u128::from((next() >> 10) | 1 | (1 << 53));
            let j = u32::try_from(next() % 32).unwrap();
            let exact = mant * 5u128.pow(j);
            let text = format!("{exact}");
            let t = text.trim_end_matches('0');
            let zeros = i64::try_from(text.len() - t.len()).unwrap();
            check_decimal(t, zeros - i64::from(j));
            let k = u32::try_from(next() % 70).unwrap();
            let text = format!("{}", mant << k);
            let t = text.trim_end_matches('0');
            let zeros = i64::try_from(text.len() - t.len()).unwrap();
            check_decimal(t, zeros);
        }
        for (d, e) in [
            ("1", 0),
            ("17976931348623157", 292),
            ("17976931348623159", 292),
            ("9007199254740993", 0),
            ("9007199254740995", 0),
            ("1", -15),
            ("1", 15),
            ("999999999999999", 1),
            ("2225073858507201", -323),
        ] {
            check_decimal(d, e);
        }
    }
}
