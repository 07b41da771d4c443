//! The technician's loop over the instrument (`biasjig station`). Push the design and every
//! test setting (test ambient, meter, measuring inputs) to the instrument and verify the one
//! settings digest, then per board: read the serial number (one already in the log is said and
//! recorded as a retest), trigger measure and check, show the verdict large with the likely
//! faults in the words of `biasjig check`, append one complete JSON line to the log.
//!
//! An instrument reset, a timeout, garbage on the line or another settings digest makes the
//! station synchronise again, push again and repeat the board; a record is written only from
//! one complete reply with the right digest before and after it, once, so nothing is lost or
//! doubled. The manual mode runs the same loop against the console engine in this process, with
//! the readings typed from a meter: a line that is not readings is asked again, readings the
//! engine refuses are logged as refused with the reason.
//!
//! The log is the board log of `biasjig check --log` ([`crate::boardlog`]: append-only JSON
//! Lines, torn tails skipped), and each record has the shape of `biasjig check --json` plus
//! `time`, `serial`, `design` (`id`, `hash`, `digest`), `readings`, `settings`, `digest`,
//! `overrides` and `retest` (and `typed` for refused typed readings); with `--store` the same
//! records go to the results store with station, operator and lot ([`crate::board::StationSink`]).
//!
//! By job: [`push`] (the lines that put the settings on the instrument and the digest they
//! give), [`session`] (synchronise, verify, one board), [`records`] (log records from machine
//! replies), [`screen`] (what the technician sees), [`run`] (the loop, and the in-process
//! engine of the manual mode).

pub mod push;
pub mod records;
pub mod run;
pub mod screen;
pub mod session;
#[cfg(test)]
mod tests;

pub use push::{expected, push_lines};
pub use records::{provenance, record, refused_record};
pub use run::StationError;
pub use run::{run_loop, serve};
pub use screen::{banner, listed_faults};
pub use session::{BoardError, Plan, Station};
