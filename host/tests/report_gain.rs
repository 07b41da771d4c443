//! The report's signal-test figures: per design and test frequency, n, mean, standard deviation
//! and Cpk of the gain readings of the first test of each board that passed, computed here from
//! the gains this test chose, and the capacitor faults in the Pareto. Boards are recorded by
//! `check --ac F:G --log` for an invented stage (12 V, 47k/10k divider, 4k7 collector, 220 + 820
//! emitter, 15k load, 600 Ω source, 10 µ/10 µ/470 µ); their DC readings and nominal gains come from
//! the engine, the spread of the gains is chosen here.

mod common;

use std::path::Path;
use std::process::Output;

use biasjig_core::response::CapState;
use biasjig_core::stage::Capacitor;
use common::signal::TONES;
use common::{path_str, run, temp};
use serde_json::Value;

/// The scratch folder of this file.
const TAG: &str = "report-gain";

/// Boards that pass (more than the report's minimum n of 30 for a Cpk).
const GOOD: usize = 34;

/// DC readings and the gains at the test tones of a board.
fn board(cap: Option<(Capacitor, CapState)>) -> ([f64; 4], [f64; 2]) {
    let (r, g) = common::signal::board(cap, &TONES);
    (r, [g[0], g[1]])
}

/// `check` of one board, logged as `serial` at station bench-g.
fn check(serial: &str, r: [f64; 4], g: [f64; 2], log: &Path) -> Output {
    common::signal::check(
        r,
        &[(TONES[0], g[0]), (TONES[1], g[1])],
        &[
            "--serial",
            serial,
            "--station",
            "bench-g",
            "--log",
            path_str(log),
        ],
    )
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
    let log = temp(TAG, "gain.jsonl");
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

    let out = run(["report", "--json", path_str(&log)]);
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
    let out = run(["report", path_str(&log)]);
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
    let html = temp(TAG, "gain.html");
    let out = run(["report", path_str(&log), "--html", path_str(&html)]);
    assert_eq!(out.status.code(), Some(0));
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(page.contains("signal test: gain"));
    assert!(page.contains(&format!("Cpk {cpk:.2}")));
    let _ = std::fs::remove_file(&log);
    let _ = std::fs::remove_file(&html);
}

#[test]
fn below_the_minimum_n_no_gain_cpk_is_printed() {
    let log = temp(TAG, "gain-few.jsonl");
    let (r, g0) = board(None);
    for k in 0..5 {
        let g = [g0[0] * (1.0 + 0.002 * k as f64), g0[1]];
        assert_eq!(check(&format!("S{k}"), r, g, &log).status.code(), Some(0));
    }
    let out = run(["report", "--json", path_str(&log)]);
    let rep: Value = serde_json::from_slice(&out.stdout).unwrap();
    let e = &rep["designs"][0]["ac"]["frequencies"][1];
    assert_eq!(e["n"], 5);
    assert!(e["cpk"].is_null());
    assert!(e["mean"].as_f64().is_some());
    let _ = std::fs::remove_file(&log);
}
