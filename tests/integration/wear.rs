//! Disc wear on a stored build: status through the forms and the API, the counter's due list,
//! and a disc replacement starting a new baseline.

use axum::http::StatusCode;
use serde_json::json;

use crate::support::TestApp;

/// The counter page's work-due section only (the recent-activity feed names customers too).
fn due_section(front: &str) -> &str {
    let start = front
        .find("id=\"due\"")
        .expect("front page has the due list");
    let end = front[start..].find("</section>").unwrap() + start;
    &front[start..end]
}

/// A build (imperial shop) with a 0.010/0.010/0.020 in stack and a 0.015 in shimming limit;
/// returns (build id, token).
async fn build_with_stack(app: &TestApp) -> (i64, String) {
    let token = app.token("sam").await;
    let t = Some(token.as_str());
    let c = app
        .api(
            "POST",
            "/api/v1/customers",
            t,
            Some(json!({"name": "Ines Halvorsen", "phone": "555-0177"})),
        )
        .await
        .json();
    let car = app
        .api(
            "POST",
            &format!("/api/v1/customers/{}/cars", c["id"]),
            t,
            Some(json!({"description": "two-door, 6.4 L V8, 4-speed"})),
        )
        .await
        .json();
    let inch = |v: f64| v * 25.4;
    let b = app
        .api("POST", &format!("/api/v1/cars/{}/builds", car["id"]), t,
            Some(json!({"disc_count": 1, "facing_material": "organic", "facing_od_mm": inch(10.4), "facing_id_mm": inch(6.6),
                        "disc_thickness_new_mm": inch(0.300), "disc_thickness_min_mm": inch(0.240),
                        "spring_count": 6, "spring_rate_n_per_mm": 68.3,
                        "shim_stack_mm": [inch(0.010), inch(0.010), inch(0.020)], "shimming_limit_mm": inch(0.015)})))
        .await;
    assert_eq!(b.status, StatusCode::CREATED, "{}", b.body);
    (b.json()["id"].as_i64().unwrap(), token)
}

#[tokio::test]
async fn a_cover_height_past_the_shimming_limit_flags_a_shim_pull_on_the_build_and_the_counter() {
    let app = TestApp::new().await;
    let (id, _) = build_with_stack(&app).await;
    let client = app.login("sam").await;
    let post = |h: &'static str, passes: &'static str, pulled: &'static str| {
        let client = &client;
        async move {
            client
                .post(
                    &format!("/builds/{id}/heights"),
                    &[
                        ("measured_on", "2026-11-10"),
                        ("height", h),
                        ("passes", passes),
                        ("shims_pulled", pulled),
                    ],
                )
                .await
        }
    };
    assert_eq!(post("1.905", "0", "0").await.status, StatusCode::SEE_OTHER);
    assert_eq!(post("1.913", "40", "0").await.status, StatusCode::SEE_OTHER);
    let page = client.get(&format!("/builds/{id}")).await.body;
    assert!(
        page.contains("Within limits."),
        "growth 0.008 in < 0.015 in"
    );
    assert!(
        page.contains("About 35 passes to the next shim"),
        "(0.015 − 0.008)/0.0002"
    );
    let front = client.get("/").await.body;
    assert!(
        !due_section(&front).contains("Ines Halvorsen"),
        "35 passes is outside the default 10-pass window"
    );

    // Exactly at the limit (1.920 − 1.905 = 0.015 in): a shim is due.
    assert_eq!(post("1.920", "75", "0").await.status, StatusCode::SEE_OTHER);
    let page = client.get(&format!("/builds/{id}")).await.body;
    assert!(page.contains("▲ shim due"));
    assert!(page.contains("Pull the 0.010 in shim now."));
    let front = client.get("/").await.body;
    let due = due_section(&front);
    assert!(due.contains("Ines Halvorsen") && due.contains("555-0177"));
    assert!(due.contains("Pull the 0.010 in shim."));

    // Pull it: height drops by the shim, status back to ok.
    assert_eq!(post("1.910", "75", "1").await.status, StatusCode::SEE_OTHER);
    let page = client.get(&format!("/builds/{id}")).await.body;
    assert!(page.contains("Within limits."));
    assert!(!due_section(&client.get("/").await.body).contains("Ines Halvorsen"));
}

#[tokio::test]
async fn running_out_of_shims_makes_the_disc_due_and_a_new_disc_starts_a_new_baseline() {
    let app = TestApp::new().await;
    let (id, token) = build_with_stack(&app).await;
    let t = Some(token.as_str());
    let inch = |v: f64| v * 25.4;
    for (passes, h, pulled) in [
        (0, 1.905, 0),
        (50, 1.920, 0),
        (50, 1.910, 1),
        (90, 1.925, 1),
        (90, 1.915, 2),
        (130, 1.935, 2),
        (130, 1.915, 3),
        (170, 1.931, 3),
    ] {
        let r = app
            .api("POST", &format!("/api/v1/builds/{id}/measurements"), t,
                Some(json!({"measured_on": "2026-11-10", "height_mm": inch(h), "passes": passes, "shims_pulled": pulled})))
            .await;
        assert_eq!(r.status, StatusCode::CREATED, "{}", r.body);
    }
    let w = app
        .api("GET", &format!("/api/v1/builds/{id}/wear"), t, None)
        .await
        .json();
    // growth 0.026 in past the limit with no shim left: disc due (rule: no shims remain).
    assert_eq!(w["status"], "disc_due");
    assert!(w["next_shim"].is_null());
    let client = app.login("sam").await;
    assert!(due_section(&client.get("/").await.body).contains("Disc at its wear limit"));

    // New disc, full stack: a new baseline; the old measurements stay on the page.
    let fresh = client
        .post(
            &format!("/builds/{id}/heights"),
            &[
                ("measured_on", "2026-11-20"),
                ("height", "1.904"),
                ("passes", "0"),
                ("shims_pulled", "0"),
                ("new_disc", "on"),
            ],
        )
        .await;
    assert_eq!(fresh.status, StatusCode::SEE_OTHER, "{}", fresh.body);
    let w = app
        .api("GET", &format!("/api/v1/builds/{id}/wear"), t, None)
        .await
        .json();
    assert_eq!(w["status"], "ok");
    assert_eq!(w["measurements"].as_array().unwrap().len(), 1);
    let page = client.get(&format!("/builds/{id}")).await.body;
    assert!(page.contains("New disc fitted: new baseline"));
    assert!(page.contains("1.931"), "old history kept");
    assert_eq!(app.count("cover_heights").await, 9);
}

#[tokio::test]
async fn an_older_measurement_can_be_corrected_between_its_neighbours() {
    let app = TestApp::new().await;
    let (id, token) = build_with_stack(&app).await;
    let t = Some(token.as_str());
    let mut ids = Vec::new();
    for (passes, h) in [(0, 48.387), (40, 48.590), (80, 48.800)] {
        let r = app
            .api("POST", &format!("/api/v1/builds/{id}/measurements"), t,
                Some(json!({"measured_on": "2026-11-10", "height_mm": h, "passes": passes, "shims_pulled": 0})))
            .await;
        ids.push(r.json()["id"].as_i64().unwrap());
    }
    let fix = |passes: i64| json!({"measured_on": "2026-11-10", "height_mm": 48.6, "passes": passes, "shims_pulled": 0});
    let ok = app
        .api(
            "PUT",
            &format!("/api/v1/measurements/{}", ids[1]),
            t,
            Some(fix(50)),
        )
        .await;
    assert_eq!(ok.status, StatusCode::OK, "{}", ok.body);
    let past_next = app
        .api(
            "PUT",
            &format!("/api/v1/measurements/{}", ids[1]),
            t,
            Some(fix(90)),
        )
        .await;
    assert_eq!(past_next.status, StatusCode::UNPROCESSABLE_ENTITY);
    assert_eq!(past_next.json()["field"], "passes");
    let before_prev = app
        .api(
            "PUT",
            &format!("/api/v1/measurements/{}", ids[2]),
            t,
            Some(fix(20)),
        )
        .await;
    assert_eq!(before_prev.status, StatusCode::UNPROCESSABLE_ENTITY);
}

#[tokio::test]
async fn a_twin_disc_pack_has_twice_the_single_disc_allowance() {
    // Common shop practice, no published source: cover height grows with the wear of the whole
    // pack, so the allowance is (new - minimum thickness) per disc times the number of discs.
    let app = TestApp::new().await;
    let (id, token) = build_with_stack(&app).await;
    let t = Some(token.as_str());
    let inch = |v: f64| v * 25.4;
    let mut build = app
        .api("GET", &format!("/api/v1/builds/{id}"), t, None)
        .await
        .json();
    build["disc_thickness_min_mm"] = json!(inch(0.280)); // 0.020 in per disc
    let put = app
        .api(
            "PUT",
            &format!("/api/v1/builds/{id}"),
            t,
            Some(build.clone()),
        )
        .await;
    assert_eq!(put.status, StatusCode::OK, "{}", put.body);
    // Total wear 0.009 in growth + 0.010 + 0.010 in of shims pulled = 0.029 in.
    for (passes, h, pulled) in [
        (0, 1.905, 0),
        (100, 1.915, 0),
        (100, 1.905, 1),
        (200, 1.915, 1),
        (200, 1.905, 2),
        (300, 1.914, 2),
    ] {
        app.api("POST", &format!("/api/v1/builds/{id}/measurements"), t,
            Some(json!({"measured_on": "2026-11-10", "height_mm": inch(h), "passes": passes, "shims_pulled": pulled})))
            .await;
    }
    let single = app
        .api("GET", &format!("/api/v1/builds/{id}/wear"), t, None)
        .await
        .json();
    assert_eq!(
        single["status"], "disc_due",
        "one disc: 0.029 in is past its 0.020 in"
    );
    build["disc_count"] = json!(2);
    app.api("PUT", &format!("/api/v1/builds/{id}"), t, Some(build))
        .await;
    let twin = app
        .api("GET", &format!("/api/v1/builds/{id}/wear"), t, None)
        .await
        .json();
    assert_eq!(
        twin["status"], "ok",
        "two discs: 0.029 in is inside 0.040 in"
    );
}
