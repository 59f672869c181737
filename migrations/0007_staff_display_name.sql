-- The name a customer sees on a setup sheet ("prepared by ..."), set by an admin per staff
-- account. Empty means the shop's name is shown: a login name is never shown to customers.

ALTER TABLE users ADD COLUMN display_name TEXT NOT NULL DEFAULT '';

-- The users audit triggers again, with the display name (migration 0004 made the first ones).
DROP TRIGGER audit_users_create;
DROP TRIGGER audit_users_update;
DROP TRIGGER audit_users_delete;
CREATE TRIGGER audit_users_create AFTER INSERT ON users BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'users', NEW.id, NULL, NULL, json_object('id', NEW.id, 'username', NEW.username, 'display_name', NEW.display_name, 'role', NEW.role, 'disabled', NEW.disabled)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_users_update AFTER UPDATE ON users WHEN OLD.username IS NOT NEW.username OR OLD.display_name IS NOT NEW.display_name OR OLD.role IS NOT NEW.role OR OLD.disabled IS NOT NEW.disabled OR OLD.password_hash IS NOT NEW.password_hash BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'users', NEW.id, NULL, json_object('id', OLD.id, 'username', OLD.username, 'display_name', OLD.display_name, 'role', OLD.role, 'disabled', OLD.disabled), json_object('id', NEW.id, 'username', NEW.username, 'display_name', NEW.display_name, 'role', NEW.role, 'disabled', NEW.disabled, 'password_changed', OLD.password_hash IS NOT NEW.password_hash)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_users_delete AFTER DELETE ON users BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'users', OLD.id, NULL, json_object('id', OLD.id, 'username', OLD.username, 'display_name', OLD.display_name, 'role', OLD.role, 'disabled', OLD.disabled), NULL
    FROM audit_actor a WHERE a.id = 1;
END;
