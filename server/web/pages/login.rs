//! Signing in and out.

use std::time::Duration;

use askama::Template;
use axum::extract::{Query, State};
use axum::http::{HeaderMap, StatusCode, header};
use axum::response::{Html, IntoResponse, Redirect, Response};
use serde::Deserialize;

use crate::auth;
use crate::db;
use crate::error::AppResult;
use crate::web::AppState;
use crate::web::http::extract::{
    ClientAddr, CurrentUser, PlainForm, SESSION_COOKIE, SignedForm, cookie, session_cookie,
};

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

/// Password checks that may run at once. Each is an argon2id hash (tens of milliseconds of one
/// core); more would only queue on the two cores the counter's pages need too.
pub const SIGN_IN_SLOTS: usize = 4;

/// Password-check slots kept for clients with no recent failure, waited for (in turn) at most
/// [`RESERVED_WAIT`] when every other slot is busy: however many addresses flood the sign-in,
/// even at the owner's name, someone who has not been failing gets a check.
pub const RESERVED_SIGN_IN_SLOTS: usize = 1;

/// How long a client with no recent failure waits for a reserved slot before a 429.
pub const RESERVED_WAIT: Duration = Duration::from_secs(3);

/// Largest sign-in form accepted: a name, a password and where to go next fit many times over.
pub const LOGIN_BODY_LIMIT_BYTES: usize = 4 * 1024;

/// Failures are counted over this long since the last one; after it the count starts again.
const WINDOW_MS: i64 = 15 * 60 * 1000;

/// Failures a client address may have before each further try must wait.
const CLIENT_FREE_FAILURES: i64 = 10;

/// Failures a name may have before clients that have failed themselves must wait to try it
/// (1 s, doubling to 5 minutes). The figure: from addresses that have failed, at most about
/// 15 guesses at one name in its first 15 minutes, then one every 5 minutes (12 an hour);
/// besides those, one guess for each address (an IPv6 /64) that had not failed yet.
const NAME_FREE_FAILURES: i64 = 5;

/// At most this many client addresses and names are tracked (the oldest go first).
pub const TRACKED_CAP: i64 = 20_000;

/// Rows one purge step deletes, so the write lock is held only briefly.
pub const PURGE_BATCH: i64 = 500;

/// How long the next try must wait after `failures` failures when `free` are allowed: nothing
/// before that, then 1 s doubling with each further failure, up to 5 minutes.
pub fn wait_after(failures: i64, free: i64) -> Duration {
    if failures < free {
        return Duration::ZERO;
    }
    let doublings = (failures - free).min(20) as u32;
    Duration::from_secs((1u64 << doublings).min(300))
}

/// How much longer a key must wait, given its counter (`None` when it may try now).
fn still_waiting(
    counter: Option<db::throttle::Failures>,
    free: i64,
    now_ms: i64,
) -> Option<Duration> {
    let c = counter.filter(|c| c.last_failure_ms >= now_ms - WINDOW_MS)?;
    let until = c.last_failure_ms + wait_after(c.failures, free).as_millis() as i64;
    (until > now_ms).then(|| Duration::from_millis((until - now_ms) as u64))
}

fn now_ms() -> i64 {
    std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.as_millis() as i64)
}

/// The throttle's key for a client address: an IPv4 address, or an IPv6 address's /64 (one
/// subscriber's network: a host picks any address in it at no cost).
fn client_key(addr: Option<std::net::IpAddr>) -> String {
    match addr.map(|ip| ip.to_canonical()) {
        Some(std::net::IpAddr::V6(v6)) => {
            let net = u128::from(v6) & !((1u128 << 64) - 1);
            format!("client:{}/64", std::net::Ipv6Addr::from(net))
        }
        Some(ip) => format!("client:{ip}"),
        None => "client:unknown".into(),
    }
}

/// The throttle's key for a name (names are compared without case, as the users table does).
fn name_key(username: &str) -> String {
    format!("name:{}", username.trim().to_lowercase())
}

/// The sign-in page again with a 429 and `Retry-After`: nothing was checked.
fn too_many(username: String, next: String, wait: Duration) -> AppResult<Response> {
    let secs = wait.as_secs_f64().ceil().max(1.0) as u64;
    let page = LoginPage {
        username,
        next,
        error: Some(format!(
            "Too many sign-in attempts. Wait {secs} s, then try again."
        )),
    };
    Ok((
        StatusCode::TOO_MANY_REQUESTS,
        [(header::RETRY_AFTER, secs.to_string())],
        Html(page.render()?),
    )
        .into_response())
}

/// POST /login. The order matters for a shop under a guessing attack:
///
/// 1. one short read of the throttle counters and the account (the pooled connection goes back
///    at once: nothing below holds one while it waits or hashes);
/// 2. a client address past its free failures must wait (429 with `Retry-After`, no check);
/// 3. a name past its free failures may only be tried by clients that have not failed
///    themselves, so whoever is guessing waits but the account's owner, elsewhere, gets in;
/// 4. a free password-check slot, or 429 at once (a bounded number of hashes run together);
///    a client with no recent failure may then wait its turn for a reserved slot, at most
///    [`RESERVED_WAIT`], so a flood from many addresses cannot keep it out;
/// 5. one argon2id check, against a stand-in hash when there is no usable account (the time
///    taken does not tell which names exist);
/// 6. a failure is one upsert of the two counters; a success makes the session (and stores the
///    password hashed again when its hash was made with older parameters).
pub async fn submit(
    State(state): State<AppState>,
    ClientAddr(addr): ClientAddr,
    PlainForm(form): PlainForm,
) -> AppResult<Response> {
    // Names are short; a longer one cannot match and is cut before it is logged.
    let username: String = form.get("username").chars().take(60).collect();
    let password = form.get("password").to_string();
    let next = form.get("next").to_string();
    let (client, name) = (client_key(addr), name_key(&username));

    let now = now_ms();
    let (user, (client_failures, name_failures)) = {
        let mut conn = state.pool.acquire().await?;
        let user = db::users::by_name(&mut conn, &username).await?;
        (user, db::throttle::get(&mut conn, &client, &name).await?)
    };
    if let Some(wait) = still_waiting(client_failures, CLIENT_FREE_FAILURES, now) {
        return too_many(username, next, wait);
    }
    let client_has_failed = client_failures.is_some_and(|c| c.last_failure_ms >= now - WINDOW_MS);
    if client_has_failed && let Some(wait) = still_waiting(name_failures, NAME_FREE_FAILURES, now) {
        return too_many(username, next, wait);
    }
    let slot = match state.sign_ins.clone().try_acquire_owned() {
        Ok(slot) => slot,
        Err(_) if !client_has_failed => {
            let reserved = state.reserved_sign_ins.clone().acquire_owned();
            match tokio::time::timeout(RESERVED_WAIT, reserved).await {
                Ok(Ok(slot)) => slot,
                _ => return too_many(username, next, Duration::from_secs(1)),
            }
        }
        Err(_) => return too_many(username, next, Duration::from_secs(1)),
    };
    let usable = user.as_ref().filter(|u| !u.disabled);
    let stored = usable.map(|u| u.password_hash.clone());
    let ok = auth::verify_password_or_dummy(password.clone(), stored).await;
    // A hash made with older parameters is made again with today's, in the same turn; a sign-in
    // whose hash cannot be made again still signs in.
    let rehashed = match usable.filter(|u| ok && auth::needs_rehash(&u.password_hash)) {
        Some(_) => auth::hash_password(password)
            .await
            .inspect_err(|e| tracing::warn!("a sign-in's password could not be hashed again: {e}"))
            .ok(),
        None => None,
    };
    drop(slot);

    let Some(user) = usable.filter(|_| ok) else {
        let mut conn = state.pool.acquire().await?;
        db::throttle::note_failure(&mut conn, &client, &name, now_ms(), now_ms() - WINDOW_MS)
            .await?;
        drop(conn);
        let page = LoginPage {
            username,
            next,
            error: Some("That name and password do not match an active account.".into()),
        };
        return Ok((StatusCode::UNAUTHORIZED, Html(page.render()?)).into_response());
    };

    let token = auth::new_secret("");
    let csrf = auth::new_secret("");
    let mut conn = state.pool.acquire().await?;
    db::sessions::create(&mut conn, &auth::hash_secret(&token), user.id, &csrf).await?;
    db::throttle::clear(&mut conn, &name).await?;
    drop(conn);
    if let Some(hash) = rehashed
        && let Err(e) = store_rehash(&state, user, &hash).await
    {
        tracing::warn!("a sign-in's password hashed again could not be stored: {e}");
    }
    let cookie = session_cookie(
        &token,
        db::sessions::LIFETIME_DAYS * 86_400,
        state.secure_cookies(),
    );
    Ok((
        [(header::SET_COOKIE, cookie)],
        Redirect::to(safe_next(&next)),
    )
        .into_response())
}

/// Stores `hash`, the password `user` has just signed in with hashed under today's parameters,
/// in place of the hash it was checked against: a write of its own in the writers' queue,
/// audited under the user's own name, and only while that hash is still the stored one (a
/// password changed meanwhile stays changed).
async fn store_rehash(state: &AppState, user: &db::users::User, hash: &str) -> sqlx::Result<()> {
    let mut write = state.write_as(user.id, &user.username).await?;
    db::users::replace_password_hash(&mut write, user.id, &user.password_hash, hash).await?;
    write.commit().await
}

/// Runs until the server stops: every few seconds deletes the throttle rows whose window has
/// passed, and the oldest past [`TRACKED_CAP`], a batch at a time (each batch its own short
/// write, so a shop write waits at most one batch). Off the request path.
pub async fn forget_old_failures(pool: sqlx::SqlitePool) {
    loop {
        let mut full = false;
        if let Ok(mut conn) = pool.acquire().await {
            match db::throttle::purge_batch(
                &mut conn,
                now_ms() - WINDOW_MS,
                TRACKED_CAP,
                PURGE_BATCH,
            )
            .await
            {
                Ok(n) => full = n as i64 >= PURGE_BATCH,
                Err(e) => tracing::warn!(error = %e, "sign-in throttle purge failed"),
            }
        }
        // A full batch means more is waiting: go on soon, but leave room for other writes.
        let pause = if full { 50 } else { 5_000 };
        tokio::time::sleep(Duration::from_millis(pause)).await;
    }
}

/// Ends this browser's session (the form carries the CSRF token, so no other site can sign
/// the user out) and clears the cookie.
pub async fn logout(
    State(state): State<AppState>,
    headers: HeaderMap,
    _signed: SignedForm,
) -> AppResult<Response> {
    if let Some(token) = cookie(&headers, SESSION_COOKIE) {
        let hash = auth::hash_secret(&token);
        let mut conn = state.pool.acquire().await?;
        db::sessions::delete(&mut conn, &hash).await?;
        state.cache.forget_session(&hash);
    }
    let clear = session_cookie("", 0, state.secure_cookies());
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
    fn repeated_failures_make_each_further_try_wait_longer_up_to_a_cap() {
        assert_eq!(wait_after(0, 5), Duration::ZERO);
        assert_eq!(wait_after(4, 5), Duration::ZERO);
        assert_eq!(wait_after(5, 5), Duration::from_secs(1));
        assert_eq!(wait_after(6, 5), Duration::from_secs(2));
        assert!(wait_after(12, 5) > wait_after(8, 5));
        assert_eq!(wait_after(1000, 5), Duration::from_secs(300));
    }

    #[test]
    fn a_counter_past_its_window_no_longer_holds_anyone_back() {
        let now = 10 * WINDOW_MS;
        let c = |failures, ago| {
            Some(db::throttle::Failures {
                failures,
                last_failure_ms: now - ago,
            })
        };
        assert_eq!(still_waiting(None, 5, now), None);
        assert_eq!(still_waiting(c(4, 0), 5, now), None);
        assert_eq!(still_waiting(c(5, 0), 5, now), Some(Duration::from_secs(1)));
        assert_eq!(
            still_waiting(c(5, 400), 5, now),
            Some(Duration::from_millis(600))
        );
        assert_eq!(still_waiting(c(5, 1000), 5, now), None);
        assert_eq!(still_waiting(c(100, WINDOW_MS + 1), 5, now), None);
    }

    #[test]
    fn an_ipv6_client_is_counted_by_its_64_and_a_mapped_ipv4_as_itself() {
        let key = |s: &str| client_key(Some(s.parse().unwrap()));
        assert_eq!(key("2001:db8:1:2:aaaa::1"), "client:2001:db8:1:2::/64");
        assert_eq!(key("2001:db8:1:2:ffff:1:2:3"), key("2001:db8:1:2::9"));
        assert_ne!(key("2001:db8:1:3::1"), key("2001:db8:1:2::1"));
        assert_eq!(key("::ffff:192.0.2.7"), "client:192.0.2.7");
        assert_eq!(key("192.0.2.7"), "client:192.0.2.7");
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
