-- A setup may keep the facing's nominal friction coefficient on purpose (a new disc, whose
-- friction the passes of the old one do not describe): the figures then use the nominal μ even
-- when the build's calibration has enough steady passes.
ALTER TABLE setup_changes ADD COLUMN nominal_mu INTEGER NOT NULL DEFAULT 0 CHECK (nominal_mu IN (0, 1));

-- The audit triggers of setup_changes, rewritten to include the new column.
DROP TRIGGER audit_setup_changes_create;
DROP TRIGGER audit_setup_changes_update;
DROP TRIGGER audit_setup_changes_delete;
CREATE TRIGGER audit_setup_changes_create AFTER INSERT ON setup_changes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'setup_changes', NEW.id, NEW.build_id, NULL, json_object('id', NEW.id, 'build_id', NEW.build_id, 'changed_on', NEW.changed_on, 'adjuster_turns', NEW.adjuster_turns, 'adjuster_turns_each', NEW.adjuster_turns_each, 'counterweight_g', NEW.counterweight_g, 'mu', NEW.mu, 'nominal_mu', NEW.nominal_mu, 'note', NEW.note)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_setup_changes_update AFTER UPDATE ON setup_changes WHEN OLD.build_id IS NOT NEW.build_id OR OLD.changed_on IS NOT NEW.changed_on OR OLD.adjuster_turns IS NOT NEW.adjuster_turns OR OLD.adjuster_turns_each IS NOT NEW.adjuster_turns_each OR OLD.counterweight_g IS NOT NEW.counterweight_g OR OLD.mu IS NOT NEW.mu OR OLD.nominal_mu IS NOT NEW.nominal_mu OR OLD.note IS NOT NEW.note BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'setup_changes', NEW.id, NEW.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'changed_on', OLD.changed_on, 'adjuster_turns', OLD.adjuster_turns, 'adjuster_turns_each', OLD.adjuster_turns_each, 'counterweight_g', OLD.counterweight_g, 'mu', OLD.mu, 'nominal_mu', OLD.nominal_mu, 'note', OLD.note), json_object('id', NEW.id, 'build_id', NEW.build_id, 'changed_on', NEW.changed_on, 'adjuster_turns', NEW.adjuster_turns, 'adjuster_turns_each', NEW.adjuster_turns_each, 'counterweight_g', NEW.counterweight_g, 'mu', NEW.mu, 'nominal_mu', NEW.nominal_mu, 'note', NEW.note)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_setup_changes_delete AFTER DELETE ON setup_changes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'setup_changes', OLD.id, OLD.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'changed_on', OLD.changed_on, 'adjuster_turns', OLD.adjuster_turns, 'adjuster_turns_each', OLD.adjuster_turns_each, 'counterweight_g', OLD.counterweight_g, 'mu', OLD.mu, 'nominal_mu', OLD.nominal_mu, 'note', OLD.note), NULL
    FROM audit_actor a WHERE a.id = 1;
END;
