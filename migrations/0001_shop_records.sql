-- Lockpoint's first schema: the shop's people, their cars, the clutch builds on those cars and
-- everything measured on a build over the years.
--
-- Storage is one consistent unit system, converted at the edges (forms, API, pages):
--   lengths mm, forces N, spring rates N/mm, torque N*m, vehicle weight kg, lever masses and
--   counterweights g, engine speed rpm, dates ISO 8601 text (YYYY-MM-DD), stamps UTC text.
-- Nothing a technician records is hard-deleted: customers carry `deleted_at` (soft delete by an
-- admin), builds carry a status (active / retired), and child records are append-mostly.

CREATE TABLE users (
    id            INTEGER PRIMARY KEY,
    username      TEXT    NOT NULL UNIQUE COLLATE NOCASE,
    password_hash TEXT    NOT NULL,
    role          TEXT    NOT NULL CHECK (role IN ('admin', 'tech')),
    disabled      INTEGER NOT NULL DEFAULT 0 CHECK (disabled IN (0, 1)),
    created_at    TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at    TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);

-- A browser session. Only a hash of the cookie value is stored, so a copy of the database does
-- not let anyone sign in. Sessions are made at login only (never for anonymous visitors).
CREATE TABLE sessions (
    token_hash  TEXT    PRIMARY KEY,
    user_id     INTEGER NOT NULL REFERENCES users (id),
    csrf_token  TEXT    NOT NULL,
    expires_at  TEXT    NOT NULL,
    created_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX sessions_by_user ON sessions (user_id);

-- API bearer tokens, stored as hashes; revoked tokens are kept for the record.
CREATE TABLE api_tokens (
    id          INTEGER PRIMARY KEY,
    user_id     INTEGER NOT NULL REFERENCES users (id),
    token_hash  TEXT    NOT NULL UNIQUE,
    revoked_at  TEXT,
    created_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);

-- Failed sign-ins, to slow down password guessing.
CREATE TABLE login_failures (
    id          INTEGER PRIMARY KEY,
    username    TEXT    NOT NULL COLLATE NOCASE,
    created_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX login_failures_by_name ON login_failures (username, created_at);

-- One row: the shop's name, contact, display units and the limits its rules use.
CREATE TABLE shop_settings (
    id                       INTEGER PRIMARY KEY CHECK (id = 1),
    name                     TEXT    NOT NULL DEFAULT 'My clutch shop',
    phone                    TEXT    NOT NULL DEFAULT '',
    email                    TEXT    NOT NULL DEFAULT '',
    address                  TEXT    NOT NULL DEFAULT '',
    units                    TEXT    NOT NULL DEFAULT 'imperial' CHECK (units IN ('imperial', 'metric')),
    -- spring set: flag when (max - min) rate exceeds this percent of the mean rate
    spring_spread_pct        REAL    NOT NULL DEFAULT 5.0,
    -- a spring has sagged when its load at test height fell by more than this percent
    spring_sag_pct           REAL    NOT NULL DEFAULT 3.0,
    -- default allowed growth of cover height before a shim is due (per-build override)
    shimming_limit_mm        REAL    NOT NULL DEFAULT 0.381,
    -- warn when clutch capacity exceeds the driveline's rated input torque times this
    overclamp_factor         REAL    NOT NULL DEFAULT 1.5,
    -- list work as due when a forecast falls within this many passes
    due_within_passes        INTEGER NOT NULL DEFAULT 10,
    created_at               TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at               TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
INSERT INTO shop_settings (id) VALUES (1);

CREATE TABLE customers (
    id          INTEGER PRIMARY KEY,
    name        TEXT    NOT NULL,
    phone       TEXT    NOT NULL DEFAULT '',
    email       TEXT    NOT NULL DEFAULT '',
    notes       TEXT    NOT NULL DEFAULT '',
    deleted_at  TEXT,
    created_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX customers_by_name ON customers (name COLLATE NOCASE);

-- A car and the drivetrain facts the clutch calculations need. The engine torque curve is a
-- JSON array of [rpm, N*m] pairs, replaced as a whole when the customer brings a new dyno sheet.
CREATE TABLE cars (
    id                   INTEGER PRIMARY KEY,
    customer_id          INTEGER NOT NULL REFERENCES customers (id),
    description          TEXT    NOT NULL,
    engine               TEXT    NOT NULL DEFAULT '',
    weight_kg            REAL,
    transmission         TEXT    NOT NULL DEFAULT '',
    rated_input_torque_nm REAL,
    first_gear_ratio     REAL,
    final_drive_ratio    REAL,
    tire_diameter_mm     REAL,
    launch_rpm           REAL,
    torque_curve_nm      TEXT    NOT NULL DEFAULT '[]',
    notes                TEXT    NOT NULL DEFAULT '',
    created_at           TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at           TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX cars_by_customer ON cars (customer_id);

-- A clutch build: the hardware as assembled. Settings that change between passes (adjuster
-- turns, counterweight, friction assumption) live in setup_changes, newest last.
CREATE TABLE builds (
    id                        INTEGER PRIMARY KEY,
    car_id                    INTEGER NOT NULL REFERENCES cars (id),
    label                     TEXT    NOT NULL DEFAULT '',
    disc_count                INTEGER NOT NULL CHECK (disc_count BETWEEN 1 AND 3),
    facing_material           TEXT    NOT NULL,
    facing_od_mm              REAL    NOT NULL,
    facing_id_mm              REAL    NOT NULL,
    disc_thickness_new_mm     REAL,
    disc_thickness_min_mm     REAL,
    spring_count              INTEGER NOT NULL,
    spring_description        TEXT    NOT NULL DEFAULT '',
    -- nominal rate until a bench test gives a measured one
    spring_rate_n_per_mm      REAL,
    -- adjuster thread: exactly one of tpi / pitch is set
    adjuster_tpi              REAL,
    adjuster_pitch_mm         REAL,
    -- base compression, given directly or as cover heights free and installed
    base_compression_mm       REAL,
    cover_height_free_mm      REAL,
    cover_height_installed_mm REAL,
    lever_count               INTEGER NOT NULL DEFAULT 0,
    lever_mass_g              REAL    NOT NULL DEFAULT 0,
    lever_cg_radius_mm        REAL,
    lever_arm_ratio           REAL,
    -- measured alternative to the geometry: clamp N per gram at 1000 rpm, per lever
    lever_gain_n_per_g        REAL,
    -- JSON array of shim thicknesses in mm, in the order they come out
    shim_stack_mm             TEXT    NOT NULL DEFAULT '[]',
    shimming_limit_mm         REAL,
    status                    TEXT    NOT NULL DEFAULT 'active' CHECK (status IN ('active', 'retired')),
    notes                     TEXT    NOT NULL DEFAULT '',
    created_at                TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at                TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX builds_by_car ON builds (car_id);

CREATE TABLE setup_changes (
    id              INTEGER PRIMARY KEY,
    build_id        INTEGER NOT NULL REFERENCES builds (id),
    changed_on      TEXT    NOT NULL,
    adjuster_turns  REAL    NOT NULL,
    counterweight_g REAL    NOT NULL,
    mu              REAL,
    note            TEXT    NOT NULL DEFAULT '',
    user_id         INTEGER REFERENCES users (id),
    created_at      TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at      TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX setup_changes_by_build ON setup_changes (build_id, changed_on);

-- A bench test of the build's spring set; one row per spring in bench_springs.
CREATE TABLE bench_tests (
    id          INTEGER PRIMARY KEY,
    build_id    INTEGER NOT NULL REFERENCES builds (id),
    tested_on   TEXT    NOT NULL,
    note        TEXT    NOT NULL DEFAULT '',
    user_id     INTEGER REFERENCES users (id),
    created_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX bench_tests_by_build ON bench_tests (build_id, tested_on);

CREATE TABLE bench_springs (
    id              INTEGER PRIMARY KEY,
    bench_test_id   INTEGER NOT NULL REFERENCES bench_tests (id),
    position        INTEGER NOT NULL,
    free_length_mm  REAL,
    compression_mm  REAL    NOT NULL,
    force_n         REAL    NOT NULL,
    created_at      TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at      TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    UNIQUE (bench_test_id, position)
);

CREATE TABLE cover_heights (
    id            INTEGER PRIMARY KEY,
    build_id      INTEGER NOT NULL REFERENCES builds (id),
    measured_on   TEXT    NOT NULL,
    height_mm     REAL    NOT NULL,
    passes        INTEGER NOT NULL,
    shims_pulled  INTEGER NOT NULL DEFAULT 0,
    note          TEXT    NOT NULL DEFAULT '',
    user_id       INTEGER REFERENCES users (id),
    created_at    TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at    TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX cover_heights_by_build ON cover_heights (build_id, passes);

CREATE TABLE passes (
    id                 INTEGER PRIMARY KEY,
    build_id           INTEGER NOT NULL REFERENCES builds (id),
    run_on             TEXT    NOT NULL,
    track              TEXT    NOT NULL DEFAULT '',
    launch_rpm         REAL,
    sixty_ft_s         REAL,
    et_s               REAL,
    observed_lockup_rpm REAL,
    notes              TEXT    NOT NULL DEFAULT '',
    user_id            INTEGER REFERENCES users (id),
    created_at         TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at         TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX passes_by_build ON passes (build_id, run_on);
