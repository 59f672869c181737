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
