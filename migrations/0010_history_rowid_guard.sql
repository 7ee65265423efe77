-- Closes two ways around 0008 found in review.
--
-- 1. A trigger written `BEFORE UPDATE OF id …` does not fire when the statement
--    names the row id instead (`UPDATE OR REPLACE plans SET rowid = 1 WHERE id = 2`),
--    and REPLACE then deletes the row it collides with without running delete
--    triggers: plan 1 and a shelf item could be overwritten that way. These
--    triggers watch every UPDATE and compare the values themselves.
-- 2. shelf_items.retired is kept in step with the item's current revision; an
--    UPDATE that changes it without a new revision (hiding an item from lists
--    and from `candidates: "all"` with no history) is refused.
-- 3. A revision of a plan's name and notes gets a note, as shelf revisions have:
--    with a token, the author a client gives is kept there ("author given: …").

CREATE TRIGGER plans_identity_any_update BEFORE UPDATE ON plans
WHEN NEW.id IS NOT OLD.id OR NEW.author IS NOT OLD.author OR NEW.created_at IS NOT OLD.created_at
BEGIN
  SELECT RAISE(ABORT, 'a plan''s id, author and creation time never change');
END;

CREATE TRIGGER shelf_items_identity_any_update BEFORE UPDATE ON shelf_items
WHEN NEW.id IS NOT OLD.id OR NEW.type IS NOT OLD.type OR NEW.key IS NOT OLD.key OR NEW.created_at IS NOT OLD.created_at
BEGIN
  SELECT RAISE(ABORT, 'a shelf item''s id, type, key and creation time never change');
END;

CREATE TRIGGER shelf_items_follow_revision BEFORE UPDATE ON shelf_items
WHEN NOT EXISTS (
  SELECT 1 FROM shelf_revisions r
  WHERE r.item_id = NEW.id AND r.revision = NEW.current_revision
    AND r.retired = NEW.retired
)
BEGIN
  SELECT RAISE(ABORT, 'a shelf item''s status is that of its current revision: write a new revision');
END;

ALTER TABLE plan_text_revisions ADD COLUMN note TEXT;
