//! The results store: every test of every station in one place.
//!
//! `--store URL` names it: `sqlite:PATH` (an embedded file, created on first use: one station) or
//! `postgres://USER@HOST:PORT/DB` (a server: a line of stations). Both keep the same versioned
//! schema (the `.sql` files under `store/sql/`, applied in order and recorded in
//! `biasjig_schema`), one row per test ([`crate::record::BoardRecord`]) and one per repair.
//!
//! Each test is written in one transaction, keyed by its record id: stations writing at once
//! lose and double nothing, a killed station leaves only whole tests, and writing a record that
//! is already there (an import of the same log, a resumed batch) changes nothing.
//!
//! The two backends (`sqlite`, `postgres`) hold only what their server does differently; what
//! they share is written once: `columns` (each table's columns, read and bound for either) and
//! `backend` (migrations, one transaction per test, imports in chunks, the SQL both spell with
//! their own parameter marks). The `.sql` migrations stay one file per dialect: their column
//! types differ, and a migration is frozen text.

mod backend;
mod columns;
mod postgres;
mod sqlite;

use std::path::PathBuf;

use thiserror::Error;

use crate::error::CliError;
use crate::record::{BoardRecord, RepairRecord};

/// The schema version this tool writes and reads.
pub const SCHEMA_VERSION: i64 = 1;

/// Tests written per transaction by an import (each is still whole; an import run again
/// skips what the last one wrote).
pub const IMPORT_CHUNK: usize = 500;

/// Why the store could not be used.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum StoreError {
    /// The URL names no store kind this tool knows.
    #[error("--store: {0:?}: allowed: sqlite:PATH or postgres://USER@HOST:PORT/DB")]
    Url(String),
    /// The SQLite file failed.
    #[error("store (SQLite): {0}")]
    Sqlite(#[from] rusqlite::Error),
    /// The PostgreSQL server failed.
    #[error("store (PostgreSQL): {0}")]
    Postgres(#[from] ::postgres::Error),
    /// The store was made by a newer tool.
    #[error(
        "store schema version {found} is newer than this tool's ({known}); use a newer biasjig"
    )]
    Schema {
        /// The store's version.
        found: i64,
        /// This tool's version.
        known: i64,
    },
    /// A stored row is not a whole record.
    #[error("store row {record_id}: {why}")]
    Row {
        /// The row's record id.
        record_id: String,
        /// What is wrong.
        why: String,
    },
}

impl From<StoreError> for CliError {
    fn from(e: StoreError) -> Self {
        CliError::usage(e.to_string())
    }
}

/// Which tests a report reads.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Filter {
    /// Only this station.
    pub station: Option<String>,
    /// Only this lot.
    pub lot: Option<String>,
    /// From this time on (ms since 1970 UTC, included).
    pub since_ms: Option<i64>,
    /// Up to this time (ms since 1970 UTC, included).
    pub until_ms: Option<i64>,
}

impl Filter {
    /// The record passes the filter.
    pub fn admits(&self, r: &BoardRecord) -> bool {
        let t = r.time_ms();
        self.station.as_ref().is_none_or(|s| *s == r.station)
            && self.lot.as_ref().is_none_or(|l| Some(l) == r.lot.as_ref())
            && self.since_ms.is_none_or(|s| t >= s)
            && self.until_ms.is_none_or(|u| t <= u)
    }
}

/// What writing one test did.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Written {
    /// The test was new (false: a record with its id was already there; nothing changed).
    pub new: bool,
}

/// What [`Store::for_each_test`] calls with each test.
pub type Visit<'a> = &'a mut dyn FnMut(BoardRecord) -> Result<(), StoreError>;

/// A results store.
pub trait Store {
    /// Write one test in one transaction. Sets `rec.retest` when the serial was tested before
    /// with the same design.
    fn insert(&mut self, rec: &mut BoardRecord) -> Result<Written, StoreError>;
    /// Write many tests, [`IMPORT_CHUNK`] per transaction; returns how many were new.
    fn insert_many(&mut self, recs: &mut [BoardRecord]) -> Result<usize, StoreError>;
    /// A test with this id is stored.
    fn contains(&mut self, record_id: &str) -> Result<bool, StoreError>;
    /// Tests stored of this serial with this design hash (a station says a retest before the
    /// board is tested).
    fn tests_of(&mut self, serial: &str, design_hash: &str) -> Result<u64, StoreError>;
    /// Record a repair; false when it was already there.
    fn insert_repair(&mut self, rep: &RepairRecord) -> Result<bool, StoreError>;
    /// Visit the tests that pass the filter in test order (time, then arrival), one at a time.
    fn for_each_test(&mut self, filter: &Filter, f: Visit<'_>) -> Result<(), StoreError>;
    /// Every repair, in time order.
    fn repairs(&mut self) -> Result<Vec<RepairRecord>, StoreError>;
    /// For a batch: commits no longer wait for the disk (SQLite `synchronous = NORMAL` in its
    /// write-ahead log, PostgreSQL `synchronous_commit = off`). Each test stays one
    /// transaction and whole; a power cut (not a killed process) may lose the last tests
    /// committed, which the batch run again records (it resumes by record id).
    fn relax_sync(&mut self) -> Result<(), StoreError>;
    /// The schema version of the store.
    fn schema_version(&mut self) -> Result<i64, StoreError>;
}

/// A parsed `--store` URL.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Url {
    /// An SQLite file.
    Sqlite(PathBuf),
    /// A PostgreSQL connection string.
    Postgres(String),
}

impl Url {
    /// Parse `sqlite:PATH` or `postgres://…` (`postgresql://` too).
    pub fn parse(s: &str) -> Result<Self, StoreError> {
        if let Some(p) = s.strip_prefix("sqlite:") {
            let p = p.strip_prefix("//").unwrap_or(p);
            if p.is_empty() {
                return Err(StoreError::Url(s.into()));
            }
            return Ok(Self::Sqlite(PathBuf::from(p)));
        }
        if s.starts_with("postgres://") || s.starts_with("postgresql://") {
            return Ok(Self::Postgres(s.into()));
        }
        Err(StoreError::Url(s.into()))
    }
}

/// Open (and bring to the current schema) the store a URL names.
pub fn open(url: &str) -> Result<Box<dyn Store>, StoreError> {
    Ok(match Url::parse(url)? {
        Url::Sqlite(p) => Box::new(sqlite::Sqlite::open(&p)?),
        Url::Postgres(u) => Box::new(postgres::Postgres::open(&u)?),
    })
}

/// The `--store`, `--station`, `--operator` and `--lot` flags of `check`, `batch` and `station`.
#[derive(clap::Args, Debug, Clone, Default)]
pub struct TraceArgs {
    /// Results store: sqlite:PATH or postgres://USER@HOST:PORT/DB
    #[arg(long, value_name = "URL", help_heading = "Record")]
    pub store: Option<String>,
    /// Station name recorded with every test [default: the host name]
    #[arg(long, value_name = "NAME", help_heading = "Record")]
    pub station: Option<String>,
    /// Operator recorded with every test
    #[arg(long, value_name = "NAME", help_heading = "Record")]
    pub operator: Option<String>,
    /// Lot recorded with every test
    #[arg(long, value_name = "NAME", help_heading = "Record")]
    pub lot: Option<String>,
}

impl TraceArgs {
    /// The station name: the flag, or this machine's name.
    pub fn station_name(&self) -> String {
        self.station
            .clone()
            .unwrap_or_else(crate::record::host_name)
    }

    /// Open the store, if one is named.
    pub fn open(&self) -> Result<Option<Box<dyn Store>>, CliError> {
        Ok(match &self.store {
            Some(u) => Some(open(u)?),
            None => None,
        })
    }

    /// Fill the record's station, operator and lot from the flags.
    pub fn stamp(&self, rec: &mut BoardRecord) {
        rec.station = self.station_name();
        rec.operator.clone_from(&self.operator);
        rec.lot.clone_from(&self.lot);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn urls_name_their_kind() {
        assert_eq!(
            Url::parse("sqlite:/tmp/a.db").unwrap(),
            Url::Sqlite("/tmp/a.db".into())
        );
        assert_eq!(
            Url::parse("sqlite:line.db").unwrap(),
            Url::Sqlite("line.db".into())
        );
        assert!(matches!(
            Url::parse("postgres://qa@127.0.0.1:5432/line").unwrap(),
            Url::Postgres(_)
        ));
        for bad in ["", "sqlite:", "mysql://x", "/tmp/a.db"] {
            let e = Url::parse(bad).unwrap_err();
            assert!(e.to_string().contains("allowed: sqlite:PATH"), "{e}");
        }
    }
}
