//! `calibrate gain F KNOWN`: the signal path's correction taken through a reference of known
//! gain, applied by the jig's gain measurement, kept through a restart, and old calibration
//! records (version 4, channels only) still read.

#![cfg_attr(not(feature = "signal-test"), allow(dead_code, unused_imports))]

use biasjig_core::console::jig::{MemoryStore, Slot, Store, RECORD_LEN};
use biasjig_core::console::record::{decode_calibration, encode_calibration_v4};
use biasjig_core::console::{Calibration, Channel, ChannelCal, Console, Identity, Jig, JigError};
use biasjig_core::stage::Readings;
use biasjig_testkit::fnv::fnv1a64 as fnv1a;
use biasjig_testkit::session::{console_with, send, FixedClock as NoClock};

/// A jig whose load input reads `load_over_source` of what its source input reads; the true
/// gain of what is fitted is `true_gain`. Its gain measurement divides by the calibration's
/// signal correction, as [`Jig::gain`] says.
struct ToneJig {
    true_gain: f64,
    load_over_source: f64,
    cal: Calibration,
    asked: Vec<f64>,
}

impl Jig for ToneJig {
    fn measure(&mut self, _samples: u16) -> Result<Readings, JigError> {
        Err(JigError::NotSupported)
    }
    fn set_calibration(&mut self, cal: &Calibration) -> Result<(), JigError> {
        self.cal = *cal;
        Ok(())
    }
    fn gain(&mut self, f_hz: f64) -> Result<f64, JigError> {
        self.asked.push(f_hz);
        Ok(self.true_gain * self.load_over_source / self.cal.signal)
    }
}

type C = Console<ToneJig, MemoryStore, NoClock>;

fn jig(load_over_source: f64) -> ToneJig {
    ToneJig {
        true_gain: 1.0,
        load_over_source,
        cal: Calibration::default(),
        asked: Vec::new(),
    }
}

fn lines(c: &mut C, line: &str) -> Vec<String> {
    send(c, format!("{line}\n").as_bytes())
}

fn status(c: &mut C, line: &str) -> String {
    lines(c, line).pop().unwrap_or_default()
}

fn correction(data: &[String]) -> f64 {
    data.iter()
        .find_map(|l| l.strip_prefix("signal load_over_source="))
        .unwrap_or_else(|| panic!("no correction in {data:?}"))
        .parse()
        .unwrap()
}

#[cfg(feature = "signal-test")]
#[test]
fn a_through_connection_corrects_the_gain_and_the_correction_is_kept() {
    // Load input reading 3 % high: a through connection (gain 1) reads 1.03 before.
    let mut c = console_with("0", jig(1.03), NoClock);
    assert_eq!(status(&mut c, "mode machine"), "ok");
    let d = lines(&mut c, "calibrate gain 1k 1");
    assert_eq!(d.last().map(String::as_str), Some("ok"), "{d:?}");
    assert!((correction(&d) - 1.03).abs() < 1e-12, "{d:?}");
    assert_eq!(c.jig.asked, [1000.0]);
    // The jig's gain measurement now reads the reference true, and a board of gain 30 as 30.
    c.jig.true_gain = 30.0;
    let g = c.jig.gain(1000.0).unwrap();
    assert!((g - 30.0).abs() < 1e-9, "{g}");
    // Shown with the channels.
    let shown = lines(&mut c, "calibrate");
    assert!((correction(&shown) - 1.03).abs() < 1e-12);
    // A second calibration starts from the corrected reading: a precision 1:10 divider read
    // through the corrected path keeps the same correction.
    c.jig.true_gain = 0.1;
    let d = lines(&mut c, "calibrate gain 100 0.1");
    assert!((correction(&d) - 1.03).abs() < 1e-12, "{d:?}");

    // Kept through a power cut: a new console on the same store gives the jig the correction.
    let store = c.store.clone();
    let again = Console::new(Identity::new("console", "0"), jig(1.03), store, NoClock);
    assert!((again.jig.cal.signal - 1.03).abs() < 1e-12);

    // Reset forgets it.
    assert_eq!(status(&mut c, "calibrate reset"), "ok");
    assert_eq!(c.jig.cal.signal, 1.0);
}

#[cfg(feature = "signal-test")]
#[test]
fn bad_calibrations_are_refused_and_change_nothing() {
    let mut c = console_with("0", jig(1.0), NoClock);
    // No reference fitted: the jig reads almost nothing, the correction would be far out.
    c.jig.true_gain = 0.01;
    let s = status(&mut c, "calibrate gain 1k 1");
    assert!(s.starts_with("err VALUE "), "{s}");
    assert!(s.contains("0.5 to 2"), "{s}");
    assert_eq!(c.jig.cal.signal, 1.0);
    for (line, code) in [
        ("calibrate gain 0 1", "RANGE"),
        ("calibrate gain 1k 0", "RANGE"),
        ("calibrate gain 1kV 1", "VALUE"),
        ("calibrate gain x 1", "VALUE"),
        ("calibrate gain 1k", "USAGE"),
    ] {
        let s = status(&mut c, line);
        assert!(s.starts_with(&format!("err {code} ")), "{line}: {s}");
    }
    assert_eq!(c.jig.cal.signal, 1.0);
}

#[test]
fn a_version_4_calibration_record_is_read_with_the_signal_path_uncorrected() {
    let mut cal = Calibration::default();
    cal.set(
        Channel::Vb,
        ChannelCal::from_points(1.0, 1.02, 10.0, 10.2).unwrap(),
    );
    let mut rec = [0u8; RECORD_LEN];
    encode_calibration_v4(&cal, &mut rec);
    let got = decode_calibration(&rec).unwrap();
    assert_eq!(got.get(Channel::Vb), cal.get(Channel::Vb));
    assert_eq!(got.signal, 1.0);
    // A console starting from that record uses the channels.
    let mut store = MemoryStore::default();
    store.save(Slot::Calibration, &rec).unwrap();
    let c = Console::new(Identity::new("console", "0"), jig(1.0), store, NoClock);
    assert_eq!(c.jig.cal.get(Channel::Vb), cal.get(Channel::Vb));
    // A sound record (checksum right) of an unknown version is refused whole.
    let mut bad = rec;
    bad[3] = 9;
    let h = fnv1a(&bad[..RECORD_LEN - 8]);
    bad[RECORD_LEN - 8..].copy_from_slice(&h.to_le_bytes());
    assert!(decode_calibration(&bad).is_none());
    bad[3] = 4;
    let h = fnv1a(&bad[..RECORD_LEN - 8]);
    bad[RECORD_LEN - 8..].copy_from_slice(&h.to_le_bytes());
    assert!(
        decode_calibration(&bad).is_some(),
        "the re-sealing is right"
    );
}

/// Without the signal test the unit refuses `calibrate gain` and changes nothing.
#[cfg(not(feature = "signal-test"))]
#[test]
fn a_unit_without_the_signal_test_refuses_a_gain_calibration() {
    let mut c = console_with("0", jig(1.03), NoClock);
    let s = status(&mut c, "calibrate gain 1k 1");
    assert!(s.starts_with("err NOT_SUPPORTED calibrate gain:"), "{s}");
    assert_eq!(c.jig.cal.signal, 1.0);
}
