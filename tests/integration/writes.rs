//! Writers queue in order: while one write transaction is open, later writes wait in the order
//! they came, without holding the pool's connections, so the pages keep answering.

use std::time::Duration;

use lockpoint::db;
use lockpoint::records::user::Role;
use lockpoint::web::http::extract::CurrentUser;
use serde_json::json;

use crate::support::TestApp;

/// More writers than the pool has connections (`db::POOL_SIZE`).
const WRITERS: usize = db::POOL_SIZE as usize + 2;

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn writers_wait_their_turn_in_order_and_leave_the_pool_to_readers() {
    let app = TestApp::new().await;
    let client = app.login("boss").await;
    let build = client.record_build().await;
    let passes = format!("/api/v1{build}/passes");
    let token = app.token("boss").await;

    // One write transaction held open, as a slow save would.
    let boss = CurrentUser {
        id: 1,
        username: "boss".into(),
        role: Role::Admin,
        csrf: String::new(),
    };
    let held = app
        .state
        .write(&boss)
        .await
        .expect("the first writer begins");

    // Writers arrive one after another, each with its own track name to find its row by.
    let mut waiting = Vec::new();
    for i in 0..WRITERS {
        let (router, passes, token) = (app.router.clone(), passes.clone(), token.clone());
        waiting.push(tokio::spawn(async move {
            let req = axum::http::Request::post(&passes)
                .header("Authorization", format!("Bearer {token}"))
                .header("Content-Type", "application/json")
                .body(axum::body::Body::from(
                    json!({"run_on": "2026-11-20", "track": format!("writer {i}"), "launch_rpm": 4500})
                        .to_string(),
                ))
                .unwrap();
            tower::ServiceExt::oneshot(router, req).await.unwrap().status()
        }));
        // Long enough for the request to reach the queue before the next one starts.
        tokio::time::sleep(Duration::from_millis(30)).await;
    }

    // A reader still gets a connection and its page while every writer waits (a deadlock
    // detector, not a speed target: without the queue the waiting writers hold all the pool's
    // connections and the page waits for the pool's own 30 s timeout).
    let page = tokio::time::timeout(Duration::from_secs(10), client.get(&build))
        .await
        .expect("the page answers while writers wait");
    assert_eq!(page.status, 200);
    assert!(
        waiting.iter().all(|w| !w.is_finished()),
        "no writer went before the open one"
    );

    drop(held);
    for w in waiting {
        assert_eq!(w.await.unwrap(), 201);
    }
    // The passes were stored in the order their writers arrived.
    let tracks: Vec<String> =
        sqlx::query_scalar("SELECT track FROM passes WHERE track LIKE 'writer %' ORDER BY id")
            .fetch_all(&app.pool)
            .await
            .unwrap();
    let arrived: Vec<String> = (0..WRITERS).map(|i| format!("writer {i}")).collect();
    assert_eq!(tracks, arrived);
}
