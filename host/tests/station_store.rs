//! `biasjig station --manual --store sqlite:... --log ...`: every record the station writes
//! (judged, refused, retests) reaches both the log and the results store whole, with station,
//! operator and lot; the report counts the station's refused records as refused tests (not as
//! corrupt lines); a serial already in the store is said and marked as a retest even when the
//! log is new.

use std::collections::BTreeMap;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

use serde_json::Value;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_biasjig"))
}

fn dir() -> PathBuf {
    let d = std::env::temp_dir().join(format!("biasjig-station-store-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// VB, VE, VC the engine predicts for the design file with `extra` flags (a faulty part).
fn predicted(design: &Path, extra: &[&str]) -> [f64; 3] {
    let out = bin()
        .args(["analyze", "--json", "--design"])
        .arg(design)
        .args(extra)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    ["vb", "ve", "vc"].map(|k| v["dc"][k].as_f64().unwrap())
}

/// Run the manual station with the store and the log; returns the screen.
fn station(design: &Path, log: &Path, url: &str, input: &str) -> String {
    let mut child = bin()
        .args(["station", "--manual", "--design"])
        .arg(design)
        .arg("--log")
        .arg(log)
        .args(["--store", url, "--station", "bench-s", "--operator", "ana"])
        .args(["--lot", "L7"])
        .stdin(Stdio::piped())
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    child
        .stdin
        .take()
        .unwrap()
        .write_all(input.as_bytes())
        .unwrap();
    let out = child.wait_with_output().unwrap();
    let screen = String::from_utf8_lossy(&out.stderr).into_owned();
    assert_eq!(out.status.code(), Some(0), "{screen}");
    screen
}

fn lines(log: &Path) -> Vec<Value> {
    std::fs::read_to_string(log)
        .unwrap()
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect()
}

fn report(args: &[&str]) -> Value {
    let out = bin().arg("report").args(args).output().unwrap();
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    serde_json::from_slice(&out.stdout).unwrap()
}

/// Boards, tests, first-pass and final yield of tests in test order (serial, verdict).
fn figures(tests: &[(String, String)]) -> (u64, u64, f64, f64) {
    let mut first: BTreeMap<&str, bool> = BTreeMap::new();
    let mut last: BTreeMap<&str, bool> = BTreeMap::new();
    for (s, v) in tests {
        first.entry(s).or_insert(v == "pass");
        last.insert(s, v == "pass");
    }
    let n = first.len() as f64;
    let share = |m: &BTreeMap<&str, bool>| m.values().filter(|p| **p).count() as f64 / n;
    (
        first.len() as u64,
        tests.len() as u64,
        share(&first),
        share(&last),
    )
}

fn assert_figures(d: &Value, want: (u64, u64, f64, f64), what: &str) {
    assert_eq!(d["boards"].as_u64(), Some(want.0), "{what}: boards {d}");
    assert_eq!(d["tests"].as_u64(), Some(want.1), "{what}: tests");
    let fpy = d["first_pass_yield"].as_f64().unwrap();
    let fy = d["final_yield"].as_f64().unwrap();
    assert!((fpy - want.2).abs() < 1e-12, "{what}: first-pass {fpy}");
    assert!((fy - want.3).abs() < 1e-12, "{what}: final {fy}");
}

#[test]
fn manual_station_with_store_and_log_keeps_retests_and_refusals_in_both() {
    let d = dir();
    let design = d.join("demo.toml");
    let log = d.join("boards.jsonl");
    let log2 = d.join("second.jsonl");
    let db = d.join("line.db");
    for p in [&log, &log2, &db] {
        let _ = std::fs::remove_file(p);
    }
    // The demo scenario's requirement (invented).
    let out = bin()
        .args(["design", "--vcc", "12", "--gain", "15", "--rl", "15k"])
        .args(["--rs", "600", "--f-low", "5", "--temp-min", "-10"])
        .args(["--temp-max", "55", "-o"])
        .arg(&design)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    let file: toml::Table = std::fs::read_to_string(&design).unwrap().parse().unwrap();
    let rc = file["parts"]["rc"]["value"].as_float().unwrap();
    let hash = file["hash"].as_str().unwrap().to_owned();
    let line = |v: [f64; 3]| format!("12 {:?} {:?} {:?}", v[0], v[1], v[2]);
    let good = line(predicted(&design, &[]));
    let bad = line(predicted(&design, &["--rc", &format!("{}", rc * 10.0)]));
    let url = format!("sqlite:{}", db.display());
    // B1 passes; B2 fails; B3 is refused (an unpowered board), then given up; B2 retested good.
    let screen = station(
        &design,
        &log,
        &url,
        &format!("B1\n{good}\nB2\n{bad}\nB3\n0 0 0 0\n\nB2\n{good}\n\n"),
    );
    assert!(screen.contains("board B2 was tested before"), "{screen}");
    let recs = lines(&log);
    let got: Vec<(String, String, bool)> = recs
        .iter()
        .map(|r| {
            (
                r["serial"].as_str().unwrap().to_owned(),
                r["verdict"].as_str().unwrap().to_owned(),
                r["retest"].as_bool().unwrap(),
            )
        })
        .collect();
    let want = [
        ("B1", "pass", false),
        ("B2", "fail", false),
        ("B3", "refused", false),
        ("B2", "pass", true),
    ]
    .map(|(s, v, r)| (s.to_owned(), v.to_owned(), r));
    assert_eq!(got, want, "{screen}");
    // Everything the station knows about each test is in its line.
    for r in &recs {
        for k in [
            "record_id",
            "time",
            "settings",
            "digest",
            "overrides",
            "tool_version",
        ] {
            assert!(!r[k].is_null(), "{k} missing: {r}");
        }
        assert_eq!(r["design"]["hash"], hash.as_str());
        assert!(r["design"]["digest"].is_string(), "{r}");
        assert_eq!(r["digest"].as_str().unwrap().len(), 64, "{r}");
        assert_eq!(r["station"], "bench-s");
        assert_eq!(r["operator"], "ana");
        assert_eq!(r["lot"], "L7");
        assert_eq!(r["source"]["kind"], "station");
    }
    let refused = &recs[2];
    assert!(
        refused["reason"]
            .as_str()
            .unwrap()
            .starts_with("IMPLAUSIBLE"),
        "{refused}"
    );
    assert_eq!(refused["typed"], "0 0 0 0");
    assert_eq!(refused["readings"]["vcc"], 0.0);
    assert!(recs[1]["faults"].as_array().is_some_and(|f| !f.is_empty()));
    assert!(recs[0]["nodes"].as_object().is_some_and(|n| n.len() >= 3));

    // A second session on a new log: B1 is known only to the store, and is a retest.
    let screen = station(&design, &log2, &url, &format!("B1\n{good}\n\n"));
    assert!(
        screen.contains("board B1 was tested before (1 record in the store)"),
        "{screen}"
    );
    let second = lines(&log2);
    assert_eq!(second.len(), 1);
    assert_eq!(second[0]["retest"], true);

    // The figures, computed here from the tests in order.
    let mut tests: Vec<(String, String)> =
        got.iter().map(|(s, v, _)| (s.clone(), v.clone())).collect();
    tests.push(("B1".into(), "pass".into()));
    let want = figures(&tests);
    // Boards B1, B2, B3; 5 tests; first pass B1 only; final B1 and B2.
    assert_eq!(want, (3, 5, 1.0 / 3.0, 2.0 / 3.0));
    let rep = report(&["--store", &url, "--json"]);
    assert_eq!(rep["refused_records"], 0, "{rep}");
    let dsg = &rep["designs"][0];
    assert_eq!(dsg["hash"], hash.as_str());
    assert_figures(dsg, want, "store");
    assert_figures(&dsg["stations"]["bench-s"], want, "store, station bench-s");
    assert_eq!(dsg["refused_tests"], 1);
    assert_eq!(dsg["retests"], 2);
    // The logs give the same figures: the station's refused line is a whole refused test.
    let from_logs = report(&["--json", log.to_str().unwrap(), log2.to_str().unwrap()]);
    assert_eq!(from_logs["refused_records"], 0, "{from_logs}");
    assert_figures(&from_logs["designs"][0], want, "logs");
    assert_eq!(from_logs["designs"][0]["refused_tests"], 1);
}
