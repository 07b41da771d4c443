//! IEC 60062 value codes of resistors and capacitors (`4k7`, `R47`, `4n7`).

use super::in_range;
use super::print::sci_digits;

/// Which code letters a value code uses below 1 (in the value's unit).
#[derive(Clone, Copy)]
enum CodeStyle {
    /// Resistors: `R` for 0.001 ..< 1000 Ω (R47, R047), prefixes elsewhere.
    Resistor,
    /// Capacitors: prefixes p, n, u, m below 1 F, `R` from 1 F.
    Capacitor,
}

/// Code letter for a power of ten that is a multiple of 3.
fn code_letter(exp: i32) -> char {
    match exp {
        -12 => 'p',
        -9 => 'n',
        -6 => 'u',
        -3 => 'm',
        3 => 'k',
        6 => 'M',
        9 => 'G',
        _ => 'R',
    }
}

fn value_code(x: f64, style: CodeStyle) -> heapless::String<12> {
    let mut out: heapless::String<12> = heapless::String::new();
    if write_code(&mut out, x, style).is_err() {
        out.clear();
        let _ = out.push_str("n/a");
    }
    out
}

fn write_code(out: &mut heapless::String<12>, x: f64, style: CodeStyle) -> Result<(), ()> {
    let zero = match style {
        CodeStyle::Resistor => "0R0",
        CodeStyle::Capacitor => "0p0",
    };
    if !x.is_finite() {
        return Err(());
    }
    if x == 0.0 {
        return out.push_str(zero).map_err(|_| ());
    }
    if x < 0.0 {
        out.push('-').map_err(|_| ())?;
    }
    let a = libm::fabs(x);
    let (digits, e) = sci_digits(a, 3).ok_or(())?;
    if !in_range(a) {
        return Err(());
    }
    let digits = digits.as_str();
    let group = match style {
        CodeStyle::Resistor if (-3..=2).contains(&e) => 0,
        _ => (e.div_euclid(3) * 3).clamp(-12, 9),
    };
    let letter = code_letter(group);
    let int_len = e - group + 1;
    let n = i32::try_from(digits.len()).map_err(|_| ())?;
    if int_len <= 0 {
        // R47, R047, p001: empty integer part, zeros after the letter.
        out.push(letter).map_err(|_| ())?;
        for _ in 0..(-int_len) {
            out.push('0').map_err(|_| ())?;
        }
        out.push_str(digits.trim_end_matches('0')).map_err(|_| ())?;
        return Ok(());
    }
    let split = usize::try_from(int_len.min(n)).map_err(|_| ())?;
    let (int, frac) = digits.split_at_checked(split).ok_or(())?;
    out.push_str(int).map_err(|_| ())?;
    for _ in 0..(int_len - n).max(0) {
        out.push('0').map_err(|_| ())?;
    }
    out.push(letter).map_err(|_| ())?;
    let frac = frac.trim_end_matches('0');
    if frac.is_empty() {
        if int_len == 1 {
            out.push('0').map_err(|_| ())?;
        }
    } else {
        out.push_str(frac).map_err(|_| ())?;
    }
    Ok(())
}

/// IEC 60062 code of a resistance in Ω, rounded to 3 significant digits: 4700 → `4k7`,
/// 470 → `470R`, 0.47 → `R47`, 1 → `1R0`, 10000 → `10k`, 2.2e6 → `2M2`, 4750 → `4k75`.
/// Letters: R (×1, used from 1 mΩ to below 1 kΩ), k, M, G; u, n, p below 1 mΩ. Zero gives `0R0`,
/// negative values a leading `-`; non-finite values or magnitudes outside 1e-15 ..= 1e15 give `n/a`.
pub fn resistor_code(ohms: f64) -> heapless::String<12> {
    value_code(ohms, CodeStyle::Resistor)
}

/// IEC 60062 code of a capacitance in F, rounded to 3 significant digits: 4.7e-9 → `4n7`,
/// 1e-7 → `100n`, 2.2e-6 → `2u2`, 47e-6 → `47u`, 1e-12 → `1p0`. Letters p, n, u, m below 1 F,
/// R, k, M, G from 1 F. Zero gives `0p0`, negative values a leading `-`; non-finite values or
/// magnitudes outside 1e-15 ..= 1e15 give `n/a`.
pub fn capacitor_code(farads: f64) -> heapless::String<12> {
    value_code(farads, CodeStyle::Capacitor)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_basic() {
        assert_eq!(resistor_code(4700.0).as_str(), "4k7");
        assert_eq!(resistor_code(0.0047).as_str(), "R0047");
        assert_eq!(capacitor_code(4.7e-9).as_str(), "4n7");
    }
}
