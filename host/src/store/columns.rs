//! The `tests` row of a board record, shared by both backends: plain columns for what reports
//! filter and count on, JSON text for the nested parts.

use serde::de::DeserializeOwned;
use serde::Serialize;

use super::StoreError;
use crate::record::{BoardRecord, DcReadings, DesignRef, Outcome, RepairRecord};

/// The columns of `tests` in the order of [`COLUMNS`] (without `seq`).
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub record_id: String,
    pub time_utc: String,
    pub time_ms: i64,
    pub serial: String,
    pub design_hash: String,
    pub design_id: String,
    pub design_digest: Option<String>,
    pub settings_hash: Option<String>,
    pub overrides: Option<String>,
    pub station: String,
    pub operator: Option<String>,
    pub lot: Option<String>,
    pub tool_version: String,
    pub firmware_version: Option<String>,
    pub retest: bool,
    pub source: Option<String>,
    pub vcc: Option<f64>,
    pub vb: Option<f64>,
    pub ve: Option<f64>,
    pub vc: Option<f64>,
    pub verdict: String,
    pub reason: Option<String>,
    pub windows: String,
    pub signal: Option<String>,
    pub nominal: Option<String>,
    pub derived: Option<String>,
    pub faults: String,
    pub explained: Option<bool>,
    pub supply: Option<String>,
    pub settings: Option<String>,
    pub typed: Option<String>,
}

/// The column names of `tests`, in bind order.
pub const COLUMNS: [&str; 31] = [
    "record_id",
    "time_utc",
    "time_ms",
    "serial",
    "design_hash",
    "design_id",
    "design_digest",
    "settings_hash",
    "overrides",
    "station",
    "operator",
    "lot",
    "tool_version",
    "firmware_version",
    "retest",
    "source",
    "vcc",
    "vb",
    "ve",
    "vc",
    "verdict",
    "reason",
    "windows",
    "signal",
    "nominal",
    "derived",
    "faults",
    "explained",
    "supply",
    "settings",
    "typed",
];

/// The JSON columns (PostgreSQL keeps them as `jsonb`).
pub const JSON_COLUMNS: [&str; 9] = [
    "supply",
    "settings",
    "overrides",
    "source",
    "windows",
    "signal",
    "nominal",
    "derived",
    "faults",
];

fn enc<T: Serialize>(v: &T) -> String {
    serde_json::to_string(v).unwrap_or_else(|_| "null".into())
}

fn enc_opt<T: Serialize>(v: Option<&T>) -> Option<String> {
    v.map(enc)
}

impl Row {
    /// The row of a record.
    pub fn of(r: &BoardRecord) -> Self {
        Self {
            record_id: r.record_id.clone(),
            time_utc: r.time.clone(),
            time_ms: r.time_ms(),
            serial: r.serial.clone(),
            design_hash: r.design.hash.clone(),
            design_id: r.design.id.clone(),
            design_digest: r.design.digest.clone(),
            settings_hash: r.settings_hash.clone(),
            overrides: enc_opt(r.overrides.as_ref()),
            station: r.station.clone(),
            operator: r.operator.clone(),
            lot: r.lot.clone(),
            tool_version: r.tool_version.clone(),
            firmware_version: r.firmware_version.clone(),
            retest: r.retest,
            source: enc_opt(r.source.as_ref()),
            vcc: r.readings.map(|d| d.vcc),
            vb: r.readings.map(|d| d.vb),
            ve: r.readings.map(|d| d.ve),
            vc: r.readings.map(|d| d.vc),
            verdict: r.verdict.word().into(),
            reason: r.reason.clone(),
            windows: enc(&r.nodes),
            signal: enc_opt(r.ac.as_ref()),
            nominal: enc_opt(r.nominal.as_ref()),
            derived: enc_opt(r.derived.as_ref()),
            faults: enc(&r.faults),
            explained: r.explained,
            supply: enc_opt(r.supply.as_ref()),
            settings: enc_opt(r.settings.as_ref()),
            typed: r.typed.clone(),
        }
    }

    /// The record of a row, checked whole.
    pub fn record(self) -> Result<BoardRecord, StoreError> {
        let id = self.record_id.clone();
        let bad = |why: String| StoreError::Row {
            record_id: id.clone(),
            why,
        };
        fn dec<T: DeserializeOwned>(s: &str) -> Result<T, String> {
            serde_json::from_str(s).map_err(|e| e.to_string())
        }
        fn dec_opt<T: DeserializeOwned>(s: Option<&String>) -> Result<Option<T>, String> {
            s.map(|s| dec(s)).transpose()
        }
        let verdict = Outcome::parse(&self.verdict)
            .ok_or_else(|| bad(format!("verdict {:?}", self.verdict)))?;
        let r = BoardRecord {
            record_id: self.record_id.clone(),
            time: self.time_utc,
            serial: self.serial,
            design: DesignRef {
                id: self.design_id,
                hash: self.design_hash,
                digest: self.design_digest,
            },
            settings_hash: self.settings_hash,
            settings: dec_opt(self.settings.as_ref()).map_err(&bad)?,
            overrides: dec_opt(self.overrides.as_ref()).map_err(&bad)?,
            station: self.station,
            operator: self.operator,
            lot: self.lot,
            tool_version: self.tool_version,
            firmware_version: self.firmware_version,
            retest: self.retest,
            source: dec_opt(self.source.as_ref()).map_err(&bad)?,
            readings: match (self.vcc, self.vb, self.ve, self.vc) {
                (Some(vcc), Some(vb), Some(ve), Some(vc)) => Some(DcReadings { vcc, vb, ve, vc }),
                (None, None, None, None) => None,
                _ => return Err(bad("readings: some of vcc, vb, ve, vc are missing".into())),
            },
            typed: self.typed,
            verdict,
            reason: self.reason,
            supply: dec_opt(self.supply.as_ref()).map_err(&bad)?,
            nodes: dec(&self.windows).map_err(&bad)?,
            ac: dec_opt(self.signal.as_ref()).map_err(&bad)?,
            nominal: dec_opt(self.nominal.as_ref()).map_err(&bad)?,
            derived: dec_opt(self.derived.as_ref()).map_err(&bad)?,
            faults: dec(&self.faults).map_err(&bad)?,
            explained: self.explained,
        };
        r.whole().map_err(|e| bad(e.to_string()))?;
        Ok(r)
    }
}

/// The columns of `repairs`, in bind order.
pub const REPAIR_COLUMNS: [&str; 8] = [
    "record_id",
    "time_utc",
    "time_ms",
    "serial",
    "part",
    "mode",
    "technician",
    "note",
];

/// A repair from its columns (in [`REPAIR_COLUMNS`] order, `time_ms` left out).
#[allow(clippy::too_many_arguments)]
pub fn repair(
    record_id: String,
    time: String,
    serial: String,
    part: String,
    mode: String,
    technician: Option<String>,
    note: Option<String>,
) -> RepairRecord {
    RepairRecord {
        kind: "repair".into(),
        record_id,
        time,
        serial,
        part,
        mode,
        technician,
        note,
    }
}
