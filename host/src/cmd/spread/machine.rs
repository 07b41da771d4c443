//! The machine-interface document of a spread.

use super::*;

/// The JSON document: worst case, Monte Carlo, nominal, sensitivity, histograms, yield.
pub fn to_json(
    sp: &Spread,
    nominal: &Sample,
    var: &Variation,
    st: &McSettings,
    req: &Requirement,
) -> Value {
    let num = json::num;
    let mut wc = Map::new();
    let mut mc = Map::new();
    let mut nom = Map::new();
    let mut sens = Map::new();
    let mut hist = Map::new();
    let m = &sp.monte_carlo;
    let frac = |k: u32| {
        if m.runs == 0 {
            0.0
        } else {
            f64::from(k) / f64::from(m.runs)
        }
    };
    mc.insert("runs".into(), json!(m.runs));
    mc.insert("seed".into(), json!(st.seed));
    mc.insert("failed".into(), json!(m.failed));
    mc.insert("active".into(), json!(m.active));
    for n in Node::ALL {
        let r = sp.worst.nodes.get(n);
        wc.insert(
            n.name().into(),
            json!({"min": num(r.min), "max": num(r.max)}),
        );
        let s = m.nodes.get(n);
        let q = |p: f64| json::opt(s.quantile(p));
        mc.insert(
            n.name().into(),
            json!({
                "mean": num(s.mean), "std": num(s.std()),
                "min": num(s.range.min), "max": num(s.range.max),
                "p05": q(0.05), "p50": q(0.5), "p95": q(0.95),
            }),
        );
        nom.insert(n.name().into(), num(*nominal.values.get(n)));
        let shares: Vec<Value> = sp
            .sensitivity
            .nodes
            .get(n)
            .iter()
            .filter(|x| x.variance > 0.0)
            .map(|x| json!({"factor": x.factor.name(), "share": num(x.share), "effect": num(x.effect)}))
            .collect();
        sens.insert(n.name().into(), json!(shares));
        let h = &s.histogram;
        hist.insert(
            n.name().into(),
            json!({"low": num(h.lo), "high": num(h.hi), "counts": h.bins.to_vec(), "below": h.below, "above": h.above}),
        );
    }
    json!({
        "nominal": nom,
        "worst_case": wc,
        "monte_carlo": mc,
        "sensitivity": sens,
        "histogram": hist,
        "yield": {
            "fraction": num(m.yield_fraction()),
            "passed": m.passed,
            "each": {
                "active": num(frac(m.passed_each.active)),
                "gain": num(frac(m.passed_each.gain)),
                "swing": num(frac(m.passed_each.swing)),
                "ic": num(frac(m.passed_each.ic)),
            },
            "requirement": {
                "gain_min": json::opt(req.gain_min), "gain_max": json::opt(req.gain_max),
                "swing_min": json::opt(req.swing_min), "ic_max": json::opt(req.ic_max),
                "f_low_max": json::opt(req.f_low_max),
            },
        },
        "temperature": {"min": num(var.temp_min_c), "max": num(var.temp_max_c)},
        "distribution": match var.distribution {
            Distribution::Uniform => json!({"kind": "uniform"}),
            Distribution::Normal { sigmas } => json!({"kind": "normal", "sigmas": num(sigmas)}),
        },
        "worst_case_solves": sp.worst.solves,
        "worst_case_exhaustive": sp.worst.exhaustive,
    })
}
