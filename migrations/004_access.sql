-- Nullbench schema 4: access control for the web mode on a network.
-- The access token itself is never stored: only its SHA-256 (hex). Issuing a new token revokes the old one.

CREATE TABLE access_tokens (
  id            INTEGER PRIMARY KEY,
  hash          TEXT NOT NULL UNIQUE CHECK (length(hash) = 64),
  label         TEXT NOT NULL DEFAULT '',
  created_at    TEXT NOT NULL,
  last_used_at  TEXT,
  revoked_at    TEXT
);
CREATE INDEX access_tokens_active ON access_tokens(revoked_at) WHERE revoked_at IS NULL;
