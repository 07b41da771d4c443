//! The report's signal-test figures: per design and test frequency, n, mean, standard deviation
//! and Cpk of the gain readings of the first test of each board that passed, computed here from
//! the gains this test chose, and the capacitor faults in the Pareto. Boards are recorded by
//! `check --ac F:G --log` for an invented stage (12 V, 47k/10k divider, 4k7 collector, 220 + 820
//! emitter, 15k load, 600 Ω source, 10 µ/10 µ/470 µ); their DC readings and nominal gains come from
//! the engine, the spread of the gains is chosen here.

use std::path::PathBuf;
use std::process::{Command, Output};

use biasjig_core::device::{is_from_vbe, Profile};
use biasjig_core::response::{magnitude_at, CapState, Caps};
use biasjig_core::solve::{solve, Conditions};
use biasjig_core::stage::{Capacitor, Part, Polarity, Stage};
use serde_json::Value;

const STAGE: [&str; 26] = [
    "--r1",
    "47k",
    "--r2",
    "10k",
    "--rc",
    "4k7",
    "--re1",
    "220",
    "--re2",
    "820",
    "--rl",
    "15k",
    "--rs",
    "600",
    "--cin",
    "10u",
    "--cout",
    "10u",
    "--ce",
    "470u",
    "--beta-min",
    "100",
    "--beta",
    "200",
    "--beta-max",
    "300",
];

const TONES: [f64; 2] = [1000.0, 5.0];

/// Boards that pass (more than the report's minimum n of 30 for a Cpk).
const GOOD: usize = 34;

fn board(cap: Option<(Capacitor, CapState)>) -> ([f64; 4], [f64; 2]) {
    let c = |v| Some(Part::new(v, 0.2));
    let s = Stage {
        polarity: Polarity::Npn,
        vcc: Part::new(12.0, 0.05),
        r1: Part::new(47e3, 0.05),
        r2: Part::new(10e3, 0.05),
        rc: Part::new(4.7e3, 0.05),
        re1: Part::new(220.0, 0.05),
        re2: Part::new(820.0, 0.05),
        rl: Some(15e3),
        rs: 600.0,
        cin: c(10e-6),
        cout: c(10e-6),
        ce: c(470e-6),
    };
    let p = Profile {
        beta_min: 100.0,
        beta_typ: 200.0,
        beta_max: 300.0,
        is_25: is_from_vbe(0.65),
        ..Profile::default()
    };
    let op = solve(
        &s,
        &p,
        Conditions {
            beta_25: 180.0,
            ..Conditions::typical(&p)
        },
    )
    .unwrap();
    let mut caps = Caps::nominal(&s);
    if let Some((c, st)) = cap {
        caps = caps.with(c, st);
    }
    let g = TONES.map(|f| magnitude_at(&s, &op, &caps, f));
    ([op.vcc, op.vb, op.ve, op.vc], g)
}

fn check(serial: &str, r: [f64; 4], g: [f64; 2], log: &PathBuf) -> Output {
    let mut c = Command::new(env!("CARGO_BIN_EXE_biasjig"));
    c.arg("check").args(STAGE).args([
        "--vcc".to_string(),
        r[0].to_string(),
        "--vb".into(),
        r[1].to_string(),
        "--ve".into(),
        r[2].to_string(),
        "--vc".into(),
        r[3].to_string(),
    ]);
    for (f, x) in TONES.iter().zip(g) {
        c.arg("--ac").arg(format!("{f}:{x}"));
    }
    c.args(["--serial", serial, "--station", "bench-g", "--log"])
        .arg(log)
        .output()
        .unwrap()
}

fn temp(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("biasjig-{}-{name}", std::process::id()));
    let _ = std::fs::remove_file(&d);
    d
}

/// Mean, sample standard deviation and Cpk = min(H - mean, mean - L) / (3 s) (common practice:
/// the process capability index as quality engineers define it).
fn figures(v: &[f64], lo: f64, hi: f64) -> (f64, f64, f64) {
    let n = v.len() as f64;
    let m = v.iter().sum::<f64>() / n;
    let s = (v.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
    (m, s, (hi - m).min(m - lo) / (3.0 * s))
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * a.abs().max(b.abs()).max(1.0)
}

#[test]
fn report_shows_gain_cpk_per_frequency_and_capacitor_faults() {
    let log = temp("gain.jsonl");
    let (r, g0) = board(None);
    // Gains chosen: within ±1.5 % of the nominal gain, a different pattern per tone.
    let mut chosen: [Vec<f64>; 2] = [Vec::new(), Vec::new()];
    for k in 0..GOOD {
        let g = [
            g0[0] * (1.0 + 0.015 * (((k * 7) % 11) as f64 / 5.0 - 1.0)),
            g0[1] * (1.0 + 0.01 * (((k * 3) % 5) as f64 / 2.0 - 1.0)),
        ];
        let out = check(&format!("G{k:03}"), r, g, &log);
        assert_eq!(
            out.status.code(),
            Some(0),
            "board {k}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        chosen[0].push(g[0]);
        chosen[1].push(g[1]);
    }
    // Two boards with CE open: their DC readings are good, only the gain tells.
    for k in 0..2 {
        let (r, g) = board(Some((Capacitor::Ce, CapState::Open)));
        let out = check(&format!("F{k:03}"), r, g, &log);
        assert_eq!(out.status.code(), Some(1));
    }
    // The windows as recorded (the same in every record of the design).
    let text = std::fs::read_to_string(&log).unwrap();
    let first: Value = serde_json::from_str(text.lines().next().unwrap()).unwrap();
    let windows: Vec<(f64, f64)> = (0..2)
        .map(|i| {
            let a = &first["ac"][i];
            assert_eq!(a["f"].as_f64(), Some(TONES[i]));
            (a["low"].as_f64().unwrap(), a["high"].as_f64().unwrap())
        })
        .collect();

    let out = Command::new(env!("CARGO_BIN_EXE_biasjig"))
        .args(["report", "--json"])
        .arg(&log)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let rep: Value = serde_json::from_slice(&out.stdout).unwrap();
    let d = &rep["designs"][0];
    // Every existing key is still there.
    for k in [
        "capability",
        "control",
        "pareto",
        "rework",
        "failing_serials",
    ] {
        assert!(d.get(k).is_some(), "{k}");
    }
    let ac = &d["ac"];
    assert_eq!(ac["min_n"], 30);
    assert!(ac["referral"].as_str().unwrap().contains("no referral"));
    let freqs = ac["frequencies"].as_array().unwrap();
    assert_eq!(freqs.len(), 2);
    // Frequency order: 5 Hz, then 1 kHz.
    for (e, i) in freqs.iter().zip([1, 0]) {
        let (lo, hi) = windows[i];
        let (m, s, cpk) = figures(&chosen[i], lo, hi);
        assert_eq!(e["f"].as_f64(), Some(TONES[i]));
        assert_eq!(e["n"], GOOD);
        assert!(close(e["mean"].as_f64().unwrap(), m), "{e} mean {m}");
        assert!(close(e["std"].as_f64().unwrap(), s), "{e} std {s}");
        assert!(close(e["cpk"].as_f64().unwrap(), cpk), "{e} cpk {cpk}");
        assert_eq!(e["low"].as_f64(), Some(lo));
        assert_eq!(e["high"].as_f64(), Some(hi));
    }
    // The Pareto counts the capacitor fault.
    let faults = d["pareto"]["faults"].as_array().unwrap();
    let groups = d["pareto"]["groups"].as_array().unwrap();
    let ce = faults
        .iter()
        .find(|f| f["fault"] == "CE open")
        .map(|f| f["boards"].clone())
        .or_else(|| {
            groups
                .iter()
                .find(|g| g["faults"].as_str().unwrap().contains("CE open"))
                .map(|g| g["boards"].clone())
        });
    assert_eq!(ce, Some(Value::from(2)), "{}", d["pareto"]);

    // The text and the HTML report say the same figures.
    let out = Command::new(env!("CARGO_BIN_EXE_biasjig"))
        .arg("report")
        .arg(&log)
        .output()
        .unwrap();
    let txt = String::from_utf8_lossy(&out.stdout);
    assert!(txt.contains("signal test: gain"), "{txt}");
    assert!(txt.contains("no referral"), "{txt}");
    let (_, _, cpk) = figures(&chosen[0], windows[0].0, windows[0].1);
    let line = txt
        .lines()
        .find(|l| l.contains("1.000 kHz") || l.contains("1 kHz"));
    let line = line.unwrap_or_else(|| panic!("no 1 kHz line: {txt}"));
    assert!(line.contains(&format!("n {GOOD:>6}")), "{line}");
    assert!(line.contains(&format!("Cpk {cpk:.2}")), "{line}");
    let html = temp("gain.html");
    let out = Command::new(env!("CARGO_BIN_EXE_biasjig"))
        .arg("report")
        .arg(&log)
        .arg("--html")
        .arg(&html)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(page.contains("signal test: gain"));
    assert!(page.contains(&format!("Cpk {cpk:.2}")));
    let _ = std::fs::remove_file(&log);
    let _ = std::fs::remove_file(&html);
}

#[test]
fn below_the_minimum_n_no_gain_cpk_is_printed() {
    let log = temp("gain-few.jsonl");
    let (r, g0) = board(None);
    for k in 0..5 {
        let g = [g0[0] * (1.0 + 0.002 * k as f64), g0[1]];
        assert_eq!(check(&format!("S{k}"), r, g, &log).status.code(), Some(0));
    }
    let out = Command::new(env!("CARGO_BIN_EXE_biasjig"))
        .args(["report", "--json"])
        .arg(&log)
        .output()
        .unwrap();
    let rep: Value = serde_json::from_slice(&out.stdout).unwrap();
    let e = &rep["designs"][0]["ac"]["frequencies"][1];
    assert_eq!(e["n"], 5);
    assert!(e["cpk"].is_null());
    assert!(e["mean"].as_f64().is_some());
    let _ = std::fs::remove_file(&log);
}
