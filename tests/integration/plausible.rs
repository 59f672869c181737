//! Entries that are possible but unlikely ask for a second look; entries that contradict the
//! build's other records are refused, by the forms as by the API.
//!
//! The 0.5 mm (0.020 in) allowance around the cover-height trend is common shop practice, no
//! published source: a depth gauge read through the checking hole repeats to about 0.05 mm, and
//! a disc wears hundredths of a millimetre per pass, so half a millimetre off the line of the
//! last readings is a misread, a wrong pass count or a shim pull not recorded.

use axum::http::StatusCode;
use serde_json::{Value, json};

use crate::support::TestApp;

/// A customer, car and build through the API; (token, car id, build id).
async fn shop(app: &TestApp) -> (String, i64, i64) {
    let token = app.token("sam").await;
    let c = app
        .post_json(
            "/api/v1/customers",
            &token,
            json!({"name": "Ida Brennholt", "phone": "555-0144"}),
        )
        .await;
    let cid = c.json()["id"].as_i64().unwrap();
    let car = app
        .post_json(
            &format!("/api/v1/customers/{cid}/cars"),
            &token,
            json!({"description": "coupe, 6.2 L V8, 4-speed", "wheelbase_mm": 2700.0,
                   "cg_to_front_axle_mm": 1500.0, "tire_grip": 1.2, "tire_grip_spinning": 0.8}),
        )
        .await;
    assert_eq!(car.status, StatusCode::CREATED, "{}", car.body);
    let car_id = car.json()["id"].as_i64().unwrap();
    let b = app
        .post_json(
            &format!("/api/v1/cars/{car_id}/builds"),
            &token,
            json!({"disc_count": 2, "facing_material": "sintered_iron", "facing_od_mm": 184.0,
                   "facing_id_mm": 120.0, "spring_count": 6, "spring_rate_n_per_mm": 55.0,
                   "spring_solid_height_mm": 30.0, "adjuster_pitch_mm": 1.5,
                   "lever_count": 3, "lever_gain_n_per_g": 2.0, "shim_stack_mm": [0.25, 0.25]}),
        )
        .await;
    assert_eq!(b.status, StatusCode::CREATED, "{}", b.body);
    (token, car_id, b.json()["id"].as_i64().unwrap())
}

async fn measure(app: &TestApp, token: &str, build: i64, body: Value) -> crate::support::Reply {
    app.post_json(&format!("/api/v1/builds/{build}/measurements"), token, body)
        .await
}

/// Three readings wearing 0.01 mm per pass from 48.00 mm: 0, 20 and 40 passes.
async fn three_readings(app: &TestApp, token: &str, build: i64) {
    for (day, passes, height) in [(1, 0, 48.00), (8, 20, 48.20), (15, 40, 48.40)] {
        let r = measure(
            app,
            token,
            build,
            json!({"measured_on": format!("2026-11-{day:02}"), "height_mm": height,
                   "passes": passes, "shims_pulled": 0, "new_disc": passes == 0}),
        )
        .await;
        assert_eq!(r.status, StatusCode::CREATED, "{}", r.body);
    }
}

#[tokio::test]
async fn a_cover_height_off_the_trend_asks_for_confirmation() {
    let app = TestApp::new().await;
    let (token, _, build) = shop(&app).await;
    three_readings(&app, &token, build).await;
    // The trend says 48.60 mm at 60 passes; 49.20 mm is 0.60 mm off it.
    let off = json!({"measured_on": "2026-11-22", "height_mm": 49.20, "passes": 60,
                     "shims_pulled": 0});
    let r = measure(&app, &token, build, off.clone()).await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
    assert_eq!(r.json()["field"], "height_mm");
    let msg = r.json()["error"].as_str().unwrap().to_string();
    assert!(msg.contains("48.60 mm"), "shows the expected value: {msg}");
    assert_eq!(app.count("cover_heights").await, 3, "nothing stored");

    // Within 0.5 mm of the trend it is stored without a question.
    let near = measure(
        &app,
        &token,
        build,
        json!({"measured_on": "2026-11-22", "height_mm": 49.05, "passes": 60, "shims_pulled": 0}),
    )
    .await;
    assert_eq!(near.status, StatusCode::CREATED, "{}", near.body);

    // A second look that stands by the reading stores it.
    let mut confirmed = off;
    confirmed["confirm"] = json!(true);
    confirmed["measured_on"] = json!("2026-11-29");
    confirmed["passes"] = json!(80);
    confirmed["height_mm"] = json!(50.20);
    let r = measure(&app, &token, build, confirmed).await;
    assert_eq!(r.status, StatusCode::CREATED, "{}", r.body);
    assert!(r.json().get("confirm").is_none(), "confirm is not stored");
}

#[tokio::test]
async fn a_pulled_shim_is_part_of_the_trend_not_a_jump() {
    let app = TestApp::new().await;
    let (token, _, build) = shop(&app).await;
    three_readings(&app, &token, build).await;
    // Pulling the first 0.25 mm shim at 60 passes: 48.60 − 0.25 = 48.35 mm is on the trend.
    let r = measure(
        &app,
        &token,
        build,
        json!({"measured_on": "2026-11-22", "height_mm": 48.35, "passes": 60, "shims_pulled": 1}),
    )
    .await;
    assert_eq!(r.status, StatusCode::CREATED, "{}", r.body);
    // At 80 passes with that shim out the trend says 48.80 − 0.25 = 48.55 mm; 49.40 mm is
    // 0.85 mm off it.
    let r = measure(
        &app,
        &token,
        build,
        json!({"measured_on": "2026-11-29", "height_mm": 49.40, "passes": 80, "shims_pulled": 1}),
    )
    .await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
    assert!(r.json()["error"].as_str().unwrap().contains("48.55 mm"));
}

#[tokio::test]
async fn a_reading_dated_before_the_last_with_more_passes_asks_for_confirmation() {
    let app = TestApp::new().await;
    let (token, _, build) = shop(&app).await;
    three_readings(&app, &token, build).await;
    let body = json!({"measured_on": "2026-11-10", "height_mm": 48.60, "passes": 60,
                      "shims_pulled": 0});
    let r = measure(&app, &token, build, body.clone()).await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
    assert_eq!(r.json()["field"], "measured_on");
    assert!(
        r.json()["error"].as_str().unwrap().contains("2026-11-15"),
        "names the last reading's date: {}",
        r.body
    );
    let mut confirmed = body;
    confirmed["confirm"] = json!(true);
    let r = measure(&app, &token, build, confirmed).await;
    assert_eq!(r.status, StatusCode::CREATED, "{}", r.body);
}

#[tokio::test]
async fn the_form_offers_the_second_look_and_keeps_what_was_typed() {
    let app = TestApp::new().await;
    let (token, _, build) = shop(&app).await;
    three_readings(&app, &token, build).await;
    let client = app.login("sam").await;
    // The test shop works in inches: 49.20 mm is 1.937 in, the trend's 48.60 mm is 1.913 in.
    let fields = [
        ("measured_on", "2026-11-22"),
        ("height", "1.937"),
        ("passes", "60"),
        ("shims_pulled", "0"),
    ];
    let r = client
        .post(&format!("/builds/{build}/heights"), &fields)
        .await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
    assert!(
        r.body.contains("name=\"confirm\""),
        "a confirm box is offered"
    );
    assert!(
        r.body.contains("value=\"1.937\""),
        "the typed height is kept"
    );
    assert!(r.body.contains("about 1.913 in"), "in the shop's units");
    assert!(r.body.contains("Not saved yet"));
    assert_eq!(app.count("cover_heights").await, 3);
    let mut confirmed = fields.to_vec();
    confirmed.push(("confirm", "on"));
    client
        .post_saved(&format!("/builds/{build}/heights"), &confirmed)
        .await;
    assert_eq!(app.count("cover_heights").await, 4);
}

/// The shop's car edited through the API with `more` fields: the refusal's field.
async fn car_refused_on(more: Value) -> String {
    let app = TestApp::new().await;
    let (token, car, _) = shop(&app).await;
    let mut body = json!({"description": "coupe, 6.2 L V8, 4-speed"});
    body.as_object_mut()
        .unwrap()
        .extend(more.as_object().unwrap().clone());
    let r = app
        .put_json(&format!("/api/v1/cars/{car}"), &token, body)
        .await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
    r.json()["field"].as_str().unwrap().to_string()
}

#[tokio::test]
async fn a_car_with_its_centre_of_gravity_behind_the_rear_axle_is_refused() {
    let field =
        car_refused_on(json!({"wheelbase_mm": 2700.0, "cg_to_front_axle_mm": 2800.0})).await;
    assert_eq!(field, "cg_to_front_axle_mm");
}

#[tokio::test]
async fn spinning_grip_above_hooked_grip_is_refused() {
    let field = car_refused_on(json!({"tire_grip": 0.9, "tire_grip_spinning": 1.1})).await;
    assert_eq!(field, "tire_grip_spinning");
}

#[tokio::test]
async fn a_spring_free_length_below_the_solid_height_is_refused() {
    let app = TestApp::new().await;
    let (token, _, build) = shop(&app).await;
    let r = app
        .post_json(
            &format!("/api/v1/builds/{build}/bench-tests"),
            &token,
            json!({"tested_on": "2026-11-01",
                   "springs": [{"free_length_mm": 28.0, "compression_mm": 2.0, "force_n": 110.0}]}),
        )
        .await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
    assert!(
        r.json()["field"].as_str().unwrap().starts_with("springs"),
        "{}",
        r.body
    );
}

#[tokio::test]
async fn blanking_the_adjuster_thread_of_a_build_with_setups_is_refused() {
    let app = TestApp::new().await;
    let (token, _, build) = shop(&app).await;
    let s = app
        .post_json(
            &format!("/api/v1/builds/{build}/setups"),
            &token,
            json!({"changed_on": "2026-11-01", "adjuster_turns": 2.0, "counterweight_g": 20.0}),
        )
        .await;
    assert_eq!(s.status, StatusCode::CREATED, "{}", s.body);
    let r = app
        .put_json(
            &format!("/api/v1/builds/{build}"),
            &token,
            json!({"disc_count": 2, "facing_material": "sintered_iron", "facing_od_mm": 184.0,
                   "facing_id_mm": 120.0, "spring_count": 6, "spring_rate_n_per_mm": 55.0,
                   "lever_count": 3, "lever_gain_n_per_g": 2.0, "shim_stack_mm": [0.25, 0.25]}),
        )
        .await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
    assert_eq!(r.json()["field"], "adjuster_pitch_mm");
}
