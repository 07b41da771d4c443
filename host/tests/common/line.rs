//! A production line of generated boards for the results-store tests: a good board's readings
//! are the engine's operating point of the design, a faulty board's those of the design with
//! one part open; the figures a report must give are computed here from the rows generated.

use std::collections::BTreeMap;
use std::path::Path;
use std::process::{Command, Output, Stdio};

use biasjig_core::stage::{Fault, Resistor};
use serde_json::Value;

use super::stage::{readings, Flags};
use super::{assert_exit, bin, json, run};

/// hFE at 25 °C of every generated board's transistor.
const BOARD_HFE: f64 = 250.0;

/// One generated row: serial, whether the board is good, readings (vcc, vb, ve, vc).
#[derive(Debug, Clone)]
pub struct Board {
    pub serial: String,
    pub good: bool,
    pub r: [f64; 4],
}

/// A board of `design` at supply `vcc`, good or with RC or R2 open (alternating by `k`).
pub fn board(serial: &str, design: Flags, vcc: f64, good: bool, k: usize) -> Board {
    let fault = (!good).then_some({
        Fault::Open(if k % 2 == 0 {
            Resistor::Rc
        } else {
            Resistor::R2
        })
    });
    Board {
        serial: serial.into(),
        good,
        r: readings(design, vcc, BOARD_HFE, fault),
    }
}

/// `n` boards of `design`; board `k` is `row(k)`: (serial, supply, good). A faulty board has RC
/// or R2 open, alternating by `k`.
pub fn lot(design: Flags, n: usize, row: impl Fn(usize) -> (String, f64, bool)) -> Vec<Board> {
    (0..n)
        .map(|k| {
            let (serial, vcc, good) = row(k);
            board(&serial, design, vcc, good, k)
        })
        .collect()
}

/// The batch CSV of the rows.
pub fn csv(rows: &[Board]) -> String {
    let mut s = String::from("serial,vcc,vb,ve,vc\n");
    for b in rows {
        s.push_str(&format!(
            "{},{},{},{},{}\n",
            b.serial, b.r[0], b.r[1], b.r[2], b.r[3]
        ));
    }
    s
}

/// (serial, good) of the rows, in test order.
pub fn outcomes(rows: &[Board]) -> Vec<(&str, bool)> {
    rows.iter().map(|b| (b.serial.as_str(), b.good)).collect()
}

/// `batch` of `design` over the CSV `rows` into the store `url` as `station`, lot `lot`.
pub fn batch_cmd(design: Flags, rows: &Path, url: &str, station: &str, lot: &str) -> Command {
    let mut c = bin();
    c.arg("batch")
        .args(design.words())
        .arg(rows)
        .args(["--store", url, "--station", station, "--lot", lot])
        .stdout(Stdio::null())
        .stderr(Stdio::piped());
    c
}

/// `batch STAGE ROWS EXTRA`.
pub fn batch(stage: &[String], rows: &Path, extra: &[&str]) -> Output {
    bin()
        .arg("batch")
        .args(stage)
        .arg(rows)
        .args(extra)
        .output()
        .expect("biasjig runs")
}

/// `report --store URL --json` with `extra` flags.
#[track_caller]
pub fn report(url: &str, extra: &[&str]) -> Value {
    let mut a = vec!["report", "--store", url, "--json"];
    a.extend_from_slice(extra);
    let out = run(a);
    assert_exit(&out, 0);
    json(&out)
}

/// The design hash `biasjig` records for a design (from a logged check of one good board).
pub fn hash_of(design: Flags, tag: &str) -> String {
    let log = super::temp(tag, "hash.jsonl");
    check_logged(design, &board("H1", design, 15.0, true, 0), &log);
    let line = std::fs::read_to_string(&log).expect("the check's log");
    let _ = std::fs::remove_file(&log);
    let v: Value = serde_json::from_str(line.lines().next().expect("one record")).expect("JSON");
    v["design"]["hash"]
        .as_str()
        .expect("a design hash")
        .to_string()
}

/// `check` of a good board `b` of `design` at the design's supply, logged to `log`; it passes.
#[track_caller]
pub fn check_logged(design: Flags, b: &Board, log: &Path) {
    let out = bin()
        .arg("check")
        .args(design.words())
        .args(["--vb", &b.r[1].to_string(), "--ve", &b.r[2].to_string()])
        .args(["--vc", &b.r[3].to_string(), "--serial", &b.serial, "--log"])
        .arg(log)
        .output()
        .expect("biasjig runs");
    assert_eq!(out.status.code(), Some(0), "{out:?}");
}

/// The report's entry of `design`.
#[track_caller]
pub fn design_entry<'a>(rep: &'a Value, design: Flags, tag: &str) -> &'a Value {
    let hash = hash_of(design, tag);
    rep["designs"]
        .as_array()
        .expect("designs")
        .iter()
        .find(|d| d["hash"] == hash.as_str())
        .unwrap_or_else(|| panic!("no design {hash} in {rep}"))
}

/// What the report must say of one group of tests, computed here from the rows in test order.
#[derive(Debug, Default, PartialEq)]
pub struct Expect {
    pub boards: u64,
    pub tests: u64,
    pub first_pass: u64,
    pub final_pass: u64,
}

/// The figures of (serial, passed) tests in test order.
pub fn expect(tests: &[(&str, bool)]) -> Expect {
    let mut first: BTreeMap<&str, bool> = BTreeMap::new();
    let mut last: BTreeMap<&str, bool> = BTreeMap::new();
    for (s, ok) in tests {
        first.entry(s).or_insert(*ok);
        last.insert(s, *ok);
    }
    Expect {
        boards: first.len() as u64,
        tests: tests.len() as u64,
        first_pass: first.values().filter(|v| **v).count() as u64,
        final_pass: last.values().filter(|v| **v).count() as u64,
    }
}

/// The report's group `got` has the figures `want` (its final yield too, where it gives one).
#[track_caller]
pub fn assert_group(got: &Value, want: &Expect, what: &str) {
    assert_eq!(
        got["boards"].as_u64(),
        Some(want.boards),
        "{what} boards: {got}"
    );
    assert_eq!(
        got["tests"].as_u64(),
        Some(want.tests),
        "{what} tests: {got}"
    );
    let fpy = want.first_pass as f64 / want.boards as f64;
    assert!(
        (got["first_pass_yield"].as_f64().expect("first_pass_yield") - fpy).abs() < 1e-12,
        "{what} first-pass yield: {got} want {fpy}"
    );
    if let Some(fy) = got.get("final_yield").and_then(Value::as_f64) {
        let want_fy = want.final_pass as f64 / want.boards as f64;
        assert!((fy - want_fy).abs() < 1e-12, "{what} final yield: {got}");
    }
}

/// As [`assert_group`], and the group must give its final yield.
#[track_caller]
pub fn assert_group_with_final(got: &Value, want: &Expect, what: &str) {
    assert!(got["final_yield"].is_f64(), "{what}: final yield: {got}");
    assert_group(got, want, what);
}

/// Write the rows as a batch CSV named `name` in the scratch folder of `tag`.
pub fn write_csv(tag: &str, name: &str, rows: &[Board]) -> std::path::PathBuf {
    let p = super::temp(tag, name);
    std::fs::write(&p, csv(rows)).expect("the CSV is written");
    p
}
