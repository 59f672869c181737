//! A customer's car: what the clutch calculations need to know about the drivetrain.

use super::measure::{EngineSpeed, Length, Mass, Torque};
use serde::{Deserialize, Serialize};

use super::FieldErrors;
use super::field::{Ctx, Field, Record, Value};
use clutch::quantity::limits;

#[derive(
    Debug, Clone, Default, PartialEq, Deserialize, Serialize, sqlx::FromRow, utoipa::ToSchema,
)]
#[serde(default)]
pub struct CarInput {
    pub description: String,
    pub engine: String,
    pub weight_kg: Option<Mass>,
    pub transmission: String,
    pub rated_input_torque_nm: Option<Torque>,
    pub first_gear_ratio: Option<f64>,
    pub final_drive_ratio: Option<f64>,
    pub tire_diameter_mm: Option<Length>,
    pub launch_rpm: Option<EngineSpeed>,
    /// Engine torque curve as `[rpm, N*m]` pairs (dyno points); may be empty.
    #[sqlx(json)]
    pub torque_curve_nm: Vec<[f64; 2]>,
    pub notes: String,
    // What the launch preview needs (each optional: an estimate stands in, see
    // `model::launch_defaults`).
    pub engine_inertia_kg_m2: Option<f64>,
    pub input_inertia_kg_m2: Option<f64>,
    pub driveshaft_inertia_kg_m2: Option<f64>,
    pub rear_axle_inertia_kg_m2: Option<f64>,
    pub front_axle_inertia_kg_m2: Option<f64>,
    pub wheelbase_mm: Option<Length>,
    pub cg_to_front_axle_mm: Option<Length>,
    pub cg_height_mm: Option<Length>,
    pub drag_area_m2: Option<f64>,
    pub tire_grip: Option<f64>,
    pub tire_grip_spinning: Option<f64>,
    pub flywheel_mass_kg: Option<Mass>,
    pub pressure_plate_mass_kg: Option<Mass>,
}

impl Record for CarInput {
    const FIELDS: &'static [Field<Self>] = &[
        Field {
            column: "description",
            form: "description",
            label: "Description",
            value: Value::Text {
                max_chars: 200,
                required: true,
                get: |r| &r.description,
                set: |r, v| r.description = v,
            },
        },
        Field {
            column: "engine",
            form: "engine",
            label: "Engine",
            value: Value::Text {
                max_chars: 200,
                required: false,
                get: |r| &r.engine,
                set: |r, v| r.engine = v,
            },
        },
        Field {
            column: "weight_kg",
            form: "weight",
            label: "Race weight",
            value: Value::Number {
                limit: limits::VEHICLE_MASS,
                required: false,
                get: |r| r.weight_kg.map(Mass::kg),
                set: |r, v| r.weight_kg = v.map(Mass::from_kg),
            },
        },
        Field {
            column: "transmission",
            form: "transmission",
            label: "Transmission",
            value: Value::Text {
                max_chars: 200,
                required: false,
                get: |r| &r.transmission,
                set: |r, v| r.transmission = v,
            },
        },
        Field {
            column: "rated_input_torque_nm",
            form: "rated_input_torque",
            label: "Rated input torque",
            value: Value::Number {
                limit: limits::RATED_TORQUE,
                required: false,
                get: |r| r.rated_input_torque_nm.map(Torque::nm),
                set: |r, v| r.rated_input_torque_nm = v.map(Torque::from_nm),
            },
        },
        Field {
            column: "first_gear_ratio",
            form: "first_gear_ratio",
            label: "First gear ratio",
            value: Value::Number {
                limit: limits::FIRST_GEAR,
                required: false,
                get: |r| r.first_gear_ratio,
                set: |r, v| r.first_gear_ratio = v,
            },
        },
        Field {
            column: "final_drive_ratio",
            form: "final_drive_ratio",
            label: "Final drive ratio",
            value: Value::Number {
                limit: limits::FINAL_DRIVE,
                required: false,
                get: |r| r.final_drive_ratio,
                set: |r, v| r.final_drive_ratio = v,
            },
        },
        Field {
            column: "tire_diameter_mm",
            form: "tire_diameter",
            label: "Tire diameter",
            value: Value::Number {
                limit: limits::TIRE_DIAMETER,
                required: false,
                get: |r| r.tire_diameter_mm.map(Length::mm),
                set: |r, v| r.tire_diameter_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "launch_rpm",
            form: "launch_rpm",
            label: "Launch speed",
            value: Value::Number {
                limit: limits::ENGINE_SPEED,
                required: false,
                get: |r| r.launch_rpm.map(EngineSpeed::rpm),
                set: |r, v| r.launch_rpm = v.map(EngineSpeed::from_rpm),
            },
        },
        Field {
            column: "torque_curve_nm",
            form: "torque_curve",
            label: "Engine torque curve",
            value: Value::Curve {
                get: |r| &r.torque_curve_nm,
                set: |r, v| r.torque_curve_nm = v,
            },
        },
        Field {
            column: "notes",
            form: "notes",
            label: "Notes",
            value: Value::Text {
                max_chars: 4000,
                required: false,
                get: |r| &r.notes,
                set: |r, v| r.notes = v,
            },
        },
        Field {
            column: "engine_inertia_kg_m2",
            form: "engine_inertia",
            label: "Engine inertia (crank, flywheel, pressure plate)",
            value: Value::Number {
                limit: limits::ENGINE_INERTIA,
                required: false,
                get: |r| r.engine_inertia_kg_m2,
                set: |r, v| r.engine_inertia_kg_m2 = v,
            },
        },
        Field {
            column: "input_inertia_kg_m2",
            form: "input_inertia",
            label: "Gearbox input inertia (disc, input shaft, gears)",
            value: Value::Number {
                limit: limits::SHAFT_INERTIA,
                required: false,
                get: |r| r.input_inertia_kg_m2,
                set: |r, v| r.input_inertia_kg_m2 = v,
            },
        },
        Field {
            column: "driveshaft_inertia_kg_m2",
            form: "driveshaft_inertia",
            label: "Driveshaft inertia",
            value: Value::Number {
                limit: limits::SHAFT_INERTIA,
                required: false,
                get: |r| r.driveshaft_inertia_kg_m2,
                set: |r, v| r.driveshaft_inertia_kg_m2 = v,
            },
        },
        Field {
            column: "rear_axle_inertia_kg_m2",
            form: "rear_axle_inertia",
            label: "Rear axle inertia (axles, wheels, tires)",
            value: Value::Number {
                limit: limits::AXLE_INERTIA,
                required: false,
                get: |r| r.rear_axle_inertia_kg_m2,
                set: |r, v| r.rear_axle_inertia_kg_m2 = v,
            },
        },
        Field {
            column: "front_axle_inertia_kg_m2",
            form: "front_axle_inertia",
            label: "Front wheels inertia",
            value: Value::Number {
                limit: limits::AXLE_INERTIA,
                required: false,
                get: |r| r.front_axle_inertia_kg_m2,
                set: |r, v| r.front_axle_inertia_kg_m2 = v,
            },
        },
        Field {
            column: "wheelbase_mm",
            form: "wheelbase",
            label: "Wheelbase",
            value: Value::Number {
                limit: limits::CAR_LENGTH,
                required: false,
                get: |r| r.wheelbase_mm.map(Length::mm),
                set: |r, v| r.wheelbase_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "cg_to_front_axle_mm",
            form: "cg_to_front_axle",
            label: "Center of gravity behind the front axle",
            value: Value::Number {
                limit: limits::CAR_LENGTH,
                required: false,
                get: |r| r.cg_to_front_axle_mm.map(Length::mm),
                set: |r, v| r.cg_to_front_axle_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "cg_height_mm",
            form: "cg_height",
            label: "Center of gravity height",
            value: Value::Number {
                limit: limits::CAR_LENGTH,
                required: false,
                get: |r| r.cg_height_mm.map(Length::mm),
                set: |r, v| r.cg_height_mm = v.map(Length::from_mm),
            },
        },
        Field {
            column: "drag_area_m2",
            form: "drag_area",
            label: "Drag area (Cd × frontal area)",
            value: Value::Number {
                limit: limits::DRAG_AREA,
                required: false,
                get: |r| r.drag_area_m2,
                set: |r, v| r.drag_area_m2 = v,
            },
        },
        Field {
            column: "tire_grip",
            form: "tire_grip",
            label: "Tire grip μ (hooked)",
            value: Value::Number {
                limit: limits::TIRE_GRIP,
                required: false,
                get: |r| r.tire_grip,
                set: |r, v| r.tire_grip = v,
            },
        },
        Field {
            column: "tire_grip_spinning",
            form: "tire_grip_spinning",
            label: "Tire grip μ (spinning)",
            value: Value::Number {
                limit: limits::TIRE_GRIP,
                required: false,
                get: |r| r.tire_grip_spinning,
                set: |r, v| r.tire_grip_spinning = v,
            },
        },
        Field {
            column: "flywheel_mass_kg",
            form: "flywheel_mass",
            label: "Flywheel mass",
            value: Value::Number {
                limit: limits::PLATE_MASS,
                required: false,
                get: |r| r.flywheel_mass_kg.map(Mass::kg),
                set: |r, v| r.flywheel_mass_kg = v.map(Mass::from_kg),
            },
        },
        Field {
            column: "pressure_plate_mass_kg",
            form: "pressure_plate_mass",
            label: "Pressure plate mass",
            value: Value::Number {
                limit: limits::PLATE_MASS,
                required: false,
                get: |r| r.pressure_plate_mass_kg.map(Mass::kg),
                set: |r, v| r.pressure_plate_mass_kg = v.map(Mass::from_kg),
            },
        },
    ];

    fn check_more(&mut self, _: &Ctx, errors: &mut FieldErrors) {
        // Rules between two fields only speak when both fields passed their own checks.
        let ok = |errors: &FieldErrors, columns: &[&str]| columns.iter().all(|c| !errors.has(c));
        if let (Some(wheelbase), Some(cg)) = (self.wheelbase_mm, self.cg_to_front_axle_mm)
            && ok(errors, &["wheelbase_mm", "cg_to_front_axle_mm"])
            && cg > wheelbase
        {
            Self::fault(
                errors,
                "cg_to_front_axle_mm",
                "must not be longer than the wheelbase (the centre of gravity would sit behind the rear axle)",
            );
        }
        if let (Some(hooked), Some(spinning)) = (self.tire_grip, self.tire_grip_spinning)
            && ok(errors, &["tire_grip", "tire_grip_spinning"])
            && spinning > hooked
        {
            Self::fault(
                errors,
                "tire_grip_spinning",
                "must not be above the hooked grip (a spinning tire grips less)",
            );
        }
    }
}
