//! The commands of the design search: `requirement`, `design` and `pick` (core feature
//! `synthesis`; a unit built without it refuses them, see [`super::session`]).
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

use core::fmt::Write as _;

use embedded_io::Write;

use super::format::{Human, Num, Opt, Pct, Upper};
use super::jig::{Clock, Jig, Store};
use super::parse::ReqSetting;
use super::reply::{Fail, Outcome, Reply, Text};
use super::{Code, Console};
use crate::design::{self, DesignError};
use crate::stage::Polarity;
use crate::units::{capacitor_code, resistor_code, Eng, Fixed};

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    /// `requirement`: show the design requirement.
    #[inline(never)]
    pub(super) fn show_requirement<W: Write>(&self, r: &mut Reply<'_, W>) {
        let q = &self.requirement;
        let pol = match q.polarity {
            Polarity::Npn => "npn",
            Polarity::Pnp => "pnp",
        };
        if r.machine() {
            r.data(format_args!(
                "polarity={pol} vcc={} gain={} rl={} rs={} ic_max={}",
                Num(q.vcc),
                Num(q.gain),
                Opt(q.rl),
                Num(q.rs),
                Num(q.ic_max)
            ));
            r.data(format_args!(
                "swing_pp={} f_low={} temp={} temp_min={} temp_max={}",
                Num(q.swing_pp),
                Opt(q.f_low),
                Num(q.temp),
                Num(q.temp_min),
                Num(q.temp_max)
            ));
            r.data(format_args!(
                "series={} tol={} cap_series={} cap_tol={}",
                q.series.name(),
                Num(q.tol),
                q.cap_series.name(),
                Num(q.cap_tol)
            ));
        } else {
            r.data(format_args!(
                "{} on {}, gain {} into {} from {}",
                Upper(pol),
                Eng::new(q.vcc, "V"),
                Num(q.gain),
                Human(q.rl, "Ω"),
                Eng::new(q.rs, "Ω")
            ));
            r.data(format_args!(
                "IC at most {}, swing at least {} peak-to-peak, low corner at most {}",
                Eng::new(q.ic_max, "A"),
                Eng::new(q.swing_pp, "V"),
                Eng::new(q.f_low_or_default(), "Hz")
            ));
            r.data(format_args!(
                "ambient {} °C ({} to {} °C), resistors {} ±{}, capacitors {} ±{}",
                Num(q.temp),
                Num(q.temp_min),
                Num(q.temp_max),
                q.series.name(),
                Pct(q.tol),
                q.cap_series.name(),
                Pct(q.cap_tol)
            ));
        }
    }

    /// `requirement NAME VALUE`: change one field; the whole requirement must stay valid.
    #[inline(never)]
    pub(super) fn set_requirement(&mut self, s: ReqSetting) -> Outcome {
        let mut q = self.requirement;
        match s {
            ReqSetting::Polarity(p) => q.polarity = p,
            ReqSetting::Vcc(v) => q.vcc = v,
            ReqSetting::Gain(v) => q.gain = v,
            ReqSetting::Load(v) => q.rl = v,
            ReqSetting::Source(v) => q.rs = v,
            ReqSetting::IcMax(v) => q.ic_max = v,
            ReqSetting::Swing(v) => q.swing_pp = v,
            ReqSetting::FLow(v) => q.f_low = v,
            ReqSetting::Temp(v) => q.temp = v,
            ReqSetting::TempMin(v) => q.temp_min = v,
            ReqSetting::TempMax(v) => q.temp_max = v,
            ReqSetting::Series(v) => q.series = v,
            ReqSetting::Tol(v) => q.tol = v,
            ReqSetting::CapSeries(v) => q.cap_series = v,
            ReqSetting::CapTol(v) => q.cap_tol = v,
        }
        q.validate()
            .map_err(|e| Fail::new(Code::Range, format_args!("{}: {e}", e.field())))?;
        self.requirement = q;
        self.candidates.clear();
        Ok(None)
    }

    /// `design`: candidates for the requirement with the set transistor, best first.
    #[inline(never)]
    pub(super) fn design<W: Write>(&mut self, r: &mut Reply<'_, W>) -> Outcome {
        // In place: the list is written straight into the console's own, never copied.
        design::design_into(
            &self.requirement,
            &self.settings.profile,
            &mut self.candidates,
        )
        .map_err(|e| {
            let code = match e {
                DesignError::Invalid(_) | DesignError::Profile(_) => Code::Range,
                _ => Code::NoDesign,
            };
            Fail::new(code, format_args!("{e}"))
        })?;
        for (k, c) in self.candidates.iter().enumerate() {
            let s = &c.stage;
            let n = k + 1;
            let cap = |p: Option<crate::stage::Part>| p.map(|p| p.value);
            if r.machine() {
                r.data(format_args!(
                    "candidate={n} r1={} r2={} rc={} re1={} re2={} cin={} cout={} ce={}",
                    Num(s.r1.value),
                    Num(s.r2.value),
                    Num(s.rc.value),
                    Num(s.re1.value),
                    Num(s.re2.value),
                    Opt(cap(s.cin)),
                    Opt(cap(s.cout)),
                    Opt(cap(s.ce))
                ));
                r.data(format_args!(
                    "candidate={n} gain={} swing_pp={} ic={} vce={} f_low={} score={}",
                    Num(c.gain),
                    Num(c.swing_pp),
                    Num(c.op.ic),
                    Num(c.op.vce),
                    Num(c.f_low),
                    Num(c.score)
                ));
            } else {
                let mut caps = Text::default();
                for (name, p) in [("CIN", s.cin), ("COUT", s.cout), ("CE", s.ce)] {
                    match p {
                        Some(p) => {
                            let _ = write!(caps, "  {name} {}", capacitor_code(p.value));
                        }
                        None => {
                            let _ = write!(caps, "  {name} ideal");
                        }
                    }
                }
                r.data(format_args!(
                    "{n}. R1 {}  R2 {}  RC {}  RE1 {}  RE2 {}{}",
                    resistor_code(s.r1.value),
                    resistor_code(s.r2.value),
                    resistor_code(s.rc.value),
                    resistor_code(s.re1.value),
                    resistor_code(s.re2.value),
                    caps.as_str()
                ));
                r.data(format_args!(
                    "   gain {}, swing {} peak-to-peak, IC {}, VCE {}, low corner {}",
                    Fixed(c.gain, 2),
                    Eng::new(c.swing_pp, "V"),
                    Eng::new(c.op.ic, "A"),
                    Eng::new(c.op.vce, "V"),
                    Eng::new(c.f_low, "Hz")
                ));
            }
        }
        Ok(Some(Text::of(format_args!(
            "{} candidates, best first: pick N takes one",
            self.candidates.len()
        ))))
    }

    /// `pick N`: candidate N becomes the stage (with the requirement's ambient range).
    #[inline(never)]
    pub(super) fn pick(&mut self, n: u8) -> Outcome {
        if self.candidates.is_empty() {
            return Err(Fail::new(
                Code::NoDesign,
                format_args!("no candidates: run design first"),
            ));
        }
        let count = self.candidates.len();
        let Some(c) = usize::from(n)
            .checked_sub(1)
            .and_then(|k| self.candidates.get(k))
        else {
            return Err(Fail::new(
                Code::Value,
                format_args!("pick: {n}: allowed 1 to {count}"),
            ));
        };
        let mut next = self.settings;
        next.stage = c.stage;
        next.temp_c = self.requirement.temp;
        next.temp_min_c = self.requirement.temp_min;
        next.temp_max_c = self.requirement.temp_max;
        next.stage
            .validate()
            .map_err(|e| Fail::new(Code::Range, format_args!("{e}")))?;
        self.settings = next;
        self.last = None;
        self.settings.design = None;
        Ok(Some(Text::of(format_args!(
            "the stage is candidate {n}, design hash {:016x}",
            self.design_hash()
        ))))
    }
}
