//! Who gets in: sign-in, sessions, CSRF, API tokens, roles.

use axum::body::Body;
use axum::http::{Request, StatusCode, header};

use crate::support::{PASSWORD, TestApp, form_encode};

#[tokio::test]
async fn a_page_without_login_redirects_to_the_login_page() {
    let app = TestApp::new().await;
    let reply = app.get("/customers?q=x", None).await;
    assert_eq!(reply.status, StatusCode::SEE_OTHER);
    assert_eq!(reply.location(), "/login?next=%2Fcustomers%3Fq%3Dx");
    assert_eq!(app.get("/healthz", None).await.status, StatusCode::OK);
    assert_eq!(app.get("/login", None).await.status, StatusCode::OK);
}

#[tokio::test]
async fn signing_in_sets_a_safe_cookie_and_signing_out_ends_the_session() {
    let app = TestApp::new().await;
    let reply = app.post_login("sam", PASSWORD, Some("/customers")).await;
    assert_eq!(reply.status, StatusCode::SEE_OTHER);
    assert_eq!(reply.location(), "/customers");
    let cookie = reply
        .headers
        .get(header::SET_COOKIE)
        .unwrap()
        .to_str()
        .unwrap();
    assert!(cookie.contains("HttpOnly"), "{cookie}");
    assert!(cookie.contains("SameSite=Lax"), "{cookie}");

    let client = app.login("sam").await;
    assert_eq!(client.get("/customers").await.status, StatusCode::OK);
    client.post_saved("/logout", &[]).await;
    assert_eq!(
        client.get("/customers").await.status,
        StatusCode::SEE_OTHER,
        "session must be gone"
    );
}

#[tokio::test]
async fn a_wrong_password_is_refused_and_counted() {
    let app = TestApp::new().await;
    let reply = app.post_login("sam", "not-the-password", None).await;
    assert_eq!(reply.status, StatusCode::UNAUTHORIZED);
    reply.assert_shows("do not match");
    assert!(reply.headers.get(header::SET_COOKIE).is_none());
    // Counted once against the client and once against the name.
    assert_eq!(app.count("login_throttle").await, 2);
}

#[tokio::test]
async fn passwords_are_stored_as_argon2id_hashes() {
    let app = TestApp::new().await;
    let hash: String = sqlx::query_scalar("SELECT password_hash FROM users WHERE username = 'sam'")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    assert!(hash.starts_with("$argon2id$"), "{hash}");
    assert!(!hash.contains(PASSWORD));
}

#[tokio::test]
async fn a_form_post_without_the_csrf_token_is_refused() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let reply = app
        .post_form("/customers", &[("name", "Mallory")], Some(&client.cookie))
        .await;
    assert_eq!(reply.status, StatusCode::FORBIDDEN);
    let wrong = app
        .post_form(
            "/customers",
            &[("_csrf", "0000"), ("name", "Mallory")],
            Some(&client.cookie),
        )
        .await;
    assert_eq!(wrong.status, StatusCode::FORBIDDEN);
    assert_eq!(app.count("customers").await, 0);
}

#[tokio::test]
async fn a_cross_site_form_post_is_refused_even_with_the_token() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let body = form_encode(&[("_csrf", &client.csrf), ("name", "Mallory")]);
    let req = Request::post("/customers")
        .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
        .header(header::COOKIE, &client.cookie)
        .header("sec-fetch-site", "cross-site")
        .header(header::ORIGIN, "https://elsewhere.example")
        .header(header::HOST, "localhost:3000")
        .body(Body::from(body))
        .unwrap();
    assert_eq!(app.send(req).await.status, StatusCode::FORBIDDEN);
    assert_eq!(app.count("customers").await, 0);
}

#[tokio::test]
async fn the_api_needs_a_valid_token() {
    let app = TestApp::new().await;
    let none = app
        .api_answers(
            StatusCode::UNAUTHORIZED,
            "GET",
            "/api/v1/customers",
            None,
            None,
        )
        .await;
    assert!(none.json()["error"].as_str().unwrap().contains("token"));
    let wrong = app.get_json("/api/v1/customers", "lp_wrong").await;
    assert_eq!(wrong.status, StatusCode::UNAUTHORIZED);
    let token = app.token("sam").await;
    let ok = app.get_json("/api/v1/customers", &token).await;
    assert_eq!(ok.status, StatusCode::OK);
}

#[tokio::test]
async fn a_revoked_token_no_longer_works() {
    let app = TestApp::new().await;
    let token = app.token("sam").await;
    let mut conn = app.pool.acquire().await.unwrap();
    let n = lockpoint::db::tokens::revoke_by_hash(&mut conn, &lockpoint::auth::hash_secret(&token))
        .await
        .unwrap();
    assert_eq!(n, 1);
    let reply = app.get_json("/api/v1/customers", &token).await;
    assert_eq!(reply.status, StatusCode::UNAUTHORIZED);
}

#[tokio::test]
async fn only_an_admin_reaches_settings_and_staff() {
    let app = TestApp::new().await;
    let tech = app.login("sam").await;
    assert_eq!(tech.get("/settings").await.status, StatusCode::FORBIDDEN);
    assert_eq!(tech.get("/users").await.status, StatusCode::FORBIDDEN);
    let post = tech
        .post(
            "/users",
            &[
                ("username", "eve"),
                ("password", "long-enough-pass"),
                ("role", "admin"),
            ],
        )
        .await;
    assert_eq!(post.status, StatusCode::FORBIDDEN);
    assert_eq!(app.count("users").await, 2);
    let admin = app.login("boss").await;
    assert_eq!(admin.get("/settings").await.status, StatusCode::OK);
    assert_eq!(admin.get("/users").await.status, StatusCode::OK);
}

#[tokio::test]
async fn an_admin_adds_a_tech_who_can_then_sign_in_and_a_disabled_one_cannot() {
    let app = TestApp::new().await;
    let admin = app.login("boss").await;
    let short = admin
        .post(
            "/users",
            &[("username", "kit"), ("password", "short"), ("role", "tech")],
        )
        .await;
    assert_eq!(short.status, StatusCode::UNPROCESSABLE_ENTITY);
    short.assert_shows("at least 10 characters");
    admin
        .post_saved(
            "/users",
            &[
                ("username", "kit"),
                ("password", PASSWORD),
                ("role", "tech"),
            ],
        )
        .await;
    let kit = app.login("kit").await;
    assert_eq!(kit.get("/").await.status, StatusCode::OK);

    let id: i64 = sqlx::query_scalar("SELECT id FROM users WHERE username = 'kit'")
        .fetch_one(&app.pool)
        .await
        .unwrap();
    admin.post_saved(&format!("/users/{id}/disable"), &[]).await;
    assert_eq!(
        kit.get("/").await.status,
        StatusCode::SEE_OTHER,
        "disabled user's session ends"
    );
    let retry = app.post_login("kit", PASSWORD, None).await;
    assert_eq!(retry.status, StatusCode::UNAUTHORIZED);
}

#[tokio::test]
async fn unknown_pages_and_ids_answer_not_found() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    assert_eq!(
        client.get("/builds/999").await.status,
        StatusCode::NOT_FOUND
    );
    assert_eq!(
        client.get("/builds/abc").await.status,
        StatusCode::NOT_FOUND
    );
    assert_eq!(
        client.get("/no-such-page").await.status,
        StatusCode::NOT_FOUND
    );
    let token = app.token("sam").await;
    let api = app.get_json("/api/v1/builds/999", &token).await;
    assert_eq!(api.status, StatusCode::NOT_FOUND);
    assert_eq!(api.json()["error"], "not found");
}

#[tokio::test]
async fn signed_in_pages_are_never_stored_by_a_cache() {
    let app = TestApp::new().await;
    let client = app.login("boss").await;
    for path in ["/", "/customers", "/settings", "/users", "/backup"] {
        let reply = client.get(path).await;
        assert_eq!(reply.status, StatusCode::OK, "{path}");
        assert_eq!(
            reply
                .headers
                .get(header::CACHE_CONTROL)
                .map(|v| v.to_str().unwrap()),
            Some("no-store"),
            "{path}"
        );
    }
    // The stylesheet is the same for everyone and may be cached.
    let css = app.get("/static/style.css", None).await;
    assert_eq!(css.headers[header::CACHE_CONTROL], "public, max-age=3600");
}

#[tokio::test]
async fn a_chunked_body_over_the_limit_is_refused_as_too_large() {
    let app = TestApp::new().await;
    let client = app.login("sam").await;
    let token = app.token("sam").await;
    // 300 KiB with no Content-Length (as a chunked upload arrives): the limit is only found
    // while the body is read.
    let chunks = || Body::from(vec![b'a'; 300 * 1024]);
    let form = Request::post("/customers")
        .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
        .header(header::COOKIE, &client.cookie)
        .body(chunks())
        .unwrap();
    assert!(form.headers().get(header::CONTENT_LENGTH).is_none());
    let reply = app.send(form).await;
    assert_eq!(
        reply.status,
        StatusCode::PAYLOAD_TOO_LARGE,
        "{}",
        reply.body
    );

    let login = Request::post("/login")
        .header(header::CONTENT_TYPE, "application/x-www-form-urlencoded")
        .body(chunks())
        .unwrap();
    assert_eq!(app.send(login).await.status, StatusCode::PAYLOAD_TOO_LARGE);

    let api = Request::post("/api/v1/customers")
        .header(header::CONTENT_TYPE, "application/json")
        .header(header::AUTHORIZATION, format!("Bearer {token}"))
        .body(chunks())
        .unwrap();
    let reply = app.send(api).await;
    assert_eq!(
        reply.status,
        StatusCode::PAYLOAD_TOO_LARGE,
        "{}",
        reply.body
    );
    reply.assert_shows("too large");
    assert_eq!(app.count("customers").await, 0);
}
