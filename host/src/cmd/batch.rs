//! `biasjig batch`: check many boards from a CSV file of readings.
//!
//! The CSV has a header naming `serial`, `vcc`, `vb`, `ve`, `vc` (any order, any case, each
//! once; other columns are ignored). The file is read one line at a time (bounded memory
//! whatever its length); a row is one line (no quoted line breaks), LF or CRLF, at most
//! [`MAX_ROW`] bytes. A bad row (not UTF-8, too long, a value that is not a number, no serial)
//! is refused alone with its line number, and loses no other row. A serial given again is said
//! and recorded as a retest.
//!
//! Each board is recorded (`--log`, `--store`) under a record id derived from the design, the
//! settings and the row itself, so a batch killed and run again skips the rows already
//! recorded and doubles nothing. Each test is one store transaction; commits do not wait for
//! the disk (a power cut may lose the last tests, which the batch run again records). When a record cannot be written (a full disk), nothing of it is
//! kept, the batch stops and says from which line on the rows were not tested.
//!
//! Exit 2 when a row was bad or the batch stopped (every good row before is still checked and
//! recorded), otherwise 1 when a board failed or was refused, otherwise 0.

use std::collections::HashMap;
use std::io::{BufRead, BufReader, Read, Write};
use std::path::PathBuf;

use biasjig_core::stage::Readings;
use biasjig_core::units;
use serde_json::{json, Value};

use crate::board::{from_outcome, Recorder, RunInfo};
use crate::cmd::check::{evaluate, outcome_json, Outcome, Station};
use crate::error::{CliError, CmdResult, EXIT_FAIL, EXIT_OK, EXIT_USAGE};
use crate::record::{hex_digest, Source};
use crate::stage_args::{InputArgs, StageArgs, TestArgs};
use crate::store::TraceArgs;
use crate::Global;

/// The longest row (and header) accepted, bytes.
pub const MAX_ROW: usize = 4096;

/// At most this many bad rows are listed in the JSON document (all are counted and all are
/// named on stderr).
pub const LISTED_ERRORS: usize = 10_000;

/// The columns a readings file must have, in this order in [`Header::cols`].
const COLUMNS: [&str; 5] = ["serial", "vcc", "vb", "ve", "vc"];

/// `biasjig batch`: the stage by flags (`--vcc` the nominal supply) or `--design FILE`.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    #[command(flatten)]
    stage: StageArgs,
    /// CSV file of readings with a header: serial, vcc, vb, ve, vc
    #[arg(value_name = "READINGS.csv")]
    readings: PathBuf,
    /// Append a record of every board to FILE (JSON Lines)
    #[arg(long, value_name = "FILE")]
    log: Option<PathBuf>,
    #[command(flatten)]
    test: TestArgs,
    #[command(flatten)]
    inputs: InputArgs,
    #[command(flatten)]
    trace: TraceArgs,
}

/// One readings row, or why it is bad.
pub type Row = Result<(String, Readings), String>;

/// Where the five columns are.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Header {
    /// Field index of serial, vcc, vb, ve, vc.
    pub cols: [usize; 5],
}

/// A row as read: its line number, its raw bytes (without the line end) and what it says.
#[derive(Debug, Clone, PartialEq)]
pub struct Line {
    /// Line number in the file (1 is the header).
    pub number: u64,
    /// The row's bytes without the line end.
    pub raw: Vec<u8>,
    /// The parsed row.
    pub row: Row,
}

/// Split one line (already without its line end) into trimmed CSV fields.
fn fields(text: &str) -> Result<Vec<String>, String> {
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());
    let mut rec = csv::StringRecord::new();
    match rdr.read_record(&mut rec) {
        Ok(_) => Ok(rec.iter().map(str::to_string).collect()),
        Err(e) => Err(format!("not a CSV row: {e}")),
    }
}

/// Read the header line: every needed column exactly once.
pub fn header(text: &str) -> Result<Header, String> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let names = fields(text).map_err(|e| format!("line 1: header: {e}"))?;
    let mut cols = [0usize; 5];
    for (k, want) in COLUMNS.iter().enumerate() {
        let at: Vec<usize> = names
            .iter()
            .enumerate()
            .filter(|(_, h)| h.eq_ignore_ascii_case(want))
            .map(|(i, _)| i + 1)
            .collect();
        match at.as_slice() {
            [] => {
                return Err(format!(
                "line 1: header: no column '{want}'; the header must name serial, vcc, vb, ve and vc"
            ))
            }
            [one] => cols[k] = one - 1,
            many => {
                return Err(format!(
                    "line 1: header: column '{want}' appears {} times (columns {}); give each \
                     column once",
                    many.len(),
                    many.iter()
                        .map(ToString::to_string)
                        .collect::<Vec<_>>()
                        .join(", ")
                ))
            }
        }
    }
    Ok(Header { cols })
}

/// Parse one row's text.
pub fn row(h: &Header, text: &str) -> Row {
    let f = fields(text)?;
    let field = |k: usize| f.get(h.cols[k]).map_or("", String::as_str);
    let value = |k: usize| -> Result<f64, String> {
        let t = field(k);
        units::parse_signed(t).map_err(|e| {
            format!(
                "column {}: '{t}': {e}; allowed: a number such as 2.51 or -0.0012",
                COLUMNS[k]
            )
        })
    };
    let serial = field(0).to_string();
    if serial.is_empty() {
        return Err("column serial: empty; every board needs a serial number".into());
    }
    Ok((
        serial,
        Readings {
            vcc: value(1)?,
            vb: value(2)?,
            ve: value(3)?,
            vc: value(4)?,
        },
    ))
}

/// The rows of a readings file, one line at a time.
pub struct Rows<R: BufRead> {
    rd: R,
    header: Header,
    number: u64,
}

/// Read one line of at most `MAX_ROW` bytes; `Ok(None)` at the end. A longer line is consumed
/// whole and returned as `Err(len)`.
fn next_line(
    rd: &mut impl BufRead,
    buf: &mut Vec<u8>,
) -> std::io::Result<Option<Result<(), usize>>> {
    buf.clear();
    let n = rd.take(MAX_ROW as u64 + 2).read_until(b'\n', buf)?;
    if n == 0 {
        return Ok(None);
    }
    if buf.last() != Some(&b'\n') && buf.len() > MAX_ROW + 1 {
        let mut total = buf.len();
        let mut rest = Vec::new();
        loop {
            rest.clear();
            let m = rd.take(1 << 16).read_until(b'\n', &mut rest)?;
            total += m;
            if m == 0 || rest.last() == Some(&b'\n') {
                break;
            }
        }
        return Ok(Some(Err(total)));
    }
    if buf.last() == Some(&b'\n') {
        buf.pop();
    }
    if buf.last() == Some(&b'\r') {
        buf.pop();
    }
    if buf.len() > MAX_ROW {
        return Ok(Some(Err(buf.len())));
    }
    Ok(Some(Ok(())))
}

impl<R: BufRead> Rows<R> {
    /// Read the header; the rows follow through the iterator.
    pub fn new(mut rd: R) -> Result<Self, String> {
        let mut buf = Vec::new();
        let h = match next_line(&mut rd, &mut buf).map_err(|e| e.to_string())? {
            None => return Err("line 1: header: the file is empty".into()),
            Some(Err(len)) => {
                return Err(format!(
                    "line 1: header: {len} bytes long; allowed: at most {MAX_ROW}"
                ))
            }
            Some(Ok(())) => {
                let text = std::str::from_utf8(&buf)
                    .map_err(|e| format!("line 1: header: not UTF-8 text ({e})"))?;
                header(text)?
            }
        };
        Ok(Self {
            rd,
            header: h,
            number: 1,
        })
    }
}

impl<R: BufRead> Iterator for Rows<R> {
    type Item = Result<Line, std::io::Error>;

    fn next(&mut self) -> Option<Self::Item> {
        let mut buf = Vec::new();
        loop {
            let got = match next_line(&mut self.rd, &mut buf) {
                Ok(None) => return None,
                Ok(Some(g)) => g,
                Err(e) => return Some(Err(e)),
            };
            self.number += 1;
            let row = match got {
                Err(len) => Err(format!(
                    "{len} bytes long; allowed: at most {MAX_ROW}; the row was not tested"
                )),
                Ok(()) => match std::str::from_utf8(&buf) {
                    Err(e) => Err(format!(
                        "bytes that are not UTF-8 text (from byte {}); the row was not tested",
                        e.valid_up_to() + 1
                    )),
                    Ok(t) if t.trim().trim_matches(',').trim().is_empty() => continue,
                    Ok(t) => row(&self.header, t),
                },
            };
            return Some(Ok(Line {
                number: self.number,
                raw: std::mem::take(&mut buf),
                row,
            }));
        }
    }
}

/// Parse a whole CSV text into rows with their line numbers (for tests).
#[cfg(test)]
pub fn parse(text: &str) -> Result<Vec<(u64, Row)>, String> {
    let rows = Rows::new(text.as_bytes())?;
    rows.map(|l| l.map(|l| (l.number, l.row)).map_err(|e| e.to_string()))
        .collect()
}

/// Counts of one run.
#[derive(Debug, Default, Clone, Copy)]
struct Tally {
    passed: u32,
    failed: u32,
    refused: u32,
    bad: u32,
    resumed: u32,
    retests: u32,
}

/// The JSON document, written as the boards come (bounded memory).
struct JsonOut {
    first: bool,
    errors: Vec<Value>,
    unlisted: u32,
}

impl JsonOut {
    fn board(&mut self, doc: &Value) {
        let sep = if self.first { "" } else { "," };
        self.first = false;
        out!("{sep}{doc}");
    }

    fn error(&mut self, e: Value) {
        if self.errors.len() < LISTED_ERRORS {
            self.errors.push(e);
        } else {
            self.unlisted += 1;
        }
    }
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let resolved = self
            .stage
            .resolve_with(Some(&self.inputs), Some(&self.test))?;
        let st = Station::new(&resolved);
        let name = self.readings.display().to_string();
        let file = std::fs::File::open(&self.readings)
            .map_err(|e| CliError::usage(format!("{name}: cannot read the readings: {e}")))?;
        let rows = Rows::new(BufReader::with_capacity(1 << 16, file))
            .map_err(|e| CliError::usage(format!("{name}: {e}")))?;
        let run = RunInfo::new(&st, &self.trace, "batch");
        let mut rec = Recorder::open(self.log.as_deref(), &self.trace, true)?;
        rec.relax_sync()?;
        let mut t = Tally::default();
        let mut seen: HashMap<String, u64> = HashMap::new();
        let mut js = JsonOut {
            first: true,
            errors: Vec::new(),
            unlisted: 0,
        };
        if g.json {
            out!("{{\"boards\":[");
        }
        let mut stopped: Option<(u64, String)> = None;
        for line in rows {
            let line = line.map_err(|e| CliError::usage(format!("{name}: {e}")))?;
            let n = line.number;
            let (serial, r) = match line.row {
                Ok(x) => x,
                Err(msg) => {
                    t.bad += 1;
                    eprintln!("biasjig: {name}: line {n}: {msg}");
                    js.error(json!({"line": n, "message": msg}));
                    continue;
                }
            };
            let retest = match seen.get(&serial) {
                Some(first) => {
                    eprintln!(
                        "biasjig: {name}: line {n}: serial {serial} also on line {first}: \
                         tested again, recorded as a retest"
                    );
                    true
                }
                None => {
                    seen.insert(serial.clone(), n);
                    false
                }
            };
            let id = hex_digest(&[
                b"batch",
                st.hash.as_bytes(),
                run.settings_hash.as_bytes(),
                serial.as_bytes(),
                &n.to_le_bytes(),
                &line.raw,
            ]);
            if rec.already(&id)? {
                t.resumed += 1;
                continue;
            }
            let o = evaluate(&st, &r)?;
            let source = Source {
                kind: "batch".into(),
                file: Some(name.clone()),
                line: Some(n),
            };
            let mut board = from_outcome(&st, &run, &serial, &r, &o, Some(id), Some(source))?;
            board.retest = retest;
            if let Err(e) = rec.write(&mut board) {
                stopped = Some((n, format!("{e}")));
                break;
            }
            t.retests += u32::from(board.retest);
            match &o {
                Outcome::Judged(j) if j.verdict.pass => t.passed += 1,
                Outcome::Judged(..) => t.failed += 1,
                Outcome::Refused(_) => t.refused += 1,
            }
            if g.json {
                let mut doc = outcome_json(&o, r.vcc);
                if let Some(obj) = doc.as_object_mut() {
                    obj.insert("serial".into(), json!(serial));
                    obj.insert("line".into(), json!(n));
                    obj.insert("retest".into(), json!(board.retest));
                }
                js.board(&doc);
            } else {
                outln!(
                    "{:<12} {:<8} {}",
                    serial,
                    o.word().to_uppercase(),
                    summary_line(&st, &o)
                );
            }
        }
        if let Err(e) = rec.sync() {
            stopped.get_or_insert((0, e.to_string()));
        }
        if let Some((n, why)) = &stopped {
            eprintln!(
                "biasjig: {name}: line {n}: the record could not be written ({why}); the rows \
                 from line {n} to the end were not tested. Free the disk and run the same batch \
                 again: rows already recorded are skipped."
            );
        }
        let checked = t.passed + t.failed + t.refused;
        let yield_ = if checked > 0 {
            f64::from(t.passed) / f64::from(checked)
        } else {
            0.0
        };
        if t.resumed > 0 {
            eprintln!(
                "biasjig: {name}: {} rows already recorded by an earlier run: skipped",
                t.resumed
            );
        }
        if g.json {
            let summary = json!({"checked": checked, "passed": t.passed, "failed": t.failed,
                        "refused": t.refused, "bad_rows": t.bad, "yield": yield_,
                        "already_recorded": t.resumed, "retests": t.retests,
                        "errors_not_listed": js.unlisted,
                        "stopped_at_line": stopped.as_ref().map(|s| s.0)});
            out!(
                "],\"errors\":{},\"summary\":{}}}\n",
                Value::Array(std::mem::take(&mut js.errors)),
                summary
            );
            let _ = std::io::stdout().flush();
        } else {
            outln!(
                "\n{checked} boards checked: {} passed, {} failed, {} refused; yield {:.1} %; \
                 {} bad rows; {} retests; {} already recorded",
                t.passed,
                t.failed,
                t.refused,
                100.0 * yield_,
                t.bad,
                t.retests,
                t.resumed
            );
        }
        Ok(if t.bad > 0 || stopped.is_some() {
            EXIT_USAGE
        } else if t.failed + t.refused > 0 {
            EXIT_FAIL
        } else {
            EXIT_OK
        })
    }
}

fn summary_line(st: &Station, o: &Outcome) -> String {
    match o {
        Outcome::Refused(why) => why.to_string(),
        Outcome::Judged(j) => j.diagnosis.as_ref().map_or(String::new(), |d| {
            d.faults()
                .next()
                .map_or(String::new(), |h| crate::cmd::check::describe(&st.stage, h))
        }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn columns_in_any_order_and_bad_rows_by_line() {
        let text = "note,VC,vb,serial,ve,vcc\n\
                    x,8.0,2.55,A1,1.9,15\n\
                    y,8.1,abc,A2,1.9,15\n\
                    z,8.2,2.56,A3,-0.0012,15\n\
                    w,8.2,2.56,,1.9,15\n";
        let rows = parse(text).unwrap();
        assert_eq!(rows.len(), 4);
        let (line, ok) = &rows[0];
        assert_eq!(*line, 2);
        let (serial, r) = ok.as_ref().unwrap();
        assert_eq!(serial, "A1");
        assert_eq!((r.vcc, r.vb, r.ve, r.vc), (15.0, 2.55, 1.9, 8.0));
        assert_eq!(rows[1].0, 3);
        assert!(rows[1].1.as_ref().unwrap_err().contains("column vb: 'abc'"));
        assert_eq!(rows[2].1.as_ref().unwrap().1.ve, -0.0012);
        assert!(rows[3].1.as_ref().unwrap_err().contains("serial"));
        assert!(parse("serial,vb,ve,vc\n").unwrap_err().contains("'vcc'"));
    }

    #[test]
    fn crlf_lines_keep_their_numbers_and_blank_lines_count() {
        let text = "serial,vcc,vb,ve,vc\r\nA1,15,2.5,1.9,8\r\n\r\nA2,15,x,1.9,8\r\nA3,15,2.5,1.9,8";
        let rows = parse(text).unwrap();
        let lines: Vec<u64> = rows.iter().map(|r| r.0).collect();
        assert_eq!(lines, [2, 4, 5]);
        assert!(rows[1].1.as_ref().unwrap_err().contains("column vb: 'x'"));
        assert_eq!(rows[2].1.as_ref().unwrap().1.vc, 8.0);
    }

    #[test]
    fn a_row_that_is_not_utf8_is_refused_alone_with_its_line() {
        let mut bytes = b"serial,vcc,vb,ve,vc\nA1,15,2.5,1.9,8\nA\xff2,15,2.5,1.9,8\n".to_vec();
        bytes.extend_from_slice(b"A3,15,2.5,1.9,8\n");
        let rows: Vec<Line> = Rows::new(&bytes[..]).unwrap().map(Result::unwrap).collect();
        assert_eq!(rows.len(), 3);
        assert!(rows[0].row.is_ok() && rows[2].row.is_ok());
        assert_eq!(rows[1].number, 3);
        assert!(rows[1].row.as_ref().unwrap_err().contains("not UTF-8"));
    }

    #[test]
    fn duplicate_columns_are_said_and_long_rows_refused() {
        let e = parse("serial,vcc,vb,ve,vc,VB\n").unwrap_err();
        assert!(e.contains("'vb' appears 2 times (columns 3, 6)"), "{e}");
        let long = format!(
            "serial,vcc,vb,ve,vc\nA1,15,2.5,1.9,8,{}\nA2,15,2.5,1.9,8\n",
            "x".repeat(MAX_ROW)
        );
        let rows = parse(&long).unwrap();
        assert_eq!(rows.len(), 2);
        assert!(rows[0].1.as_ref().unwrap_err().contains("allowed: at most"));
        assert_eq!(rows[1].0, 3);
        assert!(rows[1].1.is_ok());
    }
}
