//! `biasjig report`: figures a quality engineer can sign, per design hash (never merged), from a
//! results store (`--store URL`) or board logs (`LOG...`), for a station, a lot and a date range.
//!
//! Every record is read as a whole board record: its verdict is re-derived from its windows and
//! readings, and a record that is not whole (an edited verdict, a bare `{"verdict":"pass"}`) is
//! refused with its line and left out (exit 2 after the report). Damaged lines of a log (a torn
//! last line) are skipped with a warning. A record met twice (a log given twice, a log and the
//! store it was imported into) counts once. See [`biasjig::analysis`] for the figures.

use std::collections::HashSet;
use std::path::{Path, PathBuf};

use serde_json::{json, Value};

use crate::Global;
use biasjig::analysis::{render, Analysis};
use biasjig::error::{CliError, CmdResult, EXIT_OK, EXIT_USAGE};
use biasjig::record::{BoardRecord, RepairRecord};
use biasjig::store::{self, Filter};
use biasjig::{boardlog, clock, json};

/// At most this many refused records are named one by one on stderr.
const NAMED: usize = 50;

/// `biasjig report`.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    /// Board logs written by `check --log`, `batch --log` or `station --log`
    #[arg(value_name = "LOG", required_unless_present = "store")]
    logs: Vec<PathBuf>,
    /// Results store: sqlite:PATH or postgres://USER@HOST:PORT/DB
    #[arg(long, value_name = "URL")]
    store: Option<String>,
    /// Only the tests of this station
    #[arg(long, value_name = "NAME")]
    station: Option<String>,
    /// Only the tests of this lot
    #[arg(long, value_name = "NAME")]
    lot: Option<String>,
    /// Only tests from this date or time on (UTC: 2031-05-06 or 2031-05-06T07:08:09Z)
    #[arg(long, value_name = "DATE")]
    since: Option<String>,
    /// Only tests up to this date (the whole day) or time (UTC)
    #[arg(long, value_name = "DATE")]
    until: Option<String>,
    /// Write one SVG control chart and histogram per node and design into DIR
    #[arg(long = "svg-dir", value_name = "DIR")]
    svg_dir: Option<PathBuf>,
    /// Write the report as one self-contained HTML page with the charts inline
    #[arg(long, value_name = "FILE")]
    html: Option<PathBuf>,
}

fn date_flag(flag: &str, v: &Option<String>, end_of_day: bool) -> Result<Option<i64>, CliError> {
    let Some(s) = v else {
        return Ok(None);
    };
    let ms = clock::parse_ms(s).ok_or_else(|| {
        CliError::field(
            flag,
            s,
            "allowed: a UTC date 2031-05-06 or time 2031-05-06T07:08:09Z",
        )
    })?;
    Ok(Some(if end_of_day && s.len() == 10 {
        ms + 86_400_000 - 1
    } else {
        ms
    }))
}

/// What loading met besides whole records.
#[derive(Debug, Default)]
struct Loaded {
    refused: u64,
    skipped_lines: u64,
    doubles: u64,
}

/// Write a file whole: a temporary file beside it, then a rename.
fn write_atomic(path: &Path, text: &str) -> std::io::Result<()> {
    biasjig::files::write_atomic(path, text.as_bytes())
}

impl Cmd {
    fn filter(&self) -> Result<Filter, CliError> {
        Ok(Filter {
            station: self.station.clone(),
            lot: self.lot.clone(),
            since_ms: date_flag("--since", &self.since, false)?,
            until_ms: date_flag("--until", &self.until, true)?,
        })
    }

    fn load(&self, filter: &Filter) -> Result<(Analysis, Loaded), CliError> {
        let mut st = match &self.store {
            Some(u) => Some(store::open(u)?),
            None => None,
        };
        // Repairs first: the rework loop matches each to the failed test before it.
        let mut repairs: Vec<RepairRecord> = match &mut st {
            Some(s) => s.repairs()?,
            None => Vec::new(),
        };
        for log in &self.logs {
            boardlog::for_each::<CliError>(
                log,
                |_, v| {
                    if v.get("kind").and_then(Value::as_str) == Some("repair") {
                        if let Ok(r) = serde_json::from_value::<RepairRecord>(v) {
                            repairs.push(r);
                        }
                    }
                    Ok(())
                },
                |_| {},
            )?;
        }
        let mut seen_repairs = HashSet::new();
        repairs.retain(|r| seen_repairs.insert(r.record_id.clone()));
        let mut a = Analysis::with_repairs(repairs);
        let mut l = Loaded::default();
        let mut seen: HashSet<String> = HashSet::new();
        let mut take = |r: BoardRecord, l: &mut Loaded| {
            if seen.insert(r.record_id.clone()) {
                a.add(&r);
            } else {
                l.doubles += 1;
            }
        };
        if let Some(s) = &mut st {
            s.for_each_test(filter, &mut |r| {
                take(r, &mut l);
                Ok(())
            })?;
        }
        for log in &self.logs {
            let name = log.display().to_string();
            let mut refused = 0u64;
            let mut skipped = 0u64;
            boardlog::for_each::<CliError>(
                log,
                |line, v| {
                    if v.get("kind").and_then(Value::as_str) == Some("repair") {
                        return Ok(());
                    }
                    match BoardRecord::from_value(v) {
                        Ok(r) if filter.admits(&r) => take(r, &mut l),
                        Ok(_) => {}
                        Err(e) => {
                            refused += 1;
                            if refused <= NAMED as u64 {
                                eprintln!("biasjig: {name}: line {line}: record refused: {e}");
                            }
                        }
                    }
                    Ok(())
                },
                |w| {
                    skipped += 1;
                    eprintln!("biasjig: warning: {name}: {w}");
                },
            )?;
            if refused > NAMED as u64 {
                eprintln!(
                    "biasjig: {name}: {} more refused records not named",
                    refused - NAMED as u64
                );
            }
            l.refused += refused;
            l.skipped_lines += skipped;
        }
        Ok((a, l))
    }

    fn filter_note(&self) -> String {
        let mut parts = Vec::new();
        if let Some(s) = &self.store {
            parts.push(format!("store {s}"));
        }
        for l in &self.logs {
            parts.push(format!("log {}", l.display()));
        }
        for (k, v) in [
            ("station", &self.station),
            ("lot", &self.lot),
            ("since", &self.since),
            ("until", &self.until),
        ] {
            if let Some(v) = v {
                parts.push(format!("{k} {v}"));
            }
        }
        format!("From {}; written {}.", parts.join(", "), clock::now_utc())
    }

    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let filter = self.filter()?;
        let (a, l) = self.load(&filter)?;
        if let Some(path) = &self.html {
            let page = render::html(&a, &self.filter_note())
                .map_err(|e| CliError::usage(format!("plot: {e}")))?;
            write_atomic(path, &page)
                .map_err(|e| CliError::usage(format!("--html: {}: {e}", path.display())))?;
        }
        if let Some(dir) = &self.svg_dir {
            self.write_svgs(&a, dir)?;
        }
        if g.json {
            let designs: Vec<Value> = a
                .designs
                .iter()
                .map(|d| render::design_json(&a, d))
                .collect();
            let w = a.rework(None);
            json::print(&json!({
                "designs": designs,
                "filter": {"station": self.station, "lot": self.lot, "since": self.since,
                           "until": self.until},
                "refused_records": l.refused,
                "skipped_lines": l.skipped_lines,
                "records_met_twice": l.doubles,
                "repairs": w.repairs,
            }));
        } else {
            outln!("{}", self.filter_note());
            if a.designs.is_empty() {
                outln!("No tests.");
            }
            for d in &a.designs {
                outln!("\n{}", render::design_text(&a, d));
            }
            if l.refused > 0 || l.skipped_lines > 0 {
                outln!(
                    "{} records refused (not whole board records), {} damaged lines skipped",
                    l.refused,
                    l.skipped_lines
                );
            }
        }
        Ok(if l.refused > 0 { EXIT_USAGE } else { EXIT_OK })
    }

    fn write_svgs(&self, a: &Analysis, dir: &Path) -> Result<(), CliError> {
        let bad = |e: String| CliError::usage(format!("--svg-dir: {}: {e}", dir.display()));
        std::fs::create_dir_all(dir).map_err(|e| bad(e.to_string()))?;
        for d in &a.designs {
            for n in render::nodes(d) {
                let p = biasjig::analysis::charts::NodePlot {
                    name: n.name,
                    unit: n.unit,
                    values: &n.values,
                    window: n.window,
                    chart: n.chart.as_ref(),
                };
                for (kind, svg) in [
                    (
                        "chart",
                        biasjig::analysis::charts::control(&p).map_err(|e| bad(e.to_string()))?,
                    ),
                    (
                        "histogram",
                        biasjig::analysis::charts::histogram(&p).map_err(|e| bad(e.to_string()))?,
                    ),
                ] {
                    let f = dir.join(format!("{}-{}-{kind}.svg", d.hash, n.name));
                    write_atomic(&f, &svg).map_err(|e| bad(e.to_string()))?;
                }
            }
        }
        Ok(())
    }
}
