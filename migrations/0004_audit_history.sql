-- Audit history: every create, edit and delete of a record writes a row here in the same
-- transaction, with who, when, which record, and the values before and after (JSON).
--
-- Triggers do the writing, so no code path can forget it. They learn who is acting from the
-- single row of `audit_actor`, which every write transaction sets first (the web layer's
-- `AppState::write` and the CLI). SQLite runs one write transaction at a time, so the row read
-- by a trigger is always the one its own transaction wrote. Secrets (password and token hashes)
-- and the bulky sheet snapshots are left out; a password change shows as `password_changed`.

CREATE TABLE audit_actor (
    id        INTEGER PRIMARY KEY CHECK (id = 1),
    user_id   INTEGER,
    username  TEXT NOT NULL DEFAULT 'system'
);
INSERT INTO audit_actor (id) VALUES (1);

CREATE TABLE audit_log (
    id          INTEGER PRIMARY KEY,
    at          TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    user_id     INTEGER,
    username    TEXT    NOT NULL,
    action      TEXT    NOT NULL CHECK (action IN ('create', 'update', 'delete')),
    table_name  TEXT    NOT NULL,
    record_id   INTEGER NOT NULL,
    -- the build a record belongs to, for a build's History view
    build_id    INTEGER,
    before      TEXT,
    after       TEXT,
    created_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at  TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX audit_by_build ON audit_log (build_id, id);
CREATE INDEX audit_by_record ON audit_log (table_name, record_id, id);


-- customers
CREATE TRIGGER audit_customers_create AFTER INSERT ON customers BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'customers', NEW.id, NULL, NULL, json_object('id', NEW.id, 'name', NEW.name, 'phone', NEW.phone, 'email', NEW.email, 'notes', NEW.notes, 'deleted_at', NEW.deleted_at)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_customers_update AFTER UPDATE ON customers WHEN OLD.name IS NOT NEW.name OR OLD.phone IS NOT NEW.phone OR OLD.email IS NOT NEW.email OR OLD.notes IS NOT NEW.notes OR OLD.deleted_at IS NOT NEW.deleted_at BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'customers', NEW.id, NULL, json_object('id', OLD.id, 'name', OLD.name, 'phone', OLD.phone, 'email', OLD.email, 'notes', OLD.notes, 'deleted_at', OLD.deleted_at), json_object('id', NEW.id, 'name', NEW.name, 'phone', NEW.phone, 'email', NEW.email, 'notes', NEW.notes, 'deleted_at', NEW.deleted_at)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_customers_delete AFTER DELETE ON customers BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'customers', OLD.id, NULL, json_object('id', OLD.id, 'name', OLD.name, 'phone', OLD.phone, 'email', OLD.email, 'notes', OLD.notes, 'deleted_at', OLD.deleted_at), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

-- cars
CREATE TRIGGER audit_cars_create AFTER INSERT ON cars BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'cars', NEW.id, NULL, NULL, json_object('id', NEW.id, 'customer_id', NEW.customer_id, 'description', NEW.description, 'engine', NEW.engine, 'weight_kg', NEW.weight_kg, 'transmission', NEW.transmission, 'rated_input_torque_nm', NEW.rated_input_torque_nm, 'first_gear_ratio', NEW.first_gear_ratio, 'final_drive_ratio', NEW.final_drive_ratio, 'tire_diameter_mm', NEW.tire_diameter_mm, 'launch_rpm', NEW.launch_rpm, 'torque_curve_nm', NEW.torque_curve_nm, 'notes', NEW.notes)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_cars_update AFTER UPDATE ON cars WHEN OLD.customer_id IS NOT NEW.customer_id OR OLD.description IS NOT NEW.description OR OLD.engine IS NOT NEW.engine OR OLD.weight_kg IS NOT NEW.weight_kg OR OLD.transmission IS NOT NEW.transmission OR OLD.rated_input_torque_nm IS NOT NEW.rated_input_torque_nm OR OLD.first_gear_ratio IS NOT NEW.first_gear_ratio OR OLD.final_drive_ratio IS NOT NEW.final_drive_ratio OR OLD.tire_diameter_mm IS NOT NEW.tire_diameter_mm OR OLD.launch_rpm IS NOT NEW.launch_rpm OR OLD.torque_curve_nm IS NOT NEW.torque_curve_nm OR OLD.notes IS NOT NEW.notes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'cars', NEW.id, NULL, json_object('id', OLD.id, 'customer_id', OLD.customer_id, 'description', OLD.description, 'engine', OLD.engine, 'weight_kg', OLD.weight_kg, 'transmission', OLD.transmission, 'rated_input_torque_nm', OLD.rated_input_torque_nm, 'first_gear_ratio', OLD.first_gear_ratio, 'final_drive_ratio', OLD.final_drive_ratio, 'tire_diameter_mm', OLD.tire_diameter_mm, 'launch_rpm', OLD.launch_rpm, 'torque_curve_nm', OLD.torque_curve_nm, 'notes', OLD.notes), json_object('id', NEW.id, 'customer_id', NEW.customer_id, 'description', NEW.description, 'engine', NEW.engine, 'weight_kg', NEW.weight_kg, 'transmission', NEW.transmission, 'rated_input_torque_nm', NEW.rated_input_torque_nm, 'first_gear_ratio', NEW.first_gear_ratio, 'final_drive_ratio', NEW.final_drive_ratio, 'tire_diameter_mm', NEW.tire_diameter_mm, 'launch_rpm', NEW.launch_rpm, 'torque_curve_nm', NEW.torque_curve_nm, 'notes', NEW.notes)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_cars_delete AFTER DELETE ON cars BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'cars', OLD.id, NULL, json_object('id', OLD.id, 'customer_id', OLD.customer_id, 'description', OLD.description, 'engine', OLD.engine, 'weight_kg', OLD.weight_kg, 'transmission', OLD.transmission, 'rated_input_torque_nm', OLD.rated_input_torque_nm, 'first_gear_ratio', OLD.first_gear_ratio, 'final_drive_ratio', OLD.final_drive_ratio, 'tire_diameter_mm', OLD.tire_diameter_mm, 'launch_rpm', OLD.launch_rpm, 'torque_curve_nm', OLD.torque_curve_nm, 'notes', OLD.notes), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

-- builds
CREATE TRIGGER audit_builds_create AFTER INSERT ON builds BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'builds', NEW.id, NEW.id, NULL, json_object('id', NEW.id, 'car_id', NEW.car_id, 'label', NEW.label, 'disc_count', NEW.disc_count, 'facing_material', NEW.facing_material, 'facing_od_mm', NEW.facing_od_mm, 'facing_id_mm', NEW.facing_id_mm, 'disc_thickness_new_mm', NEW.disc_thickness_new_mm, 'disc_thickness_min_mm', NEW.disc_thickness_min_mm, 'spring_count', NEW.spring_count, 'spring_description', NEW.spring_description, 'spring_rate_n_per_mm', NEW.spring_rate_n_per_mm, 'adjuster_tpi', NEW.adjuster_tpi, 'adjuster_pitch_mm', NEW.adjuster_pitch_mm, 'base_compression_mm', NEW.base_compression_mm, 'cover_height_free_mm', NEW.cover_height_free_mm, 'cover_height_installed_mm', NEW.cover_height_installed_mm, 'lever_count', NEW.lever_count, 'lever_mass_g', NEW.lever_mass_g, 'lever_cg_radius_mm', NEW.lever_cg_radius_mm, 'lever_arm_ratio', NEW.lever_arm_ratio, 'lever_gain_n_per_g', NEW.lever_gain_n_per_g, 'shim_stack_mm', NEW.shim_stack_mm, 'shimming_limit_mm', NEW.shimming_limit_mm, 'status', NEW.status, 'notes', NEW.notes)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_builds_update AFTER UPDATE ON builds WHEN OLD.car_id IS NOT NEW.car_id OR OLD.label IS NOT NEW.label OR OLD.disc_count IS NOT NEW.disc_count OR OLD.facing_material IS NOT NEW.facing_material OR OLD.facing_od_mm IS NOT NEW.facing_od_mm OR OLD.facing_id_mm IS NOT NEW.facing_id_mm OR OLD.disc_thickness_new_mm IS NOT NEW.disc_thickness_new_mm OR OLD.disc_thickness_min_mm IS NOT NEW.disc_thickness_min_mm OR OLD.spring_count IS NOT NEW.spring_count OR OLD.spring_description IS NOT NEW.spring_description OR OLD.spring_rate_n_per_mm IS NOT NEW.spring_rate_n_per_mm OR OLD.adjuster_tpi IS NOT NEW.adjuster_tpi OR OLD.adjuster_pitch_mm IS NOT NEW.adjuster_pitch_mm OR OLD.base_compression_mm IS NOT NEW.base_compression_mm OR OLD.cover_height_free_mm IS NOT NEW.cover_height_free_mm OR OLD.cover_height_installed_mm IS NOT NEW.cover_height_installed_mm OR OLD.lever_count IS NOT NEW.lever_count OR OLD.lever_mass_g IS NOT NEW.lever_mass_g OR OLD.lever_cg_radius_mm IS NOT NEW.lever_cg_radius_mm OR OLD.lever_arm_ratio IS NOT NEW.lever_arm_ratio OR OLD.lever_gain_n_per_g IS NOT NEW.lever_gain_n_per_g OR OLD.shim_stack_mm IS NOT NEW.shim_stack_mm OR OLD.shimming_limit_mm IS NOT NEW.shimming_limit_mm OR OLD.status IS NOT NEW.status OR OLD.notes IS NOT NEW.notes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'builds', NEW.id, NEW.id, json_object('id', OLD.id, 'car_id', OLD.car_id, 'label', OLD.label, 'disc_count', OLD.disc_count, 'facing_material', OLD.facing_material, 'facing_od_mm', OLD.facing_od_mm, 'facing_id_mm', OLD.facing_id_mm, 'disc_thickness_new_mm', OLD.disc_thickness_new_mm, 'disc_thickness_min_mm', OLD.disc_thickness_min_mm, 'spring_count', OLD.spring_count, 'spring_description', OLD.spring_description, 'spring_rate_n_per_mm', OLD.spring_rate_n_per_mm, 'adjuster_tpi', OLD.adjuster_tpi, 'adjuster_pitch_mm', OLD.adjuster_pitch_mm, 'base_compression_mm', OLD.base_compression_mm, 'cover_height_free_mm', OLD.cover_height_free_mm, 'cover_height_installed_mm', OLD.cover_height_installed_mm, 'lever_count', OLD.lever_count, 'lever_mass_g', OLD.lever_mass_g, 'lever_cg_radius_mm', OLD.lever_cg_radius_mm, 'lever_arm_ratio', OLD.lever_arm_ratio, 'lever_gain_n_per_g', OLD.lever_gain_n_per_g, 'shim_stack_mm', OLD.shim_stack_mm, 'shimming_limit_mm', OLD.shimming_limit_mm, 'status', OLD.status, 'notes', OLD.notes), json_object('id', NEW.id, 'car_id', NEW.car_id, 'label', NEW.label, 'disc_count', NEW.disc_count, 'facing_material', NEW.facing_material, 'facing_od_mm', NEW.facing_od_mm, 'facing_id_mm', NEW.facing_id_mm, 'disc_thickness_new_mm', NEW.disc_thickness_new_mm, 'disc_thickness_min_mm', NEW.disc_thickness_min_mm, 'spring_count', NEW.spring_count, 'spring_description', NEW.spring_description, 'spring_rate_n_per_mm', NEW.spring_rate_n_per_mm, 'adjuster_tpi', NEW.adjuster_tpi, 'adjuster_pitch_mm', NEW.adjuster_pitch_mm, 'base_compression_mm', NEW.base_compression_mm, 'cover_height_free_mm', NEW.cover_height_free_mm, 'cover_height_installed_mm', NEW.cover_height_installed_mm, 'lever_count', NEW.lever_count, 'lever_mass_g', NEW.lever_mass_g, 'lever_cg_radius_mm', NEW.lever_cg_radius_mm, 'lever_arm_ratio', NEW.lever_arm_ratio, 'lever_gain_n_per_g', NEW.lever_gain_n_per_g, 'shim_stack_mm', NEW.shim_stack_mm, 'shimming_limit_mm', NEW.shimming_limit_mm, 'status', NEW.status, 'notes', NEW.notes)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_builds_delete AFTER DELETE ON builds BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'builds', OLD.id, OLD.id, json_object('id', OLD.id, 'car_id', OLD.car_id, 'label', OLD.label, 'disc_count', OLD.disc_count, 'facing_material', OLD.facing_material, 'facing_od_mm', OLD.facing_od_mm, 'facing_id_mm', OLD.facing_id_mm, 'disc_thickness_new_mm', OLD.disc_thickness_new_mm, 'disc_thickness_min_mm', OLD.disc_thickness_min_mm, 'spring_count', OLD.spring_count, 'spring_description', OLD.spring_description, 'spring_rate_n_per_mm', OLD.spring_rate_n_per_mm, 'adjuster_tpi', OLD.adjuster_tpi, 'adjuster_pitch_mm', OLD.adjuster_pitch_mm, 'base_compression_mm', OLD.base_compression_mm, 'cover_height_free_mm', OLD.cover_height_free_mm, 'cover_height_installed_mm', OLD.cover_height_installed_mm, 'lever_count', OLD.lever_count, 'lever_mass_g', OLD.lever_mass_g, 'lever_cg_radius_mm', OLD.lever_cg_radius_mm, 'lever_arm_ratio', OLD.lever_arm_ratio, 'lever_gain_n_per_g', OLD.lever_gain_n_per_g, 'shim_stack_mm', OLD.shim_stack_mm, 'shimming_limit_mm', OLD.shimming_limit_mm, 'status', OLD.status, 'notes', OLD.notes), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

-- setup_changes
CREATE TRIGGER audit_setup_changes_create AFTER INSERT ON setup_changes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'setup_changes', NEW.id, NEW.build_id, NULL, json_object('id', NEW.id, 'build_id', NEW.build_id, 'changed_on', NEW.changed_on, 'adjuster_turns', NEW.adjuster_turns, 'counterweight_g', NEW.counterweight_g, 'mu', NEW.mu, 'note', NEW.note)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_setup_changes_update AFTER UPDATE ON setup_changes WHEN OLD.build_id IS NOT NEW.build_id OR OLD.changed_on IS NOT NEW.changed_on OR OLD.adjuster_turns IS NOT NEW.adjuster_turns OR OLD.counterweight_g IS NOT NEW.counterweight_g OR OLD.mu IS NOT NEW.mu OR OLD.note IS NOT NEW.note BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'setup_changes', NEW.id, NEW.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'changed_on', OLD.changed_on, 'adjuster_turns', OLD.adjuster_turns, 'counterweight_g', OLD.counterweight_g, 'mu', OLD.mu, 'note', OLD.note), json_object('id', NEW.id, 'build_id', NEW.build_id, 'changed_on', NEW.changed_on, 'adjuster_turns', NEW.adjuster_turns, 'counterweight_g', NEW.counterweight_g, 'mu', NEW.mu, 'note', NEW.note)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_setup_changes_delete AFTER DELETE ON setup_changes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'setup_changes', OLD.id, OLD.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'changed_on', OLD.changed_on, 'adjuster_turns', OLD.adjuster_turns, 'counterweight_g', OLD.counterweight_g, 'mu', OLD.mu, 'note', OLD.note), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

-- bench_tests
CREATE TRIGGER audit_bench_tests_create AFTER INSERT ON bench_tests BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'bench_tests', NEW.id, NEW.build_id, NULL, json_object('id', NEW.id, 'build_id', NEW.build_id, 'tested_on', NEW.tested_on, 'note', NEW.note)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_bench_tests_update AFTER UPDATE ON bench_tests WHEN OLD.build_id IS NOT NEW.build_id OR OLD.tested_on IS NOT NEW.tested_on OR OLD.note IS NOT NEW.note BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'bench_tests', NEW.id, NEW.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'tested_on', OLD.tested_on, 'note', OLD.note), json_object('id', NEW.id, 'build_id', NEW.build_id, 'tested_on', NEW.tested_on, 'note', NEW.note)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_bench_tests_delete AFTER DELETE ON bench_tests BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'bench_tests', OLD.id, OLD.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'tested_on', OLD.tested_on, 'note', OLD.note), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

-- bench_springs
CREATE TRIGGER audit_bench_springs_create AFTER INSERT ON bench_springs BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'bench_springs', NEW.id, (SELECT t.build_id FROM bench_tests t WHERE t.id = NEW.bench_test_id), NULL, json_object('id', NEW.id, 'bench_test_id', NEW.bench_test_id, 'position', NEW.position, 'free_length_mm', NEW.free_length_mm, 'compression_mm', NEW.compression_mm, 'force_n', NEW.force_n)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_bench_springs_update AFTER UPDATE ON bench_springs WHEN OLD.bench_test_id IS NOT NEW.bench_test_id OR OLD.position IS NOT NEW.position OR OLD.free_length_mm IS NOT NEW.free_length_mm OR OLD.compression_mm IS NOT NEW.compression_mm OR OLD.force_n IS NOT NEW.force_n BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'bench_springs', NEW.id, (SELECT t.build_id FROM bench_tests t WHERE t.id = NEW.bench_test_id), json_object('id', OLD.id, 'bench_test_id', OLD.bench_test_id, 'position', OLD.position, 'free_length_mm', OLD.free_length_mm, 'compression_mm', OLD.compression_mm, 'force_n', OLD.force_n), json_object('id', NEW.id, 'bench_test_id', NEW.bench_test_id, 'position', NEW.position, 'free_length_mm', NEW.free_length_mm, 'compression_mm', NEW.compression_mm, 'force_n', NEW.force_n)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_bench_springs_delete AFTER DELETE ON bench_springs BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'bench_springs', OLD.id, (SELECT t.build_id FROM bench_tests t WHERE t.id = OLD.bench_test_id), json_object('id', OLD.id, 'bench_test_id', OLD.bench_test_id, 'position', OLD.position, 'free_length_mm', OLD.free_length_mm, 'compression_mm', OLD.compression_mm, 'force_n', OLD.force_n), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

-- cover_heights
CREATE TRIGGER audit_cover_heights_create AFTER INSERT ON cover_heights BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'cover_heights', NEW.id, NEW.build_id, NULL, json_object('id', NEW.id, 'build_id', NEW.build_id, 'measured_on', NEW.measured_on, 'height_mm', NEW.height_mm, 'passes', NEW.passes, 'shims_pulled', NEW.shims_pulled, 'new_disc', NEW.new_disc, 'note', NEW.note)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_cover_heights_update AFTER UPDATE ON cover_heights WHEN OLD.build_id IS NOT NEW.build_id OR OLD.measured_on IS NOT NEW.measured_on OR OLD.height_mm IS NOT NEW.height_mm OR OLD.passes IS NOT NEW.passes OR OLD.shims_pulled IS NOT NEW.shims_pulled OR OLD.new_disc IS NOT NEW.new_disc OR OLD.note IS NOT NEW.note BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'cover_heights', NEW.id, NEW.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'measured_on', OLD.measured_on, 'height_mm', OLD.height_mm, 'passes', OLD.passes, 'shims_pulled', OLD.shims_pulled, 'new_disc', OLD.new_disc, 'note', OLD.note), json_object('id', NEW.id, 'build_id', NEW.build_id, 'measured_on', NEW.measured_on, 'height_mm', NEW.height_mm, 'passes', NEW.passes, 'shims_pulled', NEW.shims_pulled, 'new_disc', NEW.new_disc, 'note', NEW.note)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_cover_heights_delete AFTER DELETE ON cover_heights BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'cover_heights', OLD.id, OLD.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'measured_on', OLD.measured_on, 'height_mm', OLD.height_mm, 'passes', OLD.passes, 'shims_pulled', OLD.shims_pulled, 'new_disc', OLD.new_disc, 'note', OLD.note), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

-- passes
CREATE TRIGGER audit_passes_create AFTER INSERT ON passes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'passes', NEW.id, NEW.build_id, NULL, json_object('id', NEW.id, 'build_id', NEW.build_id, 'run_on', NEW.run_on, 'track', NEW.track, 'launch_rpm', NEW.launch_rpm, 'sixty_ft_s', NEW.sixty_ft_s, 'et_s', NEW.et_s, 'observed_lockup_rpm', NEW.observed_lockup_rpm, 'notes', NEW.notes)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_passes_update AFTER UPDATE ON passes WHEN OLD.build_id IS NOT NEW.build_id OR OLD.run_on IS NOT NEW.run_on OR OLD.track IS NOT NEW.track OR OLD.launch_rpm IS NOT NEW.launch_rpm OR OLD.sixty_ft_s IS NOT NEW.sixty_ft_s OR OLD.et_s IS NOT NEW.et_s OR OLD.observed_lockup_rpm IS NOT NEW.observed_lockup_rpm OR OLD.notes IS NOT NEW.notes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'passes', NEW.id, NEW.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'run_on', OLD.run_on, 'track', OLD.track, 'launch_rpm', OLD.launch_rpm, 'sixty_ft_s', OLD.sixty_ft_s, 'et_s', OLD.et_s, 'observed_lockup_rpm', OLD.observed_lockup_rpm, 'notes', OLD.notes), json_object('id', NEW.id, 'build_id', NEW.build_id, 'run_on', NEW.run_on, 'track', NEW.track, 'launch_rpm', NEW.launch_rpm, 'sixty_ft_s', NEW.sixty_ft_s, 'et_s', NEW.et_s, 'observed_lockup_rpm', NEW.observed_lockup_rpm, 'notes', NEW.notes)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_passes_delete AFTER DELETE ON passes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'passes', OLD.id, OLD.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'run_on', OLD.run_on, 'track', OLD.track, 'launch_rpm', OLD.launch_rpm, 'sixty_ft_s', OLD.sixty_ft_s, 'et_s', OLD.et_s, 'observed_lockup_rpm', OLD.observed_lockup_rpm, 'notes', OLD.notes), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

-- shop_settings
CREATE TRIGGER audit_shop_settings_create AFTER INSERT ON shop_settings BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'shop_settings', NEW.id, NULL, NULL, json_object('id', NEW.id, 'name', NEW.name, 'phone', NEW.phone, 'email', NEW.email, 'address', NEW.address, 'units', NEW.units, 'spring_spread_pct', NEW.spring_spread_pct, 'spring_sag_pct', NEW.spring_sag_pct, 'shimming_limit_mm', NEW.shimming_limit_mm, 'overclamp_factor', NEW.overclamp_factor, 'due_within_passes', NEW.due_within_passes)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_shop_settings_update AFTER UPDATE ON shop_settings WHEN OLD.name IS NOT NEW.name OR OLD.phone IS NOT NEW.phone OR OLD.email IS NOT NEW.email OR OLD.address IS NOT NEW.address OR OLD.units IS NOT NEW.units OR OLD.spring_spread_pct IS NOT NEW.spring_spread_pct OR OLD.spring_sag_pct IS NOT NEW.spring_sag_pct OR OLD.shimming_limit_mm IS NOT NEW.shimming_limit_mm OR OLD.overclamp_factor IS NOT NEW.overclamp_factor OR OLD.due_within_passes IS NOT NEW.due_within_passes BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'shop_settings', NEW.id, NULL, json_object('id', OLD.id, 'name', OLD.name, 'phone', OLD.phone, 'email', OLD.email, 'address', OLD.address, 'units', OLD.units, 'spring_spread_pct', OLD.spring_spread_pct, 'spring_sag_pct', OLD.spring_sag_pct, 'shimming_limit_mm', OLD.shimming_limit_mm, 'overclamp_factor', OLD.overclamp_factor, 'due_within_passes', OLD.due_within_passes), json_object('id', NEW.id, 'name', NEW.name, 'phone', NEW.phone, 'email', NEW.email, 'address', NEW.address, 'units', NEW.units, 'spring_spread_pct', NEW.spring_spread_pct, 'spring_sag_pct', NEW.spring_sag_pct, 'shimming_limit_mm', NEW.shimming_limit_mm, 'overclamp_factor', NEW.overclamp_factor, 'due_within_passes', NEW.due_within_passes)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_shop_settings_delete AFTER DELETE ON shop_settings BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'shop_settings', OLD.id, NULL, json_object('id', OLD.id, 'name', OLD.name, 'phone', OLD.phone, 'email', OLD.email, 'address', OLD.address, 'units', OLD.units, 'spring_spread_pct', OLD.spring_spread_pct, 'spring_sag_pct', OLD.spring_sag_pct, 'shimming_limit_mm', OLD.shimming_limit_mm, 'overclamp_factor', OLD.overclamp_factor, 'due_within_passes', OLD.due_within_passes), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

-- users
CREATE TRIGGER audit_users_create AFTER INSERT ON users BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'users', NEW.id, NULL, NULL, json_object('id', NEW.id, 'username', NEW.username, 'role', NEW.role, 'disabled', NEW.disabled)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_users_update AFTER UPDATE ON users WHEN OLD.username IS NOT NEW.username OR OLD.role IS NOT NEW.role OR OLD.disabled IS NOT NEW.disabled OR OLD.password_hash IS NOT NEW.password_hash BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'users', NEW.id, NULL, json_object('id', OLD.id, 'username', OLD.username, 'role', OLD.role, 'disabled', OLD.disabled), json_object('id', NEW.id, 'username', NEW.username, 'role', NEW.role, 'disabled', NEW.disabled, 'password_changed', OLD.password_hash IS NOT NEW.password_hash)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_users_delete AFTER DELETE ON users BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'users', OLD.id, NULL, json_object('id', OLD.id, 'username', OLD.username, 'role', OLD.role, 'disabled', OLD.disabled), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

-- api_tokens
CREATE TRIGGER audit_api_tokens_create AFTER INSERT ON api_tokens BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'api_tokens', NEW.id, NULL, NULL, json_object('id', NEW.id, 'user_id', NEW.user_id, 'revoked_at', NEW.revoked_at)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_api_tokens_update AFTER UPDATE ON api_tokens WHEN OLD.user_id IS NOT NEW.user_id OR OLD.revoked_at IS NOT NEW.revoked_at BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'api_tokens', NEW.id, NULL, json_object('id', OLD.id, 'user_id', OLD.user_id, 'revoked_at', OLD.revoked_at), json_object('id', NEW.id, 'user_id', NEW.user_id, 'revoked_at', NEW.revoked_at)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_api_tokens_delete AFTER DELETE ON api_tokens BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'api_tokens', OLD.id, NULL, json_object('id', OLD.id, 'user_id', OLD.user_id, 'revoked_at', OLD.revoked_at), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

-- sheets
CREATE TRIGGER audit_sheets_create AFTER INSERT ON sheets BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'sheets', NEW.id, NEW.build_id, NULL, json_object('id', NEW.id, 'build_id', NEW.build_id, 'prepared_on', NEW.prepared_on)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_sheets_update AFTER UPDATE ON sheets WHEN OLD.build_id IS NOT NEW.build_id OR OLD.prepared_on IS NOT NEW.prepared_on BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'sheets', NEW.id, NEW.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'prepared_on', OLD.prepared_on), json_object('id', NEW.id, 'build_id', NEW.build_id, 'prepared_on', NEW.prepared_on)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_sheets_delete AFTER DELETE ON sheets BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'sheets', OLD.id, OLD.build_id, json_object('id', OLD.id, 'build_id', OLD.build_id, 'prepared_on', OLD.prepared_on), NULL
    FROM audit_actor a WHERE a.id = 1;
END;

-- sheet_links
CREATE TRIGGER audit_sheet_links_create AFTER INSERT ON sheet_links BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'sheet_links', NEW.id, (SELECT s.build_id FROM sheets s WHERE s.id = NEW.sheet_id), NULL, json_object('id', NEW.id, 'sheet_id', NEW.sheet_id, 'expires_at', NEW.expires_at, 'revoked_at', NEW.revoked_at)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_sheet_links_update AFTER UPDATE ON sheet_links WHEN OLD.sheet_id IS NOT NEW.sheet_id OR OLD.expires_at IS NOT NEW.expires_at OR OLD.revoked_at IS NOT NEW.revoked_at BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'sheet_links', NEW.id, (SELECT s.build_id FROM sheets s WHERE s.id = NEW.sheet_id), json_object('id', OLD.id, 'sheet_id', OLD.sheet_id, 'expires_at', OLD.expires_at, 'revoked_at', OLD.revoked_at), json_object('id', NEW.id, 'sheet_id', NEW.sheet_id, 'expires_at', NEW.expires_at, 'revoked_at', NEW.revoked_at)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_sheet_links_delete AFTER DELETE ON sheet_links BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'sheet_links', OLD.id, (SELECT s.build_id FROM sheets s WHERE s.id = OLD.sheet_id), json_object('id', OLD.id, 'sheet_id', OLD.sheet_id, 'expires_at', OLD.expires_at, 'revoked_at', OLD.revoked_at), NULL
    FROM audit_actor a WHERE a.id = 1;
END;
