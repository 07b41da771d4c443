//! The PostgreSQL store: a server for a line of stations. Each test is one transaction; the
//! record id is unique, so a test written twice (a retried write, an import run again) is kept
//! once; migrations run under a transaction-scoped advisory lock, so stations starting at once
//! apply each migration once.

use ::postgres::{Client, NoTls, Statement, Transaction};

use super::backend::{self, Migrate, Transactions, POSTGRES};
use super::columns::{ColumnSource, ColumnValue, RepairRow, Row, COLUMNS, JSON_COLUMNS};
use super::{Filter, Store, StoreError, Visit, Written};
use crate::record::{BoardRecord, RepairRecord};

/// The migrations, in order: (version, SQL).
const MIGRATIONS: [(i64, &str); 1] = [(1, include_str!("sql/postgres/0001_tests.sql"))];

/// Advisory lock key of the migrations ("biasjig" in ASCII).
const MIGRATION_LOCK: i64 = 0x0062_6961_736a_6967;

/// An open PostgreSQL store.
pub struct Postgres {
    client: Client,
    /// The insert, prepared once (one round trip per test).
    insert: Statement,
}

impl Postgres {
    /// Connect and bring the database to the current schema.
    pub fn open(url: &str) -> Result<Self, StoreError> {
        let mut client = Client::connect(url, NoTls)?;
        let mut tx = client.transaction()?;
        tx.execute("SELECT pg_advisory_xact_lock($1)", &[&MIGRATION_LOCK])?;
        backend::migrate(POSTGRES, &mut tx, &MIGRATIONS)?;
        tx.commit()?;
        let insert = client.prepare(&insert_sql())?;
        Ok(Self { client, insert })
    }
}

impl Migrate for Transaction<'_> {
    fn batch(&mut self, sql: &str) -> Result<(), StoreError> {
        Ok(self.batch_execute(sql)?)
    }

    fn version(&mut self) -> Result<i64, StoreError> {
        Ok(self
            .query_one(backend::SCHEMA_VERSION_SQL, &[])?
            .try_get(0)?)
    }

    fn applied(&mut self, v: i64, utc: &str) -> Result<(), StoreError> {
        self.execute(backend::applied_sql(POSTGRES).as_str(), &[&v, &utc])?;
        Ok(())
    }
}

impl ColumnSource for ::postgres::Row {
    type Error = ::postgres::Error;

    fn column<T: ColumnValue>(&self, i: usize) -> Result<T, Self::Error> {
        self.try_get(i)
    }
}

/// The insert of one test: the retest flag is set in the same statement (an earlier test of the
/// serial with the design), and a record id already there changes nothing (no row returned).
fn insert_sql() -> String {
    let marks: Vec<String> = COLUMNS
        .iter()
        .enumerate()
        .map(|(k, c)| match *c {
            c if JSON_COLUMNS.contains(&c) => format!("CAST(${}::text AS jsonb)", k + 1),
            "retest" => format!(
                "(${} OR EXISTS (SELECT 1 FROM tests WHERE serial = $4 AND design_hash = $5 \
                 AND record_id <> $1))",
                k + 1
            ),
            _ => format!("${}", k + 1),
        })
        .collect();
    format!(
        "INSERT INTO tests ({}) SELECT {} ON CONFLICT (record_id) DO NOTHING RETURNING retest",
        COLUMNS.join(", "),
        marks.join(", ")
    )
}

/// The columns of `tests` as text where they are JSON.
fn select_list() -> String {
    COLUMNS
        .iter()
        .map(|c| {
            if JSON_COLUMNS.contains(c) {
                format!("{c}::text")
            } else {
                (*c).to_string()
            }
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// A transaction and the prepared insert.
pub struct PgTx<'a> {
    tx: Transaction<'a>,
    insert: &'a Statement,
}

impl Transactions for Postgres {
    type Tx<'a> = PgTx<'a>;

    fn begin(&mut self) -> Result<PgTx<'_>, StoreError> {
        Ok(PgTx {
            tx: self.client.transaction()?,
            insert: &self.insert,
        })
    }

    fn insert_in(tx: &mut PgTx<'_>, rec: &mut BoardRecord) -> Result<bool, StoreError> {
        let r = Row::of(rec);
        let rows = tx.tx.query(tx.insert, &r.postgres_values())?;
        match rows.first() {
            Some(row) => {
                rec.retest = row.try_get(0)?;
                Ok(true)
            }
            None => Ok(false),
        }
    }

    fn commit(tx: PgTx<'_>) -> Result<(), StoreError> {
        Ok(tx.tx.commit()?)
    }
}

impl Store for Postgres {
    backend::writes_by_transactions!();

    fn contains(&mut self, record_id: &str) -> Result<bool, StoreError> {
        Ok(self
            .client
            .query_opt(backend::contains_sql(POSTGRES).as_str(), &[&record_id])?
            .is_some())
    }

    fn tests_of(&mut self, serial: &str, design_hash: &str) -> Result<u64, StoreError> {
        let n: i64 = self
            .client
            .query_one(
                backend::tests_of_sql(POSTGRES).as_str(),
                &[&serial, &design_hash],
            )?
            .try_get(0)?;
        Ok(backend::count(n))
    }

    fn insert_repair(&mut self, rep: &RepairRecord) -> Result<bool, StoreError> {
        let row = RepairRow::of(rep);
        let n = self.client.execute(
            backend::insert_repair_sql(POSTGRES).as_str(),
            &row.postgres_values(),
        )?;
        Ok(n == 1)
    }

    fn for_each_test(&mut self, filter: &Filter, f: Visit<'_>) -> Result<(), StoreError> {
        let sql = backend::filtered_tests_sql(POSTGRES, &select_list(), "::text", "::bigint");
        let params: [&(dyn ::postgres::types::ToSql + Sync); 4] = [
            &filter.station,
            &filter.lot,
            &filter.since_ms,
            &filter.until_ms,
        ];
        // Rows arrive one at a time (bounded memory for a large line).
        let mut tx = self.client.transaction()?;
        let portal = tx.bind(sql.as_str(), &params)?;
        loop {
            let rows = tx.query_portal(&portal, 1000)?;
            if rows.is_empty() {
                break;
            }
            for r in &rows {
                f(Row::read(r)?.record()?)?;
            }
        }
        tx.commit()?;
        Ok(())
    }

    fn repairs(&mut self) -> Result<Vec<RepairRecord>, StoreError> {
        let rows = self.client.query(backend::repairs_sql().as_str(), &[])?;
        rows.iter()
            .map(|r| Ok(RepairRow::read(r)?.record()))
            .collect()
    }

    fn relax_sync(&mut self) -> Result<(), StoreError> {
        Ok(self.client.batch_execute("SET synchronous_commit = off")?)
    }

    fn schema_version(&mut self) -> Result<i64, StoreError> {
        Ok(self
            .client
            .query_one(backend::MAX_VERSION_SQL, &[])?
            .try_get(0)?)
    }
}
