//! IEC 60063 preferred-number series (E3 to E192) and IEC 60062 resistor colour bands.
//!
//! A series member is a mantissa of the table times a power of ten (any decade). The look-ups
//! ([`Series::nearest`], [`Series::next_up`], [`Series::ceil`], ...) work across decade boundaries
//! for any positive finite value (tested from 1e-3 to 1e12) and return `None` where no member
//! exists (x <= 0, non-finite, or a result that overflows). Values are in the part's SI unit
//! (Ω or F). The E24 and E192 tables are transcribed from IEC 60063:2015, not generated (both
//! contain values that differ from the rounded geometric series); E12, E6 and E3, E96 and E48
//! are every other member of the series above them, as the standard makes them.

use core::fmt;

use crate::units::EXACT_POW10;

/// E24 mantissas ×100 (IEC 60063:2015, transcribed from the project reference file iec60063.txt).
const E24: [u16; 24] = [
    100, 110, 120, 130, 150, 160, 180, 200, 220, 240, 270, 300, 330, 360, 390, 430, 470, 510, 560,
    620, 680, 750, 820, 910,
];

/// E192 mantissas ×100 (IEC 60063:2015, transcribed from the project reference file iec60063.txt).
const E192: [u16; 192] = [
    100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114, 115, 117, 118, 120, 121, 123, 124,
    126, 127, 129, 130, 132, 133, 135, 137, 138, 140, 142, 143, 145, 147, 149, 150, 152, 154, 156,
    158, 160, 162, 164, 165, 167, 169, 172, 174, 176, 178, 180, 182, 184, 187, 189, 191, 193, 196,
    198, 200, 203, 205, 208, 210, 213, 215, 218, 221, 223, 226, 229, 232, 234, 237, 240, 243, 246,
    249, 252, 255, 258, 261, 264, 267, 271, 274, 277, 280, 284, 287, 291, 294, 298, 301, 305, 309,
    312, 316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361, 365, 370, 374, 379, 383, 388,
    392, 397, 402, 407, 412, 417, 422, 427, 432, 437, 442, 448, 453, 459, 464, 470, 475, 481, 487,
    493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556, 562, 569, 576, 583, 590, 597, 604, 612,
    619, 626, 634, 642, 649, 657, 665, 673, 681, 690, 698, 706, 715, 723, 732, 741, 750, 759, 768,
    777, 787, 796, 806, 816, 825, 835, 845, 856, 866, 876, 887, 898, 909, 920, 931, 942, 953, 965,
    976, 988,
];

/// Every other member of a series, from the first: the next series down (IEC 60063:2015: E12,
/// E6 and E3 are so made from E24, E96 and E48 from E192; the tests check every table against
/// the reference file).
#[expect(
    clippy::indexing_slicing,
    reason = "evaluated at compile time only: an index out of range fails the build"
)]
const fn every_other<const N: usize, const M: usize>(t: &[u16; N]) -> [u16; M] {
    assert!(2 * M == N);
    let mut out = [0; M];
    let mut i = 0;
    while i < M {
        out[i] = t[2 * i];
        i += 1;
    }
    out
}

/// E12 mantissas ×100: every other E24 member.
const E12: [u16; 12] = every_other(&E24);
/// E6 mantissas ×100: every other E12 member.
const E6: [u16; 6] = every_other(&E12);
/// E3 mantissas ×100: every other E6 member.
const E3: [u16; 3] = every_other(&E6);
/// E96 mantissas ×100: every other E192 member.
const E96: [u16; 96] = every_other(&E192);
/// E48 mantissas ×100: every other E96 member.
const E48: [u16; 48] = every_other(&E96);

/// 10^e for a non-negative exponent: exact up to 1e22, correctly rounded up to 1e44 (one
/// product of exact powers), within a few ulps beyond; infinity past 1e308.
pub(crate) fn pow10(e: i64) -> f64 {
    let mut p: f64 = 1.0;
    let mut rest = e.max(0);
    while rest > 22 && p.is_finite() {
        p *= 1e22;
        rest -= 22;
    }
    let last = usize::try_from(rest)
        .ok()
        .and_then(|i| EXACT_POW10.get(i))
        .copied()
        .unwrap_or(1.0);
    p * last
}

/// `m × 10^e`, correctly rounded for |e| <= 22.
fn scale(m: f64, e: i64) -> f64 {
    if e >= 0 {
        m * pow10(e)
    } else {
        m / pow10(e.saturating_neg())
    }
}

/// Relative slack of the strict look-ups ([`Series::next_up`], [`Series::next_down`]) and of
/// [`Series::ceil`] and [`Series::floor`].
const SLACK: f64 = 1e-9;

/// An IEC 60063 E-series.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Series {
    /// 3 values per decade, usual tolerance 20 %.
    E3,
    /// 6 values per decade, usual tolerance 20 %.
    E6,
    /// 12 values per decade, usual tolerance 10 %.
    E12,
    /// 24 values per decade, usual tolerance 5 %.
    E24,
    /// 48 values per decade, usual tolerance 2 %.
    E48,
    /// 96 values per decade, usual tolerance 1 %.
    E96,
    /// 192 values per decade, usual tolerance 0.5 % and tighter.
    E192,
}

/// Why a text does not name a series.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum SeriesError {
    /// Not one of E3, E6, E12, E24, E48, E96, E192 (or 3, 6, ... 192).
    Unknown,
    /// The series number is zero or negative (`E0`, `-24`).
    NotPositive,
}

impl fmt::Display for SeriesError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            SeriesError::Unknown => "unknown series: expected E3, E6, E12, E24, E48, E96 or E192",
            SeriesError::NotPositive => "series number must be positive: expected E3 to E192",
        })
    }
}

impl Series {
    /// Every series, coarsest first.
    pub const ALL: [Series; 7] = [
        Series::E3,
        Series::E6,
        Series::E12,
        Series::E24,
        Series::E48,
        Series::E96,
        Series::E192,
    ];

    /// The series name, e.g. "E24".
    pub fn name(self) -> &'static str {
        match self {
            Series::E3 => "E3",
            Series::E6 => "E6",
            Series::E12 => "E12",
            Series::E24 => "E24",
            Series::E48 => "E48",
            Series::E96 => "E96",
            Series::E192 => "E192",
        }
    }

    /// Parse "E24", "e24" or "24" (surrounding whitespace ignored).
    pub fn parse(text: &str) -> Result<Series, SeriesError> {
        let t = text.trim();
        let digits = t.strip_prefix(['E', 'e']).unwrap_or(t);
        let n: i64 = digits.parse().map_err(|_| SeriesError::Unknown)?;
        if n <= 0 {
            return Err(SeriesError::NotPositive);
        }
        Series::ALL
            .iter()
            .copied()
            .find(|s| s.mantissas().len() as i64 == n)
            .ok_or(SeriesError::Unknown)
    }

    /// The table as value × 100 in ascending order (E24: 100, 110, 120, ... 910; E192: 100, 101, ... 988).
    pub fn mantissas(self) -> &'static [u16] {
        match self {
            Series::E3 => &E3,
            Series::E6 => &E6,
            Series::E12 => &E12,
            Series::E24 => &E24,
            Series::E48 => &E48,
            Series::E96 => &E96,
            Series::E192 => &E192,
        }
    }

    /// Usual tolerance of parts in this series, as a fraction (E24: 0.05).
    pub fn tolerance(self) -> f64 {
        match self {
            Series::E3 | Series::E6 => 0.20,
            Series::E12 => 0.10,
            Series::E24 => 0.05,
            Series::E48 => 0.02,
            Series::E96 => 0.01,
            Series::E192 => 0.005,
        }
    }

    /// Number of members per decade, as i64 (always > 0).
    fn per_decade(self) -> i64 {
        i64::try_from(self.mantissas().len()).unwrap_or(1).max(1)
    }

    /// Member with global index `k` (index 0 is 1.0, index N is 10.0, index -1 is the top of the
    /// decade below 1.0). `None` if the value is not a positive finite number.
    fn member(self, k: i64) -> Option<f64> {
        let n = self.per_decade();
        let decade = k.div_euclid(n);
        let i = usize::try_from(k.rem_euclid(n)).ok()?;
        let m = f64::from(*self.mantissas().get(i)?);
        let v = scale(m, decade.saturating_sub(2));
        (v.is_finite() && v > 0.0).then_some(v)
    }

    /// Decade of a positive finite x: floor(log10(x)), with the logarithm's rounding corrected
    /// so that powers of ten land in their own decade (exactly so from 1e-22 to 1e22).
    fn decade(x: f64) -> Option<i64> {
        if !(x.is_finite() && x > 0.0) {
            return None;
        }
        // |log10| <= 324 for finite positive f64, so the cast is exact.
        let d = libm::floor(libm::log(x) * core::f64::consts::LOG10_E) as i64;
        Some(if scale(1.0, d + 1) <= x {
            d + 1
        } else if scale(1.0, d) > x {
            d - 1
        } else {
            d
        })
    }

    /// Global indices of the members in the three decades around x, ascending.
    fn window(self, x: f64) -> Option<core::ops::Range<i64>> {
        let d = Series::decade(x)?;
        let n = self.per_decade();
        Some(d.saturating_sub(1).saturating_mul(n)..d.saturating_add(2).saturating_mul(n))
    }

    /// Index of the smallest member >= t: a binary search over the three decades around t
    /// (the members ascend), checked, with the plain scan as the fallback at the ends of the
    /// f64 range where members underflow or overflow. About 7 member look-ups instead of up to
    /// 3 × per-decade.
    fn index_ceil(self, t: f64) -> Option<i64> {
        let w = self.window(t)?;
        let at_least = |k: i64| self.member(k).is_some_and(|m| m >= t);
        let (mut lo, mut hi) = (w.start, w.end);
        while lo < hi {
            let mid = lo + (hi - lo) / 2;
            if at_least(mid) {
                hi = mid;
            } else {
                lo = mid + 1;
            }
        }
        let found = lo < w.end
            && at_least(lo)
            && (lo == w.start || self.member(lo - 1).is_some_and(|m| m < t));
        if found {
            Some(lo)
        } else {
            w.clone().find(|&k| at_least(k))
        }
    }

    /// Index of the largest member <= t (binary search as in [`Series::index_ceil`]).
    fn index_floor(self, t: f64) -> Option<i64> {
        let w = self.window(t)?;
        let at_most = |k: i64| self.member(k).is_some_and(|m| m <= t);
        // First index whose member is above t (or missing).
        let (mut lo, mut hi) = (w.start, w.end);
        while lo < hi {
            let mid = lo + (hi - lo) / 2;
            if at_most(mid) {
                lo = mid + 1;
            } else {
                hi = mid;
            }
        }
        let k = lo - 1;
        let found = k >= w.start
            && at_most(k)
            && (k + 1 == w.end || self.member(k + 1).is_some_and(|m| m > t));
        if found {
            Some(k)
        } else {
            w.clone().rev().find(|&k| at_most(k))
        }
    }

    /// Index of the member nearest to x in ratio (the lower one on an exact tie).
    fn index_nearest(self, x: f64) -> Option<i64> {
        let lo = self.index_floor(x);
        let hi = self.index_ceil(x);
        match (lo, hi) {
            (Some(l), Some(h)) => {
                let ml = self.member(l)?;
                let mh = self.member(h)?;
                // Ratio distance: x/ml against mh/x (the logarithm is monotonic, so this
                // compares ln(x/ml) with ln(mh/x) without computing either).
                if x / ml <= mh / x {
                    Some(l)
                } else {
                    Some(h)
                }
            }
            (Some(k), None) | (None, Some(k)) => Some(k),
            (None, None) => None,
        }
    }

    /// The member nearest to x (Ω or F) in ratio, across decades (9.6 k → 10 k in E24).
    /// `None` for x <= 0 or non-finite.
    pub fn nearest(self, x: f64) -> Option<f64> {
        self.member(self.index_nearest(x)?)
    }

    /// The smallest member strictly greater than x; a member's `next_up` is the next member
    /// (relative slack 1e-9). `None` for x <= 0 or non-finite.
    pub fn next_up(self, x: f64) -> Option<f64> {
        if !(x.is_finite() && x > 0.0) {
            return None;
        }
        let t = x * (1.0 + SLACK);
        let k = self.index_ceil(t)?;
        match self.member(k) {
            Some(m) if m > t => Some(m),
            _ => self.member(k.checked_add(1)?),
        }
    }

    /// The largest member strictly smaller than x (relative slack 1e-9).
    /// `None` for x <= 0 or non-finite.
    pub fn next_down(self, x: f64) -> Option<f64> {
        if !(x.is_finite() && x > 0.0) {
            return None;
        }
        let t = x * (1.0 - SLACK);
        let k = self.index_floor(t)?;
        match self.member(k) {
            Some(m) if m < t => Some(m),
            _ => self.member(k.checked_sub(1)?),
        }
    }

    /// The smallest member >= x (a value within 1e-9 relative of a member gives that member).
    /// `None` for x <= 0 or non-finite.
    pub fn ceil(self, x: f64) -> Option<f64> {
        if !(x.is_finite() && x > 0.0) {
            return None;
        }
        self.member(self.index_ceil(x * (1.0 - SLACK))?)
    }

    /// The largest member <= x (a value within 1e-9 relative of a member gives that member).
    /// `None` for x <= 0 or non-finite.
    pub fn floor(self, x: f64) -> Option<f64> {
        if !(x.is_finite() && x > 0.0) {
            return None;
        }
        self.member(self.index_floor(x * (1.0 + SLACK))?)
    }

    /// The member `steps` positions from `nearest(x)` (negative steps go down), across decades.
    /// `None` for x <= 0, non-finite, or a result that is not a positive finite number.
    pub fn step(self, x: f64, steps: i32) -> Option<f64> {
        let k = self.index_nearest(x)?;
        self.member(k.checked_add(i64::from(steps))?)
    }

    /// The members from `below` positions under `nearest(x)` to `above` positions over it,
    /// ascending, across decades (one nearest look-up; members that are not positive finite
    /// numbers are left out). The same values as [`Series::step`] for each step.
    pub fn around(self, x: f64, below: u8, above: u8) -> impl Iterator<Item = f64> {
        let k = self.index_nearest(x);
        let (lo, hi) = match k {
            Some(k) => (k - i64::from(below), k + i64::from(above)),
            None => (1, 0),
        };
        (lo..=hi).filter_map(move |i| self.member(i))
    }

    /// Whether x is a member of the series in any decade (relative 1e-6).
    pub fn contains(self, x: f64) -> bool {
        self.nearest(x)
            .is_some_and(|m| libm::fabs(m - x) <= 1e-6 * m)
    }
}

impl fmt::Display for Series {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.pad(self.name())
    }
}

impl core::str::FromStr for Series {
    type Err = SeriesError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Series::parse(s)
    }
}

/// An IEC 60062 band colour.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Colour {
    /// Digit 0, multiplier ×1.
    Black,
    /// Digit 1, multiplier ×10, tolerance 1 %.
    Brown,
    /// Digit 2, multiplier ×100, tolerance 2 %.
    Red,
    /// Digit 3, multiplier ×1e3.
    Orange,
    /// Digit 4, multiplier ×1e4.
    Yellow,
    /// Digit 5, multiplier ×1e5, tolerance 0.5 %.
    Green,
    /// Digit 6, multiplier ×1e6, tolerance 0.25 %.
    Blue,
    /// Digit 7, multiplier ×1e7, tolerance 0.1 %.
    Violet,
    /// Digit 8, multiplier ×1e8, tolerance 0.05 %.
    Grey,
    /// Digit 9, multiplier ×1e9.
    White,
    /// Multiplier ×0.1, tolerance 5 %.
    Gold,
    /// Multiplier ×0.01, tolerance 10 %.
    Silver,
    /// Multiplier ×0.001.
    Pink,
    /// No band: tolerance 20 %.
    None,
}

/// Digit colours 0 ..= 9.
const DIGITS: [Colour; 10] = [
    Colour::Black,
    Colour::Brown,
    Colour::Red,
    Colour::Orange,
    Colour::Yellow,
    Colour::Green,
    Colour::Blue,
    Colour::Violet,
    Colour::Grey,
    Colour::White,
];

/// Tolerance colours with their tolerance as a fraction.
const TOLERANCES: [(f64, Colour); 9] = [
    (0.10, Colour::Silver),
    (0.05, Colour::Gold),
    (0.01, Colour::Brown),
    (0.02, Colour::Red),
    (0.005, Colour::Green),
    (0.0025, Colour::Blue),
    (0.001, Colour::Violet),
    (0.0005, Colour::Grey),
    (0.20, Colour::None),
];

impl Colour {
    /// Lower-case English name: "black", "grey", "none".
    pub fn name(self) -> &'static str {
        match self {
            Colour::Black => "black",
            Colour::Brown => "brown",
            Colour::Red => "red",
            Colour::Orange => "orange",
            Colour::Yellow => "yellow",
            Colour::Green => "green",
            Colour::Blue => "blue",
            Colour::Violet => "violet",
            Colour::Grey => "grey",
            Colour::White => "white",
            Colour::Gold => "gold",
            Colour::Silver => "silver",
            Colour::Pink => "pink",
            Colour::None => "none",
        }
    }

    /// The colour of a multiplier 10^exp, exp in -3 ..= 9.
    fn multiplier(exp: i64) -> Option<Colour> {
        match exp {
            -3 => Some(Colour::Pink),
            -2 => Some(Colour::Silver),
            -1 => Some(Colour::Gold),
            _ => DIGITS.get(usize::try_from(exp).ok()?).copied(),
        }
    }

    /// The colour of a tolerance given as a fraction (relative match 1e-6).
    fn tolerance(tol: f64) -> Option<Colour> {
        TOLERANCES
            .iter()
            .find(|(t, _)| libm::fabs(tol - t) <= 1e-6 * t)
            .map(|&(_, c)| c)
    }
}

impl fmt::Display for Colour {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.pad(self.name())
    }
}

/// How many bands a resistor carries.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BandCount {
    /// 2 digits, multiplier, tolerance.
    Four,
    /// 3 digits, multiplier, tolerance.
    Five,
}

impl BandCount {
    /// Number of digit bands.
    fn digits(self) -> u32 {
        match self {
            BandCount::Four => 2,
            BandCount::Five => 3,
        }
    }
}

/// Why a resistance cannot be given as colour bands.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum BandError {
    /// The resistance is zero, negative or NaN.
    NotPositive,
    /// The value needs more significant digits than the digit bands hold (4.75 kΩ in 4 bands).
    TooManyDigits,
    /// The multiplier would be outside ×0.001 (pink) ..= ×1e9 (white), or the value is infinite.
    OutOfRange,
    /// No IEC 60062 colour for this tolerance (colours exist for 20, 10, 5, 2, 1, 0.5, 0.25,
    /// 0.1 and 0.05 %).
    NoToleranceColour,
}

impl fmt::Display for BandError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            BandError::NotPositive => "resistance must be a positive number",
            BandError::TooManyDigits => {
                "resistance has more significant digits than the bands hold"
            }
            BandError::OutOfRange => "resistance is outside the range of the multiplier colours",
            BandError::NoToleranceColour => {
                "no colour for this tolerance: use 20, 10, 5, 2, 1, 0.5, 0.25, 0.1 or 0.05 %"
            }
        })
    }
}

/// IEC 60062 colour bands of a resistance in Ω with a tolerance as a fraction (0.05 for 5 %):
/// digits, multiplier, tolerance (a 20 % part gets [`Colour::None`] as its last band).
/// 4.7 kΩ 5 % in 4 bands: yellow violet red gold; in 5 bands with 1 %: yellow violet black brown
/// brown. Values within 1 ppm of a representable value are taken as that value (4700.0000001 is
/// 4k7). The first digit band is never black.
pub fn colour_bands(
    ohms: f64,
    tolerance: f64,
    count: BandCount,
) -> Result<heapless::Vec<Colour, 6>, BandError> {
    if ohms.is_nan() || ohms <= 0.0 {
        return Err(BandError::NotPositive);
    }
    if !ohms.is_finite() {
        return Err(BandError::OutOfRange);
    }
    let digits = count.digits();
    let lowest = pow10(i64::from(digits - 1));
    let highest = pow10(i64::from(digits));
    let mut exp = Series::decade(ohms).ok_or(BandError::NotPositive)? - i64::from(digits - 1);
    let mut scaled = scale(ohms, exp.saturating_neg());
    if scaled >= highest {
        scaled /= 10.0;
        exp += 1;
    } else if scaled < lowest {
        scaled *= 10.0;
        exp -= 1;
    }
    let mut whole = libm::round(scaled);
    if libm::fabs(scaled - whole) > 1e-6 * scaled {
        return Err(BandError::TooManyDigits);
    }
    if whole >= highest {
        whole /= 10.0;
        exp += 1;
    }
    let multiplier = Colour::multiplier(exp).ok_or(BandError::OutOfRange)?;
    let tol = Colour::tolerance(tolerance).ok_or(BandError::NoToleranceColour)?;
    // `whole` is an integer in 10 ..= 999.
    let mut number = whole as u32;
    let mut digit_colours = [Colour::Black; 3];
    for slot in digit_colours.iter_mut().take(digits as usize).rev() {
        *slot = DIGITS
            .get((number % 10) as usize)
            .copied()
            .ok_or(BandError::OutOfRange)?;
        number /= 10;
    }
    let mut bands: heapless::Vec<Colour, 6> = heapless::Vec::new();
    for c in digit_colours
        .iter()
        .take(digits as usize)
        .copied()
        .chain([multiplier, tol])
    {
        bands.push(c).map_err(|_| BandError::TooManyDigits)?;
    }
    Ok(bands)
}

#[cfg(test)]
mod tests {

    /// The binary searches find what the plain scans over the three decades find, from the
    /// smallest to the largest f64 and at every member and its neighbouring f64 values.
    #[test]
    fn binary_search_matches_the_plain_scan() {
        let scan_ceil =
            |s: Series, t: f64| s.window(t)?.find(|&k| s.member(k).is_some_and(|m| m >= t));
        let scan_floor = |s: Series, t: f64| {
            s.window(t)?
                .rev()
                .find(|&k| s.member(k).is_some_and(|m| m <= t))
        };
        let mut xs = vec![f64::MIN_POSITIVE, 5e-324, 1e-300, 1e300, f64::MAX, 1.7e308];
        let mut x = 1e-30;
        while x < 1e30 {
            xs.push(x);
            x *= 1.0137;
        }
        for s in Series::ALL {
            for k in -40 * s.per_decade()..40 * s.per_decade() {
                if let Some(m) = s.member(k) {
                    xs.extend([m, m.next_up(), m.next_down()]);
                }
            }
            for &x in &xs {
                assert_eq!(s.index_ceil(x), scan_ceil(s, x), "{s:?} ceil {x:e}");
                assert_eq!(s.index_floor(x), scan_floor(s, x), "{s:?} floor {x:e}");
            }
        }
    }

    use super::*;

    #[test]
    fn decades_of_powers_of_ten_and_their_neighbours() {
        extern crate std;
        for k in -22i64..=22 {
            let p: f64 = std::format!("1e{k}").parse().unwrap();
            assert_eq!(Series::decade(p), Some(k), "1e{k}");
            assert_eq!(Series::decade(p.next_down()), Some(k - 1), "below 1e{k}");
            assert_eq!(Series::decade(p.next_up()), Some(k), "above 1e{k}");
            assert_eq!(Series::decade(p * 9.99), Some(k), "9.99e{k}");
        }
        assert_eq!(pow10(25), 1e25);
        assert_eq!(pow10(400), f64::INFINITY);
    }

    #[test]
    fn lookups() {
        // IEC 60063:2015 E24 table (project reference file iec60063.txt).
        assert_eq!(Series::E24.next_up(9100.0), Some(10_000.0));
        assert_eq!(Series::E24.next_down(1000.0), Some(910.0));
        assert_eq!(Series::E24.nearest(9.6e3), Some(10_000.0));
        assert_eq!(Series::E12.step(4700.0, -1), Some(3900.0));
        assert!(Series::E24.contains(0.0047));
        assert_eq!(Series::E24.nearest(0.0), None);
    }

    #[test]
    fn bands() {
        // IEC 60062:2016, from memory.
        let b = colour_bands(4700.0, 0.05, BandCount::Four);
        assert_eq!(
            b.as_deref(),
            Ok(&[Colour::Yellow, Colour::Violet, Colour::Red, Colour::Gold][..])
        );
        assert_eq!(
            colour_bands(4750.0, 0.05, BandCount::Four),
            Err(BandError::TooManyDigits)
        );
    }
}
