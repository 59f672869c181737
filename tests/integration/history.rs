//! Audit history: who changed what, before and after, written in the same transaction; the
//! build's History view; soft delete and restore of customers by an admin only.

use axum::http::StatusCode;
use serde_json::json;

use crate::support::{TestApp, id_from};

/// A customer with one build, recorded through the forms: (customer id, build id).
async fn customer_with_build(app: &TestApp) -> (String, i64) {
    let path = app.login("sam").await.record_build().await;
    let customer: i64 = sqlx::query_scalar("SELECT id FROM customers")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    (customer.to_string(), id_from(&path).parse().unwrap())
}

#[tokio::test]
async fn every_change_is_audited_with_who_and_before_and_after() {
    let app = TestApp::new().await;
    let (_, build) = customer_with_build(&app).await;
    let client = app.login("sam").await;
    let before: i64 = app.count("audit_log").await;
    client
        .post_saved(
            &format!("/builds/{build}/heights"),
            &[
                ("measured_on", "2026-11-02"),
                ("height", "1.905"),
                ("passes", "0"),
                ("shims_pulled", "0"),
            ],
        )
        .await;
    let (who, action, table, after): (String, String, String, String) = sqlx::query_as(
        "SELECT username, action, table_name, after FROM audit_log ORDER BY id DESC LIMIT 1",
    )
    .fetch_one(&app.pool)
    .await
    .unwrap();
    assert_eq!(
        (who.as_str(), action.as_str(), table.as_str()),
        ("sam", "create", "cover_heights")
    );
    let after: serde_json::Value = serde_json::from_str(&after).unwrap();
    assert!((after["height_mm"].as_f64().unwrap() - 48.387).abs() < 1e-9);
    assert_eq!(app.count("audit_log").await, before + 1);

    // A rejected form writes nothing, audit included.
    let bad = client
        .post(
            &format!("/builds/{build}/heights"),
            &[
                ("measured_on", "2026-11-03"),
                ("height", "-2"),
                ("passes", "1"),
            ],
        )
        .await;
    assert_eq!(bad.status, StatusCode::UNPROCESSABLE_ENTITY);
    assert_eq!(app.count("audit_log").await, before + 1);

    // An edit by the admin reads back in words on the History view.
    let admin = app.login("boss").await;
    admin
        .post_saved(
            &format!("/builds/{build}"),
            &[
                ("disc_count", "1"),
                ("facing_material", "organic"),
                ("facing_od", "10.5"),
                ("facing_id", "6.6"),
                ("spring_count", "6"),
                ("adjuster_tpi", "16"),
                ("shim_stack", "0.010"),
            ],
        )
        .await;
    let page = client.get_ok(&format!("/builds/{build}/history")).await;
    assert!(
        page.body.contains("changed the build&#39;s hardware")
            || page.body.contains("changed the build's hardware"),
        "{}",
        page.body
    );
    assert!(
        page.body
            .contains("Facing outer diameter: 10.400 in → 10.500 in")
    );
    page.assert_shows("boss");
    page.assert_shows("recorded a cover-height measurement");

    // API writes are attributed to the token's user.
    let token = app.token("sam").await;
    let r = app
        .post_json(
            &format!("/api/v1/builds/{build}/passes"),
            &token,
            json!({"run_on": "2026-11-09", "track": "North strip"}),
        )
        .await;
    assert_eq!(r.status, StatusCode::CREATED);
    let who: String =
        sqlx::query_scalar("SELECT username FROM audit_log WHERE table_name = 'passes'")
            .fetch_one(&app.pool)
            .await
            .unwrap();
    assert_eq!(who, "sam");
}

#[tokio::test]
async fn only_an_admin_deletes_and_restores_a_customer_and_nothing_is_erased() {
    let app = TestApp::new().await;
    let (customer, build) = customer_with_build(&app).await;
    let tech = app.login("sam").await;
    assert_eq!(
        tech.post(&format!("/customers/{customer}/delete"), &[])
            .await
            .status,
        StatusCode::FORBIDDEN
    );
    assert_eq!(
        tech.get("/customers/deleted").await.status,
        StatusCode::FORBIDDEN
    );

    let admin = app.login("boss").await;
    admin
        .post_saved(&format!("/customers/{customer}/delete"), &[])
        .await;
    assert_eq!(
        tech.get(&format!("/customers/{customer}")).await.status,
        StatusCode::NOT_FOUND
    );
    assert_eq!(
        tech.get(&format!("/builds/{build}")).await.status,
        StatusCode::NOT_FOUND
    );
    assert!(
        !tech
            .get("/customers?q=Avery")
            .await
            .body
            .contains("Avery Lindqvist")
    );
    assert!(
        admin
            .get("/customers/deleted")
            .await
            .body
            .contains("Avery Lindqvist")
    );
    assert_eq!(app.count("customers").await, 1, "soft delete keeps the row");
    assert_eq!(
        tech.post(&format!("/customers/{customer}/restore"), &[])
            .await
            .status,
        StatusCode::FORBIDDEN
    );

    admin
        .post_saved(&format!("/customers/{customer}/restore"), &[])
        .await;
    assert_eq!(
        tech.get(&format!("/builds/{build}")).await.status,
        StatusCode::OK
    );
    let actions: Vec<(String, String)> = sqlx::query_as(
        "SELECT username, json_extract(after, '$.deleted_at') IS NULL FROM audit_log
         WHERE table_name = 'customers' AND action = 'update' ORDER BY id",
    )
    .fetch_all(&app.pool)
    .await
    .unwrap()
    .into_iter()
    .map(|(u, restored): (String, bool)| {
        (
            u,
            if restored {
                "restore".into()
            } else {
                "delete".into()
            },
        )
    })
    .collect();
    assert_eq!(
        actions,
        vec![
            ("boss".to_string(), "delete".to_string()),
            ("boss".to_string(), "restore".to_string())
        ]
    );
}
