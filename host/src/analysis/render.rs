//! The report's forms: the JSON document (machine interface), the text for a terminal and the
//! self-contained HTML page with the charts.

use serde_json::{json, Map, Value};

use super::charts::{self, NodePlot};
use super::stats::{self, Chart, MIN_N, RULES_SOURCE};
use super::{Analysis, Design, Group, Rework, NODES};
use crate::clock::iso_ms;
use crate::json::num;
use crate::text::eng4;

/// Unit of each node in [`NODES`] order.
const UNITS: [&str; 6] = ["V", "V", "V", "V", "V", "A"];

/// How readings are referred to the nominal supply (printed with the figures).
pub const REFERRAL: &str = "each reading carried to the nominal supply by its place in its own \
window: x' = L0 + (x - L)(H0 - L0)/(H - L), [L, H] the window at the board's measured supply, \
[L0, H0] the window at the nominal supply";

/// Per node of a design: referred first-pass readings (test order), their serials, the nominal
/// window, Cpk and the chart.
pub struct NodeFigures {
    /// Node name.
    pub name: &'static str,
    /// Unit.
    pub unit: &'static str,
    /// Readings in test order.
    pub values: Vec<f64>,
    /// Serial of each reading.
    pub serials: Vec<String>,
    /// Window at the nominal supply.
    pub window: Option<(f64, f64)>,
    /// Cpk (none below the minimum n).
    pub cpk: Option<f64>,
    /// Mean and sample standard deviation.
    pub mean_std: (f64, f64),
    /// The individuals chart.
    pub chart: Option<Chart>,
}

/// The node figures of a design.
pub fn nodes(d: &Design) -> Vec<NodeFigures> {
    let (serials, per_node) = d.first_pass();
    NODES
        .iter()
        .zip(UNITS)
        .zip(per_node)
        .enumerate()
        .map(|(k, ((name, unit), pts))| {
            let values: Vec<f64> = pts.iter().map(|p| p.1).collect();
            let window = d.nominal.get(k).copied().flatten();
            let cpk = window.and_then(|(lo, hi)| stats::cpk(&values, lo, hi));
            NodeFigures {
                name,
                unit,
                serials: pts
                    .iter()
                    .map(|p| serials.get(p.0).cloned().unwrap_or_default())
                    .collect(),
                mean_std: stats::mean_std(&values),
                chart: stats::individuals(&values),
                values,
                window,
                cpk,
            }
        })
        .collect()
}

/// What the report says of the gain readings (printed with the figures).
pub const GAIN_NOTE: &str =
    "gain readings taken as measured, no referral, against the gain window \
of the first test met at that frequency (the gain window moves only a little with the measured \
supply, and records carry no gain window at the nominal supply)";

/// Per test frequency of a design: the gain readings of the first test of each board that
/// passed, the gain window and Cpk.
pub struct GainFigures {
    /// Test frequency, Hz.
    pub f: f64,
    /// Gain readings in test order.
    pub values: Vec<f64>,
    /// Gain window.
    pub window: Option<(f64, f64)>,
    /// Cpk (none below the minimum n).
    pub cpk: Option<f64>,
    /// Mean and sample standard deviation.
    pub mean_std: (f64, f64),
}

/// The gain figures of a design, in frequency order.
pub fn gains(d: &Design) -> Vec<GainFigures> {
    d.first_pass_ac()
        .into_iter()
        .map(|(f, values)| {
            let window = d.ac_window(f);
            GainFigures {
                f,
                window,
                cpk: window.and_then(|(lo, hi)| stats::cpk(&values, lo, hi)),
                mean_std: stats::mean_std(&values),
                values,
            }
        })
        .collect()
}

fn gain_json(d: &Design) -> Value {
    let freqs: Vec<Value> = gains(d)
        .iter()
        .map(|g| {
            json!({"f": num(g.f), "n": g.values.len(), "mean": num(g.mean_std.0),
                   "std": num(g.mean_std.1),
                   "low": g.window.map_or(Value::Null, |w| num(w.0)),
                   "high": g.window.map_or(Value::Null, |w| num(w.1)),
                   "cpk": g.cpk.map_or(Value::Null, num)})
        })
        .collect();
    json!({"population": "first test of each board that passed", "min_n": MIN_N,
           "referral": GAIN_NOTE, "frequencies": freqs})
}

/// A gain as text: four significant figures (as the node figures: "n/a" when undefined).
fn gain4(x: f64) -> String {
    eng4(x, "")
}

fn group_json(g: &Group) -> Value {
    json!({"boards": g.boards(), "tests": g.tests, "first_pass_yield": num(g.first_pass_yield()),
           "final_yield": num(g.final_yield())})
}

fn rework_json(w: Rework) -> Value {
    let acc = if w.matched > 0 {
        num(w.named_first as f64 / w.matched as f64)
    } else {
        Value::Null
    };
    json!({"repairs": w.repairs, "matched": w.matched, "named_first": w.named_first,
           "in_top_three": w.in_top_three, "named_first_share": acc})
}

fn name_or(s: &str, none: &str) -> String {
    if s.is_empty() {
        none.to_string()
    } else {
        s.to_string()
    }
}

/// The JSON entry of one design.
pub fn design_json(a: &Analysis, d: &Design) -> Value {
    let stations: Map<String, Value> = d
        .stations
        .iter()
        .map(|(k, g)| (name_or(k, "unnamed"), group_json(g)))
        .collect();
    let lots: Map<String, Value> = d
        .lots
        .iter()
        .map(|(k, g)| (name_or(k, "none"), group_json(g)))
        .collect();
    let (single, groups, unexplained) = d.pareto();
    let mut cap = Map::new();
    let mut ctl = Map::new();
    for n in nodes(d) {
        cap.insert(
            n.name.into(),
            json!({"n": n.values.len(), "mean": num(n.mean_std.0), "std": num(n.mean_std.1),
                   "low": n.window.map_or(Value::Null, |w| num(w.0)),
                   "high": n.window.map_or(Value::Null, |w| num(w.1)),
                   "cpk": n.cpk.map_or(Value::Null, num)}),
        );
        let chart = match &n.chart {
            None => json!({"n": n.values.len()}),
            Some(c) => {
                let counts = c.counts();
                let first: Vec<Value> = c
                    .signals
                    .iter()
                    .take(20)
                    .map(|(r, i)| {
                        json!({"rule": r, "point": i + 1,
                                         "serial": n.serials.get(*i)})
                    })
                    .collect();
                json!({"n": n.values.len(), "centre": num(c.centre), "sigma": num(c.sigma),
                       "ucl": num(c.ucl()), "lcl": num(c.lcl()),
                       "signals": {"rule1": counts[0], "rule2": counts[1], "rule3": counts[2],
                                   "rule4": counts[3]},
                       "first_signals": first})
            }
        };
        ctl.insert(n.name.into(), chart);
    }
    let (first, last) = d.span.unwrap_or((0, 0));
    json!({
        "hash": d.hash,
        "id": d.ids.iter().next(),
        "ids": d.ids,
        "boards": d.all.boards(),
        "tests": d.all.tests,
        "first_pass_yield": num(d.all.first_pass_yield()),
        "final_yield": num(d.all.final_yield()),
        "stations": stations,
        "lots": lots,
        "first_test": iso_ms(first),
        "last_test": iso_ms(last),
        "retests": d.all.tests - d.all.boards(),
        "refused_tests": d.refused_tests,
        "recovered_boards": d.all.recovered(),
        "failing_serials": d.all.failing(),
        "pareto": {
            "faults": single.iter().map(|(k, n)| json!({"fault": k, "boards": n})).collect::<Vec<_>>(),
            "groups": groups.iter().map(|(k, n)| json!({"faults": k, "boards": n})).collect::<Vec<_>>(),
            "unexplained_boards": unexplained,
        },
        "capability": {"population": "first test of each board that passed", "min_n": MIN_N,
                       "referral": REFERRAL, "nominal_vcc": d.nominal_vcc.map_or(Value::Null, num),
                       "unreferred_tests": d.unreferred, "nodes": cap},
        "control": {"chart": "individuals; sigma = mean moving range / 1.128; limits centre ± 3 sigma",
                    "rules": RULES_SOURCE, "nodes": ctl},
        "rework": rework_json(a.rework(Some(&d.hash))),
        "ac": gain_json(d),
    })
}

fn pct(x: f64) -> String {
    if x.is_finite() {
        format!("{:.1} %", 100.0 * x)
    } else {
        "-".into()
    }
}

/// The text report of one design.
pub fn design_text(a: &Analysis, d: &Design) -> String {
    let mut s = String::new();
    let ids: Vec<&str> = d.ids.iter().map(String::as_str).collect();
    let (first, last) = d.span.unwrap_or((0, 0));
    s.push_str(&format!(
        "Design {} (hash {})\n  tests {} to {}\n",
        ids.join(", "),
        d.hash,
        iso_ms(first),
        iso_ms(last)
    ));
    let lots: Vec<String> = d.lots.keys().map(|k| name_or(k, "none")).collect();
    s.push_str(&format!("  lots: {}\n", lots.join(", ")));
    let g = &d.all;
    s.push_str(&format!(
        "  {} boards, {} tests ({} retests, {} refused); first-pass yield {}, final yield {}; \
         {} boards recovered\n",
        g.boards(),
        g.tests,
        g.tests - g.boards(),
        d.refused_tests,
        pct(g.first_pass_yield()),
        pct(g.final_yield()),
        g.recovered()
    ));
    s.push_str("  per station:\n");
    for (k, st) in &d.stations {
        s.push_str(&format!(
            "    {:<16} {:>6} boards {:>7} tests   first pass {:>7}   final {:>7}\n",
            name_or(k, "unnamed"),
            st.boards(),
            st.tests,
            pct(st.first_pass_yield()),
            pct(st.final_yield())
        ));
    }
    let failing = g.failing();
    if !failing.is_empty() {
        let shown: Vec<&str> = failing.iter().take(40).map(String::as_str).collect();
        s.push_str(&format!(
            "  failing serials ({}): {}{}\n",
            failing.len(),
            shown.join(" "),
            if failing.len() > 40 { " ..." } else { "" }
        ));
    }
    let (single, groups, unexplained) = d.pareto();
    if !single.is_empty() || !groups.is_empty() || unexplained > 0 {
        s.push_str("  failed boards by first diagnosis (Pareto):\n");
        for (k, n) in &single {
            s.push_str(&format!("    {n:>6}  {k}\n"));
        }
        for (k, n) in &groups {
            s.push_str(&format!("    {n:>6}  group: {k} (same readings)\n"));
        }
        s.push_str(&format!(
            "    {unexplained:>6}  no single fault explains the readings\n"
        ));
    }
    s.push_str(&format!(
        "  capability over the first test of each board that passed (Cpk from n = {MIN_N}); \
         readings referred to the nominal supply{}:\n",
        d.nominal_vcc
            .map_or(String::new(), |v| format!(" {}", eng4(v, "V")))
    ));
    for n in nodes(d) {
        let cpk = n.cpk.map_or("-".to_string(), |c| format!("{c:.2}"));
        let chart = n.chart.as_ref().map_or("-".to_string(), |c| {
            let k = c.counts();
            format!("signals {}/{}/{}/{}", k[0], k[1], k[2], k[3])
        });
        let (lo, hi) = n.window.unwrap_or((f64::NAN, f64::NAN));
        s.push_str(&format!(
            "    {:<4} n {:>6}  mean {:>11}  std {:>11}  window {} .. {}  Cpk {cpk}  {chart}\n",
            n.name.to_uppercase(),
            n.values.len(),
            eng4(n.mean_std.0, n.unit),
            eng4(n.mean_std.1, n.unit),
            eng4(lo, n.unit),
            eng4(hi, n.unit),
        ));
    }
    let g = gains(d);
    if !g.is_empty() {
        s.push_str(&format!(
            "  signal test: gain over the first test of each board that passed (Cpk from n = \
             {MIN_N}); {GAIN_NOTE}:\n"
        ));
        for x in &g {
            let cpk = x.cpk.map_or("-".to_string(), |c| format!("{c:.2}"));
            let (lo, hi) = x.window.unwrap_or((f64::NAN, f64::NAN));
            s.push_str(&format!(
                "    {:<10} n {:>6}  mean {:>9}  std {:>9}  window {} .. {}  Cpk {cpk}\n",
                eng4(x.f, "Hz"),
                x.values.len(),
                gain4(x.mean_std.0),
                gain4(x.mean_std.1),
                gain4(lo),
                gain4(hi),
            ));
        }
    }
    let w = a.rework(Some(&d.hash));
    if w.matched > 0 {
        s.push_str(&format!(
            "  rework: {} repairs; the diagnosis named the fault first for {} ({}), among the \
             first three for {}\n",
            w.matched,
            w.named_first,
            pct(w.named_first as f64 / w.matched as f64),
            w.in_top_three
        ));
    }
    s
}

fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}

/// The HTML page: per design its text figures, then per node the control chart and histogram.
pub fn html(a: &Analysis, filter_note: &str) -> Result<String, charts::DrawError> {
    let mut page = String::from(
        "<!DOCTYPE html>\n<html><head><meta charset=\"utf-8\"><title>biasjig line report</title>\
         <style>body{font-family:sans-serif;margin:2em}pre{background:#f4f4f4;padding:1em}\
         figure{display:inline-block;margin:0.5em}</style></head><body>\n<h1>Line report</h1>\n",
    );
    page.push_str(&format!("<p>{}</p>\n", escape(filter_note)));
    page.push_str(&format!(
        "<p>Control charts: {}. Capability: {}.</p>\n",
        escape(RULES_SOURCE),
        escape(REFERRAL)
    ));
    for d in &a.designs {
        let ids: Vec<&str> = d.ids.iter().map(String::as_str).collect();
        page.push_str(&format!(
            "<h2>Design {} <small>(hash {})</small></h2>\n<pre>{}</pre>\n",
            escape(&ids.join(", ")),
            escape(&d.hash),
            escape(&design_text(a, d))
        ));
        for n in nodes(d) {
            let p = NodePlot {
                name: n.name,
                unit: n.unit,
                values: &n.values,
                window: n.window,
                chart: n.chart.as_ref(),
            };
            page.push_str(&format!(
                "<figure>{}</figure><figure>{}</figure>\n",
                charts::control(&p)?,
                charts::histogram(&p)?
            ));
        }
    }
    page.push_str("</body></html>\n");
    Ok(page)
}
