//! IEC 60063 series as the standard tabulates them, read from the project's transcription
//! (`tests/data/iec60063.txt` at the workspace root), never from the code under test.

/// The values ×100 of series `name` (`"E24"`) in the reference file.
#[track_caller]
pub fn reference(name: &str) -> Vec<u16> {
    let file = concat!(env!("CARGO_MANIFEST_DIR"), "/../tests/data/iec60063.txt");
    let text = std::fs::read_to_string(file).expect("the IEC 60063 reference file");
    let line = text
        .lines()
        .find(|l| l.split_whitespace().next() == Some(name))
        .unwrap_or_else(|| panic!("{name} is not in {file}"));
    line.split_whitespace()
        .skip(1)
        .map(|w| (w.parse::<f64>().expect("a table value") * 100.0).round() as u16)
        .collect()
}

/// `v` (Ω or F) is a member of the table `values` (×100) in some decade.
pub fn in_series(v: f64, values: &[u16]) -> bool {
    let d = v.log10().floor();
    let m = v / 10f64.powf(d) * 100.0;
    values.iter().any(|&t| (m - f64::from(t)).abs() < 1e-6 * m)
}
