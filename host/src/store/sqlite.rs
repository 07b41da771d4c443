//! The SQLite store: one file, write-ahead log (readers never block the writer), a busy timeout
//! so that stations writing at once wait their turn, `BEGIN IMMEDIATE` transactions and
//! `synchronous = FULL` (a committed test survives a power cut).

use std::path::Path;
use std::time::Duration;

use rusqlite::{params, params_from_iter, Connection, OptionalExtension, TransactionBehavior};

use super::columns::{repair, Row, COLUMNS, REPAIR_COLUMNS};
use super::{Filter, Store, StoreError, Written, IMPORT_CHUNK, SCHEMA_VERSION};
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
        migrate(&mut conn)?;
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

fn migrate(conn: &mut Connection) -> Result<(), StoreError> {
    let tx = conn.transaction_with_behavior(TransactionBehavior::Immediate)?;
    tx.execute_batch(
        "CREATE TABLE IF NOT EXISTS biasjig_schema (
             version INTEGER PRIMARY KEY, applied_utc TEXT NOT NULL)",
    )?;
    let have: i64 = tx.query_row(
        "SELECT COALESCE(MAX(version), 0) FROM biasjig_schema",
        [],
        |r| r.get(0),
    )?;
    if have > SCHEMA_VERSION {
        return Err(StoreError::Schema {
            found: have,
            known: SCHEMA_VERSION,
        });
    }
    for (v, sql) in MIGRATIONS {
        if v > have {
            tx.execute_batch(sql)?;
            tx.execute(
                "INSERT INTO biasjig_schema (version, applied_utc) VALUES (?1, ?2)",
                params![v, crate::clock::now_utc()],
            )?;
        }
    }
    tx.commit()?;
    Ok(())
}

fn insert_sql() -> String {
    let marks: Vec<String> = (1..=COLUMNS.len()).map(|k| format!("?{k}")).collect();
    format!(
        "INSERT INTO tests ({}) VALUES ({}) ON CONFLICT (record_id) DO NOTHING",
        COLUMNS.join(", "),
        marks.join(", ")
    )
}

/// Write one record inside an open transaction.
fn insert_in(tx: &rusqlite::Transaction<'_>, rec: &mut BoardRecord) -> Result<bool, StoreError> {
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
    let n = tx.prepare_cached(&insert_sql())?.execute(params![
        row.record_id,
        row.time_utc,
        row.time_ms,
        row.serial,
        row.design_hash,
        row.design_id,
        row.design_digest,
        row.settings_hash,
        row.overrides,
        row.station,
        row.operator,
        row.lot,
        row.tool_version,
        row.firmware_version,
        row.retest,
        row.source,
        row.vcc,
        row.vb,
        row.ve,
        row.vc,
        row.verdict,
        row.reason,
        row.windows,
        row.signal,
        row.nominal,
        row.derived,
        row.faults,
        row.explained,
        row.supply,
        row.settings,
        row.typed,
    ])?;
    Ok(n == 1)
}

fn row_of(r: &rusqlite::Row<'_>) -> rusqlite::Result<Row> {
    Ok(Row {
        record_id: r.get(0)?,
        time_utc: r.get(1)?,
        time_ms: r.get(2)?,
        serial: r.get(3)?,
        design_hash: r.get(4)?,
        design_id: r.get(5)?,
        design_digest: r.get(6)?,
        settings_hash: r.get(7)?,
        overrides: r.get(8)?,
        station: r.get(9)?,
        operator: r.get(10)?,
        lot: r.get(11)?,
        tool_version: r.get(12)?,
        firmware_version: r.get(13)?,
        retest: r.get(14)?,
        source: r.get(15)?,
        vcc: r.get(16)?,
        vb: r.get(17)?,
        ve: r.get(18)?,
        vc: r.get(19)?,
        verdict: r.get(20)?,
        reason: r.get(21)?,
        windows: r.get(22)?,
        signal: r.get(23)?,
        nominal: r.get(24)?,
        derived: r.get(25)?,
        faults: r.get(26)?,
        explained: r.get(27)?,
        supply: r.get(28)?,
        settings: r.get(29)?,
        typed: r.get(30)?,
    })
}

impl Store for Sqlite {
    fn insert(&mut self, rec: &mut BoardRecord) -> Result<Written, StoreError> {
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)?;
        let new = insert_in(&tx, rec)?;
        tx.commit()?;
        Ok(Written { new })
    }

    fn insert_many(&mut self, recs: &mut [BoardRecord]) -> Result<usize, StoreError> {
        let mut new = 0;
        for chunk in recs.chunks_mut(IMPORT_CHUNK) {
            let tx = self
                .conn
                .transaction_with_behavior(TransactionBehavior::Immediate)?;
            for rec in chunk {
                new += usize::from(insert_in(&tx, rec)?);
            }
            tx.commit()?;
        }
        Ok(new)
    }

    fn contains(&mut self, record_id: &str) -> Result<bool, StoreError> {
        Ok(self
            .conn
            .prepare_cached("SELECT 1 FROM tests WHERE record_id = ?1")?
            .query_row([record_id], |_| Ok(()))
            .optional()?
            .is_some())
    }

    fn tests_of(&mut self, serial: &str, design_hash: &str) -> Result<u64, StoreError> {
        let n: i64 = self
            .conn
            .prepare_cached("SELECT COUNT(*) FROM tests WHERE serial = ?1 AND design_hash = ?2")?
            .query_row([serial, design_hash], |r| r.get(0))?;
        Ok(u64::try_from(n).unwrap_or(0))
    }

    fn insert_repair(&mut self, rep: &RepairRecord) -> Result<bool, StoreError> {
        let sql = format!(
            "INSERT INTO repairs ({}) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8) \
             ON CONFLICT (record_id) DO NOTHING",
            REPAIR_COLUMNS.join(", ")
        );
        let n = self.conn.execute(
            &sql,
            params![
                rep.record_id,
                rep.time,
                rep.time_ms(),
                rep.serial,
                rep.part,
                rep.mode,
                rep.technician,
                rep.note
            ],
        )?;
        Ok(n == 1)
    }

    fn for_each_test(
        &mut self,
        filter: &Filter,
        f: &mut dyn FnMut(BoardRecord) -> Result<(), StoreError>,
    ) -> Result<(), StoreError> {
        let sql = format!(
            "SELECT {} FROM tests WHERE (?1 IS NULL OR station = ?1) AND (?2 IS NULL OR lot = ?2) \
             AND (?3 IS NULL OR time_ms >= ?3) AND (?4 IS NULL OR time_ms <= ?4) \
             ORDER BY time_ms, seq",
            COLUMNS.join(", ")
        );
        let mut stmt = self.conn.prepare(&sql)?;
        let p: [rusqlite::types::Value; 4] = [
            filter.station.clone().into(),
            filter.lot.clone().into(),
            filter.since_ms.into(),
            filter.until_ms.into(),
        ];
        let mut rows = stmt.query(params_from_iter(p.iter()))?;
        while let Some(r) = rows.next()? {
            f(row_of(r)?.record()?)?;
        }
        Ok(())
    }

    fn repairs(&mut self) -> Result<Vec<RepairRecord>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT record_id, time_utc, serial, part, mode, technician, note FROM repairs \
             ORDER BY time_ms, seq",
        )?;
        let rows = stmt.query_map([], |r| {
            Ok(repair(
                r.get(0)?,
                r.get(1)?,
                r.get(2)?,
                r.get(3)?,
                r.get(4)?,
                r.get(5)?,
                r.get(6)?,
            ))
        })?;
        Ok(rows.collect::<Result<_, _>>()?)
    }

    fn relax_sync(&mut self) -> Result<(), StoreError> {
        Ok(self.conn.pragma_update(None, "synchronous", "NORMAL")?)
    }

    fn schema_version(&mut self) -> Result<i64, StoreError> {
        Ok(self
            .conn
            .query_row("SELECT MAX(version) FROM biasjig_schema", [], |r| r.get(0))?)
    }
}
