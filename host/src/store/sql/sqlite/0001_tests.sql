-- biasjig results store, schema version 1 (SQLite).
-- One row per test of one board; every column of the board record (host/src/record.rs).
-- Times are ISO 8601 UTC text (as written in the logs) plus milliseconds since 1970 for order
-- and date ranges. Nested parts of the record (windows, faults, signal readings) are JSON text.
CREATE TABLE tests (
    seq              INTEGER PRIMARY KEY AUTOINCREMENT,  -- arrival order in this store
    record_id        TEXT    NOT NULL UNIQUE,            -- SHA-256 hex; import skips an id already here
    time_utc         TEXT    NOT NULL,
    time_ms          INTEGER NOT NULL,
    serial           TEXT    NOT NULL,
    design_hash      TEXT    NOT NULL,
    design_id        TEXT    NOT NULL,
    design_digest    TEXT,
    settings_hash    TEXT,
    overrides        TEXT,                               -- JSON: flags that overrode the design file
    station          TEXT    NOT NULL,
    operator         TEXT,
    lot              TEXT,
    tool_version     TEXT    NOT NULL,
    firmware_version TEXT,
    retest           INTEGER NOT NULL CHECK (retest IN (0, 1)),
    source           TEXT,                               -- JSON: {kind, file, line}
    vcc              REAL,             -- readings, V (NULL: refused before any reading)
    vb               REAL,
    ve               REAL,
    vc               REAL,
    verdict          TEXT    NOT NULL CHECK (verdict IN ('pass', 'fail', 'refused')),
    reason           TEXT,                               -- why refused
    windows          TEXT    NOT NULL,                   -- JSON: {node: {measured, low, high, ok}}
    signal           TEXT,                               -- JSON: [{f, measured, low, high, ok}] or NULL
    nominal          TEXT,                               -- JSON: windows at the nominal supply
    derived          TEXT,                               -- JSON: IC, IB, hFE, region
    faults           TEXT    NOT NULL,                   -- JSON: ranked faults, best first
    explained        INTEGER CHECK (explained IN (0, 1)),
    supply           TEXT,                               -- JSON: {measured, low, high, ok}
    settings         TEXT,                               -- JSON: test ambient, meter, inputs
    typed            TEXT                                -- the readings as typed (manual station)
);
CREATE INDEX tests_board ON tests (serial, design_hash);
CREATE INDEX tests_order ON tests (time_ms, seq);

-- The rework loop: what a repair technician found actually wrong with a board.
CREATE TABLE repairs (
    seq        INTEGER PRIMARY KEY AUTOINCREMENT,
    record_id  TEXT    NOT NULL UNIQUE,
    time_utc   TEXT    NOT NULL,
    time_ms    INTEGER NOT NULL,
    serial     TEXT    NOT NULL,
    part       TEXT    NOT NULL,
    mode       TEXT    NOT NULL,
    technician TEXT,
    note       TEXT
);
CREATE INDEX repairs_board ON repairs (serial);
