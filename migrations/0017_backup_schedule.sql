-- Where and how often the server copies the database by itself (Settings -> Backups). One row at
-- most, written the first time an admin saves the schedule; no row means: no folder chosen, a copy
-- every day, 14 kept. The command line and the environment (`serve --backup-dir`, `--backup-every`,
-- `--backup-keep`) win over what is stored here, value by value.
--
-- `dir` is a folder on this computer (a second disk, a USB drive, a mounted network share); empty
-- means none. The server never creates it: a missing folder is reported, so an unplugged drive
-- never fills the system disk. `every_s` is the period in seconds (10 s at least), `keep` how many
-- scheduled copies stay in the folder.
CREATE TABLE backup_schedule (
    id       INTEGER PRIMARY KEY CHECK (id = 1),
    dir      TEXT    NOT NULL DEFAULT '',
    every_s  INTEGER NOT NULL DEFAULT 86400 CHECK (every_s >= 10),
    keep     INTEGER NOT NULL DEFAULT 14 CHECK (keep BETWEEN 1 AND 1000)
);

CREATE TRIGGER audit_backup_schedule_create AFTER INSERT ON backup_schedule BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'backup_schedule', NEW.id, NULL, NULL, json_object('id', NEW.id, 'dir', NEW.dir, 'every_s', NEW.every_s, 'keep', NEW.keep)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_backup_schedule_update AFTER UPDATE ON backup_schedule WHEN OLD.dir IS NOT NEW.dir OR OLD.every_s IS NOT NEW.every_s OR OLD.keep IS NOT NEW.keep BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'backup_schedule', NEW.id, NULL, json_object('id', OLD.id, 'dir', OLD.dir, 'every_s', OLD.every_s, 'keep', OLD.keep), json_object('id', NEW.id, 'dir', NEW.dir, 'every_s', NEW.every_s, 'keep', NEW.keep)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_backup_schedule_delete AFTER DELETE ON backup_schedule BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'backup_schedule', OLD.id, NULL, json_object('id', OLD.id, 'dir', OLD.dir, 'every_s', OLD.every_s, 'keep', OLD.keep), NULL
    FROM audit_actor a WHERE a.id = 1;
END;
