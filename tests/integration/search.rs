//! Customer search through the FTS5 trigram index: what it finds, kept in step by the triggers,
//! ranked, and linking to the cars and active builds.

use axum::http::StatusCode;
use lockpoint::{db, status};
use serde_json::json;

use crate::support::TestApp;

#[tokio::test]
async fn the_bundled_sqlite_has_fts5_with_the_trigram_tokenizer() {
    let app = TestApp::new().await;
    let fts5: i64 = sqlx::query_scalar("SELECT sqlite_compileoption_used('ENABLE_FTS5')")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    assert_eq!(fts5, 1);
    let mut conn = app.pool.acquire().await.unwrap();
    sqlx::query("CREATE VIRTUAL TABLE temp.t USING fts5 (x, tokenize = 'trigram')")
        .execute(&mut *conn)
        .await
        .unwrap();
    sqlx::query("INSERT INTO temp.t (x) VALUES ('Halvorsen')")
        .execute(&mut *conn)
        .await
        .unwrap();
    let hits: i64 = sqlx::query_scalar("SELECT COUNT(*) FROM temp.t WHERE t MATCH 'lvor'")
        .fetch_one(&mut *conn)
        .await
        .unwrap();
    assert_eq!(hits, 1);
}

/// A customer with a car and two builds (one retired); returns (customer, car, active build,
/// retired build) ids and the token.
async fn customer(app: &TestApp) -> (i64, i64, i64, i64, String) {
    let token = app.token("sam").await;
    let t = Some(token.as_str());
    let car = app
        .api_car(
            t,
            json!({"name": "Odile Rask", "phone": "555-0190", "email": "odile@example.test"}),
            json!({"description": "two-door, 7.2 L V8, 4-speed", "engine": "tunnel-ram big block"}),
        )
        .await;
    let build = |label: &str, status: &str| {
        json!({"label": label, "disc_count": 1, "facing_material": "organic", "facing_od_mm": 264.0,
               "facing_id_mm": 168.0, "spring_count": 6, "spring_rate_n_per_mm": 68.0,
               "status": status})
    };
    let path = format!("/api/v1/cars/{}/builds", car["id"]);
    let active = app
        .api_answers(
            StatusCode::CREATED,
            "POST",
            &path,
            t,
            Some(build("Bracket twin", "active")),
        )
        .await;
    let retired = app
        .api("POST", &path, t, Some(build("Old single", "retired")))
        .await;
    (
        car["customer_id"].as_i64().unwrap(),
        car["id"].as_i64().unwrap(),
        active.json()["id"].as_i64().unwrap(),
        retired.json()["id"].as_i64().unwrap(),
        token,
    )
}

#[tokio::test]
async fn a_phone_is_found_by_its_digits_however_they_are_written() {
    let app = TestApp::new().await;
    customer(&app).await;
    let client = app.login("sam").await;
    for q in ["5550190", "(555) 0190", "555-0190", "0190", "555 0190"] {
        let page = client
            .get(&format!("/customers?q={}", urlencode(q)))
            .await
            .body;
        assert!(page.contains("Odile Rask"), "{q:?} finds the customer");
    }
    for q in ["5550191", "odile@example.com"] {
        let page = client
            .get(&format!("/customers?q={}", urlencode(q)))
            .await
            .body;
        assert!(!page.contains("Odile Rask"), "{q:?} finds nobody");
    }
}

#[tokio::test]
async fn name_email_car_and_engine_are_found_and_the_result_links_to_cars_and_active_builds() {
    let app = TestApp::new().await;
    let (_, car, active, retired, _) = customer(&app).await;
    let client = app.login("sam").await;
    for q in [
        "rask",
        "ODILE",
        "example.test",
        "7.2 L V8",
        "tunnel-ram",
        "Odile big block",
    ] {
        let front = client.get(&format!("/?q={}", urlencode(q))).await.body;
        let page = finder(&front);
        assert!(page.contains("Odile Rask"), "{q:?} finds the customer");
        assert!(
            page.contains(&format!("href=\"/cars/{car}\"")),
            "{q:?}: car link"
        );
        assert!(
            page.contains(&format!("href=\"/builds/{active}\"")),
            "{q:?}: build link"
        );
        assert!(
            !page.contains(&format!("href=\"/builds/{retired}\"")),
            "{q:?}: retired"
        );
    }
    let front = client.get("/?q=Odile+nobody").await.body;
    assert!(
        !finder(&front).contains("Odile Rask"),
        "every word must match"
    );
}

#[tokio::test]
async fn the_index_follows_edits_new_cars_deletes_and_restores() {
    let app = TestApp::new().await;
    let (id, _, _, _, token) = customer(&app).await;
    let t = Some(token.as_str());
    let client = app.login("sam").await;
    let admin = app.login("boss").await;
    let finds = |q: &'static str| {
        let client = &client;
        async move {
            client
                .get(&format!("/customers?q={q}"))
                .await
                .body
                .contains("Odile")
        }
    };
    app.api_answers(
        StatusCode::OK,
        "PUT",
        &format!("/api/v1/customers/{id}"),
        t,
        Some(json!({"name": "Odile Raskova", "phone": "555-0777"})),
    )
    .await;
    assert!(finds("Raskova").await && finds("5550777").await);
    assert!(
        !finds("5550190").await,
        "the old phone is gone from the index"
    );
    app.api(
        "POST",
        &format!("/api/v1/customers/{id}/cars"),
        t,
        Some(json!({"description": "roadster, 5.0 L inline-six, 5-speed"})),
    )
    .await;
    assert!(finds("inline-six").await && finds("tunnel-ram").await);
    admin.post(&format!("/customers/{id}/delete"), &[]).await;
    assert!(!finds("Raskova").await, "a deleted customer is not found");
    admin.post(&format!("/customers/{id}/restore"), &[]).await;
    assert!(finds("Raskova").await, "a restored customer is found again");
}

#[tokio::test]
async fn the_better_match_comes_first_and_a_rebuild_restores_an_emptied_index() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    for (name, email) in [
        (
            "Torvald Raskin-Brennemark",
            "torvald.raskin.brennemark@long-domain.example.test",
        ),
        ("Odile Rask", ""),
    ] {
        app.post_json(
            "/api/v1/customers",
            &token,
            json!({"name": name, "email": email}),
        )
        .await;
    }
    let mut conn = app.pool.acquire().await.unwrap();
    let search = || {
        app.state
            .reader
            .search("rask", 0, db::customers::Order::Best)
    };
    let (rows, total) = search().await.unwrap();
    assert_eq!(total, 2);
    assert_eq!(
        rows[0].name, "Odile Rask",
        "the shorter name holding the word ranks first"
    );

    // A customer found only by a car ranks after every name that holds the word, however
    // short their own name; a name holding one of two words ranks after the one holding both.
    let bo = app
        .post_json("/api/v1/customers", &token, json!({"name": "Bo Li"}))
        .await
        .json();
    app.post_json(
        &format!("/api/v1/customers/{}/cars", bo["id"]),
        &token,
        json!({"description": "raskly built roadster"}),
    )
    .await;
    let (rows, _) = search().await.unwrap();
    let names: Vec<&str> = rows.iter().map(|r| r.name.as_str()).collect();
    assert_eq!(names, ["Odile Rask", "Torvald Raskin-Brennemark", "Bo Li"]);
    let (rows, _) = app
        .state
        .reader
        .search("rask odile", 0, db::customers::Order::Best)
        .await
        .unwrap();
    assert_eq!(rows[0].name, "Odile Rask", "both words in the name");
    // By last name the same hits sort by their last word alone.
    let (rows, _) = app
        .state
        .reader
        .search("rask", 0, db::customers::Order::LastName)
        .await
        .unwrap();
    let names: Vec<&str> = rows.iter().map(|r| r.name.as_str()).collect();
    assert_eq!(names, ["Bo Li", "Odile Rask", "Torvald Raskin-Brennemark"]);

    sqlx::query("DELETE FROM customer_search")
        .execute(&mut *conn)
        .await
        .unwrap();
    assert_eq!(search().await.unwrap().1, 0);
    status::rebuild_derived(&mut conn).await.unwrap();
    assert_eq!(search().await.unwrap().1, 3);
}

#[test]
fn short_queries_fall_back_and_quotes_cannot_break_the_expression() {
    use lockpoint::db::search::match_expr;
    assert_eq!(match_expr("ab"), None);
    assert_eq!(match_expr("  "), None);
    assert_eq!(match_expr("a\"b\"c").as_deref(), Some("\"a\"\"b\"\"c\""));
    assert_eq!(
        match_expr("(555) 0190").as_deref(),
        Some("((\"(555)\" OR phone : \"555\") AND \"0190\") OR phone : \"5550190\"")
    );
    // One word finds the phone by itself: no second, redundant look-up of the same digits.
    assert_eq!(match_expr("5550190").as_deref(), Some("\"5550190\""));
    assert_eq!(
        match_expr("555-0190").as_deref(),
        Some("(\"555-0190\" OR phone : \"5550190\")")
    );
}

/// The counter page's finder and its results only (the recent-activity feed names customers and
/// links to every new build).
fn finder(front: &str) -> &str {
    let start = front.find("class=\"finder\"").expect("the finder");
    &front[start..start + front[start..].find("</section>").unwrap()]
}

fn urlencode(q: &str) -> String {
    form_urlencoded::byte_serialize(q.as_bytes()).collect()
}

/// How many segments the search index is made of, from its structure record (row 10 of
/// `customer_search_data`): a 4-byte cookie, the 4-byte marker FF 00 00 01 in SQLite's newer
/// record version, then the number of levels and the number of segments as varints. Layout
/// from the "Structure record" notes at the top of SQLite's `fts5_index.c` (from memory,
/// checked against the bundled SQLite's records: six segments before an `optimize`, one after).
async fn segments(conn: &mut sqlx::SqliteConnection) -> u8 {
    let record: Vec<u8> =
        sqlx::query_scalar("SELECT block FROM customer_search_data WHERE id = 10")
            .fetch_one(conn)
            .await
            .unwrap();
    let at = if record[4..8] == [0xFF, 0, 0, 1] {
        8
    } else {
        4
    };
    // Counts under 128 are one byte each.
    assert!(record[at] < 0x80 && record[at + 1] < 0x80);
    record[at + 1]
}

#[tokio::test]
async fn the_search_index_is_merged_into_one_segment_at_start_and_finds_as_before() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    // Each customer its own write, so its own small segment until FTS5 merges some.
    for i in 0..12 {
        app.post_json(
            "/api/v1/customers",
            &token,
            json!({"name": format!("Merle Quistorp {i}"), "phone": format!("555-07{i:02}")}),
        )
        .await;
    }
    let mut conn = app.pool.acquire().await.unwrap();
    let before = segments(&mut conn).await;
    assert!(before > 1, "the writes left {before} segment(s)");
    let quist = || {
        app.state
            .reader
            .search("quistorp", 0, db::customers::Order::Best)
    };
    let (found, total) = quist().await.unwrap();
    status::ensure(&mut conn).await.unwrap();
    assert_eq!(segments(&mut conn).await, 1);
    let (again, total_again) = quist().await.unwrap();
    assert_eq!((total, total_again), (12, 12));
    let ids =
        |rows: &[db::customers::CustomerSummary]| rows.iter().map(|r| r.id).collect::<Vec<_>>();
    assert_eq!(
        ids(&found),
        ids(&again),
        "the same customers in the same order"
    );
    let (_, by_phone) = app
        .state
        .reader
        .search("5550711", 0, db::customers::Order::Best)
        .await
        .unwrap();
    assert_eq!(by_phone, 1);
}
