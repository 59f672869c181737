-- A pass may carry the lock time read off the car's own logger or a timing screen (seconds from
-- the launch to lockup), so the whole-launch friction method (docs/engineering.md) can read a pass
-- without an uploaded data log.
ALTER TABLE passes ADD COLUMN lockup_time_s REAL;

-- The friction each pass gives by the whole launch (`model::calibration::launch_fit`): about
-- twenty launch simulations a pass, too slow for every uncached page, so it is kept beside the
-- work-due status and worked out in the same writing transaction (`status::work_out`). `inputs`
-- is a fingerprint of everything the fit read (the build of the pass's date, the car, the pass);
-- a reader whose inputs no longer match works the pass out itself, so a stale row is never used.
-- Derived data: no audit triggers; rebuilt with the status.
CREATE TABLE pass_launch_fits (
    pass_id     INTEGER PRIMARY KEY REFERENCES passes (id) ON DELETE CASCADE,
    inputs      INTEGER NOT NULL,
    -- the friction whose simulated launch locks when the pass did, or NULL with `note`
    mu          REAL,
    -- the simulated lockup engine speed at that friction, rpm
    lockup_rpm  REAL,
    -- why no friction reproduces the pass, in words
    note        TEXT
);

-- The audit triggers of passes, rewritten to include the new column.
DROP TRIGGER audit_passes_create;
DROP TRIGGER audit_passes_update;
DROP TRIGGER audit_passes_delete;
CREATE TRIGGER audit_passes_create AFTER INSERT ON passes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'passes', NEW.id, NEW.build_id, NULL, json_object('id', NEW.id, 'build_id', NEW.build_id, 'run_on', NEW.run_on, 'track', NEW.track, 'launch_rpm', NEW.launch_rpm, 'sixty_ft_s', NEW.sixty_ft_s, 'et_s', NEW.et_s, 'observed_lockup_rpm', NEW.observed_lockup_rpm, 'notes', NEW.notes, 'run_at', NEW.run_at, 'ambient_c', NEW.ambient_c, 'lockup_time_s', NEW.lockup_time_s)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_passes_update AFTER UPDATE ON passes WHEN OLD.build_id IS NOT NEW.build_id OR OLD.run_on IS NOT NEW.run_on OR OLD.track IS NOT NEW.track OR OLD.launch_rpm IS NOT NEW.launch_rpm OR OLD.sixty_ft_s IS NOT NEW.sixty_ft_s OR OLD.et_s IS NOT NEW.et_s OR OLD.observed_lockup_rpm IS NOT NEW.observed_lockup_rpm OR OLD.notes IS NOT NEW.notes OR OLD.run_at IS NOT NEW.run_at OR OLD.ambient_c IS NOT NEW.ambient_c OR OLD.lockup_time_s IS NOT NEW.lockup_time_s BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'passes', NEW.id, NEW.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'run_on', OLD.run_on, 'track', OLD.track, 'launch_rpm', OLD.launch_rpm, 'sixty_ft_s', OLD.sixty_ft_s, 'et_s', OLD.et_s, 'observed_lockup_rpm', OLD.observed_lockup_rpm, 'notes', OLD.notes, 'run_at', OLD.run_at, 'ambient_c', OLD.ambient_c, 'lockup_time_s', OLD.lockup_time_s), json_object('id', NEW.id, 'build_id', NEW.build_id, 'run_on', NEW.run_on, 'track', NEW.track, 'launch_rpm', NEW.launch_rpm, 'sixty_ft_s', NEW.sixty_ft_s, 'et_s', NEW.et_s, 'observed_lockup_rpm', NEW.observed_lockup_rpm, 'notes', NEW.notes, 'run_at', NEW.run_at, 'ambient_c', NEW.ambient_c, 'lockup_time_s', NEW.lockup_time_s)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_passes_delete AFTER DELETE ON passes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'passes', OLD.id, OLD.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'run_on', OLD.run_on, 'track', OLD.track, 'launch_rpm', OLD.launch_rpm, 'sixty_ft_s', OLD.sixty_ft_s, 'et_s', OLD.et_s, 'observed_lockup_rpm', OLD.observed_lockup_rpm, 'notes', OLD.notes, 'run_at', OLD.run_at, 'ambient_c', OLD.ambient_c, 'lockup_time_s', OLD.lockup_time_s), NULL
    FROM audit_actor a WHERE a.id = 1;
END;
