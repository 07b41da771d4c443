//! The instrument's machine-mode results read back, and compared with `biasjig check` on the
//! same readings (parity).
use crate::host::run_host;
use std::collections::HashMap;
use std::path::Path;

/// `key=value` pairs of one machine-mode line, read by the core's reader (the one the host uses).
pub fn pairs(line: &str) -> HashMap<&str, &str> {
    biasjig_core::kv::pairs(line).collect()
}

pub fn num(s: &str) -> f64 {
    s.parse()
        .unwrap_or_else(|_| panic!("{s:?} is not a plain number"))
}

pub fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * a.abs().max(b.abs()).max(1.0)
}

/// The machine-mode result of `test` or `check` on the instrument.
#[derive(Debug)]
pub struct Result_ {
    pub verdict: String,
    /// node -> (measured, low, high, ok)
    pub nodes: HashMap<String, (f64, f64, f64, bool)>,
    /// (part, mode, equivalents as PART:mode)
    pub faults: Vec<(String, String, Vec<String>)>,
}

pub fn parse_result(data: &[String]) -> Result_ {
    let mut r = Result_ {
        verdict: String::new(),
        nodes: HashMap::new(),
        faults: Vec::new(),
    };
    for l in data {
        let p = pairs(l);
        if let Some(v) = p.get("verdict") {
            r.verdict = (*v).to_owned();
        } else if let Some(n) = p.get("node") {
            r.nodes.insert(
                (*n).to_owned(),
                (
                    num(p["measured"]),
                    num(p["low"]),
                    num(p["high"]),
                    p["ok"] == "1",
                ),
            );
        } else if let Some(part) = p.get("fault") {
            let eq = match p.get("equivalent") {
                None | Some(&"none") => Vec::new(),
                Some(e) => e.split(',').map(str::to_owned).collect(),
            };
            r.faults
                .push(((*part).to_owned(), p["mode"].to_owned(), eq));
        }
    }
    assert!(
        r.verdict == "pass" || r.verdict == "fail",
        "no verdict line in {data:?}"
    );
    r
}

/// The first fault names `part`/`mode`, or lists it as indistinguishable.
pub fn names_first(r: &Result_, part: &str, mode: &str) -> bool {
    r.faults.first().is_some_and(|(p, m, eq)| {
        (p.eq_ignore_ascii_case(part) && m == mode)
            || eq
                .iter()
                .any(|e| e.eq_ignore_ascii_case(&format!("{part}:{mode}")))
    })
}

/// The board failed and the instrument names `part`/`mode` first (or as indistinguishable from
/// the first).
pub fn assert_fails_naming(r: &Result_, part: &str, mode: &str, what: &str) {
    assert_eq!(r.verdict, "fail", "{what}: {r:?}");
    assert!(
        names_first(r, part, mode),
        "{what}: the instrument's first fault is not {part} {mode}: {:?}",
        r.faults
    );
}

/// The host's window `(low, high)` is the instrument's.
fn assert_window(inst: (f64, f64), host: (f64, f64), what: &str) {
    assert!(
        close(host.0, inst.0) && close(host.1, inst.1),
        "{what}: instrument {}..{}, host {}..{}",
        inst.0,
        inst.1,
        host.0,
        host.1
    );
}

/// `biasjig check --design FILE --json` with the jig's input resistance on the DC readings the
/// instrument reports (its `readings` line, exact decimals) and `extra` arguments; gives the exit
/// code and the JSON.
fn host_check(
    design: &Path,
    readings: &[String],
    extra: &[String],
    what: &str,
) -> (i32, serde_json::Value) {
    let line = readings.first().map(String::as_str).unwrap_or("");
    let p = pairs(line);
    let d = design.to_str().expect("utf-8 path");
    // The jig's inputs (10 MΩ + 1 MΩ dividers, every one connected while the nodes are read)
    // load the board; the instrument models them by default, the host is told.
    let mut args: Vec<String> = ["check", "--design", d, "--json", "--input-r", JIG_INPUT_R]
        .iter()
        .map(|s| (*s).to_owned())
        .collect();
    for k in ["vcc", "vb", "ve", "vc"] {
        let v = p
            .get(k)
            .unwrap_or_else(|| panic!("{what}: no {k} in the readings line {line:?}"));
        args.push(format!("--{k}"));
        args.push((*v).to_owned());
    }
    args.extend(extra.iter().cloned());
    let argv: Vec<&str> = args.iter().map(String::as_str).collect();
    let (code, out, err) = run_host(&argv);
    assert!(
        code == 0 || code == 1,
        "{what}: biasjig check exit {code}: {err}"
    );
    let j: serde_json::Value = serde_json::from_str(&out)
        .unwrap_or_else(|e| panic!("{what}: check --json output is not JSON ({e}): {out}"));
    (code, j)
}

/// The host's first fault is the instrument's.
fn assert_first_fault(j: &serde_json::Value, inst: &Result_, what: &str) {
    let host_first = j["faults"].get(0).map(|f| {
        (
            f["part"].as_str().unwrap_or("").to_owned(),
            f["mode"].as_str().unwrap_or("").to_owned(),
        )
    });
    let inst_first = inst.faults.first().map(|(p, m, _)| (p.clone(), m.clone()));
    assert_eq!(host_first, inst_first, "{what}: first fault");
}

/// `biasjig check --design FILE` on the readings the instrument reports (its `readings` line,
/// exact decimals), compared with the instrument's own result: verdict, windows, first fault.
pub fn assert_parity(design: &Path, readings: &[String], inst: &Result_, what: &str) {
    let extra = ["--inputs".to_owned(), "together".to_owned()];
    let (code, j) = host_check(design, readings, &extra, what);
    assert_eq!(j["verdict"], inst.verdict.as_str(), "{what}: verdict");
    assert_eq!(code == 0, inst.verdict == "pass", "{what}: exit status");
    assert!(
        !inst.nodes.is_empty(),
        "{what}: the instrument listed no nodes"
    );
    assert_nodes_agree(&j, inst, what);
    assert_first_fault(&j, inst, what);
}

/// Each node the instrument lists is in the host's result with the same measured value,
/// window and mark.
fn assert_nodes_agree(j: &serde_json::Value, inst: &Result_, what: &str) {
    for (node, (measured, low, high, ok)) in &inst.nodes {
        let h = &j["nodes"][node.as_str()];
        assert!(h.is_object(), "{what}: host has no node {node}: {j}");
        let f = |k: &str| h[k].as_f64().unwrap_or(f64::NAN);
        assert!(close(f("measured"), *measured), "{what}: {node} measured");
        assert_window(
            (*low, *high),
            (f("low"), f("high")),
            &format!("{what}: window of {node}"),
        );
        assert_eq!(h["ok"].as_bool(), Some(*ok), "{what}: {node} ok");
    }
}

/// The jig's input resistance from each node to ground (firmware-example/README.md, wiring).
pub const JIG_INPUT_R: &str = "11M";

/// The `ac f=.. measured=.. low=.. high=.. ok=..` lines of a machine-mode result: (f, measured,
/// low, high, ok).
pub fn ac_lines(data: &[String]) -> Vec<(String, String, f64, f64, bool)> {
    data.iter()
        .filter(|l| l.starts_with("ac "))
        .map(|l| {
            let p = pairs(l);
            (
                p["f"].to_owned(),
                p["measured"].to_owned(),
                num(p["low"]),
                num(p["high"]),
                p["ok"] == "1",
            )
        })
        .collect()
}

/// `biasjig check --design FILE --ac F:G ...` on the DC and gain readings the instrument reports,
/// compared with the instrument: verdict, the nodes, the gain windows, the first fault.
pub fn assert_signal_parity(
    design: &Path,
    readings: &[String],
    data: &[String],
    inst: &Result_,
    what: &str,
) {
    let ac = ac_lines(data);
    assert_eq!(ac.len(), 2, "{what}: two gain readings in {data:?}");
    let mut extra = Vec::new();
    for (f, g, ..) in &ac {
        extra.push("--ac".to_owned());
        extra.push(format!("{f}:{g}"));
    }
    let (_, j) = host_check(design, readings, &extra, what);
    assert_eq!(j["verdict"], inst.verdict.as_str(), "{what}: verdict");
    assert_nodes_agree(&j, inst, what);
    for (k, (f, g, low, high, ok)) in ac.iter().enumerate() {
        let h = &j["ac"][k];
        let v = |key: &str| h[key].as_f64().unwrap_or(f64::NAN);
        assert!(
            close(v("f"), num(f)) && close(v("measured"), num(g)),
            "{what}: ac {k}: {h}"
        );
        assert_window(
            (*low, *high),
            (v("low"), v("high")),
            &format!("{what}: gain window at {f} Hz"),
        );
        assert_eq!(h["ok"].as_bool(), Some(*ok), "{what}: ac {k} ok");
    }
    assert_first_fault(&j, inst, what);
}
