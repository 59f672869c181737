//! At the counter: the build page says what its figures assume.

use crate::support::TestApp;

#[tokio::test]
async fn a_build_without_a_setup_says_its_figures_assume_zero_turns_and_grams() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let build = client.record_build().await;
    let note = "No setup recorded: these figures assume 0 turns and 0 g per lever.";
    let before = client.get(&build).await;
    before.assert_shows(note);
    client.record_setup(&build, "2026-11-02", "1.5", "24").await;
    assert!(!client.get(&build).await.body.contains(note));
}

#[tokio::test]
async fn a_pasted_dyno_export_with_a_header_and_three_columns_is_taken_as_it_is() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let c = client.post("/customers", &[("name", "Jo Tarrant")]).await;
    let customer = crate::support::id_from(c.location());
    let export = "Power (hp)\tRPM\tTorque (lbf·ft)\n234\t3000\t410\n346\t4000\t455\n457\t5000\t480";
    client
        .post_saved(
            &format!("/customers/{customer}/cars"),
            &[
                ("description", "two-door, 6.4 L V8"),
                ("torque_curve", export),
            ],
        )
        .await;
    let stored: String = sqlx::query_scalar("SELECT torque_curve_nm FROM cars")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    let curve: Vec<[f64; 2]> = serde_json::from_str(&stored).unwrap();
    assert_eq!(curve.len(), 3);
    assert_eq!(curve[0][0], 3000.0);
    // 410 lbf·ft = 555.885 N·m (1 lbf·ft = 1.3558179483314004 N·m, NIST SP 811 App. B.8)
    assert!((curve[0][1] - 410.0 * 1.3558179483314004).abs() < 1e-9);
}
