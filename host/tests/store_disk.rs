//! A full disk under the log or the results store: the batch stops whole (no partial record,
//! the message names the first row not tested) and the run again completes. A file size limit
//! stands in for the full disk.

mod common;

use std::process::{Command, Output};

use common::line::{assert_group, batch, batch_cmd, expect, lot, outcomes, report, write_csv};
use common::stage::DESIGN_A;
use common::{assert_exit, path_str, stderr, temp};
use serde_json::Value;

/// The scratch folder of this file.
const TAG: &str = "store-disk";

fn output(mut c: Command) -> Output {
    c.output().expect("biasjig runs")
}

/// Run `biasjig ARGS` (a shell word list) where every file write past `kib` KiB fails (EFBIG,
/// as ENOSPC would on a full disk); the signal the limit raises is ignored, as a full disk
/// raises none. It must stop with exit 2 saying that rows were not tested; its stderr.
fn on_a_full_disk(kib: u32, args: &str) -> String {
    let cmd = format!(
        "trap '' XFSZ; ulimit -f {kib}; exec '{}' {args}",
        env!("CARGO_BIN_EXE_biasjig")
    );
    let out = Command::new("bash")
        .arg("-c")
        .arg(&cmd)
        .output()
        .expect("bash runs");
    assert_eq!(out.status.code(), Some(2), "{out:?}");
    let err = stderr(&out);
    assert!(err.contains("were not tested"), "{err}");
    err
}

#[test]
fn a_full_disk_stops_the_batch_whole_and_the_rerun_completes() {
    let rows = lot(DESIGN_A, 200, |k| (format!("F{k:03}"), 15.0, k % 4 != 0));
    let p = write_csv(TAG, "full.csv", &rows);
    let log = temp(TAG, "full.jsonl");
    // The log's disk is full after 64 KiB.
    let err = on_a_full_disk(
        64,
        &format!(
            "batch {} '{}' --log '{}'",
            DESIGN_A.0,
            p.display(),
            log.display()
        ),
    );
    let text = std::fs::read_to_string(&log).unwrap();
    assert!(text.ends_with('\n'), "no partial record");
    let mut kept = 0;
    for l in text.lines() {
        let _: Value = serde_json::from_str(l).expect("every kept line is a whole record");
        kept += 1;
    }
    assert!((1..200).contains(&kept), "{kept}");
    // The message names the first row not tested: the one after the last kept.
    assert!(err.contains(&format!("line {}", kept + 2)), "{err}");
    let out = batch(&DESIGN_A.args(), &p, &["--log", path_str(&log)]);
    assert_eq!(out.status.code(), Some(1));
    let text = std::fs::read_to_string(&log).unwrap();
    assert_eq!(text.lines().count(), 200);
}

#[test]
fn a_full_disk_under_the_sqlite_store_keeps_whole_tests_and_the_rerun_completes() {
    let rows = lot(DESIGN_A, 120, |k| (format!("G{k:03}"), 15.0, k % 4 != 0));
    let p = write_csv(TAG, "fulldb.csv", &rows);
    let db = temp(TAG, "full.db");
    let url = format!("sqlite:{}", db.display());
    // The store's disk is full after 256 KiB.
    let err = on_a_full_disk(
        256,
        &format!(
            "batch {} '{}' --store '{url}' --station bench-f",
            DESIGN_A.0,
            p.display()
        ),
    );
    let mid = report(&url, &[]);
    let kept = mid["designs"][0]["tests"].as_u64().unwrap_or(0);
    assert!((1..120).contains(&kept), "{kept}");
    assert!(err.contains(&format!("line {}", kept + 2)), "{kept}: {err}");
    let out = output(batch_cmd(DESIGN_A, &p, &url, "bench-f", ""));
    assert_exit(&out, 1);
    let rep = report(&url, &[]);
    let tests = outcomes(&rows);
    assert_group(&rep["designs"][0], &expect(&tests), "after the full disk");
}
