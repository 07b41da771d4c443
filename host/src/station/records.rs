//! The log records the station forms from the instrument's machine replies, in the shape of
//! `biasjig check --log`.

use serde_json::{json, Map, Value};

use biasjig_core::kv;
use biasjig_core::settings::TestSettings;

use crate::link::Reply;

/// What every record carries besides the board, in the shape of `biasjig check --log`:
/// `settings` (test ambient, meter, inputs), `overrides` (the flags that changed the design
/// file's settings) and the design file's digest.
pub fn provenance(settings: &TestSettings, overrides: Value, design_digest: &str) -> Value {
    json!({
        "settings": crate::verdict::json::settings_json(settings),
        "overrides": overrides,
        "design_digest": design_digest,
    })
}

fn num(s: Option<&str>) -> Value {
    s.and_then(|t| t.parse::<f64>().ok())
        .map_or(Value::Null, Value::from)
}

/// The log record of one board from the machine reply of `test`/`check`: the shape of
/// `biasjig check --json` (`verdict`, `nodes`, `derived`, `faults`, `explained` when diagnosed)
/// plus `time` (ISO 8601 UTC), `serial`, `design` (`id`, `hash`) and `readings`.
pub fn record(
    serial: &str,
    design: &str,
    hash: u64,
    reply: &Reply,
    time: &str,
    retest: bool,
) -> Value {
    let mut nodes = Map::new();
    let mut faults = Vec::new();
    let mut derived = Map::new();
    let mut readings = Map::new();
    let mut explained = None;
    let mut ac = Vec::new();
    for l in &reply.data {
        let words: Map<String, Value> = kv::pairs(l)
            .map(|(k, v)| (k.to_owned(), Value::String(v.to_owned())))
            .collect();
        let get = |k: &str| words.get(k).and_then(Value::as_str);
        if let Some(node) = get("node") {
            nodes.insert(
                node.to_owned(),
                json!({"measured": num(get("measured")), "low": num(get("low")),
                       "high": num(get("high")), "ok": get("ok") == Some("1")}),
            );
        } else if let Some(part) = get("fault") {
            let equivalent: Vec<Value> = get("equivalent")
                .filter(|e| *e != "none")
                .map(|e| {
                    e.split(',')
                        .filter_map(|pm| pm.split_once(':'))
                        .map(|(p, m)| json!({"part": p, "mode": m}))
                        .collect()
                })
                .unwrap_or_default();
            faults.push(
                json!({"part": part, "mode": get("mode"), "score": num(get("score")),
                       "estimate": num(get("estimate")), "equivalent": equivalent}),
            );
        } else if l.starts_with("ac ") {
            // The signal test's gain readings and windows (as `check --json`'s "ac").
            ac.push(json!({"f": num(get("f")), "measured": num(get("measured")),
                       "low": num(get("low")), "high": num(get("high")),
                       "ok": get("ok") == Some("1")}));
        } else if l.starts_with("derived ") {
            for k in ["ic", "ib", "ie", "vbe", "vce", "beta"] {
                derived.insert(k.into(), num(get(k)));
            }
            derived.insert(
                "region".into(),
                get("region").map_or(Value::Null, Value::from),
            );
        } else if get("source").is_some() {
            for k in ["vcc", "vb", "ve", "vc"] {
                readings.insert(k.into(), num(get(k)));
            }
        } else if get("verdict").is_some() {
            explained = get("explained").map(|e| e == "1");
        }
    }
    let mut doc = json!({
        "verdict": reply.value("verdict"),
        "nodes": nodes,
        "derived": derived,
        "faults": faults,
        "time": time,
        "serial": serial,
        "design": {"id": design, "hash": format!("{hash:016x}")},
        "readings": readings,
        "retest": retest,
    });
    if let (Some(e), Some(obj)) = (explained, doc.as_object_mut()) {
        obj.insert("explained".into(), json!(e));
    }
    if let (false, Some(obj)) = (ac.is_empty(), doc.as_object_mut()) {
        obj.insert("ac".into(), Value::Array(ac));
    }
    doc
}

/// The log record of a board whose readings were refused before judgement (the shape of
/// `biasjig check --json` for refused readings, `verdict` `refused` and `reason`, plus `time`,
/// `serial`, `design`, `retest`, and `typed`: the readings as typed, in manual mode).
pub fn refused_record(
    serial: &str,
    design: &str,
    hash: u64,
    reason: &str,
    typed: Option<&str>,
    time: &str,
    retest: bool,
) -> Value {
    let mut doc = json!({
        "verdict": "refused",
        "reason": reason,
        "time": time,
        "serial": serial,
        "design": {"id": design, "hash": format!("{hash:016x}")},
        "retest": retest,
    });
    if let (Some(t), Some(obj)) = (typed, doc.as_object_mut()) {
        obj.insert("typed".into(), json!(t));
        if let Some([vcc, vb, ve, vc]) = typed_readings(t) {
            obj.insert(
                "readings".into(),
                json!({"vcc": vcc, "vb": vb, "ve": ve, "vc": vc}),
            );
        }
    }
    doc
}

/// The readings of a typed line when it is four plain numbers in volts (VCC VB VE VC).
fn typed_readings(typed: &str) -> Option<[f64; 4]> {
    let v: Vec<f64> = typed
        .split_whitespace()
        .map(|w| w.parse::<f64>().ok().filter(|x| x.is_finite()))
        .collect::<Option<_>>()?;
    v.try_into().ok()
}
