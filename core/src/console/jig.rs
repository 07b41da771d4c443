//! What the front end supplies: the jig that reads the board's nodes, a small store for the
//! settings and the calibration, and a monotonic clock.
//!
//! Each trait is small on purpose. The host's local console has no jig (readings are typed with
//! `check`) and keeps the store in memory; the instrument reads an ADC or an emulated jig and
//! keeps the store in flash.

use crate::response::CapState;
use crate::stage::{Capacitor, Fault, Readings};

/// A jig input channel: the node it reads.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Channel {
    /// The board's supply.
    Vcc,
    /// Base.
    Vb,
    /// Emitter.
    Ve,
    /// Collector.
    Vc,
}

impl Channel {
    /// Every channel, in the order of [`Calibration::channels`].
    pub const ALL: [Channel; 4] = [Self::Vcc, Self::Vb, Self::Ve, Self::Vc];

    /// The machine name: "vcc", "vb", "ve", "vc".
    pub fn name(self) -> &'static str {
        match self {
            Self::Vcc => "vcc",
            Self::Vb => "vb",
            Self::Ve => "ve",
            Self::Vc => "vc",
        }
    }

    /// Index 0 ..= 3 in [`Channel::ALL`].
    pub fn index(self) -> usize {
        match self {
            Self::Vcc => 0,
            Self::Vb => 1,
            Self::Ve => 2,
            Self::Vc => 3,
        }
    }

    /// The channel of a machine name (case-insensitive).
    pub fn parse(text: &str) -> Option<Channel> {
        Self::ALL
            .into_iter()
            .find(|c| c.name().eq_ignore_ascii_case(text))
    }
}

/// Why the jig could not do what was asked.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum JigError {
    /// This jig has no such function (the host's local console has no jig at all).
    NotSupported,
    /// A probe reads as not connected.
    OpenProbe(Channel),
    /// A channel is outside its rated input range.
    OutOfRange(Channel),
    /// The supply of the board is missing or outside the range the jig accepts.
    Supply,
    /// The converter did not answer in time.
    Timeout,
    /// Any other hardware failure.
    Hardware,
}

impl core::fmt::Display for JigError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            Self::NotSupported => f.write_str("this jig cannot do that"),
            Self::OpenProbe(c) => write!(f, "probe {} is open", c.name()),
            Self::OutOfRange(c) => write!(f, "{} is outside the rated input range", c.name()),
            Self::Supply => f.write_str("board supply missing or out of range"),
            Self::Timeout => f.write_str("the converter did not answer"),
            Self::Hardware => f.write_str("jig hardware failure"),
        }
    }
}

/// Two-point calibration of one channel: volts = gain · raw + offset.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChannelCal {
    /// Gain (dimensionless, near 1).
    pub gain: f64,
    /// Offset, V.
    pub offset: f64,
}

impl ChannelCal {
    /// No correction.
    pub const IDENTITY: ChannelCal = ChannelCal {
        gain: 1.0,
        offset: 0.0,
    };

    /// Apply to a raw reading, V.
    pub fn apply(&self, raw: f64) -> f64 {
        self.gain * raw + self.offset
    }

    /// The calibration through two points: raw `raw_low` read with `low` volts applied and
    /// `raw_high` with `high` volts applied. `None` when the points are less than 0.1 V apart
    /// (raw or applied) or the gain falls outside 0.5 ..= 2.
    pub fn from_points(low: f64, raw_low: f64, high: f64, raw_high: f64) -> Option<ChannelCal> {
        let (dv, dr) = (high - low, raw_high - raw_low);
        if !(dv.is_finite() && dr.is_finite()) || libm::fabs(dv) < 0.1 || libm::fabs(dr) < 0.1 {
            return None;
        }
        let gain = dv / dr;
        let offset = low - gain * raw_low;
        ((0.5..=2.0).contains(&gain) && offset.is_finite()).then_some(ChannelCal { gain, offset })
    }
}

/// The signal path's correction allowed (`calibrate gain`): the load input may read from half to
/// twice what the source input reads for the same signal.
pub const SIGNAL_CAL_RANGE: (f64, f64) = (0.5, 2.0);

/// The calibration of every channel, in [`Channel::ALL`] order, and of the signal path.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Calibration {
    /// Per channel.
    pub channels: [ChannelCal; 4],
    /// Signal path: what the load input reads per unit the source input reads for the same
    /// signal (1: matched inputs). [`Jig::gain`] divides the ratio it reads by this.
    pub signal: f64,
}

impl Default for Calibration {
    fn default() -> Self {
        Self {
            channels: [ChannelCal::IDENTITY; 4],
            signal: 1.0,
        }
    }
}

impl Calibration {
    /// The signal correction that makes a gain read as `measured` (with this calibration)
    /// through a reference of known gain `known` read as `known`: `None` when either is not a
    /// positive finite number or the correction falls outside [`SIGNAL_CAL_RANGE`].
    pub fn signal_from(&self, measured: f64, known: f64) -> Option<f64> {
        if !(measured.is_finite() && measured > 0.0 && known.is_finite() && known > 0.0) {
            return None;
        }
        let k = measured * self.signal / known;
        (k >= SIGNAL_CAL_RANGE.0 && k <= SIGNAL_CAL_RANGE.1).then_some(k)
    }
}

impl Calibration {
    /// One channel's calibration.
    pub fn get(&self, c: Channel) -> ChannelCal {
        self.channels
            .get(c.index())
            .copied()
            .unwrap_or(ChannelCal::IDENTITY)
    }

    /// Set one channel's calibration.
    pub fn set(&mut self, c: Channel, cal: ChannelCal) {
        if let Some(slot) = self.channels.get_mut(c.index()) {
            *slot = cal;
        }
    }
}

/// The jig: reads the board's node voltages.
pub trait Jig {
    /// Read every node, averaging `samples` conversions (1 ..= 1024), calibrated, V.
    fn measure(&mut self, samples: u16) -> Result<Readings, JigError>;

    /// Read one channel without calibration (after the input divider ratio), averaging
    /// `samples` conversions, V. Used by `calibrate`.
    fn raw(&mut self, channel: Channel, samples: u16) -> Result<f64, JigError> {
        let _ = (channel, samples);
        Err(JigError::NotSupported)
    }

    /// Use this calibration from now on (given at start-up from the store, and after
    /// `calibrate`).
    fn set_calibration(&mut self, cal: &Calibration) -> Result<(), JigError> {
        let _ = cal;
        Err(JigError::NotSupported)
    }

    /// Emulated jigs only: make the emulated board carry `fault` (`None`: a good board, no
    /// capacitor fault either).
    fn inject(&mut self, fault: Option<Fault>) -> Result<(), JigError> {
        let _ = fault;
        Err(JigError::NotSupported)
    }

    /// Emulated jigs only: put `state` in a capacitor's place on the emulated board.
    fn inject_capacitor(&mut self, which: Capacitor, state: CapState) -> Result<(), JigError> {
        let _ = (which, state);
        Err(JigError::NotSupported)
    }

    /// The signal test: drive a small tone of `f_hz` through RS into the board's input, sample
    /// the source and the load, and give |v(load)/v(source EMF)| at `f_hz` (V/V, calibrated:
    /// the ratio the inputs read divided by [`Calibration::signal`]).
    /// The DC nodes are read first; the tone follows.
    fn gain(&mut self, f_hz: f64) -> Result<f64, JigError> {
        let _ = f_hz;
        Err(JigError::NotSupported)
    }

    /// The input resistance of the jig's measuring inputs from each node to ground, Ω (its
    /// input dividers; every input stays connected while the nodes are read): the console's
    /// default `input-r`. `None` (the default): inputs that do not load the board.
    fn input_r(&self) -> Option<f64> {
        None
    }
}

/// Size of one store record, bytes.
pub const RECORD_LEN: usize = 384;

/// Designs a unit keeps by name (`keep`, `designs`, `choose`, `forget`).
pub const DESIGN_SLOTS: u8 = 8;

/// A store record slot.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Slot {
    /// The stage, profile, meter, lock state and PIN, and the name of the chosen design: what
    /// the unit starts with.
    Settings,
    /// The jig calibration.
    Calibration,
    /// A kept design, `0 .. DESIGN_SLOTS`.
    Design(u8),
}

impl Slot {
    /// Every slot: settings, calibration, then the designs.
    pub fn all() -> impl Iterator<Item = Slot> {
        [Slot::Settings, Slot::Calibration]
            .into_iter()
            .chain((0..DESIGN_SLOTS).map(Slot::Design))
    }

    /// A small number per slot (0 settings, 1 calibration, 16 + n design n): a store's key.
    pub fn key(self) -> u8 {
        match self {
            Slot::Settings => 0,
            Slot::Calibration => 1,
            Slot::Design(n) => 16u8.saturating_add(n),
        }
    }
}

/// Why the store failed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum StoreError {
    /// This front end keeps nothing.
    NotSupported,
    /// Reading or writing the medium failed.
    Medium,
    /// The medium has no room for the record.
    Full,
}

impl core::fmt::Display for StoreError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.write_str(match self {
            Self::NotSupported => "this unit keeps no settings",
            Self::Medium => "the store could not be read or written",
            Self::Full => "the store is full",
        })
    }
}

/// A small non-volatile store of fixed-size records (the console checks their contents itself:
/// magic, version and checksum).
pub trait Store {
    /// Read the record of `slot` into `record`; `Ok(false)` when the slot was never written.
    fn load(&mut self, slot: Slot, record: &mut [u8; RECORD_LEN]) -> Result<bool, StoreError>;
    /// Replace the record of `slot`.
    fn save(&mut self, slot: Slot, record: &[u8; RECORD_LEN]) -> Result<(), StoreError>;
    /// Forget the record of `slot` (a later `load` gives `Ok(false)`).
    fn forget(&mut self, slot: Slot) -> Result<(), StoreError> {
        let _ = slot;
        Err(StoreError::NotSupported)
    }
}

/// A monotonic millisecond clock (for the PIN back-off and the cost figures).
pub trait Clock {
    /// Milliseconds since any fixed start; never goes back.
    fn now_ms(&mut self) -> u64;
}

/// A jig that cannot measure (readings are typed with `check`).
#[derive(Debug, Clone, Copy, Default)]
pub struct NoJig;

impl Jig for NoJig {
    fn measure(&mut self, _samples: u16) -> Result<Readings, JigError> {
        Err(JigError::NotSupported)
    }
}

/// A store held in memory (lost at power-off).
#[derive(Debug, Clone, Default)]
pub struct MemoryStore {
    /// The records of [`Slot::Settings`], [`Slot::Calibration`] and the designs, if written.
    pub records: [Option<[u8; RECORD_LEN]>; 2 + DESIGN_SLOTS as usize],
}

fn slot_index(slot: Slot) -> usize {
    match slot {
        Slot::Settings => 0,
        Slot::Calibration => 1,
        Slot::Design(n) => 2 + usize::from(n),
    }
}

impl Store for MemoryStore {
    fn load(&mut self, slot: Slot, record: &mut [u8; RECORD_LEN]) -> Result<bool, StoreError> {
        match self.records.get(slot_index(slot)) {
            Some(Some(r)) => {
                *record = *r;
                Ok(true)
            }
            _ => Ok(false),
        }
    }

    fn save(&mut self, slot: Slot, record: &[u8; RECORD_LEN]) -> Result<(), StoreError> {
        let r = self
            .records
            .get_mut(slot_index(slot))
            .ok_or(StoreError::Medium)?;
        *r = Some(*record);
        Ok(())
    }

    fn forget(&mut self, slot: Slot) -> Result<(), StoreError> {
        let r = self
            .records
            .get_mut(slot_index(slot))
            .ok_or(StoreError::Medium)?;
        *r = None;
        Ok(())
    }
}
