-- Hazard data of chemicals as data, not code: each version of a chemical's set
-- of concentration bands (mass fraction ranges → GHS hazard statements,
-- pictograms, signal word, precautionary statements) plus handling texts.
-- Versions are immutable; the highest is current.

CREATE TABLE hazard_sets (
  id           INTEGER PRIMARY KEY,
  chemical_key TEXT    NOT NULL,
  version      INTEGER NOT NULL CHECK (version >= 1),
  body         TEXT    NOT NULL CHECK (json_valid(body)),
  author       TEXT    NOT NULL,
  note         TEXT,
  created_at   TEXT    NOT NULL,
  UNIQUE (chemical_key, version)
);

CREATE TRIGGER hazard_sets_immutable_update BEFORE UPDATE ON hazard_sets
BEGIN
  SELECT RAISE(ABORT, 'hazard sets are immutable: write a new version');
END;

CREATE TRIGGER hazard_sets_immutable_delete BEFORE DELETE ON hazard_sets
BEGIN
  SELECT RAISE(ABORT, 'hazard sets are never deleted');
END;
