//! The pages' synchronous read of a build (`db::read`) against the read every write's
//! transaction uses (`db::dossier::load`, through sqlx): the same records, to the last bit.

use lockpoint::db;
use lockpoint::records::pass::PassInput;

use crate::support::TestApp;

/// Every build of the demo shop, a build of a customer put in the bin and a build that does
/// not exist, read both ways.
#[tokio::test]
async fn the_pages_read_every_dossier_as_the_writes_read_it() {
    let app = TestApp::demo().await;
    let mut conn = app.pool.acquire().await.unwrap();
    let ids: Vec<i64> = sqlx::query_scalar("SELECT id FROM builds ORDER BY id")
        .fetch_all(&mut *conn)
        .await
        .unwrap();
    assert!(ids.len() >= 3, "the demo shop has builds: {ids:?}");
    // One build with more passes than a dossier loads, so that the count is compared too:
    // its first pass copied, a day apart each.
    let columns: Vec<&str> = lockpoint::records::field::columns::<PassInput>()
        .filter(|c| *c != "run_on")
        .collect();
    let copied = columns.join(", ");
    sqlx::query(sqlx::AssertSqlSafe(format!(
        "WITH RECURSIVE n(k) AS (SELECT 1 UNION ALL SELECT k + 1 FROM n WHERE k < ?2)
         INSERT INTO passes (build_id, user_id, run_on, {copied})
         SELECT p.build_id, p.user_id, date('2020-01-01', '+' || n.k || ' days'), {copied}
         FROM passes p, n WHERE p.id = (SELECT min(id) FROM passes WHERE build_id = ?1)"
    )))
    .bind(ids[0])
    .bind(db::dossier::PASSES_LOADED as i64)
    .execute(&mut *conn)
    .await
    .unwrap();
    // A customer in the bin: their builds are not read.
    sqlx::query(
        "UPDATE customers SET deleted_at = '2026-12-01T00:00:00Z'
         WHERE id = (SELECT k.customer_id FROM cars k JOIN builds b ON b.car_id = k.id
                     WHERE b.id = ?)",
    )
    .bind(ids[ids.len() - 1])
    .execute(&mut *conn)
    .await
    .unwrap();
    let live: i64 = sqlx::query_scalar(
        "SELECT COUNT(*) FROM builds b JOIN cars k ON k.id = b.car_id
         JOIN customers c ON c.id = k.customer_id WHERE c.deleted_at IS NULL",
    )
    .fetch_one(&mut *conn)
    .await
    .unwrap();
    assert!(live < ids.len() as i64);
    let mut compared = 0;
    let mut long = false;
    // How many of the compared dossiers hold each kind of record: every kind is compared.
    let mut held = [0; 6];
    for id in ids.iter().copied().chain([i64::MAX]) {
        let by_sqlx = db::dossier::load(&mut conn, id).await.unwrap();
        let by_read = app.state.reader.dossier(id).await.unwrap();
        assert_eq!(
            format!("{by_read:#?}"),
            format!("{by_sqlx:#?}"),
            "build {id} read two ways"
        );
        if let Some(d) = by_read {
            compared += 1;
            long |= d.passes_total > d.passes.len() as i64;
            let kinds = [
                d.setups.len(),
                d.bench.iter().map(|t| t.springs.len()).sum(),
                d.heights.len(),
                d.passes.len(),
                d.logs.len(),
                d.launch_fits.len(),
            ];
            for (n, k) in held.iter_mut().zip(kinds) {
                *n += usize::from(k > 0);
            }
        }
    }
    assert_eq!(
        compared, live,
        "the binned customer's builds are gone both ways"
    );
    assert!(
        long,
        "a build with more passes than are loaded was compared"
    );
    assert!(
        held.iter().all(|&n| n > 0),
        "setups, bench springs, heights, passes, logs, fits: {held:?}"
    );
}

/// What the build page reads beside the dossier, in the same read: the shop's settings as the
/// writes read them (after an edit to units and time zone), and the build's sheets newest
/// first, with who printed each and its live links (a withdrawn link not counted).
#[tokio::test]
async fn the_build_page_reads_the_settings_and_sheets_as_stored() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let id: i64 = crate::support::id_from(&client.record_build().await)
        .parse()
        .unwrap();
    let mut conn = app.pool.acquire().await.unwrap();
    sqlx::query(
        "UPDATE shop_settings SET units = 'metric', time_zone = 'Europe/Oslo' WHERE id = 1",
    )
    .execute(&mut *conn)
    .await
    .unwrap();
    let mut sheets = Vec::new();
    for _ in 0..3 {
        let made = client.post(&format!("/builds/{id}/sheets"), &[]).await;
        sheets.push(made.location().to_string());
    }
    // Two links on the newest sheet, one on the first; then the first's withdrawn.
    for (sheet, days) in [(&sheets[2], "14"), (&sheets[2], "7"), (&sheets[0], "14")] {
        client.new_link(sheet, days).await;
    }
    sqlx::query(
        "UPDATE sheet_links SET revoked_at = '2026-12-01T00:00:00Z'
         WHERE sheet_id = (SELECT min(id) FROM sheets WHERE build_id = ?)",
    )
    .bind(id)
    .execute(&mut *conn)
    .await
    .unwrap();
    let (d, settings, listed) = (app.state.reader)
        .read(move |conn| db::read::build_page(conn, id, |conn| db::read::sheets(conn, id)))
        .await
        .unwrap()
        .expect("the build is there");
    assert_eq!(d.build.id, id);
    assert_eq!(settings, db::settings::get(&mut conn).await.unwrap());
    assert_eq!(
        (settings.units.as_str(), settings.time_zone.as_str()),
        ("metric", "Europe/Oslo")
    );
    let ids: Vec<String> = sheets
        .iter()
        .rev()
        .map(|s| crate::support::id_from(s).to_string())
        .collect();
    let got: Vec<(String, &str, i64)> = listed
        .iter()
        .map(|s| (s.id.to_string(), s.prepared_by.as_str(), s.live_links))
        .collect();
    assert_eq!(
        got,
        vec![
            (ids[0].clone(), "sam", 2),
            (ids[1].clone(), "sam", 0),
            (ids[2].clone(), "sam", 0)
        ]
    );
    assert!(
        (app.state.reader)
            .read(|conn| db::read::build_page(conn, i64::MAX, |_| Ok(())))
            .await
            .unwrap()
            .is_none()
    );
}
