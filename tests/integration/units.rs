//! Every number reaches the technician in the shop's units and beside the input it is about:
//! range messages quote the limits converted and with their unit, list items are marked one by
//! one, the settings keep stored values when only the display units change, and the shop's
//! today comes from its own time zone. Conversion factors: 1 in = 25.4 mm, 1 lb = 0.45359237 kg,
//! 1 lbf = 4.4482216152605 N (exact, NIST SP 811 App. B.8); limits rounded inwards.

use axum::http::StatusCode;
use serde_json::json;

use crate::support::{TestApp, id_from, shop_settings as settings};

/// The number in "Please fix the N marked field(s)".
fn announced(body: &str) -> usize {
    let start = body.find("Please fix the ").expect("an alert") + "Please fix the ".len();
    body[start..].split(' ').next().unwrap().parse().unwrap()
}

/// Every announced field carries a visible message and is marked invalid for screen readers.
#[track_caller]
fn marks_match(body: &str) {
    let shown = body.matches("class=\"msg\"").count();
    assert_eq!(announced(body), shown, "announced vs shown messages");
    assert!(
        body.contains("aria-invalid=\"true\""),
        "the bad input is marked"
    );
}

#[tokio::test]
async fn range_messages_quote_the_limits_in_the_shop_units() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    let car = client.get(&build).await;
    let car_link = car
        .body
        .split("href=\"/cars/")
        .nth(1)
        .and_then(|s| s.split('"').next())
        .unwrap()
        .to_string();

    let weight = client
        .post(
            &format!("/cars/{car_link}"),
            &[("description", "two-door, 7.2 L V8"), ("weight", "300")],
        )
        .await;
    assert_eq!(weight.status, StatusCode::UNPROCESSABLE_ENTITY);
    // 200 kg = 440.92 lb, 5000 kg = 11 023.1 lb
    weight.assert_shows("must be between 441 and 11,023 lb");
    marks_match(&weight.body);

    let tire = client
        .post(
            &format!("/cars/{car_link}"),
            &[
                ("description", "two-door, 7.2 L V8"),
                ("tire_diameter", "5"),
            ],
        )
        .await;
    // 300 mm = 11.811 in (rounded up: 11.812), 1500 mm = 59.055 in
    tire.assert_shows("must be between 11.812 and 59.055 in");

    let id = id_from(&build);
    let od = client
        .post(
            &format!("/builds/{id}"),
            &[
                ("disc_count", "1"),
                ("facing_od", "-7.25"),
                ("facing_id", "6.6"),
                ("spring_count", "6"),
                ("spring_rate", "1e308"),
            ],
        )
        .await;
    // 400 mm = 15.748 in; 2000 N/mm = 11 420.2 lbf/in
    od.assert_shows("must be above 0 and at most 15.748 in");
    od.assert_shows("must be above 0 and at most 11,420.2 lbf/in");
    marks_match(&od.body);

    let height = client
        .post(
            &format!("/builds/{id}/heights"),
            &[
                ("measured_on", "2026-11-01"),
                ("height", "100"),
                ("passes", "1"),
            ],
        )
        .await;
    // 200 mm = 7.874 in
    height.assert_shows("must be above 0 and at most 7.874 in");

    let bench = client
        .post(
            &format!("/builds/{id}/bench-tests"),
            &[
                ("tested_on", "2026-11-01"),
                ("test_compression", "0.5"),
                ("force_1", "-125"),
            ],
        )
        .await;
    // 50 000 N = 11 240.4 lbf
    bench.assert_shows("must be above 0 and at most 11,240 lbf");

    let admin = app.login("boss").await;
    let settings = admin
        .post("/settings", &settings("imperial", "imperial", "0.5", ""))
        .await;
    assert_eq!(settings.status, StatusCode::UNPROCESSABLE_ENTITY);
    // 5 mm = 0.19685 in: rounded down so that the message offers nothing refused
    settings.assert_shows("must be above 0 and at most 0.196 in");
}

#[tokio::test]
async fn problems_with_list_items_are_shown_beside_their_input() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    let id = id_from(&build);
    let page = client.get(&build).await;
    let car = page
        .body
        .split("href=\"/cars/")
        .nth(1)
        .and_then(|s| s.split('"').next())
        .unwrap()
        .to_string();

    for (curve, expected) in [
        (
            "3000,410\n5000,-5\n6000,470",
            "point 2: torque must be above 0",
        ),
        (
            "3000,410\n3000,420\n6000,470",
            "point 2: a second, different torque at 3000 rpm",
        ),
        (
            "0,410\n5000,420\n6000,470",
            "point 1: engine speed must be between 500 and 15,000 rpm",
        ),
        (
            "3000,410\n5000,1e308\n6000,470",
            "point 2: torque must be above 0",
        ),
    ] {
        let r = client
            .post(
                &format!("/cars/{car}"),
                &[
                    ("description", "two-door, 7.2 L V8"),
                    ("torque_curve", curve),
                ],
            )
            .await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{curve}");
        assert!(r.body.contains(expected), "{curve}: {}", r.body);
        marks_match(&r.body);
    }

    let base = [
        ("disc_count", "1"),
        ("facing_od", "10.4"),
        ("facing_id", "6.6"),
        ("spring_count", "6"),
    ];
    for (stack, expected) in [
        (
            "0.010, 0.300",
            "shim 2: must be above 0 and at most 0.196 in",
        ),
        ("-0.010", "shim 1: must be above 0 and at most 0.196 in"),
        ("0.010, abc", "shim 2: “abc” is not a number"),
    ] {
        let mut pairs = base.to_vec();
        pairs.push(("shim_stack", stack));
        let r = client.post(&format!("/builds/{id}"), &pairs).await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{stack}");
        assert!(r.body.contains(expected), "{stack}");
        marks_match(&r.body);
    }

    let turns = client
        .post(
            &format!("/builds/{id}/setups"),
            &[
                ("changed_on", "2026-11-01"),
                ("adjuster_turns", "1.5"),
                ("adjuster_turns_each", "1.5, 25"),
            ],
        )
        .await;
    assert!(
        turns
            .body
            .contains("adjuster 2: must be between 0 and 20 turns")
    );
    marks_match(&turns.body);

    // Empty forms: every field counted is a field marked.
    let empty_build = client.post(&format!("/builds/{id}"), &[]).await;
    marks_match(&empty_build.body);
    let empty_height = client.post(&format!("/builds/{id}/heights"), &[]).await;
    marks_match(&empty_height.body);
    let nan_height = client
        .post(
            &format!("/builds/{id}/heights"),
            &[
                ("measured_on", "2026-11-01"),
                ("height", "NaN"),
                ("passes", "1"),
            ],
        )
        .await;
    assert_eq!(announced(&nan_height.body), 1);
    marks_match(&nan_height.body);
}

#[tokio::test]
async fn switching_the_display_units_keeps_the_stored_values() {
    let app = TestApp::new().await;
    let admin = app.login("boss").await;
    let save = |units: &'static str, shown: &'static str, limit: &'static str| {
        let admin = &admin;
        async move {
            admin
                .post("/settings", &settings(units, shown, limit, ""))
                .await
        }
    };
    let stored = || async {
        sqlx::query_scalar::<_, f64>("SELECT shimming_limit_mm FROM shop_settings")
            .fetch_one(&app.pool)
            .await
            .unwrap()
    };
    assert_eq!(
        save("imperial", "imperial", "0.015").await.status,
        StatusCode::SEE_OTHER
    );
    let before = stored().await;
    assert!((before - 0.381).abs() < 1e-12, "0.015 in = 0.381 mm");
    // The form still shows 0.015 (inches) when only the units select is switched.
    assert_eq!(
        save("metric", "imperial", "0.015").await.status,
        StatusCode::SEE_OTHER
    );
    assert!((stored().await - before).abs() < 1e-12);
    let metric = admin.get("/settings?saved=1").await;
    assert!(metric.body.contains("value=\"0.38\""), "shown in mm now");
    assert!(
        metric.body.contains("Settings saved."),
        "the save is confirmed"
    );
    // Saved again as shown (0.38 mm, untouched): the stored 0.381 mm stays (issue 21, item 6;
    // this used to store the rounded 0.38).
    assert_eq!(
        save("imperial", "metric", "0.38").await.status,
        StatusCode::SEE_OTHER
    );
    assert_eq!(stored().await, before);
}

#[tokio::test]
async fn a_bench_test_explains_heights_and_empty_rows() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let id = id_from(&client.record_build().await);
    let tall = client
        .post(
            &format!("/builds/{id}/bench-tests"),
            &[
                ("tested_on", "2026-11-01"),
                ("test_height", "2.5"),
                ("free_length_1", "2.1"),
                ("force_1", "190"),
            ],
        )
        .await;
    assert_eq!(tall.status, StatusCode::UNPROCESSABLE_ENTITY);
    assert!(
        tall.body
            .contains("must be below the free length of spring 1 (2.100 in)")
    );
    marks_match(&tall.body);

    let none = client
        .post(
            &format!("/builds/{id}/bench-tests"),
            &[("tested_on", "2026-11-01"), ("test_compression", "0.5")],
        )
        .await;
    none.assert_shows("enter at least one spring");
    assert_eq!(announced(&none.body), 1);
    marks_match(&none.body);

    // One spring tested is a bench test.
    client
        .post_saved(
            &format!("/builds/{id}/bench-tests"),
            &[
                ("tested_on", "2026-11-01"),
                ("test_compression", "0.5"),
                ("force_3", "190"),
            ],
        )
        .await;
    let position: i64 = sqlx::query_scalar("SELECT position FROM bench_springs")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    assert_eq!(position, 3, "the spring keeps its place in the set");
}

#[tokio::test]
async fn today_is_the_shops_own_date_and_later_dates_are_refused() {
    let app = TestApp::new().await;
    let admin = app.login("boss").await;
    // UTC+14 all year (IANA tz database): its date is ahead of UTC for most of the day.
    let zone = "Pacific/Kiritimati";
    admin
        .post_saved(
            "/settings",
            &settings("imperial", "imperial", "0.015", zone),
        )
        .await;
    let expected = jiff::Timestamp::now()
        .to_zoned(jiff::tz::TimeZone::get(zone).unwrap())
        .date()
        .to_string();
    let build = admin.record_build().await;
    let page = admin.get(&build).await;
    assert!(
        page.body
            .contains(&format!("name=\"measured_on\" value=\"{expected}\"")),
        "the height form is prefilled with the shop's today ({expected})"
    );

    let later = expected
        .parse::<jiff::civil::Date>()
        .unwrap()
        .checked_add(jiff::Span::new().days(2))
        .unwrap()
        .to_string();
    let id = id_from(&build);
    let future = admin
        .post(
            &format!("/builds/{id}/setups"),
            &[("changed_on", later.as_str()), ("adjuster_turns", "1")],
        )
        .await;
    assert_eq!(future.status, StatusCode::UNPROCESSABLE_ENTITY);
    assert!(future.body.contains("cannot be later than tomorrow"));

    let bad_zone = admin
        .post(
            "/settings",
            &settings("imperial", "imperial", "0.015", "Mars/Olympus"),
        )
        .await;
    assert_eq!(bad_zone.status, StatusCode::UNPROCESSABLE_ENTITY);
    bad_zone.assert_shows("is not a time zone name");
}

#[tokio::test]
async fn forms_the_record_api_and_the_calculation_api_share_one_limit() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let id = id_from(&client.record_build().await);
    let form = client
        .post(
            &format!("/builds/{id}/setups"),
            &[("changed_on", "2026-11-01"), ("adjuster_turns", "21")],
        )
        .await;
    form.assert_shows("must be between 0 and 20 turns");

    let token = app.token("sam").await;
    let api = app
        .post_json(
            &format!("/api/v1/builds/{id}/setups"),
            &token,
            json!({"changed_on": "2026-11-01", "adjuster_turns": 21.0}),
        )
        .await;
    assert_eq!(api.status, StatusCode::UNPROCESSABLE_ENTITY);
    assert_eq!(api.json()["field"], "adjuster_turns");
    assert_eq!(api.json()["error"], "must be between 0 and 20 turns");

    let calc = app
        .post_json(
            "/api/v1/calc/capacity",
            &token,
            json!({
                "units": "imperial",
                "disc": {"outer_diameter": 10.4, "inner_diameter": 6.6},
                "friction": {"mu": 0.3},
                "springs": {"count": 6, "rate": 380.0, "base_compression": 0.22,
                            "adjuster_pitch": 0.0625, "adjuster_turns": 21.0},
                "engine": {"torque_curve": [[3000, 410], [5000, 480], [7000, 430]]}
            }),
        )
        .await;
    assert_eq!(calc.status, StatusCode::UNPROCESSABLE_ENTITY);
    assert_eq!(calc.json()["field"], "springs.adjuster_turns");
    assert_eq!(calc.json()["error"], "must be between 0 and 20 turns");
}
