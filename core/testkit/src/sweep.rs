//! The seeded check-and-diagnose sweeps' shared parts: the faults a board can have, whether a
//! diagnosis names the true one, and the tally printed as a confusion table.

use std::collections::BTreeMap;

use biasjig_core::diagnose::{Diagnosis, Hypothesis, ResistorMode, Suspect};
use biasjig_core::limits::{Limits, Window};
use biasjig_core::stage::{DeviceFault, Fault, Readings, Resistor, Stage};

use crate::rng::Rng;

/// Every single fault of `s` with the suspect that names it: each fitted resistor open,
/// shorted, low and high (the factors drawn from `rng`), and each transistor fault.
pub fn all_faults(s: &Stage, rng: &mut Rng) -> Vec<(Suspect, Fault)> {
    let mut v = Vec::new();
    for r in Resistor::ALL {
        let nominal = s.resistor(r);
        if nominal == 0.0 {
            continue;
        }
        v.push((Suspect::Resistor(r, ResistorMode::Open), Fault::Open(r)));
        v.push((Suspect::Resistor(r, ResistorMode::Short), Fault::Short(r)));
        let low = rng.pick(&[0.1, 0.5, 0.3, 0.01, 0.2]);
        v.push((
            Suspect::Resistor(r, ResistorMode::Low),
            Fault::Value(r, nominal * low),
        ));
        let high = rng.pick(&[10.0, 2.0, 3.0, 100.0, 5.0]);
        v.push((
            Suspect::Resistor(r, ResistorMode::High),
            Fault::Value(r, nominal * high),
        ));
    }
    for d in DeviceFault::ALL {
        v.push((Suspect::Device(d), Fault::Device(d)));
    }
    v
}

/// A board's fault: none on one board in five, else one of `faults` (drawn after that choice).
pub fn draw_fault<T: Copy>(rng: &mut Rng, faults: impl FnOnce(&mut Rng) -> Vec<T>) -> Option<T> {
    if rng.unit() < 0.2 {
        None
    } else {
        let list = faults(rng);
        Some(rng.pick(&list))
    }
}

/// A board of `design`: the supply within ±`supply` (fraction) of nominal, every resistor
/// anywhere in its tolerance (drawn in that order).
pub fn in_tolerance(design: &Stage, supply: f64, rng: &mut Rng) -> Stage {
    let mut board = *design;
    board.vcc.value = design.vcc.value * rng.range(1.0 - supply, 1.0 + supply);
    for r in Resistor::ALL {
        let p = board.part_mut(r);
        p.value *= 1.0 + p.tol * rng.range(-1.0, 1.0);
    }
    board
}

/// `clean` with up to ±`noise` (V) on each reading, drawn VCC, VB, VE, VC.
pub fn with_noise(clean: &Readings, noise: f64, rng: &mut Rng) -> Readings {
    Readings {
        vcc: clean.vcc + rng.range(-noise, noise),
        vb: clean.vb + rng.range(-noise, noise),
        ve: clean.ve + rng.range(-noise, noise),
        vc: clean.vc + rng.range(-noise, noise),
    }
}

/// Whether the noise-free readings `clean` leave a node window of `lim` (VB, VE or VC) by more
/// than `by` (V): a fault the check can see through that much noise.
pub fn leaves_a_window(clean: &Readings, lim: &Limits, by: f64) -> bool {
    let margin = |v: f64, w: Window| (w.low - v).max(v - w.high);
    [
        margin(clean.vb, lim.vb),
        margin(clean.ve, lim.ve),
        margin(clean.vc, lim.vc),
    ]
    .iter()
    .any(|m| *m > by)
}

/// Whether the fault listed at `rank` is `truth` or has it among its equivalents.
pub fn in_group(d: &Diagnosis, rank: usize, truth: Suspect) -> bool {
    let faults: Vec<_> = d.faults().collect();
    match faults.get(rank) {
        Some(h) => h.suspect == truth || d.equivalents(h).any(|e| e.suspect == truth),
        None => false,
    }
}

/// A suspect as `PART mode`.
pub fn label(s: Suspect) -> String {
    format!("{} {}", s.part(), s.mode())
}

/// A percentage `a` of `b` (0 when `b` is 0).
pub fn pct(a: u32, b: u32) -> f64 {
    100.0 * f64::from(a) / f64::from(b.max(1))
}

/// With `SWEEP_DETAIL` set: a line on a board whose true fault `truth` (placed as `fault`) was
/// not picked first: the fit of the true fault and of the pick (chi², estimate and `more` of
/// each), then `tail`.
pub fn print_detail(
    name: &str,
    truth: Suspect,
    fault: &dyn core::fmt::Debug,
    d: &Diagnosis,
    more: impl Fn(&Hypothesis) -> String,
    tail: &str,
) {
    if std::env::var_os("SWEEP_DETAIL").is_none() {
        return;
    }
    let fit = |h: Option<&Hypothesis>| {
        h.map_or("none".to_string(), |h| {
            format!(
                "{} chi2 {} est {:?} {}",
                label(h.suspect),
                h.chi2,
                h.estimate,
                more(h)
            )
        })
    };
    println!(
        "{name} truth {fault:?} -> {} | pick {} | {tail}",
        fit(d.ranked.iter().find(|h| h.suspect == truth)),
        fit(d.faults().next())
    );
}

/// One row of the confusion table: the boards of one true fault.
#[derive(Debug, Default)]
pub struct Row {
    /// Boards with this fault.
    pub boards: u32,
    /// Of those, the ones whose fault shows beyond the noise.
    pub detectable: u32,
    /// Of those, the ones that failed.
    pub failed: u32,
    /// Diagnosed with the true fault first (or in the first one's group).
    pub first: u32,
    /// Diagnosed with the true fault within the first three.
    pub top3: u32,
    /// The first picks when not the true fault, by design and suspect.
    pub wrong: BTreeMap<String, u32>,
}

/// The counts of a sweep.
#[derive(Debug, Default)]
pub struct Tally {
    /// The rows by true fault.
    pub table: BTreeMap<String, Row>,
    /// Good boards, and of those the ones that passed.
    pub good: u32,
    /// Good boards that passed.
    pub good_pass: u32,
    /// Faulty boards whose fault shows beyond the noise.
    pub detectable: u32,
    /// Of those, the ones that failed.
    pub detectable_fail: u32,
    /// Failed boards diagnosed.
    pub ranked: u32,
    /// Diagnosed with the true fault first (or in the first one's group).
    pub first: u32,
    /// Diagnosed with the true fault within the first three.
    pub top3: u32,
    /// Solves of all diagnoses.
    pub solves_all: u64,
}

impl Tally {
    /// The row of `truth`.
    pub fn row(&mut self, truth: Suspect) -> &mut Row {
        self.table.entry(label(truth)).or_default()
    }

    /// Count the diagnosis `d` of a failed board of design `name` whose true fault is `truth`;
    /// whether the true fault came first.
    pub fn rank(&mut self, name: &str, truth: Suspect, d: &Diagnosis) -> bool {
        self.solves_all += u64::from(d.solves);
        self.ranked += 1;
        let is_first = in_group(d, 0, truth);
        let is_top3 = (0..3).any(|k| in_group(d, k, truth));
        self.first += u32::from(is_first);
        self.top3 += u32::from(is_top3);
        let row = self.row(truth);
        row.first += u32::from(is_first);
        row.top3 += u32::from(is_top3);
        if !is_first {
            let pick = d
                .faults()
                .next()
                .map_or("none".to_string(), |h| label(h.suspect));
            *row.wrong.entry(format!("{name}:{pick}")).or_default() += 1;
        }
        is_first
    }

    /// Print the confusion table (with the detectable column when `detectable` is set).
    pub fn print_table(&self, detectable: bool) {
        let cols = if detectable {
            "boards, detectable, failed, first, top 3"
        } else {
            "boards, failed, first, top 3"
        };
        println!("\nconfusion table (true fault: {cols}, wrong first picks)");
        for (k, row) in &self.table {
            let wrong: Vec<_> = row.wrong.iter().map(|(k, n)| format!("{k}×{n}")).collect();
            let det = if detectable {
                format!(" {:>4}", row.detectable)
            } else {
                String::new()
            };
            println!(
                "{k:<14} {:>4}{det} {:>4} {:>4} {:>4}  {}",
                row.boards,
                row.failed,
                row.first,
                row.top3,
                wrong.join(" ")
            );
        }
    }

    /// Per cent of good boards that passed, of detectable faults that failed, of diagnoses
    /// with the true fault first and within three.
    pub fn rates(&self) -> [f64; 4] {
        [
            pct(self.good_pass, self.good),
            pct(self.detectable_fail, self.detectable),
            pct(self.first, self.ranked),
            pct(self.top3, self.ranked),
        ]
    }

    /// Print the confusion table and the summary; the rates of [`Tally::rates`].
    pub fn report(&self, detectable_column: bool) -> [f64; 4] {
        self.print_table(detectable_column);
        let rates = self.rates();
        let [good_rate, detected_rate, first_rate, top3_rate] = rates;
        println!(
            "good boards pass {}/{} ({good_rate:.1} %); detectable faults fail {}/{} \
             ({detected_rate:.1} %)",
            self.good_pass, self.good, self.detectable_fail, self.detectable
        );
        println!(
            "true fault first or in its group {}/{} ({first_rate:.1} %), within three {}/{} \
             ({top3_rate:.1} %); {:.0} solves per diagnosis on average",
            self.first,
            self.ranked,
            self.top3,
            self.ranked,
            self.solves_all as f64 / f64::from(self.ranked.max(1))
        );
        rates
    }
}
