-- The shelf: chemicals and species, each a stable item with immutable revisions.
-- An item row holds what changes in place (which revision is current, whether it
-- is retired, the name for search); every change of content or status writes a
-- new row in shelf_revisions, which can never be updated or deleted.

CREATE TABLE shelf_items (
  id               INTEGER PRIMARY KEY,
  type             TEXT    NOT NULL CHECK (type IN ('chemical', 'species')),
  key              TEXT    NOT NULL,
  kind             TEXT,
  name             TEXT    NOT NULL,
  current_revision INTEGER NOT NULL,
  retired          INTEGER NOT NULL DEFAULT 0 CHECK (retired IN (0, 1)),
  created_at       TEXT    NOT NULL,
  UNIQUE (type, key)
);

CREATE TABLE shelf_revisions (
  id         INTEGER PRIMARY KEY,
  item_id    INTEGER NOT NULL REFERENCES shelf_items (id),
  revision   INTEGER NOT NULL CHECK (revision >= 1),
  action     TEXT    NOT NULL CHECK (action IN ('create', 'edit', 'retire', 'restore', 'import')),
  retired    INTEGER NOT NULL CHECK (retired IN (0, 1)),
  body       TEXT    NOT NULL CHECK (json_valid(body)),
  author     TEXT    NOT NULL,
  note       TEXT,
  created_at TEXT    NOT NULL,
  UNIQUE (item_id, revision)
);

CREATE INDEX shelf_items_type_name ON shelf_items (type, name);

CREATE TRIGGER shelf_revisions_immutable_update BEFORE UPDATE ON shelf_revisions
BEGIN
  SELECT RAISE(ABORT, 'shelf revisions are immutable');
END;

CREATE TRIGGER shelf_revisions_immutable_delete BEFORE DELETE ON shelf_revisions
BEGIN
  SELECT RAISE(ABORT, 'shelf revisions are immutable');
END;

CREATE TRIGGER shelf_items_no_delete BEFORE DELETE ON shelf_items
BEGIN
  SELECT RAISE(ABORT, 'shelf items are retired, never deleted');
END;

-- Small facts about the database itself (for example when the demo shelf was loaded).
CREATE TABLE app_meta (
  key   TEXT PRIMARY KEY,
  value TEXT NOT NULL
);
