//! The console's judging and design commands against the core functions they front: `check`,
//! `test`, `diagnose`, `requirement`, `design`, `pick`, `spread` and their errors.
//!
//! Every expected number here comes from calling the same core function directly; the console
//! prints shortest round-trip decimals, so the numbers compare exactly.

// The design, spread and fault-detail commands are tested where the build has them; a budget
// build without them is tested to say so.
#![cfg_attr(
    not(all(
        feature = "synthesis",
        feature = "monte-carlo",
        feature = "fault-detail"
    )),
    allow(unused_imports)
)]

use biasjig_core::check;
use biasjig_core::console::jig::{MemoryStore, NoJig};
use biasjig_core::console::record::design_hash;
use biasjig_core::console::{
    default_profile, default_requirement, default_stage, Code, Console, Num,
};
use biasjig_core::design;
use biasjig_core::diagnose::diagnose;
use biasjig_core::limits::{limits, Meter};
use biasjig_core::spread::{self, McSettings, Method, Variation};
use biasjig_core::stage::{DeviceFault, Fault, Polarity, Readings, Resistor};
use biasjig_testkit::session::{
    assert_contains, assert_values, cmd, console_with, default_readings as readings_of, err, errs,
    line, num, ok, oks, value, EngineJig, FixedClock,
};

type Fake = Console<EngineJig, MemoryStore, FixedClock>;

/// A console on the engine's board (no measuring inputs, no signal test).
fn console() -> Fake {
    console_with("0.1.0", EngineJig::default(), FixedClock)
}

/// The same in machine mode.
fn machine_console() -> Fake {
    let mut c = console();
    ok(&mut c, "mode machine");
    c
}

fn check_line(r: &Readings) -> String {
    format!("check {} {} {} {}", r.vcc, r.vb, r.ve, r.vc)
}

#[test]
fn a_good_board_passes_with_the_core_windows() {
    let mut c = machine_console();
    let stage = default_stage();
    let rd = readings_of(&stage, None);
    let d = ok(&mut c, &check_line(&rd));
    assert_eq!(
        d[0],
        format!("vcc=12 vb={} ve={} vc={} source=typed", rd.vb, rd.ve, rd.vc)
    );
    assert_eq!(d[1], "verdict=pass");
    let lim = limits(
        &stage,
        &default_profile(),
        &Variation::at(25.0),
        &Meter::default(),
        rd.vcc,
    )
    .unwrap();
    let v = check::check(&stage, &lim, &Meter::default(), &rd).unwrap();
    assert!(v.pass);
    for n in &v.nodes {
        let l = line(&d, &format!("node={} ", n.node.name()));
        assert_eq!(
            l,
            format!(
                "node={} measured={} low={} high={} ok=1",
                n.node.name(),
                Num(n.measured),
                Num(n.low),
                Num(n.high)
            )
        );
    }
    assert_eq!(num(&d, "derived", "ic"), v.derived.ic);
    assert_eq!(num(&d, "derived", "ib"), v.derived.ib);
    assert_eq!(
        value(&[line(&d, "derived").to_owned()], "beta"),
        v.derived.beta.map_or("none".into(), |b| Num(b).to_string())
    );
    assert_eq!(value(&d, "region"), "active");
    assert!(!d.iter().any(|l| l.starts_with("fault=")), "{d:?}");
    // The readings are kept as typed.
    assert_eq!(value(&ok(&mut c, "readings"), "source"), "typed");
    // diagnose of a passing board.
    let (dd, s) = cmd(&mut c, "diagnose");
    assert_eq!(dd, ["verdict=pass"]);
    assert_eq!(s, "ok the board passed: nothing to diagnose");
    // Human mode: a verdict for a glance.
    ok(&mut c, "mode human");
    let h = ok(&mut c, &check_line(&rd)).join("\n");
    assert_contains(&h, &["PASS", "window", "hFE"]);
}

#[test]
fn a_faulty_board_fails_and_names_the_core_diagnosis() {
    let stage = default_stage();
    let profile = default_profile();
    for (fault, part, mode) in [
        (Fault::Open(Resistor::R2), "R2", "open"),
        (Fault::Short(Resistor::Rc), "RC", "short"),
        (Fault::Device(DeviceFault::BeOpen), "Q", "be_open"),
    ] {
        let mut c = console();
        ok(&mut c, "mode machine");
        let rd = readings_of(&stage, Some(fault));
        let d = ok(&mut c, &check_line(&rd));
        assert!(d[1].starts_with("verdict=fail explained="), "{d:?}");
        let dg = diagnose(
            &stage,
            &profile,
            &rd,
            &Meter::default(),
            &Variation::at(25.0),
        )
        .unwrap();
        let listed: Vec<_> = dg.faults().take(6).collect();
        let shown: Vec<&String> = d.iter().filter(|l| l.starts_with("fault=")).collect();
        assert_eq!(shown.len(), listed.len());
        for (l, h) in shown.iter().zip(&listed) {
            let eq: Vec<String> = dg
                .equivalents(h)
                .filter(|e| e.suspect.is_fault())
                .map(|e| format!("{}:{}", e.suspect.part(), e.suspect.mode()))
                .collect();
            let want = format!(
                "fault={} mode={} score={} estimate={} equivalent={}",
                h.suspect.part(),
                h.suspect.mode(),
                Num(h.score),
                h.estimate
                    .map_or("none".to_string(), |e| Num(e).to_string()),
                if eq.is_empty() {
                    "none".to_string()
                } else {
                    eq.join(",")
                }
            );
            assert_eq!(**l, want);
        }
        // The true fault is named first or in the first one's equivalent group.
        let first = shown[0];
        assert!(
            first.starts_with(&format!("fault={part} mode={mode} "))
                || first.contains(&format!("{part}:{mode}")),
            "{fault:?}: {first}"
        );
        // diagnose shows the same faults again.
        let again = ok(&mut c, "diagnose");
        assert_eq!(again[0], d[1]);
        assert_eq!(
            again.iter().skip(1).collect::<Vec<_>>(),
            shown,
            "diagnose repeats the faults"
        );
        ok(&mut c, "mode human");
        let h = ok(&mut c, "diagnose").join("\n");
        assert!(
            h.contains("Likely faults") || h.contains("No single fault"),
            "{h}"
        );
        assert!(h.contains("1. "), "{h}");
    }
}

#[test]
fn a_decade_slip_is_said_in_words() {
    let mut c = console();
    let rd = readings_of(&default_stage(), Some(Fault::Value(Resistor::Rc, 47e3)));
    let h = ok(&mut c, &check_line(&rd)).join("\n");
    assert!(h.contains("FAIL"), "{h}");
    assert_contains(&h, &["RC reads like", "decade slip"]);
}

#[cfg(feature = "fault-detail")]
#[test]
fn equivalent_faults_say_how_to_tell_them_apart() {
    let mut c = console();
    let rd = readings_of(&default_stage(), Some(Fault::Open(Resistor::Re1)));
    let h = ok(&mut c, &check_line(&rd)).join("\n");
    // RE1 open and RE2 open cut the emitter path alike.
    // The group is named on its first line with the separating action.
    assert!(
        h.contains("RE1 open or RE2 open: same readings")
            || h.contains("RE2 open or RE1 open: same readings")
                && h.contains("power off, in circuit measure RE"),
        "{h}"
    );
}

#[test]
fn a_pnp_board_is_judged_too() {
    let mut c = machine_console();
    // The default stage mirrored: R1 now runs from the supply to the base.
    oks(&mut c, &["set polarity pnp", "set r1 10k", "set r2 47k"]);
    let mut stage = default_stage();
    stage.polarity = Polarity::Pnp;
    stage.r1.value = 10e3;
    stage.r2.value = 47e3;
    let good = readings_of(&stage, None);
    assert_eq!(value(&ok(&mut c, &check_line(&good)), "verdict"), "pass");
    let bad = readings_of(&stage, Some(Fault::Open(Resistor::R1)));
    let d = ok(&mut c, &check_line(&bad));
    assert_eq!(value(&d, "verdict"), "fail");
    assert!(d.iter().any(|l| l.starts_with("fault=")), "{d:?}");
    let good = ok(&mut c, &check_line(&good));
    assert!(num(&good, "derived", "vce") < 0.0, "PNP: VCE is negative");
    assert!(num(&good, "derived", "vbe") < 0.0, "PNP: VBE is negative");
}

#[test]
fn implausible_readings_are_refused_with_their_own_code() {
    let mut c = machine_console();
    let e = err(&mut c, "check 3 2 1.35 5.5", "IMPLAUSIBLE");
    assert!(e.contains("supply"), "{e}");
    let e = err(&mut c, "check 12 2 2 2", "IMPLAUSIBLE");
    assert!(e.contains("all read the same"), "{e}");
    let e = err(&mut c, "check 12 13 1.35 5.5", "IMPLAUSIBLE");
    assert!(e.contains("VB reads above the supply"), "{e}");
    let e = err(&mut c, "check 12 2 -0.5 5.5", "IMPLAUSIBLE");
    assert!(e.contains("VE reads below ground"), "{e}");
    // Nothing was changed by a refusal.
    err(&mut c, "readings", "NO_READINGS");
    err(&mut c, "diagnose", "NO_READINGS");
    assert!(c.last_check().is_none());
    // Parse errors.
    err(&mut c, "check 12 2 1.35", "USAGE");
    err(&mut c, "check 12 2 x 5", "VALUE");
    assert!(!Code::ALL.iter().any(|k| k.name() == "NOT_BUILT"));
    assert!(Code::ALL.iter().any(|k| k.name() == "IMPLAUSIBLE"));
}

#[test]
fn test_measures_then_judges_and_names_the_fault() {
    let mut c = machine_console();
    let d = ok(&mut c, "test 32");
    assert_eq!(value(&d, "source"), "measured");
    assert_eq!(value(&d, "verdict"), "pass");
    ok(&mut c, "inject rc open");
    let d = ok(&mut c, "test");
    assert_eq!(value(&d, "verdict"), "fail");
    assert!(
        d.iter()
            .any(|l| l.starts_with("fault=RC mode=open ") || l.contains("RC:open")),
        "{d:?}"
    );
    err(&mut c, "test 0", "VALUE");
    err(&mut c, "test 1 2", "USAGE");
    // diagnose after only measuring judges the measured readings.
    ok(&mut c, "inject r2 open");
    ok(&mut c, "measure");
    let d = ok(&mut c, "diagnose");
    assert!(d[0].starts_with("verdict=fail"), "{d:?}");
    // A unit with no jig cannot test.
    let mut n = console_with("0", NoJig, FixedClock);
    err(&mut n, "test", "NOT_SUPPORTED");
}

#[test]
fn a_change_of_the_stage_drops_the_last_verdict() {
    let mut c = machine_console();
    let rd = readings_of(&default_stage(), Some(Fault::Open(Resistor::R2)));
    ok(&mut c, &check_line(&rd));
    assert!(c.last_check().is_some());
    ok(&mut c, "set rc 4k7");
    assert!(c.last_check().is_none());
    // The readings stay; diagnose judges them again with the stage as it is now.
    assert!(ok(&mut c, "diagnose")[0].starts_with("verdict=fail"));
    ok(&mut c, "meter gain 1");
    assert!(c.last_check().is_none());
}

#[test]
fn ambient_range_feeds_the_limits() {
    let mut c = console();
    oks(
        &mut c,
        &["mode machine", "set temp-min -10", "set temp-max 55"],
    );
    let s = ok(&mut c, "stage");
    assert_eq!(value(&s, "temp_min"), "-10");
    assert_eq!(value(&s, "temp_max"), "55");
    errs(
        &mut c,
        &[
            ("set temp-min 30", "RANGE"),
            ("set temp-max 20", "RANGE"),
            ("set temp-max 200", "RANGE"),
        ],
    );
    let d = ok(&mut c, "limits");
    let l = limits(
        &default_stage(),
        &default_profile(),
        &Variation::between(-10.0, 55.0),
        &Meter::default(),
        12.0,
    )
    .unwrap();
    assert_eq!(num(&d, "node=vb ", "low"), l.vb.low);
    assert_eq!(num(&d, "node=ic ", "high"), l.ic.high);
    // set temp collapses the range to the one ambient.
    ok(&mut c, "set temp 30");
    let s = ok(&mut c, "stage");
    assert_eq!(value(&s, "temp_min"), "30");
    assert_eq!(value(&s, "temp_max"), "30");
}

#[cfg(feature = "synthesis")]
#[test]
fn requirement_shows_sets_and_refuses_bad_fields_changing_nothing() {
    let mut c = machine_console();
    let d = ok(&mut c, "requirement");
    assert_eq!(d.len(), 3);
    assert_values(
        &d,
        &[
            ("vcc", "12"),
            ("gain", "15"),
            ("rl", "15000"),
            ("f_low", "5"),
            ("temp_min", "-10"),
            ("series", "E24"),
        ],
    );
    oks(
        &mut c,
        &[
            "requirement gain 20",
            "requirement rl none",
            "requirement series E12",
            "requirement tol 1%",
            "requirement ic-max 5m",
            "requirement polarity pnp",
        ],
    );
    let d = ok(&mut c, "requirement");
    assert_values(
        &d,
        &[
            ("gain", "20"),
            ("rl", "none"),
            ("series", "E12"),
            ("tol", "0.01"),
            ("ic_max", "0.005"),
            ("polarity", "pnp"),
        ],
    );
    // Each refusal names the field (an unknown name: the names allowed).
    for (line, code, words) in [
        ("requirement gain x", "VALUE", &["gain", "x"][..]),
        ("requirement colour red", "VALUE", &["colour", "ic-max"]),
        ("requirement gain 5000", "RANGE", &["gain"]),
        ("requirement series E7", "VALUE", &["series", "E7"]),
        ("requirement temp 80", "RANGE", &["temp"]),
        ("requirement gain", "USAGE", &["requirement [NAME VALUE]"]),
    ] {
        assert_contains(&err(&mut c, line, code), words);
    }
    assert_eq!(
        c.requirement().gain,
        20.0,
        "a refused change changes nothing"
    );
    ok(&mut c, "mode human");
    assert!(ok(&mut c, "requirement").join(" ").contains("gain 20"));
    ok(&mut c, "*RST");
    assert_eq!(*c.requirement(), default_requirement());
}

#[cfg(feature = "synthesis")]
#[test]
fn design_and_pick_make_the_core_candidates_the_stage() {
    let mut c = machine_console();
    err(&mut c, "pick 1", "NO_DESIGN");
    let (d, s) = cmd(&mut c, "design");
    assert!(s.starts_with("ok ") && s.contains("candidates"), "{s}");
    let want = design::design(&default_requirement(), &default_profile()).unwrap();
    assert_eq!(d.len(), 2 * want.len());
    assert_eq!(c.candidates().len(), want.len());
    let first = &want[0];
    assert_eq!(num(&d, "candidate=1 r1", "r1"), first.stage.r1.value);
    assert_eq!(num(&d, "candidate=1 r1", "re2"), first.stage.re2.value);
    assert_eq!(num(&d, "candidate=1 gain", "gain"), first.gain);
    assert_eq!(num(&d, "candidate=1 gain", "ic"), first.op.ic);
    let e = err(&mut c, &format!("pick {}", want.len() + 1), "VALUE");
    assert!(e.contains("allowed 1 to"), "{e}");
    let (_, s) = cmd(&mut c, "pick 1");
    let h = design_hash(&first.stage, &default_profile());
    assert_eq!(
        s,
        format!("ok the stage is candidate 1, design hash {h:016x}")
    );
    assert_eq!(value(&ok(&mut c, "hash"), "hash"), format!("{h:016x}"));
    let st = ok(&mut c, "stage");
    assert_eq!(value(&st, "r1"), first.stage.r1.value.to_string());
    assert_eq!(value(&st, "temp_min"), "-10");
    assert_eq!(value(&st, "temp_max"), "55");
    // The picked design passes its own nominal board.
    let rd = readings_of(&first.stage, None);
    assert_eq!(value(&ok(&mut c, &check_line(&rd)), "verdict"), "pass");
    // A requirement that cannot be met.
    ok(&mut c, "requirement ic-max 10u");
    assert!(
        c.candidates().is_empty(),
        "a new requirement drops the candidates"
    );
    let e = err(&mut c, "design", "NO_DESIGN");
    assert!(e.contains("budget") || e.contains("IC"), "{e}");
    err(&mut c, "pick 1", "NO_DESIGN");
    ok(&mut c, "mode human");
    ok(&mut c, "requirement ic-max 2m");
    let h = ok(&mut c, "design").join("\n");
    assert!(h.starts_with("  1. R1 ") && h.contains("gain"), "{h}");
}

#[cfg(feature = "monte-carlo")]
#[test]
fn spread_matches_the_spread_module() {
    let mut c = machine_console();
    let d = ok(&mut c, "spread 200 7");
    let (s, p) = (default_stage(), default_profile());
    let var = Variation::at(25.0);
    let wc = spread::worst_case(&s, &p, &var, Method::default()).unwrap();
    let mc = spread::monte_carlo(
        &s,
        &p,
        &var,
        &wc,
        &McSettings {
            runs: 200,
            seed: 7,
            signal: true,
            requirement: spread::Requirement::default(),
        },
        |_, _| {},
    )
    .unwrap();
    for node in spread::Node::ALL {
        let n = node.name();
        assert_eq!(
            num(&d, &format!("worst={n} "), "min"),
            wc.nodes.get(node).min
        );
        assert_eq!(
            num(&d, &format!("worst={n} "), "max"),
            wc.nodes.get(node).max
        );
        assert_eq!(
            num(&d, &format!("mc={n} "), "mean"),
            mc.nodes.get(node).mean
        );
        assert_eq!(
            num(&d, &format!("mc={n} "), "std"),
            mc.nodes.get(node).std()
        );
    }
    assert_eq!(value(&d, "runs"), "200");
    assert_eq!(value(&d, "seed"), "7");
    // The same seed gives the same numbers; another seed other Monte Carlo numbers.
    assert_eq!(ok(&mut c, "spread 200 7"), d);
    assert_ne!(ok(&mut c, "spread 200 8"), d);
    let d = ok(&mut c, "spread");
    assert_eq!(value(&d, "runs"), "500");
    errs(
        &mut c,
        &[
            ("spread 0", "VALUE"),
            ("spread 3000", "VALUE"),
            ("spread 10 x", "VALUE"),
            ("spread 1 2 3", "USAGE"),
        ],
    );
    ok(&mut c, "mode human");
    let h = ok(&mut c, "spread 50").join("\n");
    assert_contains(&h, &["worst", "Monte Carlo"]);
}

#[cfg(all(feature = "synthesis", feature = "spread"))]
#[test]
fn locked_units_still_judge_but_do_not_design() {
    let mut c = console();
    ok(&mut c, "lock 2468");
    for l in ["design", "pick 1", "requirement gain 10"] {
        err(&mut c, l, "LOCKED");
    }
    let rd = readings_of(&default_stage(), None);
    for l in [
        check_line(&rd).as_str(),
        "test",
        "diagnose",
        "spread 20",
        "requirement",
    ] {
        ok(&mut c, l);
    }
}

#[cfg(all(feature = "synthesis", feature = "spread"))]
#[test]
fn every_new_reply_stays_within_bounds() {
    let mut c = console();
    ok(&mut c, "inject r1 open");
    for mode in ["human", "machine"] {
        ok(&mut c, &format!("mode {mode}"));
        for l in ["test", "diagnose", "requirement", "spread 100", "design"] {
            let (data, status) = cmd(&mut c, l);
            assert!(status.starts_with("ok"), "{l}: {status}");
            assert!(!status.contains("cut"), "{l}: {status}");
            assert!(!data.is_empty(), "{l}");
        }
    }
}

/// Without the design search the unit refuses `design`, `pick` and `requirement`, naming the PC
/// command that does it; locked or not.
#[cfg(not(feature = "synthesis"))]
#[test]
fn a_unit_without_the_design_search_names_the_pc_command() {
    let mut c = console();
    for l in ["design", "pick 1", "requirement", "requirement gain 20"] {
        let e = err(&mut c, l, "NOT_SUPPORTED");
        let word = l.split(' ').next().unwrap();
        assert!(e.starts_with(&format!("err NOT_SUPPORTED {word}: ")), "{e}");
        assert!(e.contains("run biasjig design on a PC"), "{e}");
    }
    ok(&mut c, "lock 2468");
    err(&mut c, "design", "NOT_SUPPORTED");
}

/// Without the spread the unit refuses `spread`, naming the PC command that does it; the rest of
/// the judging still works.
#[cfg(not(feature = "spread"))]
#[test]
fn a_unit_without_the_spread_names_the_pc_command() {
    let mut c = console();
    for l in ["spread", "spread 20"] {
        assert!(err(&mut c, l, "NOT_SUPPORTED").contains("run biasjig spread on a PC"));
    }
    let rd = readings_of(&default_stage(), None);
    for l in [check_line(&rd).as_str(), "test", "diagnose"] {
        ok(&mut c, l);
    }
}
