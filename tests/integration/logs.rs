//! Data logs: the calculation API on docs/engineering.md §24's file, its refusals, a pass's file
//! stored through the API and through the upload pages, and nothing kept on a bad file.

use axum::body::Body;
use axum::http::{Request, StatusCode, header};
use serde_json::{Value, json};

use crate::support::{Client, Reply, TestApp, id_from};

pub fn calc_body(csv: String) -> Value {
    json!({ "units": "metric", "csv": csv,
        "columns": { "time": "time", "engine_rpm": "rpm", "input_rpm": "shaft" },
        "time_unit": "auto", "slip_on_pct": 3, "hold_ms": 100,
        "engine": { "torque_curve": [[3000, 600], [8000, 600]], "inertia": 0.25 } })
}

/// `csv` analysed by `POST /api/v1/calc/log-analysis` with the body of [`calc_body`].
pub async fn analysed(app: &TestApp, token: &str, csv: String) -> Reply {
    app.post_json("/api/v1/calc/log-analysis", token, calc_body(csv))
        .await
}

/// The same, answered 200 (the start of the body shown when it is not).
pub async fn analysed_ok(app: &TestApp, token: &str, csv: String) -> Reply {
    let r = analysed(app, token, csv).await;
    assert_eq!(
        r.status,
        StatusCode::OK,
        "{}",
        &r.body[..r.body.len().min(300)]
    );
    r
}

/// The column-mapping form of a staged `upload`, for a file with columns `t`, `engine` and
/// `input`, with the engine's `inertia`.
pub fn map_form<'a>(upload: &'a str, inertia: &'a str) -> [(&'a str, &'a str); 8] {
    [
        ("upload", upload),
        ("time", "t"),
        ("engine_rpm", "engine"),
        ("input_rpm", "input"),
        ("time_unit", "auto"),
        ("slip_on_pct", "3"),
        ("hold_ms", "100"),
        ("inertia", inertia),
    ]
}

#[tokio::test]
async fn the_worked_file_answers_as_the_contract_documents() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let v = app
        .post_json_ok(
            "/api/v1/calc/log-analysis",
            &token,
            calc_body(clutch::reference::worked_log()),
        )
        .await;
    // Lockup 0.776 s and 600 × 628.3185 × 0.4 = 150 796 J [derived, docs/engineering.md §24].
    assert_eq!(v["samples"], 101);
    assert_eq!(v["sample_rate_hz"], 100.0);
    assert_eq!(v["launch_s"], 0.0);
    assert_eq!(v["lockup_s"], 0.776);
    assert_eq!(v["launch_engine_rpm"], 6000.0);
    assert_eq!(v["min_engine_rpm"], 6000.0);
    assert_eq!(v["lockup_engine_rpm"], 6000.0);
    assert_eq!(v["slip_energy_kj"], 150.8);
    assert_eq!(v["peak_slip_power_kw"], 377.0);
    assert_eq!(v["tire_spin"], json!([]));
    assert_eq!(
        v["trace"][0],
        json!({"time_s": 0.0, "engine_rpm": 6000.0, "input_rpm": 0.0, "slip_pct": 100.0,
               "clutch_torque": 600.0, "slip_power_kw": 377.0})
    );
    assert_eq!(v["trace"].as_array().unwrap().len(), 101);
    // Issue 21, items 7 and 5: the notes name the hold the launch and the lowest engine speed
    // are read with, and (with "auto") which rule decided the time unit.
    assert_eq!(
        v["notes"],
        json!([
            "The launch and the lowest engine speed are read with a hold, as the lockup is: a change counts only when it lasts 3 samples in a row (20 ms and at least 3 samples), so one noisy sample neither starts the launch nor sets the minimum.",
            "The time column was read in seconds: nothing names ms, its median step (0.01) is below 0.5 and it spans 1, not more than 600."
        ])
    );
    // Without the engine: the events, but no torque or energy.
    let mut body = calc_body(clutch::reference::worked_log());
    body.as_object_mut().unwrap().remove("engine");
    let v = app
        .post_json("/api/v1/calc/log-analysis", &token, body)
        .await
        .json();
    assert_eq!(v["lockup_s"], 0.776);
    assert!(v["slip_energy_kj"].is_null() && v["trace"][0]["clutch_torque"].is_null());
}

#[tokio::test]
async fn bad_files_answer_422_naming_the_column_or_csv_and_the_line() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let cases: Vec<(String, Value, &str, &str)> = vec![
        (
            clutch::reference::worked_log().replace("0.30,6000", "0.30,six"),
            json!(null),
            "columns.engine_rpm",
            "line 32",
        ),
        (
            clutch::reference::worked_log().replace("0.50,", "0.40,"),
            json!(null),
            "columns.time",
            "line 52",
        ),
        (
            clutch::reference::worked_log(),
            json!({"time": "time", "engine_rpm": "crank", "input_rpm": "shaft"}),
            "columns.engine_rpm",
            "line 1",
        ),
        (
            clutch::reference::worked_log()
                .lines()
                .take(6)
                .collect::<Vec<_>>()
                .join("\n"),
            json!(null),
            "csv",
            "line 2",
        ),
        (
            clutch::reference::worked_log().replace(",6000\n", ",5000\n"),
            json!(null),
            "columns.input_rpm",
            "no lockup",
        ),
    ];
    for (csv, columns, field, said) in cases {
        let mut body = calc_body(csv);
        if !columns.is_null() {
            body["columns"] = columns;
        }
        let r = app
            .post_json("/api/v1/calc/log-analysis", &token, body)
            .await;
        assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
        let v = r.json();
        assert_eq!(v["field"], field, "{v}");
        assert!(v["error"].as_str().unwrap().contains(said), "{v}");
    }
}

#[tokio::test]
async fn a_log_larger_than_a_form_is_accepted_on_the_log_routes_only() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    // About 1 MB: far past the 256 KiB every other body may have.
    let mut csv = String::from("time,rpm,shaft,pad\n");
    let pad = "1234567890".repeat(8);
    for k in 0..=12_000 {
        let t = k as f64 / 1000.0;
        let n = (6000.0 * t / 0.8).min(6000.0);
        csv.push_str(&format!("{t:.3},6000,{n},{pad}\n"));
    }
    assert!(csv.len() > 1_000_000);
    analysed_ok(&app, &token, csv.clone()).await;
    let r = app
        .post_json(
            "/api/v1/calc/wear",
            &token,
            json!({ "units": "metric", "pad": csv }),
        )
        .await;
    assert_eq!(r.status, StatusCode::PAYLOAD_TOO_LARGE);
}

/// A pass on a recorded build with a setup before it; returns its id.
pub async fn pass_on_a_build(client: &Client<'_>) -> String {
    let build = client.record_build().await;
    client.record_setup(&build, "2026-10-01", "1.5", "24").await;
    client
        .post_saved(
            &format!("{build}/passes"),
            &[
                ("run_on", "2026-10-04"),
                ("track", "Test strip"),
                ("launch_rpm", "4500"),
            ],
        )
        .await;
    let mut conn = client.app.pool.acquire().await.unwrap();
    let id: i64 = sqlx::query_scalar("SELECT MAX(id) FROM passes")
        .fetch_one(&mut *conn)
        .await
        .unwrap();
    id.to_string()
}

/// A launch on the test car's curve: engine 4800 rpm, input rising to it in 1 s, 200 Hz.
pub fn launch_csv() -> String {
    let mut s = String::from("Logger export\nt;engine;input\ns;rpm;rpm\n");
    for k in 0..=300 {
        let t = k as f64 * 0.005;
        let n = (4800.0 * (t - 0.1) / 1.0).clamp(0.0, 4800.0);
        s.push_str(&format!(
            "{};4800;{}\n",
            format!("{t:.3}").replace('.', ","),
            n
        ));
    }
    s
}

#[tokio::test]
async fn a_pass_log_is_stored_read_back_and_feeds_the_calibration() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let pass = pass_on_a_build(&client).await;
    let token = app.token("sam").await;
    let body = json!({ "csv": launch_csv(), "file_name": "run.csv",
        "columns": { "time": "t", "engine_rpm": "engine", "input_rpm": "input" },
        "engine_inertia_kgm2": 0.2 });
    // A bad mapping saves nothing.
    let mut bad = body.clone();
    bad["columns"]["input_rpm"] = json!("shaft");
    let r = app
        .post_json(&format!("/api/v1/passes/{pass}/log"), &token, bad)
        .await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
    assert_eq!(app.count("pass_logs").await, 0);
    assert_eq!(app.count("car_log_mappings").await, 0);

    let stored = app
        .post_json_ok(&format!("/api/v1/passes/{pass}/log"), &token, body)
        .await;
    // Input = 4800·(t − 0.1): launch 0.1 s; 3 % slip at 0.1 + 0.97 s [derived].
    assert!(
        (stored["launch_s"].as_f64().unwrap() - 0.1).abs() < 1e-6,
        "{stored}"
    );
    assert!(
        (stored["lockup_s"].as_f64().unwrap() - 1.07).abs() < 1e-6,
        "{stored}"
    );
    let again = app
        .get_json(&format!("/api/v1/passes/{pass}/analysis"), &token)
        .await;
    assert_eq!(again.status, StatusCode::OK);
    assert_eq!(again.json(), stored);
    assert_eq!(app.count("pass_logs").await, 1);
    // The mapping is remembered for the car: a second file needs no columns.
    let r = app
        .post_json(
            &format!("/api/v1/passes/{pass}/log"),
            &token,
            json!({ "csv": launch_csv() }),
        )
        .await;
    assert_eq!(r.status, StatusCode::OK, "{}", r.body);

    // The pass had no lockup typed: the log's lockup (4800 rpm here) is its calibration point.
    let build = {
        let mut conn = app.pool.acquire().await.unwrap();
        sqlx::query_scalar::<_, i64>("SELECT build_id FROM passes WHERE id = ?")
            .bind(pass.parse::<i64>().unwrap())
            .fetch_one(&mut *conn)
            .await
            .unwrap()
    };
    let cal = app
        .get_json(&format!("/api/v1/builds/{build}/calibration"), &token)
        .await;
    assert_eq!(cal.status, StatusCode::OK, "{}", cal.body);
    let cal = cal.json();
    assert_eq!(cal["n"], 1, "{cal}");
    assert_eq!(cal["passes"][0]["lockup_rpm"], 4800.0);
    // A flat 4800 rpm engine: clutch torque is the curve's torque there (480 lbf·ft at 5000,
    // 455 at 4000: 475 lbf·ft = 644.0 N·m at 4800 [derived]), and that is what it carried.
    let tc = cal["passes"][0]["clutch_torque"].as_f64().unwrap();
    assert!((tc - 644.0).abs() < 1.5, "{cal}");
}

pub fn multipart(csrf: &str, name: &str, file: &[u8]) -> (String, Vec<u8>) {
    let boundary = "lockpoint-test-boundary";
    let mut body = Vec::new();
    body.extend_from_slice(
        format!("--{boundary}\r\nContent-Disposition: form-data; name=\"_csrf\"\r\n\r\n{csrf}\r\n")
            .as_bytes(),
    );
    body.extend_from_slice(
        format!("--{boundary}\r\nContent-Disposition: form-data; name=\"file\"; filename=\"{name}\"\r\nContent-Type: text/csv\r\n\r\n")
            .as_bytes(),
    );
    body.extend_from_slice(file);
    body.extend_from_slice(format!("\r\n--{boundary}--\r\n").as_bytes());
    (format!("multipart/form-data; boundary={boundary}"), body)
}

pub async fn upload(client: &Client<'_>, pass: &str, file: &[u8]) -> crate::support::Reply {
    let (kind, body) = multipart(&client.csrf, "run.csv", file);
    client
        .app
        .send(
            Request::post(format!("/passes/{pass}/log"))
                .header(header::CONTENT_TYPE, kind)
                .header(header::COOKIE, &client.cookie)
                .body(Body::from(body))
                .unwrap(),
        )
        .await
}

#[tokio::test]
async fn upload_then_mapping_then_the_pass_page() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let pass = pass_on_a_build(&client).await;

    // An unreadable file: a message on the pass page, nothing kept.
    let r = upload(&client, &pass, b"just words\nno table\n").await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
    r.assert_shows("cannot be read as a data log");
    r.assert_shows("Nothing was saved");

    let r = upload(&client, &pass, launch_csv().as_bytes()).await;
    assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
    let map = r.location().to_string();
    assert!(map.starts_with(&format!("/passes/{pass}/log/map?upload=")));
    let page = client.get_ok(&map).await;
    // The choices are the file's own header names; the units line was skipped.
    page.assert_shows("<option value=\"engine\">");
    // Each name is written once, in the one list every choice offers.
    assert_eq!(
        page.body.matches("<option value=\"engine\">").count(),
        1,
        "{}",
        page.body
    );
    page.assert_shows("units line 3 skipped");
    // Names that plainly say what they are come chosen; the first rows are shown beside.
    for (role, name) in [
        ("time", "t"),
        ("engine_rpm", "engine"),
        ("input_rpm", "input"),
    ] {
        assert!(
            page.body.contains(&format!(
                "name=\"{role}\" list=\"log-columns\" value=\"{name}\""
            )),
            "{role}: {}",
            page.body
        );
    }
    assert!(page.body.contains("The first 5 rows of the file"));
    page.assert_shows("<td class=\"num\">0,005</td><td class=\"num\">4800</td>");
    let upload_token = map.split("upload=").nth(1).unwrap();

    // A mapping that finds no launch: the form again, the message beside the choice.
    let r = map_refused(
        &client,
        &pass,
        upload_token,
        &[("time", "t"), ("engine_rpm", "engine"), ("input_rpm", "t")],
    )
    .await;
    r.assert_shows("id=\"input_rpm-msg\"");
    assert!(
        r.body.contains("is the column already chosen for time"),
        "one column, two roles: {}",
        r.body
    );
    assert_eq!(app.count("pass_logs").await, 0);
    // The time column as a speed, with no time chosen at all, is refused too.
    let r = map_refused(
        &client,
        &pass,
        upload_token,
        &[("time", "input"), ("engine_rpm", "t")],
    )
    .await;
    assert!(
        r.body.contains("is the file&#39;s time column")
            || r.body.contains("is the file's time column"),
        "{}",
        r.body
    );
    assert_eq!(app.count("pass_logs").await, 0);
    // Every choice that names nothing in the file is marked at once.
    let r = map_refused(
        &client,
        &pass,
        upload_token,
        &[
            ("time", "clock"),
            ("engine_rpm", ""),
            ("input_rpm", "shaft"),
        ],
    )
    .await;
    r.assert_shows("the file has no column “clock”");
    r.assert_shows("the file has no column “shaft”");
    assert!(
        r.body.contains("choose the file&#39;s column for this")
            || r.body.contains("choose the file's column for this"),
        "{}",
        r.body
    );
    r.assert_shows("fix the 3 marked fields");
    // The driven side from no source at all, in the form's words (not the API's keys).
    let r = map_refused(
        &client,
        &pass,
        upload_token,
        &[("time", "t"), ("engine_rpm", "engine")],
    )
    .await;
    r.assert_shows("give exactly one of input shaft speed, driveshaft speed or driven wheel speed");
    assert!(!r.body.contains("input_rpm, driveshaft_rpm"), "{}", r.body);

    let r = client
        .post_saved(
            &format!("/passes/{pass}/log/map"),
            &map_form(upload_token, "4.746"),
        )
        .await;
    assert_eq!(r.location(), format!("/passes/{pass}"));
    assert_eq!(app.count("pass_logs").await, 1);
    let page = client.get_ok(&format!("/passes/{pass}")).await;
    page.assert_shows("1.070 s");
    assert_eq!(page.body.matches("<svg").count(), 3);
    // The build's pass table shows the lockup time and links the pass.
    let build = id_from(&format!("/builds/{}", {
        let mut conn = app.pool.acquire().await.unwrap();
        sqlx::query_scalar::<_, i64>("SELECT build_id FROM passes WHERE id = ?")
            .bind(pass.parse::<i64>().unwrap())
            .fetch_one(&mut *conn)
            .await
            .unwrap()
    }));
    let b = client.get(&format!("/builds/{build}")).await;
    b.assert_shows(&format!("<a href=\"/passes/{pass}\">0.970 s</a>"));
    // No lockup was typed on this pass: the log's fills the column, marked as such.
    b.assert_shows("4800 rpm <span class=\"muted\">(log)</span>");
    // The mapping (and the inertia, 4.746 lb·ft² = 0.200 kg·m²) is offered for the next file.
    let r = upload(&client, &pass, launch_csv().as_bytes()).await;
    let page = client.get(r.location()).await;
    page.assert_shows("name=\"input_rpm\" list=\"log-columns\" value=\"input\"");
    page.assert_shows("value=\"4.746\"");
}

#[tokio::test]
async fn two_logged_passes_of_a_build_are_drawn_on_one_chart() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let (_, first, second) = two_passes(&app, &client).await;
    let token = app.token("sam").await;
    for pass in [&first, &second] {
        store_as(&app, &token, pass, launch_csv(), None).await;
    }
    let alone = client.get(&format!("/passes/{first}")).await;
    alone.assert_shows(&format!("<option value=\"{second}\">2026-10-11"));
    assert_eq!(alone.body.matches("<svg").count(), 3);
    let both = client
        .get_ok(&format!("/passes/{first}?compare={second}"))
        .await;
    assert_eq!(both.body.matches("<svg").count(), 4);
    both.assert_shows("Two passes, time from each launch");
    // Anything else in the query is no comparison, not an error.
    let odd = client.get(&format!("/passes/{first}?compare=abc")).await;
    assert_eq!(
        (odd.status, odd.body.matches("<svg").count()),
        (StatusCode::OK, 3)
    );
}

/// Without an inertia in the request or a remembered one, a stored log takes the engine inertia
/// from the car record (the launch preview's field), so its clutch torque and energy are worked
/// out; with neither, they stay empty.
#[tokio::test]
async fn a_stored_log_takes_the_engine_inertia_from_the_car_record() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let pass = pass_on_a_build(&client).await;
    let token = app.token("sam").await;
    let body = json!({ "csv": launch_csv(), "file_name": "run.csv",
        "columns": { "time": "t", "engine_rpm": "engine", "input_rpm": "input" } });
    let store = |body: serde_json::Value| {
        let (app, token, pass) = (&app, &token, &pass);
        async move {
            app.post_json(&format!("/api/v1/passes/{pass}/log"), token, body)
                .await
        }
    };
    let without = store(body.clone()).await;
    assert_eq!(without.status, StatusCode::OK, "{}", without.body);
    assert!(without.json()["slip_energy_kj"].is_null());

    let car: i64 = sqlx::query_scalar("SELECT MAX(id) FROM cars")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    let mut record = app
        .get_json(&format!("/api/v1/cars/{car}"), &token)
        .await
        .json();
    record["engine_inertia_kg_m2"] = json!(0.2);
    let put = app
        .put_json(&format!("/api/v1/cars/{car}"), &token, record)
        .await;
    assert_eq!(put.status, StatusCode::OK, "{}", put.body);
    let with = store(body).await;
    assert_eq!(with.status, StatusCode::OK, "{}", with.body);
    assert!(
        with.json()["slip_energy_kj"].as_f64().unwrap() > 0.0,
        "{}",
        with.body
    );
}

/// A 6 s file at 200 Hz: engine 4800 rpm throughout, input 4800·(t − 2) from 2 s up to
/// 4800; launch 2 s, 3 % slip at 2.97 s [derived, as `launch_csv`].
fn staged_csv() -> String {
    let mut s = String::from("t,engine,input\n");
    for k in 0..=1200 {
        let t = k as f64 * 0.005;
        let n = (4800.0 * (t - 2.0)).clamp(0.0, 4800.0);
        s.push_str(&format!("{t:.3},4800,{n}\n"));
    }
    s
}

/// Stores `csv` as the log of `pass` through the API.
async fn store(app: &TestApp, pass: &str, csv: String) {
    store_as(app, &app.token("sam").await, pass, csv, None).await;
}

/// Stores `csv` (columns `t`, `engine`, `input`) as the log of `pass` through the API with
/// `token`, under `file_name` when one is given.
pub async fn store_as(
    app: &TestApp,
    token: &str,
    pass: &str,
    csv: String,
    file_name: Option<&str>,
) {
    let mut body = json!({ "csv": csv,
        "columns": { "time": "t", "engine_rpm": "engine", "input_rpm": "input" },
        "engine_inertia_kgm2": 0.2 });
    if let Some(name) = file_name {
        body["file_name"] = json!(name);
    }
    let r = app
        .post_json(&format!("/api/v1/passes/{pass}/log"), token, body)
        .await;
    assert_eq!(r.status, StatusCode::OK, "{}", r.body);
}

#[tokio::test]
async fn a_pass_page_opens_on_the_launch_with_the_whole_file_a_link_away() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let pass = pass_on_a_build(&client).await;
    store(&app, &pass, staged_csv()).await;
    // The whole file asked for first, so a cached page of one stretch never answers for the
    // other.
    let all = client.get_ok(&format!("/passes/{pass}?window=all")).await;
    all.assert_shows("The charts show 0.00–6.00 s: the whole file.");
    all.assert_shows(&format!(
        "<a href=\"/passes/{pass}#charts\">Back to the launch</a>"
    ));
    assert!(
        all.body
            .contains("Engine and input shaft speed over 0.00–6.00 s")
    );

    // From 1 s before the launch (2 s) to 1 s after the lockup (2.97 s), a plain link to the
    // whole file.
    let page = client.get(&format!("/passes/{pass}")).await;
    let shown = "1.00–3.97 s: from 1 s before the launch to 1 s after the lockup";
    page.assert_shows(&format!("The charts show {shown}."));
    for title in ["Engine and input shaft speed", "Clutch slip", "Slip power"] {
        assert!(
            page.body.contains(&format!("{title} over {shown}")),
            "{title}"
        );
    }
    assert!(page.body.contains(&format!(
        "<a href=\"/passes/{pass}?window=all#charts\">Show the whole file</a>"
    )));
    // The x axis is the stretch's: no tick before 1 s or after 4 s (the whole file's axis
    // has them).
    let speed = |body: &str| -> String {
        body.split("<figure class=\"chart compact\">")
            .nth(1)
            .unwrap()
            .split("</figure>")
            .next()
            .unwrap()
            .to_string()
    };
    let ticks = |svg: &str| -> Vec<f64> {
        svg.split("text-anchor=\"middle\">")
            .skip(1)
            .filter_map(|t| t.split('<').next()?.parse().ok())
            .collect()
    };
    let near = ticks(&speed(&page.body));
    assert!(
        near.first() >= Some(&1.0) && near.last() <= Some(&3.97),
        "{near:?}"
    );
    let whole = ticks(&speed(&all.body));
    assert_eq!(
        (whole.first(), whole.last()),
        (Some(&0.0), Some(&6.0)),
        "{whole:?}"
    );
    // Anything else in `window` is the launch.
    let odd = client
        .get(&format!("/passes/{pass}?window=everything"))
        .await;
    odd.assert_shows(&format!("The charts show {shown}."));
}

#[tokio::test]
async fn a_file_that_is_all_launch_needs_no_second_link() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let pass = pass_on_a_build(&client).await;
    // Launch 0.1 s and lockup 1.07 s in a 1.5 s file: a second either side covers it all.
    store(&app, &pass, launch_csv()).await;
    let page = client.get(&format!("/passes/{pass}")).await;
    page.assert_shows("The charts show 0.00–1.50 s: the whole file.");
    assert!(!page.body.contains("Show the whole file"));
}

#[tokio::test]
async fn two_passes_compared_keep_the_comparison_across_the_stretches() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let (_, first, second) = two_passes(&app, &client).await;
    store(&app, &first, staged_csv()).await;
    store(&app, &second, launch_csv()).await;
    let both = client
        .get(&format!("/passes/{first}?compare={second}"))
        .await;
    // Time from each launch: 1 s before it; 1 s after the later lockup (0.97 s after each
    // launch), within what the files hold after their launches (4 s and 1.4 s).
    both.assert_shows("Two passes, time from each launch: each launch to its lockup with up to 1 s either side, -1.00 to 1.97 s");
    both.assert_shows(&format!(
        "href=\"/passes/{first}?compare={second}&#38;window=all#charts\""
    ));
    let all = client
        .get(&format!("/passes/{first}?compare={second}&window=all"))
        .await;
    // The whole files: 2 s before the first's launch to 4 s after it.
    all.assert_shows("Two passes, time from each launch: the whole files, -2.00 to 4.00 s");
    // The comparison form keeps the whole-file choice.
    assert!(
        all.body
            .contains("<input type=\"hidden\" name=\"window\" value=\"all\">")
    );
    all.assert_shows(&format!(
        "href=\"/passes/{first}?compare={second}#charts\">Back to the launch"
    ));
}

/// A build with two passes (the second on 2026-10-11): (build id, first pass, second pass).
async fn two_passes(app: &TestApp, client: &Client<'_>) -> (i64, String, String) {
    let first = pass_on_a_build(client).await;
    let build: i64 = {
        let mut conn = app.pool.acquire().await.unwrap();
        sqlx::query_scalar("SELECT build_id FROM passes WHERE id = ?")
            .bind(first.parse::<i64>().unwrap())
            .fetch_one(&mut *conn)
            .await
            .unwrap()
    };
    client
        .post_saved(
            &format!("/builds/{build}/passes"),
            &[("run_on", "2026-10-11"), ("track", "Test strip")],
        )
        .await;
    let second = (first.parse::<i64>().unwrap() + 1).to_string();
    (build, first, second)
}

/// Posts a mapping of the upload `token` that the form refuses (422, nothing kept): the page.
async fn map_refused(
    client: &Client<'_>,
    pass: &str,
    token: &str,
    fields: &[(&str, &str)],
) -> crate::support::Reply {
    let mut all = vec![("upload", token)];
    all.extend_from_slice(fields);
    let r = client.post(&format!("/passes/{pass}/log/map"), &all).await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
    r
}
