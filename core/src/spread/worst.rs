//! The worst case over the corners of the factor box, and the corner walks other layers use.

use crate::device::Profile;
use crate::settings::Inputs;
use crate::solve::{Conditions, OperatingPoint};
use crate::stage::Stage;

use super::factors::{apply, draw_of, ends, evaluate, Box8, FACTORS};
use super::{validate, Node, Nodes, Range, Sample, SpreadError, Variation};

/// How the worst case picks its corners.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    /// Every corner when there are at most `max_corners` of them, else the vertex method.
    Auto {
        /// Largest number of corners solved exhaustively.
        max_corners: u16,
    },
    /// Every corner.
    Exhaustive,
    /// Corners from the signs of the sensitivities, confirmed by solving their neighbours.
    Vertex,
}

impl Default for Method {
    /// Exhaustive up to 512 corners (every case with the eight factors here).
    fn default() -> Self {
        Self::Auto { max_corners: 512 }
    }
}

/// The worst case of every node.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WorstCase {
    /// Range of each node over the corners solved (and the centre).
    pub nodes: Nodes<Range>,
    /// Number of solves it took.
    pub solves: u32,
    /// Whether every corner was solved (`false`: vertex method).
    pub exhaustive: bool,
    /// Number of factors that vary.
    pub factors: u8,
}

/// Largest number of passes of the vertex method's neighbour search per node and direction.
const VERTEX_PASSES: u8 = 3;

/// The worst case of every node over the corners of the factor box (see the module notes).
pub fn worst_case(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    method: Method,
) -> Result<WorstCase, SpreadError> {
    validate(stage, profile, var)?;
    let b = Box8::new(stage, profile, var);
    worst_case_in(stage, profile, &b, method, true, &var.inputs)
}

fn active_mask(b: &Box8) -> u16 {
    (0..FACTORS)
        .filter(|k| b.active(*k))
        .fold(0u16, |m, k| m | (1 << k))
}

/// Enumerate the subsets of `mask` (every corner over the active factors).
fn for_each_corner(
    mask: u16,
    mut f: impl FnMut(u16) -> Result<(), SpreadError>,
) -> Result<(), SpreadError> {
    let mut sub: u16 = 0;
    loop {
        f(sub)?;
        if sub == mask {
            return Ok(());
        }
        sub = (sub.wrapping_sub(mask)) & mask;
    }
}

fn worst_case_in(
    stage: &Stage,
    profile: &Profile,
    b: &Box8,
    method: Method,
    signal: bool,
    inputs: &Inputs,
) -> Result<WorstCase, SpreadError> {
    let mask = active_mask(b);
    let n = mask.count_ones();
    let corners = 1u32 << n;
    let exhaustive = match method {
        Method::Exhaustive => true,
        Method::Vertex => false,
        Method::Auto { max_corners } => corners <= u32::from(max_corners),
    };
    let mut nodes: Nodes<Range> = Nodes::default();
    let mut solves = 0u32;
    let mut record = |s: &Sample, solves: &mut u32| {
        *solves += 1;
        for node in Node::ALL {
            nodes.get_mut(node).include(*s.values.get(node));
        }
    };
    let centre = evaluate(stage, profile, &draw_of(&b.centre), signal, inputs)?;
    record(&centre, &mut solves);
    if exhaustive {
        for_each_corner(mask, |c| {
            let s = evaluate(stage, profile, &draw_of(&b.corner(c, 0)), signal, inputs)?;
            record(&s, &mut solves);
            Ok(())
        })?;
    } else {
        // Signs of the half-range effects, one factor at a time from the centre.
        let mut up: Nodes<u16> = Nodes::default();
        for k in (0..FACTORS).filter(|k| mask & (1 << k) != 0) {
            let (lo, hi) = ends(stage, profile, b, k, signal, inputs)?;
            record(&lo, &mut solves);
            record(&hi, &mut solves);
            for node in Node::ALL {
                if hi.values.get(node) > lo.values.get(node) {
                    *up.get_mut(node) |= 1 << k;
                }
            }
        }
        for node in Node::ALL {
            for want_max in [false, true] {
                let start = if want_max {
                    *up.get(node)
                } else {
                    mask & !*up.get(node)
                };
                let value = |s: &Sample| {
                    let v = *s.values.get(node);
                    if want_max {
                        v
                    } else {
                        -v
                    }
                };
                let mut best_corner = start;
                let first = evaluate(
                    stage,
                    profile,
                    &draw_of(&b.corner(start, 0)),
                    signal,
                    inputs,
                )?;
                record(&first, &mut solves);
                let mut best = value(&first);
                for _ in 0..VERTEX_PASSES {
                    let mut improved = false;
                    for k in (0..FACTORS).filter(|k| mask & (1 << k) != 0) {
                        let c = best_corner ^ (1 << k);
                        let s =
                            evaluate(stage, profile, &draw_of(&b.corner(c, 0)), signal, inputs)?;
                        record(&s, &mut solves);
                        if value(&s) > best {
                            best = value(&s);
                            best_corner = c;
                            improved = true;
                        }
                    }
                    if !improved {
                        break;
                    }
                }
            }
        }
    }
    Ok(WorstCase {
        nodes,
        solves,
        exhaustive,
        factors: n as u8,
    })
}

/// Every corner of the factor box with the supply fixed at `vcc` (V, tolerance zero), DC only:
/// `f(sample)` for each. Returns the number of solves.
pub(crate) fn each_corner_at_supply(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    vcc: f64,
    mut f: impl FnMut(&Sample),
) -> Result<u32, SpreadError> {
    walk_at_supply(stage, profile, var, vcc, |s, x| {
        f(&evaluate(s, profile, &draw_of(x), false, &var.inputs)?);
        Ok(())
    })
}

/// Every corner of the factor box with the supply fixed at `vcc` (V, tolerance zero), and the
/// centre first: `f(drawn stage, conditions, operating point)` for each, the operating point in
/// single precision (for the gain windows). Returns the number of
/// solves.
pub(crate) fn each_corner_solved(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    vcc: f64,
    mut f: impl FnMut(&Stage, &Conditions, &OperatingPoint),
) -> Result<u32, SpreadError> {
    // Each corner's operating point in single precision, started from the last corner's: what
    // is taken from it here is the small-signal two-port behind a gain window (within 1e-4 of
    // the double-precision one, core/tests/solve_single.rs; the gain meter's error is 2 %).
    let mut start = None;
    walk_at_supply(stage, profile, var, vcc, |s, x| {
        let (drawn, cond) = apply(s, &draw_of(x));
        let (op, next) = crate::solve::solve_from_single(&drawn, profile, cond, start.as_ref())?;
        start = Some(next);
        f(&drawn, &cond, &op);
        Ok(())
    })
}

/// The centre and then every corner of the factor box of `stage` with the supply fixed at `vcc`
/// (V, tolerance zero): `one(stage, point)` for each. Returns the number of points.
fn walk_at_supply(
    stage: &Stage,
    profile: &Profile,
    var: &Variation,
    vcc: f64,
    mut one: impl FnMut(&Stage, &[f64; FACTORS]) -> Result<(), SpreadError>,
) -> Result<u32, SpreadError> {
    let mut s = *stage;
    s.vcc.value = vcc;
    s.vcc.tol = 0.0;
    validate(&s, profile, var)?;
    let b = Box8::new(&s, profile, var);
    let mut solves = 0u32;
    one(&s, &b.centre)?;
    solves += 1;
    for_each_corner(active_mask(&b), |c| {
        one(&s, &b.corner(c, 0))?;
        solves += 1;
        Ok(())
    })?;
    Ok(solves)
}
