//! The calibration commands: `calibrate` (two points per channel, the signal path against a
//! known gain, reset) and `inject` (the emulated jig's faults).
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

use embedded_io::Write;

use super::format::{Field, Val};
use super::jig::{Channel, ChannelCal, Clock, Jig, Store};
use super::parse::CalibrateStep;
use super::reply::{Fail, Outcome, Reply, Text};
use super::session::jig_fail;
#[cfg(not(feature = "signal-test"))]
use super::session::not_here;
use super::{Code, Console};
#[cfg(feature = "signal-test")]
use crate::units::Fixed;

/// Conversions averaged for one calibration point.
const CAL_SAMPLES: u16 = 64;

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    #[inline(never)]
    pub(super) fn calibrate<W: Write>(
        &mut self,
        step: CalibrateStep,
        r: &mut Reply<'_, W>,
    ) -> Outcome {
        match step {
            CalibrateStep::Show => {
                for c in Channel::ALL {
                    let k = self.calibration.get(c);
                    let pending = self.cal_low.get(c.index()).copied().flatten().is_some();
                    channel_line(
                        r,
                        c,
                        k,
                        ("low_taken", Val::Flag(pending, "  (low point taken)", "")),
                        "{0:4} gain {1}  offset {2}{3}",
                    );
                }
                signal_line(r, self.calibration.signal);
                Ok(None)
            }
            #[cfg(feature = "signal-test")]
            CalibrateStep::Gain(f, known) => self.calibrate_gain(f, known, r),
            #[cfg(not(feature = "signal-test"))]
            CalibrateStep::Gain(..) => Err(not_here(
                "calibrate gain",
                "read gains",
                "the DC channels calibrate here",
            )),
            CalibrateStep::Low(c, volts) => {
                self.editable()?;
                let raw = self.jig.raw(c, CAL_SAMPLES).map_err(jig_fail)?;
                if let Some(slot) = self.cal_low.get_mut(c.index()) {
                    *slot = Some((volts, raw));
                }
                Ok(Some(Text::of(format_args!(
                    "low point of {} taken; apply the high voltage, then calibrate {} high V",
                    c.name(),
                    c.name()
                ))))
            }
            CalibrateStep::High(c, volts) => {
                self.editable()?;
                let Some((low, raw_low)) = self.cal_low.get(c.index()).copied().flatten() else {
                    return Err(Fail::new(
                        Code::Usage,
                        format_args!("calibrate {} low V first", c.name()),
                    ));
                };
                let raw_high = self.jig.raw(c, CAL_SAMPLES).map_err(jig_fail)?;
                let k =
                    ChannelCal::from_points(low, raw_low, volts, raw_high).ok_or_else(|| {
                        Fail::new(
                            Code::Value,
                            format_args!(
                            "{}: points must be at least 0.1 V apart and give a gain of 0.5 to 2",
                            c.name()
                        ),
                        )
                    })?;
                self.calibration.set(c, k);
                if let Some(slot) = self.cal_low.get_mut(c.index()) {
                    *slot = None;
                }
                self.jig
                    .set_calibration(&self.calibration)
                    .map_err(jig_fail)?;
                self.save_calibration()?;
                channel_line(r, c, k, ("", Val::Label(&"")), "{0} gain {1}  offset {2}");
                Ok(None)
            }
            CalibrateStep::Reset => {
                self.editable()?;
                self.calibration = super::Calibration::default();
                self.cal_low = [None; 4];
                self.jig
                    .set_calibration(&self.calibration)
                    .map_err(jig_fail)?;
                self.save_calibration()?;
                Ok(None)
            }
        }
    }

    /// `calibrate gain F KNOWN`: read the gain of the reference fitted in the board's place and
    /// keep the signal path's correction that makes it read `known`.
    #[inline(never)]
    #[cfg(feature = "signal-test")]
    pub(super) fn calibrate_gain<W: Write>(
        &mut self,
        f: f64,
        known: f64,
        r: &mut Reply<'_, W>,
    ) -> Outcome {
        self.editable()?;
        let measured = self.jig.gain(f).map_err(jig_fail)?;
        let k = self
            .calibration
            .signal_from(measured, known)
            .ok_or_else(|| {
                Fail::new(
                    Code::Value,
                    format_args!(
                        "gain: read {} through a reference of {}: the correction must be 0.5 to 2 \
                     (is the reference fitted?)",
                        Fixed(measured, 4),
                        Fixed(known, 4)
                    ),
                )
            })?;
        let mut cal = self.calibration;
        cal.signal = k;
        self.jig.set_calibration(&cal).map_err(jig_fail)?;
        self.calibration = cal;
        self.save_calibration()?;
        signal_line(r, k);
        Ok(None)
    }
}

/// A channel's calibration (gain, offset in V) with one more field; `human` the line for a
/// person.
fn channel_line<W: Write>(
    r: &mut Reply<'_, W>,
    c: Channel,
    k: ChannelCal,
    more: Field<'_>,
    human: &str,
) {
    r.fields(
        &[
            ("channel", Val::Word(c.name())),
            ("gain", Val::Fixed(k.gain, 6)),
            ("offset", Val::Si(k.offset, "V")),
            more,
        ],
        human,
    );
}

/// The signal path's correction: what the load input reads per unit the source input reads.
fn signal_line<W: Write>(r: &mut Reply<'_, W>, k: f64) {
    r.fields(
        &[
            ("", Val::Word("signal")),
            ("load_over_source", Val::Fixed(k, 6)),
        ],
        "signal path: load input reads {1} of the source input",
    );
}
