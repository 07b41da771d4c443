//! The human report of a spread: histograms as sparklines, requirement markers, yield.

use super::*;

fn fmt(n: Node, v: f64) -> String {
    match n {
        Node::Gain => format!("{v:.3}"),
        _ => eng4(v, n.unit()),
    }
}

/// The requirement lines to draw on the histograms: (node, value). The gain's follow the sign
/// of the stage's gain (the histogram is of the signed gain).
pub fn req_lines(req: &Requirement, sp: &Spread) -> Vec<(Node, f64)> {
    let sign = if sp.monte_carlo.nodes.gain.mean < 0.0 {
        -1.0
    } else {
        1.0
    };
    let mut v = Vec::new();
    for g in [req.gain_min, req.gain_max].into_iter().flatten() {
        v.push((Node::Gain, sign * g));
    }
    if let Some(x) = req.swing_min {
        v.push((Node::Swing, x));
    }
    if let Some(x) = req.ic_max {
        // IC is signed as in the operating point (negative for PNP); the budget is a magnitude.
        let sign = if sp.monte_carlo.nodes.ic.mean < 0.0 {
            -1.0
        } else {
            1.0
        };
        v.push((Node::Ic, sign * x));
    }
    v
}

/// A line under a sparkline of `bins` bins over `lo`..`hi` with `^` where each value falls,
/// `<` or `>` at the ends for values outside.
pub fn marker_line(lo: f64, hi: f64, bins: usize, values: &[f64]) -> String {
    let mut line = vec![' '; bins];
    for &x in values {
        let (k, c) = if x < lo {
            (0, '<')
        } else if x > hi {
            (bins.saturating_sub(1), '>')
        } else {
            let k = ((x - lo) / (hi - lo) * bins as f64) as usize;
            (k.min(bins.saturating_sub(1)), '^')
        };
        if let Some(slot) = line.get_mut(k) {
            *slot = c;
        }
    }
    line.into_iter().collect()
}

const SPARK: [char; 8] = ['▁', '▂', '▃', '▄', '▅', '▆', '▇', '█'];

/// One line of block characters for a histogram (blank for an empty bin).
pub fn sparkline(bins: &[u32]) -> String {
    let top = bins.iter().copied().max().unwrap_or(0);
    bins.iter()
        .map(|&c| {
            if c == 0 || top == 0 {
                ' '
            } else {
                let k = (u64::from(c) * 7).div_ceil(u64::from(top)) as usize;
                SPARK.get(k.min(7)).copied().unwrap_or('█')
            }
        })
        .collect()
}

/// The human report.
pub fn report(
    sp: &Spread,
    nominal: &Sample,
    var: &Variation,
    st: &McSettings,
    req: &Requirement,
    temp_c: f64,
    low: Option<LowCornerHeld>,
) -> String {
    let mut s = String::new();
    let m = &sp.monte_carlo;
    let dist = match var.distribution {
        Distribution::Uniform => "uniform within tolerance".to_string(),
        Distribution::Normal { sigmas } => format!("normal, tolerance at {sigmas} sigma"),
    };
    let _ = writeln!(
        s,
        "Spread: ambient {}, parts {dist}; {} Monte Carlo samples, seed {}",
        biasjig::text::ambient(var.temp_min_c, var.temp_max_c),
        m.runs,
        st.seed
    );
    let _ = writeln!(
        s,
        "  worst case: {} solves ({})",
        sp.worst.solves,
        if sp.worst.exhaustive {
            "every corner"
        } else {
            "vertex method"
        }
    );
    let _ = writeln!(
        s,
        "  {:<6} {:>11} {:>11} {:>11} {:>11} {:>11} {:>11}",
        "", "nominal", "worst min", "worst max", "mean", "std", "3-sigma %"
    );
    for n in Node::ALL {
        let r = sp.worst.nodes.get(n);
        let x = m.nodes.get(n);
        let rel = if x.mean != 0.0 {
            300.0 * x.std() / x.mean.abs()
        } else {
            0.0
        };
        let _ = writeln!(
            s,
            "  {:<6} {:>11} {:>11} {:>11} {:>11} {:>11} {:>10.1}%",
            n.label(),
            fmt(n, *nominal.values.get(n)),
            fmt(n, r.min),
            fmt(n, r.max),
            fmt(n, x.mean),
            fmt(n, x.std()),
            rel
        );
    }
    let _ = writeln!(s, "  (nominal: typical hFE at {temp_c} °C)");
    let checks: Vec<String> = [
        req.gain_min.map(|v| format!("|gain| >= {v}")),
        req.gain_max.map(|v| format!("|gain| <= {v}")),
        req.swing_min.map(|v| format!("swing >= {}", eng4(v, "V"))),
        req.ic_max.map(|v| format!("IC <= {}", eng4(v, "A"))),
        req.f_low_max
            .filter(|_| low.is_some())
            .map(|v| format!("low corner <= {}", eng4(v, "Hz"))),
    ]
    .into_iter()
    .flatten()
    .collect();
    let _ = writeln!(
        s,
        "Yield: {:.2} % ({} of {}) forward active{}{}",
        100.0 * m.yield_fraction(),
        m.passed,
        m.runs,
        if checks.is_empty() { "" } else { " and " },
        checks.join(", ")
    );
    let pct = |k: u32| {
        if m.runs == 0 {
            0.0
        } else {
            100.0 * f64::from(k) / f64::from(m.runs)
        }
    };
    let e = &m.passed_each;
    let mut each = vec![format!("forward active {:.2} %", pct(e.active))];
    if req.gain_min.is_some() || req.gain_max.is_some() {
        each.push(format!("gain {:.2} %", pct(e.gain)));
    }
    if req.swing_min.is_some() {
        each.push(format!("swing {:.2} %", pct(e.swing)));
    }
    if req.ic_max.is_some() {
        each.push(format!("IC {:.2} %", pct(e.ic)));
    }
    if req.f_low_max.is_some() && low.is_some() {
        each.push(format!("low corner {:.2} %", pct(e.low_corner)));
    }
    let _ = writeln!(s, "  each on its own: {}", each.join(", "));
    if let Some(l) = low {
        let _ = writeln!(
            s,
            "  low corner at the corners: {} at worst with the capacitors at their low \
             tolerance, required <= {}: {}",
            eng4(l.worst, "Hz"),
            eng4(l.required, "Hz"),
            if l.worst <= l.required {
                "held"
            } else {
                "NOT held"
            }
        );
    }
    if m.failed > 0 {
        let _ = writeln!(s, "  {} samples had no operating point", m.failed);
    }
    let _ = writeln!(s, "Distributions (histogram over the worst-case range)");
    for n in Node::ALL {
        let x = m.nodes.get(n);
        let h = &x.histogram;
        let _ = writeln!(
            s,
            "  {:<6} {:>11} |{}| {}",
            n.label(),
            fmt(n, h.lo),
            sparkline(&h.bins),
            fmt(n, h.hi)
        );
        let lines: Vec<f64> = req_lines(req, sp)
            .into_iter()
            .filter(|(k, _)| *k == n)
            .map(|(_, x)| x)
            .collect();
        if !lines.is_empty() {
            let marks = marker_line(h.lo, h.hi, h.bins.len(), &lines);
            let _ = writeln!(
                s,
                "  {:<6} {:>11}  {}  requirement: {}",
                "",
                "",
                marks,
                lines
                    .iter()
                    .map(|x| fmt(n, *x))
                    .collect::<Vec<_>>()
                    .join(", ")
            );
        }
    }
    let _ = writeln!(
        s,
        "Sensitivity (share of each node's variance, largest first)"
    );
    for n in Node::ALL {
        let parts: Vec<String> = sp
            .sensitivity
            .nodes
            .get(n)
            .iter()
            .filter(|x| x.share >= 0.005)
            .take(4)
            .map(|x| format!("{} {:.0} %", x.factor.name(), 100.0 * x.share))
            .collect();
        let _ = writeln!(s, "  {:<6} {}", n.label(), parts.join(", "));
    }
    s
}
