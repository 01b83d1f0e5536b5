-- Nullbench schema 1: design -> revision -> unit -> session -> readings.
-- Every reading keeps its raw value and a reference to the calibration + path it was corrected with,
-- so a later correction can be re-applied without losing the original.

CREATE TABLE designs (
  id          TEXT PRIMARY KEY,
  name        TEXT NOT NULL UNIQUE,
  notes       TEXT NOT NULL DEFAULT '',
  created_at  TEXT NOT NULL
);

CREATE TABLE revisions (
  id          TEXT PRIMARY KEY,
  design_id   TEXT NOT NULL REFERENCES designs(id),
  name        TEXT NOT NULL,
  changes     TEXT NOT NULL DEFAULT '',
  created_at  TEXT NOT NULL,
  UNIQUE (design_id, name)
);

CREATE TABLE units (
  id          TEXT PRIMARY KEY,
  revision_id TEXT NOT NULL REFERENCES revisions(id),
  serial      TEXT NOT NULL UNIQUE,
  build_date  TEXT NOT NULL DEFAULT '',
  builder     TEXT NOT NULL DEFAULT '',
  notes       TEXT NOT NULL DEFAULT '',
  created_at  TEXT NOT NULL
);

CREATE TABLE sessions (
  id            TEXT PRIMARY KEY,
  unit_id       TEXT NOT NULL REFERENCES units(id),
  receiver_json TEXT NOT NULL,
  path_json     TEXT NOT NULL,
  carrier_hz    REAL NOT NULL,
  tone_hz       REAL NOT NULL,
  tx_pep_dbm    REAL NOT NULL,
  rx_pep_dbm    REAL NOT NULL,
  operator      TEXT NOT NULL DEFAULT '',
  notes         TEXT NOT NULL DEFAULT '',
  trims_json    TEXT NOT NULL,
  started_at    TEXT NOT NULL,
  ended_at      TEXT
);
CREATE INDEX sessions_unit ON sessions(unit_id);

-- One row per distinct (calibration, path) pair that corrected some reading.
CREATE TABLE corrections (
  id               INTEGER PRIMARY KEY,
  digest           TEXT NOT NULL UNIQUE,
  calibration_json TEXT NOT NULL,
  path_json        TEXT NOT NULL
);

CREATE TABLE readings (
  id            INTEGER PRIMARY KEY,
  uid           TEXT NOT NULL UNIQUE,
  session_id    TEXT NOT NULL REFERENCES sessions(id),
  t_ms          REAL NOT NULL,
  freq_hz       REAL NOT NULL,
  role          TEXT NOT NULL,
  raw           REAL NOT NULL,
  dbm_rx        REAL NOT NULL,
  dbm_dut       REAL NOT NULL,
  u_db          REAL NOT NULL,
  settled       INTEGER NOT NULL,
  kept          INTEGER NOT NULL DEFAULT 0,
  floor_limited INTEGER NOT NULL DEFAULT 0,
  overload      INTEGER NOT NULL DEFAULT 0,
  trims_json    TEXT NOT NULL,
  correction_id INTEGER NOT NULL REFERENCES corrections(id),
  note          TEXT NOT NULL DEFAULT ''
);
CREATE INDEX readings_session ON readings(session_id, t_ms);
CREATE INDEX readings_kept ON readings(session_id, kept) WHERE kept = 1;

-- A stretch of time in which the receiver gave no reading (link fault, timeout): recorded, never filled in.
CREATE TABLE gaps (
  id          INTEGER PRIMARY KEY,
  session_id  TEXT NOT NULL REFERENCES sessions(id),
  t_start_ms  REAL NOT NULL,
  t_end_ms    REAL,
  code        TEXT NOT NULL,
  message     TEXT NOT NULL
);
CREATE INDEX gaps_session ON gaps(session_id);
