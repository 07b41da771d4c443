//! A console session in memory: replies collected in a `Vec<u8>` (embedded-io's writer for it),
//! the framing checks every reply must pass, the readers of `key=value` data lines, the clocks
//! and the jig that reads the engine's board.

use std::cell::Cell;
use std::rc::Rc;

use biasjig_core::console::jig::{MemoryStore, NoJig};
use biasjig_core::console::{
    default_profile, default_stage, Clock, Console, Identity, Jig, JigError, Store, MAX_DATA_LINES,
    MAX_OUT_LINE,
};
use biasjig_core::response::{magnitude_at, Caps};
use biasjig_core::solve::{solve, Conditions, NodeLoads};
use biasjig_core::stage::{Fault, Readings, Stage};

use crate::fixtures::{faulted, readings, readings_under};

/// A clock that stands still at 0 ms.
#[derive(Debug, Clone, Copy, Default)]
pub struct FixedClock;

impl Clock for FixedClock {
    fn now_ms(&mut self) -> u64 {
        0
    }
}

/// A clock the test moves by hand (clones share the time), ms.
#[derive(Debug, Clone, Default)]
pub struct HandClock(pub Rc<Cell<u64>>);

impl HandClock {
    /// Set the time, ms.
    pub fn set(&self, ms: u64) {
        self.0.set(ms);
    }
}

impl Clock for HandClock {
    fn now_ms(&mut self) -> u64 {
        self.0.get()
    }
}

/// A console named `console` of version `version` on `jig`, an empty store and `clock`.
pub fn console_with<J: Jig, C: Clock>(
    version: &'static str,
    jig: J,
    clock: C,
) -> Console<J, MemoryStore, C> {
    Console::new(
        Identity::new("console", version),
        jig,
        MemoryStore::default(),
        clock,
    )
}

/// A console with no jig, an empty store and a still clock.
pub fn bare_console() -> Console<NoJig, MemoryStore, FixedClock> {
    console_with("0", NoJig, FixedClock)
}

/// The console's default stage read by the engine with `fault`, at 25 °C and its typical hFE,
/// nothing attached.
pub fn default_readings(stage: &Stage, fault: Option<Fault>) -> Readings {
    let p = default_profile();
    readings_under(stage, &p, Conditions::typical(&p), fault).expect("the engine solves the board")
}

/// A jig that reads the engine's operating point of the console's default stage with the
/// fault injected last; through `input_r` (Ω) on every node when given, and with the gain
/// measured by the engine's response when `tones` is set.
#[derive(Debug, Clone, Copy, Default)]
pub struct EngineJig {
    /// The fault on the board.
    pub fault: Option<Fault>,
    /// The measuring inputs' resistance to ground, Ω.
    pub input_r: Option<f64>,
    /// Whether the jig measures the gain at a tone.
    pub tones: bool,
}

impl EngineJig {
    /// The instrument's jig: 11 MΩ inputs and the signal test.
    pub fn instrument() -> Self {
        Self {
            fault: None,
            input_r: Some(11e6),
            tones: true,
        }
    }

    fn board(
        &self,
        loads: NodeLoads,
    ) -> Result<(Stage, biasjig_core::solve::OperatingPoint), JigError> {
        let p = default_profile();
        let (s, dev) = faulted(&default_stage(), self.fault);
        let cond = Conditions {
            fault: dev,
            loads,
            ..Conditions::typical(&p)
        };
        let op = solve(&s, &p, cond).map_err(|_| JigError::Hardware)?;
        Ok((s, op))
    }
}

impl Jig for EngineJig {
    fn measure(&mut self, _samples: u16) -> Result<Readings, JigError> {
        let (_, op) = self.board(NodeLoads::each(self.input_r))?;
        Ok(readings(&op))
    }
    fn inject(&mut self, fault: Option<Fault>) -> Result<(), JigError> {
        self.fault = fault;
        Ok(())
    }
    fn gain(&mut self, f_hz: f64) -> Result<f64, JigError> {
        if !self.tones {
            return Err(JigError::NotSupported);
        }
        let (s, op) = self.board(NodeLoads::NONE)?;
        Ok(magnitude_at(&s, &op, &Caps::nominal(&s), f_hz))
    }
    fn input_r(&self) -> Option<f64> {
        self.input_r
    }
}

/// Whether `l` is a status line.
pub fn is_status(l: &str) -> bool {
    l == "ok" || l.starts_with("ok ") || l.starts_with("err ")
}

/// The lines of console output: UTF-8, every line CR LF ended, empty lines left out.
pub fn lines_of(out: &[u8]) -> Vec<String> {
    let text = std::str::from_utf8(out).expect("output is UTF-8");
    assert!(text.is_empty() || text.ends_with("\r\n"), "{text:?}");
    text.split("\r\n")
        .filter(|l| !l.is_empty())
        .map(str::to_owned)
        .collect()
}

/// Feed `input` to the console; the output lines.
pub fn send<J: Jig, S: Store, C: Clock>(c: &mut Console<J, S, C>, input: &[u8]) -> Vec<String> {
    let mut out = Vec::new();
    c.feed(input, &mut out).expect("memory never fails");
    lines_of(&out)
}

/// A reply split into its data lines and its status line (the last).
pub fn split_reply(mut lines: Vec<String>) -> (Vec<String>, String) {
    let status = lines.pop().unwrap_or_default();
    (lines, status)
}

/// Count the status lines of `out` and check the bounds of every reply: no line longer than
/// MAX_OUT_LINE, no control byte, at most MAX_DATA_LINES data lines before each status.
pub fn audit(out: &[u8]) -> usize {
    let mut statuses = 0;
    let mut data = 0;
    let text = String::from_utf8_lossy(out);
    assert!(text.is_empty() || text.ends_with("\r\n"));
    for l in text.split("\r\n").filter(|l| !l.is_empty()) {
        assert!(l.len() <= MAX_OUT_LINE, "{} bytes: {l:?}", l.len());
        assert!(!l.bytes().any(|b| b < 0x20), "control byte in output {l:?}");
        if is_status(l) {
            statuses += 1;
            data = 0;
        } else {
            data += 1;
            assert!(data <= MAX_DATA_LINES);
        }
    }
    statuses
}

/// One command: its data lines and its status line. Checked: exactly one status line, last;
/// at most MAX_DATA_LINES data lines; no line longer than MAX_OUT_LINE.
pub fn cmd<J: Jig, S: Store, C: Clock>(
    c: &mut Console<J, S, C>,
    line: &str,
) -> (Vec<String>, String) {
    let (lines, status) = split_reply(send(c, format!("{line}\n").as_bytes()));
    assert!(is_status(&status), "{line:?} -> {status:?}");
    assert!(lines.iter().all(|l| !is_status(l)), "{line:?}: {lines:?}");
    assert!(
        lines.len() <= MAX_DATA_LINES,
        "{line:?}: {} lines",
        lines.len()
    );
    assert!(lines
        .iter()
        .chain([&status])
        .all(|l| l.len() <= MAX_OUT_LINE));
    (lines, status)
}

/// A command that must answer `ok`: its data lines.
pub fn ok<J: Jig, S: Store, C: Clock>(c: &mut Console<J, S, C>, line: &str) -> Vec<String> {
    let (data, status) = cmd(c, line);
    assert!(status.starts_with("ok"), "{line:?} -> {status} {data:?}");
    data
}

/// A command that must answer `err CODE` with no data lines: the status line.
pub fn err<J: Jig, S: Store, C: Clock>(c: &mut Console<J, S, C>, line: &str, code: &str) -> String {
    let (data, status) = cmd(c, line);
    assert!(data.is_empty(), "{line:?}: {data:?}");
    assert!(
        status.starts_with(&format!("err {code} ")),
        "{line:?} -> {status}"
    );
    status
}

/// Commands that must each answer `ok`, in order.
pub fn oks<J: Jig, S: Store, C: Clock>(c: &mut Console<J, S, C>, lines: &[&str]) {
    for l in lines {
        ok(c, l);
    }
}

/// Commands that must each answer `err CODE` (line, code), in order.
pub fn errs<J: Jig, S: Store, C: Clock>(c: &mut Console<J, S, C>, cases: &[(&str, &str)]) {
    for (l, code) in cases {
        err(c, l, code);
    }
}

/// Each `key` has `want` as its value (on the first line that has the key).
pub fn assert_values(data: &[String], pairs: &[(&str, &str)]) {
    for (key, want) in pairs {
        assert_eq!(value(data, key), *want, "{key} in {data:?}");
    }
}

/// `text` contains every one of `words`.
pub fn assert_contains(text: &str, words: &[&str]) {
    for w in words {
        assert!(text.contains(w), "{w:?} not in {text}");
    }
}

/// Some line of `data` contains every one of `words`.
pub fn assert_line_with(data: &[String], words: &[&str]) {
    assert!(
        data.iter().any(|l| words.iter().all(|w| l.contains(w))),
        "no line with all of {words:?} in {data:?}"
    );
}

/// The value of `key` on the first line that has it.
pub fn value(data: &[String], key: &str) -> String {
    data.iter()
        .flat_map(|l| l.split(' '))
        .find_map(|kv| kv.strip_prefix(&format!("{key}=")))
        .unwrap_or_else(|| panic!("{key} not in {data:?}"))
        .to_owned()
}

/// The line that starts with `prefix`.
pub fn line<'a>(data: &'a [String], prefix: &str) -> &'a str {
    data.iter()
        .find(|l| l.starts_with(prefix))
        .unwrap_or_else(|| panic!("no {prefix:?} in {data:?}"))
}

/// The number `key` on the line that starts with `prefix`.
pub fn num(data: &[String], prefix: &str, key: &str) -> f64 {
    let l = line(data, prefix);
    let v = value(&[l.to_owned()], key);
    v.parse()
        .unwrap_or_else(|_| panic!("{key}={v} in {l:?} is not a number"))
}

/// Reference model of line ends: CR, LF, and CRLF as one; and whether an unfinished line is
/// left at the end.
#[derive(Debug, Default)]
pub struct LineEnds {
    after_cr: bool,
    /// Bytes after the last line end.
    pub partial: bool,
    /// Line ends seen.
    pub count: usize,
}

impl LineEnds {
    /// Take more input.
    pub fn take(&mut self, bytes: &[u8]) {
        for &b in bytes {
            let after_cr = std::mem::replace(&mut self.after_cr, false);
            match b {
                b'\n' if after_cr => {}
                b'\r' | b'\n' => {
                    self.after_cr = b == b'\r';
                    self.count += 1;
                    self.partial = false;
                }
                _ => self.partial = true,
            }
        }
    }

    /// The status lines the input must get: one per line end, and one for an unfinished line.
    pub fn lines(&self) -> usize {
        self.count + usize::from(self.partial)
    }
}
