-- Nullbench schema 6: compact readings. A reading cost 271 bytes on disk, half of it two text UUIDs (its own,
-- with a unique index, and its session's, in the row and again in the session index). Now:
--   * a session has a small number (sessions.no) that its readings refer to;
--   * a reading's stable id (uid) is kept as its 16 bytes when it is a UUID, or as the text a bundle brought;
--     it has no index of its own: an import finds a reading by session and time, then compares the uid;
--   * trimmer settings, which repeat for thousands of readings, are stored once (trim_sets), as corrections are;
--   * reading_cells keeps, per session, point and 1024 ms of reading time, the count, minimum and maximum of
--     the corrected level (a trigger adds each new reading), so a chart of a 24-hour session reads some
--     80,000 cells instead of two million readings.
-- readings_wide shows a reading as before (uid as text, session_id, trims_json) for tests and for anyone who
-- opens the file with another SQLite program.
-- The migration runs with foreign keys off (the way SQLite documents for rebuilding a table) and checks
-- them before it commits.

ALTER TABLE sessions ADD COLUMN no INTEGER;
UPDATE sessions SET no = rowid;
CREATE UNIQUE INDEX sessions_no ON sessions(no);
CREATE TRIGGER sessions_number AFTER INSERT ON sessions WHEN new.no IS NULL
BEGIN
  UPDATE sessions SET no = (SELECT COALESCE(MAX(no), 0) + 1 FROM sessions) WHERE id = new.id;
END;

CREATE TABLE trim_sets (
  id    INTEGER PRIMARY KEY,
  json  TEXT NOT NULL UNIQUE
);
INSERT INTO trim_sets (json) SELECT DISTINCT trims_json FROM readings ORDER BY trims_json;

CREATE TABLE readings_compact (
  id            INTEGER PRIMARY KEY,
  uid           BLOB NOT NULL,
  session_no    INTEGER NOT NULL REFERENCES sessions(no),
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
  trims_id      INTEGER NOT NULL REFERENCES trim_sets(id),
  correction_id INTEGER NOT NULL REFERENCES corrections(id),
  note          TEXT NOT NULL DEFAULT ''
);
-- A UUID in its canonical text (lower-case hex) becomes its 16 bytes; any other id is kept as it was.
INSERT INTO readings_compact (id, uid, session_no, t_ms, freq_hz, role, raw, dbm_rx, dbm_dut, u_db, settled, kept,
    floor_limited, overload, trims_id, correction_id, note)
  SELECT x.id,
         CASE WHEN x.uid GLOB '[0-9a-f][0-9a-f][0-9a-f][0-9a-f][0-9a-f][0-9a-f][0-9a-f][0-9a-f]-[0-9a-f][0-9a-f][0-9a-f][0-9a-f]-[0-9a-f][0-9a-f][0-9a-f][0-9a-f]-[0-9a-f][0-9a-f][0-9a-f][0-9a-f]-[0-9a-f][0-9a-f][0-9a-f][0-9a-f][0-9a-f][0-9a-f][0-9a-f][0-9a-f][0-9a-f][0-9a-f][0-9a-f][0-9a-f]' THEN unhex(replace(x.uid, '-', '')) ELSE x.uid END,
         s.no, x.t_ms, x.freq_hz, x.role, x.raw, x.dbm_rx, x.dbm_dut, x.u_db, x.settled, x.kept, x.floor_limited,
         x.overload, t.id, x.correction_id, x.note
  FROM readings x JOIN sessions s ON s.id = x.session_id JOIN trim_sets t ON t.json = x.trims_json
  ORDER BY x.id;
DROP TABLE readings;
ALTER TABLE readings_compact RENAME TO readings;
CREATE INDEX readings_session ON readings(session_no, t_ms);
CREATE INDEX readings_kept ON readings(session_no) WHERE kept = 1;

CREATE TABLE reading_cells (
  session_no  INTEGER NOT NULL,
  role        TEXT NOT NULL,
  cell        INTEGER NOT NULL,
  n           INTEGER NOT NULL,
  lo          REAL NOT NULL,
  hi          REAL NOT NULL,
  floor       INTEGER NOT NULL,
  PRIMARY KEY (session_no, role, cell)
) WITHOUT ROWID;
INSERT INTO reading_cells (session_no, role, cell, n, lo, hi, floor)
  SELECT session_no, role, CAST(floor(t_ms / 1024) AS INTEGER) AS c, COUNT(*), MIN(dbm_dut), MAX(dbm_dut),
         SUM(floor_limited)
  FROM readings GROUP BY session_no, role, c;
CREATE TRIGGER readings_cell AFTER INSERT ON readings
BEGIN
  INSERT INTO reading_cells (session_no, role, cell, n, lo, hi, floor)
    VALUES (new.session_no, new.role, CAST(floor(new.t_ms / 1024) AS INTEGER), 1, new.dbm_dut, new.dbm_dut,
            new.floor_limited)
    ON CONFLICT DO UPDATE SET n = n + 1, lo = MIN(lo, excluded.lo), hi = MAX(hi, excluded.hi),
                              floor = floor + excluded.floor;
END;

CREATE VIEW readings_wide AS
  SELECT x.id,
         CASE WHEN typeof(x.uid) = 'blob' AND length(x.uid) = 16
           THEN lower(substr(hex(x.uid), 1, 8) || '-' || substr(hex(x.uid), 9, 4) || '-' ||
                      substr(hex(x.uid), 13, 4) || '-' || substr(hex(x.uid), 17, 4) || '-' || substr(hex(x.uid), 21))
           ELSE x.uid END AS uid,
         s.id AS session_id, x.t_ms, x.freq_hz, x.role, x.raw, x.dbm_rx, x.dbm_dut, x.u_db, x.settled, x.kept,
         x.floor_limited, x.overload, t.json AS trims_json, x.correction_id, x.note
  FROM readings x JOIN sessions s ON s.no = x.session_no JOIN trim_sets t ON t.id = x.trims_id;
