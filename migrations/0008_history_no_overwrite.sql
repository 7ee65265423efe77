-- History that cannot be rewritten below the API, on every history table.
--
-- SQLite's REPLACE conflict resolution (INSERT OR REPLACE, REPLACE INTO) deletes
-- the clashing row without running delete triggers (unless recursive triggers
-- are on), so the UPDATE and DELETE triggers of 0001–0003 did not stop a row
-- being rewritten in place. As 0006 did for the hazard sets, a BEFORE INSERT
-- trigger here refuses any insert whose key or row id is already taken, before
-- conflict resolution runs. Tables that had no triggers at all (plan_revisions,
-- measurement_applications) get UPDATE and DELETE triggers too.
--
-- Plan names and notes become revisions: plan_text_revisions keeps every name
-- and notes a plan has had (immutable); plans.name and plans.notes stay as the
-- current ones, and a trigger lets them change only to the newest revision.

-- shelf_revisions: no overwrite (UPDATE and DELETE are refused since 0001)
CREATE TRIGGER shelf_revisions_no_overwrite BEFORE INSERT ON shelf_revisions
WHEN EXISTS (SELECT 1 FROM shelf_revisions WHERE (item_id = NEW.item_id AND revision = NEW.revision) OR id = NEW.id)
BEGIN
  SELECT RAISE(ABORT, 'shelf revisions are immutable: this revision exists, write a new one');
END;

-- shelf_items: a REPLACE would delete the item and give its key a new row
CREATE TRIGGER shelf_items_no_overwrite BEFORE INSERT ON shelf_items
WHEN EXISTS (SELECT 1 FROM shelf_items WHERE (type = NEW.type AND key = NEW.key) OR id = NEW.id)
BEGIN
  SELECT RAISE(ABORT, 'shelf items are never replaced: this item exists, write a new revision');
END;

-- shelf_items: what an item is never changes, and its current revision only moves forward to a revision that exists
CREATE TRIGGER shelf_items_identity_immutable BEFORE UPDATE OF id, type, key, created_at ON shelf_items
BEGIN
  SELECT RAISE(ABORT, 'a shelf item''s id, type, key and creation time never change');
END;

CREATE TRIGGER shelf_items_current_forward BEFORE UPDATE OF current_revision ON shelf_items
WHEN NEW.current_revision < OLD.current_revision
  OR NOT EXISTS (SELECT 1 FROM shelf_revisions WHERE item_id = NEW.id AND revision = NEW.current_revision)
BEGIN
  SELECT RAISE(ABORT, 'a shelf item''s current revision only moves forward, to a revision that exists');
END;

-- plans: no overwrite (DELETE and changes of the computed columns are refused since 0002)
CREATE TRIGGER plans_no_overwrite BEFORE INSERT ON plans
WHEN EXISTS (SELECT 1 FROM plans WHERE id = NEW.id)
BEGIN
  SELECT RAISE(ABORT, 'plans are never replaced: a rerun is a new plan');
END;

CREATE TRIGGER plans_author_immutable BEFORE UPDATE OF id, author ON plans
BEGIN
  SELECT RAISE(ABORT, 'a plan''s id and author never change');
END;

-- plan_revisions (which shelf revisions a plan used): immutable, no overwrite
CREATE TRIGGER plan_revisions_immutable_update BEFORE UPDATE ON plan_revisions
BEGIN
  SELECT RAISE(ABORT, 'the shelf revisions a plan used are immutable');
END;

CREATE TRIGGER plan_revisions_immutable_delete BEFORE DELETE ON plan_revisions
BEGIN
  SELECT RAISE(ABORT, 'the shelf revisions a plan used are immutable');
END;

CREATE TRIGGER plan_revisions_no_overwrite BEFORE INSERT ON plan_revisions
WHEN EXISTS (SELECT 1 FROM plan_revisions WHERE (plan_id = NEW.plan_id AND revision_id = NEW.revision_id AND role = NEW.role) OR rowid = NEW.rowid)
BEGIN
  SELECT RAISE(ABORT, 'the shelf revisions a plan used are immutable: this link exists');
END;

-- measurements: no overwrite (UPDATE and DELETE are refused since 0003)
CREATE TRIGGER measurements_no_overwrite BEFORE INSERT ON measurements
WHEN EXISTS (SELECT 1 FROM measurements WHERE id = NEW.id)
BEGIN
  SELECT RAISE(ABORT, 'measurements are immutable: this measurement exists');
END;

-- measurement_applications: immutable, no overwrite
CREATE TRIGGER measurement_applications_immutable_update BEFORE UPDATE ON measurement_applications
BEGIN
  SELECT RAISE(ABORT, 'measurement applications are immutable');
END;

CREATE TRIGGER measurement_applications_immutable_delete BEFORE DELETE ON measurement_applications
BEGIN
  SELECT RAISE(ABORT, 'measurement applications are immutable');
END;

CREATE TRIGGER measurement_applications_no_overwrite BEFORE INSERT ON measurement_applications
WHEN EXISTS (SELECT 1 FROM measurement_applications WHERE (measurement_id = NEW.measurement_id AND revision_id = NEW.revision_id) OR rowid = NEW.rowid)
BEGIN
  SELECT RAISE(ABORT, 'measurement applications are immutable: this application exists');
END;

-- Plan names and notes as revisions.
CREATE TABLE plan_text_revisions (
  id         INTEGER PRIMARY KEY,
  plan_id    INTEGER NOT NULL REFERENCES plans (id),
  revision   INTEGER NOT NULL CHECK (revision >= 1),
  name       TEXT    NOT NULL,
  notes      TEXT    NOT NULL,
  author     TEXT    NOT NULL,
  created_at TEXT    NOT NULL,
  UNIQUE (plan_id, revision)
);

-- Every plan so far gets revision 1: its name and notes as they are now (an earlier rename kept
-- no old text), by the plan's author, at the plan's last update.
INSERT INTO plan_text_revisions (plan_id, revision, name, notes, author, created_at)
  SELECT id, 1, name, notes, author, updated_at FROM plans ORDER BY id;

CREATE TRIGGER plan_text_revisions_immutable_update BEFORE UPDATE ON plan_text_revisions
BEGIN
  SELECT RAISE(ABORT, 'plan name and notes revisions are immutable');
END;

CREATE TRIGGER plan_text_revisions_immutable_delete BEFORE DELETE ON plan_text_revisions
BEGIN
  SELECT RAISE(ABORT, 'plan name and notes revisions are immutable');
END;

CREATE TRIGGER plan_text_revisions_no_overwrite BEFORE INSERT ON plan_text_revisions
WHEN EXISTS (SELECT 1 FROM plan_text_revisions WHERE (plan_id = NEW.plan_id AND revision = NEW.revision) OR id = NEW.id)
BEGIN
  SELECT RAISE(ABORT, 'plan name and notes revisions are immutable: this revision exists, write a new one');
END;

-- plans.name and plans.notes are the newest text revision's: they change only to it
CREATE TRIGGER plans_text_from_revision BEFORE UPDATE OF name, notes ON plans
WHEN NOT EXISTS (
  SELECT 1 FROM plan_text_revisions t
  WHERE t.plan_id = NEW.id AND t.name = NEW.name AND t.notes = NEW.notes
    AND t.revision = (SELECT MAX(revision) FROM plan_text_revisions WHERE plan_id = NEW.id)
)
BEGIN
  SELECT RAISE(ABORT, 'a plan''s name and notes change only by a new revision in plan_text_revisions');
END;
