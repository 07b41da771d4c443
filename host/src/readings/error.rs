//! Why a readings file's header, or one of its rows, is refused: typed, with the messages the
//! batch prints.

use biasjig_core::signaltest::{SignalTestError, MAX_TONES};
use biasjig_core::units::ValueError;
use thiserror::Error;

use super::MAX_ROW;

/// Why the header line of a readings file is refused: the file is not read further.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum HeaderError {
    /// The file has no line at all.
    #[error("line 1: header: the file is empty")]
    Empty,
    /// The header is longer than [`MAX_ROW`].
    #[error("line 1: header: {len} bytes long; allowed: at most {MAX_ROW}")]
    TooLong {
        /// Its length, bytes.
        len: usize,
    },
    /// The header is not UTF-8 text.
    #[error("line 1: header: not UTF-8 text ({why})")]
    NotText {
        /// Where it stops being text.
        why: std::str::Utf8Error,
    },
    /// The header is not a CSV row.
    #[error("line 1: header: not a CSV row: {why}")]
    NotCsv {
        /// What the CSV reader says.
        why: String,
    },
    /// A needed column is not named.
    #[error(
        "line 1: header: no column '{column}'; the header must name serial, vcc, vb, ve and vc"
    )]
    Missing {
        /// The column.
        column: &'static str,
    },
    /// A needed column is named more than once.
    #[error(
        "line 1: header: column '{column}' appears {} times (columns {}); give each column once",
        .at.len(),
        .at.iter().map(ToString::to_string).collect::<Vec<_>>().join(", ")
    )]
    Repeated {
        /// The column.
        column: &'static str,
        /// Where it stands, counted from 1.
        at: Vec<usize>,
    },
    /// A `gain@F` column whose F is not a frequency.
    #[error(
        "line 1: header: column '{column}': frequency: {why}; allowed: gain@F with F in Hz such \
         as gain@1k"
    )]
    Frequency {
        /// The column as named.
        column: String,
        /// Why F is not a value.
        why: ValueError,
    },
    /// A `gain@F` column whose F is outside the test frequencies.
    #[error("line 1: header: column '{column}': {why}")]
    Tone {
        /// The column as named.
        column: String,
        /// Why.
        why: SignalTestError,
    },
    /// More `gain@F` columns than the signal test takes.
    #[error("line 1: header: {count} gain@F columns; allowed: at most {MAX_TONES}")]
    TooManyTones {
        /// How many.
        count: usize,
    },
    /// The file could not be read.
    #[error("{0}")]
    Io(#[from] std::io::Error),
}

/// Why one row is refused (alone: the other rows are read on).
#[derive(Debug, Clone, PartialEq, Error)]
#[non_exhaustive]
pub enum RowError {
    /// The row is not a CSV row.
    #[error("not a CSV row: {why}")]
    NotCsv {
        /// What the CSV reader says.
        why: String,
    },
    /// The row is longer than [`MAX_ROW`].
    #[error("{len} bytes long; allowed: at most {MAX_ROW}; the row was not tested")]
    TooLong {
        /// Its length, bytes.
        len: usize,
    },
    /// The row is not UTF-8 text.
    #[error("bytes that are not UTF-8 text (from byte {at}); the row was not tested")]
    NotText {
        /// The first byte that is not text, counted from 1.
        at: usize,
    },
    /// The serial number is empty.
    #[error("column serial: empty; every board needs a serial number")]
    NoSerial,
    /// A DC reading is not a voltage.
    #[error("column {column}: '{text}': {why}; allowed: a voltage such as 2.51 or -0.0012")]
    Voltage {
        /// The column.
        column: &'static str,
        /// The cell as written.
        text: String,
        /// Why.
        why: ValueError,
    },
    /// A gain reading is not a plain number.
    #[error(
        "column {column}: '{text}': not a plain number; allowed: a gain magnitude such as 14.2"
    )]
    Gain {
        /// The column as named.
        column: String,
        /// The cell as written.
        text: String,
    },
    /// A gain reading outside what the signal test takes.
    #[error("column {column}: '{text}': {why}")]
    Tone {
        /// The column as named.
        column: String,
        /// The cell as written.
        text: String,
        /// Why.
        why: SignalTestError,
    },
}
