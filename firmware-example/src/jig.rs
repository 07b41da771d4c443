//! The jig source behind the core console's [`Jig`] trait: four ADC channels through the jig's
//! input dividers ([`AdcJig`], the hardware path) and the emulated board read through the very
//! same channel math ([`EmulatedJig`], the QEMU image).
//!
//! A reading of `samples` conversions is taken in bursts of at most [`MAX_BURST`]; every burst
//! is checked on its own (open probe: too much spread; over range: a sample at full scale) and
//! the accepted bursts are averaged. The core's two-point calibration (volts = gain · raw +
//! offset, raw being the node voltage after the divider ratio) is applied last.
use crate::adc::{Calibration, ChannelConfig, ChannelError};
use crate::board::BoardModel;
pub use crate::board::Noise;
use biasjig_core::console::record::Settings;
use biasjig_core::console::{Calibration as CoreCalibration, Channel, Jig, JigError};
use biasjig_core::response::CapState;
use biasjig_core::stage::{Capacitor, Fault, Readings};

/// Most samples in one burst (the open-probe and rail checks look at one burst at a time).
pub const MAX_BURST: usize = 64;

pub use crate::adc::{JIG_DIVIDER_RATIO, JIG_INPUT_R};
/// ADC reference of the jig (VDDA), V.
pub const JIG_VREF: f32 = 3.3;
/// Below this measured supply, V, the board is taken as not powered ([`JigError::Supply`]).
pub const MIN_SUPPLY: f64 = 1.0;

/// Raw ADC samples of the jig's channels.
pub trait SampleSource {
    /// One conversion of a channel, in codes.
    fn sample(&mut self, channel: Channel) -> u16;

    /// The tone output and the two signal inputs, if the jig has them (the signal test).
    fn tone(&mut self) -> Option<&mut dyn crate::tone::ToneDriver> {
        None
    }
}

fn tone_error(e: crate::tone::ToneError) -> JigError {
    match e {
        crate::tone::ToneError::NoDrive => JigError::Hardware,
        crate::tone::ToneError::Clipped => JigError::OutOfRange(Channel::Vc),
        crate::tone::ToneError::Frequency => JigError::NotSupported,
    }
}

/// Firmware extras of a jig, beyond the core's [`Jig`]: follow the console's design (the
/// emulated board is drawn around it) and answer `fw:board` queries. The defaults do nothing.
pub trait FirmwareJig: Jig {
    /// The console's settings changed (design hash or ambient): an emulated board redraws.
    fn follow(&mut self, settings: &Settings) {
        let _ = settings;
    }
    /// The emulated board, for `fw:board?` and `fw:board SEED`; `None` on hardware.
    fn board(&mut self) -> Option<&mut BoardModel> {
        None
    }
}

/// The value of one channel in a set of readings, V.
pub fn reading(r: &Readings, c: Channel) -> f64 {
    match c {
        Channel::Vcc => r.vcc,
        Channel::Vb => r.vb,
        Channel::Ve => r.ve,
        Channel::Vc => r.vc,
    }
}

fn set_reading(r: &mut Readings, c: Channel, v: f64) {
    match c {
        Channel::Vcc => r.vcc = v,
        Channel::Vb => r.vb = v,
        Channel::Ve => r.ve = v,
        Channel::Vc => r.vc = v,
    }
}

fn channel_error(c: Channel, e: ChannelError) -> JigError {
    match e {
        ChannelError::OpenProbe { .. } => JigError::OpenProbe(c),
        ChannelError::OverRange => JigError::OutOfRange(c),
        ChannelError::NoSamples => JigError::Hardware,
    }
}

/// A jig read through four ADC channels (in [`Channel::ALL`] order) with oversampling.
pub struct AdcJig<S> {
    /// Where the samples come from.
    pub source: S,
    /// Per channel: divider ratio, reference, open-probe threshold and calibration.
    pub channels: [ChannelConfig; 4],
    /// The signal path's calibration (load input against source input).
    pub signal_cal: crate::tone::SignalCal,
}

impl<S: SampleSource> AdcJig<S> {
    /// A jig on `source` with every channel behind the jig divider, uncalibrated.
    pub fn new(source: S, vref: f32) -> Self {
        AdcJig {
            source,
            channels: [ChannelConfig::new(JIG_DIVIDER_RATIO, vref); 4],
            signal_cal: crate::tone::SignalCal::default(),
        }
    }

    /// One channel averaged over `samples` conversions (clamped to 1 ..= 1024), V, with the
    /// channel calibration (`calibrated`) or without it.
    pub fn read(&mut self, c: Channel, samples: u16, calibrated: bool) -> Result<f64, JigError> {
        let mut cfg = *self.channels.get(c.index()).ok_or(JigError::Hardware)?;
        if !calibrated {
            cfg.cal = Calibration::IDENTITY;
        }
        let mut left = usize::from(samples.clamp(1, 1024));
        let (mut sum, mut count) = (0.0f64, 0usize);
        while left > 0 {
            let n = left.min(MAX_BURST);
            let mut buf = [0u16; MAX_BURST];
            let burst = buf.get_mut(..n).unwrap_or(&mut []);
            for s in burst.iter_mut() {
                *s = self.source.sample(c);
            }
            let r = cfg.convert(burst).map_err(|e| channel_error(c, e))?;
            sum += f64::from(r.volts) * n as f64;
            count += n;
            left -= n;
        }
        Ok(sum / count.max(1) as f64)
    }

    /// Every node, calibrated; refuses a missing supply.
    pub fn read_all(&mut self, samples: u16) -> Result<Readings, JigError> {
        let mut r = Readings {
            vcc: 0.0,
            vb: 0.0,
            ve: 0.0,
            vc: 0.0,
        };
        for c in Channel::ALL {
            let v = self.read(c, samples, true)?;
            set_reading(&mut r, c, v);
        }
        if r.vcc < MIN_SUPPLY {
            return Err(JigError::Supply);
        }
        Ok(r)
    }

    /// Take the core's calibration into the channel configurations and the signal path.
    pub fn calibrate(&mut self, cal: &CoreCalibration) {
        for (c, cfg) in Channel::ALL.into_iter().zip(self.channels.iter_mut()) {
            let k = cal.get(c);
            cfg.cal = Calibration {
                gain: k.gain as f32,
                offset: k.offset as f32,
            };
        }
        self.signal_cal.load_over_source = cal.signal as f32;
    }
}

impl<S: SampleSource> Jig for AdcJig<S> {
    fn measure(&mut self, samples: u16) -> Result<Readings, JigError> {
        self.read_all(samples)
    }

    fn raw(&mut self, channel: Channel, samples: u16) -> Result<f64, JigError> {
        self.read(channel, samples, false)
    }

    fn set_calibration(&mut self, cal: &CoreCalibration) -> Result<(), JigError> {
        self.calibrate(cal);
        Ok(())
    }

    fn gain(&mut self, f_hz: f64) -> Result<f64, JigError> {
        let cal = self.signal_cal;
        let d = self.source.tone().ok_or(JigError::NotSupported)?;
        struct Dyn<'a>(&'a mut dyn crate::tone::ToneDriver);
        impl crate::tone::ToneDriver for Dyn<'_> {
            fn start(&mut self, f: f32, p: u32) -> f32 {
                self.0.start(f, p)
            }
            fn stop(&mut self) {
                self.0.stop()
            }
            fn sample_pair(&mut self) -> (u16, u16) {
                self.0.sample_pair()
            }
        }
        crate::tone::measure_gain(&mut Dyn(d), f_hz as f32, &cal)
            .map(f64::from)
            .map_err(tone_error)
    }

    fn input_r(&self) -> Option<f64> {
        Some(JIG_INPUT_R)
    }
}

/// The hardware jig has no firmware extras.
impl<S: SampleSource> FirmwareJig for AdcJig<S> {}

/// Emulated conversions: a node voltage plus a few mV of reading noise, turned into the code an
/// ideal channel reads, with ±1 code of dither. A node at `NaN` is an open probe (codes all over
/// the range).
pub struct EmulatedSamples {
    /// Node voltages of the emulated board, V (in [`Channel::ALL`] order).
    pub nodes: [f32; 4],
    /// Reading noise per channel for this measurement, V.
    pub offset: [f32; 4],
    /// The channel model (ideal: same divider and reference as the jig channels).
    pub channel: ChannelConfig,
    /// The noise generator.
    pub noise: Noise,
}

/// Largest reading noise of the emulated jig, V (a few mV, well inside the default meter
/// guard band of 0.5 % + 5 mV).
pub const EMULATED_NOISE: f32 = 0.002;

impl SampleSource for EmulatedSamples {
    fn sample(&mut self, c: Channel) -> u16 {
        let i = c.index();
        let v = self.nodes.get(i).copied().unwrap_or(f32::NAN)
            + self.offset.get(i).copied().unwrap_or(0.0);
        let r = self.noise.next_u32();
        if v.is_nan() {
            return (r % 4096) as u16;
        }
        let code = i32::from(self.channel.code_for(v)) + (r % 3) as i32 - 1;
        code.clamp(0, i32::from(self.channel.full_scale)) as u16
    }
}

/// The emulated jig: the board model's node voltages read through the same ADC math as the
/// hardware ([`AdcJig`]); `inject` sets the model's fault.
pub struct EmulatedJig {
    /// The emulated board under test.
    pub board: BoardModel,
    /// The jig channels reading it.
    pub adc: AdcJig<EmulatedSamples>,
    /// The clock that times the board's emulation apart from the instrument's work
    /// ([`crate::cost::standing_in`]).
    pub clock: fn() -> u32,
}

impl EmulatedJig {
    /// An emulated jig over a board drawn with `seed` around the console's default design.
    pub fn new(seed: u64) -> Self {
        let channel = ChannelConfig::new(JIG_DIVIDER_RATIO, JIG_VREF);
        EmulatedJig {
            board: BoardModel::new(seed),
            adc: AdcJig {
                source: EmulatedSamples {
                    nodes: [f32::NAN; 4],
                    offset: [0.0; 4],
                    channel,
                    noise: Noise::new(seed as u32 ^ 0x9e37_79b9),
                },
                channels: [channel; 4],
                signal_cal: crate::tone::SignalCal::default(),
            },
            clock: crate::cost::no_clock,
        }
    }

    /// The same jig with its emulation timed on `clock` (the image's tick counter).
    pub fn timed_by(self, clock: fn() -> u32) -> Self {
        Self { clock, ..self }
    }

    fn load_nodes(&mut self) -> Result<(), JigError> {
        crate::cost::standing_in(self.clock, || self.load_nodes_now())
    }

    fn load_nodes_now(&mut self) -> Result<(), JigError> {
        // No operating point (the solver gave up): the jig reports a hardware failure rather
        // than invent voltages.
        let r = self.board.nodes().map_err(|_| JigError::Hardware)?;
        let src = &mut self.adc.source;
        for (c, (node, off)) in Channel::ALL
            .into_iter()
            .zip(src.nodes.iter_mut().zip(src.offset.iter_mut()))
        {
            *node = reading(&r, c) as f32;
            *off = EMULATED_NOISE * src.noise.unit();
        }
        Ok(())
    }
}

impl Jig for EmulatedJig {
    fn measure(&mut self, samples: u16) -> Result<Readings, JigError> {
        self.load_nodes()?;
        self.adc.read_all(samples)
    }

    fn raw(&mut self, channel: Channel, samples: u16) -> Result<f64, JigError> {
        self.load_nodes()?;
        self.adc.read(channel, samples, false)
    }

    fn set_calibration(&mut self, cal: &CoreCalibration) -> Result<(), JigError> {
        self.adc.calibrate(cal);
        Ok(())
    }

    fn inject(&mut self, fault: Option<Fault>) -> Result<(), JigError> {
        self.board.set_fault(fault);
        if fault.is_none() {
            self.board.set_cap_fault(None);
        }
        Ok(())
    }

    fn inject_capacitor(&mut self, which: Capacitor, state: CapState) -> Result<(), JigError> {
        self.board.set_cap_fault(Some((which, state)));
        Ok(())
    }

    fn gain(&mut self, f_hz: f64) -> Result<f64, JigError> {
        let clock = self.clock;
        let (stage, caps, op) = crate::cost::standing_in(clock, || self.board.solved())
            .map_err(|_| JigError::Hardware)?;
        let noise = Noise::new(self.adc.source.noise.next_u32());
        let mut tone = crate::tone::EmulatedTone::new(stage, caps, op, noise);
        tone.clock = clock;
        crate::tone::measure_gain(&mut tone, f_hz as f32, &self.adc.signal_cal)
            .map(f64::from)
            .map_err(tone_error)
    }

    /// The emulated board is read through inputs of the same resistance as the hardware's.
    fn input_r(&self) -> Option<f64> {
        self.board.input_r()
    }
}

impl FirmwareJig for EmulatedJig {
    fn follow(&mut self, settings: &Settings) {
        self.board
            .set_design(settings.stage, settings.profile, settings.temp_c);
    }

    fn board(&mut self) -> Option<&mut BoardModel> {
        Some(&mut self.board)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use biasjig_core::console::ChannelCal;
    use biasjig_core::stage::{DeviceFault, Resistor};

    #[test]
    fn divider_is_10m_over_1m() {
        assert!((crate::adc::divider_ratio(10e6, 1e6) - JIG_DIVIDER_RATIO).abs() < 1e-6);
        assert_eq!(JIG_INPUT_R, 10e6 + 1e6);
        assert_eq!(EmulatedJig::new(1).input_r(), Some(JIG_INPUT_R));
        let ch = ChannelConfig::new(JIG_DIVIDER_RATIO, JIG_VREF);
        assert!((ch.ideal_volts(4095.0) - 36.3).abs() < 1e-3);
    }

    #[test]
    fn good_board_reads_back_its_nodes() {
        let mut jig = EmulatedJig::new(7);
        let want = jig.board.nodes().unwrap();
        let r = jig.measure(64).unwrap();
        for c in Channel::ALL {
            let err = (reading(&r, c) - reading(&want, c)).abs();
            assert!(err < 0.008, "{} off by {err}", c.name());
        }
        // Deterministic: a second jig with the same seed reads the same.
        let mut again = EmulatedJig::new(7);
        assert_eq!(again.measure(64).unwrap(), r);
    }

    #[test]
    fn injected_fault_moves_the_nodes() {
        let mut jig = EmulatedJig::new(3);
        let good = jig.measure(16).unwrap();
        jig.inject(Some(Fault::Open(Resistor::R1))).unwrap();
        let open = jig.measure(16).unwrap();
        assert!(open.vb < 0.05 && open.vc > good.vc, "{open:?}");
        jig.inject(Some(Fault::Device(DeviceFault::CeShort)))
            .unwrap();
        let ce = jig.measure(16).unwrap();
        assert!((ce.vc - ce.ve).abs() < 0.05, "{ce:?}");
        jig.inject(None).unwrap();
        let back = jig.measure(16).unwrap();
        assert!((back.vc - good.vc).abs() < 0.01);
    }

    #[test]
    fn calibration_and_raw() {
        let mut jig = EmulatedJig::new(1);
        let raw = jig.raw(Channel::Vb, 64).unwrap();
        let mut cal = CoreCalibration::default();
        cal.set(
            Channel::Vb,
            ChannelCal {
                gain: 1.1,
                offset: -0.2,
            },
        );
        jig.set_calibration(&cal).unwrap();
        let m = jig.measure(64).unwrap();
        // Two separate reads, which may differ by one converter code (8.9 mV), the difference
        // scaled by the gain 1.1.
        assert!((m.vb - (1.1 * raw - 0.2)).abs() < 0.012, "{m:?} {raw}");
        // Each read rounds to the converter's codes (8.9 mV apart; the ±1 code dither averages
        // out): two reads may differ by one code.
        assert!((jig.raw(Channel::Vb, 64).unwrap() - raw).abs() < 0.012);
    }

    #[test]
    fn the_signal_correction_reaches_the_gain_measurement() {
        let mut jig = EmulatedJig::new(1);
        let raw = jig.gain(1000.0).unwrap();
        let cal = CoreCalibration {
            signal: 1.25,
            ..CoreCalibration::default()
        };
        jig.set_calibration(&cal).unwrap();
        let got = jig.gain(1000.0).unwrap();
        // Two separate tone measurements (noise drawn anew) differ by up to about 0.6 %; the
        // correction moves the reading by 20 %.
        assert!((got * 1.25 / raw - 1.0).abs() < 1.5e-2, "{got} {raw}");
        jig.set_calibration(&CoreCalibration::default()).unwrap();
        assert_eq!(jig.adc.signal_cal.load_over_source, 1.0);
        let back = jig.gain(1000.0).unwrap();
        assert!((back / raw - 1.0).abs() < 1.5e-2, "{back} {raw}");
    }

    #[test]
    fn open_probe_over_range_and_supply() {
        struct Fixed([u16; 4], Noise);
        impl SampleSource for Fixed {
            fn sample(&mut self, c: Channel) -> u16 {
                match self.0[c.index()] {
                    u16::MAX => (self.1.next_u32() % 4096) as u16,
                    v => v,
                }
            }
        }
        let mut jig = AdcJig::new(Fixed([1354, 200, 150, 700], Noise::new(5)), JIG_VREF);
        let r = jig.measure(100).unwrap();
        assert!((r.vcc - 12.0).abs() < 0.01, "{r:?}");
        jig.source.0[2] = u16::MAX;
        assert_eq!(jig.measure(16), Err(JigError::OpenProbe(Channel::Ve)));
        jig.source.0[2] = 150;
        jig.source.0[3] = 4095;
        assert_eq!(jig.measure(16), Err(JigError::OutOfRange(Channel::Vc)));
        jig.source.0 = [20, 0, 0, 0];
        assert_eq!(jig.measure(16), Err(JigError::Supply));
    }
}
