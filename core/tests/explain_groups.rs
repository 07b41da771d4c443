//! Fault wording for faults that share their readings (issue 11, item 7): every group the
//! diagnosis produces is named on its first line with an in-circuit separating action, and the
//! lines under it lead each member, followed as a technician would, to itself.
//!
//! The in-circuit rules the walk assumes (common practice): with the power off, a part reads its
//! value unless it is faulty (parallel paths through the other parts are blocked by the
//! transistor's junctions when the higher of the two lead directions is taken), except that CE
//! lies across RE2: a shorted or leaky CE makes RE2 read low until one end of CE is lifted.

#![cfg(feature = "fault-detail")]

use biasjig_core::diagnose::{diagnose, ResistorMode, Suspect};
use biasjig_core::explain::{listing, Group, Listed, Member};
use biasjig_core::limits::Meter;
use biasjig_core::solve::{solve, Conditions};
use biasjig_core::spread::Variation;
use biasjig_core::stage::{Fault, Part, Resistor};
use biasjig_testkit::fixtures::{dc_designs as designs, readings, readings_of};
use biasjig_testkit::rng::Rng;
use biasjig_testkit::sweep::all_faults;

/// What the technician's meter shows for `part` when `truth` is the fault: -1 below its band,
/// +1 above, 0 within.
fn reading(part: &str, truth: Member, ce_lifted: bool) -> i32 {
    match truth {
        Member::Fault(Suspect::Resistor(r, m)) if r.name() == part => match m {
            ResistorMode::Low | ResistorMode::Short => -1,
            ResistorMode::High | ResistorMode::Open => 1,
        },
        Member::CeShorted | Member::CeLeaky if part == "RE2" && !ce_lifted => -1,
        _ => 0,
    }
}

fn words(m: Member) -> (String, String) {
    match m {
        Member::Fault(Suspect::Resistor(r, mode)) => (
            r.name().to_string(),
            match mode {
                ResistorMode::Open => "open",
                ResistorMode::Short => "shorted",
                ResistorMode::Low => "too low",
                ResistorMode::High => "too high",
            }
            .to_string(),
        ),
        Member::CeShorted => ("CE".into(), "shorted".into()),
        Member::CeLeaky => ("CE".into(), "leaky".into()),
        other => ("Q".into(), other.to_string()),
    }
}

/// Follow the outcome lines for `truth`; the names the first matching line gives.
fn follow(outcomes: &[String], truth: Member) -> String {
    for l in outcomes {
        if let Some(rest) = l.strip_prefix("otherwise: ") {
            return rest.to_string();
        }
        if let Some((_, rest)) = l.split_once(" with CE lifted: ") {
            let (ce, re2) = rest.split_once("; still below: ").expect("both results");
            return if reading("RE2", truth, true) < 0 {
                re2
            } else {
                ce
            }
            .to_string();
        }
        if let Some(rest) = l.strip_prefix("a junction open, shorted or the wrong way round: ") {
            if matches!(truth, Member::Fault(Suspect::Device(_))) {
                return rest.to_string();
            }
            continue;
        }
        let (cond, names) = l.split_once(": ").expect("condition: names");
        let mut w = cond.split(' ');
        let part = w.next().unwrap();
        let r = reading(part, truth, false);
        let hit = match w.next().unwrap() {
            "below" => r < 0,
            "above" => r > 0,
            "off" => r != 0,
            other => panic!("unknown condition {other:?} in {l:?}"),
        };
        assert!(
            !(part == "RE2" && matches!(truth, Member::CeShorted | Member::CeLeaky)),
            "RE2 measured with CE in circuit: {l}"
        );
        if hit {
            return names.split("; otherwise ").next().unwrap().to_string();
        }
    }
    panic!("no outcome line for {truth} in {outcomes:?}");
}

#[test]
fn a_ce_short_is_named_with_re2_short_and_ce_is_lifted_first() {
    // A shorted CE bypasses RE2 at DC: the readings are those of RE2 shorted.
    let (_, s, p) = designs().remove(0);
    let r = readings_of(&s, &p, p.beta_typ, Some(Fault::Short(Resistor::Re2))).unwrap();
    let d = diagnose(&s, &p, &r, &Meter::default(), &Variation::at(25.0)).unwrap();
    let items: Vec<Listed> = d.faults().take(6).map(|h| Listed::of(&d, h)).collect();
    let mut lines = Vec::new();
    listing(&s, d.explained, &items, &mut |a| lines.push(a.to_string()));
    let first = &lines[1];
    assert!(first.starts_with("1. "), "{lines:#?}");
    assert!(
        first.contains("RE2 shorted") && first.contains("CE shorted"),
        "the group is named: {lines:#?}"
    );
    assert!(
        first.contains("power off, lift one end of CE and measure RE2"),
        "{lines:#?}"
    );
    assert!(
        !lines.iter().any(|l| l.contains("measure RE2 in circuit")),
        "RE2 is never measured with CE in circuit: {lines:#?}"
    );
    assert!(
        lines[2].contains("with CE lifted: CE shorted"),
        "{lines:#?}"
    );
}

#[test]
fn every_group_gets_an_in_circuit_action_that_leads_each_member_to_itself() {
    let meter = Meter::default();
    let var = Variation::at(25.0);
    let mut rng = Rng::new(0x00C1_2C17);
    let mut seen = std::collections::BTreeSet::new();
    for (name, design, prof) in designs() {
        for beta in [prof.beta_min, prof.beta_typ, prof.beta_max] {
            for (_, f) in all_faults(&design, &mut rng) {
                let Some(r) = readings_of(&design, &prof, beta, Some(f)) else {
                    continue;
                };
                let d = diagnose(&design, &prof, &r, &meter, &var).unwrap();
                for h in d.faults().take(6) {
                    let l = Listed::of(&d, h);
                    let g = Group::of(std::iter::once(l.suspect).chain(l.same.iter().copied()));
                    if !g.is_shared() {
                        continue;
                    }
                    let mut key: Vec<String> = g.members().iter().map(|m| m.to_string()).collect();
                    key.sort();
                    seen.insert(key.join(" | "));
                    // The group's own listing: first line and the lines under it.
                    let mut lines = Vec::new();
                    listing(&design, true, std::slice::from_ref(&l), &mut |a| {
                        lines.push(a.to_string())
                    });
                    let first = &lines[1];
                    for m in g.members() {
                        let (part, mode) = words(*m);
                        assert!(
                            first.contains(&part) && first.contains(&mode),
                            "{name}: {m} named on the first line: {first}"
                        );
                    }
                    assert!(first.contains("power off"), "{name}: {first}");
                    // A reading in circuit comes with what it proves.
                    if first.contains("in circuit measure") {
                        assert!(
                            lines
                                .last()
                                .unwrap()
                                .starts_with("In circuit, parallel parts"),
                            "{name}: {lines:#?}"
                        );
                    }
                    // One console line (200 bytes) even with the command line's indentation.
                    assert!(lines.iter().all(|l| l.len() <= 196), "{name}: {lines:#?}");
                    let outcomes: Vec<String> = lines[2..]
                        .iter()
                        .map(|l| l.trim().to_string())
                        .filter(|l| !l.starts_with("closest fit") && !l.starts_with("In circuit"))
                        .collect();
                    let parts: std::collections::BTreeSet<String> =
                        g.members().iter().map(|m| words(*m).0).collect();
                    if parts.len() == 1 {
                        assert!(first.contains("either way"), "{name}: {first}");
                        assert!(outcomes.is_empty(), "{name}: {lines:?}");
                        continue;
                    }
                    for m in g.members() {
                        let verdict = follow(&outcomes, *m);
                        let (part, mode) = words(*m);
                        assert!(
                            verdict.contains(&part) && verdict.contains(&mode),
                            "{name}: {m} followed the lines to {verdict:?}: {lines:#?}"
                        );
                    }
                }
            }
        }
    }
    println!(
        "{} groups:\n{}",
        seen.len(),
        seen.iter().cloned().collect::<Vec<_>>().join("\n")
    );
    // Every group of the census (RE1/RE2, R1/R2, RC/emitter, RE2/CE ...) was met.
    assert!(seen.len() >= 15, "{seen:?}");
    assert!(seen.iter().any(|g| g.contains("CE shorted")), "{seen:?}");
}

/// What the technician's capacitance reading of `cap` (one end lifted) shows when `truth` is
/// the fault: "open" (next to nothing), "small" (below its band), "short" (a short on the ohms
/// range) or "" (its value).
fn cap_reading(cap: &str, truth: Member) -> &'static str {
    match truth {
        Member::Fault(Suspect::Capacitor(c, m)) if c.name() == cap => match m {
            ResistorMode::Open => "open",
            ResistorMode::Low => "small",
            ResistorMode::Short | ResistorMode::High => "short",
        },
        _ => "",
    }
}

/// Follow the lines of a group with capacitors for `truth` (the capacitance step's results
/// first, then the rules of [`follow`]).
fn follow_caps(outcomes: &[String], truth: Member) -> String {
    for (k, l) in outcomes.iter().enumerate() {
        let part = l.split(' ').next().unwrap_or("");
        if !matches!(part, "CIN" | "COUT" | "CE") || l.contains(" with CE lifted: ") {
            continue;
        }
        for seg in l.split("; ") {
            let Some((cond, names)) = seg.split_once(": ") else {
                continue;
            };
            let want = cap_reading(part, truth);
            let hit = (cond.contains("next to nothing") && want == "open")
                || (cond.contains(" below ") && want == "small")
                || (cond.contains("shorted on the ohms range") && want == "short");
            if hit {
                return names.to_string();
            }
        }
        // Not this capacitor: the other lines.
        let rest: Vec<String> = outcomes
            .iter()
            .enumerate()
            .filter(|(j, _)| *j != k)
            .map(|(_, l)| l.clone())
            .collect();
        if matches!(truth, Member::Fault(Suspect::Capacitor(..))) {
            continue;
        }
        return follow(&rest, truth);
    }
    follow(outcomes, truth)
}

/// Capacitor faults read with the signal test (the DC readings and the gains at two tones, as
/// the diagnosis predicts them): every group with a capacitor is named on its first line, a
/// real CE short stands in for the implied one (named once), and the lines under it lead each
/// member to itself.
#[test]
fn capacitor_groups_with_signal_readings_lead_each_member_to_itself() {
    use biasjig_core::diagnose::diagnose_with_signal;
    use biasjig_core::response::{gain_at, CapState, Caps};
    use biasjig_core::signaltest::{SignalMeter, ToneReading};
    use biasjig_core::stage::Capacitor;

    let (_, mut s, p) = designs().remove(0);
    s.rs = 600.0;
    s.rl = Some(10e3);
    s.cin = Some(Part::new(10e-6, 0.2));
    s.cout = Some(Part::new(10e-6, 0.2));
    s.ce = Some(Part::new(100e-6, 0.2));
    let freqs = [20.0, 1e3];
    let mut seen = std::collections::BTreeSet::new();
    let mut cases: Vec<(Capacitor, CapState)> = Vec::new();
    for c in Capacitor::ALL {
        let v = s.capacitor(c).unwrap().value;
        cases.push((c, CapState::Open));
        cases.push((c, CapState::Fitted(v * 0.05)));
    }
    cases.push((Capacitor::Ce, CapState::Short));
    for (c, state) in cases {
        // At DC a shorted CE is RE2 shorted; the other capacitor faults leave DC alone.
        let dc = if state == CapState::Short {
            s.with_fault(Fault::Short(Resistor::Re2))
        } else {
            s
        };
        let op = solve(&dc, &p, Conditions::typical(&p)).unwrap();
        let caps = Caps::nominal(&s).with(c, state);
        let tones: Vec<ToneReading> = freqs
            .iter()
            .map(|&f| ToneReading {
                f,
                gain: gain_at(&s, &op, &caps, f).unwrap().magnitude(),
            })
            .collect();
        let r = readings(&op);
        let d = diagnose_with_signal(
            &s,
            &p,
            &r,
            &tones,
            &Meter::default(),
            &SignalMeter::DEFAULT,
            &Variation::at(25.0),
        )
        .unwrap();
        for h in d.faults().take(6) {
            let l = Listed::of(&d, h);
            let g = Group::of(std::iter::once(l.suspect).chain(l.same.iter().copied()));
            if !g
                .members()
                .iter()
                .any(|m| matches!(m, Member::Fault(Suspect::Capacitor(..))))
                || !g.is_shared()
            {
                continue;
            }
            let names: Vec<String> = g.members().iter().map(|m| m.to_string()).collect();
            assert!(
                names.iter().filter(|n| *n == "CE shorted").count() <= 1,
                "CE shorted named twice: {names:?}"
            );
            seen.insert(names.join(" | "));
            let mut lines = Vec::new();
            listing(&s, true, std::slice::from_ref(&l), &mut |a| {
                lines.push(a.to_string())
            });
            let first = &lines[1];
            assert!(first.contains("power off"), "{lines:#?}");
            for m in g.members() {
                assert!(
                    first.contains(&m.to_string()),
                    "{m} on the first line: {first}"
                );
            }
            let outcomes: Vec<String> = lines[2..]
                .iter()
                .map(|l| l.trim().to_string())
                .filter(|l| {
                    !l.starts_with("closest fit")
                        && !l.starts_with("In circuit")
                        && !l.contains("tells them apart")
                })
                .collect();
            for m in g.members() {
                let verdict = follow_caps(&outcomes, *m);
                assert!(
                    verdict.contains(&m.to_string()),
                    "{m} followed the lines to {verdict:?}: {lines:#?}"
                );
            }
        }
    }
    println!(
        "{} capacitor groups:\n{}",
        seen.len(),
        seen.iter().cloned().collect::<Vec<_>>().join("\n")
    );
    assert!(!seen.is_empty(), "no capacitor group met");
}
