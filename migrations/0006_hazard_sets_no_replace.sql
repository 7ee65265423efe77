-- Hazard data versions cannot be overwritten by a replacing insert either.
-- 0004 and 0005 abort UPDATE and DELETE, but SQLite's REPLACE conflict
-- resolution (INSERT OR REPLACE, REPLACE INTO) removes the clashing row
-- without running delete triggers (unless recursive triggers are on), so a
-- version could silently be rewritten in place. These triggers refuse any
-- insert whose (key, version) or row id is already taken, before any conflict
-- resolution runs; a change is always a new version.

CREATE TRIGGER hazard_sets_no_overwrite BEFORE INSERT ON hazard_sets
WHEN EXISTS (SELECT 1 FROM hazard_sets WHERE (chemical_key = NEW.chemical_key AND version = NEW.version) OR id = NEW.id)
BEGIN
  SELECT RAISE(ABORT, 'hazard sets are immutable: this version exists, write a new version');
END;

CREATE TRIGGER species_hazard_sets_no_overwrite BEFORE INSERT ON species_hazard_sets
WHEN EXISTS (SELECT 1 FROM species_hazard_sets WHERE (species_key = NEW.species_key AND version = NEW.version) OR id = NEW.id)
BEGIN
  SELECT RAISE(ABORT, 'species hazard sets are immutable: this version exists, write a new version');
END;
