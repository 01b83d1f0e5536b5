-- Nullbench schema 2: real receivers. Stored receiver profiles (with their calibration and the guided-calibration
-- injections it was fitted from), serial command-set templates, and frequency-stepped plan runs with their
-- per-point results, so a plan can be resumed after a cancel or a crash.

CREATE TABLE serial_templates (
  name        TEXT PRIMARY KEY,
  json        TEXT NOT NULL,
  created_at  TEXT NOT NULL,
  updated_at  TEXT NOT NULL
);

CREATE TABLE receiver_profiles (
  id               TEXT PRIMARY KEY,
  name             TEXT NOT NULL UNIQUE,
  source           TEXT NOT NULL,
  template         TEXT,
  calibration_json TEXT,
  injections_json  TEXT NOT NULL DEFAULT '[]',
  bandwidth_hz     REAL NOT NULL,
  max_input_dbm    REAL NOT NULL,
  notes            TEXT NOT NULL DEFAULT '',
  created_at       TEXT NOT NULL,
  updated_at       TEXT NOT NULL
);

CREATE TABLE plan_runs (
  id          TEXT PRIMARY KEY,
  session_id  TEXT NOT NULL REFERENCES sessions(id),
  spec_json   TEXT NOT NULL,
  state       TEXT NOT NULL CHECK (state IN ('running', 'cancelled', 'interrupted', 'failed', 'done')),
  message     TEXT NOT NULL DEFAULT '',
  created_at  TEXT NOT NULL,
  updated_at  TEXT NOT NULL
);
CREATE INDEX plan_runs_session ON plan_runs(session_id);

-- One row per point of a run; the averaged figures stay NULL until the point is done.
CREATE TABLE plan_points (
  run_id        TEXT NOT NULL REFERENCES plan_runs(id),
  idx           INTEGER NOT NULL,
  role          TEXT NOT NULL,
  freq_hz       REAL NOT NULL,
  state         TEXT NOT NULL CHECK (state IN ('pending', 'done')),
  n             INTEGER,
  dbm_rx        REAL,
  dbm_dut       REAL,
  u_db          REAL,
  u_stat_db     REAL,
  spread_db     REAL,
  floor_limited INTEGER,
  overload      INTEGER,
  settled       INTEGER,
  t_start_ms    REAL,
  t_end_ms      REAL,
  PRIMARY KEY (run_id, idx)
);

-- Which stored readings each point's average was made of (they stay ordinary readings of the session).
CREATE TABLE plan_point_readings (
  run_id      TEXT NOT NULL,
  idx         INTEGER NOT NULL,
  reading_id  INTEGER NOT NULL REFERENCES readings(id),
  PRIMARY KEY (run_id, idx, reading_id),
  FOREIGN KEY (run_id, idx) REFERENCES plan_points(run_id, idx)
);
