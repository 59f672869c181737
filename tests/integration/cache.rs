//! The page cache (`web::http::cache`): a page rendered once serves every viewer with their own name
//! and CSRF token, and no page or session outlives the commit that changed it.

use std::time::{Duration, Instant};

use axum::http::StatusCode;

use crate::support::{TestApp, csrf_of};

/// The counter searched for a name nobody has yet.
const SEARCH: &str = "/?q=Quorrendal";

#[tokio::test]
async fn one_rendered_page_serves_each_viewer_with_their_own_name_and_token() {
    let app = TestApp::new().await;
    let boss = app.login("boss").await;
    let sam = app.login("sam").await;
    let build = boss.record_build().await;
    let seen_by_boss = boss.get(&build).await;
    let seen_by_sam = sam.get(&build).await;
    assert_eq!(seen_by_boss.status, StatusCode::OK);
    assert_eq!(seen_by_sam.status, StatusCode::OK);
    assert_eq!(csrf_of(&seen_by_boss.body), boss.csrf);
    assert_eq!(csrf_of(&seen_by_sam.body), sam.csrf);
    assert_ne!(boss.csrf, sam.csrf);
    seen_by_sam.assert_shows("<span class=\"who\">sam</span>");
    assert!(
        !seen_by_sam.body.contains(&boss.csrf),
        "no other viewer's token"
    );
    assert!(!seen_by_sam.body.contains("<span class=\"who\">boss</span>"));
    // Every form on the page carries the viewer's token, so a form sent from it is accepted.
    let tokens = seen_by_sam.body.matches("name=\"_csrf\"").count();
    assert!(tokens > 2, "{tokens} forms");
    assert_eq!(seen_by_sam.body.matches(&sam.csrf).count(), tokens);
    sam.post_saved(
        &format!("{build}/passes"),
        &[("run_on", "2026-11-20"), ("launch_rpm", "4500")],
    )
    .await;
}

#[tokio::test]
async fn a_save_shows_on_the_next_view_of_a_page_seen_before_it() {
    let app = TestApp::new().await;
    let boss = app.login("boss").await;
    let before = boss.get(SEARCH).await;
    assert!(!before.body.contains("Nell Quorrendal"));
    boss.post_saved(
        "/customers",
        &[("name", "Nell Quorrendal"), ("phone", "555-0142")],
    )
    .await;
    let after = boss.get(SEARCH).await;
    after.assert_shows("Nell Quorrendal");
}

#[tokio::test]
async fn a_commit_made_outside_the_server_shows_within_moments() {
    let app = TestApp::new().await;
    let boss = app.login("boss").await;
    assert!(!boss.get(SEARCH).await.body.contains("Ivo Quorrendal"));
    // Well after the watch on the database has taken its first reading.
    tokio::time::sleep(Duration::from_millis(500)).await;
    assert!(!boss.get(SEARCH).await.body.contains("Ivo Quorrendal"));
    // As another process would (a command-line tool on the same file): straight to SQLite.
    sqlx::query("INSERT INTO customers (name, phone) VALUES ('Ivo Quorrendal', '555-0143')")
        .execute(&app.pool)
        .await
        .unwrap();
    let start = Instant::now();
    loop {
        if boss.get(SEARCH).await.body.contains("Ivo Quorrendal") {
            break;
        }
        // Pages are kept 10 s at most: well before that, the watch must have seen the commit.
        assert!(
            start.elapsed() < Duration::from_secs(5),
            "the counter still shows the page from before the commit"
        );
        tokio::time::sleep(Duration::from_millis(20)).await;
    }
}

#[tokio::test]
async fn signing_out_or_being_disabled_ends_a_session_at_once() {
    let app = TestApp::new().await;
    let boss = app.login("boss").await;
    let sam = app.login("sam").await;
    assert_eq!(sam.get("/").await.status, StatusCode::OK);
    sam.post_saved("/logout", &[]).await;
    assert_eq!(
        sam.get("/").await.status,
        StatusCode::SEE_OTHER,
        "signed out"
    );

    let sam = app.login("sam").await;
    assert_eq!(sam.get("/").await.status, StatusCode::OK);
    let id: i64 = sqlx::query_scalar("SELECT id FROM users WHERE username = 'sam'")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    boss.post_saved(&format!("/users/{id}/disable"), &[]).await;
    assert_eq!(sam.get("/").await.status, StatusCode::SEE_OTHER, "disabled");
}

/// The watcher that sees commits from outside the server outlives a failed connection: started
/// on a file that is not there yet (as after a restore moved it away), it keeps trying, and once
/// the file is back it sees an outside commit. Before, it stopped at its first error and pages
/// could be reused after such commits for as long as nothing was saved through the server.
#[tokio::test]
async fn the_watcher_connects_again_after_an_error() {
    use std::str::FromStr;
    use std::sync::Arc;

    use lockpoint::web::http::cache::{Cache, watch_file};
    use sqlx::sqlite::SqliteConnectOptions;

    let tmp = crate::support::TempDb::new();
    let cache = Arc::new(Cache::default());
    let options = SqliteConnectOptions::from_str("sqlite:")
        .unwrap()
        .filename(&tmp.path);
    watch_file(Arc::downgrade(&cache), options);
    tokio::time::sleep(Duration::from_millis(300)).await;
    assert!(!tmp.path.exists(), "the watcher never creates the file");

    let pool = lockpoint::db::open(&tmp.path).await.unwrap();
    // Let the watcher connect and take its first reading.
    tokio::time::sleep(Duration::from_millis(500)).await;
    let before = cache.generation();
    tokio::time::sleep(Duration::from_millis(300)).await;
    assert_eq!(
        cache.generation(),
        before,
        "connected, nothing changes by itself"
    );
    sqlx::query("INSERT INTO customers (name) VALUES ('Outside Commit')")
        .execute(&pool)
        .await
        .unwrap();
    let deadline = Instant::now() + Duration::from_secs(10);
    while cache.generation() == before {
        assert!(
            Instant::now() < deadline,
            "the outside commit was never seen"
        );
        tokio::time::sleep(Duration::from_millis(20)).await;
    }
}

/// Every page the cache keeps, seen by two people of the same role: the page the second one
/// gets from the cache is byte for byte the page rendered afresh for them (a server with the
/// page cache off, on the same database), and the same as the first one's once each one's name
/// and token are set aside.
#[tokio::test]
async fn every_cached_page_is_the_fresh_page_of_each_viewer() {
    use lockpoint::records::user::{NewUser, Role};

    let app = TestApp::new().await;
    let hash = lockpoint::auth::hash_password(crate::support::PASSWORD.into())
        .await
        .unwrap();
    let mut conn = app.pool.acquire().await.unwrap();
    for (name, role) in [("chief", Role::Admin), ("kit", Role::Tech)] {
        let user = NewUser::parse(name, crate::support::PASSWORD, role).unwrap();
        lockpoint::db::users::insert(&mut conn, &user, &hash)
            .await
            .unwrap();
    }
    drop(conn);
    let fresh = lockpoint::app(lockpoint::AppState::new(app.pool.clone()).without_page_cache());
    let (boss, chief) = (app.login("boss").await, app.login("chief").await);
    let (sam, kit) = (app.login("sam").await, app.login("kit").await);
    let build = boss.record_build().await;
    boss.post_saved(
        &format!("{build}/passes"),
        &[
            ("run_on", "2026-11-20"),
            ("launch_rpm", "4500"),
            ("lockup_rpm", "5200"),
        ],
    )
    .await;
    let pass: i64 = sqlx::query_scalar("SELECT max(id) FROM passes")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    let pages = [
        "/".to_string(),
        "/?q=Lindqvist".into(),
        "/customers".into(),
        "/customers?q=555".into(),
        build.clone(),
        format!("{build}/tune"),
        format!("{build}/tune?try=1&turns=3&counterweight_g=10"),
        format!("/passes/{pass}"),
    ];
    for path in &pages {
        for (first, a, second, b) in [(&boss, "boss", &chief, "chief"), (&sam, "sam", &kit, "kit")]
        {
            let seen_first = first.get(path).await;
            let cached = second.get(path).await;
            assert_eq!(cached.status, StatusCode::OK, "{path}: {}", cached.body);
            let afresh = {
                let req = axum::http::Request::get(path.as_str())
                    .header(axum::http::header::COOKIE, &second.cookie)
                    .body(axum::body::Body::empty())
                    .unwrap();
                let res = tower::ServiceExt::oneshot(fresh.clone(), req)
                    .await
                    .unwrap();
                let bytes = http_body_util::BodyExt::collect(res.into_body())
                    .await
                    .unwrap()
                    .to_bytes();
                String::from_utf8(bytes.to_vec()).unwrap()
            };
            assert_eq!(
                cached.body, afresh,
                "{path}: the cached page is the fresh one"
            );
            let as_anyone = |html: &str, who: &crate::support::Client<'_>, name: &str| {
                html.replace(&who.csrf, "CSRF")
                    .replace(&format!("<span class=\"who\">{name}</span>"), "WHO")
            };
            assert_eq!(
                as_anyone(&seen_first.body, first, a),
                as_anyone(&cached.body, second, b),
                "{path}: nothing of one viewer shows to another"
            );
        }
    }
}
