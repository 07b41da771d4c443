//! The host tests' kit, written once for every test file: running the built `biasjig`, reading
//! what it prints, scratch files, the invented stages (flags and the same stage for the engine),
//! the demo scenario's design, the console and the station on stdin, the generated production
//! line of the results-store tests, and the IEC 60063 reference tables.
//!
//! Each test file takes it with `mod common;` and uses the part it needs.
#![allow(dead_code, reason = "each test file uses a part of the kit")]

pub mod console;
pub mod demo;
pub mod line;
pub mod series;
pub mod signal;
pub mod stage;

use std::ffi::OsStr;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::sync::atomic::{AtomicUsize, Ordering};

use serde_json::Value;

/// The built `biasjig` binary, ready for arguments.
pub fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_biasjig"))
}

/// Run `biasjig` with `args` and wait for it.
pub fn run<I, S>(args: I) -> Output
where
    I: IntoIterator<Item = S>,
    S: AsRef<OsStr>,
{
    bin().args(args).output().expect("biasjig runs")
}

/// Run `biasjig` with `args`, `input` on its standard input (read from a file, then the end of
/// input, as a technician's typing ends when the terminal closes).
pub fn run_with_input<I, S>(args: I, input: &[u8]) -> Output
where
    I: IntoIterator<Item = S>,
    S: AsRef<OsStr>,
{
    let typed = temp("stdin", "typed.txt");
    std::fs::write(&typed, input).expect("the input is written");
    let out = bin()
        .args(args)
        .stdin(std::fs::File::open(&typed).expect("the input reads back"))
        .output()
        .expect("biasjig runs");
    let _ = std::fs::remove_file(&typed);
    out
}

/// Owned `String`s of `&str`s (argument lists built from parts).
pub fn strs(a: &[&str]) -> Vec<String> {
    a.iter().map(|s| (*s).to_string()).collect()
}

/// What the run printed on stdout.
pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// What the run printed on stderr.
pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// The exit code (-1 for a signal).
pub fn code(o: &Output) -> i32 {
    o.status.code().unwrap_or(-1)
}

/// Assert the exit code, showing stderr when it is another.
#[track_caller]
pub fn assert_exit(o: &Output, want: i32) {
    assert_eq!(o.status.code(), Some(want), "{}", stderr(o));
}

/// The one JSON document on stdout.
#[track_caller]
pub fn json(o: &Output) -> Value {
    serde_json::from_slice(&o.stdout)
        .unwrap_or_else(|e| panic!("not one JSON document ({e}): {} {}", stdout(o), stderr(o)))
}

/// The JSON document of a run that must succeed (exit 0).
#[track_caller]
pub fn json_ok<I, S>(args: I) -> Value
where
    I: IntoIterator<Item = S>,
    S: AsRef<OsStr>,
{
    let o = run(args);
    assert_exit(&o, 0);
    json(&o)
}

/// Every line of a JSON Lines file (a board log), each parsed.
#[track_caller]
pub fn json_lines(path: &Path) -> Vec<Value> {
    std::fs::read_to_string(path)
        .expect("the log is there")
        .lines()
        .map(|l| serde_json::from_str(l).expect("a whole JSON line"))
        .collect()
}

/// A scratch folder for the test file `tag` in this test process (created).
pub fn scratch(tag: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("biasjig-{tag}-{}", std::process::id()));
    std::fs::create_dir_all(&d).expect("a scratch folder");
    d
}

static NEXT: AtomicUsize = AtomicUsize::new(0);

/// A fresh path `name` in the scratch folder of `tag` (numbered, so that tests running at once
/// never share a file; nothing is there yet).
pub fn temp(tag: &str, name: &str) -> PathBuf {
    let p = scratch(tag).join(format!("{}-{name}", NEXT.fetch_add(1, Ordering::Relaxed)));
    let _ = std::fs::remove_file(&p);
    p
}

/// The path as a `&str` (scratch paths are UTF-8).
pub fn path_str(p: &Path) -> &str {
    p.to_str().expect("a UTF-8 path")
}

/// Kill `child` (SIGKILL) once `log` holds `lines` lines, or after `timeout_s` seconds.
pub fn kill_after_lines(mut child: std::process::Child, log: &Path, lines: usize, timeout_s: u64) {
    let start = std::time::Instant::now();
    loop {
        let n = std::fs::read_to_string(log).map_or(0, |s| s.lines().count());
        if n >= lines || start.elapsed().as_secs() > timeout_s {
            break;
        }
        std::thread::sleep(std::time::Duration::from_millis(5));
    }
    child.kill().expect("the child is killed"); // SIGKILL
    child.wait().expect("the child ends");
}
