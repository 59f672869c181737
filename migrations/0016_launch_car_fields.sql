-- What the launch preview needs to know about a car beyond the capacity calculation: the
-- rotating inertias of engine and driveline, where the centre of gravity sits, the tyres' grip,
-- the drag area and the masses of flywheel and pressure plate that take the slip heat. All are
-- optional: the preview uses a documented estimate for a typical car of its class for each one
-- left empty and says which it estimated. Storage units: kg·m², mm, m², kg; grips are plain
-- friction coefficients.
ALTER TABLE cars ADD COLUMN engine_inertia_kg_m2 REAL;
ALTER TABLE cars ADD COLUMN input_inertia_kg_m2 REAL;
ALTER TABLE cars ADD COLUMN driveshaft_inertia_kg_m2 REAL;
ALTER TABLE cars ADD COLUMN rear_axle_inertia_kg_m2 REAL;
ALTER TABLE cars ADD COLUMN front_axle_inertia_kg_m2 REAL;
ALTER TABLE cars ADD COLUMN wheelbase_mm REAL;
ALTER TABLE cars ADD COLUMN cg_to_front_axle_mm REAL;
ALTER TABLE cars ADD COLUMN cg_height_mm REAL;
ALTER TABLE cars ADD COLUMN drag_area_m2 REAL;
ALTER TABLE cars ADD COLUMN tire_grip REAL;
ALTER TABLE cars ADD COLUMN tire_grip_spinning REAL;
ALTER TABLE cars ADD COLUMN flywheel_mass_kg REAL;
ALTER TABLE cars ADD COLUMN pressure_plate_mass_kg REAL;

-- The audit triggers of cars, rewritten to include the new columns.
DROP TRIGGER audit_cars_create;
DROP TRIGGER audit_cars_update;
DROP TRIGGER audit_cars_delete;
CREATE TRIGGER audit_cars_create AFTER INSERT ON cars BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'create', 'cars', NEW.id, NULL, NULL, json_object('id', NEW.id, 'customer_id', NEW.customer_id, 'description', NEW.description, 'engine', NEW.engine, 'weight_kg', NEW.weight_kg, 'transmission', NEW.transmission, 'rated_input_torque_nm', NEW.rated_input_torque_nm, 'first_gear_ratio', NEW.first_gear_ratio, 'final_drive_ratio', NEW.final_drive_ratio, 'tire_diameter_mm', NEW.tire_diameter_mm, 'launch_rpm', NEW.launch_rpm, 'torque_curve_nm', NEW.torque_curve_nm, 'notes', NEW.notes, 'engine_inertia_kg_m2', NEW.engine_inertia_kg_m2, 'input_inertia_kg_m2', NEW.input_inertia_kg_m2, 'driveshaft_inertia_kg_m2', NEW.driveshaft_inertia_kg_m2, 'rear_axle_inertia_kg_m2', NEW.rear_axle_inertia_kg_m2, 'front_axle_inertia_kg_m2', NEW.front_axle_inertia_kg_m2, 'wheelbase_mm', NEW.wheelbase_mm, 'cg_to_front_axle_mm', NEW.cg_to_front_axle_mm, 'cg_height_mm', NEW.cg_height_mm, 'drag_area_m2', NEW.drag_area_m2, 'tire_grip', NEW.tire_grip, 'tire_grip_spinning', NEW.tire_grip_spinning, 'flywheel_mass_kg', NEW.flywheel_mass_kg, 'pressure_plate_mass_kg', NEW.pressure_plate_mass_kg)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_cars_update AFTER UPDATE ON cars WHEN OLD.customer_id IS NOT NEW.customer_id OR OLD.description IS NOT NEW.description OR OLD.engine IS NOT NEW.engine OR OLD.weight_kg IS NOT NEW.weight_kg OR OLD.transmission IS NOT NEW.transmission OR OLD.rated_input_torque_nm IS NOT NEW.rated_input_torque_nm OR OLD.first_gear_ratio IS NOT NEW.first_gear_ratio OR OLD.final_drive_ratio IS NOT NEW.final_drive_ratio OR OLD.tire_diameter_mm IS NOT NEW.tire_diameter_mm OR OLD.launch_rpm IS NOT NEW.launch_rpm OR OLD.torque_curve_nm IS NOT NEW.torque_curve_nm OR OLD.notes IS NOT NEW.notes OR OLD.engine_inertia_kg_m2 IS NOT NEW.engine_inertia_kg_m2 OR OLD.input_inertia_kg_m2 IS NOT NEW.input_inertia_kg_m2 OR OLD.driveshaft_inertia_kg_m2 IS NOT NEW.driveshaft_inertia_kg_m2 OR OLD.rear_axle_inertia_kg_m2 IS NOT NEW.rear_axle_inertia_kg_m2 OR OLD.front_axle_inertia_kg_m2 IS NOT NEW.front_axle_inertia_kg_m2 OR OLD.wheelbase_mm IS NOT NEW.wheelbase_mm OR OLD.cg_to_front_axle_mm IS NOT NEW.cg_to_front_axle_mm OR OLD.cg_height_mm IS NOT NEW.cg_height_mm OR OLD.drag_area_m2 IS NOT NEW.drag_area_m2 OR OLD.tire_grip IS NOT NEW.tire_grip OR OLD.tire_grip_spinning IS NOT NEW.tire_grip_spinning OR OLD.flywheel_mass_kg IS NOT NEW.flywheel_mass_kg OR OLD.pressure_plate_mass_kg IS NOT NEW.pressure_plate_mass_kg BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'update', 'cars', NEW.id, NULL, json_object('id', OLD.id, 'customer_id', OLD.customer_id, 'description', OLD.description, 'engine', OLD.engine, 'weight_kg', OLD.weight_kg, 'transmission', OLD.transmission, 'rated_input_torque_nm', OLD.rated_input_torque_nm, 'first_gear_ratio', OLD.first_gear_ratio, 'final_drive_ratio', OLD.final_drive_ratio, 'tire_diameter_mm', OLD.tire_diameter_mm, 'launch_rpm', OLD.launch_rpm, 'torque_curve_nm', OLD.torque_curve_nm, 'notes', OLD.notes, 'engine_inertia_kg_m2', OLD.engine_inertia_kg_m2, 'input_inertia_kg_m2', OLD.input_inertia_kg_m2, 'driveshaft_inertia_kg_m2', OLD.driveshaft_inertia_kg_m2, 'rear_axle_inertia_kg_m2', OLD.rear_axle_inertia_kg_m2, 'front_axle_inertia_kg_m2', OLD.front_axle_inertia_kg_m2, 'wheelbase_mm', OLD.wheelbase_mm, 'cg_to_front_axle_mm', OLD.cg_to_front_axle_mm, 'cg_height_mm', OLD.cg_height_mm, 'drag_area_m2', OLD.drag_area_m2, 'tire_grip', OLD.tire_grip, 'tire_grip_spinning', OLD.tire_grip_spinning, 'flywheel_mass_kg', OLD.flywheel_mass_kg, 'pressure_plate_mass_kg', OLD.pressure_plate_mass_kg), json_object('id', NEW.id, 'customer_id', NEW.customer_id, 'description', NEW.description, 'engine', NEW.engine, 'weight_kg', NEW.weight_kg, 'transmission', NEW.transmission, 'rated_input_torque_nm', NEW.rated_input_torque_nm, 'first_gear_ratio', NEW.first_gear_ratio, 'final_drive_ratio', NEW.final_drive_ratio, 'tire_diameter_mm', NEW.tire_diameter_mm, 'launch_rpm', NEW.launch_rpm, 'torque_curve_nm', NEW.torque_curve_nm, 'notes', NEW.notes, 'engine_inertia_kg_m2', NEW.engine_inertia_kg_m2, 'input_inertia_kg_m2', NEW.input_inertia_kg_m2, 'driveshaft_inertia_kg_m2', NEW.driveshaft_inertia_kg_m2, 'rear_axle_inertia_kg_m2', NEW.rear_axle_inertia_kg_m2, 'front_axle_inertia_kg_m2', NEW.front_axle_inertia_kg_m2, 'wheelbase_mm', NEW.wheelbase_mm, 'cg_to_front_axle_mm', NEW.cg_to_front_axle_mm, 'cg_height_mm', NEW.cg_height_mm, 'drag_area_m2', NEW.drag_area_m2, 'tire_grip', NEW.tire_grip, 'tire_grip_spinning', NEW.tire_grip_spinning, 'flywheel_mass_kg', NEW.flywheel_mass_kg, 'pressure_plate_mass_kg', NEW.pressure_plate_mass_kg)
    FROM audit_actor a WHERE a.id = 1;
END;
CREATE TRIGGER audit_cars_delete AFTER DELETE ON cars BEGIN
    INSERT INTO audit_log (user_id, username, action, table_name, record_id, build_id, before, after)
    SELECT a.user_id, a.username, 'delete', 'cars', OLD.id, NULL, json_object('id', OLD.id, 'customer_id', OLD.customer_id, 'description', OLD.description, 'engine', OLD.engine, 'weight_kg', OLD.weight_kg, 'transmission', OLD.transmission, 'rated_input_torque_nm', OLD.rated_input_torque_nm, 'first_gear_ratio', OLD.first_gear_ratio, 'final_drive_ratio', OLD.final_drive_ratio, 'tire_diameter_mm', OLD.tire_diameter_mm, 'launch_rpm', OLD.launch_rpm, 'torque_curve_nm', OLD.torque_curve_nm, 'notes', OLD.notes, 'engine_inertia_kg_m2', OLD.engine_inertia_kg_m2, 'input_inertia_kg_m2', OLD.input_inertia_kg_m2, 'driveshaft_inertia_kg_m2', OLD.driveshaft_inertia_kg_m2, 'rear_axle_inertia_kg_m2', OLD.rear_axle_inertia_kg_m2, 'front_axle_inertia_kg_m2', OLD.front_axle_inertia_kg_m2, 'wheelbase_mm', OLD.wheelbase_mm, 'cg_to_front_axle_mm', OLD.cg_to_front_axle_mm, 'cg_height_mm', OLD.cg_height_mm, 'drag_area_m2', OLD.drag_area_m2, 'tire_grip', OLD.tire_grip, 'tire_grip_spinning', OLD.tire_grip_spinning, 'flywheel_mass_kg', OLD.flywheel_mass_kg, 'pressure_plate_mass_kg', OLD.pressure_plate_mass_kg), NULL
    FROM audit_actor a WHERE a.id = 1;
END;
