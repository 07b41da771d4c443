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
