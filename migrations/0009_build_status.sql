-- The work-due status of every build, kept current so the counter page reads a few rows instead
-- of every cover height of every active build.
--
-- One row per build, worked out in Rust (`status::of_history`, the same wear analysis and spring
-- review the build page uses) from the build, its cover heights and bench tests and the shop's
-- limits. It does not depend on the shop's "due within" window: the nearest forecast is stored
-- and the window is applied when the counter reads (`soon_passes <= ?`), so changing the window
-- rewrites nothing. The customer's soft delete and the build's retirement are applied by the
-- counter's join, so they rewrite nothing either.
--
-- Kept current in two steps inside the writing transaction:
--   1. the triggers below mark a build `stale` whenever a row its status depends on is written
--      (the build itself, a cover height, a bench test or reading, or one of the shop limits the
--      analysis uses: shimming limit, spring spread and sag tolerances);
--   2. every write path calls `status::refresh_stale` before it commits, which works the stale
--      builds out again and clears the mark.
-- A stale row is also listed by the counter (`urgent = 1`) and worked out there from the full
-- history, so a write path that forgot step 2 shows a correct list, only a slower one; the tests
-- check that no write route leaves a stale row.
--
-- Setup changes and passes do not enter the wear analysis (cover heights carry their own pass
-- counts), so they mark nothing.
--
-- Derived data: no audit triggers. Everything here can be worked out again from the audited
-- tables (`status::rebuild_derived`, run by `restore`, by the server at start for any build
-- without a row, and meant for `import`).
CREATE TABLE build_status (
    build_id         INTEGER PRIMARY KEY REFERENCES builds (id),
    -- 1 until worked out from the records written since.
    stale            INTEGER NOT NULL DEFAULT 1 CHECK (stale IN (0, 1)),
    -- 'disc_due', 'shim_due', 'ok', or NULL when wear cannot be worked out (no measurement yet,
    -- no spring rate).
    wear             TEXT CHECK (wear IN ('disc_due', 'shim_due', 'ok')),
    -- the thickness of the next shim to pull (mm), when a shim is due
    next_shim_mm     REAL,
    -- wear 'ok': the nearer of the passes to the next shim and to the disc, and which it is
    soon_passes      REAL,
    soon_disc        INTEGER NOT NULL DEFAULT 0 CHECK (soon_disc IN (0, 1)),
    -- the latest bench test found the set out of tolerance or a spring sagged
    springs_flagged  INTEGER NOT NULL DEFAULT 0 CHECK (springs_flagged IN (0, 1)),
    spread_pct       REAL,
    out_of_tolerance INTEGER NOT NULL DEFAULT 0 CHECK (out_of_tolerance IN (0, 1)),
    sagged           INTEGER NOT NULL DEFAULT 0,
    -- listed whatever the window: disc or shim due, springs flagged, or stale
    urgent           INTEGER NOT NULL DEFAULT 1 CHECK (urgent IN (0, 1))
);

-- Index plan. The counter reads `WHERE urgent = 1 OR soon_passes <= ?window`: SQLite answers
-- the OR from the two indexes below (a MULTI-INDEX OR), touching only the listed rows, then
-- joins each to builds, cars and customers by primary key. `refresh_stale` finds the marked
-- rows through the first index too (stale implies urgent). A refresh reads one build's
-- measurements in recorded order: `cover_heights_by_build_id` serves it (and the build page)
-- without a sort; the older (build_id, passes) index stays for the range queries that use it.
CREATE INDEX build_status_urgent ON build_status (urgent, build_id);
CREATE INDEX build_status_soon ON build_status (soon_passes) WHERE soon_passes IS NOT NULL;
CREATE INDEX cover_heights_by_build_id ON cover_heights (build_id, id);

CREATE TRIGGER build_status_build_create AFTER INSERT ON builds BEGIN
    INSERT INTO build_status (build_id) VALUES (NEW.id);
END;
CREATE TRIGGER build_status_build_update AFTER UPDATE ON builds BEGIN
    UPDATE build_status SET stale = 1, urgent = 1 WHERE build_id IN (OLD.id, NEW.id);
END;
CREATE TRIGGER build_status_height_create AFTER INSERT ON cover_heights BEGIN
    UPDATE build_status SET stale = 1, urgent = 1 WHERE build_id = NEW.build_id;
END;
CREATE TRIGGER build_status_height_update AFTER UPDATE ON cover_heights BEGIN
    UPDATE build_status SET stale = 1, urgent = 1 WHERE build_id IN (OLD.build_id, NEW.build_id);
END;
CREATE TRIGGER build_status_height_delete AFTER DELETE ON cover_heights BEGIN
    UPDATE build_status SET stale = 1, urgent = 1 WHERE build_id = OLD.build_id;
END;
CREATE TRIGGER build_status_bench_create AFTER INSERT ON bench_tests BEGIN
    UPDATE build_status SET stale = 1, urgent = 1 WHERE build_id = NEW.build_id;
END;
CREATE TRIGGER build_status_bench_update AFTER UPDATE ON bench_tests BEGIN
    UPDATE build_status SET stale = 1, urgent = 1 WHERE build_id IN (OLD.build_id, NEW.build_id);
END;
CREATE TRIGGER build_status_spring_create AFTER INSERT ON bench_springs BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id = (SELECT build_id FROM bench_tests WHERE id = NEW.bench_test_id);
END;
CREATE TRIGGER build_status_spring_update AFTER UPDATE ON bench_springs BEGIN
    UPDATE build_status SET stale = 1, urgent = 1
    WHERE build_id IN (SELECT build_id FROM bench_tests
                       WHERE id IN (OLD.bench_test_id, NEW.bench_test_id));
END;
CREATE TRIGGER build_status_limits AFTER UPDATE ON shop_settings
WHEN OLD.shimming_limit_mm IS NOT NEW.shimming_limit_mm
  OR OLD.spring_spread_pct IS NOT NEW.spring_spread_pct
  OR OLD.spring_sag_pct IS NOT NEW.spring_sag_pct
BEGIN
    UPDATE build_status SET stale = 1, urgent = 1;
END;

-- Every existing build starts stale; the server works them out when it starts.
INSERT INTO build_status (build_id) SELECT id FROM builds;
