//! What the line's records say: a report refuses records that are not whole, a batch names
//! duplicate serials and columns, the limits CSV holds exactly the windows and hashes `check`
//! records, and the HTML report names the design, the dates and the lot. Boards come from the
//! kit's production line (`common/line.rs`).

mod common;

use std::io::Write;
use std::process::{Command, Output};

use common::line::{batch, batch_cmd, board, check_logged, csv, hash_of, lot, report, write_csv};
use common::stage::DESIGN_A;
use common::{bin, path_str, temp};
use serde_json::Value;

/// The scratch folder of this file.
const TAG: &str = "store-report";

fn output(mut c: Command) -> Output {
    c.output().expect("biasjig runs")
}

#[test]
fn report_refuses_records_that_are_not_whole() {
    let rows = [
        board("E1", DESIGN_A, 15.0, true, 0),
        board("E2", DESIGN_A, 15.0, false, 0),
        board("E3", DESIGN_A, 15.0, true, 0),
    ];
    let p = write_csv(TAG, "e.csv", &rows);
    let log = temp(TAG, "e.jsonl");
    let out = batch(&DESIGN_A.args(), &p, &["--log", path_str(&log)]);
    assert_eq!(out.status.code(), Some(1));
    let text = std::fs::read_to_string(&log).unwrap();
    // The failed board's verdict edited to "pass", and a bare line.
    let mut lines: Vec<String> = text.lines().map(String::from).collect();
    lines[1] = lines[1].replace("\"verdict\":\"fail\"", "\"verdict\":\"pass\"");
    lines.push(r#"{"verdict":"pass"}"#.into());
    let edited = temp(TAG, "edited.jsonl");
    std::fs::write(&edited, lines.join("\n") + "\n").unwrap();
    let out = bin()
        .args(["report", "--json"])
        .arg(&edited)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("line 2") && err.contains("line 4"), "{err}");
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["refused_records"], 2);
    let d = &v["designs"][0];
    assert_eq!(
        (d["boards"].as_u64(), d["tests"].as_u64()),
        (Some(2), Some(2))
    );
    assert_eq!(d["first_pass_yield"].as_f64(), Some(1.0));
}

#[test]
fn batch_says_duplicate_serials_and_columns() {
    let rows = [
        board("D1", DESIGN_A, 15.0, true, 0),
        board("D1", DESIGN_A, 15.0, true, 0),
    ];
    let p = temp(TAG, "dup.csv");
    let mut f = std::fs::File::create(&p).unwrap();
    f.write_all(csv(&rows).replace('\n', "\r\n").as_bytes())
        .unwrap();
    drop(f);
    let out = batch(&DESIGN_A.args(), &p, &["--json"]);
    assert_eq!(out.status.code(), Some(0));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("line 3: serial D1 also on line 2"), "{err}");
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["boards"][1]["retest"], true);
    assert_eq!(v["summary"]["retests"], 1);
    std::fs::write(&p, "serial,vcc,vb,ve,vc,serial\n").unwrap();
    let out = batch(&DESIGN_A.args(), &p, &[]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("column 'serial' appears 2 times"));
}

#[test]
fn limits_csv_has_exactly_the_windows_and_hashes_check_records() {
    let csv_path = temp(TAG, "limits.csv");
    let out = bin()
        .arg("limits")
        .args(DESIGN_A.words())
        .arg("--csv")
        .arg(&csv_path)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    let text = std::fs::read_to_string(&csv_path).unwrap();
    let mut lines = text.lines();
    assert_eq!(
        lines.next(),
        Some("test,low,high,unit,design_hash,settings_hash")
    );
    let b = board("C1", DESIGN_A, 15.0, true, 0);
    let log = temp(TAG, "limits.jsonl");
    check_logged(DESIGN_A, &b, &log);
    let rec: Value = serde_json::from_str(&std::fs::read_to_string(&log).unwrap()).unwrap();
    let mut n = 0;
    for l in lines {
        let f: Vec<&str> = l.split(',').collect();
        let node = if f[0] == "vcc" {
            &rec["supply"]
        } else {
            &rec["nodes"][f[0]]
        };
        // Bit for bit: the CSV's shortest decimal reads back as the very window applied.
        assert_eq!(
            f[1].parse::<f64>().unwrap(),
            node["low"].as_f64().unwrap(),
            "{l}"
        );
        assert_eq!(
            f[2].parse::<f64>().unwrap(),
            node["high"].as_f64().unwrap(),
            "{l}"
        );
        assert_eq!(f[4], rec["design"]["hash"].as_str().unwrap());
        assert_eq!(f[5], rec["digest"].as_str().unwrap());
        n += 1;
    }
    assert_eq!(n, 7, "the supply window and six node windows");
}

#[test]
fn the_html_report_names_the_design_dates_and_lot() {
    let rows = lot(DESIGN_A, 12, |k| (format!("H{k:02}"), 15.0, k != 5));
    let p = write_csv(TAG, "html.csv", &rows);
    let url = format!("sqlite:{}", temp(TAG, "html.db").display());
    let out = output(batch_cmd(DESIGN_A, &p, &url, "bench-h", "LOT-42"));
    assert_eq!(out.status.code(), Some(1));
    let html = temp(TAG, "report.html");
    let out = bin()
        .args(["report", "--store", &url, "--html"])
        .arg(&html)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    let page = std::fs::read_to_string(&html).unwrap();
    let hash = hash_of(DESIGN_A, TAG);
    let today =
        &serde_json::to_string(&report(&url, &[])["designs"][0]["first_test"]).unwrap()[1..11];
    for want in [
        hash.as_str(),
        "Design flags",
        "LOT-42",
        "H05",
        today,
        "Western Electric",
        "<svg",
    ] {
        assert!(page.contains(want), "{want} not in the page");
    }
}
