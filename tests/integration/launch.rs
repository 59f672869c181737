//! The launch preview API through the real router: the contract's field names, the worked
//! launch, the same physics in both unit systems, and every bad input answered 422 with the
//! field named.

use axum::http::StatusCode;
use serde_json::{Value, json};

use crate::support::{TestApp, fresh_answer};

/// The reference launch (docs/engineering.md §18) in the API's form.
pub fn worked() -> Value {
    json!({"units": "metric",
      "disc": {"outer_diameter": 240, "inner_diameter": 160, "count": 2},
      "friction": {"mu": 0.30},
      "springs": {"count": 4, "rate": 1000, "base_compression": 1},
      "levers": {"count": 1, "counterweight_g": 50, "cg_radius": 100, "arm_ratio": 1},
      "launch_rpm": 6000,
      "engine": {"torque_curve": [[3000, 700], [5000, 700], [7000, 700]], "inertia": 0.20,
                 "friction_torque": 0},
      "driveline": {"first_gear_ratio": 2.6, "final_drive_ratio": 4.1, "efficiency": 0.95,
                    "input_inertia": 0.02, "driveshaft_inertia": 0.05,
                    "rear_axle_inertia": 3.0, "front_axle_inertia": 1.0},
      "vehicle": {"mass": 1500, "tire_diameter": 760, "wheelbase": 2700, "cg_to_front_axle": 1600,
                  "cg_height": 500, "drag_height": 500, "rolling_resistance": 0.015,
                  "drag_area": 0.6, "air_density": 1.2, "tire_grip": 2.0, "tire_grip_spinning": 1.6},
      "thermal": {"pressure_plate_mass": 8, "flywheel_mass": 12, "specific_heat": 460,
                  "start_temperature": 30, "plate_share": 0.45},
      "step_ms": 0.5, "duration_s": 3})
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap_or_else(|| panic!("not a number: {v}"))
}

// The reference figures (docs/engineering.md §18) were computed with g = 9.81; the API uses
// standard gravity 9.80665 m/s², which moves them in the fifth digit, so the checks allow that
// much: t_L 1.8131 s, 5782.7 rpm, 77.7 km/h, 389.42 kJ, 450.4 kW, 60 ft 1.749 s, plate rises
// 47.6 K and 31.7 K [derived there].
#[tokio::test]
async fn the_worked_launch_answers_with_the_contract_fields_and_figures() {
    let v = fresh_answer("/api/v1/calc/launch", worked()).await;
    let lock = &v["lockup"];
    assert!((num(&lock["time_s"]) - 1.8131).abs() < 0.0005, "{lock}");
    assert!((num(&lock["engine_rpm"]) - 5782.7).abs() < 0.5, "{lock}");
    assert!((num(&lock["speed"]) - 77.7).abs() < 0.15, "{lock}");
    assert!((num(&v["min_engine_rpm"]) - num(&lock["engine_rpm"])).abs() < 1e-9);
    assert!(
        (num(&v["slip_energy_kj"]) - 389.42).abs() < 0.2,
        "{}",
        v["slip_energy_kj"]
    );
    assert!((num(&v["peak_slip_power_kw"]) - 450.4).abs() < 0.05);
    assert!((num(&v["sixty_ft_s"]) - 1.749).abs() < 0.002);
    assert_eq!(v["tire_spin"], json!([]));
    assert!((num(&v["thermal"]["pressure_plate_rise"]) - 47.6).abs() < 0.05);
    assert!((num(&v["thermal"]["flywheel_rise"]) - 31.7).abs() < 0.1);
    let events = v["events"].as_array().unwrap();
    assert!(
        events.iter().any(|e| e["what"]
            .as_str()
            .unwrap()
            .starts_with("clutch locked at 5783 rpm")),
        "{events:?}"
    );
    let trace = v["trace"].as_array().unwrap();
    assert_eq!(
        trace[0],
        json!({"time_s": 0.0, "engine_rpm": 6000.0, "clutch_rpm": 0.0, "speed": 0.0,
               "slip_power_kw": 450.4})
    );
    assert_eq!(trace[1]["time_s"], 0.01);
    assert!(v["notes"].is_array());
}

// The slip power at the first instant is the capacity at the launch speed times the slip speed,
// so the launch must use exactly the capacity /calc/capacity reports: P = T_cap(6000 rpm) × ω.
#[tokio::test]
async fn the_launch_uses_the_capacity_calculations_capacity() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let mut cap = worked();
    for key in ["driveline", "vehicle", "thermal", "step_ms", "duration_s"] {
        cap.as_object_mut().unwrap().remove(key);
    }
    cap["engine"] = json!({"torque_curve": worked()["engine"]["torque_curve"]});
    let c = app.post_json("/api/v1/calc/capacity", &token, cap).await;
    assert_eq!(c.status, StatusCode::OK, "{}", c.body);
    let at_6000 = c.json()["curve"]
        .as_array()
        .unwrap()
        .iter()
        .find(|p| p["rpm"] == 6000.0)
        .map(|p| num(&p["capacity"]))
        .unwrap();
    let r = app.post_json("/api/v1/calc/launch", &token, worked()).await;
    let p0 = num(&r.json()["trace"][0]["slip_power_kw"]);
    let expected = at_6000 * 6000.0 * std::f64::consts::PI / 30.0 / 1000.0;
    assert!((p0 - expected).abs() <= 0.05, "{p0} vs {expected}");
}

// Same launch typed in imperial units (exact conversions, NIST SP 811 App. B.8): the same
// physical answer, in mph and °F.
#[tokio::test]
async fn imperial_and_metric_give_the_same_launch() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let mut v = worked();
    let inch = |mm: f64| mm / 25.4;
    let lb_ft2 = |kg_m2: f64| kg_m2 / (0.45359237 * 0.3048 * 0.3048);
    let lb = |kg: f64| kg / 0.45359237;
    v["units"] = json!("imperial");
    v["disc"]["outer_diameter"] = json!(inch(240.0));
    v["disc"]["inner_diameter"] = json!(inch(160.0));
    v["springs"]["rate"] = json!(1000.0 * 25.4 / 4.4482216152605);
    v["springs"]["base_compression"] = json!(inch(1.0));
    v["levers"]["cg_radius"] = json!(inch(100.0));
    v["engine"]["torque_curve"] = json!([
        [3000, 700.0 / 1.3558179483314004],
        [5000, 700.0 / 1.3558179483314004],
        [7000, 700.0 / 1.3558179483314004]
    ]);
    v["engine"]["inertia"] = json!(lb_ft2(0.20));
    for (key, kg_m2) in [
        ("input_inertia", 0.02),
        ("driveshaft_inertia", 0.05),
        ("rear_axle_inertia", 3.0),
        ("front_axle_inertia", 1.0),
    ] {
        v["driveline"][key] = json!(lb_ft2(kg_m2));
    }
    v["vehicle"]["mass"] = json!(lb(1500.0));
    for (key, mm) in [
        ("tire_diameter", 760.0),
        ("wheelbase", 2700.0),
        ("cg_to_front_axle", 1600.0),
        ("cg_height", 500.0),
        ("drag_height", 500.0),
    ] {
        v["vehicle"][key] = json!(inch(mm));
    }
    v["vehicle"]["drag_area"] = json!(0.6 / (0.3048 * 0.3048));
    v["vehicle"]["air_density"] = json!(1.2 / (0.45359237 / 0.3048f64.powi(3)));
    v["thermal"] = json!({"pressure_plate_mass": lb(8.0), "flywheel_mass": lb(12.0),
        "specific_heat": 460.0 / 4186.8, "start_temperature": 86.0, "plate_share": 0.45});
    let metric = app
        .post_json("/api/v1/calc/launch", &token, worked())
        .await
        .json();
    let imperial = app.post_json_ok("/api/v1/calc/launch", &token, v).await;
    assert_eq!(imperial["lockup"]["time_s"], metric["lockup"]["time_s"]);
    assert_eq!(imperial["slip_energy_kj"], metric["slip_energy_kj"]);
    // 1 mph = 1.609344 km/h; a rise of 1 K is 1.8 °F.
    let kmh = num(&metric["lockup"]["speed"]);
    assert!((num(&imperial["lockup"]["speed"]) * 1.609344 - kmh).abs() < 0.1);
    let k = num(&metric["thermal"]["pressure_plate_rise"]);
    assert!((num(&imperial["thermal"]["pressure_plate_rise"]) - 1.8 * k).abs() < 0.1);
}

// docs/engineering.md §18 [derived, g = 9.81]: with grips 1.0 / 0.8 the tires spin from the
// start and the clutch locks at 0.0862 s with 19.33 kJ, the tires still spinning.
#[tokio::test]
async fn low_grip_spins_the_tires_from_the_start() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let mut v = worked();
    v["vehicle"]["tire_grip"] = json!(1.0);
    v["vehicle"]["tire_grip_spinning"] = json!(0.8);
    let v = app.post_json_ok("/api/v1/calc/launch", &token, v).await;
    assert!(
        (num(&v["lockup"]["time_s"]) - 0.0862).abs() < 0.0002,
        "{}",
        v["lockup"]
    );
    assert!((num(&v["slip_energy_kj"]) - 19.33).abs() < 0.05);
    assert_eq!(v["tire_spin"], json!([{"start_s": 0.0, "end_s": null}]));
}

#[tokio::test]
async fn bad_launch_input_names_the_field() {
    let app = TestApp::new().await;
    let t = app.token("sam").await;
    let cases: Vec<(&str, &str, Value)> = vec![
        ("engine.inertia", "/engine/inertia", json!(0)),
        ("driveline.efficiency", "/driveline/efficiency", json!(0.4)),
        ("vehicle.tire_grip", "/vehicle/tire_grip", json!(5)),
        (
            "vehicle.cg_to_front_axle",
            "/vehicle/cg_to_front_axle",
            json!(3000),
        ),
        ("step_ms", "/step_ms", json!(10)),
        ("duration_s", "/duration_s", json!(0.05)),
        ("launch_rpm", "/launch_rpm", json!(7500)),
        ("thermal.plate_share", "/thermal/plate_share", json!(0.6)),
        ("springs.rate", "/springs/rate", json!(-1)),
        (
            "friction.static_ratio",
            "/friction/static_ratio",
            json!(0.9),
        ),
        ("vehicle.drag_area", "/vehicle/drag_area", json!("big")),
        (
            "friction.mu_vs_temperature[1]",
            "/friction/mu_vs_temperature",
            json!([[100, 0.3], [50, 0.28]]),
        ),
        (
            "friction.mu_vs_temperature[0]",
            "/friction/mu_vs_temperature",
            json!([[100, 0.9]]),
        ),
    ];
    // A μ(θ) table without the plates it is read at.
    let mut body = worked();
    body.as_object_mut().unwrap().remove("thermal");
    body["friction"]["mu_vs_temperature"] = json!([[20, 0.38], [300, 0.30]]);
    let r = app.post_json("/api/v1/calc/launch", &t, body).await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
    assert_eq!(r.json()["field"], "friction.mu_vs_temperature");
    for (field, pointer, value) in cases {
        let mut body = worked();
        let mut at = &mut body;
        for key in pointer.trim_start_matches('/').split('/') {
            at = &mut at[key];
        }
        *at = value;
        let r = app.post_json("/api/v1/calc/launch", &t, body).await;
        assert_eq!(
            r.status,
            StatusCode::UNPROCESSABLE_ENTITY,
            "{field}: {}",
            r.body
        );
        assert_eq!(r.json()["field"], field, "{}", r.body);
    }
}

// A μ(θ) table that holds μ at 0.30 everywhere is the constant μ: the same launch to the last
// digit; one that falls with heat (a made-up table for the check) slips longer.
#[tokio::test]
async fn a_mu_table_is_read_at_the_plate_temperature() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let plain = app
        .post_json("/api/v1/calc/launch", &token, worked())
        .await
        .json();
    let mut flat = worked();
    flat["friction"]["mu_vs_temperature"] = json!([[20, 0.30], [300, 0.30]]);
    let r = app.post_json("/api/v1/calc/launch", &token, flat).await;
    assert_eq!(r.status, StatusCode::OK, "{}", r.body);
    assert_eq!(r.json()["lockup"], plain["lockup"]);
    let mut fading = worked();
    fading["friction"]["mu_vs_temperature"] = json!([[30, 0.30], [80, 0.26]]);
    let faded = app
        .post_json("/api/v1/calc/launch", &token, fading)
        .await
        .json();
    assert!(num(&faded["slip_energy_kj"]) > num(&plain["slip_energy_kj"]));
}
