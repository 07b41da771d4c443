//! Numbers to text: [`Eng`] (SI prefix and unit), [`Full`] (shortest digits), [`Fixed`].

use core::fmt::{self, Write as _};

use super::{MAX_MAGNITUDE, MIN_MAGNITUDE};

/// A value with its unit for printing: `value` in the SI base unit, `unit` its symbol ("Ω", "V").
///
/// `Display` prints 3 significant digits (or the formatter's precision, 1 to 17: `{:.4}`) with an
/// SI prefix from p to G and trailing zeros trimmed: 4700 Ω prints `4.7 kΩ`, 0.00123 A `1.23 mA`,
/// 0 V `0 V`. An empty unit prints without the space (`4.7k`). Magnitudes of 1e15 and above or
/// below 1e-15 print in exponent form (`1.23e20 V`); non-finite values print `n/a`.
/// The output parses back with [`parse_signed`](super::parse_signed) when the unit is one it ignores.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Eng {
    /// The value in the SI base unit of `unit`.
    pub value: f64,
    /// The unit symbol printed after the prefix, for example "Ω", "F", "V", "A"; may be empty.
    pub unit: &'static str,
}

impl Eng {
    /// A printable value: `value` in the SI base unit of `unit`.
    pub const fn new(value: f64, unit: &'static str) -> Self {
        Eng { value, unit }
    }
}

/// Decimal digits of a positive finite value: ASCII digits without leading zeros, and the power
/// of ten of the first digit (`v ≈ d.ddd × 10^exp`). No digits stands for zero.
struct Digits {
    digits: heapless::Vec<u8, 32>,
    exp: i32,
}

impl Digits {
    /// The shortest digits that read back as exactly `v` (> 0, finite): the Ryū algorithm
    /// (`ryu` crate), whose text is taken apart here so the layout stays ours.
    fn shortest(v: f64) -> Option<Self> {
        let mut buf = ryu::Buffer::new();
        let text = buf.format_finite(v);
        let (mantissa, exp) = match text.split_once('e') {
            Some((m, e)) => (m, e.parse::<i32>().ok()?),
            None => (text, 0),
        };
        let (int, frac) = mantissa.split_once('.').unwrap_or((mantissa, ""));
        let mut exp = exp + i32::try_from(int.len()).ok()? - 1;
        let mut digits = heapless::Vec::new();
        for c in int.bytes().chain(frac.bytes()) {
            if digits.is_empty() && c == b'0' {
                exp -= 1;
            } else {
                digits.push(c).ok()?;
            }
        }
        while digits.last() == Some(&b'0') {
            digits.pop();
        }
        Some(Digits { digits, exp })
    }

    /// Round half-up to `keep` digits (none left for `keep` <= 0 unless the rounding carries).
    /// Rounding the shortest digits, not the binary value: 0.1245 to 3 digits gives 0.125.
    fn round_to(&mut self, keep: i32) {
        let Ok(n) = usize::try_from(keep.max(0)) else {
            return;
        };
        if self.digits.len() <= n {
            return;
        }
        let first_dropped = if keep < 0 {
            b'0'
        } else {
            self.digits.get(n).copied().unwrap_or(b'0')
        };
        self.digits.truncate(n);
        if first_dropped < b'5' {
            while self.digits.last() == Some(&b'0') {
                self.digits.pop();
            }
            return;
        }
        // Carry from the last kept digit; trailing nines become zeros and are dropped.
        loop {
            match self.digits.pop() {
                Some(b'9') => continue,
                Some(d) => {
                    let _ = self.digits.push(d + 1);
                    return;
                }
                None => {
                    let _ = self.digits.push(b'1');
                    self.exp += 1;
                    return;
                }
            }
        }
    }

    /// The digits as text.
    fn as_str(&self) -> &str {
        core::str::from_utf8(&self.digits).unwrap_or("")
    }
}

/// Decimal digits and exponent of `v` (> 0, finite) rounded to `sig` significant digits:
/// `(digits, exponent)` with `v ≈ d.ddd × 10^exponent`, exactly `sig` digits.
pub(super) fn sci_digits(v: f64, sig: usize) -> Option<(heapless::String<24>, i32)> {
    let mut d = Digits::shortest(v)?;
    d.round_to(i32::try_from(sig).ok()?);
    let mut digits: heapless::String<24> = heapless::String::new();
    digits.push_str(d.as_str()).ok()?;
    while digits.len() < sig {
        digits.push('0').ok()?;
    }
    Some((digits, d.exp))
}

/// A number printed in full: the shortest digits that read back as exactly this `f64`, plain
/// decimal for magnitudes from 1e-3 to below 1e6 (`0.0047`, `12`, `123456.5`), exponent form
/// elsewhere (`4.7e-9`, `2e6`); `inf`, `-inf` or `NaN` when not finite.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Full(pub f64);

impl fmt::Display for Full {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let v = self.0;
        if v.is_nan() {
            return f.write_str("NaN");
        }
        if v < 0.0 {
            f.write_char('-')?;
        }
        let a = libm::fabs(v);
        if a.is_infinite() {
            return f.write_str("inf");
        }
        if a == 0.0 {
            return f.write_char('0');
        }
        let d = Digits::shortest(a).ok_or(fmt::Error)?;
        if (1e-3..1e6).contains(&a) {
            write_fixed(f, d.as_str(), d.exp + 1)
        } else {
            let (first, rest) = d.as_str().split_at_checked(1).unwrap_or((d.as_str(), ""));
            f.write_str(first)?;
            if !rest.is_empty() {
                f.write_char('.')?;
                f.write_str(rest)?;
            }
            write!(f, "e{}", d.exp)
        }
    }
}

/// A number with a fixed count of decimals (at most [`FIXED_MAX_DECIMALS`]; an `f64` has no more
/// to give), rounded half-up from its shortest digits (`Fixed(2.5, 3)` prints `2.500`,
/// `Fixed(14.96, 0)` prints `15`); `inf`, `-inf` or `NaN` when not finite. Honours the
/// formatter's width and alignment.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Fixed(pub f64, pub u8);

/// The most decimals [`Fixed`] prints (more are asked for, these are given).
pub const FIXED_MAX_DECIMALS: u8 = 17;

impl fmt::Display for Fixed {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        // A sign, up to 21 digits before the point and the decimals: the text always fits.
        let mut buf: heapless::String<{ 24 + FIXED_MAX_DECIMALS as usize }> =
            heapless::String::new();
        self.write_to(&mut buf)?;
        f.pad(&buf)
    }
}

impl Fixed {
    fn write_to<W: fmt::Write>(&self, out: &mut W) -> fmt::Result {
        let Fixed(v, decimals) = *self;
        let decimals = decimals.min(FIXED_MAX_DECIMALS);
        if v.is_nan() {
            return out.write_str("NaN");
        }
        let a = libm::fabs(v);
        if a.is_finite() && a >= 1e21 {
            // Beyond 21 digits before the point no decimal is meaningful: the full form.
            return write!(out, "{}", Full(v));
        }
        let mut d = if a == 0.0 || a.is_infinite() {
            Digits {
                digits: heapless::Vec::new(),
                exp: 0,
            }
        } else {
            Digits::shortest(a).ok_or(fmt::Error)?
        };
        d.round_to(d.exp.saturating_add(1).saturating_add(i32::from(decimals)));
        if v < 0.0 && (!d.digits.is_empty() || a.is_infinite()) {
            out.write_char('-')?;
        }
        if a.is_infinite() {
            return out.write_str("inf");
        }
        // Digit at power of ten p, zero outside the digits.
        let digit_at = |p: i32| -> char {
            let i = d.exp - p;
            usize::try_from(i)
                .ok()
                .and_then(|i| d.digits.get(i))
                .map_or('0', |&c| char::from(c))
        };
        let top = if d.digits.is_empty() { 0 } else { d.exp.max(0) };
        for p in (0..=top).rev() {
            out.write_char(digit_at(p))?;
        }
        if decimals > 0 {
            out.write_char('.')?;
            for p in 1..=i32::from(decimals) {
                out.write_char(digit_at(-p))?;
            }
        }
        Ok(())
    }
}

/// Write the digit string with the decimal point after `int_len` digits (`int_len` may be <= 0
/// or beyond the digits, giving leading or trailing zeros); trailing fractional zeros trimmed.
fn write_fixed<W: fmt::Write>(out: &mut W, digits: &str, int_len: i32) -> fmt::Result {
    let n = i32::try_from(digits.len()).unwrap_or(i32::MAX);
    if int_len <= 0 {
        let trimmed = digits.trim_end_matches('0');
        if trimmed.is_empty() {
            return out.write_char('0');
        }
        out.write_str("0.")?;
        for _ in 0..(-int_len) {
            out.write_char('0')?;
        }
        return out.write_str(trimmed);
    }
    if int_len >= n {
        out.write_str(digits)?;
        for _ in 0..(int_len - n) {
            out.write_char('0')?;
        }
        return Ok(());
    }
    let split = usize::try_from(int_len).unwrap_or(0);
    let (int, frac) = digits.split_at_checked(split).unwrap_or((digits, ""));
    out.write_str(int)?;
    let frac = frac.trim_end_matches('0');
    if !frac.is_empty() {
        out.write_char('.')?;
        out.write_str(frac)?;
    }
    Ok(())
}

/// SI prefix symbol for a power of ten that is a multiple of 3 in -12..=9.
fn prefix_symbol(exp: i32) -> &'static str {
    match exp {
        -12 => "p",
        -9 => "n",
        -6 => "\u{00B5}",
        -3 => "m",
        3 => "k",
        6 => "M",
        9 => "G",
        _ => "",
    }
}

impl Eng {
    /// Write the number without its prefix into `out` and return the prefix symbol to print
    /// before the unit ("" for no prefix, for exponent form and for `n/a`).
    fn write_number<W: fmt::Write>(
        &self,
        out: &mut W,
        sig: usize,
    ) -> Result<&'static str, fmt::Error> {
        let v = self.value;
        if !v.is_finite() {
            out.write_str("n/a")?;
            return Ok("");
        }
        if v == 0.0 {
            out.write_char('0')?;
            return Ok("");
        }
        if v < 0.0 {
            out.write_char('-')?;
        }
        let a = libm::fabs(v);
        let (digits, e) = sci_digits(a, sig).ok_or(fmt::Error)?;
        if !(MIN_MAGNITUDE..MAX_MAGNITUDE).contains(&a) {
            let (first, rest) = digits.split_at_checked(1).unwrap_or((&digits, ""));
            out.write_str(first)?;
            let rest = rest.trim_end_matches('0');
            if !rest.is_empty() {
                out.write_char('.')?;
                out.write_str(rest)?;
            }
            write!(out, "e{e}")?;
            return Ok("");
        }
        let group = (e.div_euclid(3) * 3).clamp(-12, 9);
        write_fixed(out, &digits, e - group + 1)?;
        Ok(prefix_symbol(group))
    }

    /// Write the whole text: number, then " prefix unit" or, with an empty unit, "prefix".
    fn write_all<W: fmt::Write>(&self, out: &mut W, sig: usize) -> fmt::Result {
        let prefix = self.write_number(out, sig)?;
        if self.unit.is_empty() || !self.value.is_finite() {
            out.write_str(prefix)
        } else {
            out.write_char(' ')?;
            out.write_str(prefix)?;
            out.write_str(self.unit)
        }
    }
}

impl fmt::Display for Eng {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let sig = f.precision().unwrap_or(3).clamp(1, 17);
        // Units are short symbols, so the text always fits (a failure is reported, not cut).
        let mut buf: heapless::String<96> = heapless::String::new();
        self.write_all(&mut buf, sig)?;
        {
            // Pad by hand: `Formatter::pad` would treat the precision as a maximum width.
            let len = buf.chars().count();
            let pad = f.width().unwrap_or(0).saturating_sub(len);
            let (before, after) = match f.align() {
                Some(fmt::Alignment::Left) => (0, pad),
                Some(fmt::Alignment::Center) => (pad / 2, pad - pad / 2),
                Some(fmt::Alignment::Right) | None => (pad, 0),
            };
            let fill = f.fill();
            for _ in 0..before {
                f.write_char(fill)?;
            }
            f.write_str(&buf)?;
            for _ in 0..after {
                f.write_char(fill)?;
            }
            Ok(())
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    extern crate std;
    use std::format;

    #[test]
    fn print_basic() {
        assert_eq!(format!("{}", Eng::new(4700.0, "Ω")), "4.7 kΩ");
        assert_eq!(format!("{}", Eng::new(0.00123, "A")), "1.23 mA");
        assert_eq!(format!("{}", Eng::new(999.6, "V")), "1 kV");
        assert_eq!(format!("{}", Eng::new(4700.0, "")), "4.7k");
    }

    /// Random doubles over the whole finite range and near the usual magnitudes.
    fn sample_doubles() -> impl Iterator<Item = f64> {
        let mut next = crate::units::tests::xorshift(0x2545_F491_4F6C_DD1D);
        (0..200_000).map(move |i| {
            let bits = next();
            if i % 2 == 0 {
                f64::from_bits(bits % 0x7FF0_0000_0000_0000)
            } else {
                // Short decimals such as 4.7, 0.125, 2200: the values people type.
                let digits = bits % 100_000;
                let exp = i32::try_from(next() % 16).unwrap() - 8;
                digits as f64 * 10f64.powi(exp)
            }
        })
    }

    #[test]
    fn full_matches_the_standard_shortest_form() {
        // Reference: Rust core's `{}` and `{:e}` print the shortest digits that read back
        // exactly (Steele-White/Grisu with Dragon fallback); ours come from the Ryū algorithm.
        for v in sample_doubles().chain([0.001, 999_999.9, 1e6, 5e-324, f64::MAX, 0.1, 100.0]) {
            for v in [v, -v] {
                let a = v.abs();
                let want = if a == 0.0 {
                    "0".into()
                } else if (1e-3..1e6).contains(&a) {
                    format!("{v}")
                } else {
                    format!("{v:e}")
                };
                let got = format!("{}", Full(v));
                assert_eq!(got.parse::<f64>().unwrap(), v, "{got}");
                // Where two shortest forms are equally near, Ryū takes the even digit and core
                // may take the other: same length, both read back exactly.
                if got != want {
                    assert_eq!(got.len(), want.len(), "{v:e}: {got} against {want}");
                }
            }
        }
        assert_eq!(format!("{}", Full(f64::NAN)), "NaN");
        assert_eq!(format!("{}", Full(f64::NEG_INFINITY)), "-inf");
    }

    #[test]
    fn fixed_matches_the_standard_fixed_form_except_at_decimal_ties() {
        // Reference: Rust core's `{:.N}` rounds the exact binary value (half to even). Ours rounds
        // the shortest digits half-up, so the two differ only where those digits end in a 5 just
        // past the last decimal kept (0.125 to 2 decimals: core 0.12, ours 0.13).
        for v in sample_doubles().filter(|v| v.abs() < 1e15) {
            for n in [0u8, 1, 2, 3, 6] {
                let got = format!("{}", Fixed(v, n));
                let want = format!("{v:.prec$}", prec = usize::from(n));
                let plain = format!("{v}");
                let frac = plain.split_once('.').map_or("", |(_, f)| f);
                if frac.len() <= usize::from(n) {
                    // Short enough: the shortest digits padded with zeros (core goes on with
                    // the digits of the exact binary value instead).
                    // Read back exactly, with exactly n decimals.
                    let decimals = got.split_once('.').map_or(0, |(_, f)| f.len());
                    assert_eq!(decimals, usize::from(n), "{v:e} to {n}: {got}");
                    assert_eq!(got.parse::<f64>().unwrap(), v, "{v:e} to {n}: {got}");
                } else if got != want {
                    assert!(
                        frac.len() == usize::from(n) + 1 && frac.ends_with('5'),
                        "{v:e} to {n}: {got} against {want}"
                    );
                }
            }
        }
        assert_eq!(format!("{}", Fixed(2.5, 3)), "2.500");
        assert_eq!(format!("{}", Fixed(14.96, 0)), "15");
        assert_eq!(format!("{}", Fixed(9.9996, 3)), "10.000");
        assert_eq!(format!("{}", Fixed(-0.0004, 3)), "0.000");
        assert_eq!(format!("{}", Fixed(-0.0006, 3)), "-0.001");
        assert_eq!(format!("{:>8}", Fixed(1.5, 2)), "    1.50");
        assert_eq!(format!("{}", Fixed(0.5, 40)), format!("0.{:0<17}", "5"));
    }
}
