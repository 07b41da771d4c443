//! Exit statuses and the error that carries one to the edge of the program.
//!
//! 0 done (check: board passed), 1 check ran and the board failed, 2 bad input or usage,
//! 3 instrument or serial-link failure.
//!
//! Every library operation has its own `thiserror` enum with typed fields; [`CliError`] is the
//! one type the commands return, and the conversions at the end of this file are the one table
//! of which error gets which exit status. The message is the error's own text, unchanged.

use std::fmt;

use crate::board::{CsvError, RecordError};
use crate::boardlog::{LogError, ReadLogError};
use crate::designfile::DesignFileError;
use crate::link::relay::RelayError;
use crate::link::{BudgetError, LinkError};
use crate::plot::PlotError;
use crate::stage_args::FlagError;
use crate::station::{BoardError, StationError};
use crate::verdict::JudgingError;

/// Exit status: done, or the board passed.
pub const EXIT_OK: u8 = 0;
/// Exit status: the check ran and the board failed.
pub const EXIT_FAIL: u8 = 1;
/// Exit status: bad input or usage.
pub const EXIT_USAGE: u8 = 2;
/// Exit status: instrument or serial-link failure.
pub const EXIT_LINK: u8 = 3;

/// An error with the exit status it maps to and a message for a person.
#[derive(Debug)]
pub struct CliError {
    /// Exit status.
    pub code: u8,
    /// What went wrong, naming the field, the value and what is allowed.
    pub message: String,
}

impl CliError {
    /// Bad input or usage (exit 2).
    pub fn usage(message: impl Into<String>) -> Self {
        Self {
            code: EXIT_USAGE,
            message: message.into(),
        }
    }

    /// A field with a bad value (exit 2): "`field`: `value`: `allowed`".
    pub fn field(field: &str, value: impl fmt::Display, allowed: impl fmt::Display) -> Self {
        Self::usage(format!("{field}: {value}: {allowed}"))
    }

    /// An instrument or serial-link failure (exit 3).
    pub fn link(message: impl Into<String>) -> Self {
        Self {
            code: EXIT_LINK,
            message: message.into(),
        }
    }
}

impl fmt::Display for CliError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for CliError {}

/// What a command returns: the exit status on success (0, or 1 for a failed board).
pub type CmdResult = Result<u8, CliError>;

/// Errors that are bad input (exit 2), with their own text as the message.
macro_rules! usage_errors {
    ($($error:ty),* $(,)?) => {
        $(
            impl From<$error> for CliError {
                fn from(e: $error) -> Self {
                    CliError::usage(e.to_string())
                }
            }
        )*
    };
}

usage_errors!(
    DesignFileError,
    FlagError,
    ReadLogError,
    CsvError,
    PlotError,
    JudgingError,
    BudgetError,
);

/// A link failure (exit 3).
impl From<LinkError> for CliError {
    fn from(e: LinkError) -> Self {
        CliError::link(e.to_string())
    }
}

/// A board the instrument could not do (exit 3).
impl From<BoardError> for CliError {
    fn from(e: BoardError) -> Self {
        CliError::link(e.to_string())
    }
}

/// A log that could not be written (exit 2), named by its flag.
impl From<LogError> for CliError {
    fn from(e: LogError) -> Self {
        CliError::usage(format!("--log: {e}"))
    }
}

/// A record not formed or not written: the log's or the store's failure as each says it.
impl From<RecordError> for CliError {
    fn from(e: RecordError) -> Self {
        match e {
            RecordError::Log(l) => l.into(),
            RecordError::Store(s) => s.into(),
            other => CliError::usage(other.to_string()),
        }
    }
}

/// A relayed session that stopped: unreadable input is bad input (exit 2), the rest is the
/// link's (exit 3).
impl From<RelayError> for CliError {
    fn from(e: RelayError) -> Self {
        match e {
            RelayError::Input(_) => CliError::usage(e.to_string()),
            _ => CliError::link(e.to_string()),
        }
    }
}

/// The station's loop that stopped: unreadable input (exit 2), the instrument (exit 3), a
/// record (as [`RecordError`]).
impl From<StationError> for CliError {
    fn from(e: StationError) -> Self {
        match e {
            StationError::Input(_) => CliError::usage(e.to_string()),
            StationError::Board(b) => b.into(),
            StationError::Record(r) => r.into(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io;

    fn io_error() -> io::Error {
        io::Error::new(io::ErrorKind::BrokenPipe, "gone")
    }

    /// The exit statuses of the machine interface (CONTRACT.md): 2 bad input, 3 instrument or
    /// serial link; the message is the error's own text. The texts are a regression pin: what
    /// the commands printed before their errors were typed.
    #[test]
    fn each_error_gets_its_exit_status_and_keeps_its_text() {
        let cases: Vec<(CliError, u8, &str)> = vec![
            (
                FlagError::Missing { flag: "--r1" }.into(),
                EXIT_USAGE,
                "--r1: missing: give it (a value such as 4k7), or --design FILE",
            ),
            (
                BudgetError { seconds: 0.0 }.into(),
                EXIT_USAGE,
                "--sync-timeout: 0: allowed 0.1 to 600 seconds",
            ),
            (
                LinkError::Timeout("no reply".into()).into(),
                EXIT_LINK,
                "instrument timeout: no reply",
            ),
            (
                BoardError::Refused("err JIG open probe".into()).into(),
                EXIT_LINK,
                "instrument: err JIG open probe",
            ),
            (
                RelayError::Input(io_error()).into(),
                EXIT_USAGE,
                "stdin: gone",
            ),
            (
                RelayError::Output(io_error()).into(),
                EXIT_LINK,
                "stdout: gone",
            ),
            (
                StationError::Input(io_error()).into(),
                EXIT_USAGE,
                "stdin: gone",
            ),
            (
                StationError::Board(BoardError::Link(LinkError::Garbage("x".into()))).into(),
                EXIT_LINK,
                "instrument sent garbage: x",
            ),
            (
                RecordError::Log(LogError::Encode("bad".into())).into(),
                EXIT_USAGE,
                "--log: cannot encode the record: bad",
            ),
        ];
        for (e, code, text) in cases {
            assert_eq!((e.code, e.message.as_str()), (code, text));
        }
    }
}
