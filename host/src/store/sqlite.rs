//! The SQLite store: one file, write-ahead log (readers never block the writer), a busy timeout
//! so that stations writing at once wait their turn, `BEGIN IMMEDIATE` transactions and
//! `synchronous = FULL` (a committed test survives a power cut).

use std::path::Path;
use std::time::Duration;

use rusqlite::{
    params, params_from_iter, Connection, OptionalExtension, Transaction, TransactionBehavior,
};

use super::backend::{self, Migrate, Transactions, SQLITE};
use super::columns::{ColumnSource, ColumnValue, RepairRow, Row, COLUMNS};
use super::{Filter, Store, StoreError, Visit, Written};
use crate::record::{BoardRecord, RepairRecord};

/// The migrations, in order: (version, SQL).
const MIGRATIONS: [(i64, &str); 1] = [(1, include_str!("sql/sqlite/0001_tests.sql"))];

/// How long a writer waits for another station's transaction.
const BUSY: Duration = Duration::from_secs(60);

/// An open SQLite store.
pub struct Sqlite {
    conn: Connection,
}

impl Sqlite {
    /// Open (create) the file and bring it to the current schema.
    pub fn open(path: &Path) -> Result<Self, StoreError> {
        // Two stations opening a new file at once: switching it to write-ahead logging (and the
        // first migration) can answer "database is locked" without waiting on the busy timeout,
        // so the whole opening is tried again until the timeout has passed.
        let deadline = std::time::Instant::now() + BUSY;
        loop {
            match Self::open_once(path) {
                Err(StoreError::Sqlite(e))
                    if is_busy(&e) && std::time::Instant::now() < deadline =>
                {
                    std::thread::sleep(Duration::from_millis(20));
                }
                other => return other,
            }
        }
    }

    fn open_once(path: &Path) -> Result<Self, StoreError> {
        let mut conn = Connection::open(path)?;
        conn.busy_timeout(BUSY)?;
        conn.pragma_update(None, "journal_mode", "WAL")?;
        conn.pragma_update(None, "synchronous", "FULL")?;
        conn.pragma_update(None, "foreign_keys", "ON")?;
        let mut tx = conn.transaction_with_behavior(TransactionBehavior::Immediate)?;
        backend::migrate(SQLITE, &mut tx, &MIGRATIONS)?;
        tx.commit()?;
        Ok(Self { conn })
    }
}

/// The error is SQLite's "busy" or "locked" (another connection holds the lock).
fn is_busy(e: &rusqlite::Error) -> bool {
    matches!(
        e.sqlite_error_code(),
        Some(rusqlite::ErrorCode::DatabaseBusy | rusqlite::ErrorCode::DatabaseLocked)
    )
}

impl Migrate for Transaction<'_> {
    fn batch(&mut self, sql: &str) -> Result<(), StoreError> {
        Ok(self.execute_batch(sql)?)
    }

    fn version(&mut self) -> Result<i64, StoreError> {
        Ok(self.query_row(backend::SCHEMA_VERSION_SQL, [], |r| r.get(0))?)
    }

    fn applied(&mut self, v: i64, utc: &str) -> Result<(), StoreError> {
        self.execute(&backend::applied_sql(SQLITE), params![v, utc])?;
        Ok(())
    }
}

impl ColumnSource for rusqlite::Row<'_> {
    type Error = rusqlite::Error;

    fn column<T: ColumnValue>(&self, i: usize) -> Result<T, Self::Error> {
        self.get(i)
    }
}

fn insert_sql() -> String {
    format!(
        "INSERT INTO tests ({}) VALUES ({}) ON CONFLICT (record_id) DO NOTHING",
        COLUMNS.join(", "),
        SQLITE.params(COLUMNS.len())
    )
}

impl Transactions for Sqlite {
    type Tx<'a> = Transaction<'a>;

    fn begin(&mut self) -> Result<Transaction<'_>, StoreError> {
        Ok(self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)?)
    }

    fn insert_in(tx: &mut Transaction<'_>, rec: &mut BoardRecord) -> Result<bool, StoreError> {
        let before: bool = tx
            .prepare_cached(
                "SELECT EXISTS (SELECT 1 FROM tests WHERE serial = ?1 AND design_hash = ?2 \
                 AND record_id <> ?3)",
            )?
            .query_row(params![rec.serial, rec.design.hash, rec.record_id], |r| {
                r.get(0)
            })?;
        rec.retest |= before;
        let row = Row::of(rec);
        let n = tx
            .prepare_cached(&insert_sql())?
            .execute(params_from_iter(row.sqlite_values()))?;
        Ok(n == 1)
    }

    fn commit(tx: Transaction<'_>) -> Result<(), StoreError> {
        Ok(tx.commit()?)
    }
}

impl Store for Sqlite {
    backend::writes_by_transactions!();

    fn contains(&mut self, record_id: &str) -> Result<bool, StoreError> {
        Ok(self
            .conn
            .prepare_cached(&backend::contains_sql(SQLITE))?
            .query_row([record_id], |_| Ok(()))
            .optional()?
            .is_some())
    }

    fn tests_of(&mut self, serial: &str, design_hash: &str) -> Result<u64, StoreError> {
        let n: i64 = self
            .conn
            .prepare_cached(&backend::tests_of_sql(SQLITE))?
            .query_row([serial, design_hash], |r| r.get(0))?;
        Ok(backend::count(n))
    }

    fn insert_repair(&mut self, rep: &RepairRecord) -> Result<bool, StoreError> {
        let row = RepairRow::of(rep);
        let n = self.conn.execute(
            &backend::insert_repair_sql(SQLITE),
            params_from_iter(row.sqlite_values()),
        )?;
        Ok(n == 1)
    }

    fn for_each_test(&mut self, filter: &Filter, f: Visit<'_>) -> Result<(), StoreError> {
        let sql = backend::filtered_tests_sql(SQLITE, &COLUMNS.join(", "), "", "");
        let mut stmt = self.conn.prepare(&sql)?;
        let p: [rusqlite::types::Value; 4] = [
            filter.station.clone().into(),
            filter.lot.clone().into(),
            filter.since_ms.into(),
            filter.until_ms.into(),
        ];
        let mut rows = stmt.query(params_from_iter(p.iter()))?;
        while let Some(r) = rows.next()? {
            f(Row::read(r)?.record()?)?;
        }
        Ok(())
    }

    fn repairs(&mut self) -> Result<Vec<RepairRecord>, StoreError> {
        let mut stmt = self.conn.prepare(&backend::repairs_sql())?;
        let rows = stmt.query_map([], |r| RepairRow::read(r).map(RepairRow::record))?;
        Ok(rows.collect::<Result<_, _>>()?)
    }

    fn relax_sync(&mut self) -> Result<(), StoreError> {
        Ok(self.conn.pragma_update(None, "synchronous", "NORMAL")?)
    }

    fn schema_version(&mut self) -> Result<i64, StoreError> {
        Ok(self
            .conn
            .query_row(backend::MAX_VERSION_SQL, [], |r| r.get(0))?)
    }
}
