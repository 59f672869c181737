//! Every request does bounded work: a long log's answer is thinned, heavy work is turned away
//! past its bounds (429 with Retry-After), the pass page is kept per stored log and parsed
//! comparison, the mapping page refuses a file it cannot list, uploads wait per user.

use axum::http::{StatusCode, header};
use serde_json::json;

use crate::logs::{analysed, analysed_ok, launch_csv, pass_on_a_build, store_as, upload};
use crate::support::TestApp;
use lockpoint::web::http::heavy::Caller;

/// 20 s at 1 kHz: launch at 1 s, the input reaching the engine's 6000 rpm at 1.8 s.
fn long_csv() -> String {
    let mut s = String::from("time,rpm,shaft\n");
    for k in 0..=20_000 {
        let t = k as f64 / 1000.0;
        let n = (6000.0 * (t - 1.0) / 0.8).clamp(0.0, 6000.0);
        s.push_str(&format!("{t:.3},6000,{n}\n"));
    }
    s
}

#[tokio::test]
async fn a_long_log_answers_at_most_5000_trace_points_and_says_how_many_samples() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let r = analysed_ok(&app, &token, long_csv()).await;
    let v = r.json();
    assert_eq!(v["samples"], 20_001);
    let points = v["trace"].as_array().unwrap().len();
    assert_eq!(v["trace_points"], points);
    assert!(points <= 5_000 && points > 4_900, "{points}");
    // The launch and lockup samples are in the trace.
    let times: Vec<f64> = v["trace"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["time_s"].as_f64().unwrap())
        .collect();
    for at in [
        v["launch_s"].as_f64().unwrap(),
        v["lockup_s"].as_f64().unwrap(),
    ] {
        assert!(times.iter().any(|t| (t - at).abs() <= 0.001), "{at}");
    }
    assert!(r.body.len() < 2 << 20, "{}", r.body.len());
}

#[tokio::test]
async fn a_token_past_its_two_calculations_gets_429_with_retry_after() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let caller = Caller(Some(format!(
        "token {}",
        lockpoint::auth::hash_secret(&token)
    )));
    let _one = app.state.heavy.turn(&caller).unwrap();
    let _two = app.state.heavy.turn(&caller).unwrap();
    let r = analysed(&app, &token, long_csv()).await;
    assert_eq!(r.status, StatusCode::TOO_MANY_REQUESTS, "{}", r.body);
    assert_eq!(r.headers[header::RETRY_AFTER], "2");
    // Another token is not held up by this one.
    let other = app.token("boss").await;
    let r = analysed(&app, &other, long_csv()).await;
    assert_eq!(r.status, StatusCode::OK);
}

#[tokio::test]
async fn a_third_log_analysis_at_once_is_refused_shop_wide() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let _a = app.state.heavy.analysis().unwrap();
    let _b = app.state.heavy.analysis().unwrap();
    let r = analysed(&app, &token, long_csv()).await;
    assert_eq!(r.status, StatusCode::TOO_MANY_REQUESTS, "{}", r.body);
    assert!(r.headers.contains_key(header::RETRY_AFTER));
}

/// A pass with `launch_csv` stored through the API; returns (pass id, token).
async fn stored_log(app: &TestApp, client: &crate::support::Client<'_>) -> (String, String) {
    let pass = pass_on_a_build(client).await;
    let token = app.token("sam").await;
    let name = "n".repeat(5_000);
    store_as(app, &token, &pass, launch_csv(), Some(&name)).await;
    (pass, token)
}

async fn sql(app: &TestApp, q: &str) {
    let mut conn = app.pool.acquire().await.unwrap();
    sqlx::query(sqlx::AssertSqlSafe(q.to_string()))
        .execute(&mut *conn)
        .await
        .unwrap();
}

#[tokio::test]
async fn the_api_keeps_200_characters_of_a_file_name() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    stored_log(&app, &client).await;
    let mut conn = app.pool.acquire().await.unwrap();
    let len: i64 = sqlx::query_scalar("SELECT length(file_name) FROM pass_logs")
        .fetch_one(&mut *conn)
        .await
        .unwrap();
    assert_eq!(len, 200);
}

#[tokio::test]
async fn the_pass_page_keeps_its_analysis_whatever_else_the_query_string_says() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let (pass, _) = stored_log(&app, &client).await;
    let page = client
        .get_ok(&format!("/passes/{pass}?compare=x&n=1"))
        .await;
    page.assert_shows("1.070 s");
    // The stored bytes spoilt behind the server's back, the same length and stamp: a page
    // asked for with another raw query is the kept one, not a new analysis.
    sql(
        &app,
        "UPDATE pass_logs SET file_deflated = zeroblob(length(file_deflated))",
    )
    .await;
    for q in ["?n=2", "?compare=&n=3", "?compare=abc"] {
        let page = client.get(&format!("/passes/{pass}{q}")).await;
        assert_eq!(page.status, StatusCode::OK, "{q}");
        assert!(page.body.contains("1.070 s"), "{q}: {}", page.body);
    }
}

#[tokio::test]
async fn a_stored_log_that_cannot_be_read_is_said_so_not_500() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let (pass, token) = stored_log(&app, &client).await;
    sql(&app, "UPDATE pass_logs SET file_deflated = x'0001'").await;
    let page = client.get_ok(&format!("/passes/{pass}")).await;
    page.assert_shows("the stored log cannot be inflated");
    let r = app
        .get_json(&format!("/api/v1/passes/{pass}/analysis"), &token)
        .await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY, "{}", r.body);
    r.assert_shows("cannot be inflated");
}

#[tokio::test]
async fn a_file_with_more_than_1000_columns_is_refused_for_mapping() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let pass = pass_on_a_build(&client).await;
    let names: Vec<String> = (0..1_001).map(|i| format!("ch{i}")).collect();
    let file = format!("{}\n{}\n", names.join(","), vec!["1"; 1_001].join(","));
    let r = upload(&client, &pass, file.as_bytes()).await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
    r.assert_shows("1001 columns; at most 1000 are accepted");
    let long = format!("time,{},rpm\n0,1,2\n", "h".repeat(101));
    let r = upload(&client, &pass, long.as_bytes()).await;
    assert_eq!(r.status, StatusCode::UNPROCESSABLE_ENTITY);
    r.assert_shows("101 characters long; at most 100");
}

#[tokio::test]
async fn a_user_stages_two_uploads_and_never_evicts_anothers() {
    let app = TestApp::new().await;
    let sam = app.login("sam").await;
    let boss = app.login("boss").await;
    let passes = [
        pass_on_a_build(&sam).await,
        pass_on_a_build(&sam).await,
        pass_on_a_build(&sam).await,
    ];
    let theirs = upload(&boss, &passes[0], launch_csv().as_bytes()).await;
    assert_eq!(theirs.status, StatusCode::SEE_OTHER);
    for p in &passes[..2] {
        let r = upload(&sam, p, launch_csv().as_bytes()).await;
        assert_eq!(r.status, StatusCode::SEE_OTHER, "{}", r.body);
    }
    // Sending again for the same pass replaces that upload.
    let again = upload(&sam, &passes[1], launch_csv().as_bytes()).await;
    assert_eq!(again.status, StatusCode::SEE_OTHER);
    let r = upload(&sam, &passes[2], launch_csv().as_bytes()).await;
    assert_eq!(r.status, StatusCode::TOO_MANY_REQUESTS, "{}", r.body);
    assert!(r.headers.contains_key(header::RETRY_AFTER));
    boss.get_ok(theirs.location()).await;
}

#[tokio::test]
async fn a_token_flooding_the_launch_preview_is_turned_away_past_two_at_once() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let body = crate::launch::worked();
    let r = app
        .post_json("/api/v1/calc/launch", &token, body.clone())
        .await;
    assert_eq!(r.status, StatusCode::OK, "{}", r.body);
    let caller = Caller(Some(format!(
        "token {}",
        lockpoint::auth::hash_secret(&token)
    )));
    let _held = [
        app.state.heavy.turn(&caller).unwrap(),
        app.state.heavy.turn(&caller).unwrap(),
    ];
    let r = app
        .post_json("/api/v1/calc/launch", &token, body.clone())
        .await;
    assert_eq!(r.status, StatusCode::TOO_MANY_REQUESTS, "{}", r.body);
    assert_eq!(r.headers[header::RETRY_AFTER], "2");
    let other = app.token("boss").await;
    let r = app.post_json("/api/v1/calc/launch", &other, body).await;
    assert_eq!(r.status, StatusCode::OK);
}

#[tokio::test]
async fn a_session_past_its_two_calculations_gets_429_on_the_tuning_page() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    client.get_ok(&format!("{build}/tune")).await;
    let session = client.cookie.split('=').nth(1).unwrap();
    let caller = Caller(Some(format!(
        "session {}",
        lockpoint::auth::hash_secret(session)
    )));
    let _held = [
        app.state.heavy.turn(&caller).unwrap(),
        app.state.heavy.turn(&caller).unwrap(),
    ];
    let page = client.get(&format!("{build}/tune?try=1")).await;
    assert_eq!(page.status, StatusCode::TOO_MANY_REQUESTS, "{}", page.body);
}

#[tokio::test]
async fn an_import_refuses_a_stored_log_that_does_not_inflate_or_read() {
    use crate::backup::{Scratch, demo_document, import_refused};
    let scratch = Scratch::new();
    let document = demo_document(&scratch).await;
    let logs = document["tables"]["pass_logs"].as_array().unwrap();
    assert!(!logs.is_empty(), "the demo shop has a stored log");
    let spoil = |column: &str, value: serde_json::Value| {
        let mut d = document.clone();
        d["tables"]["pass_logs"][0][column] = value;
        d
    };
    let msg = import_refused(
        &scratch,
        "garbled",
        &spoil("file_deflated", json!({"$blob": "0001"})),
    )
    .await;
    assert!(
        msg.contains("\"pass_logs\"") && msg.contains("file_deflated"),
        "{msg}"
    );
    let msg = import_refused(&scratch, "size", &spoil("file_bytes", json!(7))).await;
    assert!(
        msg.contains("file_bytes") && msg.contains("7 bytes"),
        "{msg}"
    );
    let msg = import_refused(&scratch, "settings", &spoil("settings", json!("{oops"))).await;
    assert!(msg.contains("settings cannot be read"), "{msg}");
}

#[tokio::test]
async fn the_database_and_its_wal_files_are_created_for_their_owner_only() {
    use std::os::unix::fs::PermissionsExt;
    let scratch = crate::backup::Scratch::new();
    let path = scratch.path("private.db");
    let pool = lockpoint::db::open(&path).await.unwrap();
    sqlx::query("SELECT COUNT(*) FROM users")
        .execute(&pool)
        .await
        .unwrap();
    for suffix in ["", "-wal", "-shm"] {
        let file = format!("{}{suffix}", path.display());
        let mode = std::fs::metadata(&file).unwrap().permissions().mode() & 0o777;
        assert_eq!(mode, 0o600, "{file}");
    }
    pool.close().await;
}

#[tokio::test]
async fn an_export_is_written_aside_and_named_only_when_complete() {
    use crate::backup::{Scratch, lockpoint, stderr, text};
    let scratch = Scratch::new();
    let shop = scratch.path("shop.db");
    let pool = lockpoint::db::open(&shop).await.unwrap();
    assert!(lockpoint::demo::seed_if_empty(&pool).await.unwrap());
    pool.close().await;
    // An empty folder made beforehand is taken; nothing is left beside it.
    let dir = scratch.path("out");
    std::fs::create_dir(&dir).unwrap();
    let out = lockpoint(&["export", text(&dir), "--db", text(&shop)]);
    assert!(out.status.success(), "{}", stderr(&out));
    assert!(dir.join("lockpoint-export.json").is_file());
    let beside: Vec<String> = std::fs::read_dir(scratch.path(""))
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains("exporting"))
        .collect();
    assert!(beside.is_empty(), "{beside:?}");
    // A folder with an earlier export is never written into.
    let out = lockpoint(&["export", text(&dir), "--db", text(&shop)]);
    assert!(!out.status.success());
    assert!(
        stderr(&out).contains("already exists and is not empty"),
        "{}",
        stderr(&out)
    );
}

#[tokio::test]
async fn staged_download_copies_left_by_a_stopped_server_are_swept_at_start() {
    let scratch = crate::backup::Scratch::new();
    let shop = scratch.path("shop.db");
    lockpoint::db::open(&shop).await.unwrap().close().await;
    let left = scratch.path(".shop.db.download-123-456-0.db");
    std::fs::write(&left, "a backup copy").unwrap();
    let keep = scratch.path("notes.txt");
    std::fs::write(&keep, "mine").unwrap();
    assert_eq!(lockpoint::backup::sweep_staged_downloads(&shop), 1);
    assert!(!left.exists() && keep.exists());
}
