//! Issue 11: a PASS means what it says; here, one set of windows: `limits` == `check` == the
//! console, bit for bit, with the same defaults, continuous in the ambient and the same with a
//! design file. Each test names the finding of the issue it pins (it fails on the code before
//! the fix). Stages are invented; readings come from the engine.

mod common;

use biasjig_core::device::Profile;
use biasjig_core::judge::readings_through;
use biasjig_core::settings::{InputMode, Inputs};
use biasjig_core::solve::Conditions;
use biasjig_core::stage::Stage;
use common::console::replies;
use common::demo;
use common::stage::Flags;
use common::{json, run, stderr, strs};
use rand_core::{Rng, SeedableRng};
use rand_xoshiro::SplitMix64;
use serde_json::Value;

/// The scratch folder of this file.
const TAG: &str = "pass-windows";

/// A small deterministic generator for the random stages (splitmix64).
struct Draw(SplitMix64);

impl Draw {
    fn new(seed: u64) -> Self {
        Self(SplitMix64::seed_from_u64(seed))
    }
    fn next(&mut self) -> u64 {
        self.0.next_u64()
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
    let mut g = Draw::new(seed);
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
    // The same stage and transistor for the engine, read from the flags as `biasjig` reads them.
    let drawn = Flags::owned(format!("--vcc {} {}", v(vcc), flags.join(" ")));
    let (stage, profile) = (drawn.stage(), drawn.profile());
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
        let replies = replies(&lines);
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
    let replies = replies(&lines);
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

/// Issue 11, first finding: `--temp 25` was read as "not given" (the design's whole operating
/// range then applied) and gave windows a third wider than `--temp 24.9` or `25.1`; `limits
/// --design` published 25 °C windows while `check --design` applied the range. Now the test
/// ambient is the station's, windows change smoothly with it and `limits --design --at-vcc V` is
/// `check --design --vcc V`.
#[test]
fn windows_are_continuous_in_the_ambient_and_the_same_with_a_design_file() {
    let f = demo::first_round(TAG, "cont.toml");
    let d = f.to_str().unwrap();
    let lj = json(&run(strs(&["limits", "--json", "--design", d])));
    let (vb, ve, vc) = (
        (lj["vb"]["low"].as_f64().unwrap() + lj["vb"]["high"].as_f64().unwrap()) / 2.0,
        (lj["ve"]["low"].as_f64().unwrap() + lj["ve"]["high"].as_f64().unwrap()) / 2.0,
        (lj["vc"]["low"].as_f64().unwrap() + lj["vc"]["high"].as_f64().unwrap()) / 2.0,
    );
    // `check --json --design` of the board in the middle of the windows, at supply `vcc`.
    let check_mid = |vcc: &str, extra: &[&str]| {
        let mut a = strs(&["check", "--json", "--design", d, "--vcc", vcc]);
        a.extend(
            [vb, ve, vc]
                .iter()
                .zip(["--vb", "--ve", "--vc"])
                .flat_map(|(v, f)| [f.to_string(), v.to_string()]),
        );
        a.extend(strs(extra));
        run(&a)
    };
    let width = |temp: &str, vcc: &str| {
        let c = check_mid(vcc, &["--temp", temp]);
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
    let lt = json(&run(strs(&[
        "limits", "--json", "--design", d, "--temp", "25",
    ])));
    for n in NODES {
        assert_eq!(bits(&lt[n]["low"]), bits(&j25["nodes"][n]["low"]), "{n}");
        assert_eq!(bits(&lt[n]["high"]), bits(&j25["nodes"][n]["high"]), "{n}");
    }
    // And at another measured supply, with a test ambient range.
    let la = json(&run(strs(&[
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
    let c = check_mid("11.8", &["--temp-min", "15", "--temp-max", "35"]);
    let cj = json(&c);
    for n in NODES {
        assert_eq!(bits(&la[n]["low"]), bits(&cj["nodes"][n]["low"]), "{n}");
        assert_eq!(bits(&la[n]["high"]), bits(&cj["nodes"][n]["high"]), "{n}");
    }
    assert_eq!(la["temperature"]["min"], 15.0);
    assert_eq!(cj["settings"]["temp_max"], 35.0);
    // A range that shrinks to a point gives the point's windows (continuity at the ends).
    let narrow = json(&run(strs(&[
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
