//! Exit statuses and the error that carries one to the edge of the program.
//!
//! 0 done (check: board passed), 1 check ran and the board failed, 2 bad input or usage,
//! 3 instrument or serial-link failure.

use std::fmt;

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
