//! `biasjig batch`: check many boards from a CSV file of readings.
//!
//! The CSV has a header naming `serial`, `vcc`, `vb`, `ve`, `vc` (any order, any case, each
//! once; other columns are ignored). Signal-test readings go in columns named `gain@F`, F the
//! test frequency in the value grammar (`gain@1k`, `gain@20`; at most 4): each cell the gain
//! magnitude read at F, an empty cell when not read. The file is read one line at a time (bounded memory
//! whatever its length); a row is one line (no quoted line breaks), LF or CRLF, at most
//! [`biasjig::readings::MAX_ROW`] bytes. A bad row (not UTF-8, too long, a value that is not a number, no serial)
//! is refused alone with its line number, and loses no other row. A serial given again is said
//! and recorded as a retest.
//!
//! Each board is recorded (`--log`, `--store`) under a record id derived from the design, the
//! settings and the row itself, so a batch killed and run again skips the rows already
//! recorded and doubles nothing. Each test is one store transaction; commits do not wait for
//! the disk (a power cut may lose the last tests, which the batch run again records). When a
//! record cannot be written (a full disk), nothing of it is kept, the batch stops and says from
//! which line on the rows were not tested.
//!
//! Exit 2 when a row was bad or the batch stopped (every good row before is still checked and
//! recorded), otherwise 1 when a board failed or was refused, otherwise 0.

use std::collections::HashMap;
use std::io::{BufReader, Write};
use std::path::PathBuf;

use serde_json::{json, Value};

use crate::Global;
use biasjig::board::{from_outcome, Recorder, RunInfo};
use biasjig::error::{CliError, CmdResult, EXIT_FAIL, EXIT_OK, EXIT_USAGE};
use biasjig::readings::Rows;
use biasjig::record::{hex_digest, Source};
use biasjig::stage_args::{SettingsArgs, StageArgs};
use biasjig::store::TraceArgs;
use biasjig::verdict::json::outcome_json;
use biasjig::verdict::{describe, evaluate, Outcome, Station};

/// At most this many bad rows are listed in the JSON document (all are counted and all are
/// named on stderr).
pub const LISTED_ERRORS: usize = 10_000;

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
    settings: SettingsArgs,
    #[command(flatten)]
    trace: TraceArgs,
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
        let resolved = self.stage.resolve_for_test(&self.settings)?;
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
            let (serial, r, tones) = match line.row {
                Ok(x) => x,
                Err(msg) => {
                    t.bad += 1;
                    eprintln!("biasjig: {name}: line {n}: {msg}");
                    js.error(json!({"line": n, "message": msg.to_string()}));
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
            let o = evaluate(&st, &r, &tones)?;
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
                .map_or(String::new(), |h| describe(&st.stage, h))
        }),
    }
}
