//! Recording a whole build, through the forms and through the API, and refusing bad input
//! without saving any of it.

use axum::http::StatusCode;
use serde_json::json;

use crate::support::TestApp;

#[tokio::test]
async fn a_tech_records_a_whole_build_through_the_forms() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;

    // Stored in storage units: 10.4 in = 264.16 mm; 380 lbf/in = 66.547... N/mm.
    let (od, rate): (f64, f64) =
        sqlx::query_as("SELECT facing_od_mm, spring_rate_n_per_mm FROM builds")
            .fetch_one(&app.pool)
            .await
            .unwrap();
    assert!((od - 264.16).abs() < 1e-9);
    assert!((rate - 380.0 * 4.4482216152605 / 25.4).abs() < 1e-9);

    client.record_setup(&build, "2026-11-02", "1.5", "24").await;
    let mut bench = vec![("tested_on", "2026-11-02"), ("test_height", "1.600")];
    let rows: Vec<(String, String)> = (1..=6)
        .flat_map(|i| {
            [
                (format!("free_length_{i}"), "2.100".to_string()),
                (format!("force_{i}"), "190".to_string()),
            ]
        })
        .collect();
    bench.extend(rows.iter().map(|(k, v)| (k.as_str(), v.as_str())));
    client
        .post_saved(&format!("{build}/bench-tests"), &bench)
        .await;
    client
        .post_saved(
            &format!("{build}/heights"),
            &[
                ("measured_on", "2026-11-02"),
                ("height", "1.905"),
                ("passes", "0"),
                ("shims_pulled", "0"),
            ],
        )
        .await;
    client
        .post_saved(
            &format!("{build}/passes"),
            &[
                ("run_on", "2026-11-08"),
                ("track", "Test strip"),
                ("launch_rpm", "4500"),
                ("sixty_ft", "1.41"),
                ("et", "10.9"),
            ],
        )
        .await;

    let page = client.get_ok(&build).await;
    page.assert_shows("Avery Lindqvist");
    // bench: 190 lbf at 0.500 in is 380.0 lbf/in
    assert!(page.body.contains("380.0"), "spring rate shown");
    assert!(
        page.body.contains("1.905"),
        "cover height shown to the thousandth"
    );
    assert!(page.body.contains("Test strip"));
    assert_eq!(app.count("bench_springs").await, 6);
}

#[tokio::test]
async fn a_bad_value_re_renders_the_form_with_the_message_and_saves_nothing() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    let car_id: i64 = sqlx::query_scalar("SELECT id FROM cars")
        .fetch_one(&app.pool)
        .await
        .unwrap();

    let bad = client
        .post(
            &format!("/cars/{car_id}/builds"),
            &[
                ("disc_count", "1"),
                ("facing_material", "organic"),
                ("facing_od", "6.0"),
                ("facing_id", "7.0"),
                ("spring_count", "40"),
            ],
        )
        .await;
    assert_eq!(bad.status, StatusCode::UNPROCESSABLE_ENTITY);
    bad.assert_shows("must be smaller than the outer diameter");
    bad.assert_shows("must be between 1 and 24");
    assert!(bad.body.contains("value=\"7.0\""), "typed values are kept");
    assert_eq!(app.count("builds").await, 1);

    let h = client
        .post(
            &format!("{build}/heights"),
            &[
                ("measured_on", "2026-02-30"),
                ("height", "-1"),
                ("passes", "x"),
                ("shims_pulled", "9"),
            ],
        )
        .await;
    assert_eq!(h.status, StatusCode::UNPROCESSABLE_ENTITY);
    assert!(h.body.contains("no such date"));
    h.assert_shows("enter a number");
    h.assert_shows("must be between 0 and 3");
    assert_eq!(app.count("cover_heights").await, 0);
    // Issue 26, item 6: the top of the page says the save failed and links to the form, and
    // each refused input asks for the cursor: the browser gives it to the first in the page
    // (HTML's autofocus), so the page opens at the form.
    h.assert_shows("<strong>Not saved.</strong> The cover height has 4 fields to fix: <a href=\"#height-form\">");
    assert_eq!(h.body.matches(" autofocus").count(), 4);
    let first = h.body.split(" autofocus").next().unwrap_or("");
    assert!(first[first.rfind("<input").unwrap_or(0)..].contains("name=\"measured_on\""));

    let script = client
        .post(
            "/customers",
            &[("name", "<script>alert(1)</script>"), ("email", "nope")],
        )
        .await;
    assert_eq!(script.status, StatusCode::UNPROCESSABLE_ENTITY);
    assert!(
        script.body.contains("&#60;script&#62;"),
        "markup is escaped"
    );
    assert!(!script.body.contains("<script>alert"));
    assert_eq!(app.count("customers").await, 1);
}

#[tokio::test]
async fn a_measurement_cannot_go_back_in_passes() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    client
        .post_saved(
            &format!("{build}/heights"),
            &[
                ("measured_on", "2026-11-02"),
                ("height", "1.905"),
                ("passes", "40"),
                ("shims_pulled", "0"),
            ],
        )
        .await;
    let back = client
        .post(
            &format!("{build}/heights"),
            &[
                ("measured_on", "2026-11-03"),
                ("height", "1.906"),
                ("passes", "20"),
                ("shims_pulled", "0"),
            ],
        )
        .await;
    assert_eq!(back.status, StatusCode::UNPROCESSABLE_ENTITY);
    back.assert_shows("passes cannot go backwards");
    assert_eq!(app.count("cover_heights").await, 1);
}

#[tokio::test]
async fn the_api_records_a_whole_build_and_names_bad_fields() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let t = Some(token.as_str());
    let c = app
        .api_answers(
            StatusCode::CREATED,
            "POST",
            "/api/v1/customers",
            t,
            Some(json!({"name": "Rosa Vantongeren", "phone": "555-0109"})),
        )
        .await;
    let cid = c.json()["id"].as_i64().unwrap();
    let car = app
        .api_answers(
            StatusCode::CREATED,
            "POST",
            &format!("/api/v1/customers/{cid}/cars"),
            t,
            Some(json!({"description": "two-door, 7.0 L V8, 4-speed",
                        "torque_curve_nm": [[3000, 550], [5000, 650], [4000, 600], [6000, 620]]})),
        )
        .await;
    assert_eq!(
        car.json()["torque_curve_nm"][1][0],
        4000.0,
        "curve is sorted"
    );
    let car_id = car.json()["id"].as_i64().unwrap();

    let build_body = json!({"disc_count": 2, "facing_material": "sintered_iron", "facing_od_mm": 184.0,
        "facing_id_mm": 120.0, "spring_count": 6, "spring_rate_n_per_mm": 55.0, "adjuster_pitch_mm": 1.5,
        "lever_count": 3, "lever_gain_n_per_g": 2.0, "shim_stack_mm": [0.25, 0.25]});
    let b = app
        .api_answers(
            StatusCode::CREATED,
            "POST",
            &format!("/api/v1/cars/{car_id}/builds"),
            t,
            Some(build_body.clone()),
        )
        .await;
    let bid = b.json()["id"].as_i64().unwrap();

    let bench = app.api_answers(StatusCode::CREATED, "POST", &format!("/api/v1/builds/{bid}/bench-tests"), t,
            Some(json!({"tested_on": "2026-11-01", "springs": [{"compression_mm": 12.0, "force_n": 660.0}]}))).await;
    let bench_id = bench.json()["id"].as_i64().unwrap();
    let fixed = app.api_answers(StatusCode::OK, "PUT", &format!("/api/v1/bench-tests/{bench_id}"), t,
            Some(json!({"tested_on": "2026-11-01", "note": "re-read", "springs": [{"compression_mm": 12.0, "force_n": 672.0}]}))).await;
    assert_eq!(fixed.json()["springs"][0]["force_n"], 672.0);
    let more = app.api_answers(StatusCode::UNPROCESSABLE_ENTITY, "PUT", &format!("/api/v1/bench-tests/{bench_id}"), t,
            Some(json!({"tested_on": "2026-11-01", "springs": [{"compression_mm": 12.0, "force_n": 1.0}, {"compression_mm": 12.0, "force_n": 1.0}]}))).await;
    assert_eq!(more.json()["field"], "springs");
    app.api_answers(
        StatusCode::CREATED,
        "POST",
        &format!("/api/v1/builds/{bid}/measurements"),
        t,
        Some(
            json!({"measured_on": "2026-11-01", "height_mm": 48.4, "passes": 0, "shims_pulled": 0}),
        ),
    )
    .await;
    app.api_answers(
        StatusCode::CREATED,
        "POST",
        &format!("/api/v1/builds/{bid}/setups"),
        t,
        Some(json!({"changed_on": "2026-11-01", "adjuster_turns": 2.0, "counterweight_g": 20.0})),
    )
    .await;
    app.api_answers(
        StatusCode::CREATED,
        "POST",
        &format!("/api/v1/builds/{bid}/passes"),
        t,
        Some(
            json!({"run_on": "2026-11-08", "track": "North strip", "et_s": 9.8, "sixty_ft_s": 1.3}),
        ),
    )
    .await;
    let list = app
        .api(
            "GET",
            &format!("/api/v1/builds/{bid}/measurements"),
            t,
            None,
        )
        .await;
    assert_eq!(list.json().as_array().unwrap().len(), 1);

    // Range, type and relation errors name the field; nothing is saved.
    let mut bad = build_body.clone();
    bad["facing_id_mm"] = json!(200.0);
    let r = app
        .api_answers(
            StatusCode::UNPROCESSABLE_ENTITY,
            "POST",
            &format!("/api/v1/cars/{car_id}/builds"),
            t,
            Some(bad),
        )
        .await;
    assert_eq!(r.json()["field"], "facing_id_mm");
    let mut wrong_type = build_body.clone();
    wrong_type["spring_count"] = json!("six");
    let r = app
        .api_answers(
            StatusCode::UNPROCESSABLE_ENTITY,
            "POST",
            &format!("/api/v1/cars/{car_id}/builds"),
            t,
            Some(wrong_type),
        )
        .await;
    assert_eq!(r.json()["field"], "spring_count");
    let r = app.api_answers(StatusCode::UNPROCESSABLE_ENTITY, "POST", &format!("/api/v1/builds/{bid}/measurements"), t,
            Some(json!({"measured_on": "2026-11-02", "height_mm": 48.5, "passes": 10, "shims_pulled": 3}))).await;
    assert_eq!(r.json()["field"], "shims_pulled");
    app.api_answers(
        StatusCode::NOT_FOUND,
        "POST",
        "/api/v1/customers/999/cars",
        t,
        Some(json!({"description": "x"})),
    )
    .await;
    assert_eq!(app.count("builds").await, 1);
    assert_eq!(app.count("cover_heights").await, 1);

    let upd = app
        .api_answers(
            StatusCode::OK,
            "PUT",
            &format!("/api/v1/customers/{cid}"),
            t,
            Some(json!({"name": "Rosa V."})),
        )
        .await;
    assert_eq!(upd.json()["name"], "Rosa V.");
}

#[tokio::test]
async fn customers_are_found_by_name_phone_or_car() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    client.record_build().await;
    for q in ["lindq", "0101", "7.2 l v8"] {
        let page = client.get(&format!("/?q={}", q.replace(' ', "+"))).await;
        assert!(page.body.contains("Avery Lindqvist"), "search {q:?}");
    }
    let none = client.get("/customers?q=zzz").await;
    assert!(none.body.contains("Nobody matches"));
}

#[tokio::test]
async fn the_demo_shop_loads_once_and_passes_its_own_checks() {
    let app = TestApp::new().await;
    // TestApp already has users: the demo must refuse a database that is not empty.
    assert!(!lockpoint::demo::seed_if_empty(&app.pool).await.unwrap());
    let fresh = crate::support::TempDb::new();
    let pool = lockpoint::db::open(&fresh.path).await.unwrap();
    assert!(lockpoint::demo::seed_if_empty(&pool).await.unwrap());
    assert!(!lockpoint::demo::seed_if_empty(&pool).await.unwrap());
    let customers: i64 = sqlx::query_scalar("SELECT COUNT(*) FROM customers")
        .fetch_one(&pool)
        .await
        .unwrap();
    let builds: i64 = sqlx::query_scalar("SELECT COUNT(*) FROM builds")
        .fetch_one(&pool)
        .await
        .unwrap();
    let twin: i64 = sqlx::query_scalar("SELECT COUNT(*) FROM builds WHERE disc_count = 2")
        .fetch_one(&pool)
        .await
        .unwrap();
    assert!(customers >= 4 && builds >= 6 && twin >= 1);
}

#[tokio::test]
async fn adjusters_at_different_settings_are_flagged() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    client
        .post_saved(
            &format!("{build}/setups"),
            &[
                ("changed_on", "2026-11-02"),
                ("adjuster_turns", "1.5"),
                ("adjuster_turns_each", "1.5, 1.5, 1.5"),
            ],
        )
        .await;
    assert!(
        !client
            .get(&build)
            .await
            .body
            .contains("adjusters not all at the same setting")
    );
    client
        .post_saved(
            &format!("{build}/setups"),
            &[
                ("changed_on", "2026-11-03"),
                ("adjuster_turns", "1.5"),
                ("adjuster_turns_each", "1.25, 1.75, 1.5"),
            ],
        )
        .await;
    assert!(
        client
            .get(&build)
            .await
            .body
            .contains("adjusters not all at the same setting")
    );
    let bad = client
        .post(
            &format!("{build}/setups"),
            &[
                ("changed_on", "2026-11-04"),
                ("adjuster_turns", "1.5"),
                ("adjuster_turns_each", "1.5, lots"),
            ],
        )
        .await;
    assert_eq!(bad.status, StatusCode::UNPROCESSABLE_ENTITY);
    let off = client
        .post(
            &format!("{build}/setups"),
            &[
                ("changed_on", "2026-11-04"),
                ("adjuster_turns", "1.5"),
                ("adjuster_turns_each", "1.75, 1.75, 1.75"),
            ],
        )
        .await;
    assert_eq!(off.status, StatusCode::UNPROCESSABLE_ENTITY);
    off.assert_shows("these average 1.750 turns");
    assert_eq!(app.count("setup_changes").await, 2);
}

#[tokio::test]
async fn a_bad_spring_reading_is_marked_beside_its_own_input() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    let mut pairs = vec![("tested_on", "2026-11-02"), ("test_compression", "0.500")];
    let forces = ["190", "190", "-5", "190", "190", "190"];
    let names: Vec<String> = (1..=6).map(|i| format!("force_{i}")).collect();
    pairs.extend(names.iter().map(String::as_str).zip(forces));
    let reply = client.post(&format!("{build}/bench-tests"), &pairs).await;
    assert_eq!(reply.status, StatusCode::UNPROCESSABLE_ENTITY);
    let cell = reply
        .body
        .find("name=\"force_3\" value=\"-5\"")
        .expect("typed value kept");
    let after = &reply.body[cell..cell + 400];
    assert!(
        after.contains("class=\"msg\" id=\"force_3-msg\">must be above 0"),
        "{after}"
    );
    assert_eq!(app.count("bench_tests").await, 0);
}

#[tokio::test]
async fn an_unknown_role_is_refused_not_stored_as_tech() {
    let app = TestApp::new().await;
    let admin = app.login("boss").await;
    let before = app.count("users").await;
    let reply = admin
        .post(
            "/users",
            &[
                ("username", "newhand"),
                ("password", "long-enough-pass"),
                ("role", "root"),
            ],
        )
        .await;
    assert_eq!(reply.status, StatusCode::UNPROCESSABLE_ENTITY);
    reply.assert_shows("choose admin or tech");
    assert_eq!(app.count("users").await, before);
}
