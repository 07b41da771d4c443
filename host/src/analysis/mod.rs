//! The report's figures, per design hash (never merged): boards (distinct serials), tests,
//! first-pass and final yield, per station and lot, failing serials, the fault Pareto (single
//! faults, groups of equivalent faults and unexplained boards apart), capability referred to the
//! nominal supply, individuals charts per node in test order, and the rework loop's accuracy.
//!
//! Tests are fed one at a time in any order ([`Analysis::add`]): what depends on order (a
//! board's first and last test, the chart's order) is kept by each test's (time, arrival) key,
//! so a store streamed in order and logs read file by file give the same figures.

pub mod charts;
pub mod render;
pub mod stats;

use std::collections::{BTreeMap, BTreeSet, HashMap};

use crate::record::{BoardRecord, Outcome, RepairRecord};

/// The nodes with windows, in report order.
pub const NODES: [&str; 6] = ["vb", "ve", "vc", "vbe", "vce", "ic"];

/// A test's place in test order: (time in ms, arrival).
type Key = (i64, u64);

/// First and last test of a board (in one group).
#[derive(Debug, Clone, Copy)]
struct Board {
    first: (Key, Outcome),
    last: (Key, Outcome),
}

impl Board {
    fn new(k: Key, o: Outcome) -> Self {
        Self {
            first: (k, o),
            last: (k, o),
        }
    }

    fn add(&mut self, k: Key, o: Outcome) {
        if k < self.first.0 {
            self.first = (k, o);
        }
        if k >= self.last.0 {
            self.last = (k, o);
        }
    }
}

/// Boards and tests of a group (the whole design, one station, one lot).
#[derive(Debug, Clone, Default)]
pub struct Group {
    boards: HashMap<String, Board>,
    /// Tests in the group.
    pub tests: u64,
}

impl Group {
    fn add(&mut self, serial: &str, k: Key, o: Outcome) {
        self.tests += 1;
        match self.boards.get_mut(serial) {
            Some(b) => b.add(k, o),
            None => {
                self.boards.insert(serial.to_string(), Board::new(k, o));
            }
        }
    }

    /// Distinct serials.
    pub fn boards(&self) -> u64 {
        self.boards.len() as u64
    }

    /// Boards whose first test passed / boards.
    pub fn first_pass_yield(&self) -> f64 {
        self.share(|b| b.first.1 == Outcome::Pass)
    }

    /// Boards whose last test passed / boards.
    pub fn final_yield(&self) -> f64 {
        self.share(|b| b.last.1 == Outcome::Pass)
    }

    fn share(&self, f: impl Fn(&Board) -> bool) -> f64 {
        if self.boards.is_empty() {
            return f64::NAN;
        }
        self.boards.values().filter(|b| f(b)).count() as f64 / self.boards.len() as f64
    }

    /// Serials whose last test did not pass, sorted.
    pub fn failing(&self) -> Vec<String> {
        let mut v: Vec<String> = self
            .boards
            .iter()
            .filter(|(_, b)| b.last.1 != Outcome::Pass)
            .map(|(s, _)| s.clone())
            .collect();
        v.sort();
        v
    }

    /// Boards that failed first and passed last (reworked or retested good).
    pub fn recovered(&self) -> u64 {
        self.boards
            .values()
            .filter(|b| b.first.1 != Outcome::Pass && b.last.1 == Outcome::Pass)
            .count() as u64
    }
}

/// A failed board's diagnosis, for the Pareto (its first failing test).
#[derive(Debug, Clone)]
struct Diagnosed {
    key: Key,
    /// "unexplained", or the sorted list of part/mode of the first fault and its equivalents.
    class: Vec<(String, String)>,
    explained: bool,
}

/// Referred readings of a board's first test, when it passed.
#[derive(Debug, Clone)]
struct FirstReadings {
    key: Key,
    pass: bool,
    serial: String,
    values: [Option<f64>; 6],
}

/// What the rework loop matched to a repair: the diagnosis of the board's last failed test
/// before the repair.
#[derive(Debug, Clone)]
struct Matched {
    key: Key,
    design: String,
    first: bool,
    top3: bool,
}

/// Counts by name, most first.
pub type Counts = Vec<(String, u64)>;

/// The figures of one design.
#[derive(Debug, Clone, Default)]
pub struct Design {
    /// Design hash.
    pub hash: String,
    /// Design ids seen with this hash.
    pub ids: BTreeSet<String>,
    /// All tests of the design.
    pub all: Group,
    /// Per station.
    pub stations: BTreeMap<String, Group>,
    /// Per lot ("" for none).
    pub lots: BTreeMap<String, Group>,
    /// Earliest and latest test time, ms.
    pub span: Option<(i64, i64)>,
    /// Tests refused before judgement.
    pub refused_tests: u64,
    /// Nominal supply of the windows the readings were referred to, V.
    pub nominal_vcc: Option<f64>,
    /// Nominal windows per node (from the records).
    pub nominal: [Option<(f64, f64)>; 6],
    /// Readings that could not be referred (a record without nominal windows).
    pub unreferred: u64,
    diagnosed: HashMap<String, Diagnosed>,
    first: HashMap<String, FirstReadings>,
}

impl Design {
    /// Pareto of failed boards: (single faults, groups, unexplained boards), most first.
    pub fn pareto(&self) -> (Counts, Counts, u64) {
        let mut single: BTreeMap<String, u64> = BTreeMap::new();
        let mut groups: BTreeMap<String, u64> = BTreeMap::new();
        let mut unexplained = 0;
        for d in self.diagnosed.values() {
            if !d.explained {
                unexplained += 1;
                continue;
            }
            let name: Vec<String> = d.class.iter().map(|(p, m)| format!("{p} {m}")).collect();
            let slot = if d.class.len() > 1 {
                &mut groups
            } else {
                &mut single
            };
            *slot.entry(name.join(" | ")).or_default() += 1;
        }
        let sort = |m: BTreeMap<String, u64>| {
            let mut v: Vec<_> = m.into_iter().collect();
            v.sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(&b.0)));
            v
        };
        (sort(single), sort(groups), unexplained)
    }

    /// The first test of each board that passed, in test order: the serials and, per node
    /// (in [`NODES`] order), the readings referred to the nominal supply with the index of their
    /// serial.
    pub fn first_pass(&self) -> (Vec<String>, Vec<Vec<(usize, f64)>>) {
        let mut firsts: Vec<&FirstReadings> = self.first.values().filter(|f| f.pass).collect();
        firsts.sort_by_key(|f| f.key);
        let serials = firsts.iter().map(|f| f.serial.clone()).collect();
        let per_node = (0..NODES.len())
            .map(|k| {
                firsts
                    .iter()
                    .enumerate()
                    .filter_map(|(i, f)| f.values.get(k).copied().flatten().map(|x| (i, x)))
                    .collect()
            })
            .collect();
        (serials, per_node)
    }
}

/// The rework loop's figures.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Rework {
    /// Repairs recorded.
    pub repairs: u64,
    /// Repairs matched to a failed test of the board before them.
    pub matched: u64,
    /// The diagnosis named the repaired fault first (or its group).
    pub named_first: u64,
    /// The repaired fault was among the first three named.
    pub in_top_three: u64,
}

/// Every design's figures.
#[derive(Debug, Default)]
pub struct Analysis {
    /// Designs in order of first appearance.
    pub designs: Vec<Design>,
    index: HashMap<String, usize>,
    arrival: u64,
    repairs: Vec<RepairRecord>,
    by_serial: HashMap<String, Vec<usize>>,
    matched: Vec<Option<Matched>>,
}

impl Analysis {
    /// An analysis that will match failed tests to these repairs.
    pub fn with_repairs(repairs: Vec<RepairRecord>) -> Self {
        let mut by_serial: HashMap<String, Vec<usize>> = HashMap::new();
        for (k, r) in repairs.iter().enumerate() {
            by_serial.entry(r.serial.clone()).or_default().push(k);
        }
        Self {
            matched: vec![None; repairs.len()],
            repairs,
            by_serial,
            ..Self::default()
        }
    }

    /// Add one whole test.
    pub fn add(&mut self, r: &BoardRecord) {
        self.arrival += 1;
        let key = (r.time_ms(), self.arrival);
        let k = match self.index.get(&r.design.hash) {
            Some(k) => *k,
            None => {
                self.designs.push(Design {
                    hash: r.design.hash.clone(),
                    ..Design::default()
                });
                self.index
                    .insert(r.design.hash.clone(), self.designs.len() - 1);
                self.designs.len() - 1
            }
        };
        let Some(d) = self.designs.get_mut(k) else {
            return;
        };
        d.ids.insert(r.design.id.clone());
        d.all.add(&r.serial, key, r.verdict);
        d.stations
            .entry(r.station.clone())
            .or_default()
            .add(&r.serial, key, r.verdict);
        d.lots
            .entry(r.lot.clone().unwrap_or_default())
            .or_default()
            .add(&r.serial, key, r.verdict);
        d.span = Some(match d.span {
            None => (key.0, key.0),
            Some((a, b)) => (a.min(key.0), b.max(key.0)),
        });
        if r.verdict == Outcome::Refused {
            d.refused_tests += 1;
        }
        if r.verdict == Outcome::Fail {
            let explained = r.explained != Some(false) && !r.faults.is_empty();
            let class = r.faults.first().map_or(Vec::new(), |f| {
                let mut c: Vec<(String, String)> =
                    std::iter::once((f.part.clone(), f.mode.clone()))
                        .chain(
                            f.equivalent
                                .iter()
                                .map(|e| (e.part.clone(), e.mode.clone())),
                        )
                        .collect();
                c.sort();
                c.dedup();
                c
            });
            let newer = d.diagnosed.get(&r.serial).is_none_or(|old| key < old.key);
            if newer {
                d.diagnosed.insert(
                    r.serial.clone(),
                    Diagnosed {
                        key,
                        class,
                        explained,
                    },
                );
            }
        }
        let earlier = d.first.get(&r.serial).is_none_or(|old| key < old.key);
        if earlier {
            let values = refer_all(d, r);
            d.first.insert(
                r.serial.clone(),
                FirstReadings {
                    key,
                    pass: r.verdict == Outcome::Pass,
                    serial: r.serial.clone(),
                    values,
                },
            );
        }
        if r.verdict == Outcome::Fail {
            self.match_repairs(r, key);
        }
    }

    fn match_repairs(&mut self, r: &BoardRecord, key: Key) {
        let Some(list) = self.by_serial.get(&r.serial) else {
            return;
        };
        for &k in list {
            let (Some(rep), Some(slot)) = (self.repairs.get(k), self.matched.get_mut(k)) else {
                continue;
            };
            if key.0 > rep.time_ms() || slot.as_ref().is_some_and(|m| m.key > key) {
                continue;
            }
            let named = |n: usize| {
                r.faults
                    .iter()
                    .take(n)
                    .any(|f| f.names(&rep.part, &rep.mode))
            };
            *slot = Some(Matched {
                key,
                design: r.design.hash.clone(),
                first: r.explained != Some(false) && named(1),
                top3: named(3),
            });
        }
    }

    /// The rework figures of one design (all repairs when `design` is `None`).
    pub fn rework(&self, design: Option<&str>) -> Rework {
        let mut w = Rework::default();
        for m in &self.matched {
            match m {
                Some(m) if design.is_none_or(|d| d == m.design) => {
                    w.repairs += 1;
                    w.matched += 1;
                    w.named_first += u64::from(m.first);
                    w.in_top_three += u64::from(m.top3);
                }
                None if design.is_none() => w.repairs += 1,
                _ => {}
            }
        }
        w
    }
}

/// The readings of a record referred to the nominal supply, per node.
fn refer_all(d: &mut Design, r: &BoardRecord) -> [Option<f64>; 6] {
    let mut out = [None; 6];
    let nominal = r.nominal.as_ref();
    if let Some(n) = nominal {
        d.nominal_vcc.get_or_insert(n.vcc);
    } else if r.verdict != Outcome::Refused {
        d.unreferred += 1;
    }
    for (k, name) in NODES.iter().enumerate() {
        let Some(j) = r.nodes.get(*name) else {
            continue;
        };
        let (Some(x), Some(lo), Some(hi)) = (j.measured, j.low, j.high) else {
            continue;
        };
        let (lo0, hi0) = match nominal.and_then(|n| n.windows.get(*name)) {
            Some(e) => (e.low, e.high),
            None => (lo, hi),
        };
        if let Some(slot) = d.nominal.get_mut(k) {
            slot.get_or_insert((lo0, hi0));
        }
        if let Some(o) = out.get_mut(k) {
            *o = Some(stats::refer(x, lo, hi, lo0, hi0));
        }
    }
    out
}
