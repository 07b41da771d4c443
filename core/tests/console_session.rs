//! A scripted session through the console engine: every command, the help text and the errors.

// The parts and predict tests need the spread and the analysis; a budget build tests that it
// refuses them.
#![cfg_attr(
    not(all(feature = "spread", feature = "analysis")),
    allow(unused_imports)
)]

use biasjig_core::console::jig::{MemoryStore, NoJig};
use biasjig_core::console::{
    parse, Calibration, Channel, Code, Console, Identity, Jig, JigError, COMMANDS, LINE_MAX,
};
use biasjig_core::stage::{Fault, Readings};
use biasjig_testkit::session::{
    assert_contains, assert_line_with, assert_values, cmd, console_with, err, errs, ok, oks, send,
    value, HandClock,
};

/// A jig that reads fixed node voltages through a raw gain error, and records injections.
#[derive(Default)]
struct FakeJig {
    nodes: [f64; 4],
    raw_gain: f64,
    cal: Calibration,
    injected: Option<Option<Fault>>,
    applied: f64,
}

impl Jig for FakeJig {
    fn measure(&mut self, samples: u16) -> Result<Readings, JigError> {
        assert!((1..=1024).contains(&samples));
        let v = |c: Channel| self.cal.get(c).apply(self.nodes[c.index()] * self.raw_gain);
        Ok(Readings {
            vcc: v(Channel::Vcc),
            vb: v(Channel::Vb),
            ve: v(Channel::Ve),
            vc: v(Channel::Vc),
        })
    }
    fn raw(&mut self, _channel: Channel, _samples: u16) -> Result<f64, JigError> {
        Ok(self.applied * self.raw_gain + 0.01)
    }
    fn set_calibration(&mut self, cal: &Calibration) -> Result<(), JigError> {
        self.cal = *cal;
        Ok(())
    }
    fn inject(&mut self, fault: Option<Fault>) -> Result<(), JigError> {
        self.injected = Some(fault);
        Ok(())
    }
}

type Fake = Console<FakeJig, MemoryStore, HandClock>;

fn console() -> (Fake, HandClock) {
    let clock = HandClock::default();
    let jig = FakeJig {
        nodes: [12.0, 2.0, 1.35, 5.5],
        raw_gain: 1.0,
        ..FakeJig::default()
    };
    (console_with("0.1.0", jig, clock.clone()), clock)
}

/// A fresh console in machine mode (`key=value` data lines).
fn machine() -> Fake {
    let (mut c, _) = console();
    ok(&mut c, "mode machine");
    c
}

/// A fresh console's human reply to `line` (its data lines as one text), and the console then
/// put in machine mode.
#[cfg(any(feature = "spread", feature = "analysis"))]
fn human_then_machine(line: &str) -> (String, Fake) {
    let (mut c, _) = console();
    let human = ok(&mut c, line).join("\n");
    ok(&mut c, "mode machine");
    (human, c)
}

#[test]
fn identify_and_idn_answer_four_ieee_488_2_fields() {
    let (mut c, _) = console();
    let d = ok(&mut c, "*IDN?");
    assert_eq!(d, ["biasjig,console,0,0.1.0"]);
    // IEEE 488.2 style: four comma-separated fields.
    assert_eq!(d[0].split(',').count(), 4);
    assert_eq!(ok(&mut c, "identify"), d);
    assert_eq!(ok(&mut c, "*idn?"), d);
}

/// The command words of docs/protocol.md's command table (the contract a station script is
/// written from): the first word of each `code` span in the first cell of each row.
fn documented_commands() -> Vec<String> {
    let doc = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/../docs/protocol.md"))
        .expect("docs/protocol.md");
    let table = doc
        .split("\n## Commands\n")
        .nth(1)
        .and_then(|t| t.split("\n#").next())
        .expect("a Commands section");
    let mut words = Vec::new();
    for row in table.lines().filter(|l| l.starts_with("| `")) {
        let cell = row.split(" | ").next().unwrap_or("");
        for (k, span) in cell.split('`').enumerate() {
            if k % 2 == 1 {
                let w = span.split(' ').next().unwrap_or("").to_ascii_lowercase();
                if !words.contains(&w) {
                    words.push(w);
                }
            }
        }
    }
    words
}

#[test]
fn help_lists_the_command_table_as_documented_and_the_safety_cautions() {
    let (mut c, _) = console();
    let d = ok(&mut c, "help");
    // The table is the protocol document's command list, no more and no less.
    let documented = documented_commands();
    assert!(documented.len() >= 32, "{documented:?}");
    for w in &documented {
        assert!(
            COMMANDS.iter().any(|s| s.is(w)),
            "{w} documented but not a command"
        );
    }
    for s in &COMMANDS {
        for w in s.names.split(' ') {
            assert!(
                documented.iter().any(|d| d == w),
                "{w} not in docs/protocol.md"
            );
            // The parser knows every word of the table.
            if let Err(e) = parse::parse(w) {
                assert_ne!(e.code, Code::Unknown, "{w}");
            }
        }
        // `help` lists each row once, and `help NAME` shows it alone.
        let row = format!("{:<40} {}", s.usage, s.help);
        assert_eq!(
            d.iter().filter(|l| l.trim_start() == row).count(),
            1,
            "{row}"
        );
        // (`help set` lists the names `set` takes instead.)
        for w in s.names.split(' ').filter(|w| *w != "set") {
            assert_eq!(
                ok(&mut c, &format!("help {w}")),
                [format!("  {row}")],
                "{w}"
            );
        }
    }
    assert_eq!(d.len(), 1 + COMMANDS.len() + 4);
    let d = d.join("\n");
    for caution in [
        "de-energise the board before changing probes or parts",
        "within their rated range",
        "No mains-connected circuits without isolation",
        "Local codes and licensed practice take precedence",
    ] {
        assert!(d.contains(caution), "help lacks {caution:?}");
    }
    assert!(ok(&mut c, "help set").join(" ").contains("beta-min"));
    assert_eq!(ok(&mut c, "help measure").len(), 1);
    err(&mut c, "help frobnicate", "UNKNOWN");
}

#[test]
fn set_shows_in_stage_and_profile_and_the_hash_follows_the_parts() {
    let mut c = machine();
    assert_eq!(ok(&mut c, "mode"), ["mode=machine"]);
    let s = ok(&mut c, "stage");
    assert_eq!(value(&s, "r1"), "47000");
    assert_eq!(value(&s, "polarity"), "npn");
    let h0 = value(&ok(&mut c, "hash"), "hash");
    assert_eq!(h0.len(), 16);
    ok(&mut c, "set r1 56k 1%");
    let s = ok(&mut c, "stage");
    assert_eq!(value(&s, "r1"), "56000");
    assert_eq!(value(&s, "r1_tol"), "0.01");
    let h1 = value(&ok(&mut c, "hash"), "hash");
    assert_ne!(h0, h1, "the hash follows the parts");
    ok(&mut c, "set r1 47k 5%");
    assert_eq!(
        value(&ok(&mut c, "hash"), "hash"),
        h0,
        "same parts, same hash"
    );
    // Each change shows in the stage at once.
    for (line, key, want) in [
        ("set rl none", "rl", "none"),
        ("set ce 220u", "ce", "2.2e-4"),
        ("set tol 1", "rc_tol", "0.01"),
        ("set polarity pnp", "polarity", "pnp"),
        ("set temp -10", "temp", "-10"),
        ("SET VCC 9", "vcc", "9"),
    ] {
        ok(&mut c, line);
        assert_eq!(value(&ok(&mut c, "stage"), key), want, "{line}");
    }
    // Profile figures.
    oks(
        &mut c,
        &[
            "set beta 150",
            "set beta-max 400",
            "set vbe 0.6",
            "set early 80",
            "set beta-tc 0.4%",
        ],
    );
    let p = ok(&mut c, "profile");
    assert_values(
        &p,
        &[("beta_min", "150"), ("beta_max", "400"), ("early", "80")],
    );
    assert!((value(&p, "vbe").parse::<f64>().unwrap() - 0.6).abs() < 1e-9);
    // Errors name the field, the value and what is allowed; the stage stays as it was.
    let e = err(&mut c, "set r1 4x7", "VALUE");
    assert_contains(&e, &["r1", "4x7", "4k7"]);
    errs(
        &mut c,
        &[
            ("set zz 1", "VALUE"),
            ("set r1", "USAGE"),
            ("set beta-min 500", "RANGE"),
            ("set vcc 0.1", "RANGE"),
            ("set temp 500", "RANGE"),
            ("set polarity xyz", "VALUE"),
        ],
    );
    assert_eq!(value(&ok(&mut c, "stage"), "vcc"), "9");
    // *RST: the defaults again.
    ok(&mut c, "*RST");
    assert_eq!(value(&ok(&mut c, "hash"), "hash"), h0);
}

#[cfg(feature = "spread")]
#[test]
fn parts_lists_iec_60062_codes_and_colour_bands() {
    let (human, mut c) = human_then_machine("parts");
    // IEC 60062: 47 kΩ 5 % is yellow violet orange gold; 4.7 kΩ yellow violet red gold.
    assert_contains(&human, &["47k", "yellow violet orange gold"]);
    assert_contains(&human, &["4k7", "yellow violet red gold"]);
    let m = ok(&mut c, "parts 5");
    assert_line_with(&m, &["part=R2", "bands=brown,black,black,red,gold"]);
    assert_line_with(&m, &["part=CE", "code=470u"]);
    err(&mut c, "parts 7", "VALUE");
}

#[cfg(feature = "analysis")]
#[test]
fn predict_matches_the_engine() {
    use biasjig_core::console::{default_profile, default_stage};
    use biasjig_core::predict::predict;
    use biasjig_core::solve::Conditions;
    let (human, mut c) = human_then_machine("predict");
    assert_contains(&human, &["Q-point", "active"]);
    let d = ok(&mut c, "predict");
    let p = predict(
        &default_stage(),
        &default_profile(),
        Conditions::typical(&default_profile()),
    )
    .unwrap();
    // Machine numbers parse back exactly.
    assert_eq!(value(&d, "vc").parse::<f64>().unwrap(), p.op.vc);
    assert_eq!(value(&d, "ic").parse::<f64>().unwrap(), p.op.ic);
    assert_eq!(
        value(&d, "gain").parse::<f64>().unwrap(),
        p.midband.unwrap().gain
    );
    assert_eq!(value(&d, "region"), "active");
    // Common practice: VBE about 0.6 to 0.7 V in the active region.
    let vbe: f64 = value(&d, "vbe").parse().unwrap();
    assert!((0.6..0.7).contains(&vbe), "{vbe}");
}

#[test]
fn limits_come_from_the_limits_module() {
    use biasjig_core::console::{default_profile, default_stage};
    use biasjig_core::limits::{limits, Meter};
    use biasjig_core::spread::Variation;
    let mut c = machine();
    let d = ok(&mut c, "limits");
    let l = limits(
        &default_stage(),
        &default_profile(),
        &Variation::at(25.0),
        &Meter::default(),
        12.0,
    )
    .unwrap();
    let vb = d.iter().find(|x| x.starts_with("node=vb ")).unwrap();
    assert_eq!(vb, &format!("node=vb low={} high={}", l.vb.low, l.vb.high));
    assert!(l.vb.low < l.vb.high);
    ok(&mut c, "mode human");
    assert!(ok(&mut c, "limits").join(" ").contains("VB"));
}

#[test]
fn meter_measure_calibrate_and_inject_reach_the_jig() {
    let mut c = machine();
    err(&mut c, "readings", "NO_READINGS");
    oks(
        &mut c,
        &["meter gain 1%", "meter offset 2m", "meter divider 0.2"],
    );
    let m = ok(&mut c, "meter");
    assert_values(
        &m,
        &[("gain", "0.01"), ("offset", "0.002"), ("divider", "0.002")],
    );
    err(&mut c, "meter gain 50", "RANGE");
    err(&mut c, "meter volume 3", "USAGE");
    let d = ok(&mut c, "measure 32");
    assert_eq!(value(&d, "vb"), "2");
    assert_eq!(value(&d, "source"), "measured");
    assert_eq!(ok(&mut c, "readings"), d);
    errs(
        &mut c,
        &[
            ("measure 0", "VALUE"),
            ("measure 5000", "VALUE"),
            ("measure 1 2", "USAGE"),
        ],
    );
    // Two-point calibration of a channel reading 2 % high with a 10 mV offset.
    c.jig.raw_gain = 1.02;
    c.jig.applied = 1.0;
    ok(&mut c, "calibrate vb low 1");
    c.jig.applied = 10.0;
    let k = ok(&mut c, "calibrate vb high 10");
    let gain: f64 = value(&k, "gain").parse().unwrap();
    assert!((gain - 1.0 / 1.02).abs() < 1e-12, "{gain}");
    err(&mut c, "calibrate vc high 10", "USAGE");
    let shown = ok(&mut c, "calibrate");
    assert_eq!(shown.len(), 5, "four channels and the signal path");
    // The jig now corrects the vb channel: a node of 2 V reads 2 V within the offset of raw().
    let d = ok(&mut c, "measure");
    let vb: f64 = value(&d, "vb").parse().unwrap();
    assert!((vb - 2.0).abs() < 0.011, "{vb}");
    c.jig.applied = 1.0;
    ok(&mut c, "calibrate ve low 1");
    errs(
        &mut c,
        &[
            ("calibrate ve high 1.05", "VALUE"),
            ("calibrate xx low 1", "VALUE"),
            ("calibrate vb middle 1", "VALUE"),
        ],
    );
    ok(&mut c, "calibrate reset");
    assert_eq!(c.jig.cal, Calibration::default());
    ok(&mut c, "inject r1 open");
    assert_eq!(
        c.jig.injected,
        Some(Some(Fault::Open(biasjig_core::stage::Resistor::R1)))
    );
    oks(&mut c, &["inject q be_open", "inject rc 47", "inject none"]);
    assert_eq!(c.jig.injected, Some(None));
    err(&mut c, "inject q sideways", "VALUE");
    err(&mut c, "inject", "USAGE");
}

#[test]
fn no_jig_says_not_supported() {
    let mut c = console_with("0", NoJig, HandClock::default());
    let lines = send(&mut c, b"measure\ninject none\ncalibrate vb low 1\n");
    assert_eq!(lines.len(), 3);
    assert!(
        lines.iter().all(|l| l.starts_with("err NOT_SUPPORTED ")),
        "{lines:?}"
    );
}

#[cfg(all(feature = "synthesis", feature = "spread", feature = "analysis"))]
#[test]
fn lock_refuses_changes_and_slows_wrong_pins() {
    let (mut c, clock) = console();
    err(&mut c, "lock 12", "VALUE");
    err(&mut c, "lock", "USAGE");
    ok(&mut c, "lock 2468");
    err(&mut c, "lock 1111", "LOCKED");
    for line in [
        "set r1 1k",
        "*RST",
        "meter gain 1",
        "calibrate reset",
        "calibrate vb low 1",
        "design",
        "pick 1",
        "requirement gain 10",
    ] {
        err(&mut c, line, "LOCKED");
    }
    // A technician can still look, measure and check.
    for line in [
        "stage",
        "parts",
        "predict",
        "measure",
        "readings",
        "meter",
        "hash",
        "calibrate",
    ] {
        ok(&mut c, line);
    }
    // Wrong PINs: three free tries, then a doubling wait.
    err(&mut c, "unlock 0000", "PIN");
    err(&mut c, "unlock 0000", "PIN");
    let e = err(&mut c, "unlock 0000", "PIN");
    assert!(e.contains("next try in 1 s"), "{e}");
    let e = err(&mut c, "unlock 2468", "WAIT");
    assert!(e.contains("wait 1 s"), "{e}");
    clock.0.set(1000);
    let e = err(&mut c, "unlock 1357", "PIN");
    assert!(e.contains("next try in 2 s"), "{e}");
    clock.0.set(2999);
    err(&mut c, "unlock 2468", "WAIT");
    clock.0.set(3000);
    let (_, s) = cmd(&mut c, "unlock 2468");
    assert_eq!(s, "ok unlocked");
    ok(&mut c, "set r1 1k");
    assert_eq!(cmd(&mut c, "unlock 2468").1, "ok not locked");
}

#[test]
fn lock_survives_a_restart_through_the_store() {
    let (mut c, clock) = console();
    ok(&mut c, "set r1 39k");
    ok(&mut c, "lock 13579");
    for _ in 0..4 {
        let _ = cmd(&mut c, "unlock 99999");
    }
    let store = c.store.clone();
    let hash = c.design_hash();
    let jig = FakeJig {
        raw_gain: 1.0,
        ..FakeJig::default()
    };
    let mut again = Console::new(Identity::new("console", "0"), jig, store, clock.clone());
    assert_eq!(again.design_hash(), hash);
    assert!(again.is_locked());
    // The back-off is still in force after the restart.
    err(&mut again, "unlock 13579", "WAIT");
    clock.0.set(60_000);
    assert_eq!(cmd(&mut again, "unlock 13579").1, "ok unlocked");
}

#[test]
fn save_keeps_settings_and_calibration() {
    let (mut c, clock) = console();
    oks(&mut c, &["set rc 3k9", "meter gain 0.3", "save"]);
    let store = c.store.clone();
    let mut again = Console::new(
        Identity::new("console", "0"),
        FakeJig::default(),
        store,
        clock,
    );
    ok(&mut again, "mode machine");
    assert_eq!(value(&ok(&mut again, "stage"), "rc"), "3900");
    assert_eq!(value(&ok(&mut again, "meter"), "gain"), "0.003");
}

#[test]
fn every_line_end_and_every_bad_line_gets_one_reply() {
    let (mut c, _) = console();
    // Blank lines and comments answer ok (hosts synchronise with a blank line).
    assert_eq!(
        send(&mut c, b"\n\r\n\r# comment\n"),
        ["ok", "ok", "ok", "ok"]
    );
    // CRLF is one line end.
    assert_eq!(send(&mut c, b"*IDN?\r\n").len(), 2);
    // Junk, control bytes, bad UTF-8, overlong: one err each.
    assert!(send(&mut c, b"frobnicate\n")[0].starts_with("err UNKNOWN "));
    assert!(send(&mut c, b"sta\x1bge\n")[0].starts_with("err CONTROL "));
    assert!(send(&mut c, b"\x00\n")[0].starts_with("err CONTROL "));
    assert!(
        send(&mut c, b"stage\x08\n")[0].starts_with("err CONTROL "),
        "backspace with echo off"
    );
    assert!(send(&mut c, b"\xc3\x28\n")[0].starts_with("err ENCODING "));
    let long = vec![b'a'; LINE_MAX + 1];
    let mut input = long.clone();
    input.extend_from_slice(b"\n*IDN?\n");
    let lines = send(&mut c, &input);
    assert_eq!(lines.len(), 3, "{lines:?}");
    assert!(lines[0].starts_with("err TOO_LONG "));
    assert_eq!(lines[2], "ok");
    // Exactly the buffer is fine.
    let mut input = vec![b' '; LINE_MAX - 5];
    input.extend_from_slice(b"stage\n");
    assert!(send(&mut c, &input).last().unwrap() == "ok");
    // Too many words.
    err(&mut c, "a b c d e f g h i", "USAGE");
    err(&mut c, "stage now", "USAGE");
    // Byte-by-byte delivery gives the same answer.
    let mut all = Vec::new();
    for b in b"*IDN?\r\n" {
        all.extend(send(&mut c, &[*b]));
    }
    assert_eq!(all, ["biasjig,console,0,0.1.0", "ok"]);
    // An unfinished last line is answered at the end of input.
    let mut out = Vec::new();
    c.feed(b"*IDN?", &mut out).unwrap();
    assert!(out.is_empty());
    c.finish(&mut out).unwrap();
    assert!(String::from_utf8(out).unwrap().ends_with("ok\r\n"));
}

#[test]
fn echo_repeats_the_input_and_backspace_edits_it() {
    let (mut c, _) = console();
    let mut out = Vec::new();
    c.feed(b"echo on\r\n", &mut out).unwrap();
    assert_eq!(String::from_utf8(out).unwrap(), "ok\r\n");
    let mut out = Vec::new();
    c.feed(b"*IDX\x08N?\r\n", &mut out).unwrap();
    assert_eq!(
        String::from_utf8(out).unwrap(),
        "*IDX\x08 \x08N?\r\nbiasjig,console,0,0.1.0\r\nok\r\n"
    );
    let mut out = Vec::new();
    c.feed(b"echo off\n", &mut out).unwrap();
    assert_eq!(String::from_utf8(out).unwrap(), "echo off\r\nok\r\n");
    assert_eq!(send(&mut c, b"x\n"), ["err UNKNOWN command: x: see help"]);
}

/// A writer that fails (or takes nothing) after some bytes.
struct Broken {
    left: usize,
    zero: bool,
}

impl embedded_io::ErrorType for Broken {
    type Error = embedded_io::ErrorKind;
}

impl embedded_io::Write for Broken {
    fn write(&mut self, buf: &[u8]) -> Result<usize, Self::Error> {
        if self.left == 0 {
            return if self.zero {
                Ok(0)
            } else {
                Err(embedded_io::ErrorKind::BrokenPipe)
            };
        }
        let n = buf.len().min(self.left);
        self.left -= n;
        Ok(n)
    }
    fn flush(&mut self) -> Result<(), Self::Error> {
        Ok(())
    }
}

#[test]
fn write_errors_end_the_call() {
    use biasjig_core::console::WriteError;
    for zero in [false, true] {
        for left in [0, 3, 40, 200] {
            let (mut c, _) = console();
            let mut w = Broken { left, zero };
            let r = c.feed(b"help\nstage\n", &mut w);
            if zero {
                assert_eq!(r, Err(WriteError::Zero));
            } else {
                assert_eq!(r, Err(WriteError::Io(embedded_io::ErrorKind::BrokenPipe)));
            }
        }
    }
}

#[cfg(all(feature = "spread", feature = "analysis"))]
#[test]
fn replies_stay_within_bounds() {
    use biasjig_core::console::MAX_DATA_LINES;
    let (mut c, _) = console();
    for mode in ["human", "machine"] {
        ok(&mut c, &format!("mode {mode}"));
        for line in [
            "help",
            "help set",
            "stage",
            "profile",
            "parts",
            "parts 5",
            "predict",
            "calibrate",
            "meter",
            "hash",
            "measure",
        ] {
            let (data, status) = cmd(&mut c, line);
            assert_eq!(status, "ok", "{line}: nothing cut");
            assert!(data.len() <= MAX_DATA_LINES, "{line}: {} lines", data.len());
        }
    }
}

/// Issue 11 (units): a reading or a temperature with another unit's letters is refused, not read
/// as a value of the field (`1.67mA` was taken as 1.67 mV, `25V` as 25 °C).
#[test]
fn readings_and_temperatures_with_another_unit_are_refused() {
    let mut c = machine();
    // Each refusal names the field whose unit is wrong.
    for (line, field) in [
        ("check 12 2.29 1.67mA 3.72", "ve"),
        ("set temp 25V", "temp"),
        ("set temp-min 20F", "temp-min"),
        ("set tj-max 150A", "tj-max"),
        ("calibrate vb low 1mA", "low"),
    ] {
        let e = err(&mut c, line, "VALUE");
        assert!(e.starts_with(&format!("err VALUE {field}: ")), "{e}");
    }
    // The field's own unit is still accepted.
    ok(&mut c, "set temp 30C");
    ok(&mut c, "set temp 25°C");
}

/// Without the spread and the analysis the unit refuses `parts` and `predict`, naming the PC
/// command that does it.
#[cfg(not(any(feature = "spread", feature = "analysis")))]
#[test]
fn a_unit_without_the_spread_and_analysis_names_the_pc_commands() {
    let (mut c, _) = console();
    for (l, pc) in [("parts", "biasjig design"), ("predict", "biasjig analyze")] {
        let e = err(&mut c, l, "NOT_SUPPORTED");
        assert!(e.contains(pc), "{l}: {e}");
    }
}
