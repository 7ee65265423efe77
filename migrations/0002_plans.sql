-- Stored plans: the request as sent, the exact engine inputs (SI) built from the
-- shelf revisions of the day, and the results. Request, inputs and results never
-- change (a rerun is a new plan); only the name and the notes can be edited.

CREATE TABLE plans (
  id         INTEGER PRIMARY KEY,
  name       TEXT    NOT NULL,
  notes      TEXT    NOT NULL DEFAULT '',
  author     TEXT    NOT NULL,
  created_at TEXT    NOT NULL,
  updated_at TEXT    NOT NULL,
  request    TEXT    NOT NULL CHECK (json_valid(request)),
  inputs     TEXT    NOT NULL CHECK (json_valid(inputs)),
  result     TEXT    NOT NULL CHECK (json_valid(result)),
  rerun_of   INTEGER REFERENCES plans (id)
);

-- Which shelf revisions a plan was computed from.
CREATE TABLE plan_revisions (
  plan_id     INTEGER NOT NULL REFERENCES plans (id),
  revision_id INTEGER NOT NULL REFERENCES shelf_revisions (id),
  role        TEXT    NOT NULL CHECK (role IN ('base', 'candidate', 'chemical')),
  PRIMARY KEY (plan_id, revision_id, role)
);

CREATE TRIGGER plans_computed_immutable BEFORE UPDATE OF request, inputs, result, created_at, rerun_of ON plans
BEGIN
  SELECT RAISE(ABORT, 'a plan''s request and results are immutable: rerun it instead');
END;

CREATE TRIGGER plans_no_delete BEFORE DELETE ON plans
BEGIN
  SELECT RAISE(ABORT, 'plans are never deleted');
END;
