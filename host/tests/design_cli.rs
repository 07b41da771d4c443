//! `biasjig design` through the built binary: JSON shape, series membership, refusals with
//! exit 2, and the design file read back by `analyze --design`.

mod common;

use common::demo::{self, CORNER_AND_AMBIENT, HFE_SPREAD};
use common::series::{in_series, reference};
use common::{run, stderr, strs};

/// The demo scenario, held at every corner (the default) with the gain within ±12 %: ±10 % is
/// out of reach with 5 % resistors there (see `ten_percent_on_the_demo_is_refused_with_figures`).
fn demo() -> Vec<String> {
    let mut a = demo::design_args(&["--gain-tol", "12", "--ic-max", "2m", "--beta", "173"]);
    a.extend(strs(&CORNER_AND_AMBIENT));
    a.extend(strs(&HFE_SPREAD));
    a
}

/// `--json` then the demo's design flags, then `extra`.
fn demo_json(extra: &[&str]) -> Vec<String> {
    let mut a = strs(&["--json"]);
    a.extend(demo());
    a.extend(strs(extra));
    a
}

#[test]
fn json_candidates_have_parts_in_series_and_predictions() {
    let out = run(demo_json(&["--count", "4"]));
    let (e24, e6) = (reference("E24"), reference("E6"));
    assert!(out.status.success(), "{}", stderr(&out));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("one JSON document");
    let c = v["candidates"].as_array().unwrap();
    assert_eq!(c.len(), 4);
    for cand in c {
        for k in ["r1", "r2", "rc", "re1", "re2"] {
            assert!(in_series(cand["parts"][k].as_f64().unwrap(), &e24), "{k}");
        }
        for k in ["cin", "cout", "ce"] {
            assert!(in_series(cand["parts"][k].as_f64().unwrap(), &e6), "{k}");
        }
        let p = &cand["predicted"];
        let gain = p["ac"]["gain"].as_f64().unwrap();
        assert!((gain.abs() / 15.0 - 1.0).abs() <= 0.05, "{gain}");
        assert!(p["dc"]["ic"].as_f64().unwrap() <= 2e-3);
        assert_eq!(p["dc"]["region"], "active");
        assert!(p["power"]["supply_current"].as_f64().is_some());
        assert!(p["ac"]["f_estimate"].as_f64().unwrap() <= 5.0);
        // What it holds at every corner, within the requirement.
        let h = &cand["held"];
        assert!(h["gain_min"].as_f64().unwrap() >= 15.0 * 0.88 - 1e-9);
        assert!(h["gain_max"].as_f64().unwrap() <= 15.0 * 1.12 + 1e-9);
        assert!(h["swing_pp_min"].as_f64().unwrap() > 0.0);
        assert!(h["ic_max"].as_f64().unwrap() <= 2e-3);
        assert_eq!(h["holds"], true);
        assert!(cand["distortion"]["hd2"].as_f64().unwrap() >= 0.0);
        assert!(cand["warnings"].as_array().is_some());
    }
    assert_eq!(v["hold"], "worst-case");
}

#[test]
fn ten_percent_on_the_demo_is_refused_with_figures() {
    let mut args = demo();
    // The default tolerance (10 %) instead of 12.
    let i = args.iter().position(|a| *a == "--gain-tol").unwrap();
    args.drain(i..i + 2);
    let out = run(&args);
    assert_eq!(out.status.code(), Some(2));
    let err = stderr(&out);
    assert!(err.contains("gain:"), "{err}");
    assert!(err.contains("--gain-tol"), "{err}");
    // With --hold nominal the same requirement is designed (the first round's behaviour).
    args.extend(strs(&["--hold", "nominal"]));
    let out = run(&args);
    assert!(out.status.success(), "{}", stderr(&out));
}

#[test]
fn supply_24v_gain_10_at_300ua_into_47k_is_designed() {
    // The case the first round refused ("needs IC >= 328 µA") although standard values build it.
    let base = [
        "design", "--vcc", "24", "--gain", "10", "--ic-max", "300u", "--rl", "47k", "--json",
    ];
    let mut args = base.to_vec();
    args.extend_from_slice(&["--hold", "nominal"]);
    let out = run(&args);
    assert!(out.status.success(), "{}", stderr(&out));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let c = &v["candidates"][0];
    assert!(c["predicted"]["dc"]["ic"].as_f64().unwrap() <= 300e-6);
    let g = c["predicted"]["ac"]["gain"].as_f64().unwrap().abs();
    assert!((g / 10.0 - 1.0).abs() <= 0.10, "{g}");
    // Held at every corner too (fixed hFE and ambient by default: the resistor corners).
    let out = run(base);
    assert!(out.status.success(), "{}", stderr(&out));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let h = &v["candidates"][0]["held"];
    assert!(h["ic_max"].as_f64().unwrap() <= 300e-6);
    assert!(h["gain_min"].as_f64().unwrap() >= 9.0 && h["gain_max"].as_f64().unwrap() <= 11.0);
}

#[test]
fn impossible_gain_tolerance_is_refused_naming_the_gain() {
    // Gain ±1 % with 5 % resistors: the ratio RC‖RL/RE1 alone moves several percent.
    let out = run([
        "design",
        "--vcc",
        "12",
        "--gain",
        "10",
        "--rl",
        "22k",
        "--gain-tol",
        "1",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let err = stderr(&out);
    assert!(err.contains("gain:"), "{err}");
    assert!(err.contains("±1.0 %"), "{err}");
    let bad = run(["design", "--vcc", "12", "--gain", "10", "--gain-tol", "0"]);
    assert_eq!(bad.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&bad.stderr).contains("--gain-tol"));
}

#[test]
fn human_report_shows_candidates_and_part_list() {
    let out = run(demo());
    assert!(out.status.success());
    let text = String::from_utf8_lossy(&out.stdout);
    for want in [
        "Candidates",
        "#1",
        "#3",
        "Part list of #1",
        "colour bands",
        "rating",
        "Q-point",
    ] {
        assert!(text.contains(want), "missing {want}:\n{text}");
    }
}

#[test]
fn impossible_gain_exits_2_naming_the_requirement() {
    let out = run([
        "design", "--vcc", "12", "--gain", "80", "--rl", "4k7", "--ic-max", "100u",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let err = stderr(&out);
    assert!(err.contains("gain: 80 into 4.7 kΩ needs IC >="), "{err}");
    assert!(out.stdout.is_empty());
}

#[test]
fn impossible_swing_exits_2() {
    let out = run(["design", "--vcc", "5", "--gain", "10", "--swing", "4.9"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("swing"));
}

#[test]
fn bad_field_exits_2_naming_flag_and_value() {
    let out = run(["design", "--vcc", "12", "--gain", "5000"]);
    assert_eq!(out.status.code(), Some(2));
    let err = stderr(&out);
    assert!(err.contains("--gain: 5000:"), "{err}");
    let out = run(["design", "--vcc", "12", "--gain", "10", "--series", "E7"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(stderr(&out).contains("E24"));
}

#[test]
fn a_design_file_reads_back_the_same_and_refuses_edits_and_overwrites() {
    let dir = common::scratch("design-cli");
    let file = dir.join("d.toml");
    let args = demo_json(&["--count", "1", "-o", common::path_str(&file)]);
    let out = run(&args);
    assert!(out.status.success(), "{}", stderr(&out));
    let d: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let a = run(["--json", "analyze", "--design", file.to_str().unwrap()]);
    assert!(a.status.success(), "{}", String::from_utf8_lossy(&a.stderr));
    let a: serde_json::Value = serde_json::from_slice(&a.stdout).unwrap();
    let want = &d["candidates"][0]["predicted"];
    for (sec, k) in [("dc", "ic"), ("dc", "vc"), ("ac", "gain"), ("ac", "f_low")] {
        assert_eq!(a[sec][k], want[sec][k], "{sec}.{k}");
    }
    // An edited file is refused with the key named.
    let text = std::fs::read_to_string(&file).unwrap();
    let edited = dir.join("e.toml");
    std::fs::write(&edited, text.replace("[ambient]", "[ambient]\ncolour = 1")).unwrap();
    let e = run(["analyze", "--design", edited.to_str().unwrap()]);
    assert_eq!(e.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&e.stderr).contains("colour"));
    std::fs::write(&edited, text.replace("version = 2", "version = 9")).unwrap();
    let e = run(["analyze", "--design", edited.to_str().unwrap()]);
    assert_eq!(e.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&e.stderr).contains("version"));
    // Issue 11, item 8: `design -o` does not replace a file without --force.
    let again = run(&args);
    assert_eq!(again.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&again.stderr).contains("--force"));
    assert_eq!(std::fs::read_to_string(&file).unwrap(), text, "left whole");
    let mut forced = args.clone();
    forced.push("--force".into());
    assert!(run(&forced).status.success());
    std::fs::remove_dir_all(&dir).ok();
}
