//! Sessions on standard input: the in-process console (`biasjig console`) and the manual
//! station (`biasjig station --manual`).

use std::path::Path;
use std::process::Output;

use super::{path_str, run_with_input};

/// Run `biasjig console ARGS` on the bytes `input`.
pub fn console(input: &[u8], args: &[&str]) -> Output {
    let mut a = vec!["console"];
    a.extend_from_slice(args);
    run_with_input(a, input)
}

/// A status line: `ok`, `ok …` or `err …`.
pub fn is_status(line: &str) -> bool {
    line == "ok" || line.starts_with("ok ") || line.starts_with("err ")
}

/// The status lines of a console's output, in order.
pub fn statuses(out: &str) -> Vec<&str> {
    out.lines()
        .map(|l| l.strip_suffix('\r').unwrap_or(l))
        .filter(|l| is_status(l))
        .collect()
}

/// The replies of a console session in machine mode, one per line of `lines`: its data lines,
/// then its status line last.
#[track_caller]
pub fn replies(lines: &[String]) -> Vec<Vec<String>> {
    let mut input = lines.join("\n");
    input.push('\n');
    let out = console(input.as_bytes(), &[]);
    assert_eq!(out.status.code(), Some(0), "{}", super::stderr(&out));
    let text = String::from_utf8(out.stdout).expect("the console writes UTF-8");
    let mut replies = Vec::new();
    let mut cur = Vec::new();
    for l in text.split("\r\n").filter(|l| !l.is_empty()) {
        cur.push(l.to_owned());
        if is_status(l) {
            replies.push(std::mem::take(&mut cur));
        }
    }
    assert_eq!(replies.len(), lines.len(), "one status line per input line");
    replies
}

/// The `key=value` words of a data line.
pub fn kv(line: &str) -> Vec<(&str, &str)> {
    line.split(' ').filter_map(|p| p.split_once('=')).collect()
}

/// The value of `key` in a data line.
#[track_caller]
pub fn get<'a>(line: &'a str, key: &str) -> &'a str {
    kv(line)
        .into_iter()
        .find(|(k, _)| *k == key)
        .map(|(_, v)| v)
        .unwrap_or_else(|| panic!("{key} not in {line:?}"))
}

/// Run the manual station on `design`, logging to `log`, with `extra` flags, the technician's
/// typing `input`; its screen is stderr.
pub fn station(design: &Path, log: &Path, extra: &[&str], input: &str) -> Output {
    let mut a = vec!["station", "--manual", "--design", path_str(design)];
    a.extend(["--log", path_str(log)]);
    a.extend_from_slice(extra);
    run_with_input(a, input.as_bytes())
}

/// The record of an unpowered board typed at the station (`0 0 0 0`): logged as refused, with
/// the reason and what was typed.
#[track_caller]
pub fn assert_refused_unpowered(rec: &serde_json::Value) {
    assert!(
        rec["reason"]
            .as_str()
            .is_some_and(|r| r.starts_with("IMPLAUSIBLE")),
        "{rec}"
    );
    assert_eq!(rec["typed"], "0 0 0 0");
}
