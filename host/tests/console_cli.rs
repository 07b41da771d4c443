//! `biasjig console`, `station` and `ports` as a user runs them.

use std::io::Write;
use std::process::{Command, Stdio};

fn console(input: &[u8], args: &[&str]) -> (String, String, i32) {
    let mut child = Command::new(env!("CARGO_BIN_EXE_biasjig"))
        .arg("console")
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("biasjig runs");
    child.stdin.take().unwrap().write_all(input).unwrap();
    let out = child.wait_with_output().unwrap();
    (
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
        out.status.code().unwrap_or(-1),
    )
}

fn statuses(out: &str) -> Vec<&str> {
    out.split("\r\n")
        .filter(|l| *l == "ok" || l.starts_with("ok ") || l.starts_with("err "))
        .collect()
}

#[test]
fn line_discipline_on_stdin() {
    let mut input = b"*IDN?\r\njunk words here\n".to_vec();
    input.extend(vec![b'z'; 500]);
    input.extend_from_slice(b"\nstage\x07\n\xc3\x28\n\r\nmode machine\nhash\n*idn?");
    let (out, _, code) = console(&input, &[]);
    assert_eq!(code, 0);
    let s = statuses(&out);
    assert_eq!(s.len(), 9, "{out}");
    assert!(out.starts_with("biasjig,console,0,"), "{out}");
    assert_eq!(s[0], "ok");
    assert!(s[1].starts_with("err UNKNOWN "));
    assert!(s[2].starts_with("err TOO_LONG "));
    assert!(s[3].starts_with("err CONTROL "));
    assert!(s[4].starts_with("err ENCODING "));
    assert_eq!(&s[5..], ["ok", "ok", "ok", "ok"]);
    assert!(out.contains("hash="), "{out}");
}

#[test]
fn help_shows_safety() {
    let (out, _, _) = console(b"help\n", &[]);
    assert!(out.contains("de-energise the board before changing probes or parts"));
    assert!(out.contains("No mains-connected circuits without isolation"));
}

#[test]
fn a_missing_port_is_exit_3() {
    let (_, err, code) = console(
        b"",
        &["--port", "/dev/biasjig-no-such-port", "--sync-timeout", "1"],
    );
    assert_eq!(code, 3, "{err}");
    assert!(err.contains("/dev/biasjig-no-such-port"), "{err}");
}

#[test]
fn a_bad_sync_timeout_is_exit_2() {
    let (_, err, code) = console(b"", &["--sync-timeout", "0"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("--sync-timeout"), "{err}");
}

#[test]
fn ports_lists_without_failing() {
    let out = Command::new(env!("CARGO_BIN_EXE_biasjig"))
        .args(["ports", "--json"])
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert!(v["ports"].is_array());
}

fn biasjig(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_biasjig"))
        .args(args)
        .output()
        .expect("biasjig runs")
}

/// VB, VE, VC the engine predicts for the design file with `extra` flags (a faulty part).
fn predicted(design: &str, extra: &[&str]) -> [f64; 3] {
    let mut args = vec!["analyze", "--design", design, "--json"];
    args.extend_from_slice(extra);
    let out = biasjig(&args);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let dc = &v["dc"];
    [
        dc["vb"].as_f64().unwrap(),
        dc["ve"].as_f64().unwrap(),
        dc["vc"].as_f64().unwrap(),
    ]
}

#[test]
fn station_manual_runs_end_to_end() {
    let dir = std::env::temp_dir().join(format!("biasjig-manual-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let design = dir.join("demo.toml");
    let log = dir.join("boards.jsonl");
    let _ = std::fs::remove_file(&log);
    let d = design.to_str().unwrap();
    // The demo scenario's requirement (invented).
    let out = biasjig(&[
        "design",
        "--vcc",
        "12",
        "--gain",
        "15",
        "--rl",
        "15k",
        "--rs",
        "600",
        "--f-low",
        "5",
        "--temp-min",
        "-10",
        "--temp-max",
        "55",
        "-o",
        d,
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let file: toml::Table = std::fs::read_to_string(&design).unwrap().parse().unwrap();
    let file_hash = file["hash"].as_str().unwrap().to_owned();
    let rc = file["parts"]["rc"]["value"].as_float().unwrap();
    let good = predicted(d, &[]);
    let slip = format!("{}", rc * 10.0);
    let bad = predicted(d, &["--rc", &slip]);
    let line = |v: [f64; 3]| format!("12 {:?} {:?} {:?}", v[0], v[1], v[2]);
    let input = format!(
        "SN-1\n{}\nSN-2\n{}\nSN-3\n3 1 1 1\nSN-4\n12 x 1 1\n\n",
        line(good),
        line(bad)
    );
    let mut child = Command::new(env!("CARGO_BIN_EXE_biasjig"))
        .args(["station", "--manual", "--design", d, "--log"])
        .arg(&log)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
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
    assert!(
        screen.contains("P A S S") && screen.contains("F A I L"),
        "{screen}"
    );
    assert!(
        screen.contains("not checked") && screen.contains("IMPLAUSIBLE"),
        "{screen}"
    );
    assert!(screen.contains("2 boards judged"), "{screen}");
    let text = std::fs::read_to_string(&log).unwrap();
    let recs: Vec<serde_json::Value> = text
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    // SN-3's implausible readings are logged as refused; "SN-4" and "12 x 1 1" are then
    // typing errors asked again, and the empty line goes on to the next board.
    assert_eq!(recs.len(), 3, "{text}");
    assert_eq!(recs[2]["serial"], "SN-3");
    assert_eq!(recs[2]["verdict"], "refused");
    let recs = &recs[..2];
    assert_eq!(recs[0]["serial"], "SN-1");
    assert_eq!(recs[0]["verdict"], "pass");
    assert_eq!(recs[1]["serial"], "SN-2");
    assert_eq!(recs[1]["verdict"], "fail");
    // One design hash: the file's, the log's and the instrument's.
    for r in recs {
        assert_eq!(r["design"]["hash"], file_hash.as_str(), "{r}");
        assert_eq!(r["readings"]["vcc"], 12.0);
    }
    // The record agrees with `biasjig check --json` for the same design and readings.
    let (vb, ve, vc) = (
        format!("{:?}", bad[0]),
        format!("{:?}", bad[1]),
        format!("{:?}", bad[2]),
    );
    let out = biasjig(&[
        "check", "--design", d, "--vcc", "12", "--vb", &vb, "--ve", &ve, "--vc", &vc, "--json",
    ]);
    assert_eq!(out.status.code(), Some(1));
    let want: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(recs[1]["verdict"], want["verdict"]);
    assert_eq!(recs[1]["faults"][0]["part"], want["faults"][0]["part"]);
    assert_eq!(recs[1]["faults"][0]["mode"], want["faults"][0]["mode"]);
    assert_eq!(recs[1]["faults"][0]["part"], "RC", "{}", recs[1]);
    for node in ["vb", "ve", "vc", "vbe", "vce", "ic"] {
        let a = recs[1]["nodes"][node]["low"].as_f64().unwrap();
        let b = want["nodes"][node]["low"].as_f64().unwrap();
        assert!(
            (a - b).abs() <= 1e-12 * b.abs().max(1e-9),
            "{node}: {a} vs {b}"
        );
        assert_eq!(recs[1]["nodes"][node]["ok"], want["nodes"][node]["ok"]);
    }
}
