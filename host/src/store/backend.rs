//! What the SQLite and PostgreSQL stores share, written once: bringing a store to the current
//! schema, one transaction per test, an import in chunks of [`IMPORT_CHUNK`] tests, and the SQL
//! text that differs between them only in how a parameter is written.

use super::columns::REPAIR_COLUMNS;
use super::{StoreError, Written, IMPORT_CHUNK, SCHEMA_VERSION};
use crate::record::BoardRecord;

/// One SQL dialect's spelling of what both stores write.
#[derive(Debug, Clone, Copy)]
pub struct Dialect {
    /// What comes before a parameter's number.
    mark: char,
    /// The type of the schema table's version column.
    version_type: &'static str,
}

/// SQLite: `?1`, versions as `INTEGER`.
pub const SQLITE: Dialect = Dialect {
    mark: '?',
    version_type: "INTEGER",
};

/// PostgreSQL: `$1`, versions as `BIGINT`.
pub const POSTGRES: Dialect = Dialect {
    mark: '$',
    version_type: "BIGINT",
};

impl Dialect {
    /// Parameter `k` (from 1).
    pub fn param(self, k: usize) -> String {
        format!("{}{k}", self.mark)
    }

    /// The parameters 1..=n, comma-separated.
    pub fn params(self, n: usize) -> String {
        (1..=n)
            .map(|k| self.param(k))
            .collect::<Vec<_>>()
            .join(", ")
    }
}

/// The schema table, made when it is missing.
pub fn schema_table(d: Dialect) -> String {
    format!(
        "CREATE TABLE IF NOT EXISTS biasjig_schema (
             version {} PRIMARY KEY, applied_utc TEXT NOT NULL)",
        d.version_type
    )
}

/// The schema version of a store (0 for a new one).
pub const SCHEMA_VERSION_SQL: &str = "SELECT COALESCE(MAX(version), 0) FROM biasjig_schema";

/// Records that a migration was applied.
pub fn applied_sql(d: Dialect) -> String {
    format!(
        "INSERT INTO biasjig_schema (version, applied_utc) VALUES ({}, {})",
        d.param(1),
        d.param(2)
    )
}

/// The steps of a migration inside one transaction, as each backend runs them.
pub trait Migrate {
    /// Run SQL statements.
    fn batch(&mut self, sql: &str) -> Result<(), StoreError>;
    /// The store's schema version (0 for a new store).
    fn version(&mut self) -> Result<i64, StoreError>;
    /// Record that version `v` was applied at `utc`.
    fn applied(&mut self, v: i64, utc: &str) -> Result<(), StoreError>;
}

/// Bring a store to the current schema inside the transaction `tx`: make the schema table, then
/// apply each of `migrations` (version, SQL) above the store's version, in order. A store made
/// by a newer tool is refused.
pub fn migrate(
    d: Dialect,
    tx: &mut impl Migrate,
    migrations: &[(i64, &str)],
) -> Result<(), StoreError> {
    tx.batch(&schema_table(d))?;
    let have = tx.version()?;
    if have > SCHEMA_VERSION {
        return Err(StoreError::Schema {
            found: have,
            known: SCHEMA_VERSION,
        });
    }
    for (v, sql) in migrations {
        if *v > have {
            tx.batch(sql)?;
            tx.applied(*v, &crate::clock::now_utc())?;
        }
    }
    Ok(())
}

/// A backend's transactions: begin, write a test, commit.
pub trait Transactions {
    /// An open transaction.
    type Tx<'a>
    where
        Self: 'a;
    /// Begin a transaction that writes.
    fn begin(&mut self) -> Result<Self::Tx<'_>, StoreError>;
    /// Write one test inside `tx`; false when a record with its id was already there. Sets
    /// `rec.retest` when the serial was tested before with the same design.
    fn insert_in(tx: &mut Self::Tx<'_>, rec: &mut BoardRecord) -> Result<bool, StoreError>;
    /// Commit `tx`.
    fn commit(tx: Self::Tx<'_>) -> Result<(), StoreError>;
}

/// Write one test in one transaction.
pub fn insert_one<B: Transactions>(
    b: &mut B,
    rec: &mut BoardRecord,
) -> Result<Written, StoreError> {
    let mut tx = b.begin()?;
    let new = B::insert_in(&mut tx, rec)?;
    B::commit(tx)?;
    Ok(Written { new })
}

/// Write many tests, [`IMPORT_CHUNK`] per transaction; how many were new.
pub fn insert_chunked<B: Transactions>(
    b: &mut B,
    recs: &mut [BoardRecord],
) -> Result<usize, StoreError> {
    let mut new = 0;
    for chunk in recs.chunks_mut(IMPORT_CHUNK) {
        let mut tx = b.begin()?;
        for rec in chunk {
            new += usize::from(B::insert_in(&mut tx, rec)?);
        }
        B::commit(tx)?;
    }
    Ok(new)
}

/// The insert of a repair; a record id already there changes nothing.
pub fn insert_repair_sql(d: Dialect) -> String {
    format!(
        "INSERT INTO repairs ({}) VALUES ({}) ON CONFLICT (record_id) DO NOTHING",
        REPAIR_COLUMNS.join(", "),
        d.params(REPAIR_COLUMNS.len())
    )
}

/// Every repair, in time order.
pub fn repairs_sql() -> String {
    format!(
        "SELECT {} FROM repairs ORDER BY time_ms, seq",
        REPAIR_COLUMNS.join(", ")
    )
}

/// The tests of a serial with a design hash.
pub fn tests_of_sql(d: Dialect) -> String {
    format!(
        "SELECT COUNT(*) FROM tests WHERE serial = {} AND design_hash = {}",
        d.param(1),
        d.param(2)
    )
}

/// A test with a record id.
pub fn contains_sql(d: Dialect) -> String {
    format!("SELECT 1 FROM tests WHERE record_id = {}", d.param(1))
}

/// The schema version of a store.
pub const MAX_VERSION_SQL: &str = "SELECT MAX(version) FROM biasjig_schema";

/// The tests that pass a filter, in test order: `columns` is the select list, `text` and
/// `int` the casts of a text and an integer parameter (empty for SQLite).
pub fn filtered_tests_sql(d: Dialect, columns: &str, text: &str, int: &str) -> String {
    let p = |k: usize| d.param(k);
    format!(
        "SELECT {columns} FROM tests WHERE ({s}{text} IS NULL OR station = {s}) \
         AND ({l}{text} IS NULL OR lot = {l}) AND ({f}{int} IS NULL OR time_ms >= {f}) \
         AND ({u}{int} IS NULL OR time_ms <= {u}) ORDER BY time_ms, seq",
        s = p(1),
        l = p(2),
        f = p(3),
        u = p(4)
    )
}

/// A count read from a store as the unsigned count it is (a negative count reads as 0).
pub fn count(n: i64) -> u64 {
    u64::try_from(n).unwrap_or(0)
}

/// The `insert` and `insert_many` of a [`super::Store`] whose backend implements
/// [`Transactions`]: one transaction per test, an import in chunks.
macro_rules! writes_by_transactions {
    () => {
        fn insert(&mut self, rec: &mut BoardRecord) -> Result<Written, StoreError> {
            backend::insert_one(self, rec)
        }

        fn insert_many(&mut self, recs: &mut [BoardRecord]) -> Result<usize, StoreError> {
            backend::insert_chunked(self, recs)
        }
    };
}
pub(super) use writes_by_transactions;

#[cfg(test)]
mod tests {
    use super::*;

    /// The SQL both stores ran before it was written once here, character for character.
    #[test]
    fn each_dialect_spells_the_sql_as_its_store_did() {
        assert_eq!(
            filtered_tests_sql(SQLITE, "a, b", "", ""),
            "SELECT a, b FROM tests WHERE (?1 IS NULL OR station = ?1) \
             AND (?2 IS NULL OR lot = ?2) AND (?3 IS NULL OR time_ms >= ?3) \
             AND (?4 IS NULL OR time_ms <= ?4) ORDER BY time_ms, seq"
        );
        assert_eq!(
            filtered_tests_sql(POSTGRES, "a, b", "::text", "::bigint"),
            "SELECT a, b FROM tests WHERE ($1::text IS NULL OR station = $1) \
             AND ($2::text IS NULL OR lot = $2) AND ($3::bigint IS NULL OR time_ms >= $3) \
             AND ($4::bigint IS NULL OR time_ms <= $4) ORDER BY time_ms, seq"
        );
        assert_eq!(
            insert_repair_sql(SQLITE),
            "INSERT INTO repairs (record_id, time_utc, time_ms, serial, part, mode, technician, \
             note) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8) ON CONFLICT (record_id) DO NOTHING"
        );
        assert_eq!(
            insert_repair_sql(POSTGRES),
            "INSERT INTO repairs (record_id, time_utc, time_ms, serial, part, mode, technician, \
             note) VALUES ($1, $2, $3, $4, $5, $6, $7, $8) ON CONFLICT (record_id) DO NOTHING"
        );
        assert_eq!(
            tests_of_sql(POSTGRES),
            "SELECT COUNT(*) FROM tests WHERE serial = $1 AND design_hash = $2"
        );
        assert_eq!(
            contains_sql(SQLITE),
            "SELECT 1 FROM tests WHERE record_id = ?1"
        );
        assert_eq!(
            applied_sql(POSTGRES),
            "INSERT INTO biasjig_schema (version, applied_utc) VALUES ($1, $2)"
        );
        assert!(schema_table(SQLITE).contains("version INTEGER PRIMARY KEY"));
        assert!(schema_table(POSTGRES).contains("version BIGINT PRIMARY KEY"));
    }
}
