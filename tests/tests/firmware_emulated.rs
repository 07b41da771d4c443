//! The firmware images, built and checked against their budgets, and the emulated jig image booted
//! under QEMU (`netduinoplus2`) and driven by the real host path: `biasjig console --port` and
//! `biasjig station --port` on QEMU's pseudo-terminal.
//!
//! End to end: identification; a design pushed by the station (hash verified) and a good
//! emulated board that passes; each fault class injected with the console's `inject`, named
//! first (or in the first fault's equivalent group) by the instrument's own diagnosis; and
//! parity: the readings the instrument reports, given to `biasjig check --json` on the PC, give
//! the same verdict, the same windows and the same first fault.
//!
//! Needs the `thumbv7em-none-eabihf` Rust target and `qemu-system-arm`; `scripts/firmware-tools.sh`
//! installs both. When either is missing this test fails and says so: it never skips.

// The test's kit, in the folder of the same name (a test target's root is its crate root).
#[path = "firmware_emulated/golden.rs"]
mod golden;
#[path = "firmware_emulated/host.rs"]
mod host;
#[path = "firmware_emulated/images.rs"]
mod images;
#[path = "firmware_emulated/judged.rs"]
mod judged;
#[path = "firmware_emulated/kept.rs"]
mod kept;
#[path = "firmware_emulated/qemu.rs"]
mod qemu;

use golden::{assert_golden, Raw};
use host::*;
use images::*;
use judged::*;
use qemu::*;
use std::collections::HashMap;
use std::path::Path;
use std::time::{Duration, Instant};

/// Flash of the budget build (`--no-default-features`), for parts with 128 KiB: the product
/// budget. NOT MET at present (about 135 KB and 136 KB, jig-stm32f411 and jig-emulated, with the
/// flash store and the signal test's shared code): the test prints the shortfall and asserts the
/// regression ceiling below until the budget build is cut down to fit (issue 15, item 4).
const FLASH_BUDGET: u64 = 128 * 1024;

/// Regression ceiling of the budget build while [`FLASH_BUDGET`] is not met: it must not grow.
const FLASH_BUDGET_CEILING: u64 = 148 * 1024;

/// Flash of the default images: the `FLASH` region of memory.x (sectors 0 to 5; the store
/// has sectors 6 and 7).
const FLASH_IMAGE_REGION: u64 = 256 * 1024;

const RAM_BUDGET: u64 = 32 * 1024;

const STACK_BUDGET: usize = 16 * 1024;

/// Instructions of a design on the part for 1 s at 100 MHz (about one instruction a cycle).
const DESIGN_GOAL_INSTRUCTIONS: u64 = 100_000_000;

/// Instructions of a check with diagnosis for 100 ms at 100 MHz.
const TEST_GOAL_INSTRUCTIONS: u64 = 10_000_000;

#[test]
fn emulated_jig_end_to_end_through_the_host() {
    let started = Instant::now();
    let out_dir = images();
    // Its own folder: the tests run at once, and this one removes its folder at the end (the
    // whole temporary folder took the reset test's monitor socket with it).
    let dir = temp_dir().join("end-to-end");
    std::fs::create_dir_all(&dir).expect("temp dir");
    let design = write_design(&dir);
    let log = dir.join("boards.jsonl");
    let _ = std::fs::remove_file(&log);

    let (_qemu, pts) = boot(&out_dir.join("jig-emulated"));

    // Identification and the firmware queries, through `biasjig console --port`.
    let mut s = Session::open(&pts);
    let idn = s.ok("*IDN?");
    assert_eq!(idn.len(), 1, "*IDN? data lines: {idn:?}");
    let f: Vec<&str> = idn[0].split(',').collect();
    assert_eq!(f.len(), 4, "maker,model,serial,firmware: {idn:?}");
    assert_eq!((f[0], f[1]), ("biasjig", "jig-emulated"), "{idn:?}");
    s.ok("mode machine");
    let clock = fw(&mut s, "fw:clock?");
    println!("jig-emulated: {}", clock.join(" "));
    s.close();

    // The station pushes the design, keeps it on the unit by name, verifies its hash and tests a
    // good board: pass.
    let recs = station_with(&pts, &design, &log, &["GOOD-1"], &["--keep", "preamp"]);
    assert_eq!(recs[0]["verdict"], "pass", "good board: {}", recs[0]);
    assert_eq!(recs[0]["serial"], "GOOD-1");

    // Faults, injected with the console and named by the instrument's diagnosis.
    let mut s = Session::open(&pts);
    s.ok("mode machine");
    let hash = s.ok("hash");
    // The log carries the design hash (`design.hash`; `hash` in older logs).
    let logged = recs[0]
        .pointer("/design/hash")
        .or_else(|| recs[0].get("hash"))
        .and_then(|h| h.as_str())
        .unwrap_or_else(|| panic!("no design hash in the log record {}", recs[0]));
    assert_eq!(
        hash[0],
        format!("hash={logged}"),
        "the station's design is on the instrument"
    );
    let kept = s.ok("designs");
    assert!(
        kept.iter()
            .any(|l| l.starts_with("design=preamp ") && l.contains(&format!("hash={logged} "))),
        "the station kept its design on the unit: {kept:?}"
    );
    let good = parse_result(&s.ok("test"));
    assert_eq!(good.verdict, "pass", "good board: {good:?}");
    assert!(good.faults.is_empty(), "a passing board has no faults");
    let rd = s.ok("readings");
    assert_parity(&design, &rd, &good, "good board");
    // One settings digest: the instrument's (the pushed stage, its test ambient, meter and the
    // jig's own inputs) and the host's for the same design read through the same inputs.
    let inst_digest = s.ok("digest");
    let p = pairs(rd.first().map(String::as_str).unwrap_or(""));
    let (_, out, err) = run_host(&[
        "check",
        "--design",
        design.to_str().expect("utf-8 path"),
        "--vcc",
        p["vcc"],
        "--vb",
        p["vb"],
        "--ve",
        p["ve"],
        "--vc",
        p["vc"],
        "--json",
        "--input-r",
        JIG_INPUT_R,
    ]);
    let j: serde_json::Value = serde_json::from_str(&out).unwrap_or_else(|e| panic!("{e}: {err}"));
    assert_eq!(
        inst_digest,
        vec![format!("digest={}", j["digest"].as_str().unwrap_or(""))],
        "the instrument judges with the host's settings"
    );
    let pass_screen = fw(&mut s, "fw:screen?").join("\n");
    assert!(pass_screen.contains('#'), "the verdict is drawn");

    let stage = pairs(&s.ok("stage").join(" "))
        .into_iter()
        .map(|(k, v)| (k.to_owned(), v.to_owned()))
        .collect::<HashMap<_, _>>();
    let rc = num(&stage["rc"]);
    let r2 = num(&stage["r2"]);
    let slip_rc = format!("{}", rc * 10.0);
    let slip_r2 = format!("{}", r2 / 10.0);
    // (inject words, expected part, expected mode): opens, shorts, decade slips up and down,
    // transistor junction faults. (A short of the small unbypassed RE1 of this design stays
    // inside the windows: not every fault shows at DC, so it is not among them.)
    let cases: Vec<(String, &str, &str)> = vec![
        ("inject r1 open".into(), "R1", "open"),
        ("inject r2 short".into(), "R2", "short"),
        ("inject rc open".into(), "RC", "open"),
        ("inject re2 short".into(), "RE2", "short"),
        (format!("inject rc {slip_rc}"), "RC", "high"),
        (format!("inject r2 {slip_r2}"), "R2", "low"),
        ("inject q be_open".into(), "Q", "be_open"),
        ("inject q ce_short".into(), "Q", "ce_short"),
        ("inject q bc_short".into(), "Q", "bc_short"),
        ("inject q reversed".into(), "Q", "reversed"),
    ];
    let mut test_cost = None;
    let mut costs = Vec::new();
    for (i, (inject, part, mode)) in cases.iter().enumerate() {
        s.ok(inject);
        let data = s.ok("test");
        let r = parse_result(&data);
        let cost = cost_of(&mut s);
        costs.push((format!("{part} {mode}"), cost.1, cost.2));
        if i == 0 {
            test_cost = Some(cost);
        }
        assert_fails_naming(&r, part, mode, inject);
        let rd = s.ok("readings");
        // The host is given what the instrument judged: the DC readings and, when `test` read
        // the tones (the default images), the gain readings too (RE2 short and CE short read
        // alike at DC; the gains tell them apart).
        if ac_lines(&data).is_empty() {
            assert_parity(&design, &rd, &r, inject);
        } else {
            assert_signal_parity(&design, &rd, &data, &r, inject);
        }
        if i == 0 {
            let fail_screen = fw(&mut s, "fw:screen?").join("\n");
            assert_ne!(fail_screen, pass_screen, "the screen shows the new verdict");
        }
    }
    // The first test after the stage changed proposes its test frequencies as well: the default
    // stage (`*RST`) with a fault, tested at once (the station pushes its design again below).
    s.ok("*RST");
    s.ok("inject q ce_short");
    let data = s.ok("test");
    let cost = cost_of(&mut s);
    assert_fails_naming(&parse_result(&data), "Q", "ce_short", "after *RST");
    costs.push(("Q ce_short, first test after *RST".into(), cost.1, cost.2));
    let st = fw(&mut s, "fw:stack?");
    s.ok("inject rc open");
    s.close();
    println!("jig-emulated: test (measure + check + diagnosis) per fault class, instructions of the instrument (goal {TEST_GOAL_INSTRUCTIONS}; the tones were proposed at the good board's test, but for the last, which proposes them too) and of the emulated board standing in for the hardware:");
    for (class, insns, emulated) in &costs {
        println!(
            "  {class:<34} {insns:>10} (board {emulated:>9}) {}",
            if *insns <= TEST_GOAL_INSTRUCTIONS {
                "met"
            } else {
                "not met"
            }
        );
    }

    // A failing board through the station: the log names the fault.
    let recs = station(&pts, &design, &log, &["BAD-1"]);
    assert_eq!(recs[0]["verdict"], "fail", "{}", recs[0]);
    let first = &recs[0]["faults"][0];
    assert_eq!(
        (first["part"].as_str(), first["mode"].as_str()),
        (Some("RC"), Some("open")),
        "{}",
        recs[0]
    );

    let used: usize = st[0]
        .strip_prefix("stack ")
        .and_then(|t| t.split_whitespace().next())
        .and_then(|t| t.parse().ok())
        .unwrap_or_else(|| panic!("stack: {st:?}"));
    let (ticks, insns, _) = test_cost.expect("cost measured");
    println!(
        "jig-emulated: stack high-water {used} B; test (measure + check + diagnosis) on a failing board: {ticks} SysTick ticks, {insns} instructions (goal {TEST_GOAL_INSTRUCTIONS}: {})",
        if insns <= TEST_GOAL_INSTRUCTIONS { "met" } else { "not met" }
    );
    assert!(
        used > 0 && used <= STACK_BUDGET,
        "stack high-water {used} B (budget {STACK_BUDGET} B)"
    );
    let _ = std::fs::remove_dir_all(&dir);
    assert!(
        started.elapsed() < Duration::from_secs(170),
        "the end-to-end test took {:?}",
        started.elapsed()
    );
}

/// The design search on the part: the default image (the budget image refuses `design`).
#[test]
fn emulated_jig_designs_on_the_part() {
    let out_dir = images();
    let (_qemu, pts) = boot(&out_dir.join("jig-emulated"));
    let mut s = Session::open(&pts);
    s.ok("mode machine");
    // The demo scenario's requirement (BRIEF.md, invented).
    for l in [
        "requirement vcc 12",
        "requirement gain 15",
        "requirement rl 15k",
        "requirement rs 600",
        "requirement f-low 5",
        "requirement ic-max 2m",
    ] {
        s.ok(l);
    }
    let d = s.ok("design");
    assert!(!d.is_empty(), "design gives candidates");
    let (ticks, insns, _) = cost_of(&mut s);
    let st = fw(&mut s, "fw:stack?");
    println!(
        "jig-emulated: design: {ticks} SysTick ticks, {insns} instructions (goal {DESIGN_GOAL_INSTRUCTIONS}: {}); {}",
        if insns <= DESIGN_GOAL_INSTRUCTIONS { "met" } else { "not met" },
        st.join(" ")
    );
    let used: usize = st[0]
        .strip_prefix("stack ")
        .and_then(|t| t.split_whitespace().next())
        .and_then(|t| t.parse().ok())
        .unwrap_or_else(|| panic!("stack: {st:?}"));
    println!("jig-emulated: stack high-water after design {used} B (budget {STACK_BUDGET} B)");
    assert!(
        used > 0 && used <= STACK_BUDGET,
        "stack high-water {used} B after design (budget {STACK_BUDGET} B)"
    );
    s.close();
}

#[test]
fn images_fit_their_budgets() {
    let mut over = Vec::new();
    for (dir, what, flash_budget) in [
        (images(), "default", FLASH_IMAGE_REGION),
        (
            budget_images(),
            "budget (--no-default-features)",
            FLASH_BUDGET_CEILING,
        ),
    ] {
        for image in IMAGES {
            let (flash, ram) = elf_sizes(&dir.join(image));
            println!(
                "{image} {what}: flash {flash} B of {flash_budget} B, static RAM {ram} B of {RAM_BUDGET} B"
            );
            if flash_budget == FLASH_BUDGET_CEILING && flash > FLASH_BUDGET {
                println!(
                    "{image} {what}: 128 KiB budget NOT MET: {} B over {FLASH_BUDGET} B \
                     (asserted: the regression ceiling {FLASH_BUDGET_CEILING} B)",
                    flash - FLASH_BUDGET
                );
            }
            if flash > flash_budget {
                over.push(format!(
                    "{image} {what}: flash {flash} B is {} B over {flash_budget} B",
                    flash - flash_budget
                ));
            }
            if ram > RAM_BUDGET {
                over.push(format!(
                    "{image} {what}: static RAM {ram} B is {} B over {RAM_BUDGET} B",
                    ram - RAM_BUDGET
                ));
            }
        }
    }
    assert!(over.is_empty(), "over budget: {over:?}");
}

/// The signal test on the emulated jig (the full image: the budget build leaves the signal test
/// out): `test` reads the DC nodes, then the gain at two proposed frequencies from samples the
/// emulated jig synthesises from the engine's complex response of its drawn board (capacitors
/// drawn within tolerance) through the firmware's Goertzel code. A good board passes; CE open,
/// CIN open and CE at a tenth of its value are named first by the instrument, and `biasjig check
/// --ac` on the same readings gives the same windows, verdict and first fault.
#[test]
fn emulated_jig_names_capacitor_faults() {
    let out_dir = images();
    let dir = temp_dir().join("signal");
    std::fs::create_dir_all(&dir).expect("temp dir");
    let design = write_design(&dir);
    let log = dir.join("boards.jsonl");
    let (_qemu, pts) = boot(&out_dir.join("jig-emulated"));
    let recs = station(&pts, &design, &log, &["SIG-GOOD"]);
    assert_eq!(recs[0]["verdict"], "pass", "good board: {}", recs[0]);

    let mut s = Session::open(&pts);
    s.ok("mode machine");
    let data = s.ok("test");
    let good = parse_result(&data);
    assert_eq!(good.verdict, "pass", "good board: {data:?}");
    let rd = s.ok("readings");
    assert_signal_parity(&design, &rd, &data, &good, "good board");

    let ce = s
        .ok("parts")
        .iter()
        .find(|l| l.starts_with("part=CE "))
        .map(|l| num(pairs(l)["value"]))
        .expect("the design has CE");
    let cases: Vec<(String, &str, &str)> = vec![
        ("inject ce open".into(), "CE", "open"),
        ("inject cin open".into(), "CIN", "open"),
        (format!("inject ce {}", ce / 10.0), "CE", "low"),
    ];
    let mut cost = None;
    for (inject, part, mode) in &cases {
        s.ok("inject none");
        s.ok(inject);
        let data = s.ok("test");
        if cost.is_none() {
            cost = Some(cost_of(&mut s));
        }
        let r = parse_result(&data);
        println!(
            "{inject}: {:?} faults {:?}",
            ac_lines(&data),
            r.faults.first()
        );
        assert_fails_naming(&r, part, mode, inject);
        let rd = s.ok("readings");
        assert_signal_parity(&design, &rd, &data, &r, inject);
    }
    let (ticks, insns, emulated) = cost.expect("cost measured");
    let st = fw(&mut s, "fw:stack?");
    println!(
        "jig-emulated --features full-console: test (DC, two tones, windows, diagnosis) on CE open: {ticks} SysTick ticks, {insns} instructions (the emulated board {emulated} more); {}",
        st.join(" ")
    );
    s.close();
    let _ = std::fs::remove_dir_all(&dir);
}

/// A whole serial session with the emulated jig (the default image, fresh from boot, straight on
/// its serial line) compared byte for byte with `tests/golden/session.txt`, and every screen it
/// draws with its picture in `tests/golden/screens/`: a regression pin of every reply and every
/// screen (the golden files are copied from our own output after review; `BIASJIG_BLESS=1`
/// writes them again). Cost, stack and clock figures are left out: they change with any change
/// of the code. Everything else the unit says is deterministic under QEMU's instruction
/// counting (the emulated board and its reading noise are seeded).
#[test]
fn emulated_session_matches_its_golden_transcript() {
    let (_qemu, pts) = boot(&images().join("jig-emulated"));
    let mut s = Raw::open(&pts);
    for line in [
        "*IDN?",
        "mode machine",
        "stage",
        "hash",
        "limits",
        "measure",
        "readings",
        "test",
    ] {
        s.say(line);
    }
    s.screen("verdict-pass");
    s.say("fw:board?");
    s.say("fw:measure?");
    s.screen("measured");
    s.say("inject rc open");
    s.say("test");
    s.screen("verdict-fail");
    // The verdict screen is the same in human mode (it is drawn from the console's last check).
    s.say("mode human");
    s.say("test");
    s.screen("verdict-fail");
    s.say("diagnose");
    s.say("inject none");
    s.say("mode machine");
    // The button path: no design kept yet, then two, chosen in turn; a short press judges.
    s.say("fw:press long");
    s.screen("no-designs");
    s.say("keep preamp-12");
    s.say("set vcc 15");
    s.say("keep pump-15");
    s.say("designs");
    s.say("fw:press long");
    s.screen("design-1-of-2");
    s.say("fw:press long");
    s.screen("design-2-of-2");
    s.say("fw:press short");
    s.screen("button-verdict");
    s.say("lock 1234");
    s.say("fw:press long");
    s.screen("locked");
    s.say("unlock 1234");
    // A supply above the inputs' range: no reading.
    s.say("set vcc 40");
    s.say("fw:measure?");
    s.screen("no-read");
    s.say("fw:press sideways");
    s.say("fw:nothing");
    s.say("nothing");
    assert_golden("session.txt", &s.transcript);
}

/// The budget image (128 KiB parts) leaves the design search, the spread, the parts list, the
/// kept designs and the gain calibration out and says where to do each.
#[test]
fn budget_image_refuses_the_design_search() {
    let (_qemu, pts) = boot(&budget_images().join("jig-emulated"));
    let mut s = Session::open(&pts);
    s.ok("mode machine");
    let (_, status) = s.ask("design");
    assert!(
        status.starts_with("err NOT_SUPPORTED design:") && status.contains("biasjig design"),
        "{status}"
    );
    // The spread, the parts list, the designs kept by name and the gain calibration are left out
    // too; each refusal names where to do it. The store of the settings stays: `save` works.
    for (line, word) in [
        ("spread", "spread:"),
        ("parts", "parts:"),
        ("keep preamp", "keep:"),
        ("designs", "designs:"),
        ("choose preamp", "choose:"),
        ("forget preamp", "forget:"),
        ("calibrate gain 1000 10", "calibrate gain:"),
    ] {
        let (_, status) = s.ask(line);
        assert!(
            status.starts_with(&format!("err NOT_SUPPORTED {word}"))
                && status.contains("full image"),
            "{line}: {status}"
        );
    }
    s.ok("save");
    s.close();
    // The button's long press says where designs are chosen (pinned picture, as above).
    let mut raw = Raw::open(&pts);
    raw.say("fw:press long");
    raw.screen("budget-not-here");
}
