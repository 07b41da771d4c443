//! The settings commands: `set` (a part or figure of the stage, the transistor, the test
//! ambient or the measuring inputs, with its warnings) and `meter`.
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

use embedded_io::Write;

use super::format::{Num, Pct, Val};
use super::jig::{Clock, Jig, Store};
use super::parse::{MeterSetting, Setting};
use super::record::Settings;
use super::reply::{Fail, Outcome, Reply};
use super::{Code, Console};
use crate::device::is_from_vbe;
use crate::stage::{Capacitor, Part, Resistor};

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    #[inline(never)]
    pub(super) fn set(&mut self, s: Setting) -> Outcome {
        let mut next: Settings = self.settings;
        let st = &mut next.stage;
        let pr = &mut next.profile;
        let with_tol = |p: &mut Part, v: f64, tol: Option<f64>| {
            p.value = v;
            if let Some(t) = tol {
                p.tol = t;
            }
        };
        match s {
            Setting::Vcc(v, tol) => with_tol(&mut st.vcc, v, tol),
            Setting::Resistor(which, v, tol) => with_tol(st.part_mut(which), v, tol),
            Setting::Tolerance(t) => {
                for which in Resistor::ALL {
                    st.part_mut(which).tol = t;
                }
            }
            Setting::Load(v) => st.rl = v,
            Setting::Source(v) => st.rs = v,
            Setting::Capacitor(which, v, tol) => {
                let slot = match which {
                    Capacitor::Cin => &mut st.cin,
                    Capacitor::Cout => &mut st.cout,
                    Capacitor::Ce => &mut st.ce,
                };
                let old_tol = slot.map_or(0.20, |p| p.tol);
                *slot = v.map(|v| Part::new(v, tol.unwrap_or(old_tol)));
            }
            Setting::Polarity(p) => st.polarity = p,
            Setting::Temp(t) | Setting::TempMin(t) | Setting::TempMax(t)
                if !(t.is_finite() && (-55.0..=150.0).contains(&t)) =>
            {
                return Err(Fail::new(
                    Code::Range,
                    format_args!("temp: {}: allowed -55 to 150 °C", Num(t)),
                ));
            }
            Setting::Temp(t) => {
                next.temp_c = t;
                next.temp_min_c = t;
                next.temp_max_c = t;
            }
            Setting::TempMin(t) if t > next.temp_c => {
                return Err(Fail::new(
                    Code::Range,
                    format_args!(
                        "temp-min: {}: must be at most the ambient {} °C",
                        Num(t),
                        Num(next.temp_c)
                    ),
                ));
            }
            Setting::TempMax(t) if t < next.temp_c => {
                return Err(Fail::new(
                    Code::Range,
                    format_args!(
                        "temp-max: {}: must be at least the ambient {} °C",
                        Num(t),
                        Num(next.temp_c)
                    ),
                ));
            }
            Setting::TempMin(t) => next.temp_min_c = t,
            Setting::TempMax(t) => next.temp_max_c = t,
            Setting::Beta(b) => {
                pr.beta_min = b;
                pr.beta_typ = b;
                pr.beta_max = b;
            }
            Setting::BetaMin(b) => pr.beta_min = b,
            Setting::BetaMax(b) => pr.beta_max = b,
            Setting::BetaRev(b) => pr.beta_rev = b,
            Setting::BetaTc(t) => pr.beta_tc = t,
            Setting::Vbe(v) => {
                if !(0.2..=1.2).contains(&v) {
                    return Err(Fail::new(
                        Code::Range,
                        format_args!("vbe: {}: allowed 0.2 V to 1.2 V", Num(v)),
                    ));
                }
                pr.is_25 = is_from_vbe(v);
            }
            Setting::Is(v) => pr.is_25 = v,
            Setting::Early(v) => pr.early = v,
            Setting::VceSat(v) => pr.vce_sat = v,
            Setting::PowerRating(v) => pr.power_25 = v,
            Setting::TjMax(v) => pr.tj_max = v,
            Setting::InputR(v) => next.inputs.r = v,
            Setting::Inputs(m) => next.inputs.mode = m,
        }
        next.stage
            .validate()
            .map_err(|e| Fail::new(Code::Range, format_args!("{e}")))?;
        next.profile
            .validate()
            .map_err(|e| Fail::new(Code::Range, format_args!("{e}")))?;
        next.test_settings()
            .validate()
            .map_err(|e| Fail::new(Code::Range, format_args!("{e}")))?;
        self.settings = next;
        Ok(None)
    }

    /// After `set`: a warning line when the stage is not forward active at its nominal point
    /// (it then gets no windows) or a tolerance is unusual.
    #[inline(never)]
    pub(super) fn warn_setting<W: Write>(&self, r: &mut Reply<'_, W>) {
        use crate::settings::{UNUSUAL_SUPPLY_TOL, UNUSUAL_TOL};
        let st = &self.settings;
        match crate::judge::nominal_region(&st.stage, &st.profile, &st.test_settings()) {
            Ok(crate::solve::Region::Active) => {}
            Ok(region) => r.fields(
                &[
                    ("warning", Val::Word("not_active")),
                    ("region", Val::Word(region.name())),
                ],
                "warning: the stage is not forward active at its nominal point (region: {1}): \
                 limits, check and test refuse it until the bias is changed",
            ),
            Err(e) => r.data(format_args!(
                "warning: the nominal point does not solve: {e}"
            )),
        }
        let supply = st.stage.vcc.tol;
        if supply > UNUSUAL_SUPPLY_TOL || supply == 0.0 {
            unusual(
                r,
                "VCC",
                supply,
                "warning: supply tolerance {2} is unusual (a bench supply is set to within a few \
                 %; 0 % refuses any supply not exactly nominal)",
            );
        }
        for which in Resistor::ALL {
            let t = st.stage.part(which).tol;
            if t > UNUSUAL_TOL {
                unusual(
                    r,
                    which.name(),
                    t,
                    "warning: {1} tolerance {2} is unusual for a bias resistor (1 % to 10 %)",
                );
            }
        }
    }

    #[inline(never)]
    pub(super) fn set_meter(&mut self, m: MeterSetting) -> Outcome {
        use crate::settings::{DIVIDER_TOL_MAX, METER_GAIN_MAX, METER_OFFSET_MAX};
        let meter = &mut self.settings.meter;
        match m {
            MeterSetting::Gain(g) if g <= METER_GAIN_MAX => meter.gain_error = g,
            MeterSetting::Offset(v) if v <= METER_OFFSET_MAX => meter.offset = v,
            MeterSetting::Divider(d) if d <= DIVIDER_TOL_MAX => meter.divider_tol = d,
            MeterSetting::Gain(g) => {
                return Err(Fail::new(
                    Code::Range,
                    format_args!("gain: {}: allowed 0 to 20 %", Pct(g)),
                ))
            }
            MeterSetting::Offset(v) => {
                return Err(Fail::new(
                    Code::Range,
                    format_args!("offset: {}: allowed 0 to 1 V", Num(v)),
                ))
            }
            MeterSetting::Divider(d) => {
                return Err(Fail::new(
                    Code::Range,
                    format_args!("divider: {}: allowed 0 to 10 %", Pct(d)),
                ))
            }
        }
        Ok(None)
    }
}

/// The warning of an unusual tolerance `tol` (fraction) of `part`; `human` the text for a
/// person.
fn unusual<W: Write>(r: &mut Reply<'_, W>, part: &str, tol: f64, human: &str) {
    r.fields(
        &[
            ("warning", Val::Word("unusual_tolerance")),
            ("part", Val::Word(part)),
            ("tol", Val::Pct(tol)),
        ],
        human,
    );
}
