//! `biasjig check`, `batch` and `report` end to end. Readings come from the engine for an
//! invented stage (15 V, 68k/15k divider, 3k9 collector, 220 + 820 emitter).

mod common;

use std::io::Write;
use std::process::{Output, Stdio};

use biasjig_core::stage::{DeviceFault, Fault, Resistor};
use common::line::batch;
use common::stage::{reading_flags, DESIGN_A};
use common::{assert_exit, bin, kill_after_lines, path_str, temp};
use serde_json::Value;

/// The scratch folder of this file.
const TAG: &str = "check-cli";

/// Readings (vcc, vb, ve, vc) of design A at supply `vcc` with a fault, hFE 250.
fn readings(vcc: f64, fault: Option<Fault>) -> [f64; 4] {
    common::stage::readings(DESIGN_A, vcc, 250.0, fault)
}

/// Design A's flags at a test ambient of 25 °C.
fn stage_flags() -> Vec<String> {
    let mut a = DESIGN_A.args();
    a.extend(common::strs(&["--temp", "25"]));
    a
}

fn check(r: [f64; 4], extra: &[&str]) -> Output {
    bin()
        .arg("check")
        .args(DESIGN_A.without_vcc())
        .args(["--temp", "25"])
        .args(reading_flags(r))
        .args(extra)
        .output()
        .expect("biasjig runs")
}

#[test]
fn a_good_board_passes_with_every_key() {
    let out = check(readings(14.6, None), &["--json"]);
    assert_exit(&out, 0);
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["verdict"], "pass");
    for n in ["vb", "ve", "vc", "vbe", "vce", "ic"] {
        for k in ["measured", "low", "high"] {
            assert!(v["nodes"][n][k].is_number(), "{n}.{k}");
        }
        assert_eq!(v["nodes"][n]["ok"], true);
    }
    for k in ["ic", "ib", "vbe", "vce", "beta"] {
        assert!(v["derived"][k].is_number(), "{k}");
    }
    assert_eq!(v["derived"]["region"], "active");
    assert_eq!(v["faults"].as_array().unwrap().len(), 0);
    let text = check(readings(14.6, None), &[]);
    assert!(String::from_utf8_lossy(&text.stdout).contains("####"));
}

#[test]
fn a_decade_slip_is_named_with_its_value() {
    let r = readings(15.2, Some(Fault::Value(Resistor::Rc, 39e3)));
    let out = check(r, &["--json"]);
    assert_eq!(out.status.code(), Some(1));
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["verdict"], "fail");
    let first = &v["faults"][0];
    assert_eq!(
        (first["part"].as_str(), first["mode"].as_str()),
        (Some("RC"), Some("high")),
        "{v}"
    );
    let est = first["estimate"].as_f64().unwrap();
    assert!((est / 39e3 - 1.0).abs() < 0.15, "{est}");
    let text = String::from_utf8(check(r, &[]).stdout).unwrap();
    assert!(text.contains("FAIL") || text.contains("#####"));
    assert!(
        text.contains("RC reads like") && text.contains("decade slip"),
        "{text}"
    );
}

#[test]
fn equivalent_faults_are_grouped_with_the_separating_measurement() {
    let r = readings(15.0, Some(Fault::Open(Resistor::Re2)));
    let v: Value = serde_json::from_slice(&check(r, &["--json"]).stdout).unwrap();
    let first = &v["faults"][0];
    let pair: Vec<(String, String)> = std::iter::once(first)
        .chain(first["equivalent"].as_array().unwrap().iter())
        .map(|f| {
            (
                f["part"].as_str().unwrap().to_string(),
                f["mode"].as_str().unwrap().to_string(),
            )
        })
        .collect();
    assert!(
        pair.contains(&("RE1".into(), "open".into()))
            && pair.contains(&("RE2".into(), "open".into())),
        "{pair:?}"
    );
    assert!(first["estimate"].is_null());
    let text = String::from_utf8(check(r, &[]).stdout).unwrap();
    // (As written before the kit: either order of the pair, the hint asked with the second.)
    let grouped = text.contains("RE1 open or RE2 open: same readings")
        || text.contains("RE2 open or RE1 open: same readings")
            && text.contains("power off, in circuit measure RE");
    assert!(grouped, "{text}");
}

#[test]
fn negative_readings_are_values_and_a_shorted_emitter_is_found() {
    let r = readings(15.0, Some(Fault::Device(DeviceFault::CeShort)));
    let out = check(r, &["--json"]);
    assert_eq!(out.status.code(), Some(1));
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["faults"][0]["part"], "Q", "{v}");
    // A node a hair below ground is a value, not an option.
    let out = check([15.0, 2.55, -0.0012, 8.0], &["--json"]);
    assert!(
        matches!(out.status.code(), Some(0 | 1)),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn implausible_readings_are_refused_with_what_to_fix() {
    let out = check([15.0, 2.5, 1.9, 16.5], &["--json"]);
    assert_eq!(out.status.code(), Some(2));
    // docs/interface.md: refused "the same way" as a supply outside its window: `--json` still
    // prints one document, `"verdict": "refused"` with the reason.
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["verdict"], "refused", "{v}");
    assert!(
        v["reason"]
            .as_str()
            .unwrap()
            .contains("VC reads above the supply"),
        "{v}"
    );
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("VC reads above the supply") && err.contains("probe"),
        "{err}"
    );
    let out = check([15.0, 0.001, 0.0, 0.002], &[]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("ground lead"));
    // (With stage flags the given --vcc is both nominal and measured; the supply window is
    // judged against a design file's nominal, covered by the core tests.)
}

fn csv_of(rows: &[(String, [f64; 4])]) -> String {
    let mut s = String::from("operator,vc,vb,serial,ve,vcc\n");
    for (sn, r) in rows {
        s.push_str(&format!("kim,{},{},{sn},{},{}\n", r[3], r[1], r[2], r[0]));
    }
    s
}

#[test]
fn batch_with_bad_rows_loses_no_good_row_and_logs_each_board() {
    let csv = temp(TAG, "bad.csv");
    let log = temp(TAG, "bad.jsonl");
    let mut text = csv_of(&[
        ("SN1".into(), readings(15.0, None)),
        (
            "SN2".into(),
            readings(15.0, Some(Fault::Open(Resistor::Rc))),
        ),
    ]);
    text.push_str("kim,8.0,two,SN3,1.9,15\n");
    text.push_str(
        &csv_of(&[("SN4".into(), readings(14.8, None))])
            .lines()
            .skip(1)
            .collect::<Vec<_>>()
            .join("\n"),
    );
    text.push('\n');
    std::fs::write(&csv, text).unwrap();
    let out = batch(&stage_flags(), &csv, &["--log", path_str(&log), "--json"]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("line 4") && err.contains("column vb: 'two'"),
        "{err}"
    );
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    let serials: Vec<&str> = v["boards"]
        .as_array()
        .unwrap()
        .iter()
        .map(|b| b["serial"].as_str().unwrap())
        .collect();
    assert_eq!(serials, ["SN1", "SN2", "SN4"]);
    assert_eq!(v["summary"]["bad_rows"], 1);
    assert_eq!(v["summary"]["passed"], 2);
    let logged = std::fs::read_to_string(&log).unwrap();
    assert_eq!(logged.lines().count(), 3);
    for line in logged.lines() {
        let r: Value = serde_json::from_str(line).unwrap();
        for k in ["time", "serial", "design", "readings", "verdict", "faults"] {
            assert!(r.get(k).is_some(), "{k} in {line}");
        }
    }
}

#[test]
fn the_log_survives_a_kill_in_the_middle_of_a_batch() {
    let csv = temp(TAG, "long.csv");
    let log = temp(TAG, "long.jsonl");
    let rows: Vec<(String, [f64; 4])> = (0..400)
        .map(|k| {
            let f = if k % 2 == 0 {
                Some(Fault::Value(Resistor::R2, 4.7e3))
            } else {
                None
            };
            (format!("L{k:03}"), readings(14.5 + 0.001 * f64::from(k), f))
        })
        .collect();
    std::fs::write(&csv, csv_of(&rows)).unwrap();
    let child = bin()
        .arg("batch")
        .args(stage_flags())
        .arg(&csv)
        .arg("--log")
        .arg(&log)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    // Wait until a few records are on disk, then kill the batch mid-run.
    kill_after_lines(child, &log, 4, 60);
    let before = std::fs::read_to_string(&log).unwrap();
    let complete = before
        .lines()
        .filter(|l| serde_json::from_str::<Value>(l).is_ok())
        .count();
    assert!((4..400).contains(&complete), "{complete}");
    // A power cut tears the record being written: half a line at the end.
    let mut f = std::fs::OpenOptions::new().append(true).open(&log).unwrap();
    f.write_all(br#"{"time":"2031-01-01T00:00:00Z","serial":"L9"#)
        .unwrap();
    drop(f);
    let out = bin()
        .arg("report")
        .arg(&log)
        .arg("--json")
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    // One design; every complete record is one test (the report's shape of issue 16).
    assert_eq!(
        v["designs"][0]["tests"].as_u64().unwrap() as usize,
        complete
    );
    assert_eq!(v["skipped_lines"], 1);
    assert!(String::from_utf8_lossy(&out.stderr).contains("torn"));
    // Checking the next board appends on a fresh line, never merged with the torn one.
    let r = readings(15.0, None);
    let out = check(r, &["--serial", "NEXT", "--log", log.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(0));
    let after = std::fs::read_to_string(&log).unwrap();
    let last: Value = serde_json::from_str(after.lines().last().unwrap()).unwrap();
    assert_eq!(last["serial"], "NEXT");
    let html = temp(TAG, "report.html");
    let out = bin()
        .arg("report")
        .arg(&log)
        .arg("--html")
        .arg(&html)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("by first diagnosis (Pareto)") && text.contains("Cpk"),
        "{text}"
    );
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(page.contains("<svg") && page.contains("</html>"));
}
