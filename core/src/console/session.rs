//! The session commands and the dispatch: `identify`, `*RST`, `echo`, `mode`, `save`, `hash`,
//! `digest` and `help`; [`Console::exec`] runs each parsed command in the module of its job
//! (`lock` and `unlock` in [`lock`](super::lock)).
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

use embedded_io::Write;

use super::format::Val;
use super::jig::{Clock, Jig, JigError, Slot, Store, RECORD_LEN};
use super::parse::{Command, Mode};
use super::record;
use super::reply::{Fail, Outcome, Reply};
use super::show::show_readings;
use super::{Code, Console, Source};

/// The refusal of a design-search command (`requirement`, `design`, `pick`) by a unit built
/// without them (core feature `synthesis`, left out of the instrument's budget build).
#[cfg(not(feature = "synthesis"))]
fn no_synthesis(cmd: Command<'_>) -> Fail {
    let command = match cmd {
        Command::Requirement(_) => "requirement",
        Command::Design => "design",
        _ => "pick",
    };
    Fail::new(
        Code::NotSupported,
        format_args!(
            "{command}: this unit does not search for designs (left out to fit its flash): run \
             biasjig design on a PC and send the stage (biasjig station does)"
        ),
    )
}

/// The refusal of a command a unit was built without (a core feature left out of the
/// instrument's budget build): what it does not do and where to do it instead.
#[cfg(any(
    not(feature = "spread"),
    not(feature = "kept-designs"),
    not(feature = "signal-test")
))]
pub(super) fn not_here(command: &str, what: &str, instead: &str) -> Fail {
    Fail::new(
        Code::NotSupported,
        format_args!(
            "{command}: this unit does not {what} (left out to fit its flash): {instead}, or use \
             the full image"
        ),
    )
}

/// The refusal of the kept-design commands (`keep`, `designs`, `choose`, `forget`; core feature
/// `kept-designs`).
#[cfg(not(feature = "kept-designs"))]
fn no_kept(cmd: Command<'_>) -> Fail {
    let command = match cmd {
        Command::Keep(_) => "keep",
        Command::Designs => "designs",
        Command::Choose(_) => "choose",
        _ => "forget",
    };
    not_here(
        command,
        "keep designs by name",
        "keep designs on a PC (biasjig station sends the stage)",
    )
}

pub(super) fn jig_fail(e: JigError) -> Fail {
    match e {
        JigError::NotSupported => Fail::new(
            Code::NotSupported,
            format_args!("{e}: this unit has no jig; type the readings with check VCC VB VE VC"),
        ),
        _ => Fail::new(Code::Jig, format_args!("{e}")),
    }
}

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    #[inline(never)]
    pub(super) fn save_settings(&mut self) -> Result<(), Fail> {
        let mut rec = [0u8; RECORD_LEN];
        self.settings.encode(&mut rec);
        self.store
            .save(Slot::Settings, &rec)
            .map_err(|e| Fail::new(Code::Store, format_args!("settings not kept: {e}")))
    }

    #[inline(never)]
    pub(super) fn save_calibration(&mut self) -> Result<(), Fail> {
        let mut rec = [0u8; RECORD_LEN];
        record::encode_calibration(&self.calibration, &mut rec);
        self.store
            .save(Slot::Calibration, &rec)
            .map_err(|e| Fail::new(Code::Store, format_args!("calibration not kept: {e}")))
    }

    /// Run one parsed command.
    pub(super) fn exec<W: Write>(&mut self, cmd: Command<'_>, r: &mut Reply<'_, W>) -> Outcome {
        match cmd {
            Command::Nothing => Ok(None),
            Command::Help(topic) => super::table::help(topic, r),
            Command::Identify => {
                let id = &self.identity;
                r.raw(format_args!(
                    "{},{},{},{}",
                    id.maker, id.model, id.serial, id.firmware
                ));
                Ok(None)
            }
            Command::Reset => self.reset(),
            Command::Stage => {
                self.show_stage(r);
                Ok(None)
            }
            Command::Set(s) => {
                self.editable()?;
                self.set(s)?;
                self.last = None;
                self.settings.design = None;
                self.warn_setting(r);
                Ok(None)
            }
            Command::Profile => {
                self.show_profile(r);
                Ok(None)
            }
            #[cfg(feature = "spread")]
            Command::Parts(count) => {
                self.show_parts(count, r);
                Ok(None)
            }
            #[cfg(not(feature = "spread"))]
            Command::Parts(_) => Err(not_here(
                "parts",
                "list the parts here",
                "see the parts on a PC (biasjig design lists them)",
            )),
            #[cfg(feature = "analysis")]
            Command::Predict => self.predict(r),
            #[cfg(not(feature = "analysis"))]
            Command::Predict => Err(Fail::new(
                Code::NotSupported,
                format_args!(
                    "predict: this unit does not analyse the stage (left out to fit its flash): \
                     run biasjig analyze on a PC; limits, check and test work here"
                ),
            )),
            Command::Hash => {
                r.fields(
                    &[("hash", Val::Hash(self.design_hash()))],
                    "design hash {0}",
                );
                Ok(None)
            }
            Command::Digest => {
                let st = &self.settings;
                let d = crate::settings::digest(&st.stage, &st.profile, &st.test_settings());
                r.fields(&[("digest", Val::Shown(&d))], "settings digest {0}");
                Ok(None)
            }
            #[cfg(not(feature = "synthesis"))]
            Command::Requirement(_) | Command::Design | Command::Pick(_) => Err(no_synthesis(cmd)),
            #[cfg(feature = "synthesis")]
            Command::Requirement(None) => {
                self.show_requirement(r);
                Ok(None)
            }
            #[cfg(feature = "synthesis")]
            Command::Requirement(Some(set)) => {
                self.editable()?;
                self.set_requirement(set)
            }
            #[cfg(feature = "synthesis")]
            Command::Design => {
                self.editable()?;
                self.design(r)
            }
            #[cfg(feature = "synthesis")]
            Command::Pick(n) => {
                self.editable()?;
                self.pick(n)
            }
            #[cfg(feature = "spread")]
            Command::Spread(runs, seed) => self.spread(runs, seed, r),
            #[cfg(not(feature = "spread"))]
            Command::Spread(..) => Err(not_here(
                "spread",
                "compute the spread",
                "run biasjig spread on a PC",
            )),
            Command::Limits => self.show_limits(r),
            Command::Meter(None) => {
                self.show_meter(r);
                Ok(None)
            }
            Command::Meter(Some(m)) => {
                self.editable()?;
                self.set_meter(m)?;
                self.last = None;
                self.settings.design = None;
                Ok(None)
            }
            Command::Measure(n) => self.cmd_measure(n, r),
            Command::Check(rd, text) => {
                // Checked by the parser already.
                let tones = super::parse::tones(text).unwrap_or_default();
                self.cmd_judge(rd, &tones, Source::Typed, r)
            }
            Command::Test(n) => self.cmd_test(n, r),
            Command::Diagnose => self.diagnose(r),
            Command::Readings => match self.readings {
                Some((rd, src)) => {
                    show_readings(&rd, src, r);
                    Ok(None)
                }
                None => Err(Fail::new(
                    Code::NoReadings,
                    format_args!("no readings yet: measure, or check VCC VB VE VC"),
                )),
            },
            Command::Calibrate(step) => self.calibrate(step, r),
            Command::Inject(f) => {
                self.jig.inject(f).map_err(jig_fail)?;
                Ok(None)
            }
            Command::InjectCapacitor(c, state) => {
                self.jig.inject_capacitor(c, state).map_err(jig_fail)?;
                Ok(None)
            }
            Command::Lock(pin) => self.lock(pin),
            Command::Unlock(pin) => self.unlock(pin),
            Command::Echo(on) => {
                self.echo = on;
                Ok(None)
            }
            Command::Mode(None) => {
                let m = match self.mode {
                    Mode::Human => "human",
                    Mode::Machine => "machine",
                };
                r.fields(&[("mode", Val::Word(m))], "mode {0}");
                Ok(None)
            }
            Command::Mode(Some(m)) => {
                self.mode = m;
                Ok(None)
            }
            Command::Save => {
                self.save_settings()?;
                self.save_calibration()?;
                Ok(None)
            }
            #[cfg(feature = "kept-designs")]
            Command::Keep(name) => self.keep(name),
            #[cfg(feature = "kept-designs")]
            Command::Designs => self.list_designs(r),
            #[cfg(feature = "kept-designs")]
            Command::Choose(name) => self.choose(name),
            #[cfg(feature = "kept-designs")]
            Command::Forget(name) => self.forget(name),
            #[cfg(not(feature = "kept-designs"))]
            Command::Keep(_) | Command::Designs | Command::Choose(_) | Command::Forget(_) => {
                Err(no_kept(cmd))
            }
        }
    }

    #[inline(never)]
    pub(super) fn reset(&mut self) -> Outcome {
        self.editable()?;
        self.settings = Self::defaults_for(&self.jig);
        self.readings = None;
        self.last = None;
        self.requirement = super::default_requirement();
        self.candidates.clear();
        self.cal_low = [None; 4];
        Ok(None)
    }
}
