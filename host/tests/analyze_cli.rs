//! `biasjig analyze` end to end: the JSON keys of the machine interface, the numbers against the
//! core, and bad input (exit 2 with a message naming the field).

mod common;

use common::{json_ok, run as biasjig, stderr, stdout};
use serde_json::Value;

const STAGE: [&str; 16] = [
    "--vcc", "12", "--r1", "56k", "--r2", "12k", "--rc", "3k3", "--re1", "180", "--re2", "820",
    "--rl", "15k", "--rs", "600",
];

fn analyze_json(extra: &[&str]) -> Value {
    let mut args = vec!["analyze", "--json"];
    args.extend_from_slice(&STAGE);
    args.extend_from_slice(extra);
    json_ok(&args)
}

#[test]
fn json_has_every_key_of_the_interface() {
    let v = analyze_json(&["--cin", "10u", "--cout", "4u7", "--ce", "100u"]);
    for k in ["vb", "ve", "vc", "vbe", "vce", "ic", "ib", "ie", "region"] {
        assert!(v["dc"].get(k).is_some(), "dc.{k}");
    }
    for k in ["vb", "ve", "vc", "ic", "vce"] {
        assert!(v["estimate"][k].is_number(), "estimate.{k}");
    }
    for k in ["gain", "gain_stage", "zin", "zout", "swing_pp", "f_low"] {
        assert!(v["ac"][k].is_number(), "ac.{k}");
    }
    for k in ["transistor", "supply_current"] {
        assert!(v["power"][k].is_number(), "power.{k}");
    }
    assert_eq!(v["dc"]["region"], "active");
    // Inverting stage: negative gain; the node voltages are consistent.
    assert!(v["ac"]["gain"].as_f64().unwrap() < 0.0);
    let dc = &v["dc"];
    let f = |k: &str| dc[k].as_f64().unwrap();
    assert!((f("vbe") - (f("vb") - f("ve"))).abs() < 1e-12);
    assert!((f("vce") - (f("vc") - f("ve"))).abs() < 1e-12);
}

#[test]
fn ideal_capacitors_give_no_low_corner() {
    let v = analyze_json(&[]);
    assert!(v["ac"]["f_low"].is_null());
}

#[test]
fn pnp_readings_are_signed() {
    let v = analyze_json(&["--pnp"]);
    assert!(v["dc"]["vbe"].as_f64().unwrap() < 0.0);
    assert!(v["dc"]["vce"].as_f64().unwrap() < 0.0);
    assert!(v["dc"]["ic"].as_f64().unwrap() > 0.0);
}

#[test]
fn value_forms_give_the_same_operating_point() {
    let a = analyze_json(&[]);
    let mut args = vec!["analyze", "--json"];
    let plain = [
        "--vcc", "12", "--r1", "56000", "--r2", "1.2e4", "--rc", "3.3k", "--re1", "180R", "--re2",
        "0.82k", "--rl", "15000", "--rs", "600",
    ];
    args.extend_from_slice(&plain);
    let out = biasjig(&args);
    let b: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(a["dc"], b["dc"]);
}

#[test]
fn human_report_shows_parts_and_q_point() {
    let mut args = vec!["analyze"];
    args.extend_from_slice(&STAGE);
    let out = biasjig(&args);
    assert!(out.status.success());
    let text = stdout(&out);
    // IEC 60062 colour code of 56 kΩ 5 %: green blue orange gold (from memory).
    assert!(text.contains("green-blue-orange-gold"), "{text}");
    assert!(text.contains("active"));
    assert!(text.contains("exact") && text.contains("hand"));
}

#[test]
fn bad_input_names_the_field() {
    for (args, field) in [
        (
            vec![
                "analyze", "--vcc", "12", "--r1", "-5", "--r2", "12k", "--rc", "3k3",
            ],
            "--r1",
        ),
        (
            vec![
                "analyze", "--vcc", "12", "--r1", "4k7k", "--r2", "12k", "--rc", "3k3",
            ],
            "--r1",
        ),
        (
            vec!["analyze", "--vcc", "12", "--r2", "12k", "--rc", "3k3"],
            "--r1",
        ),
        (
            vec![
                "analyze", "--vcc", "0.1", "--r1", "56k", "--r2", "12k", "--rc", "3k3",
            ],
            "--vcc",
        ),
        (
            vec![
                "analyze",
                "--vcc",
                "12",
                "--r1",
                "56k",
                "--r2",
                "12k",
                "--rc",
                "3k3",
                "--beta-min",
                "300",
                "--beta",
                "100",
            ],
            "--beta",
        ),
        (
            vec![
                "analyze", "--vcc", "12", "--r1", "56k", "--r2", "12k", "--rc", "3k3", "--vbe", "2",
            ],
            "--vbe",
        ),
        (
            vec![
                "analyze", "--vcc", "nan", "--r1", "56k", "--r2", "12k", "--rc", "3k3",
            ],
            "--vcc",
        ),
    ] {
        let out = biasjig(&args);
        assert_eq!(out.status.code(), Some(2), "{args:?}");
        let err = stderr(&out);
        assert!(err.contains(field), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{err}");
    }
}
