//! A customer's car: what the clutch calculations need to know about the drivetrain.

use super::measure::{EngineSpeed, Length, Mass, Torque};
use serde::{Deserialize, Serialize};

use super::FieldErrors;
use super::field::{Ctx, Field, Record, field};
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
        field!(text description, "description", "Description", 200, required)
            .hint("body, engine, gearbox"),
        field!(text engine, "engine", "Engine", 200),
        field!(number weight_kg, "weight", "Race weight", limits::VEHICLE_MASS),
        field!(text transmission, "transmission", "Transmission", 200),
        field!(
            number rated_input_torque_nm, "rated_input_torque", "Rated input torque",
            limits::RATED_TORQUE
        ),
        field!(number first_gear_ratio, "first_gear_ratio", "First gear ratio", limits::FIRST_GEAR)
            .unit(":1"),
        field!(
            number final_drive_ratio, "final_drive_ratio", "Final drive ratio", limits::FINAL_DRIVE
        )
        .unit(":1"),
        field!(number tire_diameter_mm, "tire_diameter", "Tire diameter", limits::TIRE_DIAMETER),
        field!(number launch_rpm, "launch_rpm", "Launch speed", limits::ENGINE_SPEED)
            .hint("typical"),
        field!(curve torque_curve_nm, "torque_curve", "Engine torque curve"),
        field!(text notes, "notes", "Notes", 4000),
        field!(
            number engine_inertia_kg_m2, "engine_inertia",
            "Engine inertia (crank, flywheel, pressure plate)", limits::ENGINE_INERTIA
        ),
        field!(
            number input_inertia_kg_m2, "input_inertia",
            "Gearbox input inertia (disc, input shaft, gears)", limits::SHAFT_INERTIA
        ),
        field!(
            number driveshaft_inertia_kg_m2, "driveshaft_inertia", "Driveshaft inertia",
            limits::SHAFT_INERTIA
        ),
        field!(
            number rear_axle_inertia_kg_m2, "rear_axle_inertia",
            "Rear axle inertia (axles, wheels, tires)", limits::AXLE_INERTIA
        ),
        field!(
            number front_axle_inertia_kg_m2, "front_axle_inertia", "Front wheels inertia",
            limits::AXLE_INERTIA
        ),
        field!(number wheelbase_mm, "wheelbase", "Wheelbase", limits::CAR_LENGTH),
        field!(
            number cg_to_front_axle_mm, "cg_to_front_axle",
            "Center of gravity behind the front axle", limits::CAR_LENGTH
        ),
        field!(number cg_height_mm, "cg_height", "Center of gravity height", limits::CAR_LENGTH),
        field!(
            number drag_area_m2, "drag_area", "Drag area (Cd × frontal area)", limits::DRAG_AREA
        ),
        field!(number tire_grip, "tire_grip", "Tire grip μ (hooked)", limits::TIRE_GRIP),
        field!(
            number tire_grip_spinning, "tire_grip_spinning", "Tire grip μ (spinning)",
            limits::TIRE_GRIP
        ),
        field!(number flywheel_mass_kg, "flywheel_mass", "Flywheel mass", limits::PLATE_MASS),
        field!(
            number pressure_plate_mass_kg, "pressure_plate_mass", "Pressure plate mass",
            limits::PLATE_MASS
        ),
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
