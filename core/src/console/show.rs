//! The commands that show the session's state: `stage`, `profile`, `parts`, `limits`, `meter`
//! and `readings`.
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

#[cfg(feature = "spread")]
use core::fmt;
use core::fmt::Write as _;

use embedded_io::Write;

use super::format::{cap_name, lower, Human, Num, Opt, Pct, Upper};
use super::jig::{Clock, Jig, Store};
use super::reply::{Outcome, Reply, Text};
use super::{Console, Source};
#[cfg(feature = "spread")]
use crate::series::{colour_bands, BandCount};
use crate::stage::{Capacitor, Polarity, Readings, Resistor};
use crate::units::Eng;
#[cfg(feature = "spread")]
use crate::units::{capacitor_code, resistor_code};

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    #[inline(never)]
    pub(super) fn show_stage<W: Write>(&self, r: &mut Reply<'_, W>) {
        let s = &self.settings.stage;
        let pol = match s.polarity {
            Polarity::Npn => "npn",
            Polarity::Pnp => "pnp",
        };
        let caps = [
            (Capacitor::Cin, s.cin),
            (Capacitor::Cout, s.cout),
            (Capacitor::Ce, s.ce),
        ];
        if r.machine() {
            r.data(format_args!(
                "polarity={pol} vcc={} vcc_tol={} temp={} temp_min={} temp_max={}",
                Num(s.vcc.value),
                Num(s.vcc.tol),
                Num(self.settings.temp_c),
                Num(self.settings.temp_min_c),
                Num(self.settings.temp_max_c)
            ));
            for which in Resistor::ALL {
                let p = s.part(which);
                let n = lower(which.name());
                r.data(format_args!(
                    "{0}={1} {0}_tol={2}",
                    n.as_str(),
                    Num(p.value),
                    Num(p.tol)
                ));
            }
            r.data(format_args!("rl={} rs={}", Opt(s.rl), Num(s.rs)));
            for (c, p) in caps {
                let n = lower(cap_name(c));
                r.data(format_args!(
                    "{0}={1} {0}_tol={2}",
                    n.as_str(),
                    Opt(p.map(|p| p.value)),
                    Opt(p.map(|p| p.tol))
                ));
            }
            r.data(format_args!(
                "locked={} hash={:016x} design={}",
                u8::from(self.is_locked()),
                self.design_hash(),
                self.settings.design.as_ref().map_or("none", |n| n.as_str())
            ));
        } else {
            r.data(format_args!(
                "{}  VCC {} ±{}  ambient {} °C (range {} to {} °C)",
                if s.polarity == Polarity::Npn {
                    "NPN"
                } else {
                    "PNP"
                },
                Eng::new(s.vcc.value, "V"),
                Pct(s.vcc.tol),
                Num(self.settings.temp_c),
                Num(self.settings.temp_min_c),
                Num(self.settings.temp_max_c)
            ));
            for which in Resistor::ALL {
                let p = s.part(which);
                r.data(format_args!(
                    "{:<4} {} ±{}",
                    which.name(),
                    Eng::new(p.value, "Ω"),
                    Pct(p.tol)
                ));
            }
            r.data(format_args!("RL   {}", Human(s.rl, "Ω")));
            r.data(format_args!("RS   {}", Eng::new(s.rs, "Ω")));
            for (c, p) in caps {
                match p {
                    Some(p) => r.data(format_args!(
                        "{:<4} {} ±{}",
                        cap_name(c),
                        Eng::new(p.value, "F"),
                        Pct(p.tol)
                    )),
                    None => r.data(format_args!("{:<4} ideal", cap_name(c))),
                }
            }
            r.data(format_args!(
                "{}  design hash {:016x}  kept as {}",
                if self.is_locked() {
                    "locked"
                } else {
                    "unlocked"
                },
                self.design_hash(),
                self.settings.design.as_ref().map_or("-", |n| n.as_str())
            ));
        }
    }

    #[inline(never)]
    pub(super) fn show_profile<W: Write>(&self, r: &mut Reply<'_, W>) {
        let p = &self.settings.profile;
        if r.machine() {
            r.data(format_args!(
                "beta_min={} beta_typ={} beta_max={} beta_rev={} beta_tc={}",
                Num(p.beta_min),
                Num(p.beta_typ),
                Num(p.beta_max),
                Num(p.beta_rev),
                Num(p.beta_tc)
            ));
            r.data(format_args!(
                "is={} vbe={} early={} vce_sat={} power_rating={} tj_max={}",
                Num(p.is_25),
                Num(p.vbe_1ma()),
                Opt(p.early),
                Num(p.vce_sat),
                Num(p.power_25),
                Num(p.tj_max)
            ));
        } else {
            r.data(format_args!(
                "hFE {} / {} / {} (min/typ/max at 25 °C), reverse {}, tc {} per °C",
                Num(p.beta_min),
                Num(p.beta_typ),
                Num(p.beta_max),
                Num(p.beta_rev),
                Pct(p.beta_tc)
            ));
            r.data(format_args!(
                "IS {} (VBE {} at 1 mA), Early {}",
                Eng::new(p.is_25, "A"),
                Eng::new(p.vbe_1ma(), "V"),
                Human(p.early, "V")
            ));
            r.data(format_args!(
                "VCE(sat) {}, rating {} at 25 °C, to zero at {} °C",
                Eng::new(p.vce_sat, "V"),
                Eng::new(p.power_25, "W"),
                Num(p.tj_max)
            ));
        }
    }

    #[cfg(feature = "spread")]
    #[inline(never)]
    pub(super) fn show_parts<W: Write>(&self, count: BandCount, r: &mut Reply<'_, W>) {
        let s = &self.settings.stage;
        for which in Resistor::ALL {
            let p = s.part(which);
            let mut bands = Text::default();
            let why = match colour_bands(p.value, p.tol, count) {
                Ok(b) => {
                    let sep = if r.machine() { "," } else { " " };
                    for (i, c) in b.iter().enumerate() {
                        let _ = fmt::Write::write_fmt(
                            &mut bands,
                            format_args!("{}{}", if i == 0 { "" } else { sep }, c.name()),
                        );
                    }
                    None
                }
                Err(e) => {
                    let _ = fmt::Write::write_str(&mut bands, "none");
                    Some(e)
                }
            };
            if r.machine() {
                r.data(format_args!(
                    "part={} value={} tol={} code={} bands={}",
                    which.name(),
                    Num(p.value),
                    Num(p.tol),
                    resistor_code(p.value),
                    bands.as_str()
                ));
            } else {
                match why {
                    None => r.data(format_args!(
                        "{:<4} {:<6} ±{:<6} {}",
                        which.name(),
                        resistor_code(p.value),
                        Pct(p.tol),
                        bands.as_str()
                    )),
                    Some(e) => r.data(format_args!(
                        "{:<4} {:<6} ±{:<6} no bands: {e}",
                        which.name(),
                        resistor_code(p.value),
                        Pct(p.tol)
                    )),
                }
            }
        }
        for (c, p) in [
            (Capacitor::Cin, s.cin),
            (Capacitor::Cout, s.cout),
            (Capacitor::Ce, s.ce),
        ] {
            match (p, r.machine()) {
                (Some(p), true) => r.data(format_args!(
                    "part={} value={} tol={} code={}",
                    cap_name(c),
                    Num(p.value),
                    Num(p.tol),
                    capacitor_code(p.value)
                )),
                (None, true) => r.data(format_args!("part={} value=none", cap_name(c))),
                (Some(p), false) => r.data(format_args!(
                    "{:<4} {:<6} ±{}",
                    cap_name(c),
                    capacitor_code(p.value),
                    Pct(p.tol)
                )),
                (None, false) => r.data(format_args!("{:<4} ideal", cap_name(c))),
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
            if r.machine() {
                r.data(format_args!(
                    "node={name} low={} high={}",
                    Num(w.low),
                    Num(w.high)
                ));
            } else {
                r.data(format_args!(
                    "{:<4} {} to {}",
                    Upper(name),
                    Eng::new(w.low, unit),
                    Eng::new(w.high, unit)
                ));
            }
        }
        if r.machine() {
            r.data(format_args!(
                "node=supply low={} high={}",
                Num(w.supply.low),
                Num(w.supply.high)
            ));
            r.data(format_args!("vcc={}", Num(l.vcc)));
            r.data(format_args!(
                "ambient min={} max={} input_r={} inputs={}",
                Num(ts.temp_min_c),
                Num(ts.temp_max_c),
                Opt(ts.inputs.r),
                ts.inputs.mode.name()
            ));
        } else {
            r.data(format_args!(
                "VCC  {} to {} (supply window: outside it a board is not judged)",
                Eng::new(w.supply.low, "V"),
                Eng::new(w.supply.high, "V")
            ));
            r.data(format_args!("at VCC {}", Eng::new(l.vcc, "V")));
            let mut inputs = Text::default();
            match ts.inputs.r {
                Some(rin) => {
                    let _ = write!(
                        inputs,
                        "inputs {} to ground, {}",
                        Eng::new(rin, "Ω"),
                        ts.inputs.mode.name()
                    );
                }
                None => {
                    let _ = inputs.write_str("an ideal meter (no inputs modelled)");
                }
            }
            r.data(format_args!(
                "ambient {} to {} °C; {}",
                Num(ts.temp_min_c),
                Num(ts.temp_max_c),
                inputs.as_str()
            ));
        }
        Ok(None)
    }

    #[inline(never)]
    pub(super) fn show_meter<W: Write>(&self, r: &mut Reply<'_, W>) {
        let m = &self.settings.meter;
        let i = &self.settings.inputs;
        if r.machine() {
            r.data(format_args!(
                "gain={} offset={} divider={} input_r={} inputs={}",
                Num(m.gain_error),
                Num(m.offset),
                Num(m.divider_tol),
                Opt(i.r),
                i.mode.name()
            ));
        } else {
            r.data(format_args!(
                "meter ±{} of reading ±{}, jig divider ±{}",
                Pct(m.gain_error),
                Eng::new(m.offset, "V"),
                Pct(m.divider_tol)
            ));
            match i.r {
                Some(rin) => r.data(format_args!(
                    "measuring inputs {} from each node to ground, {}",
                    Eng::new(rin, "Ω"),
                    i.mode.name()
                )),
                None => r.data(format_args!("measuring inputs: ideal (none modelled)")),
            }
        }
    }
}

#[inline(never)]
pub(super) fn show_readings<W: Write>(rd: &Readings, src: Source, r: &mut Reply<'_, W>) {
    let src = match src {
        Source::Measured => "measured",
        Source::Typed => "typed",
    };
    if r.machine() {
        r.data(format_args!(
            "vcc={} vb={} ve={} vc={} source={src}",
            Num(rd.vcc),
            Num(rd.vb),
            Num(rd.ve),
            Num(rd.vc)
        ));
    } else {
        r.data(format_args!(
            "VCC {}  VB {}  VE {}  VC {}  ({src})",
            Eng::new(rd.vcc, "V"),
            Eng::new(rd.vb, "V"),
            Eng::new(rd.ve, "V"),
            Eng::new(rd.vc, "V")
        ));
    }
}
