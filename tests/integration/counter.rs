//! At the counter: the build page says what its figures assume.

use axum::http::StatusCode;

use crate::support::TestApp;

#[tokio::test]
async fn a_build_without_a_setup_says_its_figures_assume_zero_turns_and_grams() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    let note = "No setup recorded: these figures assume 0 turns and 0 g per lever.";
    let before = client.get(&build).await;
    assert!(before.body.contains(note));
    let saved = client
        .post(
            &format!("{build}/setups"),
            &[
                ("changed_on", "2026-11-02"),
                ("adjuster_turns", "1.5"),
                ("counterweight_g", "24"),
            ],
        )
        .await;
    assert_eq!(saved.status, StatusCode::SEE_OTHER);
    assert!(!client.get(&build).await.body.contains(note));
}
