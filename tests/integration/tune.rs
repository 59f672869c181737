//! The tuning page: the current capacity, a trial setting that saves nothing, and the
//! recommendation, with bad input answered beside its field.

use axum::http::StatusCode;

use crate::support::{Client, Reply, TestApp};

/// Records the setup the checks below start from: 1.5 turns, 24 g, nominal μ.
async fn set_up(client: &Client<'_>, build: &str) {
    let r = client
        .post(
            &format!("{build}/setups"),
            &[
                ("changed_on", "2026-11-02"),
                ("adjuster_turns", "1.5"),
                ("counterweight_g", "24"),
            ],
        )
        .await;
    assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
}

/// Changes one field of a stored build through the record API (GET, change, PUT).
async fn edit_build(app: &TestApp, id: i64, field: &str, value: serde_json::Value) -> Reply {
    let token = app.token("sam").await;
    let t = Some(token.as_str());
    let mut body = app
        .api("GET", &format!("/api/v1/builds/{id}"), t, None)
        .await
        .json();
    body[field] = value;
    let put = app
        .api("PUT", &format!("/api/v1/builds/{id}"), t, Some(body))
        .await;
    assert_eq!(put.status, StatusCode::OK, "{}", put.body);
    put
}

#[tokio::test]
async fn trying_and_recommending_settings_saves_nothing_and_names_bad_fields() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    set_up(&client, &build).await;
    let audit_before = app.count("audit_log").await;

    let page = client.get(&format!("{build}/tune")).await;
    assert_eq!(page.status, StatusCode::OK);
    for text in [
        "Capacity and tuning",
        "Lockup speed",
        "Static clamp",
        "sanctioning body",
    ] {
        assert!(page.body.contains(text), "{text}");
    }
    // [D] static clamp 6 × 380 lbf/in × (0.220 + 1.5/16) in = 715 lbf
    assert!(page.body.contains("715 lbf"));

    let tried = client
        .get(&format!(
            "{build}/tune?try=1&adjuster_turns=2&counterweight_g=30&mu="
        ))
        .await;
    assert_eq!(tried.status, StatusCode::OK);
    assert!(tried.body.contains("Trying"));
    assert!(
        tried.body.contains(
            "Save 2 turns, 30.0 g per lever, the facing&#39;s nominal μ as the new setup"
        )
    );

    let bad = client
        .get(&format!(
            "{build}/tune?try=1&adjuster_turns=lots&counterweight_g=30"
        ))
        .await;
    assert!(bad.body.contains("enter a number"));
    let far = client
        .get(&format!("{build}/tune?recommend=1&target_lockup=20000"))
        .await;
    assert!(
        far.body.contains("class=\"msg\""),
        "out-of-range target is named"
    );

    let rec = client
        .get(&format!("{build}/tune?recommend=1&target_lockup=5600"))
        .await;
    assert!(rec.body.contains("Recommended:"));
    assert_eq!(
        app.count("setup_changes").await,
        1,
        "trying and recommending save nothing"
    );
    assert_eq!(app.count("audit_log").await, audit_before);
}

/// Wear since the last shim lowers the static clamp the stored build's figures use: the springs
/// extend by the cover-height growth. [D] 6 × 380 lbf/in × (0.220 + 1.5/16) in = 715.35 lbf
/// fresh; 0.003 in of growth takes 6 × 380 × 0.003 = 6.84 lbf off, leaving 708.51 lbf.
#[tokio::test]
async fn wear_since_the_last_shim_lowers_the_static_clamp_on_the_page() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    set_up(&client, &build).await;
    let fresh = client.get(&format!("{build}/tune")).await;
    assert!(fresh.body.contains("715 lbf"));
    assert!(!fresh.body.contains("Wear since last shim"));
    for (day, height, passes) in [("2026-11-03", "1.905", "0"), ("2026-11-20", "1.908", "40")] {
        let r = client
            .post(
                &format!("{build}/heights"),
                &[("measured_on", day), ("height", height), ("passes", passes)],
            )
            .await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
    }
    let worn = client.get(&format!("{build}/tune")).await;
    assert!(worn.body.contains("709 lbf"), "static clamp after wear");
    assert!(
        worn.body
            .contains("<td>Wear since last shim</td><td class=\"num\">−7 lbf</td>")
    );
    // A sheet printed now shows the same; sheets printed before keep their figures (see
    // sheets.rs, the reprint of an earlier sheet).
    let made = client.post(&format!("{build}/sheets"), &[]).await;
    assert_eq!(made.status, StatusCode::SEE_OTHER, "{}", made.body);
    let sheet = client.get(made.location()).await;
    assert!(sheet.body.contains("<dt>Static clamp</dt><dd>709 lbf</dd>"));
}

/// The lever body's own CG radius is stored with the build and refused beside a measured gain
/// (the gain already holds the whole lever); the arithmetic is checked in the clutch module.
#[tokio::test]
async fn the_lever_body_radius_is_stored_used_and_checked() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    let id: i64 = build.trim_start_matches("/builds/").parse().unwrap();
    let put = edit_build(
        &app,
        id,
        "lever_body_cg_radius_mm",
        serde_json::json!(2.05 * 25.4),
    )
    .await;
    let mut body = put.json();
    assert_eq!(body["lever_body_cg_radius_mm"], 2.05 * 25.4);

    let token = app.token("sam").await;
    let t = Some(token.as_str());
    body["lever_gain_n_per_g"] = serde_json::json!(2.0);
    let refused = app
        .api("PUT", &format!("/api/v1/builds/{id}"), t, Some(body))
        .await;
    assert_eq!(refused.status, StatusCode::UNPROCESSABLE_ENTITY);
    assert_eq!(refused.json()["field"], "lever_body_cg_radius_mm");
}

/// The shop's torque share for extra faces reaches a twin disc's figures: [D] with 0.9 the
/// 4 faces work like 2 + 2 × 0.9 = 3.8, so every capacity, and the margin at the top, is 0.95
/// of the full-share value. A single disc is unaffected (it has no extra faces).
#[tokio::test]
async fn the_shop_share_for_extra_faces_derates_a_twin_disc() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    let id: i64 = build.trim_start_matches("/builds/").parse().unwrap();
    edit_build(&app, id, "disc_count", serde_json::json!(2)).await;
    let margin = |page: &str| -> f64 {
        let at = page.find("Margin at the top").expect("figure shown");
        let cell = &page[at..];
        let start = cell.find("<td class=\"num\">").unwrap() + "<td class=\"num\">".len();
        cell[start..].split(' ').next().unwrap().parse().unwrap()
    };
    let full = margin(&client.get(&format!("{build}/tune")).await.body);
    let admin = app.login("boss").await;
    let saved = admin
        .post(
            "/settings",
            &[
                ("name", "Test shop"),
                ("units", "imperial"),
                ("shown_units", "imperial"),
                ("spring_spread_pct", "5"),
                ("spring_sag_pct", "3"),
                ("shimming_limit", "0.015"),
                ("overclamp_factor", "1.5"),
                ("due_within_passes", "10"),
                ("extra_face_efficiency", "0.9"),
            ],
        )
        .await;
    assert_eq!(saved.status, StatusCode::SEE_OTHER, "{}", saved.body);
    let derated = margin(&client.get(&format!("{build}/tune")).await.body);
    assert!(
        (derated - full * 0.95).abs() <= 0.006,
        "{derated} vs {full}"
    );
}

/// A spring that loses free length at an unchanged rate (the usual sag) is flagged on its load
/// at the installed length, and the figures use the loads. [D] 380 lbf/in springs, 2.100 in
/// free, base compression 0.220 in: installed at 1.880 in with 83.6 lbf each. Spring 1 later
/// measures 2.080 in free at the same rate: 380 × 0.200 = 76.0 lbf, 9.1 % lost. The mean load
/// (76.0 + 5 × 83.6)/6 = 82.33 lbf stands for 0.21667 in of compression, so at 1.5 turns of a
/// 16 TPI adjuster the static clamp is 6 × 380 × (0.21667 + 0.09375) = 707.75 lbf (715.35
/// before).
#[tokio::test]
async fn a_spring_that_lost_free_length_is_sagged_and_clamps_less() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    set_up(&client, &build).await;
    for (day, first_free, first_force) in [
        ("2026-11-03", "2.100", "190"),
        ("2026-11-25", "2.080", "182.4"),
    ] {
        let mut form = vec![("tested_on", day), ("test_height", "1.600")];
        let names: Vec<(String, String)> = (1..=6)
            .map(|i| (format!("free_length_{i}"), format!("force_{i}")))
            .collect();
        for (i, (free, force)) in names.iter().enumerate() {
            form.push((free, if i == 0 { first_free } else { "2.100" }));
            form.push((force, if i == 0 { first_force } else { "190" }));
        }
        let r = client.post(&format!("{build}/bench-tests"), &form).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
    }
    let page = client.get(&build).await;
    assert!(page.body.contains("▲ sagged 9.1 %"), "sag on load");
    let tune = client.get(&format!("{build}/tune")).await;
    assert!(
        tune.body.contains("708 lbf"),
        "static clamp from the tested loads"
    );
    assert!(!tune.body.contains("coil bind"));

    // With a solid height of 1.200 in the springs, installed at 1.880 in, bind after
    // (1.880 − 1.200) × 16 = 10.88 turns [D].
    let id: i64 = build.trim_start_matches("/builds/").parse().unwrap();
    edit_build(
        &app,
        id,
        "spring_solid_height_mm",
        serde_json::json!(1.2 * 25.4),
    )
    .await;
    let tune = client.get(&format!("{build}/tune")).await;
    assert!(tune.body.contains("10.88 turns"), "coil bind shown");
    let past = client
        .get(&format!(
            "{build}/tune?try=1&adjuster_turns=11&counterweight_g=24&mu="
        ))
        .await;
    assert!(past.body.contains("coil bind from 10.88 turns"));
}
