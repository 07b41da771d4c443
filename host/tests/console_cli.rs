//! `biasjig console`, `station` and `ports` as a user runs them.

mod common;

use common::console::{station, statuses};
use common::demo::{self, typed};
use common::{assert_exit, code, json, json_lines, path_str, run, stderr, stdout};

/// The scratch folder of this file.
const TAG: &str = "console-cli";

/// `biasjig console ARGS` on `input`: stdout, stderr and the exit code.
fn console(input: &[u8], args: &[&str]) -> (String, String, i32) {
    let out = common::console::console(input, args);
    (stdout(&out), stderr(&out), code(&out))
}

#[test]
fn each_stdin_line_gets_one_reply_and_a_bad_line_its_error() {
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
fn help_shows_the_safety_notes() {
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
fn ports_lists_the_serial_ports_as_json() {
    let out = run(["ports", "--json"]);
    assert_exit(&out, 0);
    assert!(json(&out)["ports"].is_array());
}

#[test]
fn station_manual_logs_pass_fail_and_refused_as_check_judges_them() {
    let demo::Bench {
        design,
        log,
        file,
        good,
        bad,
    } = demo::bench(TAG);
    let d = path_str(&design);
    let file_hash = demo::hash_of(&file);
    let line = typed;
    let input = format!(
        "SN-1\n{}\nSN-2\n{}\nSN-3\n3 1 1 1\nSN-4\n12 x 1 1\n\n",
        line(good),
        line(bad)
    );
    let out = station(&design, &log, &[], &input);
    let screen = stderr(&out);
    assert_eq!(out.status.code(), Some(0), "{screen}");
    for want in [
        "P A S S",
        "F A I L",
        "not checked",
        "IMPLAUSIBLE",
        "2 boards judged",
    ] {
        assert!(screen.contains(want), "{want}: {screen}");
    }
    let text = std::fs::read_to_string(&log).unwrap();
    let recs = json_lines(&log);
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
    let out = run([
        "check", "--design", d, "--vcc", "12", "--vb", &vb, "--ve", &ve, "--vc", &vc, "--json",
    ]);
    assert_eq!(out.status.code(), Some(1));
    let want = json(&out);
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
