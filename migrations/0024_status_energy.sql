-- The counter's due list puts the forecast by slip energy (`model::energy::energy_forecast`)
-- beside the per-pass one. That forecast runs a launch preview per pass date it needs and one at
-- the current setting (measured in DEVELOPERS.md, "Derived tables are kept in the writing
-- transaction"), too slow to run for every listed build on every counter view, so it is kept
-- here with the rest of the status: passes to the next shim and to the disc at the current
-- setting's modelled slip energy per pass, NULL when there is no such forecast.
ALTER TABLE build_status ADD COLUMN energy_shim_passes REAL;
ALTER TABLE build_status ADD COLUMN energy_disc_passes REAL;

-- Besides what the wear and the springs depend on, the forecast by energy follows the passes
-- (their dates, launch speeds and the friction calibrated from them), their data logs, the
-- setups and the car's launch data, and the shop settings the capacity uses.
CREATE TRIGGER build_status_pass_create AFTER INSERT ON passes BEGIN
    UPDATE build_status SET stale = 1, urgent = 1 WHERE build_id = NEW.build_id;
END;
CREATE TRIGGER build_status_pass_update AFTER UPDATE ON passes BEGIN
    UPDATE build_status SET stale = 1, urgent = 1 WHERE build_id IN (OLD.build_id, NEW.build_id);
END;
CREATE TRIGGER build_status_pass_log_create AFTER INSERT ON pass_logs BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id = (SELECT build_id FROM passes WHERE id = NEW.pass_id);
END;
CREATE TRIGGER build_status_pass_log_update AFTER UPDATE ON pass_logs BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id IN (SELECT build_id FROM passes WHERE id IN (OLD.pass_id, NEW.pass_id));
END;
CREATE TRIGGER build_status_pass_log_delete AFTER DELETE ON pass_logs BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id = (SELECT build_id FROM passes WHERE id = OLD.pass_id);
END;
CREATE TRIGGER build_status_setup_create AFTER INSERT ON setup_changes BEGIN
    UPDATE build_status SET stale = 1, urgent = 1 WHERE build_id = NEW.build_id;
END;
CREATE TRIGGER build_status_setup_update AFTER UPDATE ON setup_changes BEGIN
    UPDATE build_status SET stale = 1, urgent = 1 WHERE build_id IN (OLD.build_id, NEW.build_id);
END;
CREATE TRIGGER build_status_car_update AFTER UPDATE ON cars BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id IN (SELECT id FROM builds WHERE car_id IN (OLD.id, NEW.id));
END;
CREATE TRIGGER build_status_capacity_settings AFTER UPDATE ON shop_settings
WHEN OLD.overclamp_factor IS NOT NEW.overclamp_factor
  OR OLD.extra_face_efficiency IS NOT NEW.extra_face_efficiency
  OR OLD.bind_margin_mm IS NOT NEW.bind_margin_mm
BEGIN
    UPDATE build_status SET stale = 1, urgent = 1;
END;

-- Every stored status is worked out again with its forecast by energy.
UPDATE build_status SET stale = 1, urgent = 1;
