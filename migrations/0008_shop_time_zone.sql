-- The shop's time zone (an IANA name such as America/Chicago; empty: the server's own zone).
-- "Today" in every form and on every sheet, and the times in History, are read in it, so a shop
-- west of UTC no longer gets tomorrow's date in the late afternoon.
ALTER TABLE shop_settings ADD COLUMN time_zone TEXT NOT NULL DEFAULT '';

-- The audit triggers of shop_settings, rewritten to include the new column.
DROP TRIGGER audit_shop_settings_create;
DROP TRIGGER audit_shop_settings_update;
DROP TRIGGER audit_shop_settings_delete;
CREATE TRIGGER audit_shop_settings_create AFTER INSERT ON shop_settings BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'shop_settings', NEW.id, NULL, NULL, json_object('id', NEW.id, 'name', NEW.name, 'phone', NEW.phone, 'email', NEW.email, 'address', NEW.address, 'units', NEW.units, 'spring_spread_pct', NEW.spring_spread_pct, 'spring_sag_pct', NEW.spring_sag_pct, 'shimming_limit_mm', NEW.shimming_limit_mm, 'overclamp_factor', NEW.overclamp_factor, 'due_within_passes', NEW.due_within_passes, 'time_zone', NEW.time_zone)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_shop_settings_update AFTER UPDATE ON shop_settings WHEN OLD.name IS NOT NEW.name OR OLD.phone IS NOT NEW.phone OR OLD.email IS NOT NEW.email OR OLD.address IS NOT NEW.address OR OLD.units IS NOT NEW.units OR OLD.spring_spread_pct IS NOT NEW.spring_spread_pct OR OLD.spring_sag_pct IS NOT NEW.spring_sag_pct OR OLD.shimming_limit_mm IS NOT NEW.shimming_limit_mm OR OLD.overclamp_factor IS NOT NEW.overclamp_factor OR OLD.due_within_passes IS NOT NEW.due_within_passes OR OLD.time_zone IS NOT NEW.time_zone BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'shop_settings', NEW.id, NULL, json_object('id', OLD.id, 'name', OLD.name, 'phone', OLD.phone, 'email', OLD.email, 'address', OLD.address, 'units', OLD.units, 'spring_spread_pct', OLD.spring_spread_pct, 'spring_sag_pct', OLD.spring_sag_pct, 'shimming_limit_mm', OLD.shimming_limit_mm, 'overclamp_factor', OLD.overclamp_factor, 'due_within_passes', OLD.due_within_passes, 'time_zone', OLD.time_zone), json_object('id', NEW.id, 'name', NEW.name, 'phone', NEW.phone, 'email', NEW.email, 'address', NEW.address, 'units', NEW.units, 'spring_spread_pct', NEW.spring_spread_pct, 'spring_sag_pct', NEW.spring_sag_pct, 'shimming_limit_mm', NEW.shimming_limit_mm, 'overclamp_factor', NEW.overclamp_factor, 'due_within_passes', NEW.due_within_passes, 'time_zone', NEW.time_zone)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_shop_settings_delete AFTER DELETE ON shop_settings BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'shop_settings', OLD.id, NULL, json_object('id', OLD.id, 'name', OLD.name, 'phone', OLD.phone, 'email', OLD.email, 'address', OLD.address, 'units', OLD.units, 'spring_spread_pct', OLD.spring_spread_pct, 'spring_sag_pct', OLD.spring_sag_pct, 'shimming_limit_mm', OLD.shimming_limit_mm, 'overclamp_factor', OLD.overclamp_factor, 'due_within_passes', OLD.due_within_passes, 'time_zone', OLD.time_zone), NULL
    FROM audit_actor a WHERE a.id = 1;
END;
