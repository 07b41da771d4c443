//! A board's measured node voltages against the pass windows: a verdict per node and overall,
//! and the quantities a technician derives from the readings (IE, IC, IB, hFE, VBE, VCE, region).
//!
//! Readings are first checked for plausibility: readings that cannot come from a powered,
//! correctly probed board (supply outside its window, a node above the supply or below ground
//! beyond the meter error, every node at the same voltage) are refused with a reason that tells
//! the technician what to fix, and are not judged.

use crate::limits::{derived_ic_through, Limits, Meter, Window};
use crate::settings::Inputs;
use crate::solve::Region;
use crate::stage::{Polarity, Readings, Stage};
use crate::units::Fixed;

/// How far the measured supply may sit from the nominal before the board counts as not properly
/// powered, as a fraction of the nominal (at least this, or the supply tolerance if wider).
pub const SUPPLY_SLACK: f64 = 0.25;
/// A fixed allowance added to the meter error in the plausibility checks, V (probe noise).
pub const PROBE_NOISE_V: f64 = 0.02;
/// |VCE| below which a conducting transistor counts as saturated, V (common practice: a small
/// signal transistor saturates at a few tenths of a volt).
pub const SATURATION_VCE: f64 = 0.3;
/// IC below this fraction of the stage's full-on current VCC/(RC + RE) counts as cut off.
pub const CUTOFF_FRACTION: f64 = 0.01;

/// The nodes (measured, or derived from the readings) are the spread's: the check judges six of
/// them, [`JUDGED`].
pub use crate::spread::Node;

/// Every judged node, in report order.
pub const JUDGED: [Node; 6] = [Node::Vb, Node::Ve, Node::Vc, Node::Vbe, Node::Vce, Node::Ic];

/// One node judged against its window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NodeVerdict {
    /// Which node.
    pub node: Node,
    /// The measured (or derived) value, V or A.
    pub measured: f64,
    /// Lowest passing value, V or A.
    pub low: f64,
    /// Highest passing value, V or A.
    pub high: f64,
    /// Inside the window.
    pub ok: bool,
}

/// Quantities derived from the readings with the nominal resistor values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Derived {
    /// Emitter current from VE and RE1 + RE2, A (`None` without an emitter resistor).
    pub ie: Option<f64>,
    /// Collector current from the collector resistor's drop, A.
    pub ic: f64,
    /// Base current from the divider currents (KCL at the base), A.
    pub ib: f64,
    /// hFE estimate IC/IB (`None` when IB is too small to resolve with the meter).
    pub beta: Option<f64>,
    /// VB − VE, V (signed).
    pub vbe: f64,
    /// VC − VE, V (signed).
    pub vce: f64,
    /// Region judged from VCE and IC.
    pub region: Region,
}

/// The check of one board.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Verdict {
    /// Every node inside its window.
    pub pass: bool,
    /// Per-node verdicts in the order of [`JUDGED`].
    pub nodes: [NodeVerdict; 6],
    /// Derived quantities.
    pub derived: Derived,
}

impl Verdict {
    /// The nodes outside their windows.
    pub fn failing(&self) -> impl Iterator<Item = &NodeVerdict> {
        self.nodes.iter().filter(|n| !n.ok)
    }
}

/// Why readings were refused before judgement; each says what the technician should fix.
#[derive(Debug, Clone, Copy, PartialEq)]
#[non_exhaustive]
pub enum Implausible {
    /// A reading is not a finite number.
    NotFinite,
    /// The supply is outside its window (V measured, low, high): check the supply and its probe.
    Supply {
        /// Measured supply, V.
        measured: f64,
        /// Lowest plausible supply, V.
        low: f64,
        /// Highest plausible supply, V.
        high: f64,
    },
    /// A node reads above the supply beyond the meter error.
    AboveSupply(Node),
    /// A node reads below ground beyond the meter error.
    BelowGround(Node),
    /// VB, VE and VC read the same: a probe or the ground lead is open.
    AllEqual,
}

impl core::fmt::Display for Implausible {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            Self::NotFinite => f.write_str("a reading is not a number: read every node again"),
            Self::Supply {
                measured,
                low,
                high,
            } => write!(
                f,
                "the supply reads {} V, outside {} V to {} V: check that the board is powered \
                 at the right voltage and the supply probe is on",
                Fixed(*measured, 3),
                Fixed(*low, 3),
                Fixed(*high, 3)
            ),
            Self::AboveSupply(n) => write!(
                f,
                "{} reads above the supply: check the probes (swapped leads, or the supply \
                 probe not on the supply rail)",
                n.label()
            ),
            Self::BelowGround(n) => write!(
                f,
                "{} reads below ground: check the ground lead and the probe polarity",
                n.label()
            ),
            Self::AllEqual => f.write_str(
                "VB, VE and VC all read the same: a probe or the jig's ground lead is open; \
                 reseat the board and the ground lead",
            ),
        }
    }
}

/// Every reading is a finite number.
pub fn finite(r: &Readings) -> Result<(), Implausible> {
    if [r.vcc, r.vb, r.ve, r.vc].iter().all(|v| v.is_finite()) {
        Ok(())
    } else {
        Err(Implausible::NotFinite)
    }
}

/// The supply window in which a board counts as powered: the nominal ± the larger of the
/// supply tolerance and [`SUPPLY_SLACK`], widened by the meter error, V.
pub fn supply_window(stage: &Stage, meter: &Meter) -> Window {
    let nominal = stage.vcc.value;
    let slack = if stage.vcc.tol > SUPPLY_SLACK {
        stage.vcc.tol
    } else {
        SUPPLY_SLACK
    };
    let err = meter.error(nominal);
    Window {
        low: nominal * (1.0 - slack) - err,
        high: nominal * (1.0 + slack) + err,
    }
}

/// Refuse readings that cannot come from a powered, correctly probed board.
pub fn plausible(stage: &Stage, meter: &Meter, r: &Readings) -> Result<(), Implausible> {
    finite(r)?;
    let w = supply_window(stage, meter);
    if !w.contains(r.vcc) {
        return Err(Implausible::Supply {
            measured: r.vcc,
            low: w.low,
            high: w.high,
        });
    }
    let slack = |v: f64| 2.0 * (meter.error(v) + meter.error(r.vcc)) + PROBE_NOISE_V;
    for (node, v) in [(Node::Vb, r.vb), (Node::Ve, r.ve), (Node::Vc, r.vc)] {
        if v > r.vcc + slack(v) {
            return Err(Implausible::AboveSupply(node));
        }
        if v < -(2.0 * meter.error(v) + PROBE_NOISE_V) {
            return Err(Implausible::BelowGround(node));
        }
    }
    // Identical to the meter's resolution (its fixed offset), not merely close: single faults
    // such as a collector-emitter short can put all three nodes within a few tens of millivolts.
    let same = |a: f64, b: f64| libm::fabs(a - b) <= 2.0 * meter.offset;
    if same(r.vb, r.ve) && same(r.ve, r.vc) && same(r.vb, r.vc) {
        return Err(Implausible::AllEqual);
    }
    Ok(())
}

/// IE, IC, IB, hFE, VBE, VCE and the region from the readings and the nominal resistors.
pub fn derive(stage: &Stage, meter: &Meter, r: &Readings) -> Derived {
    derive_through(stage, meter, &Inputs::IDEAL, r)
}

/// [`derive()`] for readings taken through measuring inputs: each input's own current (the node
/// voltage over its resistance) is taken out of the currents at its node.
pub fn derive_through(stage: &Stage, meter: &Meter, inputs: &Inputs, r: &Readings) -> Derived {
    // The current an input draws from a node at `v`, A (0 for an ideal meter).
    let drawn = |v: f64| inputs.r.map_or(0.0, |rin| v / rin);
    let re = stage.re_total();
    let ie = if re > 0.0 && re.is_finite() {
        Some(match stage.polarity {
            Polarity::Npn => r.ve / re + drawn(r.ve),
            Polarity::Pnp => (r.vcc - r.ve) / re - drawn(r.ve),
        })
    } else {
        None
    };
    let ic = derived_ic_through(stage, inputs, r.vcc, r.vc);
    let (r1, r2) = (stage.r1.value, stage.r2.value);
    let i_r1 = (r.vcc - r.vb) / r1;
    let i_r2 = r.vb / r2;
    // Positive in the direction of normal operation: into the base of an NPN, out of a PNP's.
    let ib = match stage.polarity {
        Polarity::Npn => i_r1 - i_r2 - drawn(r.vb),
        Polarity::Pnp => i_r2 - i_r1 + drawn(r.vb),
    };
    // What the meter can resolve of IB: the base-voltage error through both divider resistors.
    let ib_resolution = meter.error(r.vb) * (1.0 / r1 + 1.0 / r2)
        + meter.error(r.vcc) / r1
        + drawn(meter.error(r.vb));
    let beta = if ib > 2.0 * ib_resolution && ic > 0.0 {
        Some(ic / ib)
    } else {
        None
    };
    let vbe = r.vb - r.ve;
    let vce = r.vc - r.ve;
    let full_on = r.vcc / (stage.rc.value + re);
    let region = if ic.is_nan() || ic <= CUTOFF_FRACTION * full_on {
        Region::Cutoff
    } else if libm::fabs(vce) < SATURATION_VCE {
        Region::Saturation
    } else {
        Region::Active
    };
    Derived {
        ie,
        ic,
        ib,
        beta,
        vbe,
        vce,
        region,
    }
}

/// Judge the readings against the limits (evaluated at the measured supply).
///
/// Refuses implausible readings first (see [`plausible`]).
pub fn check(
    stage: &Stage,
    limits: &Limits,
    meter: &Meter,
    r: &Readings,
) -> Result<Verdict, Implausible> {
    check_through(stage, limits, meter, &Inputs::IDEAL, r)
}

/// [`check`] for readings taken through measuring inputs (the limits must be computed with the
/// same inputs): the derived quantities take the inputs' currents out ([`derive_through`]).
pub fn check_through(
    stage: &Stage,
    limits: &Limits,
    meter: &Meter,
    inputs: &Inputs,
    r: &Readings,
) -> Result<Verdict, Implausible> {
    plausible(stage, meter, r)?;
    let derived = derive_through(stage, meter, inputs, r);
    let judge = |node: Node, measured: f64, w: Window| NodeVerdict {
        node,
        measured,
        low: w.low,
        high: w.high,
        ok: w.contains(measured),
    };
    let nodes = [
        judge(Node::Vb, r.vb, limits.vb),
        judge(Node::Ve, r.ve, limits.ve),
        judge(Node::Vc, r.vc, limits.vc),
        judge(Node::Vbe, derived.vbe, limits.vbe),
        judge(Node::Vce, derived.vce, limits.vce),
        judge(Node::Ic, derived.ic, limits.ic),
    ];
    let pass = nodes.iter().all(|n| n.ok);
    Ok(Verdict {
        pass,
        nodes,
        derived,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::stage::Part;

    fn stage() -> Stage {
        // An invented stage: 15 V, 56k/12k divider, 3.3k collector, 680 + 330 emitter.
        Stage {
            polarity: Polarity::Npn,
            vcc: Part::new(15.0, 0.0),
            r1: Part::new(56e3, 0.05),
            r2: Part::new(12e3, 0.05),
            rc: Part::new(3.3e3, 0.05),
            re1: Part::new(680.0, 0.05),
            re2: Part::new(330.0, 0.05),
            rl: None,
            rs: 0.0,
            cin: None,
            cout: None,
            ce: None,
        }
    }

    fn wide() -> Limits {
        let w = |low, high| Window { low, high };
        Limits {
            vcc: 15.0,
            vb: w(2.0, 3.0),
            ve: w(1.4, 2.3),
            vc: w(6.0, 10.0),
            vce: w(4.0, 8.0),
            vbe: w(0.5, 0.8),
            ic: w(1.2e-3, 2.6e-3),
        }
    }

    #[test]
    fn derived_quantities_follow_ohms_law_and_kcl() {
        let r = Readings {
            vcc: 15.0,
            vb: 2.5,
            ve: 1.85,
            vc: 8.4,
        };
        let d = derive(&stage(), &Meter::default(), &r);
        // Ohm's law and KCL at the base (common practice: IB = I(R1) − I(R2)).
        assert!((d.ie.unwrap() - 1.85 / 1010.0).abs() < 1e-12);
        assert!((d.ic - 6.6 / 3300.0).abs() < 1e-12);
        assert!((d.ib - (12.5 / 56e3 - 2.5 / 12e3)).abs() < 1e-15);
        assert!((d.beta.unwrap() - d.ic / d.ib).abs() < 1e-9);
        assert_eq!(d.region, Region::Active);
        let v = check(&stage(), &wide(), &Meter::default(), &r).unwrap();
        assert!(v.pass);
        assert_eq!(v.failing().count(), 0);
    }

    #[test]
    fn currents_read_through_inputs_leave_out_the_inputs_own() {
        // KCL at each node (common practice): the input at a node draws V/R of its current.
        let r = Readings {
            vcc: 15.0,
            vb: 2.5,
            ve: 1.85,
            vc: 8.4,
        };
        let rin = 110e3;
        let inputs = Inputs {
            r: Some(rin),
            mode: crate::settings::InputMode::Together,
        };
        let bare = derive(&stage(), &Meter::default(), &r);
        let d = derive_through(&stage(), &Meter::default(), &inputs, &r);
        assert!((d.ib - (bare.ib - 2.5 / rin)).abs() < 1e-15);
        assert!((d.ic - (bare.ic - 8.4 / rin)).abs() < 1e-15);
        assert!((d.ie.unwrap() - (bare.ie.unwrap() + 1.85 / rin)).abs() < 1e-15);
    }

    #[test]
    fn a_node_outside_its_window_fails() {
        let r = Readings {
            vcc: 15.0,
            vb: 2.5,
            ve: 1.85,
            vc: 14.9,
        };
        let v = check(&stage(), &wide(), &Meter::default(), &r).unwrap();
        assert!(!v.pass);
        let bad: Vec<_> = v.failing().map(|n| n.node).collect();
        assert!(
            bad.contains(&Node::Vc) && bad.contains(&Node::Ic),
            "{bad:?}"
        );
        assert_eq!(v.derived.region, Region::Cutoff);
    }

    #[test]
    fn implausible_readings_are_refused() {
        let s = stage();
        let m = Meter::default();
        let ok = Readings {
            vcc: 15.0,
            vb: 2.5,
            ve: 1.85,
            vc: 8.4,
        };
        assert_eq!(plausible(&s, &m, &ok), Ok(()));
        let low_supply = Readings { vcc: 3.0, ..ok };
        assert!(matches!(
            plausible(&s, &m, &low_supply),
            Err(Implausible::Supply { .. })
        ));
        let above = Readings { vc: 16.0, ..ok };
        assert_eq!(
            plausible(&s, &m, &above),
            Err(Implausible::AboveSupply(Node::Vc))
        );
        let below = Readings { ve: -0.4, ..ok };
        assert_eq!(
            plausible(&s, &m, &below),
            Err(Implausible::BelowGround(Node::Ve))
        );
        let equal = Readings {
            vb: 0.001,
            ve: 0.0,
            vc: 0.002,
            ..ok
        };
        assert_eq!(plausible(&s, &m, &equal), Err(Implausible::AllEqual));
        let nan = Readings { vb: f64::NAN, ..ok };
        assert_eq!(plausible(&s, &m, &nan), Err(Implausible::NotFinite));
        // A node a little below ground within the meter error is accepted.
        let shorted_re = Readings { ve: -0.003, ..ok };
        assert_eq!(plausible(&s, &m, &shorted_re), Ok(()));
        // The supply exactly on its rail and a collector at the rail are accepted.
        let rail = Readings { vc: 15.01, ..ok };
        assert_eq!(plausible(&s, &m, &rail), Ok(()));
    }

    #[test]
    fn pnp_currents_run_the_other_way() {
        let mut s = stage();
        s.polarity = Polarity::Pnp;
        // R1 from the supply to the base, R2 from the base to ground.
        let r = Readings {
            vcc: 15.0,
            vb: 12.5,
            ve: 13.15,
            vc: 6.6,
        };
        let d = derive(&s, &Meter::default(), &r);
        assert!((d.ie.unwrap() - 1.85 / 1010.0).abs() < 1e-12);
        assert!((d.ic - 6.6 / 3300.0).abs() < 1e-12);
        assert!((d.ib - (12.5 / 12e3 - 2.5 / 56e3)).abs() < 1e-15);
        assert!(d.vbe < 0.0 && d.vce < 0.0);
        assert_eq!(d.region, Region::Active);
    }
}
