//! JSON shapes of the machine interface: plain SI numbers, `null` for none or infinite.

use biasjig_core::predict::{Prediction, Warnings};
use biasjig_core::stage::Resistor;
use serde_json::{json, Value};

/// A number, or `null` when it is not finite.
pub fn num(v: f64) -> Value {
    if v.is_finite() {
        json!(v)
    } else {
        Value::Null
    }
}

/// An optional number.
pub fn opt(v: Option<f64>) -> Value {
    v.map_or(Value::Null, num)
}

/// The `dc`, `estimate`, `ac`, `power` and `warnings` members of a prediction.
pub fn prediction(p: &Prediction) -> Value {
    let op = &p.op;
    let est = &p.estimate;
    let ac = match &p.midband {
        Some(m) => json!({
            "gain": num(m.gain),
            "gain_stage": num(m.gain_stage),
            "zin": num(m.zin),
            "zout": num(m.zout),
            "swing_pp": num(m.swing_pp),
            "clips_first": m.clips.name(),
            "f_low": opt(p.low.f_low),
            "f_estimate": opt(p.low.f_estimate),
            "f_cin": opt(p.low.f_cin),
            "f_cout": opt(p.low.f_cout),
            "f_ce": opt(p.low.f_ce),
            "gm": num(m.gm),
            "rpi": num(m.rpi),
            "ro": num(m.ro),
        }),
        None => json!({
            "gain": null, "gain_stage": null, "zin": null, "zout": null, "swing_pp": null,
            "f_low": opt(p.low.f_low),
        }),
    };
    let mut resistors = serde_json::Map::new();
    for r in Resistor::ALL {
        resistors.insert(r.name().to_ascii_lowercase(), num(p.power.resistor(r)));
    }
    json!({
        "dc": {
            "vb": num(op.vb), "ve": num(op.ve), "vc": num(op.vc),
            "vbe": num(op.vbe), "vce": num(op.vce),
            "ic": num(op.ic), "ib": num(op.ib), "ie": num(op.ie),
            "region": op.region.name(),
            "beta": num(op.beta),
        },
        "estimate": {
            "vb": num(est.vb), "ve": num(est.ve), "vc": num(est.vc),
            "ic": num(est.ic), "vce": num(est.vce),
        },
        "ac": ac,
        "power": {
            "transistor": num(p.power.transistor),
            "transistor_rating": num(p.power.rating),
            "supply_current": num(p.power.supply_current),
            "resistors": resistors,
        },
        "warnings": warnings(&p.warnings),
    })
}

/// Warning identifiers.
pub fn warnings(w: &Warnings) -> Value {
    let mut out = Vec::new();
    if w.divider_not_stiff {
        out.push("divider_not_stiff".to_string());
    }
    if w.saturated {
        out.push("saturated".to_string());
    }
    if w.cut_off {
        out.push("cut_off".to_string());
    }
    if w.over_rating {
        out.push("transistor_over_rating".to_string());
    }
    for (hot, r) in w.resistor_hot.iter().zip(Resistor::ALL) {
        if *hot {
            out.push(format!(
                "{}_over_quarter_watt",
                r.name().to_ascii_lowercase()
            ));
        }
    }
    if w.no_emitter_resistor {
        out.push("no_emitter_resistor".to_string());
    }
    if w.q_point_off_centre {
        out.push("q_point_near_rail".to_string());
    }
    json!(out)
}

/// Print exactly one JSON document on stdout.
pub fn print(v: &Value) {
    match serde_json::to_string_pretty(v) {
        Ok(s) => outln!("{s}"),
        Err(e) => eprintln!("biasjig: error: could not write JSON: {e}"),
    }
}
