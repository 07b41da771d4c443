//! The commands that analyse the stage: `predict` (operating point, estimate, midband, low
//! corner, power) and `spread` (worst case and Monte Carlo).
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

#[cfg(feature = "analysis")]
use core::fmt;

use embedded_io::Write;

use super::format::Num;
#[cfg(feature = "analysis")]
use super::format::{lower, Human, Opt};
use super::jig::{Clock, Jig, Store};
use super::reply::{Fail, Outcome, Reply, Text};
use super::{Code, Console};
#[cfg(feature = "analysis")]
use crate::predict::predict;
#[cfg(feature = "analysis")]
use crate::solve::Conditions;
#[cfg(feature = "monte-carlo")]
use crate::spread::McSettings;
#[cfg(feature = "spread")]
use crate::spread::{self, Method, SpreadError};
#[cfg(feature = "analysis")]
use crate::stage::Resistor;
use crate::units::Eng;
#[cfg(feature = "analysis")]
use crate::units::Fixed;

#[cfg(feature = "spread")]
fn spread_fail(what: &str, e: SpreadError) -> Fail {
    let code = match e {
        SpreadError::Solve(_) => Code::Solve,
        _ => Code::Range,
    };
    Fail::new(code, format_args!("{what}: {e}"))
}

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    #[cfg(feature = "analysis")]
    #[inline(never)]
    pub(super) fn predict<W: Write>(&self, r: &mut Reply<'_, W>) -> Outcome {
        let st = &self.settings;
        let cond = Conditions {
            temp_c: st.temp_c,
            ..Conditions::typical(&st.profile)
        };
        let p = predict(&st.stage, &st.profile, cond)
            .map_err(|e| Fail::new(Code::Solve, format_args!("{e}")))?;
        let op = &p.op;
        let e = &p.estimate;
        let w = &p.warnings;
        let warnings: [(bool, &str); 6] = [
            (w.divider_not_stiff, "divider_not_stiff"),
            (w.saturated, "saturated"),
            (w.cut_off, "cut_off"),
            (w.over_rating, "over_rating"),
            (w.no_emitter_resistor, "no_emitter_resistor"),
            (w.q_point_off_centre, "q_point_off_centre"),
        ];
        let mut list = Text::default();
        for (name, _) in warnings.iter().filter(|(on, _)| *on).map(|(_, n)| (n, ())) {
            let sep = if list.as_str().is_empty() { "" } else { "," };
            let _ = fmt::Write::write_fmt(&mut list, format_args!("{sep}{name}"));
        }
        for (hot, which) in w.resistor_hot.iter().zip(Resistor::ALL) {
            if *hot {
                let sep = if list.as_str().is_empty() { "" } else { "," };
                let _ = fmt::Write::write_fmt(
                    &mut list,
                    format_args!("{sep}hot_{}", lower(which.name()).as_str()),
                );
            }
        }
        if r.machine() {
            r.data(format_args!(
                "vb={} ve={} vc={} vbe={} vce={}",
                Num(op.vb),
                Num(op.ve),
                Num(op.vc),
                Num(op.vbe),
                Num(op.vce),
            ));
            r.data(format_args!(
                "ic={} ib={} ie={} region={}",
                Num(op.ic),
                Num(op.ib),
                Num(op.ie),
                op.region.name()
            ));
            r.data(format_args!(
                "est_vb={} est_ve={} est_vc={} est_ic={} est_vce={}",
                Num(e.vb),
                Num(e.ve),
                Num(e.vc),
                Num(e.ic),
                Num(e.vce)
            ));
            match &p.midband {
                Some(m) => {
                    r.data(format_args!(
                        "gain={} gain_stage={} zin={} zout={}",
                        Num(m.gain),
                        Num(m.gain_stage),
                        Num(m.zin),
                        Num(m.zout),
                    ));
                    r.data(format_args!(
                        "swing_pp={} clips={} f_low={}",
                        Num(m.swing_pp),
                        m.clips.name(),
                        Opt(p.low.f_low)
                    ));
                }
                None => r.data(format_args!("gain=none f_low={}", Opt(p.low.f_low))),
            }
            r.data(format_args!(
                "transistor={} rating={} supply_current={}",
                Num(p.power.transistor),
                Num(p.power.rating),
                Num(p.power.supply_current)
            ));
            r.data(format_args!(
                "warnings={}",
                if list.as_str().is_empty() {
                    "none"
                } else {
                    list.as_str()
                }
            ));
        } else {
            r.data(format_args!(
                "Q-point  VB {}  VE {}  VC {}  ({})",
                Eng::new(op.vb, "V"),
                Eng::new(op.ve, "V"),
                Eng::new(op.vc, "V"),
                op.region.name()
            ));
            r.data(format_args!(
                "         VBE {}  VCE {}  IC {}  IB {}",
                Eng::new(op.vbe, "V"),
                Eng::new(op.vce, "V"),
                Eng::new(op.ic, "A"),
                Eng::new(op.ib, "A")
            ));
            r.data(format_args!(
                "estimate VB {}  VE {}  VC {}  IC {}",
                Eng::new(e.vb, "V"),
                Eng::new(e.ve, "V"),
                Eng::new(e.vc, "V"),
                Eng::new(e.ic, "A")
            ));
            if let Some(m) = &p.midband {
                r.data(format_args!(
                    "gain {} (stage {})  zin {}  zout {}",
                    Fixed(m.gain, 3),
                    Fixed(m.gain_stage, 3),
                    Eng::new(m.zin, "Ω"),
                    Eng::new(m.zout, "Ω")
                ));
                r.data(format_args!(
                    "swing {} peak-to-peak, {} clips first",
                    Eng::new(m.swing_pp, "V"),
                    m.clips.name()
                ));
            }
            r.data(format_args!("low corner {}", Human(p.low.f_low, "Hz")));
            r.data(format_args!(
                "power Q {} of {} rated, supply current {}",
                Eng::new(p.power.transistor, "W"),
                Eng::new(p.power.rating, "W"),
                Eng::new(p.power.supply_current, "A")
            ));
            if !list.as_str().is_empty() {
                r.data(format_args!("warnings: {}", list.as_str()));
            }
        }
        Ok(None)
    }

    /// `spread RUNS SEED`: the worst case over the corners and a seeded Monte Carlo summary.
    #[inline(never)]
    #[cfg(feature = "spread")]
    pub(super) fn spread<W: Write>(&self, runs: u32, seed: u64, r: &mut Reply<'_, W>) -> Outcome {
        let st = &self.settings;
        let var = st.variation();
        let wc = spread::worst_case(&st.stage, &st.profile, &var, Method::default())
            .map_err(|e| spread_fail("spread", e))?;
        #[cfg(feature = "monte-carlo")]
        let mc = {
            let settings = McSettings {
                runs,
                seed,
                signal: true,
                requirement: spread::Requirement::default(),
            };
            let mc = spread::monte_carlo(&st.stage, &st.profile, &var, &wc, &settings, |_, _| {})
                .map_err(|e| spread_fail("spread", e))?;
            Some(mc)
        };
        #[cfg(not(feature = "monte-carlo"))]
        let mc: Option<spread::MonteCarlo> = None;
        for node in spread::Node::ALL {
            let w = wc.nodes.get(node);
            let s = mc.as_ref().map(|mc| mc.nodes.get(node));
            if r.machine() {
                r.data(format_args!(
                    "worst={} min={} max={}",
                    node.name(),
                    Num(w.min),
                    Num(w.max)
                ));
                if let Some(s) = s {
                    r.data(format_args!(
                        "mc={} mean={} std={} min={} max={}",
                        node.name(),
                        Num(s.mean),
                        Num(s.std()),
                        Num(s.range.min),
                        Num(s.range.max)
                    ));
                }
            } else {
                let u = node.unit();
                let (lo, hi) = (Eng::new(w.min, u), Eng::new(w.max, u));
                match s {
                    Some(s) => r.data(format_args!(
                        "{:<6} worst {lo} to {hi}   Monte Carlo mean {}, std {}",
                        node.label(),
                        Eng::new(s.mean, u),
                        Eng::new(s.std(), u)
                    )),
                    None => r.data(format_args!("{:<6} worst {lo} to {hi}", node.label())),
                }
            }
        }
        let Some(mc) = mc else {
            let _ = (runs, seed);
            return Ok(Some(Text::of(format_args!(
                "worst case from {} solves; no Monte Carlo on this unit (left out to fit its \
                 flash): run biasjig spread on a PC",
                wc.solves
            ))));
        };
        if r.machine() {
            r.data(format_args!(
                "runs={} failed={} active={} seed={seed} solves={}",
                mc.runs, mc.failed, mc.active, wc.solves
            ));
        } else {
            r.data(format_args!(
                "{} runs (seed {seed}): {} without an operating point, {} active; worst case \
                 from {} solves",
                mc.runs, mc.failed, mc.active, wc.solves
            ));
        }
        Ok(None)
    }
}
