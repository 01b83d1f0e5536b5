-- Nullbench schema 3: limit sets, the emission of each session, and the test-sheet settings of each unit.
-- Designs, revisions and units themselves are schema 1; this adds what comparing them and issuing sheets needs.

-- User-defined limit sets (the presets live in the code, with their sources, and are never stored).
CREATE TABLE limit_sets (
  id          TEXT PRIMARY KEY,
  name        TEXT NOT NULL UNIQUE,
  source      TEXT NOT NULL DEFAULT '',
  standing    TEXT NOT NULL DEFAULT 'user',
  notes       TEXT NOT NULL DEFAULT '',
  rules_json  TEXT NOT NULL,
  created_at  TEXT NOT NULL,
  updated_at  TEXT NOT NULL
);

-- How the transmitter was set during a session; a session without a row was DSB (both sidebands wanted).
CREATE TABLE session_emission (
  session_id  TEXT PRIMARY KEY REFERENCES sessions(id),
  emission    TEXT NOT NULL CHECK (emission IN ('dsb', 'usb', 'lsb'))
);

-- What the unit's test sheet states: which limit sets, which suppression reference, which session
-- (NULL = the latest with results), and the notes printed on it.
CREATE TABLE unit_sheets (
  unit_id             TEXT PRIMARY KEY REFERENCES units(id),
  limit_set_ids_json  TEXT NOT NULL,
  reference           TEXT NOT NULL CHECK (reference IN ('tone', 'pep', 'unbalanced')),
  session_id          TEXT REFERENCES sessions(id),
  notes               TEXT NOT NULL DEFAULT '',
  updated_at          TEXT NOT NULL
);
