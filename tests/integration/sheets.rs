//! Setup sheets: a stored snapshot that reprints as it was, and the customer's read-only link.

use axum::http::{StatusCode, header};

use crate::support::{PASSWORD, TestApp, id_from};

/// A build recorded through the forms with a setup and a first cover height.
async fn demo_build(app: &TestApp) -> i64 {
    let client = app.login("sam").await;
    let path = client.record_build().await;
    let id: i64 = id_from(&path).parse().unwrap();
    client
        .post(
            &format!("/builds/{id}/setups"),
            &[
                ("changed_on", "2026-11-02"),
                ("adjuster_turns", "1.5"),
                ("counterweight_g", "24"),
            ],
        )
        .await;
    client
        .post(
            &format!("/builds/{id}/heights"),
            &[
                ("measured_on", "2026-11-02"),
                ("height", "1.905"),
                ("passes", "0"),
                ("shims_pulled", "0"),
            ],
        )
        .await;
    id
}

#[tokio::test]
async fn a_printed_sheet_keeps_its_figures_after_the_build_changes() {
    let app = TestApp::new().await;
    let id = demo_build(&app).await;
    let client = app.login("sam").await;
    let made = client
        .post_saved(
            &format!("/builds/{id}/sheets"),
            &[("target_lockup", "5600")],
        )
        .await;
    let sheet_path = made.location().to_string();
    let first = client.get_ok(&sheet_path).await;
    for text in [
        "Clutch setup sheet",
        "Avery Lindqvist",
        "1.5 turns",
        "24.0 g per lever",
        "Lockup speed",
        "Target:",
        "Safety",
        "sanctioning body",
        "springs are loaded",
        "estimates",
    ] {
        assert!(first.body.contains(text), "sheet shows {text:?}");
    }
    // The build changes afterwards; the printed sheet does not.
    client
        .post(
            &format!("/builds/{id}/setups"),
            &[
                ("changed_on", "2026-11-20"),
                ("adjuster_turns", "3"),
                ("counterweight_g", "40"),
            ],
        )
        .await;
    let again = client.get(&sheet_path).await;
    assert_eq!(
        first.body, again.body,
        "reprint matches the original exactly"
    );
    let second = client.post(&format!("/builds/{id}/sheets"), &[]).await;
    let fresh = client.get(second.location()).await;
    assert!(fresh.body.contains("3 turns") && fresh.body.contains("40.0 g per lever"));
    assert_eq!(app.count("sheets").await, 2);
    let bad = client
        .post(
            &format!("/builds/{id}/sheets"),
            &[("target_lockup", "fast")],
        )
        .await;
    assert_eq!(bad.status, StatusCode::UNPROCESSABLE_ENTITY);
    assert_eq!(app.count("sheets").await, 2);
}

#[tokio::test]
async fn the_customer_link_shows_one_sheet_without_login_until_it_is_withdrawn() {
    let app = TestApp::new().await;
    let id = demo_build(&app).await;
    let client = app.login("sam").await;
    let sheet = client
        .post(&format!("/builds/{id}/sheets"), &[])
        .await
        .location()
        .to_string();
    let sheet_id = id_from(&sheet);
    let made = client.new_link(&sheet, "14").await;
    assert_eq!(made.status, StatusCode::OK);
    let link = crate::support::link_in(&made.body);
    assert_eq!(link.len(), 3 + 64);

    let public = app.get_ok(&link, None).await;
    assert!(public.body.contains("Avery Lindqvist") && public.body.contains("Clutch setup sheet"));
    for staff_only in [
        "/customers",
        "/logout",
        "_csrf",
        "Customer link",
        "Back to the build",
    ] {
        assert!(
            !public.body.contains(staff_only),
            "the public sheet must not show {staff_only:?}"
        );
    }
    assert_eq!(
        app.get(&sheet, None).await.status,
        StatusCode::SEE_OTHER,
        "the shop's copy needs a login"
    );
    assert_eq!(
        app.get(
            "/s/0123456789abcdef0123456789abcdef0123456789abcdef0123456789abcdef",
            None
        )
        .await
        .status,
        StatusCode::NOT_FOUND
    );
    assert_eq!(
        app.get("/s/not-a-link", None).await.status,
        StatusCode::NOT_FOUND
    );

    let link_id: i64 = sqlx::query_scalar("SELECT id FROM sheet_links WHERE sheet_id = ?")
        .bind(sheet_id.parse::<i64>().unwrap())
        .fetch_one(&app.pool)
        .await
        .unwrap();
    client
        .post_saved(&format!("/links/{link_id}/revoke"), &[])
        .await;
    let gone = app.get(&link, None).await;
    assert_eq!(gone.status, StatusCode::GONE);
    gone.assert_shows("withdrawn");
    assert!(!gone.body.contains("Avery Lindqvist"));

    // An expired link is gone too.
    let again = client.new_link(&sheet, "1").await;
    let link2 = crate::support::link_in(&again.body);
    sqlx::query(
        "UPDATE sheet_links SET expires_at = '2000-01-01T00:00:00Z' WHERE revoked_at IS NULL",
    )
    .execute(&app.pool)
    .await
    .unwrap();
    assert_eq!(app.get(&link2, None).await.status, StatusCode::GONE);
    let bad_days = client
        .post(&format!("{sheet}/links"), &[("valid_days", "0")])
        .await;
    assert_eq!(bad_days.status, StatusCode::UNPROCESSABLE_ENTITY);
}

/// A sheet printed by an earlier release (its stored snapshot and the page its customer link
/// showed then, both kept under `tests/fixtures/`) reprints byte for byte: stored sheets never
/// change when the code around them does. A deliberate change of the sheet's layout for every
/// sheet, old ones included, replaces the HTML fixture in the same commit and says so.
#[tokio::test]
async fn a_sheet_printed_by_an_earlier_release_reprints_byte_for_byte() {
    let app = TestApp::new().await;
    let id = demo_build(&app).await;
    let snapshot = include_str!("../fixtures/sheet-printed-2026-12.json");
    let printed = include_str!("../fixtures/sheet-printed-2026-12.html");
    let sheet: i64 = sqlx::query_scalar(
        "INSERT INTO sheets (build_id, prepared_by, prepared_on, inputs)
         VALUES (?, (SELECT id FROM users WHERE username = 'sam'), '2026-12-02', ?) RETURNING id",
    )
    .bind(id)
    .bind(snapshot)
    .fetch_one(&app.pool)
    .await
    .unwrap();
    let client = app.login("sam").await;
    let made = client.new_link(&format!("/sheets/{sheet}"), "14").await;
    let start = made.body.find("/s/").expect("link shown");
    let link: String = made.body[start..]
        .chars()
        .take_while(|c| c.is_ascii_alphanumeric() || matches!(c, '/' | '_' | '-'))
        .collect();
    let page = app.get_ok(&link, None).await;
    if page.body != printed {
        std::fs::write(std::env::temp_dir().join("reprint.html"), &page.body).ok();
    }
    assert!(
        page.body == printed,
        "the reprint differs from the printed sheet"
    );
}

/// Prints a sheet of a new build, makes a customer link and returns the link's address as shown.
async fn customer_link(app: &TestApp) -> String {
    let id = demo_build(app).await;
    let client = app.login("sam").await;
    let sheet = client
        .post(&format!("/builds/{id}/sheets"), &[])
        .await
        .location()
        .to_string();
    let made = client.new_link(&sheet, "14").await;
    assert_eq!(made.status, StatusCode::OK, "{}", made.body);
    let start = made.body.find("/s/").expect("link shown");
    let begin = made.body[..start].rfind('>').map_or(start, |i| i + 1);
    made.body[begin..]
        .chars()
        .take_while(|c| *c != '<')
        .collect()
}

#[tokio::test]
async fn the_customer_link_page_sends_no_referrer_and_is_not_cached() {
    let app = TestApp::new().await;
    let link = customer_link(&app).await;
    let path = &link[link.find("/s/").unwrap()..];
    let public = app.get_ok(path, None).await;
    assert_eq!(public.headers[header::REFERRER_POLICY], "no-referrer");
    assert_eq!(public.headers[header::CACHE_CONTROL], "no-store");
    // Other pages keep the site-wide policy.
    let login = app.get("/login", None).await;
    assert_eq!(login.headers[header::REFERRER_POLICY], "same-origin");
}

#[tokio::test]
async fn with_a_public_url_links_use_it_and_the_session_cookie_is_secure() {
    let app = TestApp::reached_at(Some("https://clutch.shop.example/")).await;
    let link = customer_link(&app).await;
    assert!(
        link.starts_with("https://clutch.shop.example/s/")
            && link.len() == "https://clutch.shop.example/s/".len() + 64,
        "{link}"
    );
    let reply = app.post_login("sam", PASSWORD, None).await;
    let cookie = reply.headers[header::SET_COOKIE].to_str().unwrap();
    assert!(cookie.contains("; Secure"), "{cookie}");

    // Without one (or with plain http) the link follows the Host header and the cookie must
    // work over http.
    for app in [
        TestApp::new().await,
        TestApp::reached_at(Some("http://10.0.0.5:3000")).await,
    ] {
        let reply = app.post_login("sam", PASSWORD, None).await;
        let cookie = reply.headers[header::SET_COOKIE].to_str().unwrap();
        assert!(!cookie.contains("Secure"), "{cookie}");
    }
    let plain = TestApp::reached_at(Some("http://10.0.0.5:3000")).await;
    let link = customer_link(&plain).await;
    assert!(link.starts_with("http://10.0.0.5:3000/s/"), "{link}");
}

#[tokio::test]
async fn the_customer_sees_a_display_name_or_the_shops_name_never_a_login_name() {
    let app = TestApp::new().await;
    let link = customer_link(&app).await;
    let path = link[link.find("/s/").unwrap()..].to_string();
    let public = app.get(&path, None).await;
    public.assert_shows("prepared by My clutch shop");
    assert!(!public.body.contains("prepared by sam"));

    // An admin gives the tech a display name; it shows on new sheets and on the old link.
    let boss = app.login("boss").await;
    let sam_id: i64 = sqlx::query_scalar("SELECT id FROM users WHERE username = 'sam'")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    boss.post_saved(
        &format!("/users/{sam_id}/display-name"),
        &[("display_name", "Counter <staff>")],
    )
    .await;
    let too_long = boss
        .post(
            &format!("/users/{sam_id}/display-name"),
            &[("display_name", &"x".repeat(61))],
        )
        .await;
    assert_eq!(too_long.status, StatusCode::UNPROCESSABLE_ENTITY);
    let newer = customer_link(&app).await;
    let public = app.get(&newer[newer.find("/s/").unwrap()..], None).await;
    assert!(
        public.body.contains("prepared by Counter &lt;staff&gt;")
            || public.body.contains("prepared by Counter &#60;staff&#62;"),
        "{}",
        public.body
    );
    // A sheet stored with the login name (before display names) is shown with the new name.
    sqlx::query("UPDATE sheets SET inputs = json_set(inputs, '$.prepared_by', 'sam')")
        .execute(&app.pool)
        .await
        .unwrap();
    let old = app.get(&path, None).await;
    assert!(!old.body.contains("prepared by sam"), "{}", old.body);
    old.assert_shows("prepared by Counter");
    // A tech may not change it.
    let sam = app.login("sam").await;
    let refused = sam
        .post(
            &format!("/users/{sam_id}/display-name"),
            &[("display_name", "Chief")],
        )
        .await;
    assert_eq!(refused.status, StatusCode::FORBIDDEN);
}
