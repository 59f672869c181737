//! The calculation API through the real router: exact field names, and every bad input answered
//! 422 with the field named.

use axum::http::StatusCode;
use serde_json::{Value, json};

use crate::support::{TestApp, fresh_answer};

/// The capacity request of the worked example (the build of `support::Client::record_build`
/// at 1.5 turns and 24 g per lever).
pub fn example() -> Value {
    json!({"units": "imperial",
      "disc": {"outer_diameter": 10.4, "inner_diameter": 6.6, "count": 1, "theory": "uniform_wear"},
      "friction": {"mu": 0.32},
      "springs": {"count": 6, "rate": 380.0, "base_compression": 0.22, "adjuster_pitch": 0.0625, "adjuster_turns": 1.5},
      "levers": {"count": 3, "counterweight_g": 24.0, "lever_mass_g": 12.0, "cg_radius": 4.1, "arm_ratio": 2.6},
      "engine": {"torque_curve": [[3000, 410], [4000, 455], [5000, 480], [6000, 470], [7000, 430]]},
      "launch_rpm": 4500})
}

#[tokio::test]
async fn capacity_answers_with_the_contract_fields() {
    let v = fresh_answer("/api/v1/calc/capacity", example()).await;
    // [D] arithmetic of F = n·k·(x0 + turns·pitch) = 6 × 380 × (0.22 + 1.5 × 0.0625) = 715.35 lbf
    assert!((v["static_clamp"].as_f64().unwrap() - 715.35).abs() < 1e-9);
    // uniform wear r_eff = (ro + ri)/2 = (5.2 + 3.3)/2 = 4.25 in (Shigley ch. 16; Bhandari Ex. 11.1)
    assert!((v["effective_radius"].as_f64().unwrap() - 4.25).abs() < 1e-12);
    assert_eq!(v["friction_surfaces"], 2);
    let curve = v["curve"].as_array().unwrap();
    assert_eq!(curve.len(), 41, "every 100 rpm from 3000 to 7000 inclusive");
    assert_eq!(curve[0]["rpm"], 3000.0);
    assert_eq!(curve[40]["rpm"], 7000.0);
    for key in [
        "centrifugal_clamp",
        "total_clamp",
        "capacity",
        "engine_torque",
    ] {
        assert!(curve[10][key].is_number(), "{key}");
    }
    assert!(v["lockup_rpm"].is_number());
    assert_eq!(v["launch"]["rpm"], 4500.0);
    for key in ["capacity", "engine_torque", "ratio"] {
        assert!(v["launch"][key].is_number(), "{key}");
    }
    assert!(v["warnings"].is_array());
}

async fn field_of(app: &TestApp, token: &str, path: &str, body: Value) -> String {
    let r = app.post_json(path, token, body).await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
    let v = r.json();
    assert!(!v["error"].as_str().unwrap().is_empty());
    v["field"].as_str().unwrap().to_string()
}

#[tokio::test]
async fn bad_capacity_input_names_the_field() {
    let app = TestApp::new().await;
    let t = app.token("sam").await;
    type Change = Box<dyn Fn(&mut Value)>;
    let cases: Vec<(&str, Change)> = vec![
        (
            "springs",
            Box::new(|v| {
                v.as_object_mut().unwrap().remove("springs");
            }),
        ),
        (
            "springs.rate",
            Box::new(|v| v["springs"]["rate"] = json!("stiff")),
        ),
        (
            "springs.rate",
            Box::new(|v| v["springs"]["rate"] = json!(-380.0)),
        ),
        (
            "disc.inner_diameter",
            Box::new(|v| v["disc"]["inner_diameter"] = json!(11.0)),
        ),
        (
            "friction.mu",
            Box::new(|v| v["friction"]["mu"] = json!(0.9)),
        ),
        (
            "engine.torque_curve",
            Box::new(|v| v["engine"]["torque_curve"] = json!([[3000, 400], [4000, 420]])),
        ),
        ("launch_rpm", Box::new(|v| v["launch_rpm"] = json!(9000))),
        ("disc.count", Box::new(|v| v["disc"]["count"] = json!(4))),
        ("units", Box::new(|v| v["units"] = json!("cubits"))),
    ];
    for (want, change) in cases {
        let mut body = example();
        change(&mut body);
        let field = field_of(&app, &t, "/api/v1/calc/capacity", body).await;
        assert!(field.starts_with(want), "expected {want}, got {field}");
    }
    app.api_answers(
        StatusCode::UNAUTHORIZED,
        "POST",
        "/api/v1/calc/capacity",
        None,
        Some(example()),
    )
    .await;
}

#[tokio::test]
async fn a_recommendation_comes_back_on_the_grid_and_reproduces_its_result() {
    let app = TestApp::new().await;
    let t = app.token("sam").await;
    let mut body = example();
    body["targets"] = json!({"lockup_rpm": 5600});
    let v = app
        .post_json_ok("/api/v1/calc/recommend", &t, body.clone())
        .await;
    let cw = v["recommended"]["counterweight_g"].as_f64().unwrap();
    assert_eq!(
        v["recommended"]["adjuster_turns"], 1.5,
        "lockup-only keeps the turns"
    );
    assert_eq!(cw.fract(), 0.0, "1 g grid");
    assert!(v["alternatives"].is_array() && v["notes"].is_array());
    // The reported lockup is what the capacity endpoint gives at that setting.
    let mut check = example();
    check["levers"]["counterweight_g"] = json!(cw);
    let c = app
        .post_json("/api/v1/calc/capacity", &t, check)
        .await
        .json();
    assert!(
        (c["lockup_rpm"].as_f64().unwrap() - v["result"]["lockup_rpm"].as_f64().unwrap()).abs()
            < 1e-6
    );

    let mut bad = body.clone();
    bad["targets"]["lockup_rpm"] = json!("soon");
    assert_eq!(
        field_of(&app, &t, "/api/v1/calc/recommend", bad).await,
        "targets.lockup_rpm"
    );
    let mut no_levers = body;
    no_levers.as_object_mut().unwrap().remove("levers");
    assert!(
        field_of(&app, &t, "/api/v1/calc/recommend", no_levers)
            .await
            .starts_with("levers")
    );
}

fn wear_example() -> Value {
    json!({"units": "imperial", "baseline_cover_height": 1.905, "shimming_limit": 0.015,
     "shims": [0.010, 0.010, 0.020], "spring_count": 6, "spring_rate": 390.0,
     "disc_wear_allowance": 0.060,
     "measurements": [{"passes": 0, "cover_height": 1.905, "shims_pulled": 0},
                      {"passes": 40, "cover_height": 1.913, "shims_pulled": 0}]})
}

#[tokio::test]
async fn wear_follows_the_shim_rules_and_names_bad_fields() {
    let app = TestApp::new().await;
    let t = app.token("sam").await;
    let v = app
        .post_json_ok("/api/v1/calc/wear", &t, wear_example())
        .await;
    assert_eq!(v["status"], "ok");
    assert_eq!(v["next_shim"], 0.010);
    // [D] slope of (0, 0), (40, 0.008) = 0.0002 in/pass; (0.015 − 0.008)/0.0002 = 35 passes;
    // disc: min(0.060 − 0.008, 0.007 + 0.040)/0.0002 = 235 passes.
    assert!((v["wear_per_pass"].as_f64().unwrap() - 0.0002).abs() < 1e-12);
    assert!((v["passes_to_shim_due"].as_f64().unwrap() - 35.0).abs() < 1e-6);
    assert!((v["passes_to_disc_due"].as_f64().unwrap() - 235.0).abs() < 1e-6);
    let m1 = &v["measurements"][1];
    assert!((m1["growth"].as_f64().unwrap() - 0.008).abs() < 1e-12);
    // clamp lost = 6 × 390 × 0.008 = 18.72 lbf
    assert!((m1["clamp_loss"].as_f64().unwrap() - 18.72).abs() < 1e-9);

    let mut neg = wear_example();
    neg["measurements"][1]["cover_height"] = json!(-1.0);
    assert_eq!(
        field_of(&app, &t, "/api/v1/calc/wear", neg).await,
        "measurements[1].cover_height"
    );
    let mut beyond = wear_example();
    beyond["measurements"][1]["shims_pulled"] = json!(4);
    assert_eq!(
        field_of(&app, &t, "/api/v1/calc/wear", beyond).await,
        "measurements[1].shims_pulled"
    );
    let mut back = wear_example();
    back["measurements"][1]["passes"] = json!(0);
    back["measurements"][0]["passes"] = json!(10);
    assert_eq!(
        field_of(&app, &t, "/api/v1/calc/wear", back).await,
        "measurements[1].passes"
    );
    let mut empty = wear_example();
    empty["measurements"] = json!([]);
    assert_eq!(
        field_of(&app, &t, "/api/v1/calc/wear", empty).await,
        "measurements"
    );
}

#[tokio::test]
async fn a_stored_build_answers_its_wear() {
    let app = TestApp::new().await;
    let t = app.token("sam").await;
    let ts = Some(t.as_str());
    let car = app
        .api_car(
            ts,
            json!({"name": "Noor Abernethy"}),
            json!({"description": "two-door, 5.7 L V8, 4-speed"}),
        )
        .await;
    let b = app
        .api("POST", &format!("/api/v1/cars/{}/builds", car["id"]), ts,
            Some(json!({"disc_count": 1, "facing_material": "organic", "facing_od_mm": 264.16, "facing_id_mm": 167.64,
                        "spring_count": 6, "spring_rate_n_per_mm": 68.3, "shim_stack_mm": [0.254, 0.254],
                        "shimming_limit_mm": 0.381})))
        .await
        .json();
    let id = b["id"].as_i64().unwrap();
    let none = app
        .api_answers(
            StatusCode::UNPROCESSABLE_ENTITY,
            "GET",
            &format!("/api/v1/builds/{id}/wear"),
            ts,
            None,
        )
        .await;
    assert_eq!(none.json()["field"], "measurements");
    for (passes, h) in [(0, 48.387), (30, 48.590)] {
        app.api_answers(StatusCode::CREATED, "POST", &format!("/api/v1/builds/{id}/measurements"), ts,
                Some(json!({"measured_on": "2026-11-01", "height_mm": h, "passes": passes, "shims_pulled": 0}))).await;
    }
    let w = app
        .api_answers(
            StatusCode::OK,
            "GET",
            &format!("/api/v1/builds/{id}/wear"),
            ts,
            None,
        )
        .await;
    // growth 0.203 mm < 0.381 mm limit: ok, next shim 0.254 mm
    assert_eq!(w.json()["status"], "ok");
    assert_eq!(w.json()["next_shim"], 0.254);
}
