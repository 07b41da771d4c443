//! Design files: round trips, refusals that name the key, no edit accepted, atomic saves.

use std::path::Path;

use super::*;
use biasjig_core::stage::{Part, Polarity};

fn doc() -> DesignDoc {
    let stage = Stage {
        polarity: Polarity::Npn,
        vcc: Part::new(12.0, 0.0),
        r1: Part::new(240e3, 0.05),
        r2: Part::new(51e3, 0.05),
        rc: Part::new(33e3, 0.05),
        re1: Part::new(560.0, 0.05),
        re2: Part::new(5.6e3, 0.05),
        rl: Some(15e3),
        rs: 600.0,
        cin: Some(Part::new(10e-6, 0.2)),
        cout: Some(Part::new(10e-6, 0.2)),
        ce: Some(Part::new(68e-6, 0.2)),
    };
    let profile = Profile {
        beta_min: 100.0,
        beta_typ: 173.0,
        beta_max: 300.0,
        ..Profile::default()
    };
    let mut req = Requirement::new(12.0, 15.0);
    req.rl = Some(15e3);
    req.temp_min = -10.0;
    req.temp_max = 55.0;
    let e24 = Some(Series::E24);
    let e6 = Some(Series::E6);
    DesignDoc {
        stage,
        profile,
        temp_c: 25.0,
        temp_min: -10.0,
        temp_max: 55.0,
        id: "test-a".into(),
        hash: hash(&stage, &profile),
        requirement: Some(req),
        series: [e24, e24, e24, e24, e24, e6, e6, e6],
        predicted: None,
        held: None,
        test: TestSettings::DEFAULT,
        digest: String::new(),
    }
}

/// Why the text is refused as a design file.
fn refusal(text: &str) -> String {
    parse(Path::new("x.toml"), text).unwrap_err().to_string()
}

/// The text without its lines that start with `start`.
fn without_lines(text: &str, start: &str) -> String {
    text.lines()
        .filter(|l| !l.starts_with(start))
        .map(|l| format!("{l}\n"))
        .collect()
}

#[test]
fn the_hash_is_the_instruments() {
    let d = doc();
    let h = hash(&d.stage, &d.profile);
    assert_eq!(h, format!("{:016x}", design_hash(&d.stage, &d.profile)));
    assert_eq!(h.len(), 16);
    let mut other = d.stage;
    other.rc.value = 36e3;
    assert_ne!(hash(&other, &d.profile), h, "the hash follows the parts");
}

#[test]
fn round_trip() {
    let d = doc();
    let text = to_text(&d).unwrap();
    let back = parse(Path::new("x.toml"), &text).unwrap();
    assert_eq!(back.stage, d.stage);
    assert_eq!(back.profile, d.profile);
    assert_eq!(back.hash, d.hash);
    assert_eq!(back.requirement, d.requirement);
    assert_eq!(back.series, d.series);
    assert_eq!(back.id, "test-a");
    assert_eq!(back.test, d.test);
    assert_eq!(back.digest, digest(&back).to_string());
}

/// Item 8 of issue 11: before the digest, an edited [ambient] kept its hash, a file with the
/// hash line deleted loaded with any edit, and a part without `series` took any value.
#[test]
fn no_edit_is_accepted() {
    let text = to_text(&doc()).unwrap();
    assert!(parse(Path::new("x.toml"), &text).is_ok());
    let no_hash = without_lines(&text, "hash = ");
    // Without the design hash line the file is refused like any other edit
    // (docs/interface.md), though the digest alone would still match.
    let m = refusal(&no_hash);
    assert!(m.contains("hash") && m.contains("missing"), "{m}");
    let m = refusal(&text.replace("min = -10.0", "min = -20.0"));
    assert!(m.contains("digest"), "an [ambient] edit: {m}");
    let m = refusal(&no_hash.replace("value = 33000.0", "value = 36000.0"));
    assert!(
        m.contains("digest"),
        "a part edit without the hash line: {m}"
    );
    let off_series = no_hash.replace(
        "[parts.r1]\nvalue = 240000.0\nseries = \"E24\"\n",
        "[parts.r1]\nvalue = 250000.0\n",
    );
    assert_ne!(off_series, no_hash);
    let m = refusal(&off_series);
    assert!(
        m.contains("digest"),
        "an off-series value without series: {m}"
    );
    let m = refusal(&text.replace("temp_max = 25.0", "temp_max = 40.0"));
    assert!(m.contains("digest"), "a test ambient edit: {m}");
    let m = refusal(&no_hash.replace("vcc_tol = 0.0", "vcc_tol = 0.2"));
    assert!(m.contains("digest"), "a supply tolerance edit: {m}");
    let m = refusal(&without_lines(&text, "digest = "));
    assert!(m.contains("digest") && m.contains("missing"), "{m}");
}

#[test]
fn oversized_input_is_refused_without_reading_it_whole() {
    // /dev/zero never ends: the read stops one byte past the limit.
    let e = load(Path::new("/dev/zero")).unwrap_err();
    assert!(e.to_string().contains("at most"), "{e}");
}

#[test]
fn save_refuses_to_overwrite_and_replaces_atomically() {
    let dir = std::env::temp_dir().join(format!("biasjig-df-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("a.toml");
    let _ = std::fs::remove_file(&path);
    save(&path, &doc(), false).unwrap();
    let e = save(&path, &doc(), false).unwrap_err();
    assert!(e.to_string().contains("--force"), "{e}");
    save(&path, &doc(), true).unwrap();
    assert!(load(&path).is_ok());
    let left: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().contains(".tmp-"))
        .collect();
    assert!(left.is_empty(), "no temporary file left behind");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn refusals_name_the_key() {
    let text = to_text(&doc()).unwrap();
    // (the edit: from, to; what the refusal names)
    let edits: [(&str, &str, &[&str]); 7] = [
        ("version = 2", "version = 3", &["version", "newer"]),
        ("version = 2", "version = 1", &["version", "design -o"]),
        ("[ambient]", "[ambient]\nhumidity = 3", &["humidity"]),
        ("beta_min = 100.0\n", "", &["beta_min"]),
        (
            "value = 240000.0",
            "value = 250000.0",
            &["parts.r1.value", "E24"],
        ),
        ("value = 33000.0", "value = 36000.0", &["hash"]),
        (
            "polarity = \"npn\"",
            "polarity = \"fet\"",
            &["parts.polarity"],
        ),
    ];
    for (from, to, names) in edits {
        let edited = text.replace(from, to);
        assert_ne!(edited, text, "{from:?} is in the file");
        let m = refusal(&edited);
        assert!(
            names.iter().all(|n| m.contains(n)),
            "{from:?} -> {to:?}: {m}"
        );
    }
}
