-- A pass, a data log or a setup changes a build's status only through the forecast by slip
-- energy and the whole-launch friction (0024, 0025), and both need the car's launch fields
-- (`model::launch::launch_ready`: race weight, first gear and final drive ratios, tire
-- diameter). Without them such a write marked the build stale for nothing, and every pass
-- written at the counter worked the wear out again in its transaction. The triggers now mark it
-- stale only when the car has those fields; a car edit still marks its builds stale always, so
-- a car that gains them is worked out at once. Keep the condition in step with `launch_ready`.
DROP TRIGGER build_status_pass_create;
DROP TRIGGER build_status_pass_update;
DROP TRIGGER build_status_pass_log_create;
DROP TRIGGER build_status_pass_log_update;
DROP TRIGGER build_status_pass_log_delete;
DROP TRIGGER build_status_setup_create;
DROP TRIGGER build_status_setup_update;

-- The builds whose car has the launch fields (read by build id, so only that build's row and its
-- car are looked at).
CREATE VIEW launch_ready_builds AS
    SELECT b.id AS build_id FROM builds b JOIN cars k ON k.id = b.car_id
    WHERE k.weight_kg IS NOT NULL AND k.first_gear_ratio IS NOT NULL
      AND k.final_drive_ratio IS NOT NULL AND k.tire_diameter_mm IS NOT NULL;

CREATE TRIGGER build_status_pass_create AFTER INSERT ON passes BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id = NEW.build_id AND EXISTS (SELECT 1 FROM launch_ready_builds r WHERE r.build_id = build_status.build_id);
END;
CREATE TRIGGER build_status_pass_update AFTER UPDATE ON passes BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id IN (OLD.build_id, NEW.build_id)
      AND EXISTS (SELECT 1 FROM launch_ready_builds r WHERE r.build_id = build_status.build_id);
END;
CREATE TRIGGER build_status_pass_log_create AFTER INSERT ON pass_logs BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id = (SELECT build_id FROM passes WHERE id = NEW.pass_id)
      AND EXISTS (SELECT 1 FROM launch_ready_builds r WHERE r.build_id = build_status.build_id);
END;
CREATE TRIGGER build_status_pass_log_update AFTER UPDATE ON pass_logs BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id IN (SELECT build_id FROM passes WHERE id IN (OLD.pass_id, NEW.pass_id))
      AND EXISTS (SELECT 1 FROM launch_ready_builds r WHERE r.build_id = build_status.build_id);
END;
CREATE TRIGGER build_status_pass_log_delete AFTER DELETE ON pass_logs BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id = (SELECT build_id FROM passes WHERE id = OLD.pass_id)
      AND EXISTS (SELECT 1 FROM launch_ready_builds r WHERE r.build_id = build_status.build_id);
END;
CREATE TRIGGER build_status_setup_create AFTER INSERT ON setup_changes BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id = NEW.build_id AND EXISTS (SELECT 1 FROM launch_ready_builds r WHERE r.build_id = build_status.build_id);
END;
CREATE TRIGGER build_status_setup_update AFTER UPDATE ON setup_changes BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id IN (OLD.build_id, NEW.build_id)
      AND EXISTS (SELECT 1 FROM launch_ready_builds r WHERE r.build_id = build_status.build_id);
END;
