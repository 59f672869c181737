//! The tuning page: the current capacity, a trial setting that saves nothing, and the
//! recommendation, with bad input answered beside its field.

use axum::http::StatusCode;

use crate::support::TestApp;

#[tokio::test]
async fn trying_and_recommending_settings_saves_nothing_and_names_bad_fields() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    client
        .post(
            &format!("{build}/setups"),
            &[
                ("changed_on", "2026-11-02"),
                ("adjuster_turns", "1.5"),
                ("counterweight_g", "24"),
            ],
        )
        .await;
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
    assert!(tried.body.contains("Save 2 turns, 30.0 g as the new setup"));

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

/// Slip energies (kJ) of the launch preview columns, in page order.
fn slip_energies(html: &str) -> Vec<f64> {
    html.split("<td>Slip energy</td><td class=\"num\">")
        .skip(1)
        .filter_map(|rest| rest.split(' ').next()?.parse().ok())
        .collect()
}

/// Lockup times (s) of the launch preview columns, in page order.
fn lockup_times(html: &str) -> Vec<f64> {
    html.split("<td>Lockup</td><td class=\"num\">")
        .skip(1)
        .filter_map(|rest| rest.split(' ').next()?.parse().ok())
        .collect()
}

#[tokio::test]
async fn the_launch_preview_runs_from_the_car_record_with_estimates_and_what_ifs() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    client
        .post(
            &format!("{build}/setups"),
            &[
                ("changed_on", "2026-11-02"),
                ("adjuster_turns", "1.5"),
                ("counterweight_g", "24"),
            ],
        )
        .await;
    let page = client.get(&format!("{build}/tune")).await;
    assert!(page.body.contains("Launch preview"));
    assert!(
        page.body
            .contains("No launch preview yet. Enter the car&#39;s race weight."),
        "a car without its weight says what is missing"
    );
    let car = page
        .body
        .split("href=\"/cars/")
        .nth(1)
        .and_then(|s| s.split(['/', '"']).next())
        .expect("a link to the car")
        .to_string();
    let saved = client
        .post(
            &format!("/cars/{car}"),
            &[
                ("description", "two-door, 7.2 L V8, 4-speed"),
                ("weight", "3300"),
                ("first_gear_ratio", "2.43"),
                ("final_drive_ratio", "4.11"),
                ("tire_diameter", "28"),
                ("launch_rpm", "4500"),
                (
                    "torque_curve",
                    "3000 410\n4000 455\n5000 480\n6000 470\n7000 430",
                ),
                ("engine_inertia", "4.7"),
                ("tire_grip", "1.8"),
            ],
        )
        .await;
    assert_eq!(saved.status, StatusCode::SEE_OTHER, "{}", saved.body);
    let audit: String = sqlx::query_scalar(
        "SELECT after FROM audit_log WHERE table_name = 'cars' ORDER BY id DESC LIMIT 1",
    )
    .fetch_one(&app.pool)
    .await
    .unwrap();
    assert!(audit.contains("\"engine_inertia_kg_m2\""), "{audit}");

    let page = client.get(&format!("{build}/tune")).await;
    for text in [
        "Current setup",
        "clutch locked at",
        "Slip energy",
        "Pressure plate / flywheel rise",
        "Plate heat",
        "driveshaft inertia 1.19 lb·ft²",
    ] {
        assert!(page.body.contains(text), "{text}");
    }
    // The car's own figures replace their estimates.
    assert!(!page.body.contains("engine inertia "));
    assert!(!page.body.contains("tire grip (hooked)"));
    let now = lockup_times(&page.body);
    assert_eq!(now.len(), 1, "one column without a trial");

    // More counterweight: more centrifugal clamp at every speed, so the clutch reaches the
    // slipping engine's torque sooner and locks earlier [derived from T_cap = n·μ·r·(F_s + c·ω²)].
    let tried = client
        .get(&format!(
            "{build}/tune?try=1&adjuster_turns=1.5&counterweight_g=40&mu=&launch_rpm=4500"
        ))
        .await;
    let both = lockup_times(&tried.body);
    assert_eq!(both.len(), 2, "current and trial side by side");
    assert!(both[1] < both[0], "{both:?}");
    assert!(tried.body.contains("40.0 g per lever, launch 4500 rpm"));

    // A launch speed alone is a what-if too, and an impossible one is named beside its input.
    let rpm_only = client
        .get(&format!(
            "{build}/tune?try=1&adjuster_turns=1.5&counterweight_g=24&mu=&launch_rpm=5000"
        ))
        .await;
    assert!(rpm_only.body.contains("24.0 g per lever, launch 5000 rpm"));
    let bad = client
        .get(&format!(
            "{build}/tune?try=1&adjuster_turns=1.5&counterweight_g=24&mu=&launch_rpm=99999"
        ))
        .await;
    assert!(
        bad.body.contains("id=\"launch_rpm-msg\""),
        "the launch speed is named"
    );

    // The counterweight search: a lock 20 % sooner than now, found within a 1 g step's reach;
    // a slip-energy limit below today's, kept.
    let goal = (now[0] * 0.8 * 100.0).round() / 100.0;
    let found = client
        .get(&format!(
            "{build}/tune?launch_target=1&target_lock_time={goal}&max_slip_energy="
        ))
        .await;
    assert!(found.body.contains("For the launch target"));
    assert!(found.body.contains("launches simulated"));
    let t = lockup_times(&found.body);
    assert_eq!(t.len(), 2);
    if found.body.contains("one gram more spins the tires") {
        // Stopped short of the goal by wheelspin or a bog: earlier than now, later than the goal.
        assert!(t[1] < t[0] && t[1] > goal, "{t:?} for {goal}");
    } else {
        // Nearer the goal than today.
        assert!(
            (t[1] - goal).abs() < (t[0] - goal).abs(),
            "{t:?} for {goal}"
        );
    }
    let energy = slip_energies(&page.body)[0];
    let limit = (energy * 0.9).round();
    let kept = client
        .get(&format!(
            "{build}/tune?launch_target=1&target_lock_time=&max_slip_energy={limit}"
        ))
        .await;
    let e = slip_energies(&kept.body);
    assert!(e.len() == 2 && e[1] <= limit, "{e:?} within {limit}");
    let neither = client.get(&format!("{build}/tune?launch_target=1")).await;
    assert!(neither.body.contains("id=\"target_lock_time-msg\""));
}
