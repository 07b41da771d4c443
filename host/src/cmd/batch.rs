//! `biasjig batch`: check many boards from a CSV file of readings.
//!
//! The CSV has a header naming `serial`, `vcc`, `vb`, `ve`, `vc` (any order, any case; other
//! columns are ignored). Signal-test readings go in columns named `gain@F`, F the test frequency in
//! the value grammar (`gain@1k`, `gain@20`; at most 4): each cell the gain magnitude read at F, an
//! empty cell when not read. Each good row is checked (and logged with `--log`); a bad row gives an
//! error naming its line and column and loses no other row. A yield summary closes the run.
//! Exit 2 when a row was bad (every good row is still checked and logged), otherwise 1 when a
//! board failed or was refused, otherwise 0.

use std::path::PathBuf;

use biasjig_core::signaltest::{self, ToneReading, MAX_TONES};
use biasjig_core::stage::Readings;
use biasjig_core::units;
use serde_json::{json, Value};

use crate::boardlog;
use crate::cmd::check::{evaluate, log_record, outcome_json, Outcome, Station};
use crate::error::{CliError, CmdResult, EXIT_FAIL, EXIT_OK, EXIT_USAGE};
use crate::stage_args::{InputArgs, StageArgs, TestArgs};
use crate::{json, Global};

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
}

/// One readings row (serial, DC readings, gain readings), or why it is bad.
pub type Row = Result<(String, Readings, Vec<ToneReading>), String>;

/// Parse the CSV text into rows with their line numbers; a missing column is an error for the
/// whole file.
pub fn parse(text: &str) -> Result<Vec<(u64, Row)>, String> {
    let mut rdr = csv::ReaderBuilder::new()
        .flexible(true)
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());
    let header = rdr
        .headers()
        .map_err(|e| format!("line 1: header: {e}"))?
        .clone();
    let find = |name: &str| header.iter().position(|h| h.eq_ignore_ascii_case(name));
    let mut cols = Vec::new();
    for name in ["serial", "vcc", "vb", "ve", "vc"] {
        match find(name) {
            Some(k) => cols.push(k),
            None => {
                return Err(format!(
                    "line 1: header: no column '{name}'; the header must name serial, vcc, vb, ve and vc"
                ))
            }
        }
    }
    // Signal-test columns: gain@F.
    let mut gains: Vec<(usize, f64)> = Vec::new();
    for (k, h) in header.iter().enumerate() {
        let lower = h.to_ascii_lowercase();
        if let Some(f) = lower.strip_prefix("gain@") {
            let f = units::parse_value(f.trim_end_matches("hz")).map_err(|e| {
                format!("line 1: header: column '{h}': frequency: {e}; allowed: gain@F with F in Hz such as gain@1k")
            })?;
            signaltest::validate_frequency(f)
                .map_err(|e| format!("line 1: header: column '{h}': {e}"))?;
            gains.push((k, f));
        }
    }
    if gains.len() > MAX_TONES {
        return Err(format!(
            "line 1: header: {} gain@F columns; at most {MAX_TONES}",
            gains.len()
        ));
    }
    let mut out = Vec::new();
    for rec in rdr.records() {
        let rec = match rec {
            Ok(r) => r,
            Err(e) => {
                let line = e.position().map_or(0, |p| p.line());
                out.push((line, Err(format!("{e}"))));
                continue;
            }
        };
        let line = rec.position().map_or(0, |p| p.line());
        if rec.iter().all(|f| f.is_empty()) {
            continue;
        }
        let field = |k: usize| {
            rec.get(cols.get(k).copied().unwrap_or(usize::MAX))
                .unwrap_or("")
        };
        let value = |k: usize, name: &str| -> Result<f64, String> {
            let t = field(k);
            units::parse_signed(t).map_err(|e| {
                format!("column {name}: '{t}': {e}; allowed: a number such as 2.51 or -0.0012")
            })
        };
        let serial = field(0).to_string();
        let row = (|| -> Row {
            if serial.is_empty() {
                return Err("column serial: empty; every board needs a serial number".into());
            }
            let r = Readings {
                vcc: value(1, "vcc")?,
                vb: value(2, "vb")?,
                ve: value(3, "ve")?,
                vc: value(4, "vc")?,
            };
            let mut tones = Vec::new();
            for (k, f) in &gains {
                let t = rec.get(*k).unwrap_or("");
                if t.is_empty() {
                    continue;
                }
                let name = header.get(*k).unwrap_or("gain");
                let g: f64 = t.parse().map_err(|_| {
                    format!("column {name}: '{t}': not a plain number; allowed: a gain magnitude such as 14.2")
                })?;
                let reading = ToneReading { f: *f, gain: g };
                signaltest::validate_reading(&reading)
                    .map_err(|e| format!("column {name}: '{t}': {e}"))?;
                tones.push(reading);
            }
            Ok((serial.clone(), r, tones))
        })();
        out.push((line, row));
    }
    Ok(out)
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let resolved = self
            .stage
            .resolve_with(Some(&self.inputs), Some(&self.test))?;
        let st = Station::new(&resolved);
        let text = std::fs::read_to_string(&self.readings).map_err(|e| {
            CliError::usage(format!(
                "{}: cannot read the readings: {e}",
                self.readings.display()
            ))
        })?;
        let rows = parse(&text)
            .map_err(|e| CliError::usage(format!("{}: {e}", self.readings.display())))?;
        let (mut passed, mut failed, mut refused, mut bad) = (0u32, 0u32, 0u32, 0u32);
        let mut boards: Vec<Value> = Vec::new();
        let mut errors: Vec<Value> = Vec::new();
        for (line, row) in rows {
            let (serial, r, tones) = match row {
                Ok(x) => x,
                Err(msg) => {
                    bad += 1;
                    eprintln!("biasjig: {}: line {line}: {msg}", self.readings.display());
                    errors.push(json!({"line": line, "message": msg}));
                    continue;
                }
            };
            let o = evaluate(&st, &r, &tones)?;
            if let Some(path) = &self.log {
                boardlog::append(path, &log_record(&st, Some(&serial), &r, &o))?;
            }
            match &o {
                Outcome::Judged(j) if j.verdict.pass => passed += 1,
                Outcome::Judged(..) => failed += 1,
                Outcome::Refused(_) => refused += 1,
            }
            if g.json {
                let mut doc = outcome_json(&o, r.vcc);
                if let Some(obj) = doc.as_object_mut() {
                    obj.insert("serial".into(), json!(serial));
                    obj.insert("line".into(), json!(line));
                }
                boards.push(doc);
            } else {
                outln!(
                    "{:<12} {:<8} {}",
                    serial,
                    o.word().to_uppercase(),
                    summary_line(&st, &o)
                );
            }
        }
        let checked = passed + failed + refused;
        let yield_ = if checked > 0 {
            f64::from(passed) / f64::from(checked)
        } else {
            0.0
        };
        if g.json {
            json::print(&json!({
                "boards": boards,
                "errors": errors,
                "summary": {"checked": checked, "passed": passed, "failed": failed,
                            "refused": refused, "bad_rows": bad, "yield": yield_},
            }));
        } else {
            outln!(
                "\n{checked} boards checked: {passed} passed, {failed} failed, {refused} refused; \
                 yield {:.1} %; {bad} bad rows",
                100.0 * yield_
            );
        }
        Ok(if bad > 0 {
            EXIT_USAGE
        } else if failed + refused > 0 {
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
        let (serial, r, tones) = ok.as_ref().unwrap();
        assert_eq!(serial, "A1");
        assert!(tones.is_empty());
        assert_eq!((r.vcc, r.vb, r.ve, r.vc), (15.0, 2.55, 1.9, 8.0));
        assert_eq!(rows[1].0, 3);
        assert!(rows[1].1.as_ref().unwrap_err().contains("column vb: 'abc'"));
        assert_eq!(rows[2].1.as_ref().unwrap().1.ve, -0.0012);
        assert!(rows[3].1.as_ref().unwrap_err().contains("serial"));
        assert!(parse("serial,vb,ve,vc\n").unwrap_err().contains("'vcc'"));
    }

    #[test]
    fn gain_columns_by_frequency() {
        let text = "serial,vcc,vb,ve,vc,gain@1k,Gain@20Hz\n\
                    A1,12,2.05,1.39,5.74,13.7,13.5\n\
                    A2,12,2.05,1.39,5.74,,3.2\n\
                    A3,12,2.05,1.39,5.74,x,1\n";
        let rows = parse(text).unwrap();
        let (_, _, t) = rows[0].1.as_ref().unwrap();
        assert_eq!(t.len(), 2);
        assert_eq!(
            (t[0].f, t[0].gain, t[1].f, t[1].gain),
            (1000.0, 13.7, 20.0, 13.5)
        );
        let (_, _, t) = rows[1].1.as_ref().unwrap();
        assert_eq!((t.len(), t[0].f), (1, 20.0));
        assert!(rows[2]
            .1
            .as_ref()
            .unwrap_err()
            .contains("column gain@1k: 'x'"));
        assert!(parse("serial,vcc,vb,ve,vc,gain@9M\n")
            .unwrap_err()
            .contains("gain@9M"));
    }
}
