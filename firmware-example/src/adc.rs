//! ADC channel math for the jig inputs (pure, host-tested).
//!
//! Each jig node reaches an ADC pin through a resistive divider. One reading of a node is a burst
//! of samples (oversampling) that is averaged; before the average is trusted:
//!
//! - **open probe**: a floating input picks up noise, so a burst whose spread (max - min, in ADC
//!   codes) exceeds a threshold is refused;
//! - **rail clipping**: a sample at full scale means the node is above the measurable range, the
//!   reading is refused; a sample at code 0 means the node is at or below 0 V, which is a real
//!   and useful value for a fault (a shorted emitter), so it is kept and flagged.
//!
//! Conversion: `ideal = mean_code / full_scale * vref * divider_ratio`, then the channel's
//! two-point calibration `volts = gain * ideal + offset` corrects divider tolerance, reference
//! error and ADC offset together. [`Calibration::from_two_points`] finds gain and offset from two
//! known voltages applied to the jig input and the ideal readings they gave.

/// Divider ratio of the jig inputs: 10 MΩ from the probe over 1 MΩ to ground, then a unity-gain
/// buffer, (10 M + 1 M) / 1 M = 11, so the 3.3 V converter's full scale is 36.3 V at the probe
/// and a 30 V supply reaches 2.73 V at the pin (firmware-example/README.md, wiring).
pub const JIG_DIVIDER_RATIO: f32 = 11.0;
/// What each jig input puts from its node to ground, Ω: the divider, 10 MΩ + 1 MΩ (the buffer
/// draws no current to speak of). Every input stays connected while the nodes are read, so the
/// console's `input-r` defaults to this (`together`), and the emulated board is loaded by it.
pub const JIG_INPUT_R: f64 = 11e6;

/// Full-scale code of a 12-bit converter.
pub const FULL_SCALE_12BIT: u16 = 4095;

/// Divider ratio (node volts per pin volt) of a top resistor to the node and a bottom resistor to
/// ground.
pub fn divider_ratio(r_top: f32, r_bottom: f32) -> f32 {
    (r_top + r_bottom) / r_bottom
}

/// Linear correction `volts = gain * ideal + offset`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Calibration {
    /// Multiplier on the ideal reading.
    pub gain: f32,
    /// Volts added after the gain.
    pub offset: f32,
}

impl Calibration {
    /// No correction.
    pub const IDENTITY: Calibration = Calibration {
        gain: 1.0,
        offset: 0.0,
    };

    /// Gain and offset from two known inputs: `ideal_a` was read with `true_a` volts applied, and
    /// `ideal_b` with `true_b`. `None` if the two ideal readings are too close to tell apart or
    /// anything is not finite.
    pub fn from_two_points(
        ideal_a: f32,
        true_a: f32,
        ideal_b: f32,
        true_b: f32,
    ) -> Option<Calibration> {
        let d = ideal_b - ideal_a;
        let scale = ideal_a.abs().max(ideal_b.abs()).max(1e-3);
        // NaN fails every comparison, so this also refuses non-finite input.
        if d.is_nan() || d.abs() <= 1e-4 * scale {
            return None;
        }
        let gain = (true_b - true_a) / d;
        let offset = true_a - gain * ideal_a;
        (gain.is_finite() && offset.is_finite()).then_some(Calibration { gain, offset })
    }

    /// The corrected value of an ideal reading.
    pub fn apply(&self, ideal: f32) -> f32 {
        self.gain * ideal + self.offset
    }
}

/// Statistics of one burst of samples.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BurstStats {
    /// Number of samples.
    pub count: usize,
    /// Mean code.
    pub mean: f32,
    /// Lowest code.
    pub min: u16,
    /// Highest code.
    pub max: u16,
}

impl BurstStats {
    /// Statistics of a burst; `None` for an empty one.
    pub fn of(samples: &[u16]) -> Option<BurstStats> {
        let (&first, _) = samples.split_first()?;
        let (mut min, mut max, mut sum) = (first, first, 0u32);
        for &s in samples {
            min = min.min(s);
            max = max.max(s);
            sum += u32::from(s);
        }
        Some(BurstStats {
            count: samples.len(),
            mean: sum as f32 / samples.len() as f32,
            min,
            max,
        })
    }

    /// Spread of the burst in codes.
    pub fn spread(&self) -> u16 {
        self.max - self.min
    }
}

/// Why a channel reading was refused.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ChannelError {
    /// No samples were taken.
    NoSamples,
    /// A sample reached full scale: the node is above the measurable range.
    OverRange,
    /// The samples spread more than the open-probe threshold: the input is floating.
    OpenProbe {
        /// Measured spread, codes.
        spread: u16,
    },
}

impl core::fmt::Display for ChannelError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            ChannelError::NoSamples => f.write_str("no samples"),
            ChannelError::OverRange => f.write_str("over range"),
            ChannelError::OpenProbe { spread } => write!(f, "open probe (spread {spread} codes)"),
        }
    }
}

/// One accepted channel reading.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Reading {
    /// Node voltage, volts.
    pub volts: f32,
    /// Spread of the burst, codes.
    pub spread: u16,
    /// Some sample was at code 0: the node is at or below 0 V.
    pub at_floor: bool,
}

/// Configuration of one jig channel.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChannelConfig {
    /// Node volts per ADC pin volt.
    pub divider_ratio: f32,
    /// ADC reference, volts.
    pub vref: f32,
    /// Full-scale code.
    pub full_scale: u16,
    /// Two-point calibration.
    pub cal: Calibration,
    /// Largest burst spread (codes) still taken as a connected probe.
    pub open_spread: u16,
}

impl ChannelConfig {
    /// A 12-bit channel behind a divider, uncalibrated, refusing spreads above 48 codes.
    pub fn new(divider_ratio: f32, vref: f32) -> Self {
        ChannelConfig {
            divider_ratio,
            vref,
            full_scale: FULL_SCALE_12BIT,
            cal: Calibration::IDENTITY,
            open_spread: 48,
        }
    }

    /// The uncalibrated node voltage of a (mean) code.
    pub fn ideal_volts(&self, code: f32) -> f32 {
        code / f32::from(self.full_scale) * self.vref * self.divider_ratio
    }

    /// The code an ideal channel would read for a node voltage, clamped to the converter's range
    /// (the emulated jig's model of the hardware).
    pub fn code_for(&self, node_volts: f32) -> u16 {
        let code = node_volts / (self.vref * self.divider_ratio) * f32::from(self.full_scale);
        if code.is_nan() || code <= 0.0 {
            0
        } else if code >= f32::from(self.full_scale) {
            self.full_scale
        } else {
            (code + 0.5) as u16
        }
    }

    /// Converts a burst of samples into a reading, or refuses it.
    pub fn convert(&self, samples: &[u16]) -> Result<Reading, ChannelError> {
        let stats = BurstStats::of(samples).ok_or(ChannelError::NoSamples)?;
        if stats.spread() > self.open_spread {
            return Err(ChannelError::OpenProbe {
                spread: stats.spread(),
            });
        }
        if stats.max >= self.full_scale {
            return Err(ChannelError::OverRange);
        }
        Ok(Reading {
            volts: self.cal.apply(self.ideal_volts(stats.mean)),
            spread: stats.spread(),
            at_floor: stats.min == 0,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f32, b: f32, tol: f32) -> bool {
        (a - b).abs() <= tol
    }

    #[test]
    fn divider_and_ideal_conversion() {
        let r = divider_ratio(47_000.0, 10_000.0);
        assert!(close(r, 5.7, 1e-6));
        let ch = ChannelConfig::new(r, 3.3);
        assert!(close(ch.ideal_volts(4095.0), 3.3 * 5.7, 1e-4));
        assert!(close(ch.ideal_volts(0.0), 0.0, 1e-9));
        let code = ch.code_for(12.0);
        assert!(close(ch.ideal_volts(f32::from(code)), 12.0, 0.005));
        assert_eq!(ch.code_for(-1.0), 0);
        assert_eq!(ch.code_for(100.0), 4095);
        assert_eq!(ch.code_for(f32::NAN), 0);
    }

    #[test]
    fn two_point_calibration_recovers_gain_and_offset() {
        // A channel that reads 2 % high and 30 mV low.
        let read = |v: f32| 1.02 * v - 0.03;
        let cal = Calibration::from_two_points(read(1.0), 1.0, read(10.0), 10.0).unwrap();
        for v in [0.0f32, 2.5, 6.8, 12.0] {
            assert!(close(cal.apply(read(v)), v, 1e-4), "{v}");
        }
        assert!(Calibration::from_two_points(5.0, 1.0, 5.0, 2.0).is_none());
        assert!(Calibration::from_two_points(0.0, 1.0, f32::NAN, 2.0).is_none());
        assert_eq!(Calibration::IDENTITY.apply(3.0), 3.0);
    }

    #[test]
    fn oversampling_averages() {
        let ch = ChannelConfig::new(1.0, 4.095);
        let r = ch
            .convert(&[1000, 1002, 1001, 999, 998, 1000, 1003, 997])
            .unwrap();
        assert!(close(r.volts, 1.0, 1e-4));
        assert_eq!(r.spread, 6);
        assert!(!r.at_floor);
        let s = BurstStats::of(&[5, 9, 7]).unwrap();
        assert_eq!((s.count, s.min, s.max, s.spread()), (3, 5, 9, 4));
        assert!(close(s.mean, 7.0, 1e-6));
        assert_eq!(ch.convert(&[]), Err(ChannelError::NoSamples));
    }

    #[test]
    fn clipping() {
        let ch = ChannelConfig::new(5.7, 3.3);
        assert_eq!(
            ch.convert(&[4090, 4095, 4093]),
            Err(ChannelError::OverRange)
        );
        let r = ch.convert(&[0, 1, 0, 2]).unwrap();
        assert!(r.at_floor);
        assert!(r.volts < 0.01);
    }

    #[test]
    fn open_probe_is_refused() {
        let ch = ChannelConfig::new(5.7, 3.3);
        let floating = [200u16, 1900, 650, 3100, 40, 2500, 4095, 900];
        assert_eq!(
            ch.convert(&floating),
            Err(ChannelError::OpenProbe { spread: 4055 })
        );
        let mut tight = ch;
        tight.open_spread = 4;
        assert_eq!(
            tight.convert(&[100, 105]),
            Err(ChannelError::OpenProbe { spread: 5 })
        );
        assert!(tight.convert(&[100, 104]).is_ok());
    }

    #[test]
    fn calibrated_conversion() {
        let mut ch = ChannelConfig::new(5.7, 3.3);
        ch.cal = Calibration {
            gain: 0.5,
            offset: 1.0,
        };
        let code = ch.code_for(4.0);
        let r = ch.convert(&[code; 4]).unwrap();
        assert!(close(
            r.volts,
            0.5 * ch.ideal_volts(f32::from(code)) + 1.0,
            1e-5
        ));
    }
}
