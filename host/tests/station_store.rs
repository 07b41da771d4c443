//! `biasjig station --manual --store sqlite:... --log ...`: every record the station writes
//! (judged, refused, retests) reaches both the log and the results store whole, with station,
//! operator and lot; the report counts the station's refused records as refused tests (not as
//! corrupt lines); a serial already in the store is said and marked as a retest even when the
//! log is new.

mod common;

use common::console::assert_refused_unpowered;

use common::console::station;
use common::demo::{self, typed};
use common::line::{assert_group, assert_group_with_final, expect, report, Expect};
use common::{assert_exit, json_lines, json_ok, path_str, stderr, temp};
use serde_json::Value;

/// The scratch folder of this file.
const TAG: &str = "station-store";

/// Run the manual station with the store and the log; returns the screen.
fn station_with_store(
    design: &std::path::Path,
    log: &std::path::Path,
    url: &str,
    input: &str,
) -> String {
    let out = station(
        design,
        log,
        &[
            "--store",
            url,
            "--station",
            "bench-s",
            "--operator",
            "ana",
            "--lot",
            "L7",
        ],
        input,
    );
    assert_exit(&out, 0);
    stderr(&out)
}

#[test]
fn manual_station_with_store_and_log_keeps_retests_and_refusals_in_both() {
    let bench = demo::bench(TAG);
    let (design, log) = (&bench.design, &bench.log);
    let log2 = temp(TAG, "second.jsonl");
    let db = temp(TAG, "line.db");
    let hash = demo::hash_of(&bench.file);
    let (good, bad) = (typed(bench.good), typed(bench.bad));
    let url = format!("sqlite:{}", db.display());
    // B1 passes; B2 fails; B3 is refused (an unpowered board), then given up; B2 retested good.
    let screen = station_with_store(
        design,
        log,
        &url,
        &format!("B1\n{good}\nB2\n{bad}\nB3\n0 0 0 0\n\nB2\n{good}\n\n"),
    );
    assert!(screen.contains("board B2 was tested before"), "{screen}");
    let recs = json_lines(log);
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
    assert_refused_unpowered(refused);
    assert_eq!(refused["readings"]["vcc"], 0.0);
    assert!(recs[1]["faults"].as_array().is_some_and(|f| !f.is_empty()));
    assert!(recs[0]["nodes"].as_object().is_some_and(|n| n.len() >= 3));

    // A second session on a new log: B1 is known only to the store, and is a retest.
    let screen = station_with_store(design, &log2, &url, &format!("B1\n{good}\n\n"));
    assert!(
        screen.contains("board B1 was tested before (1 record in the store)"),
        "{screen}"
    );
    let second = json_lines(&log2);
    assert_eq!(second.len(), 1);
    assert_eq!(second[0]["retest"], true);

    // The figures, computed here from the tests in order.
    let mut tests: Vec<(String, String)> =
        got.iter().map(|(s, v, _)| (s.clone(), v.clone())).collect();
    tests.push(("B1".into(), "pass".into()));
    let tests: Vec<(&str, bool)> = tests
        .iter()
        .map(|(s, v)| (s.as_str(), v == "pass"))
        .collect();
    let want = expect(&tests);
    // Boards B1, B2, B3; 5 tests; first pass B1 only; final B1 and B2.
    assert_eq!(
        want,
        Expect {
            boards: 3,
            tests: 5,
            first_pass: 1,
            final_pass: 2
        }
    );
    let rep = report(&url, &[]);
    assert_eq!(rep["refused_records"], 0, "{rep}");
    let dsg = &rep["designs"][0];
    assert_eq!(dsg["hash"], hash.as_str());
    assert_group_with_final(dsg, &want, "store");
    assert_group_with_final(&dsg["stations"]["bench-s"], &want, "store, station bench-s");
    assert_eq!(dsg["refused_tests"], 1);
    assert_eq!(dsg["retests"], 2);
    // The logs give the same figures: the station's refused line is a whole refused test.
    let from_logs = json_ok(["report", "--json", path_str(log), path_str(&log2)]);
    assert_eq!(from_logs["refused_records"], 0, "{from_logs}");
    assert_group_with_final(&from_logs["designs"][0], &want, "logs");
    assert_eq!(from_logs["designs"][0]["refused_tests"], 1);
}

#[test]
fn the_manual_station_records_whole_tests_in_the_store() {
    let design = temp(TAG, "station.toml");
    let mut a = demo::design_args(&["--ic-max", "2m", "--f-low", "5", "--beta", "180"]);
    a.extend(common::strs(&demo::HFE_SPREAD));
    a.extend(["-o".to_string(), path_str(&design).to_string()]);
    assert_exit(&common::run(&a), 0);
    let dc: Value = json_ok(["analyze", "--json", "--design", path_str(&design)])["dc"].clone();
    let good = format!("12 {} {} {}", dc["vb"], dc["ve"], dc["vc"]);
    let bad = format!("12 {} {} 0.2", dc["vb"], dc["ve"]);
    let url = format!("sqlite:{}", temp(TAG, "station.db").display());
    let log = temp(TAG, "station.jsonl");
    let input = format!("M1\n{good}\nM2\n{bad}\nM2\n{good}\n\n");
    let out = station(
        &design,
        &log,
        &[
            "--store",
            &url,
            "--station",
            "bench-m",
            "--lot",
            "LM",
            "--operator",
            "kim",
        ],
        &input,
    );
    assert!(out.status.success(), "{}", stderr(&out));
    let rep = report(&url, &[]);
    let d = &rep["designs"][0];
    assert_eq!(rep["refused_records"], 0);
    let want = expect(&[("M1", true), ("M2", false), ("M2", true)]);
    assert_group(d, &want, "station");
    assert_group(&d["stations"]["bench-m"], &want, "station bench-m");
    // The log holds the same records (the store and the log are one record type).
    let from_log = json_ok(["report", "--json", path_str(&log)]);
    assert_group(&from_log["designs"][0], &want, "station log");
    let lines = json_lines(&log);
    assert_eq!(lines[0]["operator"], "kim");
    assert_eq!(lines[0]["lot"], "LM");
    // The store marks the second test of M2 as a retest, and the log carries the same flag.
    let retest: Vec<bool> = lines
        .iter()
        .map(|l| l["retest"].as_bool().unwrap())
        .collect();
    assert_eq!(retest, [false, false, true]);
}
