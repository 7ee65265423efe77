-- Outcomes: what each tube of a plan's bench sheet did at the bench (docs/model.md §12). One set per plan and
-- candidate per revision; a new set for the same plan and candidate is the next revision. The sheet options the
-- tube codes refer to are stored with the set (a sheet is rebuilt from the plan on demand), and each tube with
-- its code, kind and delivered dose as validated when the set was written. Sets never change: UPDATE and DELETE
-- are refused, and so is an insert over an existing (plan, candidate, revision) or row id (a REPLACE would
-- otherwise remove the row without running the delete trigger; see 0006).

CREATE TABLE outcome_sets (
  id            INTEGER PRIMARY KEY,
  plan_id       INTEGER NOT NULL REFERENCES plans (id),
  candidate     TEXT    NOT NULL,
  revision      INTEGER NOT NULL CHECK (revision >= 1),
  sheet_options TEXT    NOT NULL CHECK (json_valid(sheet_options)),
  tubes         TEXT    NOT NULL CHECK (json_valid(tubes)),
  author        TEXT    NOT NULL,
  note          TEXT,
  created_at    TEXT    NOT NULL,
  UNIQUE (plan_id, candidate, revision)
);

CREATE INDEX outcome_sets_plan ON outcome_sets (plan_id, id);

CREATE TRIGGER outcome_sets_immutable_update BEFORE UPDATE ON outcome_sets
BEGIN
  SELECT RAISE(ABORT, 'outcomes are immutable: write a new revision');
END;

CREATE TRIGGER outcome_sets_immutable_delete BEFORE DELETE ON outcome_sets
BEGIN
  SELECT RAISE(ABORT, 'outcomes are never deleted');
END;

CREATE TRIGGER outcome_sets_no_overwrite BEFORE INSERT ON outcome_sets
WHEN EXISTS (SELECT 1 FROM outcome_sets WHERE (plan_id = NEW.plan_id AND candidate = NEW.candidate AND revision = NEW.revision) OR id = NEW.id)
BEGIN
  SELECT RAISE(ABORT, 'outcomes are immutable: this revision exists, write a new revision');
END;
