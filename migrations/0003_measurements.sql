-- Raw measurements behind shelf coefficients: the data as given, the fit method
-- and options, the fit, who and when. A species revision that applies a fit
-- points back to its measurement (provenance.measurement, and this table).

CREATE TABLE measurements (
  id          INTEGER PRIMARY KEY,
  species_key TEXT    NOT NULL,
  method      TEXT    NOT NULL CHECK (method IN ('msd', 'kinetics', 'drift')),
  options     TEXT    NOT NULL CHECK (json_valid(options)),
  data        TEXT    NOT NULL CHECK (json_valid(data)),
  file_name   TEXT,
  fit         TEXT    NOT NULL CHECK (json_valid(fit)),
  author      TEXT    NOT NULL,
  note        TEXT,
  created_at  TEXT    NOT NULL
);
CREATE INDEX measurements_species ON measurements (species_key, id);

CREATE TABLE measurement_applications (
  measurement_id INTEGER NOT NULL REFERENCES measurements (id),
  revision_id    INTEGER NOT NULL REFERENCES shelf_revisions (id),
  fields         TEXT    NOT NULL CHECK (json_valid(fields)),
  created_at     TEXT    NOT NULL,
  PRIMARY KEY (measurement_id, revision_id)
);

CREATE TRIGGER measurements_immutable BEFORE UPDATE ON measurements
BEGIN
  SELECT RAISE(ABORT, 'measurements are immutable');
END;

CREATE TRIGGER measurements_no_delete BEFORE DELETE ON measurements
BEGIN
  SELECT RAISE(ABORT, 'measurements are never deleted');
END;
