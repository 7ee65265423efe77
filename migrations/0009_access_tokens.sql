-- Access tokens of the shared service (server/http/access.ts, `brink token …`).
-- Only a SHA-256 hash of each secret is kept, with a short prefix of the secret
-- to recognise it by; the secret itself is shown once, when it is created.
-- A token row never changes except once: its revocation time is set. It is
-- never deleted, and a replacing insert (INSERT OR REPLACE, REPLACE INTO, which
-- removes a clashing row without running delete triggers) is refused too.

CREATE TABLE access_tokens (
  id         INTEGER PRIMARY KEY,
  holder     TEXT    NOT NULL CHECK (length(holder) BETWEEN 1 AND 200),
  prefix     TEXT    NOT NULL UNIQUE,
  hash       TEXT    NOT NULL UNIQUE CHECK (length(hash) = 64),
  created_at TEXT    NOT NULL,
  revoked_at TEXT
);

CREATE TRIGGER access_tokens_only_revoke BEFORE UPDATE ON access_tokens
WHEN OLD.revoked_at IS NOT NULL OR NEW.revoked_at IS NULL
  OR NEW.id IS NOT OLD.id OR NEW.holder IS NOT OLD.holder OR NEW.prefix IS NOT OLD.prefix
  OR NEW.hash IS NOT OLD.hash OR NEW.created_at IS NOT OLD.created_at
BEGIN
  SELECT RAISE(ABORT, 'access tokens are immutable: the only change is revoking an active token');
END;

CREATE TRIGGER access_tokens_no_delete BEFORE DELETE ON access_tokens
BEGIN
  SELECT RAISE(ABORT, 'access tokens are never deleted: revoke them');
END;

CREATE TRIGGER access_tokens_no_overwrite BEFORE INSERT ON access_tokens
WHEN EXISTS (SELECT 1 FROM access_tokens WHERE id = NEW.id OR prefix = NEW.prefix OR hash = NEW.hash)
BEGIN
  SELECT RAISE(ABORT, 'access tokens are immutable: this token exists');
END;
