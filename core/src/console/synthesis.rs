//! The commands of the design search: `requirement`, `design` and `pick` (core feature
//! `synthesis`; a unit built without it refuses them, see [`super::session`]).
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

use core::fmt::Write as _;

use embedded_io::Write;

use super::format::{polarity_name, Val};
use super::jig::{Clock, Jig, Store};
use super::parse::ReqSetting;
use super::reply::{Fail, Outcome, Reply, Text};
use super::{Code, Console};
use crate::design::{self, DesignError};
use crate::units::{capacitor_code, resistor_code, Eng};

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    /// `requirement`: show the design requirement.
    #[inline(never)]
    pub(super) fn show_requirement<W: Write>(&self, r: &mut Reply<'_, W>) {
        let q = &self.requirement;
        let pol = polarity_name(q.polarity);
        r.fields(
            &[
                ("polarity", Val::Upper(pol)),
                ("vcc", Val::Si(q.vcc, "V")),
                ("gain", Val::Num(q.gain)),
                ("rl", Val::OptSi(q.rl, "Ω")),
                ("rs", Val::Si(q.rs, "Ω")),
                ("ic_max", Val::Si(q.ic_max, "A")),
                ("", Val::Break),
                ("swing_pp", Val::Si(q.swing_pp, "V")),
                ("f_low", Val::OptSi(q.f_low, "Hz")),
                ("", Val::Label(&Eng::new(q.f_low_or_default(), "Hz"))),
                ("temp", Val::Num(q.temp)),
                ("temp_min", Val::Num(q.temp_min)),
                ("temp_max", Val::Num(q.temp_max)),
                ("", Val::Break),
                ("series", Val::Word(q.series.name())),
                ("tol", Val::Pct(q.tol)),
                ("cap_series", Val::Word(q.cap_series.name())),
                ("cap_tol", Val::Pct(q.cap_tol)),
            ],
            "{0} on {1}, gain {2} into {3} from {4}\n\
             IC at most {5}, swing at least {7} peak-to-peak, low corner at most {9}\n\
             ambient {10} °C ({11} to {12} °C), resistors {14} ±{15}, capacitors {16} ±{17}",
        );
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
            let parts = [s.r1, s.r2, s.rc, s.re1, s.re2];
            let [c1, c2, c3, c4, c5] = parts.map(|p| resistor_code(p.value));
            let [v1, v2, v3, v4, v5] = parts.map(|p| p.value);
            r.fields(
                &[
                    ("candidate", Val::Shown(&n)),
                    ("r1", Val::Code(v1, c1.as_str())),
                    ("r2", Val::Code(v2, c2.as_str())),
                    ("rc", Val::Code(v3, c3.as_str())),
                    ("re1", Val::Code(v4, c4.as_str())),
                    ("re2", Val::Code(v5, c5.as_str())),
                    ("cin", Val::OptSi(cap(s.cin), "F")),
                    ("cout", Val::OptSi(cap(s.cout), "F")),
                    ("ce", Val::OptSi(cap(s.ce), "F")),
                    ("", Val::Label(&caps.as_str())),
                    ("", Val::Break),
                    ("candidate", Val::Shown(&n)),
                    ("gain", Val::Fixed(c.gain, 2)),
                    ("swing_pp", Val::Si(c.swing_pp, "V")),
                    ("ic", Val::Si(c.op.ic, "A")),
                    ("vce", Val::Si(c.op.vce, "V")),
                    ("f_low", Val::Si(c.f_low, "Hz")),
                    ("score", Val::Num(c.score)),
                ],
                "{0}. R1 {1}  R2 {2}  RC {3}  RE1 {4}  RE2 {5}{9}\n   gain {12}, swing {13} \
                 peak-to-peak, IC {14}, VCE {15}, low corner {16}",
            );
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
