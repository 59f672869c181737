-- How far the engine may fall below the launch speed in a clean lock, percent of the launch
-- speed: the launch preview's counterweight search refuses settings that bog the engine more.
-- Starts at 15 % (common shop practice, no published source).
ALTER TABLE shop_settings ADD COLUMN launch_bog_pct REAL NOT NULL DEFAULT 15.0;

-- The audit triggers of shop_settings, rewritten to include the new column.
DROP TRIGGER audit_shop_settings_create;
DROP TRIGGER audit_shop_settings_update;
DROP TRIGGER audit_shop_settings_delete;
CREATE TRIGGER audit_shop_settings_create AFTER INSERT ON shop_settings BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'shop_settings', NEW.id, NULL, NULL, json_object('id', NEW.id, 'name', NEW.name, 'phone', NEW.phone, 'email', NEW.email, 'address', NEW.address, 'units', NEW.units, 'spring_spread_pct', NEW.spring_spread_pct, 'spring_sag_pct', NEW.spring_sag_pct, 'shimming_limit_mm', NEW.shimming_limit_mm, 'overclamp_factor', NEW.overclamp_factor, 'due_within_passes', NEW.due_within_passes, 'time_zone', NEW.time_zone, 'extra_face_efficiency', NEW.extra_face_efficiency, 'bind_margin_mm', NEW.bind_margin_mm, 'launch_bog_pct', NEW.launch_bog_pct)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_shop_settings_update AFTER UPDATE ON shop_settings WHEN OLD.name IS NOT NEW.name OR OLD.phone IS NOT NEW.phone OR OLD.email IS NOT NEW.email OR OLD.address IS NOT NEW.address OR OLD.units IS NOT NEW.units OR OLD.spring_spread_pct IS NOT NEW.spring_spread_pct OR OLD.spring_sag_pct IS NOT NEW.spring_sag_pct OR OLD.shimming_limit_mm IS NOT NEW.shimming_limit_mm OR OLD.overclamp_factor IS NOT NEW.overclamp_factor OR OLD.due_within_passes IS NOT NEW.due_within_passes OR OLD.time_zone IS NOT NEW.time_zone OR OLD.extra_face_efficiency IS NOT NEW.extra_face_efficiency OR OLD.bind_margin_mm IS NOT NEW.bind_margin_mm OR OLD.launch_bog_pct IS NOT NEW.launch_bog_pct BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'shop_settings', NEW.id, NULL, json_object('id', OLD.id, 'name', OLD.name, 'phone', OLD.phone, 'email', OLD.email, 'address', OLD.address, 'units', OLD.units, 'spring_spread_pct', OLD.spring_spread_pct, 'spring_sag_pct', OLD.spring_sag_pct, 'shimming_limit_mm', OLD.shimming_limit_mm, 'overclamp_factor', OLD.overclamp_factor, 'due_within_passes', OLD.due_within_passes, 'time_zone', OLD.time_zone, 'extra_face_efficiency', OLD.extra_face_efficiency, 'bind_margin_mm', OLD.bind_margin_mm, 'launch_bog_pct', OLD.launch_bog_pct), json_object('id', NEW.id, 'name', NEW.name, 'phone', NEW.phone, 'email', NEW.email, 'address', NEW.address, 'units', NEW.units, 'spring_spread_pct', NEW.spring_spread_pct, 'spring_sag_pct', NEW.spring_sag_pct, 'shimming_limit_mm', NEW.shimming_limit_mm, 'overclamp_factor', NEW.overclamp_factor, 'due_within_passes', NEW.due_within_passes, 'time_zone', NEW.time_zone, 'extra_face_efficiency', NEW.extra_face_efficiency, 'bind_margin_mm', NEW.bind_margin_mm, 'launch_bog_pct', NEW.launch_bog_pct)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_shop_settings_delete AFTER DELETE ON shop_settings BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'shop_settings', OLD.id, NULL, json_object('id', OLD.id, 'name', OLD.name, 'phone', OLD.phone, 'email', OLD.email, 'address', OLD.address, 'units', OLD.units, 'spring_spread_pct', OLD.spring_spread_pct, 'spring_sag_pct', OLD.spring_sag_pct, 'shimming_limit_mm', OLD.shimming_limit_mm, 'overclamp_factor', OLD.overclamp_factor, 'due_within_passes', OLD.due_within_passes, 'time_zone', OLD.time_zone, 'extra_face_efficiency', OLD.extra_face_efficiency, 'bind_margin_mm', OLD.bind_margin_mm, 'launch_bog_pct', OLD.launch_bog_pct), NULL
    FROM audit_actor a WHERE a.id = 1;
END;
