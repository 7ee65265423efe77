-- Hazard data of species (enzymes, coated beads, colloids) as data, like the
-- chemicals' in 0004: each version of a species' set of bands (mass fraction
-- ranges → GHS hazard statements, pictograms, signal word, precautionary
-- statements), each band limited to the forms it applies to (powder, solution,
-- suspension), plus handling texts. Versions are immutable; the highest is
-- current.

CREATE TABLE species_hazard_sets (
  id           INTEGER PRIMARY KEY,
  species_key  TEXT    NOT NULL,
  version      INTEGER NOT NULL CHECK (version >= 1),
  body         TEXT    NOT NULL CHECK (json_valid(body)),
  author       TEXT    NOT NULL,
  note         TEXT,
  created_at   TEXT    NOT NULL,
  UNIQUE (species_key, version)
);

CREATE TRIGGER species_hazard_sets_immutable_update BEFORE UPDATE ON species_hazard_sets
BEGIN
  SELECT RAISE(ABORT, 'species hazard sets are immutable: write a new version');
END;

CREATE TRIGGER species_hazard_sets_immutable_delete BEFORE DELETE ON species_hazard_sets
BEGIN
  SELECT RAISE(ABORT, 'species hazard sets are never deleted');
END;
