//! The commands that judge a board: `measure`, `check`, `test` and `diagnose`.
//!
//! `check` and `test` call the one judging path of `biasjig check`, [`crate::judge::judge`], with
//! the console's stage, transistor and test settings (ambient, meter, measuring inputs).
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

use core::fmt::Write as _;

use embedded_io::Write;

use super::format::{Num, Opt, Val};
#[cfg(feature = "signal-test")]
use super::jig::JigError;
use super::jig::{Clock, Jig, Store};
use super::parse::Tones;
use super::reply::{Fail, Outcome, Reply, Text};
use super::session::jig_fail;
use super::show::show_readings;
use super::{Code, Console, Source, MAX_OUT_LINE};
use crate::check::{NodeVerdict, Verdict};
#[cfg(feature = "signal-test")]
use crate::device::Profile;
use crate::diagnose::{Diagnosis, Hypothesis};
use crate::explain::{listing, Listed};
use crate::judge::JudgeError;
#[cfg(feature = "signal-test")]
use crate::settings::TestSettings;
use crate::stage::Readings;
#[cfg(feature = "signal-test")]
use crate::stage::Stage;

/// How many fault hypotheses `check`, `test` and `diagnose` list at most (as `biasjig check`).
pub const LISTED_FAULTS: usize = 6;

/// The last judged board.
#[derive(Debug, Clone, PartialEq)]
pub struct LastCheck {
    /// The readings judged, V.
    pub readings: Readings,
    /// Where they came from.
    pub source: Source,
    /// The verdict per node and overall, with the derived quantities.
    pub verdict: Verdict,
    /// The ranked faults when the board failed.
    pub diagnosis: Option<Diagnosis>,
    /// The gain readings judged (signal test), with their windows, in order.
    pub tones: crate::judge::ToneVerdicts,
}

/// What a screen draws from the last judged board, typed (no text to parse back): the same
/// facts the machine-mode reply of `check`, `test` and `diagnose` lists, in its order.
impl LastCheck {
    /// The board passed (`verdict=pass`): every node and every gain reading inside its window.
    pub fn pass(&self) -> bool {
        self.verdict.pass
    }

    /// The nodes with their readings (V, A for the currents) and windows, in the reply's order
    /// (`node=` lines).
    pub fn nodes(&self) -> &[NodeVerdict] {
        &self.verdict.nodes
    }

    /// The first node outside its window (the first `node= ... ok=0` line), if any.
    pub fn first_failing(&self) -> Option<&NodeVerdict> {
        self.verdict.failing().next()
    }

    /// The most likely fault (the first `fault=` line) when the board failed; `None` for a
    /// passing board or a diagnosis that found no fault to list.
    pub fn first_fault(&self) -> Option<&Hypothesis> {
        self.diagnosis.as_ref()?.faults().next()
    }

    /// The diagnosis explains the readings (`explained=1`); `None` for a passing board.
    pub fn explained(&self) -> Option<bool> {
        self.diagnosis.as_ref().map(|d| d.explained)
    }
}

/// The test frequencies `test` proposed, with the stage, transistor and test settings they were
/// proposed for (the whole input of [`crate::signaltest::propose`]).
#[cfg(feature = "signal-test")]
#[derive(Debug, Clone, Copy)]
pub(super) struct Proposed {
    stage: Stage,
    profile: Profile,
    settings: TestSettings,
    /// Midband and poles frequency, Hz; `None` when none were proposed.
    frequencies: Option<[f64; 2]>,
}

/// The status of a board the judging path did not judge.
pub(super) fn judge_fail(e: JudgeError) -> Fail {
    let code = match e {
        JudgeError::Implausible(_) | JudgeError::Supply { .. } => Code::Implausible,
        JudgeError::Settings(_) | JudgeError::Stage(_) | JudgeError::NotActive(_) => Code::Range,
        _ => Code::Solve,
    };
    Fail::new(code, format_args!("{e}"))
}

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    /// Judge readings through the one judging path ([`crate::judge::verdict`], then for a failed
    /// board [`crate::judge::diagnosis_with_signal_into`]: the steps of [`crate::judge::judge`]; the supply window,
    /// the nominal region, plausibility, windows at the measured supply over the test ambient
    /// with the measuring inputs attached, verdict and, when the board fails, the diagnosis).
    /// Keeps the result as the last check (nothing changes when the board is not judged; a
    /// diagnosis that fails leaves no last check).
    #[inline(never)]
    pub(super) fn judge(&mut self, rd: Readings, tones: &Tones, src: Source) -> Result<(), Fail> {
        let st = &self.settings;
        if cfg!(not(feature = "signal-test")) && !tones.is_empty() {
            return Err(Fail::new(
                Code::Usage,
                format_args!(
                    "no signal test on this unit (left out to fit its flash): run biasjig check \
                     --ac on a PC"
                ),
            ));
        }
        let ts = st.test_settings();
        let (_, verdict, tv) =
            crate::judge::verdict_with_signal(&st.stage, &st.profile, &ts, &rd, tones.as_slice())
                .map_err(judge_fail)?;
        // The last check is updated in place: the diagnosis (about 2.5 KB) is written straight
        // into the session state, never copied through the stack.
        match &mut self.last {
            Some(l) => {
                l.readings = rd;
                l.source = src;
                l.verdict = verdict;
                l.tones = tv;
            }
            None => {
                self.last = Some(LastCheck {
                    readings: rd,
                    source: src,
                    verdict,
                    diagnosis: None,
                    tones: tv,
                })
            }
        }
        if let Some(l) = &mut self.last {
            if verdict.pass {
                l.diagnosis = None;
            } else {
                let d = l.diagnosis.get_or_insert_with(|| Diagnosis {
                    ranked: heapless::Vec::new(),
                    explained: false,
                    solves: 0,
                });
                if let Err(e) = crate::judge::diagnosis_with_signal_into(
                    &st.stage,
                    &st.profile,
                    &ts,
                    &rd,
                    tones.as_slice(),
                    d,
                ) {
                    // No half-made diagnosis stays behind.
                    self.last = None;
                    return Err(judge_fail(crate::judge::JudgeError::Diagnose(e)));
                }
            }
        }
        self.readings = Some((rd, src));
        Ok(())
    }

    /// The verdict: `verdict=pass|fail` (with `explained=` when diagnosed) for a program; for a
    /// person the first template when it passed, the second (failing and judged node counts
    /// `{2}`, `{3}`) when it failed.
    fn verdict_line<W: Write>(l: &LastCheck, r: &mut Reply<'_, W>, human: [&str; 2]) {
        let v = &l.verdict;
        let explained = match &l.diagnosis {
            Some(d) => ("explained", Val::Flag(d.explained, "", "")),
            None => ("", Val::Label(&"")),
        };
        r.fields(
            &[
                ("verdict", Val::Word(if v.pass { "pass" } else { "fail" })),
                explained,
                ("", Val::Label(&v.failing().count())),
                ("", Val::Label(&v.nodes.len())),
            ],
            if v.pass { human[0] } else { human[1] },
        );
    }

    /// The last check: readings, verdict, nodes, derived quantities and the likely faults.
    #[inline(never)]
    pub(super) fn show_check<W: Write>(&self, r: &mut Reply<'_, W>) {
        let Some(l) = &self.last else { return };
        show_readings(&l.readings, l.source, r);
        let v = &l.verdict;
        let dv = &v.derived;
        Self::verdict_line(
            l,
            r,
            [
                "PASS   every node inside its window",
                "FAIL   {2} of {3} out of window",
            ],
        );
        for n in &v.nodes {
            let u = n.node.unit();
            r.fields(
                &[
                    ("node", Val::Words(n.node.name(), n.node.label())),
                    ("measured", Val::Si(n.measured, u)),
                    ("low", Val::Si(n.low, u)),
                    ("high", Val::Si(n.high, u)),
                    ("ok", Val::Flag(n.ok, "", "   OUT")),
                ],
                "{0:4} {1:10} window {2} to {3}{4}",
            );
        }
        for t in &l.tones {
            r.fields(
                &[
                    ("", Val::Word("ac")),
                    ("f", Val::Si(t.reading.f, "Hz")),
                    ("measured", Val::Fixed(t.reading.gain, 3)),
                    ("low", Val::Fixed(t.window.low, 3)),
                    ("high", Val::Fixed(t.window.high, 3)),
                    ("ok", Val::Flag(t.ok, "", "   OUT")),
                ],
                "gain at {1}: {2} window {3} to {4}{5}",
            );
        }
        r.fields(
            &[
                ("", Val::Word("derived")),
                ("ic", Val::Si(dv.ic, "A")),
                ("ib", Val::Si(dv.ib, "A")),
                ("ie", Val::OptSi(dv.ie, "A")),
                ("vbe", Val::Si(dv.vbe, "V")),
                ("vce", Val::Si(dv.vce, "V")),
                ("beta", Val::OptFixed(dv.beta, 0)),
                ("region", Val::Word(dv.region.name())),
            ],
            "IC {1}, IB {2}, hFE {6}, VBE {4}, VCE {5}, {7}",
        );
        if let Some(d) = &l.diagnosis {
            self.show_faults(d, r);
        }
    }

    #[inline(never)]
    pub(super) fn show_faults<W: Write>(&self, d: &Diagnosis, r: &mut Reply<'_, W>) {
        if r.machine() {
            for h in d.faults().take(LISTED_FAULTS) {
                let mut t = Text::default();
                let _ = write!(
                    t,
                    "fault={} mode={} score={} estimate={} equivalent=",
                    h.suspect.part(),
                    h.suspect.mode(),
                    Num(h.score),
                    Opt(h.estimate)
                );
                let mut any = false;
                for e in d.equivalents(h).filter(|e| e.suspect.is_fault()) {
                    let mut item: heapless::String<24> = heapless::String::new();
                    let _ = write!(
                        item,
                        "{}{}:{}",
                        if any { "," } else { "" },
                        e.suspect.part(),
                        e.suspect.mode()
                    );
                    if t.as_str().len() + item.len() > MAX_OUT_LINE {
                        r.mark_cut();
                        break;
                    }
                    let _ = t.write_str(&item);
                    any = true;
                }
                if !any {
                    let _ = t.write_str("none");
                }
                r.data(format_args!("{}", t.as_str()));
            }
        } else {
            self.show_fault_words(d, r);
        }
    }

    /// The likely faults in words (human mode), in a frame of its own: the machine path does
    /// not carry the listing's stack.
    #[inline(never)]
    pub(super) fn show_fault_words<W: Write>(&self, d: &Diagnosis, r: &mut Reply<'_, W>) {
        let items: heapless::Vec<Listed, LISTED_FAULTS> = d
            .faults()
            .take(LISTED_FAULTS)
            .map(|h| Listed::of(d, h))
            .collect();
        listing(&self.settings.stage, d.explained, &items, &mut |a| {
            r.data(a)
        });
    }

    /// `diagnose`: the last diagnosis again (the last readings are judged first when they were
    /// only measured).
    #[inline(never)]
    pub(super) fn diagnose<W: Write>(&mut self, r: &mut Reply<'_, W>) -> Outcome {
        if self.last.is_none() {
            match self.readings {
                Some((rd, src)) => self.judge(rd, &Tones::new(), src)?,
                None => {
                    return Err(Fail::new(
                        Code::NoReadings,
                        format_args!("no readings yet: test, or check VCC VB VE VC"),
                    ))
                }
            }
        }
        let Some(l) = &self.last else {
            return Ok(None);
        };
        Self::verdict_line(l, r, ["", ""]);
        match &l.diagnosis {
            Some(d) => {
                self.show_faults(d, r);
                Ok(None)
            }
            None => Ok(Some(Text::of(format_args!(
                "the board passed: nothing to diagnose"
            )))),
        }
    }
}

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    #[inline(never)]
    pub(super) fn cmd_measure<W: Write>(&mut self, n: u16, r: &mut Reply<'_, W>) -> Outcome {
        let rd = self.measure(n)?;
        show_readings(&rd, Source::Measured, r);
        Ok(None)
    }

    #[inline(never)]
    pub(super) fn cmd_judge<W: Write>(
        &mut self,
        rd: Readings,
        tones: &super::parse::Tones,
        src: Source,
        r: &mut Reply<'_, W>,
    ) -> Outcome {
        self.judge(rd, tones, src)?;
        self.show_check(r);
        Ok(None)
    }

    /// `test`: the DC nodes first, then the gain at the two test frequencies the signal test
    /// proposes for the design (when the stage has a load and the jig can drive a tone).
    #[inline(never)]
    pub(super) fn cmd_test<W: Write>(&mut self, n: u16, r: &mut Reply<'_, W>) -> Outcome {
        let rd = self.measure(n)?;
        #[cfg_attr(not(feature = "signal-test"), expect(unused_mut))]
        let mut tones = super::parse::Tones::new();
        #[cfg(feature = "signal-test")]
        if self.settings.stage.rl.is_some() {
            if let Some(fs) = self.test_frequencies() {
                for f in fs {
                    match self.jig.gain(f) {
                        Ok(gain) => {
                            let _ = tones.push(crate::signaltest::ToneReading { f, gain });
                        }
                        Err(JigError::NotSupported) => break,
                        Err(e) => return Err(jig_fail(e)),
                    }
                }
            }
        }
        self.cmd_judge(rd, &tones, Source::Measured, r)
    }

    /// The two test frequencies of `test` (midband, then where the capacitors tell apart best),
    /// Hz; `None` when the signal test proposes none for this stage. Proposed once per stage,
    /// transistor and test settings: the proposal is kept with the settings it was made for and
    /// made again only when any of them differs (a `set`, `meter`, `*RST`, `pick`, `choose` or
    /// a load from the store), so it is the same as proposing every time.
    #[cfg(feature = "signal-test")]
    #[inline(never)]
    fn test_frequencies(&mut self) -> Option<[f64; 2]> {
        let st = &self.settings;
        let ts = st.test_settings();
        if let Some(p) = &self.proposed {
            if p.stage == st.stage && p.profile == st.profile && p.settings == ts {
                return p.frequencies;
            }
        }
        let frequencies =
            crate::signaltest::propose(&st.stage, &st.profile, &st.variation(), &ts.signal)
                .ok()
                .map(|p| [p.midband, p.poles]);
        self.proposed = Some(Proposed {
            stage: st.stage,
            profile: st.profile,
            settings: ts,
            frequencies,
        });
        frequencies
    }

    #[inline(never)]
    pub(super) fn measure(&mut self, samples: u16) -> Result<Readings, Fail> {
        let rd = self.jig.measure(samples).map_err(jig_fail)?;
        if ![rd.vcc, rd.vb, rd.ve, rd.vc].iter().all(|v| v.is_finite()) {
            return Err(Fail::new(
                Code::Jig,
                format_args!("the jig gave a reading that is not a number"),
            ));
        }
        self.readings = Some((rd, Source::Measured));
        Ok(rd)
    }
}

#[cfg(test)]
mod tests {
    use super::super::jig::{MemoryStore, NoJig};
    use super::super::{Clock, Console, Identity};
    use std::string::String;

    struct Still;

    impl Clock for Still {
        fn now_ms(&mut self) -> u64 {
            0
        }
    }

    fn console() -> Console<NoJig, MemoryStore, Still> {
        Console::new(
            Identity::new("console", "0"),
            NoJig,
            MemoryStore::default(),
            Still,
        )
    }

    fn reply(c: &mut Console<NoJig, MemoryStore, Still>, line: &str) -> String {
        let mut buf = [0u8; 8192];
        let mut out: &mut [u8] = &mut buf;
        let _ = c.line(line, &mut out);
        let left = out.len();
        let used = buf.len() - left;
        String::from_utf8_lossy(buf.get(..used).unwrap_or(&[])).into_owned()
    }

    /// The typed last check says what the machine-mode reply of the same `check` lists: the
    /// verdict, the first node out of its window and the first fault.
    #[test]
    fn last_check_matches_the_machine_reply() {
        let mut c = console();
        assert!(c.last_check().is_none());
        reply(&mut c, "mode machine");
        for (line, pass) in [
            ("check 12 1.95 1.3 11.6", false),
            ("check 12 1.95 1.3 6.2", true),
        ] {
            let text = reply(&mut c, line);
            let l = c.last_check().unwrap_or_else(|| panic!("{line}: {text}"));
            assert_eq!(l.pass(), pass, "{text}");
            assert!(
                text.contains(if pass { "verdict=pass" } else { "verdict=fail" }),
                "{text}"
            );
            let failing = text
                .split("\r\n")
                .find(|t| t.starts_with("node=") && t.ends_with(" ok=0"))
                .and_then(|t| t.strip_prefix("node="))
                .and_then(|t| t.split(' ').next());
            assert_eq!(l.first_failing().map(|n| n.node.name()), failing, "{text}");
            let fault = text
                .split("\r\n")
                .find_map(|t| t.strip_prefix("fault="))
                .map(|t| {
                    let mut w = t.split(' ');
                    let part = w.next().unwrap_or("");
                    let mode = w.next().and_then(|m| m.strip_prefix("mode=")).unwrap_or("");
                    (String::from(part), String::from(mode))
                });
            let typed = l.first_fault().map(|h| {
                (
                    String::from(h.suspect.part()),
                    String::from(h.suspect.mode()),
                )
            });
            assert_eq!(typed, fault, "{text}");
            assert_eq!(pass, fault.is_none(), "{text}");
            assert_eq!(l.explained().is_some(), !pass);
            assert_eq!(l.nodes().len(), text.matches("node=").count());
        }
    }

    /// The kept proposal is what proposing again gives, after every kind of settings change
    /// (a kept proposal for other settings would test the board at the wrong frequencies).
    #[cfg(feature = "signal-test")]
    #[test]
    fn kept_test_frequencies_follow_every_settings_change() {
        let mut c = console();
        let fresh = |c: &Console<NoJig, MemoryStore, Still>| {
            let st = c.settings();
            crate::signaltest::propose(
                &st.stage,
                &st.profile,
                &st.variation(),
                &st.test_settings().signal,
            )
            .ok()
            .map(|p| [p.midband, p.poles])
        };
        let first = c.test_frequencies();
        assert!(first.is_some());
        assert_eq!(first, fresh(&c));
        let mut seen = std::vec![first];
        for line in [
            "set ce 100u",
            "set rc 3.9k",
            "set rl 4.7k",
            "set temp-min -40",
            "set beta 80",
            "meter gain 2%",
            "set input-r none",
            "set rl none",
            "*RST",
        ] {
            let status = reply(&mut c, line);
            assert!(status.ends_with("ok\r\n"), "{line}: {status}");
            let kept = c.test_frequencies();
            assert_eq!(kept, fresh(&c), "{line}");
            // Asked again without a change: the same.
            assert_eq!(c.test_frequencies(), kept, "{line}");
            seen.push(kept);
        }
        // The changes moved the frequencies (the check above could not pass by a stale value).
        assert!(
            seen.windows(2).filter(|w| w[0] != w[1]).count() >= 3,
            "{seen:?}"
        );
    }
}
