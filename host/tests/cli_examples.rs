//! The command line's examples, one file each under `tests/cmd/`: a few runs of `design`,
//! `spread`, `limits`, `check`, `batch` and `report` with their whole output and exit code.
//!
//! Regression pins: the expected output is our own output, copied when the example was written
//! (`TRYCMD=overwrite cargo test -p biasjig --test cli_examples` writes it again); a change to
//! it is reviewed as a change of the files. The figures themselves are checked against their
//! sources by the other tests.

#[test]
fn cli_examples_print_what_their_files_say() {
    trycmd::TestCases::new()
        .register_bin(
            "biasjig",
            std::path::Path::new(env!("CARGO_BIN_EXE_biasjig")),
        )
        .case("tests/cmd/*.toml");
}
