-- A pass may carry its time of day (HH:MM) and the ambient temperature (°C), so the facing's
-- temperature at each launch of a day can be worked out and friction fitted against it
-- (docs/engineering.md §27).
ALTER TABLE passes ADD COLUMN run_at TEXT NOT NULL DEFAULT '';
ALTER TABLE passes ADD COLUMN ambient_c REAL;

-- The audit triggers of passes, rewritten to include the new columns.
DROP TRIGGER audit_passes_create;
DROP TRIGGER audit_passes_update;
DROP TRIGGER audit_passes_delete;
CREATE TRIGGER audit_passes_create AFTER INSERT ON passes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'passes', NEW.id, NEW.build_id, NULL, json_object('id', NEW.id, 'build_id', NEW.build_id, 'run_on', NEW.run_on, 'track', NEW.track, 'launch_rpm', NEW.launch_rpm, 'sixty_ft_s', NEW.sixty_ft_s, 'et_s', NEW.et_s, 'observed_lockup_rpm', NEW.observed_lockup_rpm, 'notes', NEW.notes, 'run_at', NEW.run_at, 'ambient_c', NEW.ambient_c)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_passes_update AFTER UPDATE ON passes WHEN OLD.build_id IS NOT NEW.build_id OR OLD.run_on IS NOT NEW.run_on OR OLD.track IS NOT NEW.track OR OLD.launch_rpm IS NOT NEW.launch_rpm OR OLD.sixty_ft_s IS NOT NEW.sixty_ft_s OR OLD.et_s IS NOT NEW.et_s OR OLD.observed_lockup_rpm IS NOT NEW.observed_lockup_rpm OR OLD.notes IS NOT NEW.notes OR OLD.run_at IS NOT NEW.run_at OR OLD.ambient_c IS NOT NEW.ambient_c BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'passes', NEW.id, NEW.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'run_on', OLD.run_on, 'track', OLD.track, 'launch_rpm', OLD.launch_rpm, 'sixty_ft_s', OLD.sixty_ft_s, 'et_s', OLD.et_s, 'observed_lockup_rpm', OLD.observed_lockup_rpm, 'notes', OLD.notes, 'run_at', OLD.run_at, 'ambient_c', OLD.ambient_c), json_object('id', NEW.id, 'build_id', NEW.build_id, 'run_on', NEW.run_on, 'track', NEW.track, 'launch_rpm', NEW.launch_rpm, 'sixty_ft_s', NEW.sixty_ft_s, 'et_s', NEW.et_s, 'observed_lockup_rpm', NEW.observed_lockup_rpm, 'notes', NEW.notes, 'run_at', NEW.run_at, 'ambient_c', NEW.ambient_c)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_passes_delete AFTER DELETE ON passes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'passes', OLD.id, OLD.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'run_on', OLD.run_on, 'track', OLD.track, 'launch_rpm', OLD.launch_rpm, 'sixty_ft_s', OLD.sixty_ft_s, 'et_s', OLD.et_s, 'observed_lockup_rpm', OLD.observed_lockup_rpm, 'notes', OLD.notes, 'run_at', OLD.run_at, 'ambient_c', OLD.ambient_c), NULL
    FROM audit_actor a WHERE a.id = 1;
END;
