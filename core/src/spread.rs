//! Spread of the operating point: worst case, seeded Monte Carlo, sensitivity.
//!
//! (Types fixed here; the computation is built by the spread issue.)

/// How a part's value is distributed within its tolerance in the Monte Carlo run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Distribution {
    /// Uniform within ± tolerance.
    Uniform,
    /// Normal with the tolerance at `sigmas` standard deviations, truncated at the tolerance.
    Normal {
        /// How many standard deviations the tolerance spans (3 is common).
        sigmas: f64,
    },
}

/// What varies: the parts within their tolerances (from the stage), hFE within the profile's
/// spread, the ambient within a range, and the supply within its tolerance (from the stage).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Variation {
    /// Lowest ambient, °C.
    pub temp_min_c: f64,
    /// Highest ambient, °C.
    pub temp_max_c: f64,
    /// Distribution of the part values in Monte Carlo.
    pub distribution: Distribution,
}

impl Variation {
    /// Parts and hFE vary; the ambient stays at `temp_c`.
    pub fn at(temp_c: f64) -> Self {
        Self {
            temp_min_c: temp_c,
            temp_max_c: temp_c,
            distribution: Distribution::Uniform,
        }
    }
}
