//! `biasjig repair`: the rework loop. A repair technician records what was actually wrong with a
//! failed board; `report` compares it with what the diagnosis named first (the line's own
//! accuracy figure).

use std::path::PathBuf;

use serde_json::json;

use crate::Global;
use biasjig::error::{CliError, CmdResult, EXIT_OK};
use biasjig::record::{self, RepairRecord};
use biasjig::{boardlog, clock, json, store};

/// Parts a repair may name (as `check` names them).
pub const PARTS: [&str; 9] = ["R1", "R2", "RC", "RE1", "RE2", "Q", "CIN", "COUT", "CE"];

/// Modes of a resistor or capacitor.
const PASSIVE_MODES: [&str; 4] = ["open", "short", "low", "high"];

/// Modes of the transistor.
const Q_MODES: [&str; 6] = [
    "be_open", "bc_open", "be_short", "bc_short", "ce_short", "reversed",
];

/// `biasjig repair --serial SN --part P --mode M (--store URL | --log FILE)`.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    /// Serial number of the board repaired
    #[arg(long)]
    serial: String,
    /// The part that was actually wrong: R1 R2 RC RE1 RE2 Q CIN COUT CE
    #[arg(long)]
    part: String,
    /// How it was wrong: open, short, low, high (Q: be_open, bc_open, be_short, bc_short, ce_short, reversed)
    #[arg(long)]
    mode: String,
    /// Who repaired it
    #[arg(long, value_name = "NAME")]
    technician: Option<String>,
    /// Free text
    #[arg(long)]
    note: Option<String>,
    /// Results store: sqlite:PATH or postgres://USER@HOST:PORT/DB
    #[arg(long, value_name = "URL", required_unless_present = "log")]
    store: Option<String>,
    /// Board log to append the repair to (JSON Lines)
    #[arg(long, value_name = "FILE")]
    log: Option<PathBuf>,
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let part = self.part.to_ascii_uppercase();
        if !PARTS.contains(&part.as_str()) {
            return Err(CliError::field(
                "--part",
                &self.part,
                format!("allowed: {}", PARTS.join(" ")),
            ));
        }
        let mode = self.mode.to_ascii_lowercase();
        let modes: &[&str] = if part == "Q" {
            &Q_MODES
        } else {
            &PASSIVE_MODES
        };
        if !modes.contains(&mode.as_str()) {
            return Err(CliError::field(
                "--mode",
                &self.mode,
                format!("allowed for {part}: {}", modes.join(" ")),
            ));
        }
        if self.serial.trim().is_empty() {
            return Err(CliError::field("--serial", "''", "a board's serial number"));
        }
        let time = clock::now_utc();
        let rep = RepairRecord {
            kind: "repair".into(),
            record_id: record::fresh_id(&self.serial),
            time,
            serial: self.serial.clone(),
            part,
            mode,
            technician: self.technician.clone(),
            note: self.note.clone(),
        };
        if let Some(url) = &self.store {
            store::open(url)?.insert_repair(&rep)?;
        }
        if let Some(path) = &self.log {
            boardlog::append(path, &rep)?;
        }
        if g.json {
            json::print(&json!({"record_id": rep.record_id, "serial": rep.serial,
                                "part": rep.part, "mode": rep.mode, "time": rep.time}));
        } else {
            outln!(
                "repair of {} recorded: {} {}",
                rep.serial,
                rep.part,
                rep.mode
            );
        }
        Ok(EXIT_OK)
    }
}
