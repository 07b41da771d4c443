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

use std::collections::BTreeMap;
use std::sync::atomic::{AtomicU64, Ordering};

use serde::{Deserialize, Serialize};
use serde_json::Value;
use sha2::{Digest, Sha256};
use thiserror::Error;

use crate::clock;

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
    #[serde(default, skip_serializing_if = "Option::is_none")]
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
    #[serde(default)]
    pub score: Option<f64>,
    /// Likely actual value (Ω or F) for low/high, else null.
    #[serde(default)]
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
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub file: Option<String>,
    /// Line in the readings file (batch).
    #[serde(default, skip_serializing_if = "Option::is_none")]
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
        default,
        rename = "digest",
        alias = "settings_hash",
        skip_serializing_if = "Option::is_none"
    )]
    pub settings_hash: Option<String>,
    /// The test settings that judged the board (test ambient, meter, measuring inputs).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub settings: Option<Value>,
    /// Flags that overrode the design file's values, as given.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub overrides: Option<Value>,
    /// Station name.
    #[serde(default)]
    pub station: String,
    /// Operator.
    #[serde(default)]
    pub operator: Option<String>,
    /// Lot.
    #[serde(default)]
    pub lot: Option<String>,
    /// Tool version that wrote the record.
    #[serde(default)]
    pub tool_version: String,
    /// Instrument firmware version, when an instrument judged the board.
    #[serde(default)]
    pub firmware_version: Option<String>,
    /// The serial had been tested before (with this design).
    #[serde(default)]
    pub retest: bool,
    /// Where the test came from.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub source: Option<Source>,
    /// DC readings.
    pub readings: DcReadings,
    /// The verdict.
    pub verdict: Outcome,
    /// Why the readings were refused.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reason: Option<String>,
    /// The supply as measured and its window (nominal ± tolerance).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub supply: Option<Judged>,
    /// Per judged node: reading and window applied.
    #[serde(default)]
    pub nodes: BTreeMap<String, Judged>,
    /// Signal readings and their windows, when the test had any.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ac: Option<Vec<SignalJudged>>,
    /// Windows at the nominal supply.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub nominal: Option<Nominal>,
    /// Derived quantities (IC, IB, hFE, region), as `check --json` gives them.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub derived: Option<Value>,
    /// Faults, best first (empty for a pass).
    #[serde(default)]
    pub faults: Vec<Fault>,
    /// A single fault explains the readings (false: the nearest are listed).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub explained: Option<bool>,
}

/// Why a line is not a whole board record.
#[derive(Debug, Clone, PartialEq, Error)]
#[non_exhaustive]
pub enum NotWhole {
    /// Not a JSON object of the record's shape.
    #[error("not a board record: {0}")]
    Shape(String),
    /// A required field is empty.
    #[error("field {0}: empty; a board record names it")]
    Empty(&'static str),
    /// The time is not ISO 8601 UTC.
    #[error("field time: {0:?}: allowed: ISO 8601 UTC such as 2031-05-06T07:08:09Z")]
    Time(String),
    /// A judged record without its windows.
    #[error("field nodes: missing; a judged record carries every window applied")]
    NoWindows,
    /// A node's reading differs from the DC readings.
    #[error("nodes.{0}.measured differs from readings.{0}")]
    Reading(String),
    /// A node's `ok` does not follow from its window and reading.
    #[error("nodes.{node}.ok is {ok} but the reading {measured:?} is {} the window", if *ok { "outside" } else { "inside" })]
    Ok {
        /// The node.
        node: String,
        /// The recorded `ok`.
        ok: bool,
        /// The reading.
        measured: Option<f64>,
    },
    /// A board judged although its supply was outside the supply window.
    #[error("judged with the supply outside its window; such a board is never judged")]
    SupplyJudged,
    /// The verdict does not follow from the windows.
    #[error("verdict {recorded:?} but the windows and readings give {derived:?}")]
    Verdict {
        /// As recorded.
        recorded: &'static str,
        /// As re-derived.
        derived: &'static str,
    },
}

impl BoardRecord {
    /// Read a record from a JSON value, refusing anything but a whole board record.
    pub fn from_value(v: Value) -> Result<Self, NotWhole> {
        let legacy_id = if v.get("record_id").and_then(Value::as_str).is_none() {
            // A log written before records had ids: the id is the digest of its content.
            Some(hex_digest(&[v.to_string().as_bytes()]))
        } else {
            None
        };
        let mut r: Self = serde_json::from_value(v).map_err(|e| NotWhole::Shape(e.to_string()))?;
        if let Some(id) = legacy_id {
            r.record_id = id;
        }
        r.whole()?;
        Ok(r)
    }

    /// Check that this is a whole board record and that its verdict follows from its windows
    /// and readings.
    pub fn whole(&self) -> Result<(), NotWhole> {
        if self.record_id.trim().is_empty() {
            return Err(NotWhole::Empty("record_id"));
        }
        if self.serial.trim().is_empty() {
            return Err(NotWhole::Empty("serial"));
        }
        if self.design.hash.trim().is_empty() {
            return Err(NotWhole::Empty("design.hash"));
        }
        if clock::parse_ms(&self.time).is_none() {
            return Err(NotWhole::Time(self.time.clone()));
        }
        if self.verdict == Outcome::Refused {
            return Ok(());
        }
        if self.nodes.is_empty() {
            return Err(NotWhole::NoWindows);
        }
        let r = self.readings;
        for (name, v) in [("vb", r.vb), ("ve", r.ve), ("vc", r.vc)] {
            if let Some(n) = self.nodes.get(name) {
                if n.measured != Some(v) {
                    return Err(NotWhole::Reading(name.into()));
                }
            }
        }
        let mut pass = true;
        if let Some(sup) = &self.supply {
            if sup.measured != Some(r.vcc) {
                return Err(NotWhole::Reading("vcc".into()));
            }
            if sup.holds() != Some(sup.ok) {
                return Err(NotWhole::Ok {
                    node: "supply".into(),
                    ok: sup.ok,
                    measured: sup.measured,
                });
            }
            if !sup.ok {
                return Err(NotWhole::SupplyJudged);
            }
        }
        for (name, n) in &self.nodes {
            let holds = n.holds();
            if holds != Some(n.ok) {
                return Err(NotWhole::Ok {
                    node: name.clone(),
                    ok: n.ok,
                    measured: n.measured,
                });
            }
            pass &= n.ok;
        }
        for a in self.ac.iter().flatten() {
            let j = Judged {
                measured: a.measured,
                low: a.low,
                high: a.high,
                ok: a.ok,
            };
            if j.holds() != Some(a.ok) {
                return Err(NotWhole::Ok {
                    node: format!("ac {} Hz", a.f),
                    ok: a.ok,
                    measured: a.measured,
                });
            }
            pass &= a.ok;
        }
        let derived = if pass { Outcome::Pass } else { Outcome::Fail };
        if derived != self.verdict {
            return Err(NotWhole::Verdict {
                recorded: self.verdict.word(),
                derived: derived.word(),
            });
        }
        Ok(())
    }

    /// Milliseconds since 1970 UTC of the test (0 if the time cannot be read).
    pub fn time_ms(&self) -> i64 {
        clock::parse_ms(&self.time).unwrap_or(0)
    }
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
    #[serde(default)]
    pub technician: Option<String>,
    /// Free text.
    #[serde(default)]
    pub note: Option<String>,
}

impl RepairRecord {
    /// Milliseconds since 1970 UTC.
    pub fn time_ms(&self) -> i64 {
        clock::parse_ms(&self.time).unwrap_or(0)
    }
}

/// SHA-256 over the parts (each length-prefixed, so parts never run together), hex.
pub fn hex_digest(parts: &[&[u8]]) -> String {
    let mut h = Sha256::new();
    for p in parts {
        h.update((p.len() as u64).to_le_bytes());
        h.update(p);
    }
    h.finalize().iter().map(|b| format!("{b:02x}")).collect()
}

/// A fresh record id for a test made now (time, process, host and a counter).
pub fn fresh_id(serial: &str) -> String {
    static COUNTER: AtomicU64 = AtomicU64::new(0);
    let n = COUNTER.fetch_add(1, Ordering::Relaxed);
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_nanos());
    hex_digest(&[
        b"test",
        serial.as_bytes(),
        &nanos.to_le_bytes(),
        &std::process::id().to_le_bytes(),
        &n.to_le_bytes(),
        host_name().as_bytes(),
    ])
}

/// This machine's name (the default station name), or `station`.
pub fn host_name() -> String {
    std::fs::read_to_string("/proc/sys/kernel/hostname")
        .ok()
        .or_else(|| std::env::var("HOSTNAME").ok())
        .or_else(|| std::env::var("COMPUTERNAME").ok())
        .map(|s| s.trim().to_string())
        .filter(|s| !s.is_empty())
        .unwrap_or_else(|| "station".to_string())
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    fn good() -> Value {
        let node = |m: f64| json!({"measured": m, "low": 1.0, "high": 3.0, "ok": true});
        json!({"record_id": "ab", "time": "2031-05-06T07:08:09.120Z", "serial": "S1",
               "design": {"id": "d", "hash": "00ff"}, "station": "st1",
               "readings": {"vcc": 12.0, "vb": 2.0, "ve": 1.4, "vc": 2.5},
               "verdict": "pass",
               "nodes": {"vb": node(2.0), "ve": node(1.4), "vc": node(2.5)}, "faults": []})
    }

    #[test]
    fn a_whole_record_reads_back_and_round_trips() {
        let r = BoardRecord::from_value(good()).unwrap();
        assert_eq!(r.serial, "S1");
        let again = BoardRecord::from_value(serde_json::to_value(&r).unwrap()).unwrap();
        assert_eq!(again, r);
    }

    #[test]
    fn an_edited_verdict_or_a_bare_line_is_refused() {
        let mut v = good();
        v["nodes"]["vc"]["measured"] = json!(3.5);
        v["readings"]["vc"] = json!(3.5);
        // The node says ok although 3.5 V is outside 1..3 V.
        let e = BoardRecord::from_value(v.clone()).unwrap_err();
        assert!(matches!(e, NotWhole::Ok { .. }), "{e}");
        v["nodes"]["vc"]["ok"] = json!(false);
        // ok fixed, verdict still "pass": the verdict does not follow.
        let e = BoardRecord::from_value(v.clone()).unwrap_err();
        assert!(matches!(e, NotWhole::Verdict { .. }), "{e}");
        v["verdict"] = json!("fail");
        assert!(BoardRecord::from_value(v).is_ok());
        assert!(BoardRecord::from_value(json!({"verdict": "pass"})).is_err());
        let mut v = good();
        v["readings"]["vb"] = json!(2.2);
        assert_eq!(
            BoardRecord::from_value(v).unwrap_err(),
            NotWhole::Reading("vb".into())
        );
    }

    #[test]
    fn an_old_record_without_id_gets_the_digest_of_its_content() {
        let mut v = good();
        v.as_object_mut().unwrap().remove("record_id");
        let a = BoardRecord::from_value(v.clone()).unwrap();
        let b = BoardRecord::from_value(v).unwrap();
        assert_eq!(a.record_id.len(), 64);
        assert_eq!(a.record_id, b.record_id);
    }

    #[test]
    fn digests_are_sha256() {
        // FIPS 180-4 test vector "abc" (one part, so the length prefix is hashed first: check
        // the plain hash through the same hasher).
        let h = Sha256::digest(b"abc");
        let hex: String = h.iter().map(|b| format!("{b:02x}")).collect();
        assert_eq!(
            hex,
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        assert_ne!(hex_digest(&[b"ab", b"c"]), hex_digest(&[b"a", b"bc"]));
    }
}
