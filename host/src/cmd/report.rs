//! `biasjig report LOG`: yield and capability from a board log: pass rate, failure Pareto by
//! fault, per-node mean, standard deviation and Cpk against the limits (over the passing
//! boards), histograms as SVG, and optionally one self-contained HTML page with the plots.

use std::path::PathBuf;

use plotters::prelude::*;
use serde_json::{json, Value};

use crate::boardlog;
use crate::error::{CliError, CmdResult, EXIT_OK};
use crate::{json, Global};

/// The judged nodes with their units.
const NODES: [(&str, &str); 6] = [
    ("vb", "V"),
    ("ve", "V"),
    ("vc", "V"),
    ("vbe", "V"),
    ("vce", "V"),
    ("ic", "A"),
];

/// `biasjig report`.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    /// Board log written by `check --log` or `batch --log`
    #[arg(value_name = "LOG")]
    log: PathBuf,
    /// Write one SVG histogram per node into DIR
    #[arg(long = "svg-dir", value_name = "DIR")]
    svg_dir: Option<PathBuf>,
    /// Write the report as one self-contained HTML page with the plots inline
    #[arg(long, value_name = "FILE")]
    html: Option<PathBuf>,
}

/// Statistics of one node over the passing boards.
#[derive(Debug, Clone, Default)]
pub struct NodeStats {
    /// Node name.
    pub name: &'static str,
    /// Unit.
    pub unit: &'static str,
    /// Values.
    pub values: Vec<f64>,
    /// Mean.
    pub mean: f64,
    /// Sample standard deviation.
    pub std: f64,
    /// Mean lower limit.
    pub low: f64,
    /// Mean upper limit.
    pub high: f64,
    /// Cpk = min(high − mean, mean − low)/(3·std); `None` with fewer than two boards or no spread.
    pub cpk: Option<f64>,
}

/// The whole report.
#[derive(Debug, Clone, Default)]
pub struct Report {
    /// Boards judged pass.
    pub passed: u32,
    /// Boards judged fail.
    pub failed: u32,
    /// Boards whose readings were refused.
    pub refused: u32,
    /// First-named fault of each failed board, counted, most frequent first.
    pub pareto: Vec<(String, u32)>,
    /// Per-node statistics.
    pub nodes: Vec<NodeStats>,
}

/// Build the report from log records.
pub fn build(records: &[Value]) -> Report {
    let mut rep = Report::default();
    let mut pareto: Vec<(String, u32)> = Vec::new();
    let mut lows = vec![Vec::new(); NODES.len()];
    let mut highs = vec![Vec::new(); NODES.len()];
    let mut values = vec![Vec::new(); NODES.len()];
    for r in records {
        match r["verdict"].as_str() {
            Some("pass") => {
                rep.passed += 1;
                for (k, (name, _)) in NODES.iter().enumerate() {
                    let n = &r["nodes"][name];
                    if let (Some(m), Some(lo), Some(hi)) = (
                        n["measured"].as_f64(),
                        n["low"].as_f64(),
                        n["high"].as_f64(),
                    ) {
                        values[k].push(m);
                        lows[k].push(lo);
                        highs[k].push(hi);
                    }
                }
            }
            Some("fail") => {
                rep.failed += 1;
                let first = &r["faults"][0];
                let key = match (first["part"].as_str(), first["mode"].as_str()) {
                    (Some(p), Some(m)) => format!("{p} {m}"),
                    _ => "no fault named".to_string(),
                };
                match pareto.iter_mut().find(|(k, _)| *k == key) {
                    Some((_, n)) => *n += 1,
                    None => pareto.push((key, 1)),
                }
            }
            Some("refused") => rep.refused += 1,
            _ => {}
        }
    }
    pareto.sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(&b.0)));
    rep.pareto = pareto;
    let mean = |v: &[f64]| {
        if v.is_empty() {
            f64::NAN
        } else {
            v.iter().sum::<f64>() / v.len() as f64
        }
    };
    for (k, (name, unit)) in NODES.iter().enumerate() {
        let v = std::mem::take(&mut values[k]);
        let m = mean(&v);
        let std = if v.len() > 1 {
            (v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (v.len() - 1) as f64).sqrt()
        } else {
            f64::NAN
        };
        let (low, high) = (mean(&lows[k]), mean(&highs[k]));
        let cpk = if std > 0.0 {
            Some((high - m).min(m - low) / (3.0 * std))
        } else {
            None
        };
        rep.nodes.push(NodeStats {
            name,
            unit,
            values: v,
            mean: m,
            std,
            low,
            high,
            cpk,
        });
    }
    rep
}

/// An SVG histogram of a node's values with its window marked.
pub fn histogram(n: &NodeStats) -> Result<String, String> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (480, 300)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| e.to_string())?;
        let (mut lo, mut hi) = (n.low, n.high);
        for v in &n.values {
            lo = lo.min(*v);
            hi = hi.max(*v);
        }
        if !(lo.is_finite() && hi.is_finite() && hi > lo) {
            lo = 0.0;
            hi = 1.0;
        }
        let pad = 0.05 * (hi - lo);
        let (lo, hi) = (lo - pad, hi + pad);
        const BINS: usize = 30;
        let width = (hi - lo) / BINS as f64;
        let mut counts = [0u32; BINS];
        for v in &n.values {
            let k = (((v - lo) / width) as usize).min(BINS - 1);
            counts[k] += 1;
        }
        let top = counts.iter().copied().max().unwrap_or(1).max(1);
        let caption = format!(
            "{} ({}) of passing boards; window dashed",
            n.name.to_uppercase(),
            n.unit
        );
        let mut chart = ChartBuilder::on(&root)
            .caption(caption, ("sans-serif", 16))
            .margin(10)
            .x_label_area_size(30)
            .y_label_area_size(40)
            .build_cartesian_2d(lo..hi, 0u32..top + 1)
            .map_err(|e| e.to_string())?;
        chart
            .configure_mesh()
            .disable_x_mesh()
            .draw()
            .map_err(|e| e.to_string())?;
        chart
            .draw_series(counts.iter().enumerate().map(|(k, c)| {
                let x0 = lo + width * k as f64;
                Rectangle::new([(x0, 0), (x0 + width, *c)], BLUE.mix(0.6).filled())
            }))
            .map_err(|e| e.to_string())?;
        for edge in [n.low, n.high] {
            if edge.is_finite() {
                chart
                    .draw_series(DashedLineSeries::new(
                        vec![(edge, 0), (edge, top + 1)],
                        6,
                        4,
                        RED.stroke_width(2),
                    ))
                    .map_err(|e| e.to_string())?;
            }
        }
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(svg)
}

fn text_report(rep: &Report) -> String {
    let judged = rep.passed + rep.failed;
    let rate = if judged > 0 {
        100.0 * f64::from(rep.passed) / f64::from(judged)
    } else {
        0.0
    };
    let mut out = format!(
        "{} boards: {} passed, {} failed, {} refused; pass rate {rate:.1} %\n",
        judged + rep.refused,
        rep.passed,
        rep.failed,
        rep.refused
    );
    if !rep.pareto.is_empty() {
        out.push_str("\nFailures by likely fault:\n");
        for (k, n) in &rep.pareto {
            out.push_str(&format!("  {n:>5}  {k}\n"));
        }
    }
    out.push_str("\nPassing boards per node (mean, std, window, Cpk):\n");
    for n in &rep.nodes {
        let cpk = n.cpk.map_or("-".to_string(), |c| format!("{c:.2}"));
        out.push_str(&format!(
            "  {:<4} {:>12} {:>12}   {} .. {}   Cpk {cpk}\n",
            n.name.to_uppercase(),
            crate::text::eng4(n.mean, n.unit),
            crate::text::eng(n.std, n.unit),
            crate::text::eng4(n.low, n.unit),
            crate::text::eng4(n.high, n.unit)
        ));
    }
    out
}

fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}

impl Cmd {
    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let contents = boardlog::read(&self.log)?;
        for w in &contents.warnings {
            eprintln!("biasjig: warning: {}: {w}", self.log.display());
        }
        let rep = build(&contents.records);
        let svgs: Vec<(String, String)> = if self.svg_dir.is_some() || self.html.is_some() {
            rep.nodes
                .iter()
                .map(|n| histogram(n).map(|s| (n.name.to_string(), s)))
                .collect::<Result<_, _>>()
                .map_err(|e| CliError::usage(format!("plot: {e}")))?
        } else {
            Vec::new()
        };
        if let Some(dir) = &self.svg_dir {
            std::fs::create_dir_all(dir)
                .map_err(|e| CliError::usage(format!("--svg-dir: {}: {e}", dir.display())))?;
            for (name, svg) in &svgs {
                let p = dir.join(format!("{name}.svg"));
                crate::designfile::write_atomic(&p, svg.as_bytes())
                    .map_err(|e| CliError::usage(format!("--svg-dir: {}: {e}", p.display())))?;
            }
        }
        let text = text_report(&rep);
        if let Some(path) = &self.html {
            let mut page = String::from(
                "<!DOCTYPE html>\n<html><head><meta charset=\"utf-8\"><title>biasjig yield report</title>\
                 <style>body{font-family:sans-serif;margin:2em}pre{background:#f4f4f4;padding:1em}\
                 figure{display:inline-block;margin:0.5em}</style></head><body>\n<h1>Yield report</h1>\n",
            );
            page.push_str(&format!("<pre>{}</pre>\n", escape(&text)));
            for (_, svg) in &svgs {
                page.push_str(&format!("<figure>{svg}</figure>\n"));
            }
            page.push_str("</body></html>\n");
            // Whole or not at all: a temporary file beside it, then a rename.
            crate::designfile::write_atomic(path, page.as_bytes())
                .map_err(|e| CliError::usage(format!("--html: {}: {e}", path.display())))?;
        }
        if g.json {
            let judged = rep.passed + rep.failed;
            let nodes: serde_json::Map<String, Value> = rep
                .nodes
                .iter()
                .map(|n| {
                    (
                        n.name.to_string(),
                        json!({"mean": json::num(n.mean), "std": json::num(n.std),
                        "low": json::num(n.low), "high": json::num(n.high), "cpk": json::opt(n.cpk),
                        "boards": n.values.len()}),
                    )
                })
                .collect();
            json::print(&json!({
                "boards": judged + rep.refused, "passed": rep.passed, "failed": rep.failed,
                "refused": rep.refused,
                "pass_rate": if judged > 0 { json::num(f64::from(rep.passed) / f64::from(judged)) } else { Value::Null },
                "pareto": rep.pareto.iter().map(|(k, n)| {
                    let (part, mode) = k.split_once(' ').unwrap_or((k.as_str(), ""));
                    json!({"part": part, "mode": mode, "count": n})
                }).collect::<Vec<_>>(),
                "nodes": nodes,
                "skipped_lines": contents.warnings.len(),
            }));
        } else {
            out!("{text}");
        }
        Ok(EXIT_OK)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rec(verdict: &str, vb: f64, fault: Option<(&str, &str)>) -> Value {
        let node = |m: f64| json!({"measured": m, "low": 2.0, "high": 3.0, "ok": true});
        let faults: Vec<Value> = fault
            .map(|(p, m)| json!({"part": p, "mode": m}))
            .into_iter()
            .collect();
        json!({"verdict": verdict, "nodes": {"vb": node(vb), "ve": node(vb), "vc": node(vb),
               "vbe": node(vb), "vce": node(vb), "ic": node(vb)}, "faults": faults})
    }

    #[test]
    fn pass_rate_pareto_and_cpk() {
        let records = vec![
            rec("pass", 2.4, None),
            rec("pass", 2.6, None),
            rec("fail", 0.0, Some(("RC", "open"))),
            rec("fail", 0.0, Some(("R1", "open"))),
            rec("fail", 0.0, Some(("RC", "open"))),
            json!({"verdict": "refused"}),
        ];
        let rep = build(&records);
        assert_eq!((rep.passed, rep.failed, rep.refused), (2, 3, 1));
        assert_eq!(rep.pareto[0], ("RC open".to_string(), 2));
        let vb = &rep.nodes[0];
        // Cpk = min(USL − mean, mean − LSL)/(3σ) (common practice); mean 2.5, σ = 0.1414.
        assert!((vb.mean - 2.5).abs() < 1e-12);
        let sigma = (0.02f64).sqrt();
        assert!((vb.cpk.unwrap() - 0.5 / (3.0 * sigma)).abs() < 1e-9);
        let svg = histogram(vb).unwrap();
        assert!(svg.starts_with("<svg") && svg.contains("rect"));
    }
}
