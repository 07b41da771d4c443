//! The demo scenario (invented, BRIEF.md): a 12 V stage with gain 15 into 15 kΩ from a 600 Ω
//! source. Its requirement is written once here; each test adds the flags it tries.

use std::path::Path;

use serde_json::Value;

use super::{assert_exit, json_ok, path_str, run};

/// The demo's requirement: supply, gain, load and source.
pub const REQUIREMENT: [&str; 8] = ["--vcc", "12", "--gain", "15", "--rl", "15k", "--rs", "600"];

/// The demo's low corner and ambient range.
pub const CORNER_AND_AMBIENT: [&str; 6] = ["--f-low", "5", "--temp-min", "-10", "--temp-max", "55"];

/// The demo's transistor spread (hFE 100 to 300).
pub const HFE_SPREAD: [&str; 4] = ["--beta-min", "100", "--beta-max", "300"];

/// `design` with the demo's requirement and `extra` flags (`-o FILE` among them or not).
pub fn design_args(extra: &[&str]) -> Vec<String> {
    let mut a = vec!["design".to_string()];
    a.extend(super::strs(&REQUIREMENT));
    a.extend(super::strs(extra));
    a
}

/// A design file of the demo's requirement, corner and ambient (and `extra` flags), written
/// to `file`; its parsed TOML.
#[track_caller]
pub fn write_design(file: &Path, extra: &[&str]) -> toml::Table {
    let mut a = design_args(&CORNER_AND_AMBIENT);
    a.extend(super::strs(extra));
    a.extend(["-o".to_string(), path_str(file).to_string()]);
    assert_exit(&run(&a), 0);
    std::fs::read_to_string(file)
        .expect("the design file is written")
        .parse()
        .expect("the design file is TOML")
}

/// The collector resistor of a design file, Ω.
pub fn rc_of(file: &toml::Table) -> f64 {
    file["parts"]["rc"]["value"]
        .as_float()
        .expect("parts.rc.value")
}

/// The design hash of a design file.
pub fn hash_of(file: &toml::Table) -> String {
    file["hash"].as_str().expect("hash").to_owned()
}

/// VB, VE, VC the engine predicts for the design file with `extra` flags (a faulty part).
#[track_caller]
pub fn predicted(design: &Path, extra: &[&str]) -> [f64; 3] {
    let mut a = super::strs(&["analyze", "--json", "--design", path_str(design)]);
    a.extend(super::strs(extra));
    let v: Value = json_ok(&a);
    ["vb", "ve", "vc"].map(|k| v["dc"][k].as_f64().expect("a DC node"))
}

/// The readings line a technician types at 12 V: `12 VB VE VC`.
pub fn typed(v: [f64; 3]) -> String {
    format!("12 {:?} {:?} {:?}", v[0], v[1], v[2])
}

/// The readings of the design with its collector resistor ten times too large (a decade slip).
pub fn decade_slip(design: &Path, file: &toml::Table) -> [f64; 3] {
    predicted(design, &["--rc", &format!("{}", rc_of(file) * 10.0)])
}

/// The first round's design of the demo: IC at most 2 mA, hFE 100 to 300, held at nominal.
pub const FIRST_ROUND: [&str; 8] = [
    "--ic-max",
    "2m",
    "--beta-min",
    "100",
    "--beta-max",
    "300",
    "--hold",
    "nominal",
];

/// The first round's design file of the demo, `name` in the scratch folder of `tag`.
pub fn first_round(tag: &str, name: &str) -> std::path::PathBuf {
    let f = super::temp(tag, name);
    write_design(&f, &FIRST_ROUND);
    f
}

/// A station's bench with the demo's design: the design file, a fresh log, and the readings of a
/// good board and of one with a decade slip in RC (VB, VE, VC at 12 V).
pub struct Bench {
    pub design: std::path::PathBuf,
    pub log: std::path::PathBuf,
    pub file: toml::Table,
    pub good: [f64; 3],
    pub bad: [f64; 3],
}

/// The bench of the test file `tag`.
pub fn bench(tag: &str) -> Bench {
    let design = super::temp(tag, "demo.toml");
    let log = super::temp(tag, "boards.jsonl");
    let file = write_design(&design, &[]);
    let good = predicted(&design, &[]);
    let bad = decade_slip(&design, &file);
    Bench {
        design,
        log,
        file,
        good,
        bad,
    }
}
