//! The PostgreSQL store: a server for a line of stations. Each test is one transaction; the
//! record id is unique, so a test written twice (a retried write, an import run again) is kept
//! once; migrations run under a transaction-scoped advisory lock, so stations starting at once
//! apply each migration once.

use ::postgres::{Client, NoTls, Statement, Transaction};

use super::columns::{repair, Row, COLUMNS, JSON_COLUMNS, REPAIR_COLUMNS};
use super::{Filter, Store, StoreError, Written, IMPORT_CHUNK, SCHEMA_VERSION};
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
        migrate(&mut client)?;
        let insert = client.prepare(&insert_sql())?;
        Ok(Self { client, insert })
    }
}

fn migrate(client: &mut Client) -> Result<(), StoreError> {
    let mut tx = client.transaction()?;
    tx.execute("SELECT pg_advisory_xact_lock($1)", &[&MIGRATION_LOCK])?;
    tx.batch_execute(
        "CREATE TABLE IF NOT EXISTS biasjig_schema (
             version BIGINT PRIMARY KEY, applied_utc TEXT NOT NULL)",
    )?;
    let have: i64 = tx
        .query_one("SELECT COALESCE(MAX(version), 0) FROM biasjig_schema", &[])?
        .get(0);
    if have > SCHEMA_VERSION {
        return Err(StoreError::Schema {
            found: have,
            known: SCHEMA_VERSION,
        });
    }
    for (v, sql) in MIGRATIONS {
        if v > have {
            tx.batch_execute(sql)?;
            tx.execute(
                "INSERT INTO biasjig_schema (version, applied_utc) VALUES ($1, $2)",
                &[&v, &crate::clock::now_utc()],
            )?;
        }
    }
    tx.commit()?;
    Ok(())
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

fn insert_in(
    tx: &mut Transaction<'_>,
    stmt: &Statement,
    rec: &mut BoardRecord,
) -> Result<bool, StoreError> {
    let r = Row::of(rec);
    let rows = tx.query(
        stmt,
        &[
            &r.record_id,
            &r.time_utc,
            &r.time_ms,
            &r.serial,
            &r.design_hash,
            &r.design_id,
            &r.design_digest,
            &r.settings_hash,
            &r.overrides,
            &r.station,
            &r.operator,
            &r.lot,
            &r.tool_version,
            &r.firmware_version,
            &r.retest,
            &r.source,
            &r.vcc,
            &r.vb,
            &r.ve,
            &r.vc,
            &r.verdict,
            &r.reason,
            &r.windows,
            &r.signal,
            &r.nominal,
            &r.derived,
            &r.faults,
            &r.explained,
            &r.supply,
            &r.settings,
            &r.typed,
        ],
    )?;
    match rows.first() {
        Some(row) => {
            rec.retest = row.try_get(0)?;
            Ok(true)
        }
        None => Ok(false),
    }
}

fn row_of(r: &::postgres::Row) -> Result<Row, ::postgres::Error> {
    Ok(Row {
        record_id: r.try_get(0)?,
        time_utc: r.try_get(1)?,
        time_ms: r.try_get(2)?,
        serial: r.try_get(3)?,
        design_hash: r.try_get(4)?,
        design_id: r.try_get(5)?,
        design_digest: r.try_get(6)?,
        settings_hash: r.try_get(7)?,
        overrides: r.try_get(8)?,
        station: r.try_get(9)?,
        operator: r.try_get(10)?,
        lot: r.try_get(11)?,
        tool_version: r.try_get(12)?,
        firmware_version: r.try_get(13)?,
        retest: r.try_get(14)?,
        source: r.try_get(15)?,
        vcc: r.try_get(16)?,
        vb: r.try_get(17)?,
        ve: r.try_get(18)?,
        vc: r.try_get(19)?,
        verdict: r.try_get(20)?,
        reason: r.try_get(21)?,
        windows: r.try_get(22)?,
        signal: r.try_get(23)?,
        nominal: r.try_get(24)?,
        derived: r.try_get(25)?,
        faults: r.try_get(26)?,
        explained: r.try_get(27)?,
        supply: r.try_get(28)?,
        settings: r.try_get(29)?,
        typed: r.try_get(30)?,
    })
}

impl Store for Postgres {
    fn insert(&mut self, rec: &mut BoardRecord) -> Result<Written, StoreError> {
        let mut tx = self.client.transaction()?;
        let new = insert_in(&mut tx, &self.insert, rec)?;
        tx.commit()?;
        Ok(Written { new })
    }

    fn insert_many(&mut self, recs: &mut [BoardRecord]) -> Result<usize, StoreError> {
        let mut new = 0;
        for chunk in recs.chunks_mut(IMPORT_CHUNK) {
            let mut tx = self.client.transaction()?;
            for rec in chunk {
                new += usize::from(insert_in(&mut tx, &self.insert, rec)?);
            }
            tx.commit()?;
        }
        Ok(new)
    }

    fn contains(&mut self, record_id: &str) -> Result<bool, StoreError> {
        Ok(self
            .client
            .query_opt("SELECT 1 FROM tests WHERE record_id = $1", &[&record_id])?
            .is_some())
    }

    fn tests_of(&mut self, serial: &str, design_hash: &str) -> Result<u64, StoreError> {
        let n: i64 = self
            .client
            .query_one(
                "SELECT COUNT(*) FROM tests WHERE serial = $1 AND design_hash = $2",
                &[&serial, &design_hash],
            )?
            .try_get(0)?;
        Ok(u64::try_from(n).unwrap_or(0))
    }

    fn insert_repair(&mut self, rep: &RepairRecord) -> Result<bool, StoreError> {
        let sql = format!(
            "INSERT INTO repairs ({}) VALUES ($1, $2, $3, $4, $5, $6, $7, $8) \
             ON CONFLICT (record_id) DO NOTHING",
            REPAIR_COLUMNS.join(", ")
        );
        let n = self.client.execute(
            sql.as_str(),
            &[
                &rep.record_id,
                &rep.time,
                &rep.time_ms(),
                &rep.serial,
                &rep.part,
                &rep.mode,
                &rep.technician,
                &rep.note,
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
            "SELECT {} FROM tests WHERE ($1::text IS NULL OR station = $1) \
             AND ($2::text IS NULL OR lot = $2) AND ($3::bigint IS NULL OR time_ms >= $3) \
             AND ($4::bigint IS NULL OR time_ms <= $4) ORDER BY time_ms, seq",
            select_list()
        );
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
                f(row_of(r)?.record()?)?;
            }
        }
        tx.commit()?;
        Ok(())
    }

    fn repairs(&mut self) -> Result<Vec<RepairRecord>, StoreError> {
        let rows = self.client.query(
            "SELECT record_id, time_utc, serial, part, mode, technician, note FROM repairs \
             ORDER BY time_ms, seq",
            &[],
        )?;
        rows.iter()
            .map(|r| {
                Ok(repair(
                    r.try_get(0)?,
                    r.try_get(1)?,
                    r.try_get(2)?,
                    r.try_get(3)?,
                    r.try_get(4)?,
                    r.try_get(5)?,
                    r.try_get(6)?,
                ))
            })
            .collect()
    }

    fn relax_sync(&mut self) -> Result<(), StoreError> {
        Ok(self.client.batch_execute("SET synchronous_commit = off")?)
    }

    fn schema_version(&mut self) -> Result<i64, StoreError> {
        Ok(self
            .client
            .query_one("SELECT MAX(version) FROM biasjig_schema", &[])?
            .get(0))
    }
}
