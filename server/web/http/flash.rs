//! A one-time note for the page a form redirects to (POST, redirect, GET): "Saved: ...", or a
//! customer link's address. It travels in a short-lived cookie scoped to the target page's path,
//! so a refresh of that page neither repeats the POST nor shows the note again.

use axum::extract::FromRequestParts;
use axum::http::header;
use axum::http::request::Parts;
use axum::response::{IntoResponse, Redirect, Response};

use crate::error::AppError;
use crate::web::AppState;
use crate::web::http::extract::{CurrentUser, PathId, cookie};

/// The cookie's name.
pub const FLASH_COOKIE: &str = "lp_flash";

/// Seconds the note waits for its page (the redirect is followed at once).
const MAX_AGE_S: i64 = 120;

/// Longest note kept, in characters (a cookie is sent with every request to its path).
const MAX_CHARS: usize = 600;

fn set_cookie(path: &str, value: &str, max_age_s: i64, secure: bool) -> String {
    cookie::Cookie::build((FLASH_COOKIE, value))
        .path(path.to_string())
        .http_only(true)
        .same_site(cookie::SameSite::Strict)
        .max_age(cookie::time::Duration::seconds(max_age_s))
        .secure(secure)
        .build()
        .to_string()
}

/// The page part of a local address (`/builds/3?x#setup` → `/builds/3`).
fn page_path(to: &str) -> &str {
    to.split(['?', '#']).next().unwrap_or("/")
}

/// The note for a record saved with `changes` (as `records::field::changes` words them):
/// "Saved: the car: Engine 7.2 L V8 → 7.4 L V8." or "Saved: the car, nothing changed."
pub fn saved_note(what: &str, changes: &[String]) -> String {
    if changes.is_empty() {
        format!("Saved: {what}, nothing changed.")
    } else {
        format!("Saved: {what}: {}.", changes.join("; "))
    }
}

/// A 303 redirect to `to` that shows `note` once on the page there.
pub fn redirect(state: &AppState, to: &str, note: &str) -> Response {
    let note: String = note.chars().take(MAX_CHARS).collect();
    let value: String = form_urlencoded::byte_serialize(note.as_bytes()).collect();
    let cookie = set_cookie(page_path(to), &value, MAX_AGE_S, state.secure_cookies());
    ([(header::SET_COOKIE, cookie)], Redirect::to(to)).into_response()
}

/// The note left for this page, if any; answer with [`Flash::respond`] so it is shown once.
#[derive(Debug, Clone, Default)]
pub struct Flash {
    pub note: Option<String>,
    path: String,
    secure: bool,
}

impl Flash {
    /// The page, with the cookie cleared when a note was read.
    pub fn respond(&self, page: impl IntoResponse) -> Response {
        match &self.note {
            Some(_) => (
                [(
                    header::SET_COOKIE,
                    set_cookie(&self.path, "", 0, self.secure),
                )],
                page,
            )
                .into_response(),
            None => page.into_response(),
        }
    }
}

impl FromRequestParts<AppState> for Flash {
    type Rejection = AppError;

    async fn from_request_parts(parts: &mut Parts, state: &AppState) -> Result<Self, AppError> {
        let note = cookie(&parts.headers, FLASH_COOKIE)
            .and_then(|raw| {
                form_urlencoded::parse(format!("n={raw}").as_bytes())
                    .next()
                    .map(|(_, v)| v.chars().take(MAX_CHARS).collect::<String>())
            })
            .filter(|n| !n.trim().is_empty());
        Ok(Self {
            note,
            path: parts.uri.path().to_string(),
            secure: state.secure_cookies(),
        })
    }
}

/// What the page of one stored record (a customer, a car, a build, a sheet) is asked with:
/// the server's state, who asks, the record's id from the path and the note a save left for
/// the page, taken in that order (so a visitor who is not signed in is sent to sign in before a
/// bad id is answered 404). Taken apart where it is asked for, as axum's own extractors are:
/// `RecordView(state, user, id, flash): RecordView`.
pub struct RecordView(pub AppState, pub CurrentUser, pub i64, pub Flash);

impl FromRequestParts<AppState> for RecordView {
    type Rejection = AppError;

    async fn from_request_parts(parts: &mut Parts, state: &AppState) -> Result<Self, AppError> {
        let user = CurrentUser::from_request_parts(parts, state).await?;
        let PathId(id) = PathId::from_request_parts(parts, state).await?;
        let flash = Flash::from_request_parts(parts, state).await?;
        Ok(Self(state.clone(), user, id, flash))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_note_cookie_is_scoped_to_the_target_page_and_read_back_by_the_cookie_crate() {
        let set =
            cookie::Cookie::parse(set_cookie(page_path("/builds/7?a=1#setup"), "x", 60, true))
                .unwrap();
        // RFC 6265 attributes, read by the cookie crate's own parser.
        assert_eq!(set.path(), Some("/builds/7"));
        assert_eq!(set.http_only(), Some(true));
        assert_eq!(set.same_site(), Some(cookie::SameSite::Strict));
        assert_eq!(set.secure(), Some(true));
        assert_eq!(set.max_age(), Some(cookie::time::Duration::seconds(60)));
    }
}
