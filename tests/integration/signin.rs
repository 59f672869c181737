//! Signing in under attack: nobody without an account can stall the shop. Password checks run
//! a bounded number at a time and hold no database connection; failures are counted per client
//! address and per name in a bounded table; the owner of an account someone is guessing at still
//! gets in; the time taken does not tell which names exist.

use std::net::{IpAddr, Ipv4Addr, SocketAddr};
use std::time::{Duration, Instant};

use axum::body::Body;
use axum::extract::ConnectInfo;
use axum::http::{Request, StatusCode, header};
use lockpoint::db;

use crate::support::{PASSWORD, Reply, TestApp, form_encode};

/// A sign-in from the client address 10.0.x.y.
async fn sign_in(app: &TestApp, name: &str, password: &str, client: u16) -> Reply {
    let body = form_encode(&[("username", name), ("password", password), ("next", "/")]);
    let mut req = Request::post("/login")
        .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
        .body(Body::from(body))
        .unwrap();
    let [hi, lo] = client.to_be_bytes();
    let ip = IpAddr::V4(Ipv4Addr::new(10, 0, hi, lo));
    req.extensions_mut()
        .insert(ConnectInfo(SocketAddr::new(ip, 40_000)));
    app.send(req).await
}

fn retry_after(reply: &Reply) -> u64 {
    reply
        .headers
        .get(header::RETRY_AFTER)
        .and_then(|v| v.to_str().ok())
        .and_then(|v| v.parse().ok())
        .unwrap_or_else(|| panic!("a 429 says when to come back: {:?}", reply.headers))
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn sign_ins_for_a_guessed_name_do_not_hold_up_the_shops_pages() {
    let app = TestApp::new().await;
    let sam = app.login("sam").await;
    // A name guessed at many times already, from many addresses.
    for client in 0..20 {
        let r = sign_in(&app, "ghost", "guess", 1000 + client).await;
        assert_eq!(r.status, StatusCode::UNAUTHORIZED);
    }

    // 16 more at once, each from a new address, while a technician loads a page.
    let mut attempts = Vec::new();
    for client in 0..16 {
        let router = app.router.clone();
        let body = form_encode(&[("username", "ghost"), ("password", "guess")]);
        attempts.push(tokio::spawn(async move {
            let mut req = Request::post("/login")
                .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
                .body(Body::from(body))
                .unwrap();
            let ip = IpAddr::V4(Ipv4Addr::new(10, 1, 0, client));
            req.extensions_mut()
                .insert(ConnectInfo(SocketAddr::new(ip, 40_000)));
            tower::ServiceExt::oneshot(router, req)
                .await
                .unwrap()
                .status()
        }));
    }
    tokio::time::sleep(Duration::from_millis(20)).await;
    let started = Instant::now();
    let page = sam.get("/customers").await;
    let took = started.elapsed();
    assert_eq!(page.status, StatusCode::OK);
    assert!(
        took < Duration::from_secs(1),
        "a page waited {took:?} behind sign-ins"
    );
    for attempt in attempts {
        let status = attempt.await.unwrap();
        assert!(
            status == StatusCode::UNAUTHORIZED || status == StatusCode::TOO_MANY_REQUESTS,
            "{status}"
        );
    }
}

/// A sign-in from the client address `ip`.
async fn sign_in_from(app: &TestApp, name: &str, password: &str, ip: IpAddr) -> Reply {
    let body = form_encode(&[("username", name), ("password", password), ("next", "/")]);
    let mut req = Request::post("/login")
        .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
        .body(Body::from(body))
        .unwrap();
    req.extensions_mut()
        .insert(ConnectInfo(SocketAddr::new(ip, 40_000)));
    app.send(req).await
}

#[tokio::test]
async fn when_every_password_check_slot_is_busy_a_failing_client_gets_429_at_once() {
    let app = TestApp::new().await;
    let failed = sign_in(&app, "boss", "wrong", 1).await;
    assert_eq!(failed.status, StatusCode::UNAUTHORIZED);
    let busy = app
        .state
        .sign_ins
        .clone()
        .try_acquire_many_owned(lockpoint::web::SIGN_IN_SLOTS as u32)
        .unwrap();
    let started = Instant::now();
    let refused = sign_in(&app, "boss", PASSWORD, 1).await;
    assert_eq!(refused.status, StatusCode::TOO_MANY_REQUESTS);
    assert_eq!(retry_after(&refused), 1);
    refused.assert_shows("Too many sign-in attempts");
    assert!(started.elapsed() < Duration::from_secs(1));
    assert_eq!(app.count("sessions").await, 0);
    drop(busy);
    let signed_in = sign_in(&app, "boss", PASSWORD, 1).await;
    assert_eq!(
        signed_in.status,
        StatusCode::SEE_OTHER,
        "{}",
        signed_in.body
    );
}

#[tokio::test]
async fn a_client_with_no_recent_failure_gets_a_reserved_slot_while_a_flood_holds_the_rest() {
    let app = TestApp::new().await;
    // A flood from many addresses at the owner's name holds every ordinary slot.
    for client in 0..8 {
        let r = sign_in(&app, "boss", "guess", 200 + client).await;
        assert_eq!(r.status, StatusCode::UNAUTHORIZED);
    }
    let _flood = app
        .state
        .sign_ins
        .clone()
        .try_acquire_many_owned(lockpoint::web::SIGN_IN_SLOTS as u32)
        .unwrap();
    let guesser = sign_in(&app, "boss", "guess", 200).await;
    assert_eq!(guesser.status, StatusCode::TOO_MANY_REQUESTS);
    // The owner, from an address that has not been failing, gets the reserved check.
    let owner = sign_in(&app, "boss", PASSWORD, 1).await;
    assert_eq!(owner.status, StatusCode::SEE_OTHER, "{}", owner.body);
    // With the reserved slot busy too, a clean client waits its short turn, then 429.
    let _reserved = app
        .state
        .reserved_sign_ins
        .clone()
        .try_acquire_many_owned(lockpoint::web::RESERVED_SIGN_IN_SLOTS as u32)
        .unwrap();
    let waited = sign_in(&app, "sam", PASSWORD, 2).await;
    assert_eq!(waited.status, StatusCode::TOO_MANY_REQUESTS);
}

#[tokio::test]
async fn addresses_of_one_ipv6_64_are_counted_as_one_client() {
    let app = TestApp::new().await;
    for n in 0..10u16 {
        let ip = IpAddr::V6(std::net::Ipv6Addr::new(0x2001, 0xdb8, 7, 7, n, 1, 2, 3));
        let r = sign_in_from(&app, &format!("name-{n}"), "guess", ip).await;
        assert_eq!(r.status, StatusCode::UNAUTHORIZED, "failure {n}");
    }
    let same_64 = IpAddr::V6(std::net::Ipv6Addr::new(0x2001, 0xdb8, 7, 7, 99, 9, 9, 9));
    let refused = sign_in_from(&app, "boss", PASSWORD, same_64).await;
    assert_eq!(refused.status, StatusCode::TOO_MANY_REQUESTS);
    let next_64 = IpAddr::V6(std::net::Ipv6Addr::new(0x2001, 0xdb8, 7, 8, 0, 0, 0, 1));
    let other = sign_in_from(&app, "boss", PASSWORD, next_64).await;
    assert_eq!(other.status, StatusCode::SEE_OTHER);
}

#[tokio::test]
async fn a_sign_in_form_past_4_kib_is_refused_unread() {
    let app = TestApp::new().await;
    let long = "x".repeat(5_000);
    let r = sign_in(&app, "boss", &long, 3).await;
    assert_eq!(r.status, StatusCode::PAYLOAD_TOO_LARGE, "{}", r.body);
    let ok = sign_in(&app, "boss", PASSWORD, 3).await;
    assert_eq!(ok.status, StatusCode::SEE_OTHER);
}

#[tokio::test]
async fn a_client_past_its_free_failures_waits_whatever_name_it_tries() {
    let app = TestApp::new().await;
    for n in 0..10 {
        let r = sign_in(&app, &format!("name-{n}"), "guess", 7).await;
        assert_eq!(r.status, StatusCode::UNAUTHORIZED, "failure {n}");
    }
    let started = Instant::now();
    let refused = sign_in(&app, "boss", PASSWORD, 7).await;
    assert_eq!(refused.status, StatusCode::TOO_MANY_REQUESTS);
    assert!((1..=300).contains(&retry_after(&refused)));
    assert!(
        started.elapsed() < Duration::from_millis(500),
        "refused without a password check or a wait"
    );
    // Another address is not held back by this one.
    let other = sign_in(&app, "boss", PASSWORD, 8).await;
    assert_eq!(other.status, StatusCode::SEE_OTHER);
}

#[tokio::test]
async fn someone_guessing_at_an_account_does_not_lock_its_owner_out() {
    let app = TestApp::new().await;
    // Eight addresses guess at the admin's password: each first try from an address is checked.
    for client in 0..8 {
        let r = sign_in(&app, "Boss", "guess", 100 + client).await;
        assert_eq!(r.status, StatusCode::UNAUTHORIZED);
    }
    // A guesser trying again must wait: the name is past its free failures.
    let again = sign_in(&app, "boss", "guess again", 100).await;
    assert_eq!(again.status, StatusCode::TOO_MANY_REQUESTS);
    assert!(retry_after(&again) >= 1);

    // The owner, at the counter, gets in at the first try and without waiting.
    let started = Instant::now();
    let owner = sign_in(&app, "boss", PASSWORD, 1).await;
    assert_eq!(owner.status, StatusCode::SEE_OTHER, "{}", owner.body);
    assert!(started.elapsed() < Duration::from_secs(2));
    // Signing in clears the name's count: the guessers' own addresses still carry theirs.
    let mut conn = app.pool.acquire().await.unwrap();
    let (client, name) = db::throttle::get(&mut conn, "client:10.0.0.100", "name:boss")
        .await
        .unwrap();
    assert_eq!(name, None);
    assert_eq!(client.map(|c| c.failures), Some(1));
}

/// The shortest time of `n` sign-ins made by `attempt(i)`.
async fn timed<F: std::future::Future<Output = Reply>>(attempt: F) -> Duration {
    let started = Instant::now();
    let reply = attempt.await;
    assert_eq!(reply.status, StatusCode::UNAUTHORIZED);
    started.elapsed()
}

#[tokio::test]
async fn a_sign_in_takes_as_long_for_a_name_that_does_not_exist() {
    let app = TestApp::new().await;
    // Each try from its own address, so the throttle plays no part. The kinds of try take
    // turns and each keeps its shortest time, so a busy machine slows all of them alike
    // instead of deciding the comparison.
    sign_in(&app, "warm-up", "x", 1).await;
    let (mut real, mut unknown) = (Duration::MAX, Duration::MAX);
    for i in 0..7 {
        real = real.min(timed(sign_in(&app, "sam", "not the password", 200 + i)).await);
        let name = format!("nobody-{i}");
        unknown = unknown.min(timed(sign_in(&app, &name, "not the password", 300 + i)).await);
    }
    assert!(
        unknown * 2 >= real,
        "a real name took {real:?}, an unknown one {unknown:?}: that tells names apart"
    );
    // A disabled account answers in the same time as well.
    sqlx::query("UPDATE users SET disabled = 1 WHERE username = 'sam'")
        .execute(&app.pool)
        .await
        .unwrap();
    let mut disabled = Duration::MAX;
    for i in 0..7 {
        disabled = disabled.min(timed(sign_in(&app, "sam", PASSWORD, 400 + i)).await);
    }
    assert!(disabled * 2 >= real, "{disabled:?} against {real:?}");
}

#[tokio::test]
async fn failed_sign_ins_keep_one_row_per_client_and_name_and_the_purge_is_bounded_and_indexed() {
    let app = TestApp::new().await;
    // Thirty failures from three addresses at one name: four rows, not thirty.
    for n in 0..30 {
        sign_in(&app, "ghost", "guess", 500 + n % 3).await;
    }
    assert_eq!(app.count("login_throttle").await, 4);

    // Both purge statements go through the age index, never a scan of the table.
    for sql in [db::throttle::PURGE_EXPIRED, db::throttle::PURGE_OVER_CAP] {
        let plan = query_plan(&app, sql).await;
        assert!(
            plan.iter().any(|d| d.contains("login_throttle_by_age")),
            "{sql}\n{plan:?}"
        );
        assert!(
            !plan.iter().any(|d| d == "SCAN login_throttle"),
            "{sql}\n{plan:?}"
        );
    }

    // A flooded table: fresh rows past the cap and expired ones.
    let now = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .unwrap()
        .as_millis() as i64;
    let cap = lockpoint::web::TRACKED_CAP;
    let batch = lockpoint::web::PURGE_BATCH;
    sqlx::query(
        "WITH RECURSIVE n(i) AS (SELECT 1 UNION ALL SELECT i + 1 FROM n WHERE i < ?)
         INSERT INTO login_throttle (key, failures, last_failure_ms)
         SELECT 'name:flood-' || i, 1, CASE WHEN i % 4 = 0 THEN ? - 86400000 ELSE ? - i END FROM n",
    )
    .bind(cap * 2)
    .bind(now)
    .bind(now)
    .execute(&app.pool)
    .await
    .unwrap();
    let flooded = app.count("login_throttle").await;
    assert_eq!(flooded, cap * 2 + 4);

    // A shop write goes through beside the flood.
    let token = app.token("sam").await;
    let made = app
        .post_json(
            "/api/v1/customers",
            &token,
            serde_json::json!({"name": "Harlan Voss"}),
        )
        .await;
    assert_eq!(made.status, StatusCode::CREATED, "{}", made.body);

    // Each purge step deletes one bounded batch, expired rows first, then the oldest past the
    // cap, until the cap is reached.
    let window_start = now - 15 * 60 * 1000;
    let mut conn = app.pool.acquire().await.unwrap();
    let first = db::throttle::purge_batch(&mut conn, window_start, cap, batch)
        .await
        .unwrap();
    assert_eq!(first as i64, batch);
    let expired_left: i64 =
        sqlx::query_scalar("SELECT COUNT(*) FROM login_throttle WHERE last_failure_ms < ?")
            .bind(window_start)
            .fetch_one(&mut *conn)
            .await
            .unwrap();
    assert_eq!(expired_left, cap * 2 / 4 - batch, "expired rows go first");
    let mut steps = 1;
    while db::throttle::purge_batch(&mut conn, window_start, cap, batch)
        .await
        .unwrap()
        > 0
    {
        steps += 1;
        assert!(steps < 1000);
    }
    assert_eq!(db::throttle::count(&mut conn).await.unwrap(), cap);
    // The newest rows are the ones kept.
    let kept_newest: i64 = sqlx::query_scalar(
        "SELECT COUNT(*) FROM login_throttle WHERE key IN ('name:ghost', 'name:flood-1')",
    )
    .fetch_one(&mut *conn)
    .await
    .unwrap();
    assert_eq!(kept_newest, 2);
}

/// The query plan of a statement, one line per step.
async fn query_plan(app: &TestApp, sql: &str) -> Vec<String> {
    use sqlx::Row;
    sqlx::query(sqlx::AssertSqlSafe(format!("EXPLAIN QUERY PLAN {sql}")))
        .bind(0_i64)
        .bind(0_i64)
        .fetch_all(&app.pool)
        .await
        .unwrap()
        .iter()
        .map(|row| row.get::<String, _>("detail"))
        .collect()
}

/// A password stored under older argon2id parameters (the argon2 crate's defaults, 19 MiB in
/// 2 passes, which made every hash before) still signs in, and the sign-in stores it again
/// under today's (7 MiB in 5 passes); a wrong password changes nothing.
#[tokio::test]
async fn a_password_hashed_with_older_parameters_is_hashed_again_at_sign_in() {
    use argon2::password_hash::PasswordHasher;
    let app = TestApp::new().await;
    let old = argon2::Argon2::default()
        .hash_password(PASSWORD.as_bytes())
        .unwrap()
        .to_string();
    assert!(old.starts_with("$argon2id$v=19$m=19456,t=2,p=1$"), "{old}");
    let stored = || async {
        let mut conn = app.pool.acquire().await.unwrap();
        db::users::by_name(&mut conn, "sam")
            .await
            .unwrap()
            .unwrap()
            .password_hash
    };
    {
        let mut conn = app.pool.acquire().await.unwrap();
        let sam = db::users::by_name(&mut conn, "sam").await.unwrap().unwrap();
        db::users::set_password(&mut conn, sam.id, &old)
            .await
            .unwrap();
    }
    let wrong = sign_in(&app, "sam", "not the password", 1).await;
    assert_eq!(wrong.status, StatusCode::UNAUTHORIZED);
    assert_eq!(stored().await, old, "a failed sign-in stores nothing");
    let right = sign_in(&app, "sam", PASSWORD, 2).await;
    assert_eq!(right.status, StatusCode::SEE_OTHER, "{}", right.body);
    assert!(right.headers.contains_key(header::SET_COOKIE), "signed in");
    let new = stored().await;
    assert!(new.starts_with("$argon2id$v=19$m=7168,t=5,p=1$"), "{new}");
    // The change is in the history under sam's own name (not whoever wrote last).
    let (who, table): (String, String) =
        sqlx::query_as("SELECT username, table_name FROM audit_log ORDER BY id DESC LIMIT 1")
            .fetch_one(&app.pool)
            .await
            .unwrap();
    assert_eq!((who.as_str(), table.as_str()), ("sam", "users"));
    let again = sign_in(&app, "sam", PASSWORD, 3).await;
    assert_eq!(again.status, StatusCode::SEE_OTHER);
    assert_eq!(stored().await, new, "a current hash is kept as it is");
}
