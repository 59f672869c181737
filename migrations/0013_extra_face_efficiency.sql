-- The share of its torque each face beyond the first two carries on twin and triple discs
-- (1 = every face carries its full share, as before). The shop sets it from its own experience or
-- the parts maker's data; the pages and sheets use it.
ALTER TABLE shop_settings ADD COLUMN extra_face_efficiency REAL NOT NULL DEFAULT 1.0;

-- The audit triggers of shop_settings, rewritten to include the new column.
DROP TRIGGER audit_shop_settings_create;
DROP TRIGGER audit_shop_settings_update;
DROP TRIGGER audit_shop_settings_delete;
CREATE TRIGGER audit_shop_settings_create AFTER INSERT ON shop_settings BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'shop_settings', NEW.id, NULL, NULL, json_object('id', NEW.id, 'name', NEW.name, 'phone', NEW.phone, 'email', NEW.email, 'address', NEW.address, 'units', NEW.units, 'spring_spread_pct', NEW.spring_spread_pct, 'spring_sag_pct', NEW.spring_sag_pct, 'shimming_limit_mm', NEW.shimming_limit_mm, 'overclamp_factor', NEW.overclamp_factor, 'due_within_passes', NEW.due_within_passes, 'time_zone', NEW.time_zone, 'extra_face_efficiency', NEW.extra_face_efficiency)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_shop_settings_update AFTER UPDATE ON shop_settings WHEN OLD.name IS NOT NEW.name OR OLD.phone IS NOT NEW.phone OR OLD.email IS NOT NEW.email OR OLD.address IS NOT NEW.address OR OLD.units IS NOT NEW.units OR OLD.spring_spread_pct IS NOT NEW.spring_spread_pct OR OLD.spring_sag_pct IS NOT NEW.spring_sag_pct OR OLD.shimming_limit_mm IS NOT NEW.shimming_limit_mm OR OLD.overclamp_factor IS NOT NEW.overclamp_factor OR OLD.due_within_passes IS NOT NEW.due_within_passes OR OLD.time_zone IS NOT NEW.time_zone OR OLD.extra_face_efficiency IS NOT NEW.extra_face_efficiency BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'shop_settings', NEW.id, NULL, json_object('id', OLD.id, 'name', OLD.name, 'phone', OLD.phone, 'email', OLD.email, 'address', OLD.address, 'units', OLD.units, 'spring_spread_pct', OLD.spring_spread_pct, 'spring_sag_pct', OLD.spring_sag_pct, 'shimming_limit_mm', OLD.shimming_limit_mm, 'overclamp_factor', OLD.overclamp_factor, 'due_within_passes', OLD.due_within_passes, 'time_zone', OLD.time_zone, 'extra_face_efficiency', OLD.extra_face_efficiency), json_object('id', NEW.id, 'name', NEW.name, 'phone', NEW.phone, 'email', NEW.email, 'address', NEW.address, 'units', NEW.units, 'spring_spread_pct', NEW.spring_spread_pct, 'spring_sag_pct', NEW.spring_sag_pct, 'shimming_limit_mm', NEW.shimming_limit_mm, 'overclamp_factor', NEW.overclamp_factor, 'due_within_passes', NEW.due_within_passes, 'time_zone', NEW.time_zone, 'extra_face_efficiency', NEW.extra_face_efficiency)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_shop_settings_delete AFTER DELETE ON shop_settings BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'shop_settings', OLD.id, NULL, json_object('id', OLD.id, 'name', OLD.name, 'phone', OLD.phone, 'email', OLD.email, 'address', OLD.address, 'units', OLD.units, 'spring_spread_pct', OLD.spring_spread_pct, 'spring_sag_pct', OLD.spring_sag_pct, 'shimming_limit_mm', OLD.shimming_limit_mm, 'overclamp_factor', OLD.overclamp_factor, 'due_within_passes', OLD.due_within_passes, 'time_zone', OLD.time_zone, 'extra_face_efficiency', OLD.extra_face_efficiency), NULL
    FROM audit_actor a WHERE a.id = 1;
END;
