//! `biasjig check`: judge one board's measured node voltages through the core's one judging
//! path ([`biasjig_core::judge::judge`]) and, when it fails, name the likely faulty part.
//!
//! Exit 0 pass, 1 fail. A supply outside the supply window (nominal ± supply tolerance) and
//! readings that cannot come from a powered, correctly probed board (a node above the supply or
//! below ground, every node equal) are refused: the board is not judged, exit 2 with what to
//! fix; with `--log` the refusal is logged too. A stage that is not forward active at its
//! nominal point gets no windows (exit 2).

use std::path::PathBuf;

use biasjig_core::signaltest::{self, ToneReading};
use biasjig_core::stage::Readings;

use crate::Global;
use biasjig::board::{from_outcome, Recorder, RunInfo};
use biasjig::error::{CliError, CmdResult, EXIT_FAIL, EXIT_OK};
use biasjig::stage_args::{SettingsArgs, StageArgs};
use biasjig::store::TraceArgs;
use biasjig::verdict::json::{add_provenance, add_separation, outcome_json};
use biasjig::verdict::text::outcome_text;
use biasjig::verdict::{evaluate, inputs_region_warning, Outcome, Station};
use biasjig::{json, values};

/// `biasjig check`: the stage by flags or `--design FILE`; `--vcc` is the supply as measured.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    #[command(flatten)]
    stage: StageArgs,
    /// Nominal supply of a stage given by flags, V (its window is this ± --vcc-tol)
    /// [default: the measured --vcc; with --design: the file's]
    #[arg(long = "vcc-nominal", value_name = "V", value_parser = values::volts, help_heading = "Stage")]
    vcc_nominal: Option<f64>,
    /// Measured base voltage, V
    #[arg(long, value_parser = values::signed_volts, allow_hyphen_values = true, help_heading = "Readings")]
    vb: f64,
    /// Measured emitter voltage, V
    #[arg(long, value_parser = values::signed_volts, allow_hyphen_values = true, help_heading = "Readings")]
    ve: f64,
    /// Measured collector voltage, V
    #[arg(long, value_parser = values::signed_volts, allow_hyphen_values = true, help_heading = "Readings")]
    vc: f64,
    /// Signal test: the gain magnitude G = |v(load)/v(source EMF)| read at F Hz, as F:G
    /// (repeatable, at most 4; e.g. --ac 1k:14.2 --ac 20:9.8)
    #[arg(long = "ac", value_name = "F:G", value_parser = tone_reading, help_heading = "Readings")]
    ac: Vec<ToneReading>,
    /// Board serial number, for the log
    #[arg(long, help_heading = "Readings")]
    serial: Option<String>,
    /// Append a record of this board to FILE (JSON Lines)
    #[arg(long, value_name = "FILE", help_heading = "Readings")]
    log: Option<PathBuf>,
    #[command(flatten)]
    settings: SettingsArgs,
    #[command(flatten)]
    trace: TraceArgs,
}

/// Parse one `--ac F:G`: F in Hz (value grammar), G the gain magnitude (plain number).
fn tone_reading(text: &str) -> Result<ToneReading, String> {
    let allowed = "allowed: F:G with F a frequency of 0.1 Hz to 100 kHz (e.g. 1k or 20) and G a \
                   gain magnitude of 0 to 100000 (e.g. 14.2)";
    let (f, g) = text
        .split_once(':')
        .ok_or_else(|| format!("{text:?}: {allowed}"))?;
    let f = values::value(f.trim().trim_end_matches("Hz"))
        .map_err(|e| format!("{text:?}: frequency: {e}; {allowed}"))?;
    let g: f64 = g
        .trim()
        .parse()
        .map_err(|_| format!("{text:?}: gain {g:?} is not a plain number; {allowed}"))?;
    let r = ToneReading { f, gain: g };
    signaltest::validate_reading(&r).map_err(|e| format!("{text:?}: {e}; {allowed}"))?;
    Ok(r)
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let Some(measured_vcc) = self.stage.vcc else {
            return Err(CliError::usage(
                "--vcc: missing: give the supply as measured on the board",
            ));
        };
        // With a design file, the file's supply is the nominal and --vcc the measured one; for
        // a stage by flags the nominal is --vcc-nominal, or the measured supply itself.
        let mut args = self.stage.clone();
        if args.design.is_some() {
            if self.vcc_nominal.is_some() {
                return Err(CliError::usage(
                    "--vcc-nominal: the design file states the nominal supply; give it only with \
                     a stage by flags",
                ));
            }
            args.vcc = None;
        } else if let Some(v) = self.vcc_nominal {
            args.vcc = Some(v);
        }
        let resolved = args.resolve_for_test(&self.settings)?;
        let st = Station::new(&resolved);
        if let Some(w) = inputs_region_warning(&st) {
            eprintln!("biasjig: warning: {}", w.text);
        }
        let r = Readings {
            vcc: measured_vcc,
            vb: self.vb,
            ve: self.ve,
            vc: self.vc,
        };
        if self.trace.store.is_some() && self.serial.is_none() {
            return Err(CliError::usage(
                "--serial: missing: a test in the store names its board by serial number",
            ));
        }
        let o = evaluate(&st, &r, &self.ac)?;
        let mut rec = Recorder::open(self.log.as_deref(), &self.trace, false)?;
        if !rec.is_empty() {
            // Without --serial the log keeps the test, but it is no board record for a report.
            let serial = self.serial.as_deref().unwrap_or("");
            let run = RunInfo::new(&st, &self.trace, "check");
            rec.write(&mut from_outcome(&st, &run, serial, &r, &o, None, None)?)?;
        }
        match &o {
            Outcome::Refused(why) => {
                // The document still says what happened ("refused", the supply window): a
                // station script reads why the board was not judged from stdout too.
                if g.json {
                    let mut doc = outcome_json(&o, r.vcc);
                    add_provenance(&st, &mut doc);
                    json::print(&doc);
                }
                Err(CliError::usage(format!(
                    "not judged (vcc {} V, vb {} V, ve {} V, vc {} V): {why}",
                    r.vcc, r.vb, r.ve, r.vc
                )))
            }
            Outcome::Judged(j) => {
                if g.json {
                    let mut doc = outcome_json(&o, r.vcc);
                    add_provenance(&st, &mut doc);
                    add_separation(&st, r.vcc, &o, &mut doc);
                    json::print(&doc);
                } else {
                    let supply_judged = self.stage.design.is_some() || self.vcc_nominal.is_some();
                    out!(
                        "{}",
                        outcome_text(&st, self.serial.as_deref(), &r, &o, supply_judged)
                    );
                }
                Ok(if j.verdict.pass { EXIT_OK } else { EXIT_FAIL })
            }
        }
    }
}
