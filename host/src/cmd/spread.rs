//! `biasjig spread`: worst case, seeded Monte Carlo and sensitivity ranking of one stage, with
//! text histograms, the yield against an optional requirement and, with `--plot DIR`, SVG plots.

use std::fmt::Write as _;
use std::io::IsTerminal;
use std::path::PathBuf;
use std::time::{Duration, Instant};

use biasjig_core::limits::{limits, Meter};
use biasjig_core::spread::{
    centre, spread_observed, Distribution, McSettings, Node, Requirement, Sample, Spread, Variation,
};
use serde_json::{json, Map, Value};

use crate::Global;
use biasjig::error::{CliError, CmdResult, EXIT_OK};
use biasjig::stage_args::{spread_error, stage_error, StageArgs, TempRange};
use biasjig::text::eng4;
use biasjig::{json, plot, values};

/// Most Monte Carlo samples one run takes.
pub const MAX_RUNS: u32 = 10_000_000;
/// Most Q-points kept for the load-line plot.
const CLOUD_MAX: usize = 4000;
/// `biasjig spread`: give the stage by flags or `--design FILE`.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    #[command(flatten)]
    stage: StageArgs,
    #[command(flatten)]
    temps: TempRange,
    #[command(flatten)]
    inputs: biasjig::stage_args::InputArgs,
    /// Number of Monte Carlo samples
    #[arg(long, default_value_t = 1000, help_heading = "Spread")]
    runs: u32,
    /// Seed of the Monte Carlo generator (the same seed gives the same numbers everywhere)
    #[arg(long, default_value_t = 1, help_heading = "Spread")]
    seed: u64,
    /// Parts normal instead of uniform, the tolerance at this many standard deviations (0.5 to 10)
    #[arg(long, value_name = "SIGMAS", value_parser = values::value, help_heading = "Spread")]
    normal: Option<f64>,
    /// Yield requirement: least gain magnitude
    #[arg(long = "gain-min", value_parser = values::value, help_heading = "Yield")]
    gain_min: Option<f64>,
    /// Yield requirement: largest gain magnitude
    #[arg(long = "gain-max", value_parser = values::value, help_heading = "Yield")]
    gain_max: Option<f64>,
    /// Yield requirement: least peak-to-peak swing at the load, V
    #[arg(long = "swing-min", value_parser = values::value, help_heading = "Yield")]
    swing_min: Option<f64>,
    /// Yield requirement: largest collector current, A
    #[arg(long = "ic-max", value_parser = values::value, help_heading = "Yield")]
    ic_max: Option<f64>,
    /// Write SVG plots (histograms with limits, load lines with the Q-point cloud, sensitivity) here
    #[arg(long, value_name = "DIR", help_heading = "Spread")]
    plot: Option<PathBuf>,
    /// Signal test: the spread of the gain magnitude at this test frequency, Hz (repeatable, at
    /// most 4): worst case over the resistor and capacitor corners and a Monte Carlo (capacitors
    /// within --cap-tol, uniform)
    #[arg(long = "ac-f", value_name = "F", value_parser = values::value, help_heading = "Signal test")]
    ac_f: Vec<f64>,
}

/// A progress bar on a terminal for runs longer than about a second.
struct Progress {
    enabled: bool,
    start: Instant,
    bar: Option<indicatif::ProgressBar>,
}

impl Progress {
    fn new(enabled: bool) -> Self {
        Self {
            enabled,
            start: Instant::now(),
            bar: None,
        }
    }

    fn update(&mut self, done: u32, total: u32) {
        if !self.enabled {
            return;
        }
        if self.bar.is_none() && self.start.elapsed() > Duration::from_millis(700) && done < total {
            let bar = indicatif::ProgressBar::new(u64::from(total));
            if let Ok(style) = indicatif::ProgressStyle::with_template(
                "Monte Carlo {bar:40} {pos}/{len} samples, {eta} left",
            ) {
                bar.set_style(style);
            }
            self.bar = Some(bar);
        }
        if let Some(bar) = &self.bar {
            bar.set_position(u64::from(done));
            if done >= total {
                bar.finish_and_clear();
            }
        }
    }
}

/// The low corner over the corners of the spread, with the capacitors at the low end of their
/// tolerance (exact engine at the nominal point and the corners of least and most IC), against
/// the design's requirement.
#[derive(Debug, Clone, Copy)]
pub struct LowCornerHeld {
    /// Highest pole sum found, Hz.
    pub worst: f64,
    /// The design's highest allowed low corner, Hz.
    pub required: f64,
}

impl Cmd {
    /// The yield requirement: the flags, else the design file's requirement (gain window,
    /// swing, IC budget, and the low corner when the stage has capacitors).
    fn requirement_from(
        &self,
        doc: Option<&biasjig_core::design::Requirement>,
        has_caps: bool,
    ) -> Result<Requirement, CliError> {
        let mut r = self.requirement()?;
        if let Some(d) = doc {
            let given = self.gain_min.is_some()
                || self.gain_max.is_some()
                || self.swing_min.is_some()
                || self.ic_max.is_some();
            if !given {
                r.gain_min = Some(d.gain * (1.0 - d.gain_tol));
                r.gain_max = Some(d.gain * (1.0 + d.gain_tol));
                r.swing_min = (d.swing_pp > 0.0).then_some(d.swing_pp);
                r.ic_max = Some(d.ic_max);
                r.f_low_max = has_caps.then(|| d.f_low_or_default());
            }
        }
        Ok(r)
    }

    fn requirement(&self) -> Result<Requirement, CliError> {
        for (flag, v) in [
            ("--gain-min", self.gain_min),
            ("--gain-max", self.gain_max),
            ("--swing-min", self.swing_min),
            ("--ic-max", self.ic_max),
        ] {
            if let Some(x) = v {
                if !(x.is_finite() && x > 0.0) {
                    return Err(CliError::field(flag, x, "must be positive"));
                }
            }
        }
        if let (Some(a), Some(b)) = (self.gain_min, self.gain_max) {
            if a > b {
                return Err(CliError::field(
                    "--gain-min/--gain-max",
                    format!("{a}/{b}"),
                    "min must not exceed max",
                ));
            }
        }
        Ok(Requirement {
            gain_min: self.gain_min,
            gain_max: self.gain_max,
            swing_min: self.swing_min,
            ic_max: self.ic_max,
            f_low_max: None,
        })
    }

    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let r = self.stage.resolve_with(Some(&self.inputs), None)?;
        // A design file's ambient range unless the flags give one.
        let mut temps = self.temps.clone();
        if let Some(d) = &r.doc {
            if temps.temp_min.is_none() && temps.temp_max.is_none() {
                temps.temp_min = Some(d.temp_min);
                temps.temp_max = Some(d.temp_max);
            }
        }
        let mut var = temps.variation(r.temp_c)?.read_through(r.settings.inputs);
        if let Some(k) = self.normal {
            if !(k.is_finite() && (0.5..=10.0).contains(&k)) {
                return Err(CliError::field(
                    "--normal",
                    k,
                    "must be between 0.5 and 10 standard deviations",
                ));
            }
            var.distribution = Distribution::Normal { sigmas: k };
        }
        if !(1..=MAX_RUNS).contains(&self.runs) {
            return Err(CliError::field(
                "--runs",
                self.runs,
                format!("must be between 1 and {MAX_RUNS}"),
            ));
        }
        let design_req = r.doc.as_ref().and_then(|d| d.requirement);
        let has_caps = r.stage.cin.is_some() || r.stage.cout.is_some() || r.stage.ce.is_some();
        let req = self.requirement_from(design_req.as_ref(), has_caps)?;
        r.stage.validate().map_err(|e| stage_error(&r.stage, e))?;
        let low = design_req.and_then(|d| {
            has_caps.then(|| {
                let mut d = d;
                d.temp_min = var.temp_min_c;
                d.temp_max = var.temp_max_c;
                LowCornerHeld {
                    worst: biasjig_core::design::held(&d, &r.profile, &r.stage).f_low_max,
                    required: d.f_low_or_default(),
                }
            })
        });
        let settings = McSettings {
            runs: self.runs,
            seed: self.seed,
            signal: true,
            requirement: req,
        };
        let nominal = centre(
            &r.stage,
            &r.profile,
            &Variation {
                distribution: var.distribution,
                inputs: var.inputs,
                ..Variation::at(r.temp_c)
            },
        )
        .map_err(spread_error)?;
        let mut progress = Progress::new(!g.json && std::io::stderr().is_terminal());
        let mut cloud: Vec<(f64, f64)> = Vec::new();
        let keep_cloud = self.plot.is_some();
        let sp = spread_observed(
            &r.stage,
            &r.profile,
            &var,
            &settings,
            |d, t| progress.update(d, t),
            |s: &Sample| {
                if keep_cloud && cloud.len() < CLOUD_MAX {
                    cloud.push((s.values.vce, s.values.ic));
                }
            },
        )
        .map_err(spread_error)?;
        // Windows at the nominal supply with the default meter, to mark on the plots.
        let lim = limits(
            &r.stage,
            &r.profile,
            &var,
            &Meter::default(),
            r.stage.vcc.value,
        )
        .ok();
        let mut written = Vec::new();
        if let Some(dir) = &self.plot {
            written = plot::write_all(
                dir,
                &r.stage,
                &r.profile,
                &sp,
                lim.as_ref(),
                &cloud,
                &req_lines(&req, &sp),
            )?;
        }
        let ac = self.ac_spread(&r, &var)?;
        if g.json {
            let mut doc = to_json(&sp, &nominal, &var, &settings, &req);
            if let Some(l) = low {
                doc["yield"]["low_corner"] = json!({
                    "worst": json::num(l.worst), "required": json::num(l.required),
                    "held": l.worst <= l.required,
                });
            }
            if req.f_low_max.is_some() && has_caps {
                let m = &sp.monte_carlo;
                let f = if m.runs == 0 {
                    0.0
                } else {
                    f64::from(m.passed_each.low_corner) / f64::from(m.runs)
                };
                doc["yield"]["each"]["low_corner"] = json::num(f);
            }
            if let (Some(ac), Some(obj)) = (&ac, doc.as_object_mut()) {
                obj.insert("ac".into(), ac.0.clone());
            }
            json::print(&doc);
        } else {
            out!(
                "{}",
                report(&sp, &nominal, &var, &settings, &req, r.temp_c, low)
            );
            if let Some(ac) = &ac {
                out!("{}", ac.1);
            }
            for p in &written {
                outln!("wrote {}", p.display());
            }
        }
        Ok(EXIT_OK)
    }
}

impl Cmd {
    /// The gain's spread at the `--ac-f` frequencies at the nominal supply: JSON
    /// `[{"f","nominal","worst_case": {"min","max"},"monte_carlo": {"runs","mean","std","min","max"}}]`
    /// and the text lines; `None` without `--ac-f`.
    fn ac_spread(
        &self,
        r: &biasjig::stage_args::Resolved,
        var: &Variation,
    ) -> Result<Option<(Value, String)>, CliError> {
        use biasjig_core::signaltest;
        if self.ac_f.is_empty() {
            return Ok(None);
        }
        let bad = |e: signaltest::SignalTestError| CliError::usage(format!("--ac-f: {e}"));
        let vcc = r.stage.vcc.value;
        let wc = signaltest::windows(
            &r.stage,
            &r.profile,
            var,
            &signaltest::SignalMeter {
                gain_error: 0.0,
                floor: 0.0,
            },
            vcc,
            &self.ac_f,
        )
        .map_err(bad)?;
        let (mc, used) = signaltest::monte_carlo(
            &r.stage, &r.profile, var, vcc, &self.ac_f, self.runs, self.seed,
        )
        .map_err(bad)?;
        let mut text = String::from("Gain |v(load)/v(source)| at the test frequencies:\n");
        let mut list = Vec::new();
        for (w, m) in wc.iter().zip(mc.iter()) {
            list.push(json!({
                "f": json::num(w.f), "nominal": json::num(w.nominal),
                "worst_case": {"min": json::num(w.min), "max": json::num(w.max)},
                "monte_carlo": {"runs": used, "mean": json::num(m.mean), "std": json::num(m.std),
                                "min": json::num(m.min), "max": json::num(m.max)},
            }));
            text.push_str(&format!(
                "  {:>9}  nominal {:.3}   worst {:.3} to {:.3}   Monte Carlo mean {:.3}, std {:.3} ({used} runs)\n",
                biasjig::text::eng4(w.f, "Hz"),
                w.nominal,
                w.min,
                w.max,
                m.mean,
                m.std
            ));
        }
        Ok(Some((Value::Array(list), text)))
    }
}

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
