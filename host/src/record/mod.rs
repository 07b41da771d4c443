//! The board record: one test of one board, the single type written by `check --log`, `batch`
//! and `station` (to the JSON Lines log and to the results store) and read back by `import` and
//! `report`.
//!
//! A record carries everything a quality engineer needs to trust and trace the verdict: the
//! board's serial, the design (id, hash, digest), the settings hash and the overrides that were in
//! force, the windows applied and the readings (DC, and the signal readings when there are any),
//! the verdict and faults, the station, operator and lot, the time (UTC), the tool and firmware
//! versions and whether the serial had been tested before. [`BoardRecord::whole`] refuses a
//! record that is not a whole board record, and re-derives each node's `ok` and the verdict from
//! the windows and readings, so an edited verdict cannot pass.

mod ids;
pub mod whole;

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};
use serde_json::Value;

use crate::clock;

pub use ids::{fresh_id, hex_digest, host_name};

/// The tool's own version, written into every record.
pub const TOOL_VERSION: &str = concat!("biasjig ", env!("CARGO_PKG_VERSION"));

/// The design that judged the board.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesignRef {
    /// Design identifier (the file's `id`, or `flags`).
    pub id: String,
    /// Design hash (hex).
    pub hash: String,
    /// SHA-256 digest of everything the verdict depends on (hex), when known.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub digest: Option<String>,
}

/// The DC readings as measured, V.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct DcReadings {
    /// Supply, V.
    pub vcc: f64,
    /// Base, V.
    pub vb: f64,
    /// Emitter, V.
    pub ve: f64,
    /// Collector, V.
    pub vc: f64,
}

/// One judged quantity: the reading and the window applied (SI units; `null` edge: unbounded).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Judged {
    /// The reading (V, or A for IC).
    pub measured: Option<f64>,
    /// Lower edge of the window.
    pub low: Option<f64>,
    /// Upper edge of the window.
    pub high: Option<f64>,
    /// The reading lay inside the window (edges included).
    pub ok: bool,
}

impl Judged {
    /// The window holds the reading, as `check` judges it (edges included).
    pub fn holds(&self) -> Option<bool> {
        let m = self.measured?;
        Some(m >= self.low.unwrap_or(f64::NEG_INFINITY) && m <= self.high.unwrap_or(f64::INFINITY))
    }
}

/// One signal reading: the gain at a frequency and its window.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SignalJudged {
    /// Frequency, Hz.
    pub f: f64,
    /// Measured gain magnitude.
    pub measured: Option<f64>,
    /// Lower edge of the window.
    pub low: Option<f64>,
    /// Upper edge of the window.
    pub high: Option<f64>,
    /// The reading lay inside the window.
    pub ok: bool,
}

/// A part and a failure mode (`RC` `open`).
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct PartMode {
    /// Part name (R1 R2 RC RE1 RE2 Q CIN COUT CE).
    pub part: String,
    /// Mode (open, short, low, high, be_open, ...).
    pub mode: String,
}

/// A ranked fault hypothesis, as `check --json` lists it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Fault {
    /// Part name.
    pub part: String,
    /// Mode.
    pub mode: String,
    /// Score, 0..1.
    pub score: Option<f64>,
    /// Likely actual value (Ω or F) for low/high, else null.
    pub estimate: Option<f64>,
    /// Faults with the same readings within the measuring errors.
    #[serde(default)]
    pub equivalent: Vec<PartMode>,
}

impl Fault {
    /// This fault, or one of its equivalents, is the given part and mode.
    pub fn names(&self, part: &str, mode: &str) -> bool {
        let same = |p: &str, m: &str| p.eq_ignore_ascii_case(part) && m.eq_ignore_ascii_case(mode);
        same(&self.part, &self.mode) || self.equivalent.iter().any(|e| same(&e.part, &e.mode))
    }
}

/// The windows at the nominal supply, for referring readings to it in capability figures.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Nominal {
    /// Nominal supply, V.
    pub vcc: f64,
    /// Window per node at the nominal supply.
    pub windows: BTreeMap<String, Edges>,
}

/// A window's edges.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Edges {
    /// Lower edge.
    pub low: f64,
    /// Upper edge.
    pub high: f64,
}

/// Where the test came from.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Source {
    /// `check`, `batch` or `station`.
    pub kind: String,
    /// The readings file (batch).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub file: Option<String>,
    /// Line in the readings file (batch).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub line: Option<u64>,
}

/// The verdict of one test.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Outcome {
    /// Every window held.
    Pass,
    /// A window did not hold.
    Fail,
    /// The readings were refused before judgement (a probe off, the supply out of tolerance).
    Refused,
}

impl Outcome {
    /// "pass", "fail" or "refused".
    pub fn word(self) -> &'static str {
        match self {
            Self::Pass => "pass",
            Self::Fail => "fail",
            Self::Refused => "refused",
        }
    }

    /// From its word.
    pub fn parse(s: &str) -> Option<Self> {
        match s {
            "pass" => Some(Self::Pass),
            "fail" => Some(Self::Fail),
            "refused" => Some(Self::Refused),
            _ => None,
        }
    }
}

/// One test of one board.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BoardRecord {
    /// Identity of the test (hex SHA-256): `import` and a resumed batch skip an id already there.
    #[serde(default)]
    pub record_id: String,
    /// When the test ran, ISO 8601 UTC.
    pub time: String,
    /// Board serial number.
    pub serial: String,
    /// The design that judged it.
    pub design: DesignRef,
    /// The settings digest (hex SHA-256) of everything the verdict depends on, when known
    /// (`digest` in the log, as `check --json` prints it; the store's `settings_hash`).
    #[serde(
        rename = "digest",
        alias = "settings_hash",
        skip_serializing_if = "Option::is_none"
    )]
    pub settings_hash: Option<String>,
    /// The test settings that judged the board (test ambient, meter, measuring inputs).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub settings: Option<Value>,
    /// Flags that overrode the design file's values, as given.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub overrides: Option<Value>,
    /// Station name.
    #[serde(default)]
    pub station: String,
    /// Operator.
    pub operator: Option<String>,
    /// Lot.
    pub lot: Option<String>,
    /// Tool version that wrote the record.
    #[serde(default)]
    pub tool_version: String,
    /// Instrument firmware version, when an instrument judged the board.
    pub firmware_version: Option<String>,
    /// The serial had been tested before (with this design).
    #[serde(default)]
    pub retest: bool,
    /// Where the test came from.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub source: Option<Source>,
    /// DC readings (none for a board refused before anything was read: the jig could not
    /// read it).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub readings: Option<DcReadings>,
    /// The readings as typed at a manual station (kept as typed, also when refused).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub typed: Option<String>,
    /// The verdict.
    pub verdict: Outcome,
    /// Why the readings were refused.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub reason: Option<String>,
    /// The supply as measured and its window (nominal ± tolerance).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub supply: Option<Judged>,
    /// Per judged node: reading and window applied.
    #[serde(default)]
    pub nodes: BTreeMap<String, Judged>,
    /// Signal readings and their windows, when the test had any.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ac: Option<Vec<SignalJudged>>,
    /// Windows at the nominal supply.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub nominal: Option<Nominal>,
    /// Derived quantities (IC, IB, hFE, region), as `check --json` gives them.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub derived: Option<Value>,
    /// Faults, best first (empty for a pass).
    #[serde(default)]
    pub faults: Vec<Fault>,
    /// A single fault explains the readings (false: the nearest are listed).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub explained: Option<bool>,
}

/// What the technician found when repairing a board: the rework loop's record.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RepairRecord {
    /// Always `repair` (tells it apart from a test in a log).
    pub kind: String,
    /// Identity of the repair record (hex SHA-256).
    pub record_id: String,
    /// When it was recorded, ISO 8601 UTC.
    pub time: String,
    /// Board serial number.
    pub serial: String,
    /// The part that was actually wrong.
    pub part: String,
    /// How it was wrong.
    pub mode: String,
    /// Who repaired it.
    pub technician: Option<String>,
    /// Free text.
    pub note: Option<String>,
}

impl RepairRecord {
    /// Milliseconds since 1970 UTC.
    pub fn time_ms(&self) -> i64 {
        clock::parse_ms(&self.time).unwrap_or(0)
    }
}
