//! The results store end to end, on SQLite and on a PostgreSQL server the test starts
//! (`scripts/postgres-test.sh`): two stations writing at once, a station killed with SIGKILL
//! mid-batch and run again, retests, two designs, a log imported twice and the rework loop, with
//! the report's figures against counts this test computes itself from the rows it generated
//! (the kit's production line, `common/line.rs`).
//!
//! Set `BIASJIG_TEST_POSTGRES=postgres://...` to use a running server instead of starting one.
//! Without a server the PostgreSQL test fails (it never passes without running); leave it out
//! openly with `cargo test -- --skip postgres`.

mod common;

use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};

use common::line::{
    assert_group, batch, batch_cmd, board, design_entry, expect, lot, outcomes, report, write_csv,
    Board,
};
use common::stage::{DESIGN_A, DESIGN_B};
use common::{assert_exit, bin, kill_after_lines, path_str, stderr, temp};
use serde_json::Value;

/// The scratch folder of this file.
const TAG: &str = "store-line";

fn output(mut c: Command) -> Output {
    c.output().expect("biasjig runs")
}

/// Two stations write at once (two processes); then a retest batch on one of them and a second
/// design; the report's figures per design and station match the rows.
fn two_stations_retests_and_two_designs(url: &str) {
    let a1 = lot(DESIGN_A, 120, |k| {
        (format!("A1-{k:03}"), 14.9 + 0.002 * k as f64, k % 7 != 3)
    });
    let a2 = lot(DESIGN_A, 120, |k| {
        (format!("A2-{k:03}"), 15.1 - 0.002 * k as f64, k % 5 != 1)
    });
    let (p1, p2) = (write_csv(TAG, "s1.csv", &a1), write_csv(TAG, "s2.csv", &a2));
    let c1 = batch_cmd(DESIGN_A, &p1, url, "bench-1", "L7")
        .spawn()
        .unwrap();
    let c2 = batch_cmd(DESIGN_A, &p2, url, "bench-2", "L7")
        .spawn()
        .unwrap();
    let (o1, o2) = (
        c1.wait_with_output().unwrap(),
        c2.wait_with_output().unwrap(),
    );
    assert_exit(&o1, 1);
    assert_exit(&o2, 1);
    // Retests on bench-2: every board that failed on bench-1, now repaired (good readings).
    let re: Vec<Board> = a1
        .iter()
        .enumerate()
        .filter(|(_, b)| !b.good)
        .map(|(k, b)| board(&b.serial, DESIGN_A, 15.0, true, k))
        .collect();
    let p3 = write_csv(TAG, "re.csv", &re);
    let o3 = output(batch_cmd(DESIGN_A, &p3, url, "bench-2", "L7"));
    assert_exit(&o3, 0);
    // A second design on bench-1.
    let b1 = lot(DESIGN_B, 40, |k| (format!("B-{k:03}"), 15.0, k % 4 != 0));
    let p4 = write_csv(TAG, "b.csv", &b1);
    let o4 = output(batch_cmd(DESIGN_B, &p4, url, "bench-1", "L8"));
    assert_exit(&o4, 1);

    let rep = report(url, &[]);
    assert_eq!(rep["designs"].as_array().unwrap().len(), 2, "never merged");
    let tests_a: Vec<(&str, bool)> = a1
        .iter()
        .chain(&a2)
        .chain(&re)
        .map(|b| (b.serial.as_str(), b.good))
        .collect();
    // Within a1 and a2 the boards differ, so their interleaving does not matter; the retests
    // ran after both.
    let da = design_entry(&rep, DESIGN_A, TAG);
    assert_group(da, &expect(&tests_a), "design A");
    let st1 = outcomes(&a1);
    let st2: Vec<(&str, bool)> = a2
        .iter()
        .chain(&re)
        .map(|b| (b.serial.as_str(), b.good))
        .collect();
    assert_group(&da["stations"]["bench-1"], &expect(&st1), "A bench-1");
    assert_group(&da["stations"]["bench-2"], &expect(&st2), "A bench-2");
    let failing: Vec<String> = a2
        .iter()
        .filter(|b| !b.good)
        .map(|b| b.serial.clone())
        .collect();
    let got: Vec<String> = da["failing_serials"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap().to_string())
        .collect();
    assert_eq!(got, failing);
    let db = design_entry(&rep, DESIGN_B, TAG);
    let tests_b = outcomes(&b1);
    assert_group(db, &expect(&tests_b), "design B");
    assert_eq!(db["stations"].as_object().unwrap().len(), 1);
    // Filters: one station, one lot.
    let only2 = report(url, &["--station", "bench-2"]);
    assert_group(
        design_entry(&only2, DESIGN_A, TAG),
        &expect(&st2),
        "--station bench-2",
    );
    assert_eq!(only2["designs"].as_array().unwrap().len(), 1);
    let l8 = report(url, &["--lot", "L8"]);
    assert_eq!(l8["designs"].as_array().unwrap().len(), 1);
    assert_group(
        design_entry(&l8, DESIGN_B, TAG),
        &expect(&tests_b),
        "--lot L8",
    );
    // Every failed board of design A is counted once in the Pareto (fault, group or
    // unexplained).
    let pareto = &da["pareto"];
    let counted: u64 = pareto["faults"]
        .as_array()
        .unwrap()
        .iter()
        .chain(pareto["groups"].as_array().unwrap())
        .map(|e| e["boards"].as_u64().unwrap())
        .sum::<u64>()
        + pareto["unexplained_boards"].as_u64().unwrap();
    let failed_boards = tests_a.iter().filter(|t| !t.1).count() as u64;
    assert_eq!(counted, failed_boards, "{pareto}");
}

/// A batch killed with SIGKILL mid-run leaves only whole tests; run again it completes without
/// doubling a board.
fn killed_station_resumes(url: &str) {
    let rows = lot(DESIGN_A, 1500, |k| {
        (format!("K{k:04}"), 14.95 + 0.0001 * k as f64, k % 3 != 0)
    });
    let p = write_csv(TAG, "kill.csv", &rows);
    let log = temp(TAG, "kill.jsonl");
    let mut c = batch_cmd(DESIGN_A, &p, url, "bench-k", "LK");
    c.arg("--log").arg(&log).stderr(Stdio::null());
    kill_after_lines(c.spawn().unwrap(), &log, 50, 120);
    let mid = report(url, &["--station", "bench-k"]);
    let done = design_entry(&mid, DESIGN_A, TAG)["tests"].as_u64().unwrap();
    assert!((50..1500).contains(&done), "killed after {done} tests");
    // Run again: the rows already recorded are skipped.
    let out = output({
        let mut c = batch_cmd(DESIGN_A, &p, url, "bench-k", "LK");
        c.arg("--log").arg(&log);
        c
    });
    assert_exit(&out, 1);
    assert!(stderr(&out).contains("already recorded"));
    let rep = report(url, &["--station", "bench-k"]);
    let tests = outcomes(&rows);
    assert_group(
        design_entry(&rep, DESIGN_A, TAG),
        &expect(&tests),
        "after the kill",
    );
    // The log too holds every row once (a kill between the store and the log write is
    // repaired by the second run).
    let text = std::fs::read_to_string(&log).unwrap();
    let mut serials: Vec<String> = text
        .lines()
        .filter_map(|l| serde_json::from_str::<Value>(l).ok())
        .map(|v| v["serial"].as_str().unwrap().to_string())
        .collect();
    serials.sort();
    serials.dedup();
    assert_eq!(serials.len(), 1500);
}

/// A log imported twice doubles nothing; the report of the log and of the store agree.
fn import_twice(url: &str) {
    let rows = lot(DESIGN_A, 30, |k| (format!("I{k:02}"), 15.0, k % 6 != 0));
    let p = write_csv(TAG, "imp.csv", &rows);
    let log = temp(TAG, "imp.jsonl");
    let out = batch(
        &DESIGN_A.args(),
        &p,
        &[
            "--station",
            "bench-i",
            "--lot",
            "LI",
            "--log",
            path_str(&log),
        ],
    );
    assert_eq!(out.status.code(), Some(1));
    for pass in 0..2 {
        let out = bin()
            .args(["import", "--json", "--store", url])
            .arg(&log)
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(0), "{out:?}");
        let v: Value = serde_json::from_slice(&out.stdout).unwrap();
        assert_eq!(
            v["new"].as_u64(),
            Some(if pass == 0 { 30 } else { 0 }),
            "{v}"
        );
        assert_eq!(
            v["already_there"].as_u64(),
            Some(if pass == 0 { 0 } else { 30 })
        );
    }
    let from_store = report(url, &["--station", "bench-i"]);
    let out = bin()
        .args(["report", "--json", "--station", "bench-i"])
        .arg(&log)
        .output()
        .unwrap();
    let from_log: Value = serde_json::from_slice(&out.stdout).unwrap();
    let tests = outcomes(&rows);
    assert_group(
        design_entry(&from_store, DESIGN_A, TAG),
        &expect(&tests),
        "store",
    );
    assert_group(
        design_entry(&from_log, DESIGN_A, TAG),
        &expect(&tests),
        "log",
    );
}

/// The rework loop: a repair that names the diagnosis's first fault counts as named first, one
/// that names another part does not.
fn rework_loop(url: &str) {
    let bad = [
        board("W1", DESIGN_A, 15.0, false, 0),
        board("W2", DESIGN_A, 15.0, false, 0),
    ];
    let p = write_csv(TAG, "w.csv", &bad);
    let out = output(batch_cmd(DESIGN_A, &p, url, "bench-w", "LW"));
    assert_eq!(out.status.code(), Some(1));
    // What the diagnosis named first (asked of check itself, not assumed).
    let out = bin()
        .arg("check")
        .args(DESIGN_A.words())
        .args([
            "--vb",
            &bad[0].r[1].to_string(),
            "--ve",
            &bad[0].r[2].to_string(),
        ])
        .args(["--vc", &bad[0].r[3].to_string(), "--json"])
        .output()
        .unwrap();
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    let (part, mode) = (
        v["faults"][0]["part"].as_str().unwrap().to_string(),
        v["faults"][0]["mode"].as_str().unwrap().to_string(),
    );
    let other = if part == "R1" { "R2" } else { "R1" };
    for (sn, p, m) in [("W1", part.as_str(), mode.as_str()), ("W2", other, "open")] {
        let out = bin()
            .args([
                "repair", "--store", url, "--serial", sn, "--part", p, "--mode", m,
            ])
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(0), "{out:?}");
    }
    let rep = report(url, &["--station", "bench-w"]);
    let w = &design_entry(&rep, DESIGN_A, TAG)["rework"];
    assert_eq!(w["matched"].as_u64(), Some(2), "{w}");
    assert_eq!(w["named_first"].as_u64(), Some(1), "{w}");
    let bad_part = bin()
        .args([
            "repair", "--store", url, "--serial", "W1", "--part", "R9", "--mode", "open",
        ])
        .output()
        .unwrap();
    assert_eq!(bad_part.status.code(), Some(2));
    assert!(stderr(&bad_part).contains("allowed: R1 R2 RC"));
}

fn all_scenarios(url_for: &mut dyn FnMut(&str) -> String) {
    two_stations_retests_and_two_designs(&url_for("line"));
    killed_station_resumes(&url_for("kill"));
    import_twice(&url_for("import"));
    rework_loop(&url_for("rework"));
}

#[test]
fn sqlite_store_two_stations_kill_retests_designs_import_rework() {
    all_scenarios(&mut |name| format!("sqlite:{}", temp(TAG, &format!("{name}.db")).display()));
}

/// A PostgreSQL server for the test: the one named by `BIASJIG_TEST_POSTGRES`, or one started
/// by `scripts/postgres-test.sh` in a temporary folder and stopped on drop.
struct Server {
    url: String,
    dir: Option<PathBuf>,
}

fn script() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../scripts/postgres-test.sh")
}

impl Server {
    fn get() -> Self {
        if let Ok(url) = std::env::var("BIASJIG_TEST_POSTGRES") {
            return Self { url, dir: None };
        }
        let dir = std::env::temp_dir().join(format!("biasjig-pg-{}", std::process::id()));
        let out = Command::new("bash")
            .arg(script())
            .arg("start")
            .arg(&dir)
            .output()
            .expect("bash runs");
        assert!(
            out.status.success(),
            "could not start PostgreSQL (install it with `scripts/postgres-test.sh install`, or \
             leave this test out openly with `cargo test -- --skip postgres`): {}",
            stderr(&out)
        );
        let url = String::from_utf8(out.stdout)
            .expect("a URL")
            .trim()
            .to_string();
        Self {
            url,
            dir: Some(dir),
        }
    }

    /// A fresh database on the server, its URL.
    fn database(&self, name: &str) -> String {
        let mut c = postgres::Client::connect(&self.url, postgres::NoTls).expect("the server");
        let db = format!("t_{}_{name}", std::process::id());
        c.batch_execute(&format!("DROP DATABASE IF EXISTS {db}"))
            .expect("drop");
        c.batch_execute(&format!("CREATE DATABASE {db}"))
            .expect("create");
        let base = self.url.rsplit_once('/').expect("a database URL").0;
        format!("{base}/{db}")
    }
}

impl Drop for Server {
    fn drop(&mut self) {
        if let Some(dir) = &self.dir {
            let _ = Command::new("bash")
                .arg(script())
                .arg("stop")
                .arg(dir)
                .status();
        }
    }
}

#[test]
fn postgres_store_two_stations_kill_retests_designs_import_rework() {
    let server = Server::get();
    all_scenarios(&mut |name| server.database(name));
}
