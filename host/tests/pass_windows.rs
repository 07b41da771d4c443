//! Issue 11: a PASS means what it says. One set of windows (`limits` == `check` == the console,
//! bit for bit, continuous in the ambient), measuring inputs modelled, the supply judged, a stage
//! that does not work refused, units checked, what judged a board on record. Each test names the
//! finding of the issue it pins (it fails on the code before the fix). Stages are invented;
//! readings come from the engine.

use std::io::Write;
use std::path::PathBuf;
use std::process::{Command, Output, Stdio};

use biasjig_core::device::{is_from_vbe, Profile};
use biasjig_core::judge::readings_through;
use biasjig_core::settings::{InputMode, Inputs};
use biasjig_core::solve::Conditions;
use biasjig_core::stage::{DeviceFault, Fault, Part, Polarity, Resistor, Stage};
use serde_json::Value;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_biasjig"))
}

fn run(args: &[String]) -> Output {
    bin().args(args).output().expect("run biasjig")
}

fn strs(a: &[&str]) -> Vec<String> {
    a.iter().map(|s| s.to_string()).collect()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn json(o: &Output) -> Value {
    serde_json::from_slice(&o.stdout).unwrap_or_else(|e| {
        panic!(
            "not JSON ({e}): {} {}",
            String::from_utf8_lossy(&o.stdout),
            stderr(o)
        )
    })
}

fn temp(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("biasjig-pass-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let p = dir.join(name);
    let _ = std::fs::remove_file(&p);
    p
}

/// Run the in-process console on `lines`; the replies (data and status lines) per input line.
fn console(lines: &[String]) -> Vec<Vec<String>> {
    let mut child = bin()
        .arg("console")
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    {
        let mut stdin = child.stdin.take().unwrap();
        for l in lines {
            writeln!(stdin, "{l}").unwrap();
        }
    }
    let out = child.wait_with_output().unwrap();
    let text = String::from_utf8_lossy(&out.stdout).into_owned();
    let mut replies = Vec::new();
    let mut cur = Vec::new();
    for l in text.lines() {
        let l = l.trim_end_matches('\r').to_string();
        let status = l == "ok" || l.starts_with("ok ") || l.starts_with("err ");
        cur.push(l);
        if status {
            replies.push(std::mem::take(&mut cur));
        }
    }
    replies
}

/// A small deterministic generator (splitmix64) for the random stages.
struct Draw(u64);

impl Draw {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }
    fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
    fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.unit()
    }
    /// A value rounded to 3 significant digits (a part value as typed).
    fn part(&mut self, lo: f64, hi: f64) -> f64 {
        let v = lo * (hi / lo).powf(self.unit());
        let e = v.log10().floor() - 2.0;
        (v / 10f64.powf(e)).round() * 10f64.powf(e)
    }
}

/// One random case: a forward-active stage by flags, test settings, a measured supply.
struct Case {
    stage: Stage,
    profile: Profile,
    /// Flags of the stage and settings, shared by `limits` and `check`.
    flags: Vec<String>,
    /// Console lines setting the same stage and settings.
    set: Vec<String>,
    inputs: Inputs,
    temp: (f64, f64),
    measured_vcc: f64,
}

fn case(seed: u64) -> Case {
    let mut g = Draw(seed);
    let pnp = g.unit() < 0.3;
    let vcc = g.part(6.0, 30.0);
    let ic = g.range(0.3e-3, 3e-3);
    let ve = vcc * g.range(0.08, 0.2);
    let re = g.part(ve / ic * 0.9, ve / ic * 1.1);
    let re1 = g.part(re * 0.1, re * 0.3);
    let re2 = g.part((re - re1).max(10.0), (re - re1).max(10.0) * 1.01);
    let vb = ve + 0.65;
    let idiv = ic / g.range(5.0, 20.0);
    let r2 = g.part(vb / idiv * 0.95, vb / idiv * 1.05);
    let r1 = g.part((vcc - vb) / idiv * 0.95, (vcc - vb) / idiv * 1.05);
    let rc = g.part((vcc - ve) * 0.4 / ic, (vcc - ve) * 0.5 / ic);
    let tol = [1.0, 2.0, 5.0, 10.0][(g.next() % 4) as usize];
    let vcc_tol = [2.0, 5.0, 10.0][(g.next() % 3) as usize];
    let beta = g.part(80.0, 400.0);
    let spread = g.unit() < 0.7;
    let (bmin, bmax) = if spread {
        (
            g.part(beta * 0.4, beta * 0.8),
            g.part(beta * 1.2, beta * 2.0),
        )
    } else {
        (beta, beta)
    };
    let t_lo = [-10.0, 0.0, 18.5, 25.0][(g.next() % 4) as usize];
    let t_hi = t_lo + [0.0, 0.1, 10.0, 40.0][(g.next() % 4) as usize];
    let meter = [0.1, 0.5, 1.0][(g.next() % 3) as usize];
    let offset = [0.001, 0.005, 0.02][(g.next() % 3) as usize];
    let input_r = [None, Some(110e3), Some(1e6), Some(10e6)][(g.next() % 4) as usize];
    let mode = if g.unit() < 0.5 {
        InputMode::Together
    } else {
        InputMode::One
    };
    let measured_vcc = vcc * (1.0 + 0.9 * vcc_tol / 100.0 * (2.0 * g.unit() - 1.0));
    let stage = Stage {
        polarity: if pnp { Polarity::Pnp } else { Polarity::Npn },
        vcc: Part::new(vcc, vcc_tol / 100.0),
        r1: Part::new(r1, tol / 100.0),
        r2: Part::new(r2, tol / 100.0),
        rc: Part::new(rc, tol / 100.0),
        re1: Part::new(re1, tol / 100.0),
        re2: Part::new(re2, tol / 100.0),
        rl: None,
        rs: 0.0,
        cin: None,
        cout: None,
        ce: None,
    };
    let profile = Profile {
        beta_min: bmin,
        beta_typ: beta,
        beta_max: bmax,
        is_25: is_from_vbe(0.65),
        ..Profile::default()
    };
    let v = |x: f64| format!("{x}");
    let mut flags = strs(&[
        "--r1",
        &v(r1),
        "--r2",
        &v(r2),
        "--rc",
        &v(rc),
        "--re1",
        &v(re1),
        "--re2",
        &v(re2),
        "--tol",
        &v(tol),
        "--vcc-tol",
        &v(vcc_tol),
        "--beta",
        &v(beta),
        "--beta-min",
        &v(bmin),
        "--beta-max",
        &v(bmax),
        "--temp-min",
        &v(t_lo),
        "--temp-max",
        &v(t_hi),
        "--meter",
        &v(meter),
        "--meter-offset",
        &v(offset),
        "--inputs",
        mode.name(),
    ]);
    if pnp {
        flags.push("--pnp".into());
    }
    if let Some(r) = input_r {
        flags.extend(strs(&["--input-r", &v(r)]));
    }
    let mut set = strs(&["mode machine", "*RST"]);
    set.push(format!("set polarity {}", if pnp { "pnp" } else { "npn" }));
    // The console starts from the demo stage: no load, source or capacitors here.
    set.extend(strs(&[
        "set rl none",
        "set rs 0",
        "set cin none",
        "set cout none",
        "set ce none",
    ]));
    set.push(format!("set vcc {} {}%", v(vcc), v(vcc_tol)));
    for (n, x) in [
        ("r1", r1),
        ("r2", r2),
        ("rc", rc),
        ("re1", re1),
        ("re2", re2),
    ] {
        set.push(format!("set {n} {} {}%", v(x), v(tol)));
    }
    set.push(format!("set beta {}", v(beta)));
    set.push(format!("set beta-min {}", v(bmin)));
    set.push(format!("set beta-max {}", v(bmax)));
    set.push(format!("set temp {}", v(t_lo)));
    set.push(format!("set temp-max {}", v(t_hi)));
    set.push(format!("meter gain {}%", v(meter)));
    set.push(format!("meter offset {}", v(offset)));
    set.push(format!(
        "set input-r {}",
        input_r.map_or("none".to_string(), v)
    ));
    set.push(format!("set inputs {}", mode.name()));
    Case {
        stage,
        profile,
        flags,
        set,
        inputs: Inputs { r: input_r, mode },
        temp: (t_lo, t_hi),
        measured_vcc,
    }
}

/// Readings of a good board of `c` at its measured supply, read through its inputs.
fn good_readings(c: &Case) -> [f64; 4] {
    let mut s = c.stage;
    s.vcc.value = c.measured_vcc;
    let cond = Conditions::typical(&c.profile).at(0.5 * (c.temp.0 + c.temp.1));
    let r = readings_through(&s, &c.profile, cond, &c.inputs).expect("a good board solves");
    [c.measured_vcc, r.vb, r.ve, r.vc]
}

const NODES: [&str; 6] = ["vb", "ve", "vc", "vbe", "vce", "ic"];

fn bits(v: &Value) -> u64 {
    v.as_f64().unwrap_or(f64::NAN).to_bits()
}

/// Issue 11, first finding: `limits` published other windows than `check` applied, and the
/// console (other defaults) others again. Now: the same windows, bit for bit.
#[test]
fn limits_check_and_console_give_the_same_windows_bit_for_bit() {
    let mut tested = 0;
    for seed in 0..40u64 {
        let c = case(seed);
        // The generator's rough bias sometimes misses the active region: such a stage gets no
        // windows at all (tested below), so it is skipped here.
        let ts = biasjig_core::settings::TestSettings {
            temp_min_c: c.temp.0,
            temp_max_c: c.temp.1,
            ..Default::default()
        };
        if biasjig_core::judge::nominal_region(&c.stage, &c.profile, &ts)
            != Ok(biasjig_core::solve::Region::Active)
        {
            continue;
        }
        tested += 1;
        if tested > 12 {
            break;
        }
        let rd = good_readings(&c);
        let nominal = format!("{}", c.stage.vcc.value);
        let measured = format!("{}", rd[0]);
        let mut l = strs(&["limits", "--json", "--vcc", &nominal, "--at-vcc", &measured]);
        l.extend(c.flags.iter().cloned());
        let lo = run(&l);
        assert_eq!(lo.status.code(), Some(0), "seed {seed}: {}", stderr(&lo));
        let lj = json(&lo);
        let mut k = strs(&[
            "check",
            "--json",
            "--vcc",
            &measured,
            "--vcc-nominal",
            &nominal,
            "--vb",
            &format!("{}", rd[1]),
            "--ve",
            &format!("{}", rd[2]),
            "--vc",
            &format!("{}", rd[3]),
        ]);
        k.extend(c.flags.iter().cloned());
        let co = run(&k);
        assert!(
            matches!(co.status.code(), Some(0 | 1)),
            "seed {seed}: check exit {:?}: {}",
            co.status.code(),
            stderr(&co)
        );
        let cj = json(&co);
        assert_eq!(cj["verdict"], "pass", "seed {seed}: a good board: {cj}");
        let mut lines = c.set.clone();
        lines.push(format!("check {} {} {} {}", rd[0], rd[1], rd[2], rd[3]));
        lines.push("digest".into());
        let replies = console(&lines);
        let chk = &replies[replies.len() - 2];
        assert!(
            chk.last().is_some_and(|s| s == "ok"),
            "seed {seed}: {replies:?}"
        );
        let dig = &replies[replies.len() - 1];
        assert_eq!(
            dig[0],
            format!("digest={}", cj["digest"].as_str().unwrap()),
            "seed {seed}: the console holds other settings: {replies:?}"
        );
        for n in NODES {
            let (ll, lh) = (&lj[n]["low"], &lj[n]["high"]);
            let (cl, ch) = (&cj["nodes"][n]["low"], &cj["nodes"][n]["high"]);
            assert_eq!(
                (bits(ll), bits(lh)),
                (bits(cl), bits(ch)),
                "seed {seed} {n}: limits {ll}..{lh}, check {cl}..{ch}"
            );
            let line = chk
                .iter()
                .find(|l| l.starts_with(&format!("node={n} ")))
                .unwrap_or_else(|| panic!("seed {seed}: console gave no {n}: {chk:?}"));
            let kv: std::collections::HashMap<&str, &str> =
                line.split(' ').filter_map(|p| p.split_once('=')).collect();
            let low: f64 = kv["low"].parse().unwrap();
            let high: f64 = kv["high"].parse().unwrap();
            assert_eq!(
                (low.to_bits(), high.to_bits()),
                (bits(cl), bits(ch)),
                "seed {seed} {n}: console {low}..{high}, check {cl}..{ch}"
            );
        }
        // The supply window and the settings digest agree too.
        assert_eq!(bits(&lj["supply"]["low"]), bits(&cj["supply"]["low"]));
        assert_eq!(bits(&lj["supply"]["high"]), bits(&cj["supply"]["high"]));
        assert_eq!(lj["digest"], cj["digest"], "seed {seed}");
    }
    assert!(tested >= 10, "only {tested} active stages drawn");
}

/// Issue 11: the console started with hFE 100..300 and 5 % supply tolerance, the command line
/// with hFE 200..200 and 0 %. With no transistor or tolerance given, both now use the core's one
/// set of defaults: the same windows and the same supply window.
#[test]
fn the_console_and_the_command_line_share_their_defaults() {
    let flags = strs(&[
        "--vcc", "12", "--r1", "47k", "--r2", "10k", "--rc", "4k7", "--re1", "220", "--re2", "820",
    ]);
    let mut l = strs(&["limits", "--json"]);
    l.extend(flags.iter().cloned());
    let lj = json(&run(&l));
    let lines = strs(&[
        "mode machine",
        "*RST",
        "set vcc 12",
        "set r1 47k",
        "set r2 10k",
        "set rc 4k7",
        "set re1 220",
        "set re2 820",
        "limits",
    ]);
    let replies = console(&lines);
    let lim = replies.last().unwrap();
    for n in NODES {
        let line = lim
            .iter()
            .find(|l| l.starts_with(&format!("node={n} ")))
            .unwrap();
        let kv: std::collections::HashMap<&str, &str> =
            line.split(' ').filter_map(|p| p.split_once('=')).collect();
        assert_eq!(
            kv["low"].parse::<f64>().unwrap().to_bits(),
            bits(&lj[n]["low"]),
            "{n}"
        );
        assert_eq!(
            kv["high"].parse::<f64>().unwrap().to_bits(),
            bits(&lj[n]["high"]),
            "{n}"
        );
    }
    let sup = lim.iter().find(|l| l.starts_with("node=supply ")).unwrap();
    assert!(
        sup.contains(&format!("low={}", lj["supply"]["low"])),
        "{sup} {}",
        lj["supply"]
    );
    // 5 % supply tolerance by default on both.
    assert_eq!(lj["supply"]["low"].as_f64(), Some(12.0 * 0.95));
}

fn design_file(name: &str, extra: &[&str]) -> PathBuf {
    let f = temp(name);
    let mut a = strs(&[
        "design",
        "--vcc",
        "12",
        "--gain",
        "15",
        "--rl",
        "15k",
        "--rs",
        "600",
        "--f-low",
        "5",
        "--ic-max",
        "2m",
        "--temp-min",
        "-10",
        "--temp-max",
        "55",
        "--beta-min",
        "100",
        "--beta-max",
        "300",
        // The first round's design (held at nominal): with `design`'s default worst-case hold
        // the demo's gain needs ±12 % (see design_cli).
        "--hold",
        "nominal",
        "-o",
    ]);
    a.push(f.to_str().unwrap().into());
    a.extend(strs(extra));
    let o = run(&a);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    f
}

/// Issue 11, first finding: `--temp 25` was read as "not given" (the design's whole operating
/// range then applied) and gave windows a third wider than `--temp 24.9` or `25.1`; `limits
/// --design` published 25 °C windows while `check --design` applied the range. Now the test
/// ambient is the station's, windows change smoothly with it and `limits --design --at-vcc V` is
/// `check --design --vcc V`.
#[test]
fn windows_are_continuous_in_the_ambient_and_the_same_with_a_design_file() {
    let f = design_file("cont.toml", &[]);
    let d = f.to_str().unwrap();
    let lj = json(&run(&strs(&["limits", "--json", "--design", d])));
    let (vb, ve, vc) = (
        (lj["vb"]["low"].as_f64().unwrap() + lj["vb"]["high"].as_f64().unwrap()) / 2.0,
        (lj["ve"]["low"].as_f64().unwrap() + lj["ve"]["high"].as_f64().unwrap()) / 2.0,
        (lj["vc"]["low"].as_f64().unwrap() + lj["vc"]["high"].as_f64().unwrap()) / 2.0,
    );
    let width = |temp: &str, vcc: &str| {
        let c = run(&strs(&[
            "check",
            "--json",
            "--design",
            d,
            "--vcc",
            vcc,
            "--vb",
            &vb.to_string(),
            "--ve",
            &ve.to_string(),
            "--vc",
            &vc.to_string(),
            "--temp",
            temp,
        ]));
        assert!(matches!(c.status.code(), Some(0 | 1)), "{}", stderr(&c));
        let j = json(&c);
        let w =
            j["nodes"]["vc"]["high"].as_f64().unwrap() - j["nodes"]["vc"]["low"].as_f64().unwrap();
        (w, j)
    };
    let (w249, _) = width("24.9", "12");
    let (w25, j25) = width("25", "12");
    let (w251, _) = width("25.1", "12");
    for w in [w249, w251] {
        assert!(
            (w / w25 - 1.0).abs() < 0.01,
            "VC window width {w} against {w25} at 25 °C"
        );
    }
    // limits --design at 25 °C == check --design --temp 25, bit for bit.
    let lt = json(&run(&strs(&[
        "limits", "--json", "--design", d, "--temp", "25",
    ])));
    for n in NODES {
        assert_eq!(bits(&lt[n]["low"]), bits(&j25["nodes"][n]["low"]), "{n}");
        assert_eq!(bits(&lt[n]["high"]), bits(&j25["nodes"][n]["high"]), "{n}");
    }
    // And at another measured supply, with a test ambient range.
    let la = json(&run(&strs(&[
        "limits",
        "--json",
        "--design",
        d,
        "--at-vcc",
        "11.8",
        "--temp-min",
        "15",
        "--temp-max",
        "35",
    ])));
    let c = run(&strs(&[
        "check",
        "--json",
        "--design",
        d,
        "--vcc",
        "11.8",
        "--vb",
        &vb.to_string(),
        "--ve",
        &ve.to_string(),
        "--vc",
        &vc.to_string(),
        "--temp-min",
        "15",
        "--temp-max",
        "35",
    ]));
    let cj = json(&c);
    for n in NODES {
        assert_eq!(bits(&la[n]["low"]), bits(&cj["nodes"][n]["low"]), "{n}");
        assert_eq!(bits(&la[n]["high"]), bits(&cj["nodes"][n]["high"]), "{n}");
    }
    assert_eq!(la["temperature"]["min"], 15.0);
    assert_eq!(cj["settings"]["temp_max"], 35.0);
    // A range that shrinks to a point gives the point's windows (continuity at the ends).
    let narrow = json(&run(&strs(&[
        "limits",
        "--json",
        "--design",
        d,
        "--temp-min",
        "25",
        "--temp-max",
        "25.001",
    ])));
    let w_n = narrow["vc"]["high"].as_f64().unwrap() - narrow["vc"]["low"].as_f64().unwrap();
    assert!((w_n / w25 - 1.0).abs() < 1e-3, "{w_n} {w25}");
}

/// A high-impedance stage of our own (24 V, R1 470 k, R2 100 k, RC 47 k, RE 10 k + 0).
const HIGH_Z: [&str; 14] = [
    "--vcc",
    "24",
    "--r1",
    "470k",
    "--r2",
    "100k",
    "--rc",
    "47k",
    "--re1",
    "10k",
    "--re2",
    "0",
    "--beta-min",
    "100",
];

fn high_z() -> (Stage, Profile) {
    let s = Stage {
        polarity: Polarity::Npn,
        vcc: Part::new(24.0, 0.05),
        r1: Part::new(470e3, 0.05),
        r2: Part::new(100e3, 0.05),
        rc: Part::new(47e3, 0.05),
        re1: Part::new(10e3, 0.05),
        re2: Part::new(0.0, 0.05),
        rl: None,
        rs: 0.0,
        cin: None,
        cout: None,
        ce: None,
    };
    let p = Profile {
        beta_min: 100.0,
        ..Profile::default()
    };
    (s, p)
}

/// Readings of the high-impedance stage through 110 kΩ inputs attached together, with a fault.
fn high_z_readings(fault: Option<Fault>, beta: f64) -> [String; 4] {
    let (s, p) = high_z();
    let (s, dev) = match fault {
        Some(Fault::Device(d)) => (s, Some(d)),
        Some(f) => (s.with_fault(f), None),
        None => (s, None),
    };
    let cond = Conditions {
        beta_25: beta,
        fault: dev,
        ..Conditions::typical(&p)
    };
    let inputs = Inputs {
        r: Some(110e3),
        mode: InputMode::Together,
    };
    let r = readings_through(&s, &p, cond, &inputs).unwrap();
    [24.0, r.vb, r.ve, r.vc].map(|v| format!("{v}"))
}

fn check_high_z(r: &[String; 4], extra: &[&str]) -> Output {
    let mut a = strs(&["check", "--json"]);
    a.extend(strs(&HIGH_Z));
    a.extend(strs(&["--vb", &r[1], "--ve", &r[2], "--vc", &r[3]]));
    a.extend(strs(extra));
    run(&a)
}

/// Issue 11, second finding: the jig's 110 kΩ inputs pulled a good board's VB far below its
/// window, so every good board failed. With `--input-r 110k --inputs together` good boards
/// pass and open/short faults are still named; without it the same board fails.
#[test]
fn modelled_inputs_pass_good_boards_and_still_name_faults() {
    let inputs = ["--input-r", "110k", "--inputs", "together"];
    for beta in [100.0, 200.0] {
        let good = high_z_readings(None, beta);
        let o = check_high_z(&good, &inputs);
        assert_eq!(o.status.code(), Some(0), "hFE {beta}: {}", stderr(&o));
        let bare = check_high_z(&good, &[]);
        assert_eq!(
            bare.status.code(),
            Some(1),
            "read as if by an ideal meter it fails"
        );
    }
    for (fault, part, mode) in [
        (Fault::Open(Resistor::R1), "R1", "open"),
        (Fault::Open(Resistor::R2), "R2", "open"),
        (Fault::Open(Resistor::Rc), "RC", "open"),
        (Fault::Short(Resistor::Re1), "RE1", "short"),
        (Fault::Short(Resistor::R2), "R2", "short"),
        (Fault::Device(DeviceFault::BeOpen), "Q", "be_open"),
    ] {
        let r = high_z_readings(Some(fault), 200.0);
        let o = check_high_z(&r, &inputs);
        assert_eq!(o.status.code(), Some(1), "{part} {mode}: {}", stderr(&o));
        let j = json(&o);
        let named = std::iter::once(&j["faults"][0])
            .chain(
                j["faults"][0]["equivalent"]
                    .as_array()
                    .into_iter()
                    .flatten(),
            )
            .any(|f| f["part"] == part && f["mode"] == mode);
        assert!(named, "{part} {mode} not named first: {}", j["faults"]);
    }
}

/// `--inputs one`: each node read with only its own input attached; a good board passes.
#[test]
fn one_input_at_a_time() {
    let (s, p) = high_z();
    let inputs = Inputs {
        r: Some(1e6),
        mode: InputMode::One,
    };
    let r = readings_through(&s, &p, Conditions::typical(&p), &inputs).unwrap();
    let rd = [24.0, r.vb, r.ve, r.vc].map(|v| format!("{v}"));
    let o = check_high_z(&rd, &["--input-r", "1M", "--inputs", "one"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let j = json(&o);
    assert_eq!(j["settings"]["inputs"]["mode"], "one");
    assert_eq!(j["settings"]["inputs"]["r"], 1e6);
}

/// `analyze` warns when the divider is too stiff a load for the inputs; the readings it
/// predicts are through them.
#[test]
fn analyze_warns_of_loading_and_predicts_the_readings() {
    let mut a = strs(&["analyze", "--json", "--input-r", "110k"]);
    a.extend(strs(&HIGH_Z));
    let o = run(&a);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(stderr(&o).contains("R1 ‖ R2"), "{}", stderr(&o));
    let j = json(&o);
    assert!(j["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w == "divider_loaded_by_inputs"));
    let want = high_z_readings(None, 200.0);
    assert_eq!(j["readings"]["vb"].as_f64().unwrap().to_string(), want[1]);
    assert!(j["readings"]["vb"].as_f64().unwrap() < j["dc"]["vb"].as_f64().unwrap() - 0.5);
}

/// Issue 11, third finding: a 21.5 V supply on a 24 V design passed. A supply outside its
/// window is never a pass: exit 2, the message names the supply window, the log says refused.
#[test]
fn a_supply_out_of_tolerance_is_never_a_pass() {
    let good = high_z_readings(None, 200.0);
    let log = temp("supply.jsonl");
    let mut a = strs(&["check", "--json", "--vcc", "21.5", "--vcc-nominal", "24"]);
    a.extend(strs(&HIGH_Z[2..]));
    a.extend(strs(&[
        "--vb", &good[1], "--ve", &good[2], "--vc", &good[3],
    ]));
    a.extend(strs(&["--input-r", "110k", "--log", log.to_str().unwrap()]));
    let o = run(&a);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    let e = stderr(&o);
    assert!(
        e.contains("21.500") && e.contains("22.800") && e.contains("25.200"),
        "{e}"
    );
    let rec: Value = serde_json::from_str(
        std::fs::read_to_string(&log)
            .unwrap()
            .lines()
            .next()
            .unwrap(),
    )
    .unwrap();
    assert_eq!(rec["verdict"], "refused");
    assert_eq!(rec["supply"]["ok"], false);
    // With a design file (5 % by default): the file's nominal is judged.
    let f = design_file("supply.toml", &[]);
    let o = run(&strs(&[
        "check",
        "--design",
        f.to_str().unwrap(),
        "--vcc",
        "10.7",
        "--vb",
        "2",
        "--ve",
        "1.3",
        "--vc",
        "6",
    ]));
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("supply"), "{}", stderr(&o));
    // And the supply window is printed with the nodes.
    let lim = run(&strs(&["limits", "--design", f.to_str().unwrap()]));
    let text = String::from_utf8_lossy(&lim.stdout);
    assert!(
        text.contains("VCC") && text.contains("11.4") && text.contains("12.6"),
        "{text}"
    );
}

/// Issue 11, third finding: windows were given (VCE 18..53 mV), and boards passed, for a stage
/// saturated at its nominal point. `limits` and `check` now exit 2 naming the region.
#[test]
fn a_saturated_stage_gets_no_windows() {
    let flags = strs(&[
        "--vcc", "12", "--r1", "47k", "--r2", "10k", "--rc", "47k", "--re1", "220", "--re2", "820",
    ]);
    let mut l = strs(&["limits"]);
    l.extend(flags.iter().cloned());
    let o = run(&l);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("saturation"), "{}", stderr(&o));
    let mut c = strs(&["check", "--vb", "1.9", "--ve", "1.25", "--vc", "1.3"]);
    c.extend(flags.iter().cloned());
    let o = run(&c);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("saturation"), "{}", stderr(&o));
    // The console warns after the `set` that saturates the stage (a data line, then ok).
    let r = console(&strs(&[
        "mode machine",
        "*RST",
        "set rc 47k",
        "set tol 20",
        "limits",
    ]));
    assert_eq!(
        r[2],
        vec![
            "warning=not_active region=saturation".to_string(),
            "ok".into()
        ]
    );
    assert!(
        r[3].iter()
            .any(|l| l.starts_with("warning=unusual_tolerance part=R1")),
        "{:?}",
        r[3]
    );
    assert!(r[4].last().unwrap().starts_with("err RANGE"), "{:?}", r[4]);
}

/// Issue 11, third finding: `--rc 3.3mA` was read as 3.3 mΩ, `--cin 10uV` and `--vcc 12A`
/// accepted. A unit that does not fit is refused naming the field, the value and the allowed
/// units; the field's own unit is accepted.
#[test]
fn units_that_do_not_fit_the_field_are_refused() {
    let base = [
        "analyze", "--vcc", "12", "--r1", "47k", "--r2", "10k", "--rc", "4k7", "--re1", "220",
        "--re2", "820",
    ];
    let with = |flag: &str, value: &str| {
        let mut a: Vec<String> = strs(&base);
        if let Some(k) = a.iter().position(|x| x == flag) {
            a[k + 1] = value.into();
        } else {
            a.extend(strs(&[flag, value]));
        }
        a.push("--json".into());
        run(&a)
    };
    for (flag, value, allowed) in [
        ("--rc", "3.3mA", "Ω"),
        ("--cin", "10uV", "F"),
        ("--vcc", "12A", "V"),
        ("--beta", "200V", "no unit"),
    ] {
        let o = with(flag, value);
        assert_eq!(o.status.code(), Some(2), "{flag} {value}");
        let e = stderr(&o);
        assert!(
            e.contains(flag) && e.contains(value) && e.contains(allowed),
            "{e}"
        );
    }
    let plain = json(&with("--rc", "4k7"));
    for (flag, value) in [
        ("--rc", "4.7kΩ"),
        ("--rc", "4.7kohm"),
        ("--rc", "4k7"),
        ("--vcc", "12V"),
        ("--cin", "10uF"),
    ] {
        let o = with(flag, value);
        assert_eq!(o.status.code(), Some(0), "{flag} {value}: {}", stderr(&o));
        if flag == "--rc" {
            assert_eq!(json(&o)["dc"], plain["dc"]);
        }
    }
    // The console refuses them too, naming the allowed units, and changes nothing.
    let r = console(&strs(&[
        "mode machine",
        "set rc 3.3mA",
        "set cin 10uV",
        "set vcc 12A",
        "set rc 4.7kohm",
        "stage",
    ]));
    assert!(
        r[1][0].starts_with("err VALUE") && r[1][0].contains("Ω"),
        "{:?}",
        r[1]
    );
    assert!(
        r[2][0].starts_with("err VALUE") && r[2][0].contains("F"),
        "{:?}",
        r[2]
    );
    assert!(r[3][0].starts_with("err VALUE"), "{:?}", r[3]);
    assert_eq!(r[4], vec!["ok".to_string()]);
    assert!(r[5].iter().any(|l| l.starts_with("rc=4700 ")), "{:?}", r[5]);
    // Meter settings name their range.
    let o = run(&strs(&[
        "limits", "--vcc", "12", "--r1", "47k", "--r2", "10k", "--rc", "4k7", "--re1", "220",
        "--meter", "30",
    ]));
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("--meter") && stderr(&o).contains("20 %"),
        "{}",
        stderr(&o)
    );
}

/// Issue 11, item 8: flags given with `--design` changed the windows while the log kept the
/// file's hash. Now each record stores the settings digest of what judged the board and the
/// overrides in force.
#[test]
fn overrides_and_the_digest_are_on_record() {
    let f = design_file("rec.toml", &[]);
    let d = f.to_str().unwrap();
    let lj = json(&run(&strs(&["limits", "--json", "--design", d])));
    let mid = |n: &str| (lj[n]["low"].as_f64().unwrap() + lj[n]["high"].as_f64().unwrap()) / 2.0;
    let log = temp("rec.jsonl");
    let args = |extra: &[&str]| {
        let mut a = strs(&[
            "check",
            "--design",
            d,
            "--vcc",
            "12",
            "--vb",
            &mid("vb").to_string(),
            "--ve",
            &mid("ve").to_string(),
            "--vc",
            &mid("vc").to_string(),
            "--log",
            log.to_str().unwrap(),
        ]);
        a.extend(strs(extra));
        a
    };
    assert_eq!(run(&args(&[])).status.code(), Some(0));
    let o = run(&args(&["--tol", "20", "--meter", "3"]));
    assert!(stderr(&o).contains("override"), "{}", stderr(&o));
    let recs: Vec<Value> = std::fs::read_to_string(&log)
        .unwrap()
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(recs.len(), 2);
    assert_eq!(recs[0]["overrides"], serde_json::json!({}));
    assert_eq!(recs[1]["overrides"]["--tol"], 20.0);
    assert_eq!(recs[1]["overrides"]["--meter"], 3.0);
    assert_eq!(
        recs[0]["digest"], lj["digest"],
        "no override: the digest limits gives"
    );
    assert_ne!(
        recs[1]["digest"], recs[0]["digest"],
        "the overrides change the digest"
    );
    assert_eq!(recs[0]["design"]["digest"], recs[1]["design"]["digest"]);
    assert_eq!(recs[0]["design"]["digest"].as_str().unwrap().len(), 64);
}

/// Issue 11, item 9 (size limits): `--design /dev/zero` grew to 1.4 GB; it is refused at once.
#[test]
fn an_endless_design_file_is_refused() {
    let o = run(&strs(&["analyze", "--design", "/dev/zero"]));
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("at most"), "{}", stderr(&o));
}
