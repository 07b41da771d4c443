//! From a checked board to its [`BoardRecord`], and the [`Recorder`] that writes records to the
//! JSON Lines log and the results store: the one path `check`, `batch` and `station` share.

use std::collections::HashSet;
use std::path::{Path, PathBuf};

use biasjig_core::stage::Readings;
use serde_json::{json, Value};
use thiserror::Error;

use crate::boardlog::{self, Appender, LogError, ReadLogError};
use crate::record::{self, BoardRecord, Edges, Nominal, Source};
use crate::store::{self, Store, StoreError, TraceArgs};
use crate::verdict::json::{outcome_json, overrides_json, settings_json};
use crate::verdict::{board_windows, Outcome, Station, NODES};

/// The settings digest (hex SHA-256) of everything the verdict depends on: the core's digest of
/// the stage, transistor and test settings (test ambient, meter, measuring inputs).
pub fn settings_hash(st: &Station) -> String {
    st.digest.to_string()
}

/// The windows at the design's nominal supply (the same for every board of a run).
pub fn nominal(st: &Station) -> Option<Nominal> {
    let vcc = st.stage.vcc.value;
    let lim = board_windows(st, vcc).ok()?.limits;
    let windows = NODES
        .iter()
        .filter_map(|n| {
            lim.window(*n).map(|w| {
                (
                    n.name().to_string(),
                    Edges {
                        low: w.low,
                        high: w.high,
                    },
                )
            })
        })
        .collect();
    Some(Nominal { vcc, windows })
}

/// What a run knows about every record it writes.
#[derive(Debug, Clone)]
pub struct RunInfo {
    /// Settings hash.
    pub settings_hash: String,
    /// Windows at the nominal supply.
    pub nominal: Option<Nominal>,
    /// Station, operator, lot.
    pub trace: TraceArgs,
    /// `check`, `batch` or `station`.
    pub kind: &'static str,
}

impl RunInfo {
    /// For a station (design and settings) and the trace flags.
    pub fn new(st: &Station, trace: &TraceArgs, kind: &'static str) -> Self {
        Self {
            settings_hash: settings_hash(st),
            nominal: nominal(st),
            trace: trace.clone(),
            kind,
        }
    }
}

/// The record of a board checked on this PC. `id` is the record id (a fresh one when `None`).
pub fn from_outcome(
    st: &Station,
    run: &RunInfo,
    serial: &str,
    r: &Readings,
    o: &Outcome,
    id: Option<String>,
    source: Option<Source>,
) -> Result<BoardRecord, RecordError> {
    let mut doc = outcome_json(o, r.vcc);
    let head = json!({
        "record_id": id.unwrap_or_else(|| record::fresh_id(serial)),
        "time": crate::clock::now_utc(),
        "serial": serial,
        "design": {"id": st.id, "hash": st.hash, "digest": st.file_digest},
        "settings": settings_json(&st.settings),
        "overrides": overrides_json(st),
        "readings": {"vcc": r.vcc, "vb": r.vb, "ve": r.ve, "vc": r.vc},
        "tool_version": record::TOOL_VERSION,
    });
    if let (Some(obj), Value::Object(h)) = (doc.as_object_mut(), head) {
        obj.extend(h);
    }
    let mut rec: BoardRecord = serde_json::from_value(doc).map_err(|why| RecordError::Form {
        serial: serial.to_string(),
        why,
    })?;
    rec.settings_hash = Some(run.settings_hash.clone());
    rec.nominal.clone_from(&run.nominal);
    rec.source = source.or_else(|| {
        Some(Source {
            kind: run.kind.into(),
            file: None,
            line: None,
        })
    });
    run.trace.stamp(&mut rec);
    Ok(rec)
}

/// Why a record could not be formed or written, or its sinks not opened.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum RecordError {
    /// The log failed (nothing of the record was kept there).
    #[error(transparent)]
    Log(#[from] LogError),
    /// The store failed (the transaction was rolled back).
    #[error(transparent)]
    Store(#[from] StoreError),
    /// The log's record ids could not be read (a resumed run).
    #[error(transparent)]
    ReadLog(#[from] ReadLogError),
    /// The board's result does not make a record.
    #[error("board {serial}: cannot form its record: {why}")]
    Form {
        /// The board's serial number.
        serial: String,
        /// Why.
        why: serde_json::Error,
    },
}

/// Where records go: the log, the store, or both.
pub struct Recorder {
    log: Option<Appender>,
    log_ids: Option<HashSet<String>>,
    store: Option<Box<dyn Store>>,
}

impl Recorder {
    /// Open the sinks. With `resume`, the ids already in the log are read, so that records
    /// already there are not written again.
    pub fn open(log: Option<&Path>, trace: &TraceArgs, resume: bool) -> Result<Self, RecordError> {
        let log_ids = match (log, resume) {
            (Some(p), true) => Some(boardlog::ids(p)?),
            _ => None,
        };
        let log = log.map(Appender::open).transpose()?;
        Ok(Self {
            log,
            log_ids,
            store: trace.store.as_deref().map(store::open).transpose()?,
        })
    }

    /// Nothing to write to.
    pub fn is_empty(&self) -> bool {
        self.log.is_none() && self.store.is_none()
    }

    /// The record with this id is already in every sink (a resumed run skips it).
    pub fn already(&mut self, id: &str) -> Result<bool, RecordError> {
        if self.is_empty() {
            return Ok(false);
        }
        let in_log = match (&self.log, &self.log_ids) {
            (None, _) => true,
            (Some(_), Some(ids)) => ids.contains(id),
            (Some(_), None) => false,
        };
        let in_store = match &mut self.store {
            None => true,
            Some(s) => s.contains(id)?,
        };
        Ok(in_log && in_store)
    }

    /// Write the record: to the store first (one transaction; it sets the retest flag), then
    /// to the log (one whole line). A sink that has the record already is left alone.
    pub fn write(&mut self, rec: &mut BoardRecord) -> Result<(), RecordError> {
        if let Some(s) = &mut self.store {
            s.insert(rec)?;
        }
        if let Some(log) = &mut self.log {
            let there = self
                .log_ids
                .as_ref()
                .is_some_and(|ids| ids.contains(&rec.record_id));
            if !there {
                log.append(rec)?;
                if let Some(ids) = &mut self.log_ids {
                    ids.insert(rec.record_id.clone());
                }
            }
        }
        Ok(())
    }

    /// Batch mode: commits stop waiting for the disk (see [`Store::relax_sync`]); the log
    /// syncs every [`boardlog::SYNC_EVERY`] records already.
    pub fn relax_sync(&mut self) -> Result<(), RecordError> {
        if let Some(s) = &mut self.store {
            s.relax_sync()?;
        }
        Ok(())
    }

    /// Tests of this serial with this design already in the store (0 without a store).
    pub fn store_tests_of(&mut self, serial: &str, design_hash: &str) -> Result<u64, RecordError> {
        Ok(match &mut self.store {
            Some(s) => s.tests_of(serial, design_hash)?,
            None => 0,
        })
    }

    /// Sync the log to the disk.
    pub fn sync(&mut self) -> Result<(), RecordError> {
        if let Some(l) = &mut self.log {
            l.sync()?;
        }
        Ok(())
    }
}

/// Where the station loop writes its records: the recorder and the trace flags.
pub struct StationSink {
    /// The log and/or store.
    pub rec: Recorder,
    /// Station, operator, lot.
    pub trace: TraceArgs,
    /// The instrument's identification line, when an instrument judged the boards.
    pub firmware: Option<String>,
    /// The log, for the serials already tested there.
    pub log: Option<PathBuf>,
}

impl StationSink {
    /// A sink writing to `log` (and the store the trace flags name).
    pub fn open(log: Option<&Path>, trace: &TraceArgs) -> Result<Self, RecordError> {
        Ok(Self {
            rec: Recorder::open(log, trace, false)?,
            trace: trace.clone(),
            firmware: None,
            log: log.map(Path::to_path_buf),
        })
    }

    /// Tests of this serial with this design (hash, hex) already in the store (0 without one).
    pub fn earlier_tests(&mut self, serial: &str, design_hash: &str) -> Result<usize, RecordError> {
        let n = self.rec.store_tests_of(serial, design_hash)?;
        Ok(usize::try_from(n).unwrap_or(usize::MAX))
    }

    /// Write the record the station formed from the instrument's reply (the shape of
    /// `check --json` plus time, serial, design and readings).
    pub fn write_value(&mut self, v: Value) -> Result<BoardRecord, RecordError> {
        let serial = v
            .get("serial")
            .and_then(Value::as_str)
            .unwrap_or("")
            .to_string();
        let mut r: BoardRecord = serde_json::from_value(v).map_err(|why| RecordError::Form {
            serial: serial.clone(),
            why,
        })?;
        if r.record_id.is_empty() {
            r.record_id = record::fresh_id(&r.serial);
        }
        r.tool_version = record::TOOL_VERSION.into();
        r.firmware_version.clone_from(&self.firmware);
        r.source = Some(Source {
            kind: "station".into(),
            file: None,
            line: None,
        });
        self.trace.stamp(&mut r);
        if let Err(e) = r.whole() {
            eprintln!(
                "biasjig: warning: board {serial}: the instrument's record is not whole: {e}"
            );
        }
        self.rec.write(&mut r)?;
        self.rec.sync()?;
        Ok(r)
    }
}

/// Why the windows could not be written as CSV (exit 2).
#[derive(Debug, Error)]
#[error("--csv: {}: {why}", .path.display())]
pub struct CsvError {
    /// The file.
    pub path: PathBuf,
    /// Why.
    pub why: String,
}

/// Write the windows as CSV for other testers (test, low, high, unit, design hash, settings
/// hash): the supply window and every node window `check` applies, whole or not at all.
pub fn write_limits_csv(
    path: &Path,
    w: &biasjig_core::judge::Windows,
    st: &Station,
) -> Result<(), CsvError> {
    let bad = |why: String| CsvError {
        path: path.to_path_buf(),
        why,
    };
    let settings = settings_hash(st);
    let mut out = csv::Writer::from_writer(Vec::new());
    let row = |name: &str, low: f64, high: f64, unit: &str| {
        [
            name.to_string(),
            format!("{low}"),
            format!("{high}"),
            unit.to_string(),
            st.hash.clone(),
            settings.clone(),
        ]
    };
    let mut rows = vec![[
        "test".to_string(),
        "low".into(),
        "high".into(),
        "unit".into(),
        "design_hash".into(),
        "settings_hash".into(),
    ]];
    rows.push(row("vcc", w.supply.low, w.supply.high, "V"));
    for n in NODES {
        if let Some(win) = w.limits.window(n) {
            rows.push(row(n.name(), win.low, win.high, n.unit()));
        }
    }
    for r in &rows {
        out.write_record(r).map_err(|e| bad(e.to_string()))?;
    }
    let bytes = out.into_inner().map_err(|e| bad(e.to_string()))?;
    crate::files::write_atomic(path, &bytes).map_err(|e| bad(e.to_string()))
}
