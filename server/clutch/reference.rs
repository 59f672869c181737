//! The reference cases of `docs/engineering.md` written once, for the engineering tests, the
//! calibration tests and the benchmarks: each takes a case and changes what it needs, so the
//! figures they check rest on one written-down car and one written-down data log.
//!
//! The reference launch (§18), in the API's metric form: a twin disc 240 × 160 mm at μ 0.30,
//! 4 springs × 1000 N/mm × 1 mm, one lever of 50 g at 100 mm, a flat 700 N·m engine launched at
//! 6000 rpm, a 1500 kg car.

use serde_json::{Value, json};

/// The reference launch request body (JSON, as `POST /api/v1/calc/launch` takes it).
pub fn launch() -> Value {
    json!({
        "units": "metric",
        "disc": { "outer_diameter": 240, "inner_diameter": 160, "count": 2 },
        "friction": { "mu": 0.30 },
        "springs": { "count": 4, "rate": 1000, "base_compression": 1 },
        "levers": { "count": 1, "counterweight_g": 50, "cg_radius": 100, "arm_ratio": 1 },
        "launch_rpm": 6000,
        "engine": { "torque_curve": [[3000, 700], [5000, 700], [7000, 700]],
                    "inertia": 0.20, "friction_torque": 0 },
        "driveline": { "first_gear_ratio": 2.6, "final_drive_ratio": 4.1, "efficiency": 0.95,
                       "input_inertia": 0.02, "driveshaft_inertia": 0.05,
                       "rear_axle_inertia": 3.0, "front_axle_inertia": 1.0 },
        "vehicle": { "mass": 1500, "tire_diameter": 760, "wheelbase": 2700,
                     "cg_to_front_axle": 1600, "cg_height": 500, "drag_height": 500,
                     "rolling_resistance": 0.015, "drag_area": 0.6, "air_density": 1.2,
                     "tire_grip": 2.0, "tire_grip_spinning": 1.6 },
        "thermal": { "pressure_plate_mass": 8, "flywheel_mass": 12, "specific_heat": 460,
                     "start_temperature": 30, "plate_share": 0.45 },
        "step_ms": 0.5, "duration_s": 3
    })
}

/// The reference launch as a whole-launch calibration body takes it: without μ (which it
/// finds), the engine's friction, the heat model and the step and duration (its own).
pub fn launch_calibration() -> Value {
    without(
        launch(),
        &[
            "friction",
            "engine.friction_torque",
            "thermal",
            "step_ms",
            "duration_s",
        ],
    )
}

/// The worked data log of §24 ([derived]): engine 6000 rpm, gearbox input 6000·t/0.8 up to
/// 0.8 s then 6000, 100 Hz from 0 to 1 s; columns `time`, `rpm`, `shaft`.
pub fn worked_log() -> String {
    let mut s = String::from("time,rpm,shaft\n");
    for k in 0..=100 {
        let t = k as f64 / 100.0;
        let n = if t <= 0.8 { 6000.0 * t / 0.8 } else { 6000.0 };
        s.push_str(&format!("{t:.2},6000,{n}\n"));
    }
    s
}

/// `body` with the entries named by `paths` taken out (`"thermal"`, `"engine.friction_torque"`):
/// a case that leaves a part of the reference to its default.
pub fn without(mut body: Value, paths: &[&str]) -> Value {
    for path in paths {
        let (parent, key) = match path.rsplit_once('.') {
            Some((parent, key)) => (
                body.pointer_mut(&format!("/{}", parent.replace('.', "/"))),
                key,
            ),
            None => (Some(&mut body), *path),
        };
        let removed = parent
            .and_then(Value::as_object_mut)
            .and_then(|o| o.remove(key));
        assert!(removed.is_some(), "the reference launch has no {path}");
    }
    body
}
