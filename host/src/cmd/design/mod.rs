//! `biasjig design`: from a requirement to ranked part lists of standard values, each
//! re-analysed with the exact engine; `-o FILE` writes the best one as a design file.

mod report;

use std::fmt::Write as _;
use std::path::PathBuf;

use biasjig_core::design::distortion::{second_harmonic, Distortion, HD2_LIMIT};
use biasjig_core::design::warnings::{warnings, Warning};
use biasjig_core::design::{
    design, held, Candidate, DesignError, Held, Hold, Naming, Requirement, RequirementError,
    Setting, MAX_CANDIDATES,
};
use biasjig_core::predict::{predict, Prediction};
use biasjig_core::series::Series;
use biasjig_core::solve::Conditions;
use biasjig_core::stage::{Polarity, Resistor, Stage};
use serde_json::json;

use crate::Global;
use biasjig::designfile::{self, DesignDoc, Predicted};
use biasjig::error::{CliError, CmdResult, EXIT_OK};
use biasjig::stage_args::{check_temp, default_profile, ProfileArgs};
use biasjig::text::{bands, eng, fmt_pct, part_cells, part_heads, PartKind};
use biasjig::{json, text, values};

/// Default collector-current budget, A.
pub const DEFAULT_IC_MAX: f64 = 2e-3;
/// Default gain tolerance, fraction.
pub const DEFAULT_GAIN_TOL: f64 = 0.10;

/// What the report shows of one candidate beyond its nominal figures.
struct Extra {
    /// What it holds at every corner of the spread (exact engine).
    held: Held,
    /// Second harmonic at the required swing (or half its own swing when none is required).
    distortion: Option<Distortion>,
    /// What a designer should know.
    warnings: Vec<Warning>,
}

/// The swing the distortion is estimated at: the required one, or half the candidate's own.
fn distortion_swing(req: &Requirement, c: &Candidate) -> f64 {
    if req.swing_pp > 0.0 {
        req.swing_pp
    } else {
        0.5 * c.swing_pp
    }
}

fn extra(req: &Requirement, profile: &biasjig_core::device::Profile, c: &Candidate) -> Extra {
    Extra {
        held: c.held.unwrap_or_else(|| held(req, profile, &c.stage)),
        distortion: second_harmonic(&c.stage, profile, req.temp, distortion_swing(req, c)),
        warnings: warnings(&c.stage, &c.op).into_iter().collect(),
    }
}

fn hold(text: &str) -> Result<Hold, String> {
    Hold::parse(text).ok_or_else(|| "allowed: worst-case, nominal".to_string())
}

fn series(text: &str) -> Result<Series, String> {
    Series::parse(text).map_err(|_| "allowed: E3, E6, E12, E24, E48, E96, E192".to_string())
}

/// `biasjig design`: give the requirement; the transistor flags describe the part to design for.
#[derive(clap::Args, Debug)]
pub struct Cmd {
    /// Supply, V
    #[arg(long, value_parser = values::volts, allow_hyphen_values = true, help_heading = "Requirement")]
    vcc: f64,
    /// Midband gain magnitude from the source EMF to the load
    #[arg(long, value_parser = values::number, allow_hyphen_values = true, help_heading = "Requirement")]
    gain: f64,
    /// Load, AC-coupled, Ω [default: none, open]
    #[arg(long, value_parser = values::ohms, allow_hyphen_values = true, help_heading = "Requirement")]
    rl: Option<f64>,
    /// Source resistance, Ω [default: 0]
    #[arg(long, value_parser = values::ohms, allow_hyphen_values = true, help_heading = "Requirement")]
    rs: Option<f64>,
    /// Collector-current budget, A [default: 2m]
    #[arg(long = "ic-max", value_parser = values::amps, allow_hyphen_values = true, help_heading = "Requirement")]
    ic_max: Option<f64>,
    /// Least undistorted peak-to-peak swing at the load, V [default: none]
    #[arg(long, value_parser = values::volts, allow_hyphen_values = true, help_heading = "Requirement")]
    swing: Option<f64>,
    /// Highest low corner (sum of the capacitor poles), Hz [default: 20]
    #[arg(long = "f-low", value_parser = values::hertz, allow_hyphen_values = true, help_heading = "Requirement")]
    f_low: Option<f64>,
    /// Nominal ambient, °C [default: 25]
    #[arg(long, value_parser = values::celsius, allow_hyphen_values = true, help_heading = "Requirement")]
    temp: Option<f64>,
    /// Lowest ambient, °C [default: the nominal]
    #[arg(long = "temp-min", value_parser = values::celsius, allow_hyphen_values = true, help_heading = "Requirement")]
    temp_min: Option<f64>,
    /// Highest ambient, °C [default: the nominal]
    #[arg(long = "temp-max", value_parser = values::celsius, allow_hyphen_values = true, help_heading = "Requirement")]
    temp_max: Option<f64>,
    /// PNP stage: emitter side to the supply
    #[arg(long, help_heading = "Requirement")]
    pnp: bool,
    /// Where the requirements must hold: at every corner of the resistor tolerance, hFE
    /// min..max and the ambient range (worst-case), or at the nominal point only
    #[arg(long, value_parser = hold, default_value = "worst-case", help_heading = "Requirement")]
    hold: Hold,
    /// Allowed deviation of |gain| from --gain, percent [default: 10]
    #[arg(long = "gain-tol", value_parser = values::percent, allow_hyphen_values = true, help_heading = "Requirement")]
    gain_tol: Option<f64>,
    /// Resistor series
    #[arg(long, value_parser = series, default_value = "E24", help_heading = "Parts")]
    series: Series,
    /// Capacitor series
    #[arg(long = "cap-series", value_parser = series, default_value = "E6", help_heading = "Parts")]
    cap_series: Series,
    /// Resistor tolerance, percent [default: the series' usual, E24: 5]
    #[arg(long, value_parser = values::percent, allow_hyphen_values = true, help_heading = "Parts")]
    tol: Option<f64>,
    /// Capacitor tolerance, percent [default: the series' usual, E6: 20]
    #[arg(long = "cap-tol", value_parser = values::percent, allow_hyphen_values = true, help_heading = "Parts")]
    cap_tol: Option<f64>,
    #[command(flatten)]
    profile: ProfileArgs,
    /// The measuring inputs of the test station, stated in the design file's `[test]` table
    #[command(flatten)]
    inputs: biasjig::stage_args::InputArgs,
    /// How many candidates to show, 1 to 8
    #[arg(long, default_value_t = 3, value_parser = clap::value_parser!(u8).range(1..=8))]
    count: u8,
    /// Write the best candidate as a design file
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    output: Option<PathBuf>,
    /// Replace the file given with -o if it exists
    #[arg(long)]
    force: bool,
    /// Supply tolerance stated in the design file, percent: at the test station a measured
    /// supply outside nominal ± this is not judged [default: 5]
    #[arg(long = "vcc-tol", value_parser = values::percent, help_heading = "Requirement")]
    vcc_tol: Option<f64>,
    /// Identifier written into the design file [default: from the requirement]
    #[arg(long)]
    id: Option<String>,
}

/// The flag of each setting a refusal advises changing (a test checks that `design` has each).
const SETTING_FLAGS: [(Setting, &str); 8] = [
    (Setting::IcMax, "--ic-max"),
    (Setting::SwingPp, "--swing"),
    (Setting::FLow, "--f-low"),
    (Setting::GainTol, "--gain-tol"),
    (Setting::Series, "--series"),
    (Setting::Tol, "--tol"),
    (Setting::Hold, "--hold"),
    (Setting::PowerRating, "--power-rating"),
];

/// The settings a refusal advises changing named by their flags; tolerances in percent as the
/// flags take them.
const FLAGS: Naming = Naming {
    name: |s| {
        SETTING_FLAGS
            .iter()
            .find(|(k, _)| *k == s)
            .map_or("", |&(_, flag)| flag)
    },
    percent: true,
};

/// The command-line flag and value of a requirement field.
fn field_error(req: &Requirement, e: RequirementError) -> CliError {
    let (flag, value) = match e {
        RequirementError::Supply => ("--vcc", req.vcc.to_string()),
        RequirementError::Gain => ("--gain", req.gain.to_string()),
        RequirementError::Load => ("--rl", req.rl.map_or("-".into(), |v| v.to_string())),
        RequirementError::Source => ("--rs", req.rs.to_string()),
        RequirementError::CurrentBudget => ("--ic-max", req.ic_max.to_string()),
        RequirementError::Swing => ("--swing", req.swing_pp.to_string()),
        RequirementError::LowCorner => ("--f-low", req.f_low.map_or("-".into(), |v| v.to_string())),
        RequirementError::Temperature => ("--temp", req.temp.to_string()),
        RequirementError::TemperatureRange => (
            "--temp-min/--temp/--temp-max",
            format!("{}/{}/{}", req.temp_min, req.temp, req.temp_max),
        ),
        RequirementError::Tolerance => ("--tol", format!("{}%", req.tol * 100.0)),
        RequirementError::CapacitorTolerance => ("--cap-tol", format!("{}%", req.cap_tol * 100.0)),
        RequirementError::GainTolerance => ("--gain-tol", format!("{}%", req.gain_tol * 100.0)),
        _ => ("requirement", String::new()),
    };
    CliError::field(flag, value, e)
}

/// The power rating to fit: the smallest common size carrying twice the dissipation, W
/// (common practice: run resistors at no more than half their rating).
pub fn rating_for(watts: f64) -> f64 {
    [0.125, 0.25, 0.5, 1.0, 2.0, 5.0]
        .into_iter()
        .find(|&r| r >= 2.0 * watts)
        .unwrap_or(10.0)
}

fn parts_json(s: &Stage) -> serde_json::Value {
    json!({
        "r1": json::num(s.r1.value), "r2": json::num(s.r2.value), "rc": json::num(s.rc.value),
        "re1": json::num(s.re1.value), "re2": json::num(s.re2.value),
        "cin": json::opt(s.cin.map(|p| p.value)), "cout": json::opt(s.cout.map(|p| p.value)),
        "ce": json::opt(s.ce.map(|p| p.value)),
    })
}

impl Cmd {
    fn requirement(&self) -> Result<Requirement, CliError> {
        let mut r = Requirement::new(self.vcc, self.gain);
        r.polarity = if self.pnp {
            Polarity::Pnp
        } else {
            Polarity::Npn
        };
        r.rl = self.rl;
        r.rs = self.rs.unwrap_or(0.0);
        r.ic_max = self.ic_max.unwrap_or(DEFAULT_IC_MAX);
        r.swing_pp = self.swing.unwrap_or(0.0);
        r.f_low = self.f_low;
        r.temp = self.temp.unwrap_or(25.0);
        check_temp("--temp", r.temp)?;
        r.temp_min = self
            .temp_min
            .unwrap_or(r.temp.min(self.temp_max.unwrap_or(r.temp)));
        r.temp_max = self.temp_max.unwrap_or(r.temp.max(r.temp_min));
        check_temp("--temp-min", r.temp_min)?;
        check_temp("--temp-max", r.temp_max)?;
        r.series = self.series;
        r.tol = self.tol.unwrap_or(self.series.tolerance());
        r.cap_series = self.cap_series;
        r.cap_tol = self.cap_tol.unwrap_or(self.cap_series.tolerance());
        r.hold = self.hold;
        r.gain_tol = self.gain_tol.unwrap_or(DEFAULT_GAIN_TOL);
        r.validate().map_err(|e| field_error(&r, e))?;
        Ok(r)
    }

    /// Run the command.
    pub fn run(&self, g: &Global) -> CmdResult {
        let req = self.requirement()?;
        let profile = self.profile.apply(default_profile())?;
        let cands = design(&req, &profile).map_err(|e| match e {
            DesignError::Invalid(f) => field_error(&req, f),
            other => CliError::usage(other.named(FLAGS).to_string()),
        })?;
        let shown: Vec<&Candidate> = cands
            .iter()
            .take(usize::from(self.count).min(MAX_CANDIDATES))
            .collect();
        let cond = Conditions {
            temp_c: req.temp,
            ..Conditions::typical(&profile)
        };
        let extras: Vec<Extra> = shown.iter().map(|c| extra(&req, &profile, c)).collect();
        let mut preds = Vec::new();
        for c in &shown {
            preds.push(
                predict(&c.stage, &profile, cond)
                    .map_err(|e| CliError::usage(format!("design: {e}")))?,
            );
        }
        let inputs = biasjig_core::settings::Inputs {
            r: self.inputs.input_r,
            mode: self.inputs.inputs.unwrap_or_default(),
        };
        let test = biasjig_core::settings::TestSettings {
            inputs,
            ..biasjig_core::settings::TestSettings::DEFAULT
        };
        test.validate()
            .map_err(|e| biasjig::stage_args::settings_error(&test, e))?;
        if let (Some(k), Some(best), Some(rin)) = (
            shown
                .first()
                .and_then(|c| biasjig_core::judge::input_loading(&c.stage, &inputs)),
            shown.first(),
            inputs.r,
        ) {
            if k > biasjig_core::judge::INPUT_LOADING_LIMIT {
                let (r1, r2) = (best.stage.r1.value, best.stage.r2.value);
                eprintln!(
                    "biasjig: warning: the best candidate's R1 ‖ R2 = {} is {:.1} % of the {} \
                     measuring inputs: they pull VB by about that fraction (modelled in the \
                     windows, but keep the inputs at least 100 × R1 ‖ R2, or buffered)",
                    eng(r1 * r2 / (r1 + r2), "Ω"),
                    100.0 * k,
                    eng(rin, "Ω")
                );
            }
        }
        if let (Some(path), Some(best), Some(p), Some(x)) =
            (&self.output, shown.first(), preds.first(), extras.first())
        {
            let mut doc = self.doc(&req, &profile, best, p, &x.held);
            doc.test = test;
            designfile::save(path, &doc, self.force)?;
            if !g.json {
                eprintln!("biasjig: wrote the best candidate to {}", path.display());
            }
        }
        if g.json {
            let list: Vec<_> = shown
                .iter()
                .zip(&preds)
                .zip(&extras)
                .map(|((c, p), x)| {
                    let m = c.margins;
                    let h = &x.held;
                    json!({
                        "parts": parts_json(&c.stage),
                        "held": {
                            "gain_min": json::num(h.gain_min), "gain_max": json::num(h.gain_max),
                            "swing_pp_min": json::num(h.swing_pp_min), "ic_max": json::num(h.ic_max),
                            "ic_min": json::num(h.ic_min), "active": h.active,
                            "f_low_max": json::num(h.f_low_max), "corners": h.corners,
                            "holds": h.binding(&req).is_none(),
                        },
                        "distortion": x.distortion.map(|d| json!({
                            "hd2": json::num(d.hd2), "swing_pp": json::num(d.swing_pp),
                            "clips": d.clips, "flagged": d.clips || d.hd2 > HD2_LIMIT,
                        })),
                        "warnings": x.warnings.iter().map(|w| w.to_string()).collect::<Vec<_>>(),
                        "predicted": json::prediction(p),
                        "score": json::num(c.score),
                        "margins": {
                            "gain_error": json::num(m.gain_error),
                            "swing_ratio": json::num(m.swing_ratio),
                            "ic_ratio": json::num(m.ic_ratio),
                            "drift_beta": json::num(m.drift_beta),
                            "drift_temp": json::num(m.drift_temp),
                            "f_low_ratio": json::num(m.f_low_ratio),
                            "power_ratio": json::num(m.power_ratio),
                        },
                        "ic_range": {"min": json::num(c.ic_range.0), "max": json::num(c.ic_range.1)},
                        "series": {"resistors": req.series.name(), "capacitors": req.cap_series.name()},
                        "hash": designfile::hash(&self.filed(&c.stage), &profile),
                    })
                })
                .collect();
            json::print(&json!({
                "candidates": list,
                "hold": req.hold.name(),
                "gain_tol": json::num(req.gain_tol),
            }));
        } else {
            out!("{}", self.report(&req, &shown, &preds, &extras));
        }
        Ok(EXIT_OK)
    }

    /// The stage as the design file states it: with the supply tolerance.
    fn filed(&self, stage: &biasjig_core::stage::Stage) -> biasjig_core::stage::Stage {
        let mut s = *stage;
        s.vcc.tol = self
            .vcc_tol
            .unwrap_or(biasjig_core::settings::DEFAULT_SUPPLY_TOL);
        s
    }

    fn doc(
        &self,
        req: &Requirement,
        profile: &biasjig_core::device::Profile,
        c: &Candidate,
        p: &Prediction,
        h: &Held,
    ) -> DesignDoc {
        let rs = Some(req.series);
        let cs = Some(req.cap_series);
        let stage = self.filed(&c.stage);
        let hash = designfile::hash(&stage, profile);
        let id = self.id.clone().unwrap_or_else(|| {
            format!(
                "{}V-gain{}-{}",
                req.vcc,
                req.gain,
                hash.get(..6).unwrap_or(&hash)
            )
        });
        DesignDoc {
            stage,
            profile: *profile,
            temp_c: req.temp,
            temp_min: req.temp_min,
            temp_max: req.temp_max,
            id,
            hash,
            requirement: Some(*req),
            series: [rs, rs, rs, rs, rs, cs, cs, cs],
            predicted: Some(Predicted {
                ic: p.op.ic,
                vb: p.op.vb,
                ve: p.op.ve,
                vc: p.op.vc,
                vce: p.op.vce,
                gain: c.gain,
                swing_pp: c.swing_pp,
                f_low: c.f_low,
                supply_current: c.supply_current,
                transistor_power: c.transistor_power,
            }),
            held: Some(designfile::HeldFigures {
                gain_min: h.gain_min,
                gain_max: h.gain_max,
                swing_pp_min: h.swing_pp_min,
                ic_max: h.ic_max,
            }),
            test: biasjig_core::settings::TestSettings::DEFAULT,
            digest: String::new(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::{Args, Command};

    /// A refusal's advice names each setting by a flag that `design` has.
    #[test]
    fn advice_names_flags_that_design_has() {
        let cmd = Cmd::augment_args(Command::new("design"));
        for (setting, flag) in SETTING_FLAGS {
            let long = flag.strip_prefix("--");
            assert!(
                cmd.get_arguments().any(|a| a.get_long() == long),
                "{setting:?}: {flag}"
            );
            assert_eq!((FLAGS.name)(setting), flag);
        }
    }
}
