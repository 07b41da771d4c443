//! `biasjig import --store URL LOG...`: load board logs (JSON Lines) into a results store.
//!
//! Each line is read as a whole board record (or a repair record) and written under its record
//! id, so a record already in the store is skipped: importing the same log twice, or a log that
//! overlaps another, doubles nothing. A line that is not a whole record is refused with its line
//! number and the reason; every other line is still imported (exit 2 when a line was refused).

use std::path::PathBuf;

use serde_json::{json, Value};

use crate::Global;
use biasjig::boardlog;
use biasjig::error::{CliError, CmdResult, EXIT_OK, EXIT_USAGE};
use biasjig::json;
use biasjig::record::{BoardRecord, RepairRecord};
use biasjig::store::{self, IMPORT_CHUNK};

/// At most this many refused lines are named one by one on stderr (all are counted).
const NAMED: usize = 50;

/// `biasjig import`.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    /// Results store: sqlite:PATH or postgres://USER@HOST:PORT/DB
    #[arg(long, value_name = "URL")]
    store: String,
    /// Board logs written by `check --log`, `batch --log` or `station --log`
    #[arg(value_name = "LOG", required = true)]
    logs: Vec<PathBuf>,
}

/// Counts of one import.
#[derive(Debug, Default, Clone, Copy)]
struct Counts {
    read: u64,
    new: u64,
    refused: u64,
    skipped_lines: u64,
    repairs_new: u64,
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let mut st = store::open(&self.store)?;
        let mut c = Counts::default();
        let mut chunk: Vec<BoardRecord> = Vec::with_capacity(IMPORT_CHUNK);
        for log in &self.logs {
            let name = log.display().to_string();
            let mut named = 0usize;
            boardlog::for_each::<CliError>(
                log,
                |line, v: Value| {
                    if v.get("kind").and_then(Value::as_str) == Some("repair") {
                        let rep: RepairRecord = serde_json::from_value(v).map_err(|e| {
                            CliError::usage(format!("{name}: line {line}: repair record: {e}"))
                        })?;
                        c.repairs_new += u64::from(st.insert_repair(&rep)?);
                        return Ok(());
                    }
                    c.read += 1;
                    match BoardRecord::from_value(v) {
                        Ok(r) => {
                            chunk.push(r);
                            if chunk.len() >= IMPORT_CHUNK {
                                c.new += st.insert_many(&mut chunk)? as u64;
                                chunk.clear();
                            }
                        }
                        Err(e) => {
                            c.refused += 1;
                            named += 1;
                            if named <= NAMED {
                                eprintln!("biasjig: {name}: line {line}: refused: {e}");
                            }
                        }
                    }
                    Ok(())
                },
                |w| {
                    c.skipped_lines += 1;
                    eprintln!("biasjig: warning: {name}: {w}");
                },
            )?;
            if named > NAMED {
                eprintln!(
                    "biasjig: {name}: {} more refused lines not named",
                    named - NAMED
                );
            }
        }
        c.new += st.insert_many(&mut chunk)? as u64;
        let already = c.read - c.refused - c.new;
        if g.json {
            json::print(&json!({
                "records": c.read, "new": c.new, "already_there": already,
                "refused": c.refused, "skipped_lines": c.skipped_lines,
                "repairs_new": c.repairs_new, "schema_version": st.schema_version()?,
            }));
        } else {
            outln!(
                "{} records read: {} new, {already} already in the store, {} refused; \
                 {} damaged lines skipped; {} repairs new",
                c.read,
                c.new,
                c.refused,
                c.skipped_lines,
                c.repairs_new
            );
        }
        Ok(if c.refused > 0 { EXIT_USAGE } else { EXIT_OK })
    }
}
