//! The commands that analyse the stage: `predict` (operating point, estimate, midband, low
//! corner, power) and `spread` (worst case and Monte Carlo).
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

#[cfg(feature = "analysis")]
use core::fmt;

use embedded_io::Write;

#[cfg(feature = "analysis")]
use super::format::lower;
use super::format::Val;
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
        r.fields(
            &[
                ("vb", Val::Si(op.vb, "V")),
                ("ve", Val::Si(op.ve, "V")),
                ("vc", Val::Si(op.vc, "V")),
                ("vbe", Val::Si(op.vbe, "V")),
                ("vce", Val::Si(op.vce, "V")),
                ("", Val::Break),
                ("ic", Val::Si(op.ic, "A")),
                ("ib", Val::Si(op.ib, "A")),
                ("ie", Val::Si(op.ie, "A")),
                ("region", Val::Word(op.region.name())),
                ("", Val::Break),
                ("est_vb", Val::Si(e.vb, "V")),
                ("est_ve", Val::Si(e.ve, "V")),
                ("est_vc", Val::Si(e.vc, "V")),
                ("est_ic", Val::Si(e.ic, "A")),
                ("est_vce", Val::Si(e.vce, "V")),
            ],
            "Q-point  VB {0}  VE {1}  VC {2}  ({9})\n         VBE {3}  VCE {4}  IC {6}  IB {7}\n\
             estimate VB {11}  VE {12}  VC {13}  IC {14}",
        );
        let f_low = Val::OptSi(p.low.f_low, "Hz");
        match &p.midband {
            Some(m) => r.fields(
                &[
                    ("gain", Val::Fixed(m.gain, 3)),
                    ("gain_stage", Val::Fixed(m.gain_stage, 3)),
                    ("zin", Val::Si(m.zin, "Ω")),
                    ("zout", Val::Si(m.zout, "Ω")),
                    ("", Val::Break),
                    ("swing_pp", Val::Si(m.swing_pp, "V")),
                    ("clips", Val::Word(m.clips.name())),
                    ("f_low", f_low),
                ],
                "gain {0} (stage {1})  zin {2}  zout {3}\n\
                 swing {5} peak-to-peak, {6} clips first\n\
                 low corner {7}",
            ),
            None => r.fields(
                &[("gain", Val::Word("none")), ("f_low", f_low)],
                "low corner {1}",
            ),
        }
        let none = list.as_str().is_empty();
        r.fields(
            &[
                ("transistor", Val::Si(p.power.transistor, "W")),
                ("rating", Val::Si(p.power.rating, "W")),
                ("supply_current", Val::Si(p.power.supply_current, "A")),
                ("", Val::Break),
                (
                    "warnings",
                    Val::Words(if none { "none" } else { list.as_str() }, list.as_str()),
                ),
            ],
            if none {
                "power Q {0} of {1} rated, supply current {2}"
            } else {
                "power Q {0} of {1} rated, supply current {2}\nwarnings: {4}"
            },
        );
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
            let u = node.unit();
            let worst = [
                ("worst", Val::Words(node.name(), node.label())),
                ("min", Val::Si(w.min, u)),
                ("max", Val::Si(w.max, u)),
            ];
            match s {
                Some(s) => {
                    let [a, b, c] = worst;
                    r.fields(
                        &[
                            a,
                            b,
                            c,
                            ("", Val::Break),
                            ("mc", Val::Word(node.name())),
                            ("mean", Val::Si(s.mean, u)),
                            ("std", Val::Si(s.std(), u)),
                            ("min", Val::Si(s.range.min, u)),
                            ("max", Val::Si(s.range.max, u)),
                        ],
                        "{0:6} worst {1} to {2}   Monte Carlo mean {5}, std {6}",
                    )
                }
                None => r.fields(&worst, "{0:6} worst {1} to {2}"),
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
        r.fields(
            &[
                ("runs", Val::Shown(&mc.runs)),
                ("failed", Val::Shown(&mc.failed)),
                ("active", Val::Shown(&mc.active)),
                ("seed", Val::Shown(&seed)),
                ("solves", Val::Shown(&wc.solves)),
            ],
            "{0} runs (seed {3}): {1} without an operating point, {2} active; worst case from {4} \
             solves",
        );
        Ok(None)
    }
}
