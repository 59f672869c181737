//! The calibration API through the real router: the contract, the worked
//! example, and every bad input answered 422 with its field path.

use axum::http::StatusCode;
use serde_json::{Value, json};

use crate::support::{TestApp, fresh_answer};

/// Clutch of the worked example (docs/engineering.md §15): 2 discs = 4 faces, r_eff =
/// (125 + 75)/2 = 100 mm, static clamp 4 × 100 N/mm × (8 + 2 × 1) mm = 4000 N, one lever with
/// 40 g and a gain giving K_c = 0.005 N/(rad/s)²: 0.005 × (1000·π/30)² / 40 g N/g.
fn example() -> Value {
    let gain = 0.005 * (1000.0 * std::f64::consts::PI / 30.0).powi(2) / 40.0;
    json!({"units": "metric",
      "disc": {"outer_diameter": 250.0, "inner_diameter": 150.0, "count": 2},
      "springs": {"count": 4, "rate": 100.0, "base_compression": 8.0, "adjuster_pitch": 1.0,
                  "adjuster_turns": 2.0},
      "levers": {"count": 1, "counterweight_g": 40.0, "gain": gain},
      "engine": {"torque_curve": [[3000, 700], [5000, 700], [7000, 700]]},
      "fit": "mu",
      "passes": [
        {"lockup_rpm": 5780, "clutch_torque": 702.0, "adjuster_turns": 2.0,
         "counterweight_g": 40.0, "clamp_loss": 0.0},
        {"lockup_rpm": 6100, "clutch_torque": 735.0},
        {"lockup_rpm": 5500, "clutch_torque": 668.0}]})
}

fn num(v: &Value) -> f64 {
    v.as_f64().unwrap_or(f64::NAN)
}

// [D] docs/engineering.md §15 (derived there): μ = 0.30028, 95 % interval 0.289–0.312,
// residuals +1.5, +9.5, −11.7 N·m; predicted lockup of the first pass on the flat 700 N·m
// curve 5773.65 rpm (the issue rounds it to "about 5773.7").
#[tokio::test]
async fn calibrate_answers_the_worked_example_with_the_contract_fields() {
    let v = fresh_answer("/api/v1/calc/calibrate", example()).await;
    assert_eq!(v["n"], 3);
    assert!((num(&v["mu"]) - 0.30028).abs() < 5e-6, "{v}");
    assert!((num(&v["ci95"][0]) - 0.2889).abs() < 1e-4, "{v}");
    assert!((num(&v["ci95"][1]) - 0.3117).abs() < 1e-4, "{v}");
    assert!(v["gain_scale"].is_null());
    assert_eq!(v["notes"], json!([]));
    let p = &v["passes"][0];
    assert_eq!(num(&p["lockup_rpm"]), 5780.0);
    assert_eq!(num(&p["clutch_torque"]), 702.0);
    assert!((num(&p["mu"]) - 0.3009).abs() < 5e-5, "{p}");
    assert!((num(&p["residual"]) - 1.5).abs() < 0.05, "{p}");
    assert!(
        (num(&p["predicted_lockup_rpm"]) - 5773.65).abs() < 0.01,
        "{p}"
    );
    assert!((num(&v["passes"][2]["residual"]) + 11.7).abs() < 0.05);
}

// The same clutch described in imperial units gives the same μ, and residuals in lbf·ft
// (1 lbf·ft = 1.3558179483314004 N·m, NIST SP 811 App. B.8, exact from the definitions).
#[tokio::test]
async fn imperial_and_metric_give_the_same_mu() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let mm = 1.0 / 25.4;
    let lbf = 1.0 / 4.4482216152605;
    let lbf_ft = 1.0 / 1.3558179483314004;
    let mut body = example();
    body["units"] = json!("imperial");
    body["disc"]["outer_diameter"] = json!(250.0 * mm);
    body["disc"]["inner_diameter"] = json!(150.0 * mm);
    body["springs"]["rate"] = json!(100.0 * lbf / mm);
    body["springs"]["base_compression"] = json!(8.0 * mm);
    body["springs"]["adjuster_pitch"] = json!(1.0 * mm);
    body["levers"]["gain"] = json!(num(&body["levers"]["gain"]) * lbf);
    body["engine"]["torque_curve"] = json!([
        [3000, 700.0 * lbf_ft],
        [5000, 700.0 * lbf_ft],
        [7000, 700.0 * lbf_ft]
    ]);
    for (i, t) in [702.0, 735.0, 668.0].iter().enumerate() {
        body["passes"][i]["clutch_torque"] = json!(t * lbf_ft);
    }
    let v = app
        .post_json_ok("/api/v1/calc/calibrate", &token, body)
        .await;
    assert!((num(&v["mu"]) - 0.30028).abs() < 5e-6, "{v}");
    assert!(
        (num(&v["passes"][0]["residual"]) - 1.5 * lbf_ft).abs() < 0.05,
        "{v}"
    );
}

#[tokio::test]
async fn defaults_fill_missing_torque_and_one_pass_has_no_interval() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let mut body = example();
    body["passes"] = json!([{"lockup_rpm": 5780}]);
    let v = app
        .post_json_ok("/api/v1/calc/calibrate", &token, body)
        .await;
    assert!(v["ci95"].is_null());
    assert_eq!(num(&v["passes"][0]["clutch_torque"]), 700.0);
    let notes = v["notes"].as_array().map_or(0, |n| n.len());
    assert_eq!(notes, 2, "{v}");
    // [D] 700 / C(5780 rpm) with C = 2332.73 N·m.
    assert!((num(&v["mu"]) - 700.0 / 2332.728).abs() < 1e-6, "{v}");
    // One pass fits exactly, so its own setting locks up where it was seen.
    assert!((num(&v["passes"][0]["predicted_lockup_rpm"]) - 5780.0).abs() < 1e-6);
}

async fn field_of(app: &TestApp, token: &str, body: Value) -> String {
    let r = app.post_json("/api/v1/calc/calibrate", token, body).await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
    let v = r.json();
    assert!(!v["error"].as_str().unwrap_or("").is_empty());
    v["field"].as_str().unwrap_or("").to_string()
}

#[tokio::test]
async fn bad_calibration_input_names_the_field_path() {
    let app = TestApp::new().await;
    let t = app.token("sam").await;
    type Change = Box<dyn Fn(&mut Value)>;
    let four = |v: &mut Value| {
        v["passes"] = json!([{"lockup_rpm": 5000}, {"lockup_rpm": 5500},
            {"lockup_rpm": 6000}, {"lockup_rpm": 7200}]);
    };
    let cases: Vec<(&str, Change)> = vec![
        ("passes[3].lockup_rpm", Box::new(four)),
        ("passes", Box::new(|v| v["passes"] = json!([]))),
        (
            "passes",
            Box::new(|v| v["passes"] = json!(vec![json!({"lockup_rpm": 5000}); 1001])),
        ),
        (
            "passes[1].lockup_rpm",
            Box::new(|v| v["passes"][1]["lockup_rpm"] = json!("fast")),
        ),
        (
            "passes[0].clutch_torque",
            Box::new(|v| v["passes"][0]["clutch_torque"] = json!(-5.0)),
        ),
        (
            "passes[2].counterweight_g",
            Box::new(|v| v["passes"][2]["counterweight_g"] = json!(5000.0)),
        ),
        (
            "passes[0].adjuster_turns",
            Box::new(|v| v["passes"][0]["adjuster_turns"] = json!(-1.0)),
        ),
        (
            "passes[1].clamp_loss",
            Box::new(|v| v["passes"][1]["clamp_loss"] = json!(-10.0)),
        ),
        (
            "springs.rate",
            Box::new(|v| v["springs"]["rate"] = json!(-1.0)),
        ),
        // Wear is per pass here; one figure for the clutch would go unused.
        (
            "springs.clamp_loss",
            Box::new(|v| v["springs"]["clamp_loss"] = json!(10.0)),
        ),
        ("disc.count", Box::new(|v| v["disc"]["count"] = json!(4))),
        ("fit", Box::new(|v| v["fit"] = json!("everything"))),
        // Three passes whose centrifugal/static ratio hardly varies: refused.
        ("fit", Box::new(|v| v["fit"] = json!("mu_and_gain"))),
        (
            "fit",
            Box::new(|v| {
                v["fit"] = json!("mu_and_gain");
                v.as_object_mut().map(|o| o.remove("levers"));
            }),
        ),
    ];
    for (want, change) in cases {
        let mut body = example();
        change(&mut body);
        let field = field_of(&app, &t, body).await;
        assert_eq!(field, want);
    }
    let refused = {
        let mut body = example();
        body["fit"] = json!("mu_and_gain");
        app.post_json("/api/v1/calc/calibrate", &t, body)
            .await
            .json()
    };
    let msg = refused["error"].as_str().unwrap_or("");
    assert!(msg.contains("counterweights or launch speeds"), "{msg}");
    app.api_answers(
        StatusCode::UNAUTHORIZED,
        "POST",
        "/api/v1/calc/calibrate",
        None,
        Some(example()),
    )
    .await;
}

// Passes at 20–80 g and different speeds, their torques made from μ = 0.34 and a lever gain
// 1.15 times the entered one, give both back (exact data: a check of the fit's algebra).
#[tokio::test]
async fn mu_and_gain_fits_when_the_passes_spread() {
    let app = TestApp::new().await;
    let t = app.token("sam").await;
    let k_per_g = 0.005 * (std::f64::consts::PI / 30.0).powi(2) / 40.0;
    let passes: Vec<Value> = [
        (20.0, 6500.0),
        (40.0, 5000.0),
        (60.0, 6000.0),
        (80.0, 5500.0),
    ]
    .iter()
    .map(|&(cw, rpm): &(f64, f64)| {
        let c = 0.4 * (4000.0 + 1.15 * k_per_g * cw * rpm * rpm);
        json!({"lockup_rpm": rpm, "counterweight_g": cw, "clutch_torque": 0.34 * c})
    })
    .collect();
    let mut body = example();
    body["fit"] = json!("mu_and_gain");
    body["passes"] = json!(passes);
    let v = app.post_json_ok("/api/v1/calc/calibrate", &t, body).await;
    assert!((num(&v["mu"]) - 0.34).abs() < 1e-9, "{v}");
    assert!((num(&v["gain_scale"]) - 1.15).abs() < 1e-9, "{v}");
    assert!(num(&v["passes"][1]["residual"]).abs() < 1e-6, "{v}");
}

/// A stored build equal to the worked example's clutch; returns (build id, token).
async fn stored_build(app: &TestApp) -> (i64, String) {
    let token = app.token("sam").await;
    let t = Some(token.as_str());
    let car = app
        .api_car(
            t,
            json!({"name": "Test Racer"}),
            json!({"description": "two-door, 7.2 L V8, 4-speed",
                        "torque_curve_nm": [[3000, 700], [5000, 700], [7000, 700]]}),
        )
        .await;
    let gain = 0.005 * (1000.0 * std::f64::consts::PI / 30.0).powi(2) / 40.0;
    let b = app
        .api_answers(
            StatusCode::CREATED,
            "POST",
            &format!("/api/v1/cars/{}/builds", car["id"]),
            t,
            Some(
                json!({"disc_count": 2, "facing_material": "organic", "facing_od_mm": 250.0,
                        "facing_id_mm": 150.0, "spring_count": 4, "spring_rate_n_per_mm": 100.0,
                        "base_compression_mm": 8.0, "adjuster_pitch_mm": 1.0, "lever_count": 1,
                        "lever_mass_g": 0.0, "lever_gain_n_per_g": gain}),
            ),
        )
        .await;
    (b.json()["id"].as_i64().unwrap_or(0), token)
}

// Each pass is read with the setting in force and the wear measured on or before its date.
// Lockups made from μ = 0.30 on the flat 700 N·m curve: with 40 g and no wear the crossover is
// 5782.4 rpm (docs/engineering.md §10 [D]); with 60 g (K_c = 0.0075) and 0.10 mm growth
// (4 × 100 N/mm × 0.10 mm = 40 N clamp loss) it is 4772.5 rpm [D]. Reading either pass with the
// other setting, or ignoring the wear, moves μ well away from 0.30.
#[tokio::test]
async fn a_stored_builds_calibration_uses_the_setting_and_wear_of_each_pass_date() {
    let app = TestApp::new().await;
    let (id, token) = stored_build(&app).await;
    let t = Some(token.as_str());
    let post = |path: String, body: Value| {
        let app = &app;
        async move {
            app.api_answers(StatusCode::CREATED, "POST", &path, t, Some(body))
                .await;
        }
    };
    let before = app
        .api_answers(
            StatusCode::UNPROCESSABLE_ENTITY,
            "GET",
            &format!("/api/v1/builds/{id}/calibration"),
            t,
            None,
        )
        .await;
    assert_eq!(before.json()["field"], "passes");
    for (day, cw) in [("2026-10-01", 40.0), ("2026-10-10", 60.0)] {
        post(
            format!("/api/v1/builds/{id}/setups"),
            json!({"changed_on": day, "adjuster_turns": 2.0, "counterweight_g": cw}),
        )
        .await;
    }
    for (day, h, passes) in [("2026-10-01", 40.0, 0), ("2026-10-11", 40.1, 10)] {
        post(
            format!("/api/v1/builds/{id}/measurements"),
            json!({"measured_on": day, "height_mm": h, "passes": passes, "shims_pulled": 0}),
        )
        .await;
    }
    for (day, lockup) in [
        ("2026-09-20", Some(5000.0)),
        ("2026-10-05", Some(5782.386)),
        ("2026-10-06", None),
        ("2026-10-12", Some(4772.526)),
    ] {
        post(
            format!("/api/v1/builds/{id}/passes"),
            json!({"run_on": day, "observed_lockup_rpm": lockup}),
        )
        .await;
    }
    let r = app
        .api_answers(
            StatusCode::OK,
            "GET",
            &format!("/api/v1/builds/{id}/calibration"),
            t,
            None,
        )
        .await;
    let v = r.json();
    assert_eq!(v["n"], 2, "{v}");
    assert!((num(&v["mu"]) - 0.30).abs() < 1e-6, "{v}");
    assert_eq!(num(&v["passes"][0]["lockup_rpm"]), 5782.386, "oldest first");
    for p in v["passes"].as_array().into_iter().flatten() {
        assert!(num(&p["residual"]).abs() < 1e-3, "{p}");
        assert!((num(&p["predicted_lockup_rpm"]) - num(&p["lockup_rpm"])).abs() < 0.01);
    }
    let notes = v["notes"].to_string();
    assert!(notes.contains("no setup was recorded"), "{notes}");
    app.api_answers(
        StatusCode::NOT_FOUND,
        "GET",
        "/api/v1/builds/999999/calibration",
        t,
        None,
    )
    .await;
}

/// The stored build with two setups, wear and passes from μ = 0.30 (see the API test above).
async fn calibrated_build(app: &TestApp) -> i64 {
    let (id, token) = stored_build(app).await;
    let t = Some(token.as_str());
    let mut posts = vec![(
        format!("/api/v1/builds/{id}/setups"),
        json!({"changed_on": "2026-10-01", "adjuster_turns": 2.0, "counterweight_g": 40.0}),
    )];
    for (day, lockup) in [("2026-10-05", 5782.386), ("2026-10-06", 5782.386)] {
        posts.push((
            format!("/api/v1/builds/{id}/passes"),
            json!({"run_on": day, "observed_lockup_rpm": lockup}),
        ));
    }
    for (path, body) in posts {
        app.api_answers(StatusCode::CREATED, "POST", &path, t, Some(body))
            .await;
    }
    id
}

// Each pass is scored with the springs of the bench test in force on its date. The build's
// first bench test (4 springs, 800 N at 8 mm: 100 N/mm, the nominal rate) stands before the
// passes made from μ = 0.30; a second one dated after every pass finds the springs at 80 N/mm.
// The passes still say μ = 0.30 (they ran on the first springs); scored with the later springs
// they would read 0.30 × 100/80 on the static part instead. Consistency check, derived.
#[tokio::test]
async fn a_bench_test_after_every_pass_does_not_move_the_calibration() {
    let app = TestApp::new().await;
    let id = calibrated_build(&app).await;
    let token = app.token("sam").await;
    let t = Some(token.as_str());
    let mu_now = || async {
        let r = app
            .api_answers(
                StatusCode::OK,
                "GET",
                &format!("/api/v1/builds/{id}/calibration"),
                t,
                None,
            )
            .await;
        num(&r.json()["mu"])
    };
    for (day, force) in [("2026-09-01", 800.0), ("2026-10-20", 640.0)] {
        let springs: Vec<Value> = (0..4)
            .map(|_| json!({"compression_mm": 8.0, "force_n": force}))
            .collect();
        app.api_answers(
            StatusCode::CREATED,
            "POST",
            &format!("/api/v1/builds/{id}/bench-tests"),
            t,
            Some(json!({"tested_on": day, "springs": springs})),
        )
        .await;
        let mu = mu_now().await;
        assert!((mu - 0.30).abs() < 1e-6, "after the test of {day}: μ {mu}");
    }
}

#[tokio::test]
async fn the_tuning_page_shows_the_calibration_and_uses_it_with_one_click() {
    let app = TestApp::new().await;
    let id = calibrated_build(&app).await;
    let client = app.login("sam").await;
    let page = client.get_ok(&format!("/builds/{id}/tune")).await;
    let body = page.body;
    for text in [
        "What the track says about friction",
        "μ 0.300",
        "from 2 passes with a lockup seen",
        "Not enough data yet: 2 passes",
        "2026-10-05",
        "Friction of each pass against its date",
        "Before you change a setting",
    ] {
        assert!(body.contains(text), "missing {text:?}");
    }
    let href = format!(
        "/builds/{id}/tune?try=1&#38;adjuster_turns=2&#38;counterweight_g=40&#38;mu=0.300#try"
    );
    assert!(body.contains(&href), "no use-calibration link");
    // One click: the current setting with the calibrated μ. [D] docs/engineering.md §10: μ 0.30
    // on this clutch and a flat 700 N·m curve locks up at 5782.4 rpm.
    let tried = client
        .get(&format!(
            "/builds/{id}/tune?try=1&adjuster_turns=2&counterweight_g=40&mu=0.300"
        ))
        .await
        .body;
    assert!(tried.contains("The figures above use this calibrated μ"));
    assert!(tried.contains("5782 rpm"), "trial lockup with μ 0.30");
    // The recommendation searches with it and the saved setup says where μ came from.
    let rec = client
        .get(&format!(
            "/builds/{id}/tune?recommend=1&mu=0.300&target_lockup=6000"
        ))
        .await
        .body;
    assert!(rec.contains("The figures and the recommendation above use this calibrated μ"));
    assert!(
        rec.contains("name=\"mu\" value=\"0.3\""),
        "save form carries μ 0.3"
    );
    assert!(rec.contains("μ 0.300 from 2 passes on the track from 2026-10-05 to 2026-10-06"));
}

async fn print_sheet(client: &crate::support::Client<'_>, id: i64) -> String {
    let made = client
        .post_saved(&format!("/builds/{id}/sheets"), &[])
        .await;
    client.get(made.location()).await.body
}

#[tokio::test]
async fn the_setup_sheet_says_where_its_mu_came_from() {
    let app = TestApp::new().await;
    let id = calibrated_build(&app).await;
    let client = app.login("sam").await;
    // Two passes: too few for the calibration (3 needed), so the nominal μ stays and says why.
    let nominal = print_sheet(&client, id).await;
    assert!(
        nominal.contains("nominal μ 0.350")
            && nominal.contains(
                "not the calibrated μ: the calibration has 2 passes with a lockup seen, 3 needed"
            ),
        "nominal sheet"
    );
    client
        .post_saved(
            &format!("/builds/{id}/setups"),
            &[
                ("changed_on", "2026-10-07"),
                ("adjuster_turns", "2"),
                ("counterweight_g", "40"),
                ("mu", "0.300"),
            ],
        )
        .await;
    let entered = print_sheet(&client, id).await;
    assert!(
        entered.contains("μ 0.300 entered 2026-10-07"),
        "entered sheet"
    );
}

/// The capacity API's answer for a stored build: (friction source, μ, lockup rpm, words).
async fn in_force(app: &TestApp, token: &str, id: i64) -> (String, f64, f64, String) {
    let r = app
        .get_json(&format!("/api/v1/builds/{id}/capacity"), token)
        .await;
    assert_eq!(r.status, StatusCode::OK, "{}", r.body);
    let v = r.json();
    let f = &v["friction"];
    (
        f["source"].as_str().unwrap_or_default().to_string(),
        num(&f["mu"]),
        num(&v["report"]["lockup_rpm"]),
        f["words"].as_str().unwrap_or_default().to_string(),
    )
}

// The friction in force follows one rule on every page, sheet and API answer: the calibrated μ
// once 3 passes agree and do not drift, the nominal μ before that (saying why), and the nominal
// μ again when the setup says a new disc went in. Lockups from μ = 0.30 on this clutch at 40 g
// and 2 turns: 5782.4 rpm (docs/engineering.md §10 [D]); the organic facing's nominal μ is 0.35
// (docs/engineering.md §11, the facing table).
#[tokio::test]
async fn the_figures_use_the_calibrated_mu_once_the_passes_agree() {
    let app = TestApp::new().await;
    let id = calibrated_build(&app).await;
    let token = app.token("sam").await;
    let t = Some(token.as_str());
    let (source, mu, nominal_lockup, words) = in_force(&app, &token, id).await;
    assert_eq!(source, "nominal", "{words}");
    assert!((mu - 0.35).abs() < 1e-9, "{mu}");
    assert!(
        words.contains("2 passes with a lockup seen, 3 needed"),
        "{words}"
    );
    app.api_answers(
        StatusCode::CREATED,
        "POST",
        &format!("/api/v1/builds/{id}/passes"),
        t,
        Some(json!({"run_on": "2026-10-07", "observed_lockup_rpm": 5782.386})),
    )
    .await;
    let (source, mu, lockup, words) = in_force(&app, &token, id).await;
    assert_eq!(source, "calibrated", "{words}");
    assert!((mu - 0.30).abs() < 1e-6, "{mu}");
    assert!((lockup - 5782.4).abs() < 0.5, "lockup {lockup}");
    assert!(
        nominal_lockup < lockup - 100.0,
        "{nominal_lockup} vs {lockup}"
    );
    assert!(
        words.starts_with("μ 0.300 from 3 passes (the facing's nominal μ 0.350)"),
        "{words}"
    );
    let client = app.login("sam").await;
    let build = client.get(&format!("/builds/{id}")).await.body;
    assert!(build.contains("μ 0.300 from 3 passes"), "build page");
    assert!(build.contains("5782 rpm"), "build page lockup");
    let tune = client.get(&format!("/builds/{id}/tune")).await.body;
    assert!(tune.contains("μ 0.300 from 3 passes"), "tune page");
    assert!(
        tune.contains("The figures above use this calibrated μ"),
        "tune page"
    );
    let sheet = print_sheet(&client, id).await;
    assert!(sheet.contains("μ 0.300 from 3 passes"), "sheet friction");
    assert!(sheet.contains("5782 rpm"), "sheet lockup");
    // A new disc: the setup keeps the nominal μ; the sheet printed before keeps its figures.
    client
        .post_saved(
            &format!("/builds/{id}/setups"),
            &[
                ("changed_on", "2026-10-08"),
                ("adjuster_turns", "2"),
                ("counterweight_g", "40"),
                ("nominal_mu", "on"),
            ],
        )
        .await;
    let (source, _, lockup, words) = in_force(&app, &token, id).await;
    assert_eq!(source, "nominal", "{words}");
    assert!((lockup - nominal_lockup).abs() < 1e-6, "{lockup}");
    assert!(
        words.contains("keeps the facing's nominal μ (a new disc)"),
        "{words}"
    );
    let sheets = client.get(&format!("/builds/{id}")).await.body;
    let first = sheets
        .split("/sheets/")
        .filter_map(|s| s.split('"').next())
        .filter_map(|s| s.parse::<i64>().ok())
        .min()
        .unwrap_or(0);
    let old = client.get(&format!("/sheets/{first}")).await.body;
    assert!(old.contains("5782 rpm"), "the old sheet keeps its figures");
}

// Passes whose μ climbs pass after pass (a facing still bedding in) do not set the figures:
// the nominal μ stays and the page says why. Lockups falling 5782 -> 4900 rpm at one setting
// mean μ rising from 0.30 (derived from the same law, docs/engineering.md §10).
#[tokio::test]
async fn a_drifting_calibration_leaves_the_nominal_mu_and_says_why() {
    let app = TestApp::new().await;
    let (id, token) = stored_build(&app).await;
    let t = Some(token.as_str());
    let mut posts = vec![(
        format!("/api/v1/builds/{id}/setups"),
        json!({"changed_on": "2026-10-01", "adjuster_turns": 2.0, "counterweight_g": 40.0}),
    )];
    for (day, lockup) in [
        ("2026-10-05", 5782.386),
        ("2026-10-06", 5500.0),
        ("2026-10-07", 5200.0),
        ("2026-10-08", 4900.0),
    ] {
        posts.push((
            format!("/api/v1/builds/{id}/passes"),
            json!({"run_on": day, "observed_lockup_rpm": lockup}),
        ));
    }
    for (path, body) in posts {
        app.api_answers(StatusCode::CREATED, "POST", &path, t, Some(body))
            .await;
    }
    let (source, mu, _, words) = in_force(&app, &token, id).await;
    assert_eq!(source, "nominal", "{words}");
    assert!((mu - 0.35).abs() < 1e-9, "{mu}");
    assert!(words.contains("drifts from pass to pass"), "{words}");
}

/// The reference launch (docs/engineering.md §18) as a launch-method calibration body, with
/// the spring rate given.
fn launch_body(rate: f64, passes: Value) -> Value {
    let mut body = clutch::reference::launch_calibration();
    body["method"] = json!("launch");
    body["springs"]["rate"] = json!(rate);
    body["passes"] = passes;
    body
}

// Check values [derived with the reference launch model, launch issue case C10]: a lock 1.70 s
// after the launch gives μ = 0.3107. With the spring rate × 1.35 (static clamp 5400 N) the
// clutch locks at 3233.3 rpm while the engine is still falling: the launch method gives back
// μ 0.3000 where the torque balance gives 0.2930 (700 N·m over 4 faces × 0.1 m × (5400 N +
// 0.005 N·s² × (3233.3·π/30)²) = 0.29297, derived).
#[tokio::test]
async fn the_launch_method_reads_friction_from_the_whole_launch() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let t = Some(token.as_str());
    let r = app
        .api_answers(
            StatusCode::OK,
            "POST",
            "/api/v1/calc/calibrate",
            t,
            Some(launch_body(1000.0, json!([{"lockup_time_s": 1.70}]))),
        )
        .await;
    let v = r.json();
    assert_eq!(v["method"], "launch");
    assert_eq!(v["n"], 1);
    assert!(v["ci95"].is_null(), "{v}");
    assert!((num(&v["mu"]) - 0.3107).abs() < 2e-4, "{v}");
    let p = &v["passes"][0];
    assert!(
        (num(&p["simulated_lockup_time_s"]) - 1.70).abs() < 0.017,
        "{p}"
    );
    assert!(num(&p["simulated_lockup_rpm"]) > 3000.0, "{p}");

    let stiff = app
        .api(
            "POST",
            "/api/v1/calc/calibrate",
            t,
            Some(launch_body(1350.0, json!([{"lockup_rpm": 3233.3}]))),
        )
        .await
        .json();
    assert!((num(&stiff["mu"]) - 0.3000).abs() < 5e-4, "{stiff}");
    let balance = app
        .api(
            "POST",
            "/api/v1/calc/calibrate",
            t,
            Some(json!({"units": "metric",
              "disc": {"outer_diameter": 240, "inner_diameter": 160, "count": 2},
              "springs": {"count": 4, "rate": 1350, "base_compression": 1},
              "levers": {"count": 1, "counterweight_g": 50, "cg_radius": 100, "arm_ratio": 1},
              "engine": {"torque_curve": [[3000, 700], [5000, 700], [7000, 700]]},
              "passes": [{"lockup_rpm": 3233.3}]})),
        )
        .await
        .json();
    assert!((num(&balance["mu"]) - 0.2930).abs() < 1e-4, "{balance}");
    assert!(
        balance.get("method").is_none(),
        "torque balance answers unchanged"
    );
}

#[tokio::test]
async fn a_bad_launch_calibration_names_its_field() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let t = Some(token.as_str());
    let mut with_mu = launch_body(1000.0, json!([{"lockup_time_s": 1.8}]));
    with_mu["friction"] = json!({"mu": 0.3});
    let mut unknown = launch_body(1000.0, json!([{"lockup_time_s": 1.8}]));
    unknown["method"] = json!("guess");
    for (body, field) in [
        (with_mu, "friction.mu"),
        (unknown, "method"),
        (
            launch_body(1000.0, json!([{"lockup_time_s": 0.5}])),
            "passes[0]",
        ),
        (
            launch_body(1000.0, json!([{"lockup_time_s": "soon"}])),
            "passes[0].lockup_time_s",
        ),
    ] {
        let r = app
            .api_answers(
                StatusCode::UNPROCESSABLE_ENTITY,
                "POST",
                "/api/v1/calc/calibrate",
                t,
                Some(body),
            )
            .await;
        assert_eq!(r.json()["field"], field, "{}", r.body);
    }
}

/// The lockup of the stored build above (40 g, 2 turns, no wear) for a given μ: the flat
/// 700 N·m curve meets μ·(4000 N + 54.831 N·(rpm/1000)² per 40 g)·0.1 m·4 faces [derived from
/// the build: 4 × 100 N/mm × 10 mm; the lever gain × 40 g; uniform-wear radius (125 + 75)/2 mm].
fn lockup_for(mu: f64) -> f64 {
    let gain = 0.005 * (1000.0 * std::f64::consts::PI / 30.0).powi(2) / 40.0;
    let centrifugal = 700.0 / (0.4 * mu) - 4000.0;
    1000.0 * (centrifugal / (gain * 40.0)).sqrt()
}

// Friction against heat (docs/engineering.md §27): one pass a day, each the day's first, so
// each launches at its air temperature. μ = 0.32 − 0.0002·(θ − 25) exactly at −5 to 55 °C gives
// k = −0.0002 /K, μ0 = 0.32 at θref = 25 °C and an interval of zero width [derived]. Four passes
// are too few, and five spanning 30 K say 20 K more spread is needed (the rule).
#[tokio::test]
async fn a_stored_builds_calibration_fits_mu_against_launch_temperature() {
    let app = TestApp::new().await;
    let (id, token) = stored_build(&app).await;
    let t = Some(token.as_str());
    set_up_2_turns_40_g(&app, id, t).await;
    let path = format!("/api/v1/builds/{id}/calibration");
    let temps = [-5.0, 10.0, 25.0, 40.0, 55.0];
    for (i, theta) in temps.iter().enumerate() {
        let mu = 0.32 - 0.0002 * (theta - 25.0);
        let body = json!({"run_on": format!("2026-10-{:02}", i + 2), "run_at": "10:30",
                          "ambient_c": theta, "observed_lockup_rpm": lockup_for(mu)});
        record_pass(&app, id, t, body).await;
        if i == 3 {
            let v = app.api("GET", &path, t, None).await.json();
            assert!(v["mu_vs_temperature"].is_null(), "{v}");
            let why = v["mu_vs_temperature_reason"].as_str().unwrap_or_default();
            assert!(why.contains("4 calibrated pass(es)"), "{why}");
        }
    }
    let v = app.api("GET", &path, t, None).await.json();
    for (p, theta) in v["passes"].as_array().into_iter().flatten().zip(temps) {
        assert!(
            (num(&p["mu"]) - (0.32 - 0.0002 * (theta - 25.0))).abs() < 1e-6,
            "{p}"
        );
    }
    let m = &v["mu_vs_temperature"];
    assert_eq!(m["n"], 5, "{v}");
    assert!((num(&m["k_per_k"]) + 0.0002).abs() < 1e-7, "{m}");
    assert!((num(&m["mu0"]) - 0.32).abs() < 1e-7, "{m}");
    assert!((num(&m["theta_ref_c"]) - 25.0).abs() < 1e-9, "{m}");
    assert!((num(&m["spread_k"]) - 60.0).abs() < 1e-9, "{m}");
    assert!(
        (num(&m["k_ci95"][1]) - num(&m["k_ci95"][0])).abs() < 1e-6,
        "{m}"
    );
    assert!(v["mu_vs_temperature_reason"].is_null());
    // The tuning page says it in words, per 100 degrees of the shop's scale, with the chart.
    let page = app
        .login("sam")
        .await
        .get(&format!("/builds/{id}/tune"))
        .await;
    let falls_c = "μ falls 0.020 per 100 °C"; // −0.0002 /K × 100 K [derived]
    let falls_f = "μ falls 0.011 per 100 °F"; // −0.0002 /K × 100 × 5/9 K [derived]
    assert!(
        page.body.contains(falls_c) || page.body.contains(falls_f),
        "{}",
        page.body
    );
    assert!(page.body.contains("launch temperature, °"), "no heat chart");

    // The launch preview's next pass, 20 min later: the plate this launch heated, cooled by
    // Newton's law, and the line's μ at that temperature [derived: μ = 0.32 − 0.0002·(θ − 25)].
    let client = app.login("sam").await;
    let next = "/tune?next_pass=1&next_after_min=20";
    let without_car = client.get(&format!("/builds/{id}{next}")).await;
    assert!(!without_car.body.contains("Next pass, 20 min later"));
    give_the_car_launch_fields(&app, id, t).await;
    let page = client.get(&format!("/builds/{id}{next}")).await;
    page.assert_shows("Next pass, 20 min later");
    let words = page.body[page
        .body
        .find("plate at about ")
        .expect("plate temperature")..]
        .to_string();
    let theta_shown: f64 = words["plate at about ".len()..]
        .split_whitespace()
        .next()
        .and_then(|n| n.parse().ok())
        .expect("a temperature");
    let theta_c = if words.contains("°F") {
        (theta_shown - 32.0) * 5.0 / 9.0
    } else {
        theta_shown
    };
    assert!(theta_c > 30.0, "warmer than the start: {words}");
    let mu_shown: f64 = words[words.find("μ ").unwrap() + "μ ".len()..]
        .split_whitespace()
        .next()
        .and_then(|n| n.parse().ok())
        .expect("a μ");
    // The shown temperature is rounded to a whole degree: μ within 0.0002 × 1 K of the line.
    let expected = 0.32 - 0.0002 * (theta_c - 25.0);
    assert!(
        (mu_shown - expected).abs() <= 0.0005 + 0.0002,
        "{mu_shown} against {expected}"
    );

    // A badly written time of day is refused with the field named.
    let bad = json!({"run_on": "2026-10-09", "run_at": "25:00"});
    let r = app
        .api_answers(
            StatusCode::UNPROCESSABLE_ENTITY,
            "POST",
            &format!("/api/v1/builds/{id}/passes"),
            t,
            Some(bad),
        )
        .await;
    r.assert_shows("run_at");
}

#[tokio::test]
async fn too_little_spread_of_launch_temperature_says_how_much_more() {
    let app = TestApp::new().await;
    let (id, token) = stored_build(&app).await;
    let t = Some(token.as_str());
    set_up_2_turns_40_g(&app, id, t).await;
    for (i, theta) in [10.0, 15.0, 20.0, 30.0, 40.0].iter().enumerate() {
        let body = json!({"run_on": format!("2026-10-{:02}", i + 2), "run_at": "09:00",
                          "ambient_c": theta, "observed_lockup_rpm": lockup_for(0.30)});
        app.api(
            "POST",
            &format!("/api/v1/builds/{id}/passes"),
            t,
            Some(body),
        )
        .await;
    }
    let v = app
        .api("GET", &format!("/api/v1/builds/{id}/calibration"), t, None)
        .await
        .json();
    assert!(v["mu_vs_temperature"].is_null(), "{v}");
    let why = v["mu_vs_temperature_reason"].as_str().unwrap_or_default();
    // In the test shop's °F: 30 K = 54 °F, 20 K = 36 °F (1 K = 1.8 °F) [derived].
    assert!(why.contains("span 54 °F; 36 °F more"), "{why}");
}

// A pass without a data log heats the plate by the launch preview's slip energy at its setting
// (docs/engineering.md §27): of five passes ten minutes apart on one day at 20 °C air, only the
// first has a launch temperature while the car lacks the preview's launch fields, and every one
// once it has them.
#[tokio::test]
async fn passes_without_a_log_heat_the_plate_by_the_launch_preview() {
    let app = TestApp::new().await;
    let (id, token) = stored_build(&app).await;
    let t = Some(token.as_str());
    set_up_2_turns_40_g(&app, id, t).await;
    for (i, mu) in [0.30, 0.31, 0.32, 0.33, 0.34].into_iter().enumerate() {
        let body = json!({"run_on": "2026-10-02", "run_at": format!("10:{}0", i),
                          "ambient_c": 20.0, "observed_lockup_rpm": lockup_for(mu)});
        record_pass(&app, id, t, body).await;
    }
    let path = format!("/api/v1/builds/{id}/calibration");
    // Without a rise the day's later passes have no launch temperature: only the first counts.
    let cold = app.api("GET", &path, t, None).await.json();
    let why = cold["mu_vs_temperature_reason"]
        .as_str()
        .unwrap_or_default();
    assert!(why.starts_with("1 calibrated pass(es)"), "{cold}");
    give_the_car_launch_fields(&app, id, t).await;
    // With the preview's rise every pass has one, each warmer than the one before.
    let warm = app.api("GET", &path, t, None).await.json();
    let why = warm["mu_vs_temperature_reason"]
        .as_str()
        .unwrap_or_default();
    let fitted = warm["mu_vs_temperature"]["n"] == 5;
    let spread: f64 = why
        .split("span ")
        .nth(1)
        .and_then(|t| t.split(' ').next())
        .and_then(|n| n.parse().ok())
        .unwrap_or(0.0);
    assert!(fitted || spread > 0.0, "{warm}");
}

/// A pass recorded on the stored build through the API (201).
async fn record_pass(app: &TestApp, id: i64, t: Option<&str>, body: Value) {
    app.api_answers(
        StatusCode::CREATED,
        "POST",
        &format!("/api/v1/builds/{id}/passes"),
        t,
        Some(body),
    )
    .await;
}

/// The stored build's setup of 2026-10-01: 2 turns, 40 g.
async fn set_up_2_turns_40_g(app: &TestApp, id: i64, t: Option<&str>) {
    let setup = json!({"changed_on": "2026-10-01", "adjuster_turns": 2.0, "counterweight_g": 40.0});
    app.api_answers(
        StatusCode::CREATED,
        "POST",
        &format!("/api/v1/builds/{id}/setups"),
        t,
        Some(setup),
    )
    .await;
}

/// The stored build's car with what the launch preview needs (the rest estimated).
async fn give_the_car_launch_fields(app: &TestApp, id: i64, t: Option<&str>) {
    let car = app
        .api("GET", &format!("/api/v1/builds/{id}"), t, None)
        .await
        .json()["car_id"]
        .clone();
    let launch_car = json!({"description": "two-door, 7.2 L V8, 4-speed",
        "torque_curve_nm": [[3000, 700], [5000, 700], [7000, 700]], "weight_kg": 1500.0,
        "first_gear_ratio": 2.6, "final_drive_ratio": 4.1, "tire_diameter_mm": 760.0,
        "launch_rpm": 5000.0});
    app.api_answers(
        StatusCode::OK,
        "PUT",
        &format!("/api/v1/cars/{car}"),
        t,
        Some(launch_car),
    )
    .await;
}

/// The stored build's launch preview with μ tried at `mu` on its 2-turn, 40 g setting: the
/// lockup row's (seconds, rpm) as the tuning page prints them.
async fn preview_lockup(app: &TestApp, id: i64, mu: f64) -> (f64, f64) {
    let client = app.login("sam").await;
    let page = client
        .get(&format!(
            "/builds/{id}/tune?try=1&adjuster_turns=2&counterweight_g=40&mu={mu}"
        ))
        .await;
    assert_eq!(page.status, StatusCode::OK);
    // The current setting's column, then the tried one's: "1.23 s at 4567 rpm, …".
    let row = page
        .body
        .split("<td>Lockup</td><td class=\"num\">")
        .nth(2)
        .and_then(|r| r.split("</td>").next())
        .expect("the tried setting's lockup row");
    let mut words = row.split_whitespace();
    let s: f64 = words.next().and_then(|w| w.parse().ok()).expect("seconds");
    let rpm: f64 = words.nth(2).and_then(|w| w.parse().ok()).expect("rpm");
    (s, rpm)
}

/// Issue 25, part 1, stored builds: a pass with its launch speed and a typed lock time (no data
/// log) is read by the whole launch, and the build's calibration takes that μ and says so. The
/// check is a round trip through the page's own launch preview: the lock time the preview
/// gives at μ 0.30 (printed to 0.01 s), typed on a pass, reads back as μ 0.30 within what the
/// rounding allows [derived]; a later lock reads lower (the issue: a lock time falls as μ rises).
/// The fit is kept (`pass_launch_fits`) and used only while what it read is unchanged.
#[tokio::test]
async fn a_typed_lock_time_is_read_by_the_whole_launch_and_kept() {
    let app = TestApp::new().await;
    let (id, token) = stored_build(&app).await;
    let t = Some(token.as_str());
    set_up_2_turns_40_g(&app, id, t).await;
    give_the_car_launch_fields(&app, id, t).await;
    let (lock_s, lock_rpm) = preview_lockup(&app, id, 0.30).await;
    for (day, lock) in [("2026-10-02", lock_s), ("2026-10-03", lock_s + 0.2)] {
        let body = json!({"run_on": day, "launch_rpm": 5000.0, "lockup_time_s": lock});
        record_pass(&app, id, t, body).await;
    }
    // The build page's pass list shows the typed lock time as typed.
    let page = app.login("sam").await.get(&format!("/builds/{id}")).await;
    assert!(
        page.body.contains(&format!(
            "{lock_s:.3} s</a> <span class=\"muted\">(typed)</span>"
        )),
        "the typed lock time is listed"
    );
    let path = format!("/api/v1/builds/{id}/calibration");
    let v = app.api("GET", &path, t, None).await.json();
    assert_eq!(v["method"], "launch", "{v}");
    assert_eq!(v["n"], 2, "{v}");
    let first = num(&v["passes"][0]["mu"]);
    let later = num(&v["passes"][1]["mu"]);
    assert!((first - 0.30).abs() < 0.002, "{first}: {v}");
    assert!(later < first - 0.005, "{later} against {first}");
    // The lockup the pass is scored at is the simulated one, the preview's within its print.
    assert!(
        (num(&v["passes"][0]["lockup_rpm"]) - lock_rpm).abs() < 30.0,
        "{v}"
    );
    // The calibration's μ of each pass is the launch method's.
    assert_eq!(
        v["passes"][0]["mu"], v["by_launch"]["passes"][0]["mu"],
        "{v}"
    );
    assert!(
        v["notes"].as_array().is_some_and(|n| n.iter().any(|n| n
            .as_str()
            .unwrap_or("")
            .starts_with("2 of the 2 passes read from the whole launch"))),
        "{v}"
    );

    // Kept, and read while its fingerprint matches: a kept μ altered by hand shows.
    let kept: Vec<(i64, f64)> =
        sqlx::query_as("SELECT inputs, mu FROM pass_launch_fits ORDER BY pass_id")
            .fetch_all(&app.pool)
            .await
            .unwrap();
    assert_eq!(kept.len(), 2);
    assert!((kept[0].1 - first).abs() < 1e-12);
    sqlx::query("UPDATE pass_launch_fits SET mu = 0.5 WHERE mu = ?")
        .bind(kept[0].1)
        .execute(&app.pool)
        .await
        .unwrap();
    let v = app.api("GET", &path, t, None).await.json();
    assert_eq!(num(&v["passes"][0]["mu"]), 0.5, "{v}");
    // With what it read changed (its fingerprint no longer matches), the pass is fitted again.
    sqlx::query("UPDATE pass_launch_fits SET inputs = inputs + 1 WHERE mu = 0.5")
        .execute(&app.pool)
        .await
        .unwrap();
    let v = app.api("GET", &path, t, None).await.json();
    assert!((num(&v["passes"][0]["mu"]) - first).abs() < 1e-9, "{v}");
}

// A pass's launch-preview slip energy is kept with its build when the build is written
// (`pass_energies`, worked out by `status::work_out`) and read from there while the preview's
// request is what it was; a request that no longer matches is simulated again.
#[tokio::test]
async fn a_passes_preview_energy_is_kept_and_used_only_while_its_request_matches() {
    use lockpoint::model::energy::PassEnergies;
    let app = TestApp::new().await;
    let (id, token) = stored_build(&app).await;
    let t = Some(token.as_str());
    set_up_2_turns_40_g(&app, id, t).await;
    for (i, mu) in [0.30, 0.32].into_iter().enumerate() {
        let body = json!({"run_on": format!("2026-10-0{}", i + 2), "ambient_c": 20.0,
                          "observed_lockup_rpm": lockup_for(mu)});
        record_pass(&app, id, t, body).await;
    }
    give_the_car_launch_fields(&app, id, t).await;
    let mut conn = app.pool.acquire().await.unwrap();
    let settings = lockpoint::db::settings::get(&mut conn).await.unwrap();
    let mut d = lockpoint::db::dossier::load(&mut conn, id)
        .await
        .unwrap()
        .expect("the build");
    assert_eq!(d.pass_energies.len(), 2, "one kept energy a pass");
    let pass = d.passes[0].clone();
    let kept = d
        .pass_energies
        .iter()
        .find(|k| k.pass_id == pass.id)
        .cloned()
        .unwrap();
    let simulated = kept.energy_j.expect("the preview locks");
    assert!(simulated > 1_000.0, "{simulated} J");
    assert_eq!(PassEnergies::new(&d, &settings).of(&pass), Ok(simulated));

    // A kept figure is what the pages read while its fingerprint matches...
    let at = d
        .pass_energies
        .iter()
        .position(|k| k.pass_id == pass.id)
        .unwrap();
    d.pass_energies[at].energy_j = Some(1.0);
    assert_eq!(PassEnergies::new(&d, &settings).of(&pass), Ok(1.0));
    // ...and is simulated again once it does not.
    d.pass_energies[at].inputs ^= 1;
    assert_eq!(PassEnergies::new(&d, &settings).of(&pass), Ok(simulated));
}
