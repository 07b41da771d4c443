//! Parity: the console's `check` in machine mode (through `biasjig console` on stdin/stdout)
//! gives the same verdict, node windows, derived values and faults as `biasjig check --json`
//! for the same stage, profile, meter and readings.
//!
//! Readings are made with the engine (exact solve of the stage with one fault or none). Both
//! sides print shortest round-trip decimals of the same computation; the numbers are compared
//! to 1e-15 relative only because serde_json's default float parser (used here to read the
//! JSON) may land one unit in the last place off a correctly rounded value.

mod common;

use biasjig_core::device::Profile;
use biasjig_core::solve::Conditions;
use biasjig_core::stage::{DeviceFault, Fault, Part, Polarity, Resistor, Stage};
use common::console::{get, replies};
use common::stage::{solve_with, Flags};
use common::{code, stderr, stdout};
use serde_json::Value;

/// A stage given by the flags of the machine interface.
struct Case {
    name: &'static str,
    pnp: bool,
    vcc: f64,
    r: [f64; 5],
}

/// Invented stages of our own (not from any worked example).
const CASES: [Case; 3] = [
    Case {
        name: "npn-12",
        pnp: false,
        vcc: 12.0,
        r: [47e3, 10e3, 4.7e3, 220.0, 820.0],
    },
    Case {
        name: "npn-9",
        pnp: false,
        vcc: 9.0,
        r: [33e3, 6.8e3, 2.2e3, 0.0, 470.0],
    },
    Case {
        name: "pnp-15",
        pnp: true,
        vcc: 15.0,
        r: [12e3, 56e3, 3.3e3, 680.0, 330.0],
    },
];

const FAULTS: [Option<Fault>; 6] = [
    None,
    Some(Fault::Open(Resistor::R2)),
    Some(Fault::Short(Resistor::Rc)),
    Some(Fault::Value(Resistor::Rc, 33e3)),
    Some(Fault::Open(Resistor::Re2)),
    Some(Fault::Device(DeviceFault::BeShort)),
];

/// The transistor of every case, as flags (hFE 100/200/300, VBE 0.65 V).
const TRANSISTOR: Flags = Flags("--beta 200 --beta-min 100 --beta-max 300 --vbe 0.65");

fn profile() -> Profile {
    TRANSISTOR.profile()
}

fn stage(c: &Case) -> Stage {
    let p = |v| Part::new(v, 0.05);
    Stage {
        polarity: if c.pnp { Polarity::Pnp } else { Polarity::Npn },
        vcc: Part::new(c.vcc, 0.0),
        r1: p(c.r[0]),
        r2: p(c.r[1]),
        rc: p(c.r[2]),
        re1: p(c.r[3]),
        re2: p(c.r[4]),
        rl: None,
        rs: 0.0,
        cin: None,
        cout: None,
        ce: None,
    }
}

/// VCC VB VE VC of the board with `fault`, by the engine.
fn readings(c: &Case, fault: Option<Fault>) -> [f64; 4] {
    let pr = profile();
    let op = solve_with(&stage(c), &pr, Conditions::typical(&pr), fault);
    [c.vcc, op.vb, op.ve, op.vc]
}

fn stage_flags(c: &Case) -> Vec<String> {
    let mut v: Vec<String> = vec!["--vcc".into(), format!("{:?}", c.vcc)];
    for (flag, r) in ["--r1", "--r2", "--rc", "--re1", "--re2"].iter().zip(c.r) {
        v.push((*flag).into());
        v.push(format!("{r:?}"));
    }
    v.extend(TRANSISTOR.args());
    if c.pnp {
        v.push("--pnp".into());
    }
    v
}

/// The console lines that set the same stage and profile.
fn console_setup(c: &Case) -> Vec<String> {
    let mut v = vec![
        "mode machine".to_string(),
        format!("set polarity {}", if c.pnp { "pnp" } else { "npn" }),
        format!("set vcc {:?} 0%", c.vcc),
        "set rl none".into(),
        "set rs 0".into(),
        "set cin none".into(),
        "set cout none".into(),
        "set ce none".into(),
        "set beta 200".into(),
        "set beta-min 100".into(),
        "set beta-max 300".into(),
        "set vbe 0.65".into(),
        "set temp 25".into(),
    ];
    for (name, r) in ["r1", "r2", "rc", "re1", "re2"].iter().zip(c.r) {
        v.push(format!("set {name} {r:?} 5%"));
    }
    v
}

fn cli_check(c: &Case, rd: [f64; 4]) -> (Option<Value>, i32, String) {
    let mut args = vec!["check".to_string(), "--json".into()];
    args.extend(stage_flags(c));
    // --vcc is the measured supply (here the same as the nominal).
    for (flag, x) in ["--vb", "--ve", "--vc"].iter().zip(&rd[1..]) {
        args.push((*flag).into());
        args.push(format!("{x:?}"));
    }
    let out = common::run(&args);
    let doc = serde_json::from_str(&stdout(&out)).ok();
    (doc, code(&out), stderr(&out))
}

/// Replies of a console session: (data lines, status) per input line.
fn console_session(lines: &[String]) -> Vec<(Vec<String>, String)> {
    replies(lines)
        .into_iter()
        .map(|mut r| {
            let status = r.pop().expect("a status line");
            (r, status)
        })
        .collect()
}

/// A console number against a JSON number: both `none`/null, or equal (to the last place).
fn same(what: &str, console: &str, json: &Value) {
    match json.as_f64() {
        None => assert_eq!(console, "none", "{what}: console {console}, json {json}"),
        Some(j) => {
            let c: f64 = console
                .parse()
                .unwrap_or_else(|_| panic!("{what}: {console} is not a number"));
            let tol = 1e-15 * c.abs().max(j.abs());
            assert!(
                (c - j).abs() <= tol,
                "{what}: console {console}, json {json}"
            );
        }
    }
}

fn compare(label: &str, data: &[String], doc: &Value) {
    let verdict = data.iter().find(|l| l.starts_with("verdict=")).unwrap();
    assert_eq!(get(verdict, "verdict"), doc["verdict"], "{label}");
    if let Some(e) = doc.get("explained") {
        assert_eq!(get(verdict, "explained") == "1", *e, "{label}");
    }
    let mut nodes = 0;
    for l in data.iter().filter(|l| l.starts_with("node=")) {
        let n = &doc["nodes"][get(l, "node")];
        for k in ["measured", "low", "high"] {
            same(&format!("{label} {} {k}", get(l, "node")), get(l, k), &n[k]);
        }
        assert_eq!(get(l, "ok") == "1", n["ok"], "{label}");
        nodes += 1;
    }
    assert_eq!(nodes, 6, "{label}");
    let d = data.iter().find(|l| l.starts_with("derived ")).unwrap();
    for k in ["ic", "ib", "ie", "vbe", "vce", "beta"] {
        same(
            &format!("{label} derived {k}"),
            get(d, k),
            &doc["derived"][k],
        );
    }
    assert_eq!(get(d, "region"), doc["derived"]["region"], "{label}");
    let faults: Vec<&String> = data.iter().filter(|l| l.starts_with("fault=")).collect();
    let want = doc["faults"].as_array().unwrap();
    assert_eq!(faults.len(), want.len(), "{label}: {faults:?}");
    for (l, f) in faults.iter().zip(want) {
        assert_eq!(get(l, "fault"), f["part"], "{label}");
        assert_eq!(get(l, "mode"), f["mode"], "{label}");
        same(&format!("{label} score"), get(l, "score"), &f["score"]);
        same(
            &format!("{label} estimate"),
            get(l, "estimate"),
            &f["estimate"],
        );
        let eq: Vec<String> = f["equivalent"]
            .as_array()
            .unwrap()
            .iter()
            .map(|e| {
                format!(
                    "{}:{}",
                    e["part"].as_str().unwrap(),
                    e["mode"].as_str().unwrap()
                )
            })
            .collect();
        let shown = get(l, "equivalent");
        if eq.is_empty() {
            assert_eq!(shown, "none", "{label}");
        } else {
            assert_eq!(shown, eq.join(","), "{label}");
        }
    }
}

#[test]
fn console_check_gives_the_verdict_windows_and_faults_of_check_json() {
    let mut failed_boards = 0;
    for c in &CASES {
        let mut lines = console_setup(c);
        let setup = lines.len();
        let boards: Vec<[f64; 4]> = FAULTS.iter().map(|f| readings(c, *f)).collect();
        for rd in &boards {
            lines.push(format!(
                "check {:?} {:?} {:?} {:?}",
                rd[0], rd[1], rd[2], rd[3]
            ));
        }
        let replies = console_session(&lines);
        for (data, status) in &replies[..setup] {
            assert!(
                status.starts_with("ok"),
                "{}: setup {status} {data:?}",
                c.name
            );
        }
        for ((rd, fault), (data, status)) in boards.iter().zip(FAULTS).zip(&replies[setup..]) {
            let label = format!("{} {fault:?}", c.name);
            let (doc, code, stderr) = cli_check(c, *rd);
            if status.starts_with("err IMPLAUSIBLE ") {
                // Both refuse the same readings.
                assert_eq!(code, 2, "{label}: {stderr}");
                assert!(stderr.contains("readings refused"), "{label}: {stderr}");
                continue;
            }
            assert_eq!(status, "ok", "{label}: {data:?}");
            let doc = doc.unwrap_or_else(|| panic!("{label}: no JSON: {stderr}"));
            assert_eq!(
                code,
                if doc["verdict"] == "pass" { 0 } else { 1 },
                "{label}"
            );
            compare(&label, data, &doc);
            if doc["verdict"] == "fail" {
                failed_boards += 1;
            }
            if fault.is_none() {
                assert_eq!(doc["verdict"], "pass", "{label}: the nominal board passes");
            }
        }
    }
    assert!(
        failed_boards >= 8,
        "faulty boards were compared: {failed_boards}"
    );
}

#[test]
fn implausible_readings_are_refused_alike() {
    let c = &CASES[0];
    let mut lines = console_setup(c);
    lines.push("check 12 2 2 2".into());
    let replies = console_session(&lines);
    let (_, status) = replies.last().unwrap();
    assert!(status.starts_with("err IMPLAUSIBLE "), "{status}");
    let (_, code, stderr) = cli_check(c, [12.0, 2.0, 2.0, 2.0]);
    assert_eq!(code, 2);
    // The same reason on both sides.
    let reason = status.split_once(": ").unwrap().1;
    assert!(stderr.contains(reason), "{stderr} vs {reason}");
}
