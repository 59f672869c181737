-- Data logs: a pass's logger file (CSV), kept deflated so the analysis can be run again when
-- the method improves, with the mapping it was read with and the figures the pages list; and
-- per car the mapping (and engine inertia) last used, offered for the next file.
--
-- The file itself is left out of the audit rows (it can be 50 MB); its size and name are in.

CREATE TABLE pass_logs (
    pass_id            INTEGER PRIMARY KEY REFERENCES passes (id),
    file_name          TEXT    NOT NULL DEFAULT '',
    file_bytes         INTEGER NOT NULL,
    file_deflated      BLOB    NOT NULL,
    -- JSON: columns, time_unit, slip_on_pct, hold_ms, engine_inertia_kgm2
    settings           TEXT    NOT NULL,
    sample_rate_hz     REAL    NOT NULL,
    launch_s           REAL    NOT NULL,
    lockup_s           REAL    NOT NULL,
    lockup_engine_rpm  REAL    NOT NULL,
    slip_energy_j      REAL,
    peak_slip_power_w  REAL,
    -- JSON [[engine rpm, clutch N·m], ...] from launch + 50 ms to lockup − 50 ms
    slip_window        TEXT    NOT NULL DEFAULT '[]',
    user_id            INTEGER REFERENCES users (id),
    created_at         TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at         TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);

CREATE TABLE car_log_mappings (
    car_id             INTEGER PRIMARY KEY REFERENCES cars (id),
    -- JSON, as pass_logs.settings
    settings           TEXT    NOT NULL,
    created_at         TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at         TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);

CREATE TRIGGER audit_pass_logs_create AFTER INSERT ON pass_logs BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'pass_logs', NEW.pass_id, (SELECT build_id FROM passes WHERE id = NEW.pass_id), NULL, json_object('pass_id', NEW.pass_id, 'file_name', NEW.file_name, 'file_bytes', NEW.file_bytes, 'settings', NEW.settings, 'lockup_s', NEW.lockup_s, 'lockup_engine_rpm', NEW.lockup_engine_rpm, 'slip_energy_j', NEW.slip_energy_j)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_pass_logs_update AFTER UPDATE ON pass_logs BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'pass_logs', NEW.pass_id, (SELECT build_id FROM passes WHERE id = NEW.pass_id), json_object('pass_id', OLD.pass_id, 'file_name', OLD.file_name, 'file_bytes', OLD.file_bytes, 'settings', OLD.settings, 'lockup_s', OLD.lockup_s, 'lockup_engine_rpm', OLD.lockup_engine_rpm, 'slip_energy_j', OLD.slip_energy_j), json_object('pass_id', NEW.pass_id, 'file_name', NEW.file_name, 'file_bytes', NEW.file_bytes, 'settings', NEW.settings, 'lockup_s', NEW.lockup_s, 'lockup_engine_rpm', NEW.lockup_engine_rpm, 'slip_energy_j', NEW.slip_energy_j)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_pass_logs_delete AFTER DELETE ON pass_logs BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'pass_logs', OLD.pass_id, (SELECT build_id FROM passes WHERE id = OLD.pass_id), json_object('pass_id', OLD.pass_id, 'file_name', OLD.file_name, 'file_bytes', OLD.file_bytes, 'settings', OLD.settings), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

CREATE TRIGGER audit_car_log_mappings_create AFTER INSERT ON car_log_mappings BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'car_log_mappings', NEW.car_id, NULL, NULL, json_object('car_id', NEW.car_id, 'settings', NEW.settings)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_car_log_mappings_update AFTER UPDATE ON car_log_mappings WHEN OLD.settings IS NOT NEW.settings BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'car_log_mappings', NEW.car_id, NULL, json_object('car_id', OLD.car_id, 'settings', OLD.settings), json_object('car_id', NEW.car_id, 'settings', NEW.settings)
    FROM audit_actor a WHERE a.id = 1;
END;
