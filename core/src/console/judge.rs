//! The commands that judge a board and spread a stage: `check`, `test`, `diagnose` and
//! `spread`.
//!
//! `check` and `test` call the one judging path of `biasjig check`, [`crate::judge::judge`], with
//! the console's stage, transistor and test settings (ambient, meter, measuring inputs).
#![expect(
    clippy::result_large_err,
    reason = "an outcome carries its status text in a fixed buffer, with no allocation"
)]

use core::fmt::Write as _;

use embedded_io::Write;

use super::commands::{show_readings, Num, Opt};
use super::jig::{Clock, Jig, Store};
use super::parse::Tones;
use super::reply::{Fail, Outcome, Reply, Text};
use super::{Code, Console, Source, MAX_OUT_LINE};
use crate::check::{NodeVerdict, Verdict};
use crate::diagnose::{Diagnosis, Hypothesis};
use crate::explain::{listing, Listed};
use crate::judge::JudgeError;
#[cfg(feature = "monte-carlo")]
use crate::spread::McSettings;
#[cfg(feature = "spread")]
use crate::spread::{self, Method, SpreadError};
use crate::stage::Readings;
use crate::units::{Eng, Fixed};

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

/// The status of a board the judging path did not judge.
pub(super) fn judge_fail(e: JudgeError) -> Fail {
    let code = match e {
        JudgeError::Implausible(_) | JudgeError::Supply { .. } => Code::Implausible,
        JudgeError::Settings(_) | JudgeError::Stage(_) | JudgeError::NotActive(_) => Code::Range,
        _ => Code::Solve,
    };
    Fail::new(code, format_args!("{e}"))
}

#[cfg(feature = "spread")]
fn spread_fail(what: &str, e: SpreadError) -> Fail {
    let code = match e {
        SpreadError::Solve(_) => Code::Solve,
        _ => Code::Range,
    };
    Fail::new(code, format_args!("{what}: {e}"))
}

impl<J: Jig, S: Store, C: Clock> Console<J, S, C> {
    /// Judge readings through the one judging path ([`crate::judge::verdict`], then for a failed
    /// board [`crate::judge::diagnosis_into`]: the steps of [`crate::judge::judge`]; the supply window,
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

    fn verdict_line<W: Write>(l: &LastCheck, r: &mut Reply<'_, W>) {
        let word = if l.verdict.pass { "pass" } else { "fail" };
        match &l.diagnosis {
            Some(d) => r.data(format_args!(
                "verdict={word} explained={}",
                u8::from(d.explained)
            )),
            None => r.data(format_args!("verdict={word}")),
        }
    }

    /// The last check: readings, verdict, nodes, derived quantities and the likely faults.
    #[inline(never)]
    pub(super) fn show_check<W: Write>(&self, r: &mut Reply<'_, W>) {
        let Some(l) = &self.last else { return };
        show_readings(&l.readings, l.source, r);
        let v = &l.verdict;
        let dv = &v.derived;
        if r.machine() {
            Self::verdict_line(l, r);
            for n in &v.nodes {
                r.data(format_args!(
                    "node={} measured={} low={} high={} ok={}",
                    n.node.name(),
                    Num(n.measured),
                    Num(n.low),
                    Num(n.high),
                    u8::from(n.ok)
                ));
            }
            for t in &l.tones {
                r.data(format_args!(
                    "ac f={} measured={} low={} high={} ok={}",
                    Num(t.reading.f),
                    Num(t.reading.gain),
                    Num(t.window.low),
                    Num(t.window.high),
                    u8::from(t.ok)
                ));
            }
            r.data(format_args!(
                "derived ic={} ib={} ie={} vbe={} vce={} beta={} region={}",
                Num(dv.ic),
                Num(dv.ib),
                Opt(dv.ie),
                Num(dv.vbe),
                Num(dv.vce),
                Opt(dv.beta),
                dv.region.name()
            ));
        } else {
            let failing = v.failing().count();
            if v.pass {
                r.data(format_args!("PASS   every node inside its window"));
            } else {
                r.data(format_args!(
                    "FAIL   {failing} of {} out of window",
                    v.nodes.len()
                ));
            }
            for n in &v.nodes {
                let u = n.node.unit();
                r.data(format_args!(
                    "{:<4} {:<10} window {} to {}{}",
                    n.node.label(),
                    Eng::new(n.measured, u),
                    Eng::new(n.low, u),
                    Eng::new(n.high, u),
                    if n.ok { "" } else { "   OUT" }
                ));
            }
            for t in &l.tones {
                r.data(format_args!(
                    "gain at {}: {} window {} to {}{}",
                    Eng::new(t.reading.f, "Hz"),
                    Fixed(t.reading.gain, 3),
                    Fixed(t.window.low, 3),
                    Fixed(t.window.high, 3),
                    if t.ok { "" } else { "   OUT" }
                ));
            }
            let mut beta = Text::default();
            match dv.beta {
                Some(b) => {
                    let _ = write!(beta, "{}", Fixed(b, 0));
                }
                None => {
                    let _ = beta.write_str("-");
                }
            }
            r.data(format_args!(
                "IC {}, IB {}, hFE {}, VBE {}, VCE {}, {}",
                Eng::new(dv.ic, "A"),
                Eng::new(dv.ib, "A"),
                beta.as_str(),
                Eng::new(dv.vbe, "V"),
                Eng::new(dv.vce, "V"),
                dv.region.name()
            ));
        }
        if let Some(d) = &l.diagnosis {
            self.show_faults(d, r);
        }
    }

    #[inline(never)]
    fn show_faults<W: Write>(&self, d: &Diagnosis, r: &mut Reply<'_, W>) {
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
    fn show_fault_words<W: Write>(&self, d: &Diagnosis, r: &mut Reply<'_, W>) {
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
        if r.machine() {
            Self::verdict_line(l, r);
        }
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

#[cfg(test)]
mod tests {
    use super::super::jig::{MemoryStore, NoJig};
    use super::super::{Clock, Console, Identity};
    use std::string::String;
    use std::vec::Vec;

    struct Still;

    impl Clock for Still {
        fn now_ms(&mut self) -> u64 {
            0
        }
    }

    struct Out(Vec<u8>);

    impl embedded_io::ErrorType for Out {
        type Error = core::convert::Infallible;
    }

    impl embedded_io::Write for Out {
        fn write(&mut self, buf: &[u8]) -> Result<usize, Self::Error> {
            self.0.extend_from_slice(buf);
            Ok(buf.len())
        }
        fn flush(&mut self) -> Result<(), Self::Error> {
            Ok(())
        }
    }

    fn reply(c: &mut Console<NoJig, MemoryStore, Still>, line: &str) -> String {
        let mut out = Out(Vec::new());
        let _ = c.line(line, &mut out);
        String::from_utf8(out.0).unwrap_or_default()
    }

    /// The typed last check says what the machine-mode reply of the same `check` lists: the
    /// verdict, the first node out of its window and the first fault.
    #[test]
    fn last_check_matches_the_machine_reply() {
        let mut c = Console::new(
            Identity::new("console", "0"),
            NoJig,
            MemoryStore::default(),
            Still,
        );
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
}
