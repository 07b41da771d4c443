//! A whole board record: what [`BoardRecord::whole`] demands, and the verdict re-derived from the
//! record's own windows and readings.

use serde_json::Value;
use thiserror::Error;

use super::{hex_digest, BoardRecord, Judged, Outcome};
use crate::clock;

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
    /// A judged record without its readings.
    #[error("field readings: missing; a judged record carries the readings it was judged on")]
    NoReadings,
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
        let Some(r) = self.readings else {
            return Err(NotWhole::NoReadings);
        };
        if self.nodes.is_empty() {
            return Err(NotWhole::NoWindows);
        }
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

    /// Optional fields may be absent (records of earlier rounds): they read as none.
    #[test]
    fn absent_optional_fields_read_as_none() {
        let mut v = good();
        v["verdict"] = json!("fail");
        v["nodes"]["vc"] = json!({"measured": 3.5, "low": 1.0, "high": 3.0, "ok": false});
        v["readings"]["vc"] = json!(3.5);
        v["faults"] = json!([{"part": "RC", "mode": "open"}]);
        let r = BoardRecord::from_value(v).unwrap();
        assert_eq!((r.operator, r.lot, r.firmware_version), (None, None, None));
        assert_eq!((r.source, r.supply, r.explained), (None, None, None));
        let f = &r.faults[0];
        assert_eq!((f.score, f.estimate, f.equivalent.len()), (None, None, 0));
        let repair: crate::record::RepairRecord = serde_json::from_value(json!({
            "kind": "repair", "record_id": "ef", "time": "2031-05-06T07:08:09Z",
            "serial": "S1", "part": "RC", "mode": "open"}))
        .unwrap();
        assert_eq!((repair.technician, repair.note), (None, None));
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

    /// A board the jig could not read (a station's refused record) is a whole refused test
    /// without readings, and keeps what was typed; a judged record without readings is not.
    #[test]
    fn a_refused_record_without_readings_is_whole_and_keeps_its_fields() {
        let v = json!({"record_id": "cd", "time": "2031-05-06T07:08:09Z", "serial": "S2",
                       "design": {"id": "d", "hash": "00ff", "digest": "ee"},
                       "verdict": "refused", "reason": "JIG open probe on VB",
                       "typed": "12 x", "retest": true, "digest": "aa",
                       "settings": {"temp_min": 25.0}, "overrides": {"--temp": 30.0}});
        let r = BoardRecord::from_value(v.clone()).unwrap();
        assert_eq!(r.readings, None);
        let back = serde_json::to_value(&r).unwrap();
        for k in [
            "reason",
            "typed",
            "retest",
            "digest",
            "settings",
            "overrides",
            "design",
        ] {
            assert_eq!(back[k], v[k], "{k}");
        }
        let mut judged = good();
        judged.as_object_mut().unwrap().remove("readings");
        assert_eq!(
            BoardRecord::from_value(judged).unwrap_err(),
            NotWhole::NoReadings
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
}
