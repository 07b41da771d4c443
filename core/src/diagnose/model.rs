//! The board under a hypothesis: the fixed parts of one diagnosis ([`Ctx`]) and the readings
//! predicted for a suspect at a part value and hFE, solved with the exact engine as the board is
//! read (the DC test set-up with the measuring inputs attached, and the gain at each test
//! frequency).

use super::covariance::Sym;
use super::{ResistorMode, Suspect, DIM, GAIN_SLOTS};
use crate::device::Profile;
#[cfg(feature = "signal-test")]
use crate::response;
use crate::response::{CapState, Caps};
use crate::settings::{ReadNode, TestSettings};
use crate::solve::{solve_from_single, Conditions, NodeLoads, OperatingPoint, StartSingle};
use crate::stage::{Capacitor, Fault, Resistor, Stage};

/// A load `r` (Ω) added in parallel with an existing one.
fn parallel_load(existing: Option<f64>, r: f64) -> Option<f64> {
    Some(existing.map_or(r, |e| crate::acnet::parallel(e, r)))
}

/// The fixed parts of one diagnosis.
pub(super) struct Ctx<'a> {
    /// The design at the measured supply.
    pub(super) stage: Stage,
    pub(super) profile: &'a Profile,
    /// The middle of the test ambient, °C.
    pub(super) temp_c: f64,
    /// VB, VE, VC and the gain readings, then zeros.
    pub(super) measured: [f64; DIM],
    /// Readings in use: 3 + the test frequencies.
    pub(super) n: usize,
    /// The test frequencies, Hz.
    pub(super) tones: [f64; GAIN_SLOTS],
    /// The test ambient, the meter and the signal meter, the measuring inputs attached while
    /// the nodes are read.
    pub(super) settings: TestSettings,
    /// Operating-point solves spent.
    pub(super) solves: u32,
    /// The last solution, where the next solve starts (successive solves differ a little).
    start: Option<StartSingle>,
}

/// A change to the board for a sensitivity solve.
#[derive(Clone, Copy)]
pub(super) enum Tweak {
    None,
    Scale(Resistor, f64),
    ScaleCap(Capacitor, f64),
    Temp(f64),
    Supply(f64),
}

impl<'a> Ctx<'a> {
    /// The design `stage` at the measured supply `vcc` (V), solved at the middle of the test
    /// ambient through the measuring inputs of `settings`; no readings yet (`n` = 3, zeros).
    pub(super) fn new(
        stage: &Stage,
        profile: &'a Profile,
        vcc: f64,
        settings: &TestSettings,
    ) -> Self {
        let mut at_supply = *stage;
        at_supply.vcc.value = vcc;
        Self {
            stage: at_supply,
            profile,
            temp_c: 0.5 * (settings.temp_min_c + settings.temp_max_c),
            measured: [0.0; DIM],
            n: 3,
            tones: [0.0; GAIN_SLOTS],
            settings: *settings,
            solves: 0,
            start: None,
        }
    }

    /// VB, VE, VC and the gains at the test frequencies for `suspect` with the part value
    /// `value` (low/high) and hFE `beta`.
    pub(super) fn predict(
        &mut self,
        suspect: Suspect,
        value: f64,
        beta: f64,
        tweak: Tweak,
    ) -> Option<[f64; DIM]> {
        let mut stage = self.stage;
        let mut temp_c = self.temp_c;
        match tweak {
            Tweak::None => {}
            Tweak::Scale(r, k) => stage.part_mut(r).value *= k,
            Tweak::ScaleCap(c, k) => match c {
                Capacitor::Cin => stage.cin.iter_mut().for_each(|p| p.value *= k),
                Capacitor::Cout => stage.cout.iter_mut().for_each(|p| p.value *= k),
                Capacitor::Ce => stage.ce.iter_mut().for_each(|p| p.value *= k),
            },
            Tweak::Temp(t) => temp_c = t,
            Tweak::Supply(v) => stage.vcc.value = v,
        }
        let mut caps = Caps::nominal(&stage);
        let (ac_stage, fault) = match suspect {
            Suspect::Good => (stage, None),
            Suspect::Resistor(r, ResistorMode::Open) => (stage.with_fault(Fault::Open(r)), None),
            Suspect::Resistor(r, ResistorMode::Short) => (stage.with_fault(Fault::Short(r)), None),
            Suspect::Resistor(r, _) => (stage.with_fault(Fault::Value(r, value)), None),
            Suspect::Device(d) => (stage, Some(d)),
            Suspect::Capacitor(c, m) => {
                *caps.get_mut(c) = match m {
                    ResistorMode::Open => CapState::Open,
                    ResistorMode::Short => CapState::Short,
                    _ => CapState::Fitted(value),
                };
                (stage, None)
            }
        };
        // The DC test set-up: the source's RS stays on the input and RL on the output, so a
        // shorted coupling capacitor loads the base (with RS) or the collector (with RL); a
        // shorted bypass capacitor shorts RE2.
        let mut loads = NodeLoads::NONE;
        let dc_stage = match suspect {
            Suspect::Capacitor(Capacitor::Ce, ResistorMode::Short) => {
                ac_stage.with_fault(Fault::Short(Resistor::Re2))
            }
            Suspect::Capacitor(Capacitor::Cin, ResistorMode::Short) => {
                if ac_stage.rs > 0.0 {
                    loads.base = parallel_load(loads.base, ac_stage.rs);
                    ac_stage
                } else {
                    // An ideal source holds the base at ground.
                    ac_stage.with_fault(Fault::Short(Resistor::R2))
                }
            }
            Suspect::Capacitor(Capacitor::Cout, ResistorMode::Short) => {
                if let Some(rl) = ac_stage.rl {
                    loads.collector = parallel_load(loads.collector, rl);
                }
                ac_stage
            }
            _ => ac_stage,
        };
        let cond = Conditions {
            temp_c,
            beta_25: beta,
            fault,
            loads: NodeLoads::NONE,
        };
        // The measuring inputs' loads, with the fault's own (a shorted coupling capacitor).
        let with = |l: NodeLoads| NodeLoads {
            base: match loads.base {
                Some(r) => parallel_load(l.base, r),
                None => l.base,
            },
            collector: match loads.collector {
                Some(r) => parallel_load(l.collector, r),
                None => l.collector,
            },
            emitter: l.emitter,
        };
        // Not through `Inputs::read_through`: its solve would be a closure called from four
        // places, kept out of line, and its frame would add to the instrument's deepest stack.
        let inputs = self.settings.inputs;
        let (vb, ve, vc, op) = match inputs.common_loads() {
            Some(l) => {
                let op = self.solve(&dc_stage, cond.loaded(with(l)))?;
                (op.vb, op.ve, op.vc, op)
            }
            None => {
                // Each node read with only its own input attached: one solve per node.
                let mut at =
                    |n: ReadNode| self.solve(&dc_stage, cond.loaded(with(inputs.loads_reading(n))));
                let b = at(ReadNode::Base)?;
                let ve = at(ReadNode::Emitter)?.ve;
                let vc = at(ReadNode::Collector)?.vc;
                (b.vb, ve, vc, b)
            }
        };
        let mut y = [0.0; DIM];
        for (slot, v) in y.iter_mut().zip([vb, ve, vc]) {
            *slot = v;
        }
        self.signal_readings(&mut y, &ac_stage, &op, &caps);
        Some(y)
    }

    /// The gains at the test frequencies into `y[3..n]`.
    #[cfg(feature = "signal-test")]
    fn signal_readings(&self, y: &mut [f64; DIM], stage: &Stage, op: &OperatingPoint, caps: &Caps) {
        let tones = self.n.saturating_sub(3);
        for (slot, f) in y.iter_mut().skip(3).zip(self.tones.iter()).take(tones) {
            *slot = response::magnitude_at(stage, op, caps, *f);
        }
    }

    /// Without the signal test there are no gain readings.
    #[cfg(not(feature = "signal-test"))]
    fn signal_readings(&self, _: &mut [f64; DIM], _: &Stage, _: &OperatingPoint, _: &Caps) {}

    /// One solve, started from the last one.
    #[inline(always)]
    fn solve(&mut self, stage: &Stage, cond: Conditions) -> Option<OperatingPoint> {
        self.solves = self.solves.saturating_add(1);
        let (op, next) = solve_from_single(stage, self.profile, cond, self.start.as_ref()).ok()?;
        self.start = Some(next);
        Some(op)
    }

    pub(super) fn chi2(&self, inv: &Sym, y: Option<[f64; DIM]>) -> f64 {
        match y {
            Some(y) => inv.quad(core::array::from_fn(|k| {
                self.measured.get(k).copied().unwrap_or(0.0) - y.get(k).copied().unwrap_or(0.0)
            })),
            None => f64::INFINITY,
        }
    }
}
