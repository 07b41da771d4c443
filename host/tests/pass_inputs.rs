//! Issue 11: a PASS means what it says; here, the measuring inputs are modelled (a jig's
//! 110 kΩ inputs no longer fail every good board of a high-impedance stage, and faults are still
//! named) and the supply is judged. Each test names the finding of the issue it pins (it fails
//! on the code before the fix). The stage is invented; readings come from the engine.

mod common;

use std::process::Output;

use biasjig_core::judge::readings_through;
use biasjig_core::settings::{InputMode, Inputs};
use biasjig_core::solve::Conditions;
use biasjig_core::stage::{DeviceFault, Fault, Resistor};
use common::stage::{with_fault, HIGH_Z};
use common::{demo, json, run, stderr, strs, temp};
use serde_json::Value;

/// The scratch folder of this file.
const TAG: &str = "pass-inputs";

/// Readings of the high-impedance stage through 110 kΩ inputs attached together, with a fault.
fn high_z_readings(fault: Option<Fault>, beta: f64) -> [String; 4] {
    let p = HIGH_Z.profile();
    let cond = Conditions {
        beta_25: beta,
        ..Conditions::typical(&p)
    };
    let (s, cond) = with_fault(&HIGH_Z.stage(), cond, fault);
    let inputs = Inputs {
        r: Some(110e3),
        mode: InputMode::Together,
    };
    let r = readings_through(&s, &p, cond, &inputs).unwrap();
    [24.0, r.vb, r.ve, r.vc].map(|v| format!("{v}"))
}

fn check_high_z(r: &[String; 4], extra: &[&str]) -> Output {
    let mut a = strs(&["check", "--json"]);
    a.extend(HIGH_Z.args());
    a.extend(strs(&["--vb", &r[1], "--ve", &r[2], "--vc", &r[3]]));
    a.extend(strs(extra));
    run(&a)
}

/// Issue 11, second finding: the jig's 110 kΩ inputs pulled a good board's VB far below its
/// window, so every good board failed. With `--input-r 110k --inputs together` good boards
/// pass and open/short faults are still named; without it the same board fails.
#[test]
fn modelled_inputs_pass_good_boards_and_still_name_faults() {
    let inputs = ["--input-r", "110k", "--inputs", "together"];
    for beta in [100.0, 200.0] {
        let good = high_z_readings(None, beta);
        let o = check_high_z(&good, &inputs);
        assert_eq!(o.status.code(), Some(0), "hFE {beta}: {}", stderr(&o));
        let bare = check_high_z(&good, &[]);
        assert_eq!(
            bare.status.code(),
            Some(1),
            "read as if by an ideal meter it fails"
        );
    }
    for (fault, part, mode) in [
        (Fault::Open(Resistor::R1), "R1", "open"),
        (Fault::Open(Resistor::R2), "R2", "open"),
        (Fault::Open(Resistor::Rc), "RC", "open"),
        (Fault::Short(Resistor::Re1), "RE1", "short"),
        (Fault::Short(Resistor::R2), "R2", "short"),
        (Fault::Device(DeviceFault::BeOpen), "Q", "be_open"),
    ] {
        let r = high_z_readings(Some(fault), 200.0);
        let o = check_high_z(&r, &inputs);
        assert_eq!(o.status.code(), Some(1), "{part} {mode}: {}", stderr(&o));
        let j = json(&o);
        let named = std::iter::once(&j["faults"][0])
            .chain(
                j["faults"][0]["equivalent"]
                    .as_array()
                    .into_iter()
                    .flatten(),
            )
            .any(|f| f["part"] == part && f["mode"] == mode);
        assert!(named, "{part} {mode} not named first: {}", j["faults"]);
    }
}

/// `--inputs one`: each node read with only its own input attached; a good board passes.
#[test]
fn one_input_at_a_time_passes_a_good_board() {
    let (s, p) = (HIGH_Z.stage(), HIGH_Z.profile());
    let inputs = Inputs {
        r: Some(1e6),
        mode: InputMode::One,
    };
    let r = readings_through(&s, &p, Conditions::typical(&p), &inputs).unwrap();
    let rd = [24.0, r.vb, r.ve, r.vc].map(|v| format!("{v}"));
    let o = check_high_z(&rd, &["--input-r", "1M", "--inputs", "one"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let j = json(&o);
    assert_eq!(j["settings"]["inputs"]["mode"], "one");
    assert_eq!(j["settings"]["inputs"]["r"], 1e6);
}

/// `analyze` warns when the divider is too stiff a load for the inputs; the readings it
/// predicts are through them.
#[test]
fn analyze_warns_of_loading_and_predicts_the_readings() {
    let mut a = strs(&["analyze", "--json", "--input-r", "110k"]);
    a.extend(HIGH_Z.args());
    let o = run(&a);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(stderr(&o).contains("R1 ‖ R2"), "{}", stderr(&o));
    let j = json(&o);
    assert!(j["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w == "divider_loaded_by_inputs"));
    let want = high_z_readings(None, 200.0);
    assert_eq!(j["readings"]["vb"].as_f64().unwrap().to_string(), want[1]);
    assert!(j["readings"]["vb"].as_f64().unwrap() < j["dc"]["vb"].as_f64().unwrap() - 0.5);
}

/// Issue 11, third finding: a 21.5 V supply on a 24 V design passed. A supply outside its
/// window is never a pass: exit 2, the message names the supply window, the log says refused.
#[test]
fn a_supply_out_of_tolerance_is_never_a_pass() {
    let good = high_z_readings(None, 200.0);
    let log = temp(TAG, "supply.jsonl");
    let mut a = strs(&["check", "--json", "--vcc", "21.5", "--vcc-nominal", "24"]);
    a.extend(HIGH_Z.without_vcc());
    a.extend(strs(&[
        "--vb", &good[1], "--ve", &good[2], "--vc", &good[3],
    ]));
    a.extend(strs(&["--input-r", "110k", "--log", log.to_str().unwrap()]));
    let o = run(&a);
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    let e = stderr(&o);
    assert!(
        e.contains("21.500") && e.contains("22.800") && e.contains("25.200"),
        "{e}"
    );
    let rec: Value = serde_json::from_str(
        std::fs::read_to_string(&log)
            .unwrap()
            .lines()
            .next()
            .unwrap(),
    )
    .unwrap();
    assert_eq!(rec["verdict"], "refused");
    assert_eq!(rec["supply"]["ok"], false);
    // With a design file (5 % by default): the file's nominal is judged.
    let f = demo::first_round(TAG, "supply.toml");
    let o = run(strs(&[
        "check",
        "--design",
        f.to_str().unwrap(),
        "--vcc",
        "10.7",
        "--vb",
        "2",
        "--ve",
        "1.3",
        "--vc",
        "6",
    ]));
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    assert!(stderr(&o).contains("supply"), "{}", stderr(&o));
    // And the supply window is printed with the nodes.
    let lim = run(strs(&["limits", "--design", f.to_str().unwrap()]));
    let text = String::from_utf8_lossy(&lim.stdout);
    assert!(
        text.contains("VCC") && text.contains("11.4") && text.contains("12.6"),
        "{text}"
    );
}
