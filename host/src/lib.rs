//! The `biasjig` library: everything the command line does besides parsing its arguments and
//! printing, so that each subcommand of the binary stays a thin front end.
//!
//! From the bottom up:
//! - values and words: [`values`] (the value grammar of the flags), [`text`] and [`json`] (the
//!   engine's results in words and in the machine interface), [`clock`] (ISO 8601 UTC),
//!   [`files`] (size-bounded reads, atomic writes);
//! - the stage: [`designfile`] (design files: TOML, digest, atomic writes), [`stage_args`] (the
//!   stage flags or `--design FILE`, resolved into core types; errors naming the flag);
//! - boards: [`verdict`] (a board judged on this PC: the one judging path and its outcome),
//!   [`record`] (the one board record type, serde, that `check --log`, `batch`, `station`,
//!   `import` and `report` share), [`boardlog`] (JSON Lines, whole lines only), [`readings`]
//!   (the batch CSV), [`store`] (SQLite and PostgreSQL), [`board`] (from an outcome to its
//!   record, and the recorder that writes the log and the store);
//! - the instrument: [`link`] (the serial link and the console's framing), [`local`] (the
//!   console engine in this process), [`station`] (the technician's loop over the link);
//! - the demo: [`demo`] (the built-in scenario);
//! - figures: [`plot`] (the spread's SVG plots), [`analysis`] (the report's figures per design).
//!
//! Each operation has its own error type (`thiserror`, typed fields); [`error::CliError`] is
//! the one type the binary's commands return, and [`error`] holds the one table of which error
//! gets which exit status of the machine interface.

#![deny(missing_docs)]

/// Like `println!`, but a closed standard output (a pipe whose reader went away) ends the
/// output quietly instead of panicking.
#[macro_export]
macro_rules! outln {
    ($($arg:tt)*) => {{
        use std::io::Write as _;
        let _ = writeln!(std::io::stdout(), $($arg)*);
    }};
}

/// Like `print!`, with the same treatment of a closed standard output as [`outln!`].
#[macro_export]
macro_rules! out {
    ($($arg:tt)*) => {{
        use std::io::Write as _;
        let _ = write!(std::io::stdout(), $($arg)*);
    }};
}

pub mod analysis;
pub mod board;
pub mod boardlog;
pub mod clock;
pub mod demo;
pub mod designfile;
pub mod error;
pub mod files;
pub mod json;
pub mod link;
pub mod local;
pub mod plot;
pub mod readings;
pub mod record;
pub mod stage_args;
pub mod station;
pub mod store;
pub mod text;
pub mod values;
pub mod verdict;
