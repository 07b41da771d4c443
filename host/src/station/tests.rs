//! The station against a fake instrument: the real console engine behind a memory pair.

use std::time::Duration;

use super::*;
use biasjig_core::console::record::design_hash;
use biasjig_core::settings::{digest, InputMode, TestSettings};
use biasjig_core::stage::Stage;
use serde_json::json;

use crate::board::StationSink;
use crate::boardlog;
use crate::designfile;
use crate::link::{Link, LinkError, MemoryPort, Port};
use crate::store::TraceArgs;
use biasjig_core::console::jig::MemoryStore;
use biasjig_core::console::{default_profile, default_stage, Console, Identity, Jig, JigError};
use biasjig_core::solve::{solve, Conditions};
use biasjig_core::stage::{Fault, Readings, Resistor};
use embedded_io_adapters::std::FromStd;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Arc;

use crate::local::StdClock;

/// The stage the station pushes in these tests.
fn pushed() -> Stage {
    let mut stage = default_stage();
    stage.r1.value = 56e3;
    stage
}

/// Board i is a good board when i is even and has R2 open when i is odd: its readings are
/// the engine's operating point of the pushed stage with that fault.
struct Boards(Arc<AtomicUsize>);

impl Jig for Boards {
    fn measure(&mut self, _samples: u16) -> Result<Readings, JigError> {
        let i = self.0.load(Ordering::SeqCst);
        let stage = pushed();
        let board = if i % 2 == 0 {
            stage
        } else {
            stage.with_fault(Fault::Open(Resistor::R2))
        };
        let p = default_profile();
        let op = solve(&board, &p, Conditions::typical(&p)).map_err(|_| JigError::Hardware)?;
        Ok(Readings {
            vcc: stage.vcc.value,
            vb: op.vb,
            ve: op.ve,
            vc: op.vc,
        })
    }
}

fn engine(board: Arc<AtomicUsize>) -> Console<Boards, MemoryStore, StdClock> {
    Console::new(
        Identity::new("fake", "1"),
        Boards(board),
        MemoryStore::default(),
        StdClock::default(),
    )
}

/// The fake instrument: the real console engine behind a memory pair; `test` is the
/// engine's own (measure, check, diagnose). Every `reset_every`-th `test` it resets instead
/// (forgets the design, says a boot line of garbage, answers nothing); every
/// `garbage_every`-th `test` it answers garbage first.
fn instrument(
    mut port: MemoryPort,
    board: Arc<AtomicUsize>,
    reset_every: usize,
    garbage_every: usize,
) {
    let mut c = engine(board.clone());
    let mut tests = 0;
    let mut pending = Vec::new();
    let mut buf = [0u8; 256];
    loop {
        let n = match port.recv(&mut buf, Duration::from_secs(30)) {
            Ok(0) => continue,
            Ok(n) => n,
            Err(_) => return,
        };
        pending.extend_from_slice(&buf[..n]);
        while let Some(pos) = pending.iter().position(|b| *b == b'\n') {
            let line: Vec<u8> = pending.drain(..=pos).collect();
            let text = String::from_utf8_lossy(&line[..pos]).trim().to_owned();
            let mut out = Vec::new();
            if text == "test" {
                tests += 1;
                if tests % reset_every == 0 {
                    c = engine(board.clone());
                    pending.clear();
                    let _ = port.send(b"\xff\xfe\x00boot\r\n");
                    break;
                }
                if tests % garbage_every == 0 {
                    out.extend_from_slice(b"\x01\x02garbage\r\n");
                }
            }
            c.line(&text, &mut FromStd::new(&mut out)).unwrap();
            if port.send(&out).is_err() {
                return;
            }
        }
    }
}

/// A console engine on `jig` served on one end of a memory pair (its `feed`, as the
/// instrument's byte router does); returns the other end.
fn serve_jig<J: Jig + Send + 'static>(jig: J) -> MemoryPort {
    let (host, mut unit) = MemoryPort::pair();
    std::thread::spawn(move || {
        let mut c = Console::new(
            Identity::new("fake", "1"),
            jig,
            MemoryStore::default(),
            StdClock::default(),
        );
        let mut buf = [0u8; 256];
        while let Ok(n) = unit.recv(&mut buf, Duration::from_secs(30)) {
            let mut out = Vec::new();
            let _ = c.feed(&buf[..n], &mut FromStd::new(&mut out));
            if unit.send(&out).is_err() {
                return;
            }
        }
    });
    host
}

/// The plan of a station pushing [`pushed`] with the default transistor and `settings`.
fn plan(settings: &TestSettings) -> Plan {
    Plan::new(
        pushed(),
        &default_profile(),
        settings,
        provenance(settings, json!({}), "file-digest"),
        "demo-1".into(),
        Duration::from_secs(5),
    )
    .unwrap()
}

/// A station pushing [`pushed`] with the default transistor and `settings` over `host`
/// (opened once), with the digest and design hash they give.
fn station_on(
    host: MemoryPort,
    settings: &TestSettings,
) -> (
    Station<MemoryPort, impl FnMut() -> Result<MemoryPort, LinkError>>,
    String,
    u64,
) {
    let plan = plan(settings);
    let (digest, hash) = (plan.digest.clone(), plan.hash);
    let mut h = Some(host);
    let st = Station::new(
        move || h.take().ok_or(LinkError::Disconnected("gone".into())),
        plan,
    )
    .unwrap();
    (st, digest, hash)
}

/// A fresh log file `name` in this process's folder `dir` under the temporary folder.
fn fresh_log(dir: &str, name: &str) -> std::path::PathBuf {
    let dir = std::env::temp_dir().join(format!("{dir}-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let log = dir.join(name);
    let _ = std::fs::remove_file(&log);
    log
}

#[test]
fn resets_and_garbage_lose_no_record() {
    let (host, unit) = MemoryPort::pair();
    let board = Arc::new(AtomicUsize::new(0));
    let b2 = board.clone();
    std::thread::spawn(move || instrument(unit, b2, 4, 3));
    let stage = pushed();
    let profile = default_profile();
    let settings = TestSettings::DEFAULT;
    let (digest, hash) = expected(&stage, &profile, &settings).unwrap();
    let mut host = Some(host.clone());
    let keep = host.clone();
    let mut st = Station::new(
        move || Ok(host.take().or_else(|| keep.clone()).unwrap()),
        plan(&settings),
    )
    .unwrap();
    st.set_reply_timeout(Duration::from_millis(1500));
    st.prepare().unwrap();
    let log = fresh_log("biasjig-station", "boards.jsonl");
    // Serial numbers typed; the board counter follows the serial (board i is SN-i).
    struct Feed(Arc<AtomicUsize>, usize, Vec<u8>, usize);
    impl std::io::Read for Feed {
        fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
            if self.3 >= self.2.len() {
                if self.1 >= 12 {
                    return Ok(0);
                }
                self.0.store(self.1, Ordering::SeqCst);
                self.2 = format!("SN-{}\n", self.1).into_bytes();
                self.3 = 0;
                self.1 += 1;
            }
            let n = buf.len().min(self.2.len() - self.3);
            buf[..n].copy_from_slice(&self.2[self.3..self.3 + n]);
            self.3 += n;
            Ok(n)
        }
    }
    let input = std::io::BufReader::with_capacity(1, Feed(board, 0, Vec::new(), 0));
    let mut screen = Vec::new();
    let mut sink = StationSink::open(Some(&log), &TraceArgs::default()).unwrap();
    let n = run_loop(&mut st, input, &mut screen, &mut sink, false).unwrap();
    assert_eq!(n, 12);
    assert!(st.resyncs >= 2, "resets happened: {}", st.resyncs);
    let c = boardlog::read(&log).unwrap();
    assert!(c.warnings.is_empty(), "{:?}", c.warnings);
    let recs = c.records;
    assert_eq!(recs.len(), 12, "no record lost or doubled");
    for (i, r) in recs.iter().enumerate() {
        assert_eq!(r["serial"], format!("SN-{i}"));
        assert_eq!(r["verdict"], if i % 2 == 0 { "pass" } else { "fail" });
        assert_eq!(r["design"]["hash"], format!("{hash:016x}"));
        assert_eq!(r["digest"], digest.as_str());
        assert_eq!(r["design"]["digest"], "file-digest");
        assert_eq!(r["settings"]["temp_min"], 25.0);
        assert_eq!(r["design"]["id"], "demo-1");
        assert!(r["time"].as_str().unwrap().ends_with('Z'), "{r}");
        assert_eq!(r["readings"]["vcc"], 12.0);
        assert_eq!(r["nodes"].as_object().unwrap().len(), 6);
        assert!(r["derived"]["region"].is_string());
        if i % 2 == 1 {
            let f = &r["faults"][0];
            let named = f["part"] == "R2"
                || f["equivalent"]
                    .as_array()
                    .unwrap()
                    .iter()
                    .any(|e| e["part"] == "R2");
            assert!(named, "R2 open named first: {r}");
            assert!(r["explained"].is_boolean());
        } else {
            assert_eq!(r["faults"].as_array().unwrap().len(), 0);
        }
    }
    let shown = String::from_utf8(screen).unwrap();
    assert!(
        shown.contains("P A S S") && shown.contains("F A I L"),
        "{shown}"
    );
}

#[test]
fn gain_lines_go_into_the_record_as_check_gives_them() {
    let reply = crate::link::Reply {
        data: vec![
            "vcc=12 vb=2.05 ve=1.39 vc=5.74 source=measured".into(),
            "verdict=fail explained=1".into(),
            "ac f=30 measured=2.68 low=13.25 high=16.61 ok=0".into(),
            "ac f=1 measured=2.44 low=3.15 high=5.03 ok=0".into(),
            "fault=CE mode=open score=1 estimate=none equivalent=none".into(),
        ],
        status: "ok".into(),
    };
    let r = record("S1", "d", 7, &reply, "t", false);
    assert_eq!(r["ac"][0]["f"], 30.0);
    assert_eq!(r["ac"][1]["measured"], 2.44);
    assert_eq!(r["ac"][1]["ok"], false);
    assert_eq!(r["faults"][0]["part"], "CE");
    // Without gain lines there is no "ac" key (as check without --ac).
    let dc = crate::link::Reply {
        data: vec!["verdict=pass".into()],
        status: "ok".into(),
    };
    assert!(record("S2", "d", 7, &dc, "t", false).get("ac").is_none());
}

#[test]
fn pushed_design_hash_matches_the_design_file_hash() {
    let stage = pushed();
    let profile = default_profile();
    let settings = TestSettings {
        temp_min_c: -10.0,
        temp_max_c: 55.0,
        ..TestSettings::DEFAULT
    };
    let (d, h) = expected(&stage, &profile, &settings).unwrap();
    assert_eq!(h, design_hash(&stage, &profile));
    assert_eq!(format!("{h:016x}"), designfile::hash(&stage, &profile));
    assert_eq!(d, digest(&stage, &profile, &settings).to_string());
}

/// Every setting the verdict depends on is pushed: each one changed alone changes the
/// digest the instrument reports after the push, and the digest of the pushed lines is the
/// core's digest of the values.
#[test]
fn every_setting_is_pushed_and_covered_by_the_digest() {
    let stage = pushed();
    let profile = default_profile();
    let base = TestSettings::DEFAULT;
    let mut variants = vec![base];
    let mut t = base;
    t.temp_min_c = 0.0;
    t.temp_max_c = 40.0;
    variants.push(t);
    let mut t = base;
    t.meter.gain_error = 0.01;
    variants.push(t);
    let mut t = base;
    t.meter.offset = 0.002;
    variants.push(t);
    let mut t = base;
    t.meter.divider_tol = 0.005;
    variants.push(t);
    let mut t = base;
    t.inputs.r = Some(110e3);
    variants.push(t);
    let mut t = base;
    t.inputs.r = Some(110e3);
    t.inputs.mode = InputMode::One;
    variants.push(t);
    let mut s2 = stage;
    s2.vcc.tol = 0.1;
    let mut p2 = profile;
    p2.beta_min = 100.0;
    p2.beta_max = 300.0;
    let mut seen = std::collections::HashSet::new();
    for (st, pr, ts) in variants
        .iter()
        .map(|t| (stage, profile, *t))
        .chain([(s2, profile, base), (stage, p2, base)])
    {
        let (d, _) = expected(&st, &pr, &ts).unwrap();
        assert_eq!(d, digest(&st, &pr, &ts).to_string(), "{ts:?}");
        assert!(seen.insert(d), "a setting not covered: {ts:?}");
    }
}

/// A unit that holds other settings (another ambient, meter and inputs) is pushed to the
/// station's before any board, and a unit that changes behind the station's back makes it
/// push again.
#[test]
fn a_unit_with_other_settings_is_pushed_before_the_lot() {
    let (host, unit) = MemoryPort::pair();
    std::thread::spawn(move || serve(unit));
    let stage = pushed();
    let profile = default_profile();
    let settings = TestSettings {
        temp_min_c: 10.0,
        temp_max_c: 40.0,
        meter: biasjig_core::limits::Meter {
            gain_error: 0.01,
            offset: 0.002,
            divider_tol: 0.002,
        },
        inputs: biasjig_core::settings::Inputs {
            r: Some(1e6),
            mode: InputMode::Together,
        },
        signal: biasjig_core::signaltest::SignalMeter::DEFAULT,
    };
    let (mut st, _, hash) = station_on(host.clone(), &settings);
    let mut link = Link::new(host);
    link.sync(Duration::from_secs(5)).unwrap();
    assert!(link.command("mode machine").unwrap().ok());
    // The unit holds the same stage with another meter and ambient: the old stage hash alone
    // would have let this pass.
    for l in push_lines(&stage, &profile, &TestSettings::DEFAULT) {
        assert!(link.command(&l).unwrap().ok(), "{l}");
    }
    let r = link.command("hash").unwrap();
    assert_eq!(r.value("hash"), Some(format!("{hash:016x}").as_str()));
    st.prepare().unwrap();
    assert!(st.digest_ok().unwrap());
    let r = st.link.command("meter").unwrap();
    assert_eq!(r.value("gain"), Some("0.01"), "{r:?}");
    // Changed behind the station's back: the board is not judged under it.
    assert!(st.link.command("set temp-max 50").unwrap().ok());
    assert!(!st.digest_ok().unwrap());
}

/// A jig whose probe is open on every board whose number is a multiple of 3.
struct OpenProbeEvery3(Arc<AtomicUsize>);

impl Jig for OpenProbeEvery3 {
    fn measure(&mut self, samples: u16) -> Result<Readings, JigError> {
        if self.0.load(Ordering::SeqCst) % 3 == 0 {
            return Err(JigError::OpenProbe(biasjig_core::console::Channel::Vb));
        }
        Boards(self.0.clone()).measure(samples)
    }
}

/// An instrument run goes on past a board the jig cannot read: it is logged as refused with
/// the unit's reason, and the next boards are judged.
#[test]
fn a_refused_board_is_logged_and_the_run_goes_on() {
    let board = Arc::new(AtomicUsize::new(1));
    let host = serve_jig(OpenProbeEvery3(board.clone()));
    let (mut st, _, _) = station_on(host, &TestSettings::DEFAULT);
    st.prepare().unwrap();
    let log = fresh_log("biasjig-refused", "boards.jsonl");
    // Serials SN-2, SN-3 (open probe), SN-4; the jig's board follows the serial.
    struct Feed(Arc<AtomicUsize>, Vec<&'static str>);
    impl std::io::Read for Feed {
        fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
            let Some(s) = self.1.first().copied() else {
                return Ok(0);
            };
            self.1.remove(0);
            if let Some(n) = s.strip_prefix("SN-").and_then(|n| n.trim().parse().ok()) {
                self.0.store(n, Ordering::SeqCst);
            }
            buf[..s.len()].copy_from_slice(s.as_bytes());
            Ok(s.len())
        }
    }
    let input =
        std::io::BufReader::with_capacity(64, Feed(board, vec!["SN-2\n", "SN-3\n", "SN-4\n"]));
    let mut screen = Vec::new();
    let mut sink = StationSink::open(Some(&log), &TraceArgs::default()).unwrap();
    let n = run_loop(&mut st, input, &mut screen, &mut sink, false).unwrap();
    assert_eq!(n, 2, "two boards judged");
    let recs = boardlog::read(&log).unwrap().records;
    let v: Vec<(&str, &str)> = recs
        .iter()
        .map(|r| {
            (
                r["serial"].as_str().unwrap(),
                r["verdict"].as_str().unwrap(),
            )
        })
        .collect();
    assert_eq!(v, [("SN-2", "pass"), ("SN-3", "refused"), ("SN-4", "pass")]);
    let reason = recs[1]["reason"].as_str().unwrap();
    assert!(
        reason.starts_with("JIG") && reason.contains("open"),
        "{reason}"
    );
    let shown = String::from_utf8(screen).unwrap();
    assert!(shown.contains("R E F U S E D"), "{shown}");
}

/// A jig reader whose inputs load every node with 11 MΩ.
struct LoadingJig(Arc<AtomicUsize>);

impl Jig for LoadingJig {
    fn measure(&mut self, samples: u16) -> Result<Readings, JigError> {
        Boards(self.0.clone()).measure(samples)
    }
    fn input_r(&self) -> Option<f64> {
        Some(11e6)
    }
}

/// With no measuring inputs stated, the station judges with the instrument's own (its jig's
/// dividers), pushes them back as they are, and the digest and records carry them.
#[test]
fn unstated_inputs_are_the_instruments_own() {
    let host = serve_jig(LoadingJig(Arc::new(AtomicUsize::new(0))));
    let (stage, profile, settings) = (pushed(), default_profile(), TestSettings::DEFAULT);
    let (st, digest0, _) = station_on(host, &settings);
    let mut st = st.inputs_from_unit(profile, settings, false);
    st.prepare().unwrap();
    assert_eq!(st.inputs().r, Some(11e6));
    let with_jig = TestSettings {
        inputs: biasjig_core::settings::Inputs {
            r: Some(11e6),
            mode: InputMode::Together,
        },
        ..settings
    };
    assert_eq!(st.digest(), digest(&stage, &profile, &with_jig).to_string());
    assert_ne!(st.digest(), digest0);
    let r = st.link.command("meter").unwrap();
    assert_eq!(r.value("input_r"), Some("1.1e7"), "{r:?}");
    let rec = st.stamp(json!({"design": {}}));
    assert_eq!(rec["settings"]["inputs"]["r"], 11e6);
}
