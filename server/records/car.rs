//! A customer's car: what the clutch calculations need to know about the drivetrain.

use serde::{Deserialize, Serialize};

use super::field::{Field, Record, Value};
use crate::clutch::quantity::limits;

#[derive(Debug, Clone, Default, PartialEq, Deserialize, Serialize, sqlx::FromRow)]
#[serde(default)]
pub struct CarInput {
    pub description: String,
    pub engine: String,
    pub weight_kg: Option<f64>,
    pub transmission: String,
    pub rated_input_torque_nm: Option<f64>,
    pub first_gear_ratio: Option<f64>,
    pub final_drive_ratio: Option<f64>,
    pub tire_diameter_mm: Option<f64>,
    pub launch_rpm: Option<f64>,
    /// Engine torque curve as `[rpm, N*m]` pairs (dyno points); may be empty.
    #[sqlx(json)]
    pub torque_curve_nm: Vec<[f64; 2]>,
    pub notes: String,
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
                get: |r| r.weight_kg,
                set: |r, v| r.weight_kg = v,
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
                get: |r| r.rated_input_torque_nm,
                set: |r, v| r.rated_input_torque_nm = v,
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
                get: |r| r.tire_diameter_mm,
                set: |r, v| r.tire_diameter_mm = v,
            },
        },
        Field {
            column: "launch_rpm",
            form: "launch_rpm",
            label: "Launch speed",
            value: Value::Number {
                limit: limits::ENGINE_SPEED,
                required: false,
                get: |r| r.launch_rpm,
                set: |r, v| r.launch_rpm = v,
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
    ];
}
