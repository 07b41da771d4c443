//! An outcome in the machine interface (SI base units): the shape of `biasjig check --json`.

use biasjig_core::judge::{JudgeError, Judgement};
use biasjig_core::limits::Window;
use biasjig_core::settings::TestSettings;
use serde_json::{json, Value};

use super::{listed, separating_tone, Outcome, Station};
use crate::json::{num, opt};

/// The test settings as JSON (SI units): test ambient, meter, measuring inputs.
pub fn settings_json(t: &TestSettings) -> Value {
    json!({
        "temp_min": num(t.temp_min_c),
        "temp_max": num(t.temp_max_c),
        "meter": {"gain_error": num(t.meter.gain_error), "offset": num(t.meter.offset),
                  "divider_tol": num(t.meter.divider_tol)},
        "inputs": {"r": opt(t.inputs.r), "mode": t.inputs.mode.name()},
    })
}

fn supply_json(measured: f64, w: &Window) -> Value {
    json!({"measured": num(measured), "low": num(w.low), "high": num(w.high),
           "ok": w.contains(measured)})
}

/// The machine-interface document of a checked board (`measured` is the supply as read).
pub fn outcome_json(o: &Outcome, measured_vcc: f64) -> Value {
    match o {
        Outcome::Refused(why) => {
            let mut doc = json!({"verdict": "refused", "reason": why.to_string()});
            if let (JudgeError::Supply { measured, window }, Some(obj)) = (why, doc.as_object_mut())
            {
                obj.insert("supply".into(), supply_json(*measured, window));
            }
            doc
        }
        Outcome::Judged(j) => {
            let v = &j.verdict;
            let d = &j.diagnosis;
            let mut nodes = serde_json::Map::new();
            for n in &v.nodes {
                nodes.insert(
                    n.node.name().to_string(),
                    json!({"measured": num(n.measured), "low": num(n.low),
                           "high": num(n.high), "ok": n.ok}),
                );
            }
            let dv = &v.derived;
            let faults: Vec<Value> = d.as_ref().map_or(Vec::new(), |d| {
                listed(d)
                    .into_iter()
                    .map(|h| {
                        let eq: Vec<Value> = d
                            .equivalents(h)
                            .filter(|e| e.suspect.is_fault())
                            .map(|e| json!({"part": e.suspect.part(), "mode": e.suspect.mode()}))
                            .collect();
                        json!({"part": h.suspect.part(), "mode": h.suspect.mode(),
                               "score": num(h.score), "estimate": opt(h.estimate),
                               "equivalent": eq})
                    })
                    .collect()
            });
            let mut doc = json!({
                "verdict": if v.pass { "pass" } else { "fail" },
                "supply": supply_json(measured_vcc, &j.windows.supply),
                "nodes": nodes,
                "derived": {"ic": num(dv.ic), "ib": num(dv.ib), "ie": opt(dv.ie),
                            "vbe": num(dv.vbe), "vce": num(dv.vce),
                            "beta": opt(dv.beta), "region": dv.region.name()},
                "faults": faults,
            });
            if let (Some(d), Some(obj)) = (d, doc.as_object_mut()) {
                obj.insert("explained".to_string(), json!(d.explained));
            }
            if let (false, Some(obj)) = (j.tones.is_empty(), doc.as_object_mut()) {
                obj.insert("ac".to_string(), ac_json(j));
            }
            doc
        }
    }
}

/// One override as JSON: a number in SI units (percent for the percentage flags), `--inputs`
/// by its word and a switch such as `--pnp` as `true` (they are kept as numbers inside).
pub(crate) fn override_value(flag: &str, v: f64) -> Value {
    match flag {
        "--inputs" => json!(if v == 0.0 { "together" } else { "one" }),
        "--pnp" => json!(true),
        _ => num(v),
    }
}

/// Add `"separating_f"` (Hz, or null) to each listed fault with equivalents.
pub fn add_separation(st: &Station, vcc: f64, o: &Outcome, doc: &mut Value) {
    let Outcome::Judged(j) = o else { return };
    let Some(d) = &j.diagnosis else { return };
    let Some(faults) = doc.get_mut("faults").and_then(|f| f.as_array_mut()) else {
        return;
    };
    for (h, f) in listed(d).into_iter().zip(faults.iter_mut()) {
        if d.equivalents(h).any(|e| e.suspect.is_fault()) {
            if let Some(obj) = f.as_object_mut() {
                obj.insert("separating_f".into(), opt(separating_tone(st, vcc, d, h)));
            }
        }
    }
}

/// The judged gain readings: `[{"f","measured","low","high","ok"}]` in the order given.
pub fn ac_json(j: &Judgement) -> Value {
    Value::Array(
        j.tones
            .iter()
            .map(|t| {
                json!({"f": num(t.reading.f), "measured": num(t.reading.gain),
                       "low": num(t.window.low), "high": num(t.window.high),
                       "ok": t.ok})
            })
            .collect(),
    )
}

/// The overrides in force as JSON: flag -> value as given.
pub fn overrides_json(st: &Station) -> Value {
    let mut m = serde_json::Map::new();
    for (flag, v) in &st.overrides {
        m.insert(flag.clone(), override_value(flag, *v));
    }
    Value::Object(m)
}

/// What judged the boards: the settings, the settings digest and the overrides.
pub fn add_provenance(st: &Station, doc: &mut Value) {
    if let Some(obj) = doc.as_object_mut() {
        obj.insert("settings".into(), settings_json(&st.settings));
        obj.insert("digest".into(), json!(st.digest.to_string()));
        obj.insert("overrides".into(), overrides_json(st));
    }
}

// (`concat!` keeps the first row's indent: a `\` line continuation would strip it and shear
