//! Parse and print engineering values.
//!
//! Input forms accepted by [`parse_signed`], [`parse_value`] (values in SI base units: Ω, F, V, A, Hz, W):
//!
//! - plain numbers `4700`, `0.5`, `.5`, `5.` and exponent notation `4.2e-05`, `1E3`;
//! - an SI prefix after the number, `f p n u µ μ m k K M G T` (`m` is milli, `M` is mega, `f`
//!   femto as in `10fA`; the farad is `F`), optionally
//!   followed by one unit that is ignored: `Ω`, `ohm`, `ohms`, `F`, `V`, `A`, `Hz`, `W`
//!   (`4.7kΩ`, `100nF`, `2mA`); one space is allowed between the number and the prefix or unit
//!   (`10 µF`, `12 V`);
//! - IEC 60062 value codes, where the letter stands for the decimal point and the multiplier:
//!   `4k7`, `2M2`, `470R`, `R47`, `4n7`, `2u2`, `1p5`, `0R1`, `1G0` (a unit may follow: `4n7F`).
//!
//! Magnitudes above 1e15 and non-zero magnitudes below 1e-15 are refused as [`ValueError::OutOfRange`].
//! Nothing here allocates or panics.
//!
//! Output: [`Eng`] prints a value with an SI prefix and 3 (or a chosen number of) significant digits;
//! [`resistor_code`] and [`capacitor_code`] print IEC 60062 value codes.
//!
//! The files: `parse` (text to value, the unit of a field), `decimal` (the correctly rounded
//! decimal-to-binary conversion the parser ends in), `print` ([`Eng`], [`Full`], [`Fixed`]) and
//! `codes` (IEC 60062 value codes).

mod codes;
mod decimal;
mod parse;
mod print;

pub use codes::{capacitor_code, resistor_code};
pub(crate) use decimal::EXACT_POW10;
pub use parse::{
    parse_percent, parse_signed, parse_signed_in, parse_value, parse_value_in, Unit, ValueError,
};
pub use print::{Eng, Fixed, Full, FIXED_MAX_DECIMALS};

/// Largest magnitude the parsers accept (in the value's SI unit).
pub const MAX_MAGNITUDE: f64 = 1e15;
/// Smallest non-zero magnitude the parsers accept (in the value's SI unit).
pub const MIN_MAGNITUDE: f64 = 1e-15;

/// Whether a magnitude (> 0) lies within [`MIN_MAGNITUDE`] ..= [`MAX_MAGNITUDE`], with a relative
/// slack of 1e-12 at both ends for values rounded on their way in or out.
fn in_range(a: f64) -> bool {
    (MIN_MAGNITUDE * (1.0 - 1e-12)..=MAX_MAGNITUDE * (1.0 + 1e-12)).contains(&a)
}

#[cfg(test)]
mod tests {
    extern crate std;

    /// A xorshift64 sequence from `seed` (the tests' own reproducible random numbers).
    pub(super) fn xorshift(mut state: u64) -> impl FnMut() -> u64 {
        move || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            state
        }
    }
}
