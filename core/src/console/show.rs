//! The commands that show the session's state: `stage`, `profile`, `parts`, `limits`, `meter`
//! and `readings`.
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

use core::fmt::Write as _;

use embedded_io::Write;

use super::format::{cap_name, lower, polarity_name, Val};
use super::jig::{Clock, Jig, Store};
use super::reply::{Outcome, Reply, Text};
use super::{Console, Source};
#[cfg(feature = "spread")]
use crate::series::{colour_bands, BandCount};
use crate::stage::{Capacitor, Readings, Resistor};
#[cfg(feature = "spread")]
use crate::units::{capacitor_code, resistor_code};

/// The key of a part's value (`r1`, `cin`) and of its tolerance (`r1_tol`).
fn part_keys(name: &str) -> (Text, Text) {
    let key = lower(name);
    let mut tol = key.clone();
    let _ = tol.write_str("_tol");
    (key, tol)
}

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    #[inline(never)]
    pub(super) fn show_stage<W: Write>(&self, r: &mut Reply<'_, W>) {
        let st = &self.settings;
        let s = &st.stage;
        let pol = polarity_name(s.polarity);
        r.fields(
            &[
                ("polarity", Val::Upper(pol)),
                ("vcc", Val::Si(s.vcc.value, "V")),
                ("vcc_tol", Val::Pct(s.vcc.tol)),
                ("temp", Val::Num(st.temp_c)),
                ("temp_min", Val::Num(st.temp_min_c)),
                ("temp_max", Val::Num(st.temp_max_c)),
            ],
            "{0}  VCC {1} ±{2}  ambient {3} °C (range {4} to {5} °C)",
        );
        for which in Resistor::ALL {
            let p = s.part(which);
            let (key, tol) = part_keys(which.name());
            r.fields(
                &[
                    ("", Val::Label(&which.name())),
                    (key.as_str(), Val::Si(p.value, "Ω")),
                    (tol.as_str(), Val::Pct(p.tol)),
                ],
                "{0:4} {1} ±{2}",
            );
        }
        r.fields(
            &[("rl", Val::OptSi(s.rl, "Ω")), ("rs", Val::Si(s.rs, "Ω"))],
            "RL   {0}\nRS   {1}",
        );
        for (c, p) in [
            (Capacitor::Cin, s.cin),
            (Capacitor::Cout, s.cout),
            (Capacitor::Ce, s.ce),
        ] {
            let (key, tol) = part_keys(cap_name(c));
            let (value, t, human) = match p {
                Some(p) => (Val::Si(p.value, "F"), Val::Pct(p.tol), "{0:4} {1} ±{2}"),
                None => (Val::Word("none"), Val::Word("none"), "{0:4} ideal"),
            };
            r.fields(
                &[
                    ("", Val::Label(&cap_name(c))),
                    (key.as_str(), value),
                    (tol.as_str(), t),
                ],
                human,
            );
        }
        let kept = st.design.as_ref().map(|n| n.as_str());
        r.fields(
            &[
                ("locked", Val::Flag(self.is_locked(), "locked", "unlocked")),
                ("hash", Val::Hash(self.design_hash())),
                (
                    "design",
                    Val::Words(kept.unwrap_or("none"), kept.unwrap_or("-")),
                ),
            ],
            "{0}  design hash {1}  kept as {2}",
        );
    }

    #[inline(never)]
    pub(super) fn show_profile<W: Write>(&self, r: &mut Reply<'_, W>) {
        let p = &self.settings.profile;
        r.fields(
            &[
                ("beta_min", Val::Num(p.beta_min)),
                ("beta_typ", Val::Num(p.beta_typ)),
                ("beta_max", Val::Num(p.beta_max)),
                ("beta_rev", Val::Num(p.beta_rev)),
                ("beta_tc", Val::Pct(p.beta_tc)),
                ("", Val::Break),
                ("is", Val::Si(p.is_25, "A")),
                ("vbe", Val::Si(p.vbe_1ma(), "V")),
                ("early", Val::OptSi(p.early, "V")),
                ("vce_sat", Val::Si(p.vce_sat, "V")),
                ("power_rating", Val::Si(p.power_25, "W")),
                ("tj_max", Val::Num(p.tj_max)),
            ],
            "hFE {0} / {1} / {2} (min/typ/max at 25 °C), reverse {3}, tc {4} per °C\n\
             IS {6} (VBE {7} at 1 mA), Early {8}\n\
             VCE(sat) {9}, rating {10} at 25 °C, to zero at {11} °C",
        );
    }

    #[cfg(feature = "spread")]
    #[inline(never)]
    pub(super) fn show_parts<W: Write>(&self, count: BandCount, r: &mut Reply<'_, W>) {
        let s = &self.settings.stage;
        for which in Resistor::ALL {
            let p = s.part(which);
            // The bands: comma-separated for a program, spaced for a person.
            let (mut listed, mut spaced) = (Text::default(), Text::default());
            let mut why = Text::default();
            match colour_bands(p.value, p.tol, count) {
                Ok(b) => {
                    for (i, c) in b.iter().enumerate() {
                        let (comma, space) = if i == 0 { ("", "") } else { (",", " ") };
                        let _ = write!(listed, "{comma}{}", c.name());
                        let _ = write!(spaced, "{space}{}", c.name());
                    }
                }
                Err(e) => {
                    let _ = listed.write_str("none");
                    let _ = spaced.write_str("none");
                    let _ = write!(why, "{e}");
                }
            }
            let code = resistor_code(p.value);
            r.fields(
                &[
                    ("part", Val::Word(which.name())),
                    ("value", Val::Num(p.value)),
                    ("tol", Val::Pct(p.tol)),
                    ("code", Val::Word(code.as_str())),
                    ("bands", Val::Words(listed.as_str(), spaced.as_str())),
                    ("", Val::Label(&why.as_str())),
                ],
                if why.as_str().is_empty() {
                    "{0:4} {3:6} ±{2:6} {4}"
                } else {
                    "{0:4} {3:6} ±{2:6} no bands: {5}"
                },
            );
        }
        for (c, p) in [
            (Capacitor::Cin, s.cin),
            (Capacitor::Cout, s.cout),
            (Capacitor::Ce, s.ce),
        ] {
            match p {
                Some(p) => {
                    let code = capacitor_code(p.value);
                    r.fields(
                        &[
                            ("part", Val::Word(cap_name(c))),
                            ("value", Val::Num(p.value)),
                            ("tol", Val::Pct(p.tol)),
                            ("code", Val::Word(code.as_str())),
                        ],
                        "{0:4} {3:6} ±{2}",
                    );
                }
                None => r.fields(
                    &[
                        ("part", Val::Word(cap_name(c))),
                        ("value", Val::Word("none")),
                    ],
                    "{0:4} ideal",
                ),
            }
        }
    }

    #[inline(never)]
    pub(super) fn show_limits<W: Write>(&self, r: &mut Reply<'_, W>) -> Outcome {
        let st = &self.settings;
        let ts = st.test_settings();
        let w = crate::judge::windows(&st.stage, &st.profile, &ts, st.stage.vcc.value)
            .map_err(super::judge::judge_fail)?;
        let l = w.limits;
        let rows = [
            ("vb", l.vb, "V"),
            ("ve", l.ve, "V"),
            ("vc", l.vc, "V"),
            ("vce", l.vce, "V"),
            ("vbe", l.vbe, "V"),
            ("ic", l.ic, "A"),
        ];
        for (name, w, unit) in rows {
            r.fields(
                &[
                    ("node", Val::Upper(name)),
                    ("low", Val::Si(w.low, unit)),
                    ("high", Val::Si(w.high, unit)),
                ],
                "{0:4} {1} to {2}",
            );
        }
        r.fields(
            &[
                ("node", Val::Word("supply")),
                ("low", Val::Si(w.supply.low, "V")),
                ("high", Val::Si(w.supply.high, "V")),
                ("", Val::Break),
                ("vcc", Val::Si(l.vcc, "V")),
            ],
            "VCC  {1} to {2} (supply window: outside it a board is not judged)\nat VCC {4}",
        );
        r.fields(
            &[
                ("", Val::Word("ambient")),
                ("min", Val::Num(ts.temp_min_c)),
                ("max", Val::Num(ts.temp_max_c)),
                ("input_r", Val::OptSi(ts.inputs.r, "Ω")),
                ("inputs", Val::Word(ts.inputs.mode.name())),
            ],
            if ts.inputs.r.is_some() {
                "ambient {1} to {2} °C; inputs {3} to ground, {4}"
            } else {
                "ambient {1} to {2} °C; an ideal meter (no inputs modelled)"
            },
        );
        Ok(None)
    }

    #[inline(never)]
    pub(super) fn show_meter<W: Write>(&self, r: &mut Reply<'_, W>) {
        let m = &self.settings.meter;
        let i = &self.settings.inputs;
        r.fields(
            &[
                ("gain", Val::Pct(m.gain_error)),
                ("offset", Val::Si(m.offset, "V")),
                ("divider", Val::Pct(m.divider_tol)),
                ("input_r", Val::OptSi(i.r, "Ω")),
                ("inputs", Val::Word(i.mode.name())),
            ],
            if i.r.is_some() {
                "meter ±{0} of reading ±{1}, jig divider ±{2}\n\
                 measuring inputs {3} from each node to ground, {4}"
            } else {
                "meter ±{0} of reading ±{1}, jig divider ±{2}\n\
                 measuring inputs: ideal (none modelled)"
            },
        );
    }
}

#[inline(never)]
pub(super) fn show_readings<W: Write>(rd: &Readings, src: Source, r: &mut Reply<'_, W>) {
    let src = match src {
        Source::Measured => "measured",
        Source::Typed => "typed",
    };
    r.fields(
        &[
            ("vcc", Val::Si(rd.vcc, "V")),
            ("vb", Val::Si(rd.vb, "V")),
            ("ve", Val::Si(rd.ve, "V")),
            ("vc", Val::Si(rd.vc, "V")),
            ("source", Val::Word(src)),
        ],
        "VCC {0}  VB {1}  VE {2}  VC {3}  ({4})",
    );
}
