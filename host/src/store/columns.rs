//! The `tests` row of a board record, shared by both backends: plain columns for what reports
//! filter and count on, JSON text for the nested parts.

use serde::de::DeserializeOwned;
use serde::Serialize;

use super::StoreError;
use crate::record::{BoardRecord, DcReadings, DesignRef, Outcome, RepairRecord};

/// A result row of either backend, read a column at a time by position.
pub trait ColumnSource {
    /// The backend's error.
    type Error;
    /// Column `i` of the row.
    fn column<T: ColumnValue>(&self, i: usize) -> Result<T, Self::Error>;
}

/// A column value both backends read.
pub trait ColumnValue: rusqlite::types::FromSql + for<'a> ::postgres::types::FromSql<'a> {}

impl<T: rusqlite::types::FromSql + for<'a> ::postgres::types::FromSql<'a>> ColumnValue for T {}

/// A table's row type, its column names in bind order (the fields' names, in the same order),
/// the row read from either backend and its values for either backend: the column list is
/// written once.
macro_rules! table_row {
    ($(#[$doc:meta])* $row:ident, $names:ident, { $($field:ident: $ty:ty),* $(,)? }) => {
        $(#[$doc])*
        #[derive(Debug, Clone, PartialEq)]
        pub struct $row {
            $(pub $field: $ty,)*
        }

        /// The column names of the row, in bind order.
        pub const $names: &[&str] = &[$(stringify!($field)),*];

        impl $row {
            /// The row from a backend's result row (the columns in bind order).
            pub fn read<C: ColumnSource>(c: &C) -> Result<Self, C::Error> {
                let mut i = 0usize..;
                Ok(Self {
                    $($field: c.column(i.next().unwrap_or_default())?,)*
                })
            }

            /// The values in bind order, for SQLite.
            pub fn sqlite_values(&self) -> Vec<&dyn rusqlite::ToSql> {
                vec![$(&self.$field),*]
            }

            /// The values in bind order, for PostgreSQL.
            pub fn postgres_values(&self) -> Vec<&(dyn ::postgres::types::ToSql + Sync)> {
                vec![$(&self.$field),*]
            }
        }
    };
}

table_row!(
    /// The columns of `tests` (without `seq`, the arrival order the store numbers).
    Row, COLUMNS, {
        record_id: String,
        time_utc: String,
        time_ms: i64,
        serial: String,
        design_hash: String,
        design_id: String,
        design_digest: Option<String>,
        settings_hash: Option<String>,
        overrides: Option<String>,
        station: String,
        operator: Option<String>,
        lot: Option<String>,
        tool_version: String,
        firmware_version: Option<String>,
        retest: bool,
        source: Option<String>,
        vcc: Option<f64>,
        vb: Option<f64>,
        ve: Option<f64>,
        vc: Option<f64>,
        verdict: String,
        reason: Option<String>,
        windows: String,
        signal: Option<String>,
        nominal: Option<String>,
        derived: Option<String>,
        faults: String,
        explained: Option<bool>,
        supply: Option<String>,
        settings: Option<String>,
        typed: Option<String>,
    }
);

table_row!(
    /// The columns of `repairs` (without `seq`).
    RepairRow, REPAIR_COLUMNS, {
        record_id: String,
        time_utc: String,
        time_ms: i64,
        serial: String,
        part: String,
        mode: String,
        technician: Option<String>,
        note: Option<String>,
    }
);

/// The JSON columns (PostgreSQL keeps them as `jsonb`).
pub const JSON_COLUMNS: [&str; 9] = [
    "supply",
    "settings",
    "overrides",
    "source",
    "windows",
    "signal",
    "nominal",
    "derived",
    "faults",
];

fn enc<T: Serialize>(v: &T) -> String {
    serde_json::to_string(v).unwrap_or_else(|_| "null".into())
}

fn enc_opt<T: Serialize>(v: Option<&T>) -> Option<String> {
    v.map(enc)
}

impl Row {
    /// The row of a record.
    pub fn of(r: &BoardRecord) -> Self {
        Self {
            record_id: r.record_id.clone(),
            time_utc: r.time.clone(),
            time_ms: r.time_ms(),
            serial: r.serial.clone(),
            design_hash: r.design.hash.clone(),
            design_id: r.design.id.clone(),
            design_digest: r.design.digest.clone(),
            settings_hash: r.settings_hash.clone(),
            overrides: enc_opt(r.overrides.as_ref()),
            station: r.station.clone(),
            operator: r.operator.clone(),
            lot: r.lot.clone(),
            tool_version: r.tool_version.clone(),
            firmware_version: r.firmware_version.clone(),
            retest: r.retest,
            source: enc_opt(r.source.as_ref()),
            vcc: r.readings.map(|d| d.vcc),
            vb: r.readings.map(|d| d.vb),
            ve: r.readings.map(|d| d.ve),
            vc: r.readings.map(|d| d.vc),
            verdict: r.verdict.word().into(),
            reason: r.reason.clone(),
            windows: enc(&r.nodes),
            signal: enc_opt(r.ac.as_ref()),
            nominal: enc_opt(r.nominal.as_ref()),
            derived: enc_opt(r.derived.as_ref()),
            faults: enc(&r.faults),
            explained: r.explained,
            supply: enc_opt(r.supply.as_ref()),
            settings: enc_opt(r.settings.as_ref()),
            typed: r.typed.clone(),
        }
    }

    /// The record of a row, checked whole.
    pub fn record(self) -> Result<BoardRecord, StoreError> {
        let id = self.record_id.clone();
        let bad = |why: String| StoreError::Row {
            record_id: id.clone(),
            why,
        };
        fn dec<T: DeserializeOwned>(s: &str) -> Result<T, String> {
            serde_json::from_str(s).map_err(|e| e.to_string())
        }
        fn dec_opt<T: DeserializeOwned>(s: Option<&String>) -> Result<Option<T>, String> {
            s.map(|s| dec(s)).transpose()
        }
        let verdict = Outcome::parse(&self.verdict)
            .ok_or_else(|| bad(format!("verdict {:?}", self.verdict)))?;
        let r = BoardRecord {
            record_id: self.record_id.clone(),
            time: self.time_utc,
            serial: self.serial,
            design: DesignRef {
                id: self.design_id,
                hash: self.design_hash,
                digest: self.design_digest,
            },
            settings_hash: self.settings_hash,
            settings: dec_opt(self.settings.as_ref()).map_err(&bad)?,
            overrides: dec_opt(self.overrides.as_ref()).map_err(&bad)?,
            station: self.station,
            operator: self.operator,
            lot: self.lot,
            tool_version: self.tool_version,
            firmware_version: self.firmware_version,
            retest: self.retest,
            source: dec_opt(self.source.as_ref()).map_err(&bad)?,
            readings: match (self.vcc, self.vb, self.ve, self.vc) {
                (Some(vcc), Some(vb), Some(ve), Some(vc)) => Some(DcReadings { vcc, vb, ve, vc }),
                (None, None, None, None) => None,
                _ => return Err(bad("readings: some of vcc, vb, ve, vc are missing".into())),
            },
            typed: self.typed,
            verdict,
            reason: self.reason,
            supply: dec_opt(self.supply.as_ref()).map_err(&bad)?,
            nodes: dec(&self.windows).map_err(&bad)?,
            ac: dec_opt(self.signal.as_ref()).map_err(&bad)?,
            nominal: dec_opt(self.nominal.as_ref()).map_err(&bad)?,
            derived: dec_opt(self.derived.as_ref()).map_err(&bad)?,
            faults: dec(&self.faults).map_err(&bad)?,
            explained: self.explained,
        };
        r.whole().map_err(|e| bad(e.to_string()))?;
        Ok(r)
    }
}

impl RepairRow {
    /// The row of a repair.
    pub fn of(r: &RepairRecord) -> Self {
        Self {
            record_id: r.record_id.clone(),
            time_utc: r.time.clone(),
            time_ms: r.time_ms(),
            serial: r.serial.clone(),
            part: r.part.clone(),
            mode: r.mode.clone(),
            technician: r.technician.clone(),
            note: r.note.clone(),
        }
    }

    /// The repair of a row.
    pub fn record(self) -> RepairRecord {
        RepairRecord {
            kind: "repair".into(),
            record_id: self.record_id,
            time: self.time_utc,
            serial: self.serial,
            part: self.part,
            mode: self.mode,
            technician: self.technician,
            note: self.note,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The bind order the stores used before the columns were written once (the `tests` and
    /// `repairs` tables of migration 1).
    #[test]
    fn columns_keep_their_bind_order() {
        let tests = "record_id time_utc time_ms serial design_hash design_id design_digest \
                     settings_hash overrides station operator lot tool_version firmware_version \
                     retest source vcc vb ve vc verdict reason windows signal nominal derived \
                     faults explained supply settings typed";
        assert_eq!(COLUMNS, tests.split_whitespace().collect::<Vec<_>>());
        let repairs = "record_id time_utc time_ms serial part mode technician note";
        assert_eq!(
            REPAIR_COLUMNS,
            repairs.split_whitespace().collect::<Vec<_>>()
        );
        for c in JSON_COLUMNS {
            assert!(COLUMNS.contains(&c), "{c}");
        }
    }
}
