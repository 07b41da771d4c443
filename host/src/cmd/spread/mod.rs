//! `biasjig spread`: worst case, seeded Monte Carlo and sensitivity ranking of one stage, with
//! text histograms, the yield against an optional requirement and, with `--plot DIR`, SVG plots.

mod ac;
mod machine;
mod report;

use machine::to_json;
use report::{report, req_lines};

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
