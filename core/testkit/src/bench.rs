//! The command line of the benches, by the convention of scripts/instructions.sh: `--counts`
//! prints the two run counts N1 N2 and the unit it measures with; a bare number is the run
//! count (cargo bench passes `--bench`, which is ignored).

/// The run count: `None` after printing `counts` for `--counts`, else the first number on the
/// command line, else `default`.
pub fn runs(counts: &str, default: u64) -> Option<u64> {
    if std::env::args().any(|a| a == "--counts") {
        println!("{counts}");
        return None;
    }
    Some(
        std::env::args()
            .skip(1)
            .find_map(|a| a.parse().ok())
            .unwrap_or(default),
    )
}
