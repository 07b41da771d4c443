//! Fixed-size store records and the design hash.
//!
//! Both use one canonical byte encoding: numbers as IEEE 754 binary64, little-endian; an absent
//! optional value as the byte 0, a present one as 1 and its bytes.
//!
//! **Design hash** ([`design_hash`]): FNV-1a, 64 bits (offset basis 0xcbf29ce484222325, prime
//! 0x100000001b3), over the canonical encoding of the stage (polarity byte 0 NPN / 1 PNP; VCC
//! value, tolerance; R1, R2, RC, RE1, RE2 value, tolerance each; RL optional; RS; CIN, COUT, CE
//! optional value and tolerance each) followed by the profile (hFE min, typ, max, reverse, tc,
//! IS, Early optional, VCE(sat), power rating, maximum junction temperature): 246 bytes. Printed as
//! 16 lower-case hex digits.
//!
//! **Record** ([`RECORD_LEN`] bytes): magic `BJ` + slot letter, version byte, payload, zero
//! padding, and the FNV-1a 64 of everything before the last 8 bytes in those last 8 bytes.

use super::jig::{Calibration, ChannelCal, Slot, RECORD_LEN};
use super::parse::{Name, Pin, NAME_MAX};
use crate::device::Profile;
use crate::limits::Meter;
use crate::settings::{Encode, InputMode, Inputs, TestSettings};
use crate::stage::{Part, Polarity, Stage};

/// Record format version (4: measuring inputs in the settings, the name of the chosen design;
/// design records).
const VERSION: u8 = 4;
/// Calibration record version (5: the signal path's correction after the channels; version 4
/// records, channels only, are still read, with the signal path uncorrected).
const CAL_VERSION: u8 = 5;
use crate::fnv::{fnv1a64_from as fnv1a, OFFSET_BASIS as FNV_OFFSET};

struct Hasher(u64);

impl Encode for Hasher {
    fn put(&mut self, bytes: &[u8]) {
        self.0 = fnv1a(self.0, bytes);
    }
}

/// Writes into a fixed buffer; bytes past its end are counted as overflow.
struct Writer<'a> {
    buf: &'a mut [u8],
    pos: usize,
    overflow: bool,
}

impl Encode for Writer<'_> {
    fn put(&mut self, bytes: &[u8]) {
        match self.buf.get_mut(self.pos..self.pos + bytes.len()) {
            Some(dst) => {
                dst.copy_from_slice(bytes);
                self.pos += bytes.len();
            }
            None => self.overflow = true,
        }
    }
}

struct Reader<'a> {
    buf: &'a [u8],
    pos: usize,
}

impl Reader<'_> {
    fn take<const K: usize>(&mut self) -> Option<[u8; K]> {
        let b = self.buf.get(self.pos..self.pos + K)?;
        self.pos += K;
        let mut out = [0u8; K];
        out.copy_from_slice(b);
        Some(out)
    }
    fn u8(&mut self) -> Option<u8> {
        self.take::<1>().map(|b| b[0])
    }
    fn f64(&mut self) -> Option<f64> {
        self.take::<8>().map(f64::from_le_bytes)
    }
    fn opt(&mut self) -> Option<Option<f64>> {
        match self.u8()? {
            0 => Some(None),
            1 => Some(Some(self.f64()?)),
            _ => None,
        }
    }
    fn part(&mut self) -> Option<Part> {
        Some(Part::new(self.f64()?, self.f64()?))
    }
    fn opt_part(&mut self) -> Option<Option<Part>> {
        match self.u8()? {
            0 => Some(None),
            1 => Some(Some(self.part()?)),
            _ => None,
        }
    }
}

fn get_design(r: &mut Reader<'_>) -> Option<(Stage, Profile)> {
    let polarity = match r.u8()? {
        0 => Polarity::Npn,
        1 => Polarity::Pnp,
        _ => return None,
    };
    let stage = Stage {
        polarity,
        vcc: r.part()?,
        r1: r.part()?,
        r2: r.part()?,
        rc: r.part()?,
        re1: r.part()?,
        re2: r.part()?,
        rl: r.opt()?,
        rs: r.f64()?,
        cin: r.opt_part()?,
        cout: r.opt_part()?,
        ce: r.opt_part()?,
    };
    let profile = Profile {
        beta_min: r.f64()?,
        beta_typ: r.f64()?,
        beta_max: r.f64()?,
        beta_rev: r.f64()?,
        beta_tc: r.f64()?,
        is_25: r.f64()?,
        early: r.opt()?,
        vce_sat: r.f64()?,
        power_25: r.f64()?,
        tj_max: r.f64()?,
    };
    Some((stage, profile))
}

/// The design hash of a stage and its transistor profile (see the module documentation).
pub fn design_hash(stage: &Stage, profile: &Profile) -> u64 {
    let mut h = Hasher(FNV_OFFSET);
    h.design(stage, profile);
    h.0
}

/// Everything the console keeps across a restart, apart from the calibration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Settings {
    /// The stage.
    pub stage: Stage,
    /// The transistor.
    pub profile: Profile,
    /// Nominal ambient, °C.
    pub temp_c: f64,
    /// Lowest ambient of the range the limits, spread and diagnosis cover, °C.
    pub temp_min_c: f64,
    /// Highest ambient of that range, °C.
    pub temp_max_c: f64,
    /// Meter and jig accuracy.
    pub meter: Meter,
    /// The measuring inputs attached while the nodes are read.
    pub inputs: Inputs,
    /// The PIN while locked (`None`: unlocked).
    pub pin: Option<Pin>,
    /// Wrong PINs given since the last right one.
    pub pin_failures: u32,
    /// The kept design these settings were chosen from (`None` once the stage or the meter is
    /// edited, or when never chosen).
    pub design: Option<Name>,
}

fn seal(slot: Slot, rec: &mut [u8; RECORD_LEN], write: impl FnOnce(&mut Writer<'_>)) -> bool {
    seal_version(slot, VERSION, rec, write)
}

fn seal_version(
    slot: Slot,
    version: u8,
    rec: &mut [u8; RECORD_LEN],
    write: impl FnOnce(&mut Writer<'_>),
) -> bool {
    *rec = [0; RECORD_LEN];
    let (body, sum) = rec.split_at_mut(RECORD_LEN - 8);
    let mut w = Writer {
        buf: body,
        pos: 0,
        overflow: false,
    };
    w.put(&[b'B', b'J', slot_letter(slot), version]);
    write(&mut w);
    let ok = !w.overflow;
    let h = fnv1a(FNV_OFFSET, body);
    sum.copy_from_slice(&h.to_le_bytes());
    ok
}

fn open(slot: Slot, rec: &[u8; RECORD_LEN]) -> Option<Reader<'_>> {
    match open_version(slot, rec)? {
        (VERSION, r) => Some(r),
        _ => None,
    }
}

/// A sound record of `slot` and its version.
fn open_version(slot: Slot, rec: &[u8; RECORD_LEN]) -> Option<(u8, Reader<'_>)> {
    let (body, sum) = rec.split_at(RECORD_LEN - 8);
    let mut s = [0u8; 8];
    s.copy_from_slice(sum);
    if fnv1a(FNV_OFFSET, body) != u64::from_le_bytes(s) {
        return None;
    }
    let mut r = Reader { buf: body, pos: 0 };
    let [b, j, letter, version] = r.take::<4>()?;
    ([b, j, letter] == [b'B', b'J', slot_letter(slot)]).then_some((version, r))
}

fn slot_letter(slot: Slot) -> u8 {
    match slot {
        Slot::Settings => b'S',
        Slot::Calibration => b'C',
        Slot::Design(_) => b'D',
    }
}

fn put_name(w: &mut Writer<'_>, name: Option<Name>) {
    match name {
        None => w.u8(0),
        Some(n) => {
            w.u8(n.len);
            w.put(&n.bytes);
        }
    }
}

fn get_name(r: &mut Reader<'_>) -> Option<Option<Name>> {
    match r.u8()? {
        0 => Some(None),
        len => {
            let bytes = r.take::<NAME_MAX>()?;
            let text = core::str::from_utf8(bytes.get(..usize::from(len))?).ok()?;
            Some(Some(Name::parse(text)?))
        }
    }
}

/// The part of the settings a kept design carries: stage, transistor, ambient range, meter,
/// measuring inputs.
fn put_setup(w: &mut Writer<'_>, s: &Settings) {
    w.design(&s.stage, &s.profile);
    w.f64(s.temp_c);
    w.f64(s.temp_min_c);
    w.f64(s.temp_max_c);
    w.f64(s.meter.gain_error);
    w.f64(s.meter.offset);
    w.f64(s.meter.divider_tol);
    w.opt(s.inputs.r);
    w.u8(match s.inputs.mode {
        InputMode::Together => 0,
        InputMode::One => 1,
    });
}

/// Reads what [`put_setup`] wrote into settings with no PIN and no design name.
fn get_setup(r: &mut Reader<'_>) -> Option<Settings> {
    let (stage, profile) = get_design(r)?;
    let temp_c = r.f64()?;
    let temp_min_c = r.f64()?;
    let temp_max_c = r.f64()?;
    let meter = Meter {
        gain_error: r.f64()?,
        offset: r.f64()?,
        divider_tol: r.f64()?,
    };
    let inputs = Inputs {
        r: r.opt()?,
        mode: match r.u8()? {
            0 => InputMode::Together,
            1 => InputMode::One,
            _ => return None,
        },
    };
    Some(Settings {
        stage,
        profile,
        temp_c,
        temp_min_c,
        temp_max_c,
        meter,
        inputs,
        pin: None,
        pin_failures: 0,
        design: None,
    })
}

/// Encode a kept design (its name and the stage, transistor, ambient and meter of `settings`;
/// not the lock) into the record of a design slot.
pub fn encode_design(name: Name, settings: &Settings, slot: u8, rec: &mut [u8; RECORD_LEN]) {
    // 17 + 294 bytes of 376: always fits (tested).
    let _fits = seal(Slot::Design(slot), rec, |w| {
        put_name(w, Some(name));
        put_setup(w, settings);
    });
}

/// Decode a kept design: its name and settings (no PIN, the name as `design`); `None` when the
/// record is damaged or of another version.
pub fn decode_design(slot: u8, rec: &[u8; RECORD_LEN]) -> Option<(Name, Settings)> {
    let mut r = open(Slot::Design(slot), rec)?;
    let name = get_name(&mut r)??;
    let mut s = get_setup(&mut r)?;
    s.design = Some(name);
    Some((name, s))
}

impl Settings {
    /// The ambient range as the spread, limits and diagnosis take it, read through the inputs.
    pub fn variation(&self) -> crate::spread::Variation {
        crate::judge::variation(&self.test_settings())
    }

    /// The test settings the verdict depends on besides the stage and profile.
    pub fn test_settings(&self) -> TestSettings {
        TestSettings {
            temp_min_c: self.temp_min_c,
            temp_max_c: self.temp_max_c,
            meter: self.meter,
            inputs: self.inputs,
            signal: crate::signaltest::SignalMeter::DEFAULT,
        }
    }

    /// Encode into a store record.
    pub fn encode(&self, rec: &mut [u8; RECORD_LEN]) {
        // 328 bytes of 376: always fits (tested).
        let _fits = seal(Slot::Settings, rec, |w| {
            put_setup(w, self);
            match self.pin {
                None => w.u8(0),
                Some(p) => {
                    w.u8(p.len);
                    w.put(&p.digits);
                }
            }
            w.put(&self.pin_failures.to_le_bytes());
            put_name(w, self.design);
        });
    }

    /// Decode a store record; `None` when it is damaged or of another version.
    pub fn decode(rec: &[u8; RECORD_LEN]) -> Option<Settings> {
        let mut r = open(Slot::Settings, rec)?;
        let mut s = get_setup(&mut r)?;
        s.pin = match r.u8()? {
            0 => None,
            len => {
                let digits = r.take::<8>()?;
                let p = Pin { digits, len };
                let text = core::str::from_utf8(digits.get(..usize::from(len))?).ok()?;
                (Pin::parse(text)? == p).then_some(p)
            }
        };
        s.pin_failures = u32::from_le_bytes(r.take::<4>()?);
        s.design = get_name(&mut r)?;
        Some(s)
    }
}

/// Encode a calibration into a store record (version `CAL_VERSION`: the four channels' gain
/// and offset, then the signal path's correction).
pub fn encode_calibration(cal: &Calibration, rec: &mut [u8; RECORD_LEN]) {
    let _fits = seal_version(Slot::Calibration, CAL_VERSION, rec, |w| {
        for c in cal.channels {
            w.f64(c.gain);
            w.f64(c.offset);
        }
        w.f64(cal.signal);
    });
}

/// Decode a calibration record; `None` when it is damaged, of an unknown version or holds a
/// signal correction outside [`super::jig::SIGNAL_CAL_RANGE`]. A version 4 record (channels
/// only) is read with the signal path uncorrected.
pub fn decode_calibration(rec: &[u8; RECORD_LEN]) -> Option<Calibration> {
    let (version, mut r) = open_version(Slot::Calibration, rec)?;
    if version != VERSION && version != CAL_VERSION {
        return None;
    }
    let mut cal = Calibration::default();
    for slot in cal.channels.iter_mut() {
        *slot = ChannelCal {
            gain: r.f64()?,
            offset: r.f64()?,
        };
    }
    if version == CAL_VERSION {
        let k = r.f64()?;
        let (lo, hi) = super::jig::SIGNAL_CAL_RANGE;
        if !(k >= lo && k <= hi) {
            return None;
        }
        cal.signal = k;
    }
    Some(cal)
}

/// Encode a calibration as a version 4 record (channels only), as units before the signal
/// path's correction kept it: for the tests of reading old records.
#[doc(hidden)]
pub fn encode_calibration_v4(cal: &Calibration, rec: &mut [u8; RECORD_LEN]) {
    let _fits = seal_version(Slot::Calibration, VERSION, rec, |w| {
        for c in cal.channels {
            w.f64(c.gain);
            w.f64(c.offset);
        }
    });
}
