ALTER TABLE `audit_events` ADD `mac` text;--> statement-breakpoint
-- Still append-only: the one change allowed is giving an event without one its keyed hash
-- (when Plumbline keys an existing trail with a new audit key); nothing else may change.
DROP TRIGGER `audit_events_no_update`;
--> statement-breakpoint
CREATE TRIGGER audit_events_no_update BEFORE UPDATE ON audit_events
WHEN NOT (
  OLD.mac IS NULL AND NEW.mac IS NOT NULL
  AND NEW.seq IS OLD.seq AND NEW.at IS OLD.at AND NEW.actor_id IS OLD.actor_id AND NEW.actor_name IS OLD.actor_name
  AND NEW.action IS OLD.action AND NEW.entity_type IS OLD.entity_type AND NEW.entity_id IS OLD.entity_id
  AND NEW.study_id IS OLD.study_id AND NEW.before_json IS OLD.before_json AND NEW.after_json IS OLD.after_json
  AND NEW.detail IS OLD.detail AND NEW.prev_hash IS OLD.prev_hash AND NEW.hash IS OLD.hash
)
BEGIN
  SELECT RAISE(ABORT, 'audit events are append-only: UPDATE is refused');
END;
