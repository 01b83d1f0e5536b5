-- Nullbench schema 5: who is writing a session live. One program at a time holds a session's lease: its
-- process id, host, what it is (log, web, desktop) and a heartbeat it renews while it reads. Another program
-- that wants the session is refused with the holder's name; a lease whose holder has died is taken over.

CREATE TABLE session_leases (
  session_id    TEXT PRIMARY KEY REFERENCES sessions(id) ON DELETE CASCADE,
  pid           INTEGER NOT NULL,
  host          TEXT NOT NULL,
  program       TEXT NOT NULL,
  taken_at      TEXT NOT NULL,
  heartbeat_at  TEXT NOT NULL
);
