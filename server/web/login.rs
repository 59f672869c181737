//! Signing in and out.

use std::time::Duration;

use askama::Template;
use axum::extract::{Query, State};
use axum::http::{HeaderMap, header};
use axum::response::{Html, IntoResponse, Redirect, Response};
use serde::Deserialize;

use super::AppState;
use super::extract::{CurrentUser, PlainForm, SESSION_COOKIE, SignedForm, cookie};
use crate::auth;
use crate::db;
use crate::error::AppResult;

#[derive(Template)]
#[template(path = "login.html")]
pub struct LoginPage {
    pub username: String,
    pub next: String,
    pub error: Option<String>,
}

#[derive(Debug, Default, Deserialize)]
#[serde(default)]
pub struct NextQuery {
    next: String,
}

pub async fn form(user: Option<CurrentUser>, Query(q): Query<NextQuery>) -> AppResult<Response> {
    if user.is_some() {
        return Ok(Redirect::to(safe_next(&q.next)).into_response());
    }
    let page = LoginPage {
        username: String::new(),
        next: q.next,
        error: None,
    };
    Ok(Html(page.render()?).into_response())
}

/// Failed sign-ins allowed per name in 15 minutes before each further try is slowed.
const FREE_FAILURES: i64 = 3;

/// How long a sign-in waits after `failures` recent failures for the same name: nothing for
/// the first few, then a quarter second more per failure, up to 5 s.
pub fn login_delay(failures: i64) -> Duration {
    let extra = (failures - FREE_FAILURES).max(0) as u64;
    Duration::from_millis((250 * extra).min(5000))
}

pub async fn submit(
    State(state): State<AppState>,
    PlainForm(form): PlainForm,
) -> AppResult<Response> {
    // Names are short; a longer one cannot match and is cut before it is logged.
    let username: String = form.get("username").chars().take(60).collect();
    let password = form.get("password").to_string();
    let next = form.get("next").to_string();
    let mut conn = state.pool.acquire().await?;

    // Slow down guessing: past a few recent failures, every attempt waits longer (up to 5 s).
    let failures = db::users::recent_failures(&mut conn, &username).await?;
    tokio::time::sleep(login_delay(failures)).await;

    let user = db::users::by_name(&mut conn, &username).await?;
    let ok = match &user {
        Some(u) if !u.disabled => auth::verify_password(password, u.password_hash.clone()).await,
        _ => false,
    };
    let Some(user) = user.filter(|_| ok) else {
        db::users::note_failed_login(&mut conn, &username).await?;
        let page = LoginPage {
            username,
            next,
            error: Some("That name and password do not match an active account.".into()),
        };
        return Ok((axum::http::StatusCode::UNAUTHORIZED, Html(page.render()?)).into_response());
    };

    let token = auth::new_secret("");
    let csrf = auth::new_secret("");
    db::sessions::create(&mut conn, &auth::hash_secret(&token), user.id, &csrf).await?;
    let cookie = format!(
        "{SESSION_COOKIE}={token}; Path=/; HttpOnly; SameSite=Lax; Max-Age={}",
        db::sessions::LIFETIME_DAYS * 86_400
    );
    Ok((
        [(header::SET_COOKIE, cookie)],
        Redirect::to(safe_next(&next)),
    )
        .into_response())
}

/// Ends this browser's session (the form carries the CSRF token, so no other site can sign
/// the user out) and clears the cookie.
pub async fn logout(
    State(state): State<AppState>,
    headers: HeaderMap,
    _signed: SignedForm,
) -> AppResult<Response> {
    if let Some(token) = cookie(&headers, SESSION_COOKIE) {
        let mut conn = state.pool.acquire().await?;
        db::sessions::delete(&mut conn, &auth::hash_secret(token)).await?;
    }
    let clear = format!("{SESSION_COOKIE}=; Path=/; HttpOnly; SameSite=Lax; Max-Age=0");
    Ok(([(header::SET_COOKIE, clear)], Redirect::to("/login")).into_response())
}

/// Only a plain local path is followed after sign-in, anything else goes to `/`: no open
/// redirect to another site (`//host`, `/\\host`, or a tab or newline that browsers drop to
/// make `/\t/host` read as `//host`), and no character that cannot go in a `Location` header.
pub fn safe_next(next: &str) -> &str {
    let plain = next.bytes().all(|b| {
        b.is_ascii_alphanumeric()
            || matches!(
                b,
                b'/' | b'_' | b'.' | b'~' | b'%' | b'?' | b'&' | b'=' | b'#' | b'-'
            )
    });
    if plain && next.starts_with('/') && !next.starts_with("//") && next.len() <= 2000 {
        next
    } else {
        "/"
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn repeated_failures_slow_each_further_try_up_to_a_cap() {
        assert_eq!(login_delay(0), Duration::ZERO);
        assert_eq!(login_delay(FREE_FAILURES), Duration::ZERO);
        assert_eq!(login_delay(FREE_FAILURES + 1), Duration::from_millis(250));
        assert!(login_delay(10) > login_delay(5));
        assert_eq!(login_delay(1000), Duration::from_secs(5));
    }

    #[test]
    fn only_local_paths_are_followed_after_sign_in() {
        assert_eq!(safe_next("/builds/3"), "/builds/3");
        assert_eq!(safe_next("//evil.example"), "/");
        assert_eq!(safe_next("https://evil.example"), "/");
        assert_eq!(safe_next("/\t/evil.example"), "/");
        assert_eq!(safe_next("/\\evil.example"), "/");
        assert_eq!(safe_next("/x\ny"), "/");
        assert_eq!(safe_next(""), "/");
        assert_eq!(
            safe_next("/customers?q=a%20b&page=2#top"),
            "/customers?q=a%20b&page=2#top"
        );
    }
}
