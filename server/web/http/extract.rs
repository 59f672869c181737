//! Request extractors: who is asking (session or API token), a CSRF-checked form, a JSON body
//! whose errors name the field, and a path id that answers 404 instead of a bare 400.

use axum::body::Bytes;
use axum::extract::{Form, FromRequest, FromRequestParts, Request};
use axum::http::request::Parts;
use axum::http::{HeaderMap, header};
use serde::de::DeserializeOwned;

use crate::auth;
use crate::db;
use crate::db::sessions::SessionUser;
use crate::error::{ApiError, AppError};
use crate::records::FormData;
use crate::records::user::Role;
use crate::web::AppState;

/// The session cookie's name.
pub const SESSION_COOKIE: &str = "lockpoint_session";

/// A signed-in staff member (browser session).
#[derive(Debug, Clone)]
pub struct CurrentUser {
    pub id: i64,
    pub username: String,
    pub role: Role,
    pub csrf: String,
}

impl From<SessionUser> for CurrentUser {
    fn from(s: SessionUser) -> Self {
        Self {
            id: s.user_id,
            username: s.username,
            role: Role::parse(&s.role).unwrap_or(Role::Tech),
            csrf: s.csrf_token,
        }
    }
}

/// Who a page is shown to, as the page may know them: a name to greet, a role, and the token its
/// forms carry, nothing else. The pages the cache keeps (`web::http::cache`) are rendered for a
/// stand-in viewer whose name and token are holes, so what they may show is this type's
/// fields: a render that reached for the user's id or anything else of theirs would not
/// compile.
#[derive(Debug, Clone)]
pub struct Viewer {
    pub username: String,
    pub is_admin: bool,
    pub csrf: String,
}

impl From<&CurrentUser> for Viewer {
    fn from(user: &CurrentUser) -> Self {
        Self {
            username: user.username.clone(),
            is_admin: user.is_admin(),
            csrf: user.csrf.clone(),
        }
    }
}

impl From<&Viewer> for Viewer {
    fn from(viewer: &Viewer) -> Self {
        viewer.clone()
    }
}

impl CurrentUser {
    /// This user as a page may show them (see [`Viewer`]).
    pub fn viewer(&self) -> Viewer {
        Viewer::from(self)
    }

    pub fn is_admin(&self) -> bool {
        self.role == Role::Admin
    }

    /// Refuses anyone but an admin.
    pub fn require_admin(&self) -> Result<(), AppError> {
        if self.is_admin() {
            Ok(())
        } else {
            Err(AppError::Forbidden("only an admin can do this"))
        }
    }
}

/// The value of one cookie from the request headers (every `Cookie` header, parsed by the
/// `cookie` crate; a malformed pair is skipped).
pub fn cookie(headers: &HeaderMap, name: &str) -> Option<String> {
    headers
        .get_all(header::COOKIE)
        .iter()
        .filter_map(|v| v.to_str().ok())
        .flat_map(cookie::Cookie::split_parse)
        .flatten()
        .find(|c| c.name() == name)
        .map(|c| c.value().to_string())
}

/// The `Set-Cookie` value of the session cookie: `token` for `max_age_s` seconds (an empty token
/// with 0 clears it), HttpOnly, SameSite=Lax, and Secure when served over https.
pub fn session_cookie(token: &str, max_age_s: i64, secure: bool) -> String {
    cookie::Cookie::build((SESSION_COOKIE, token))
        .path("/")
        .http_only(true)
        .same_site(cookie::SameSite::Lax)
        .max_age(cookie::time::Duration::seconds(max_age_s))
        .secure(secure)
        .build()
        .to_string()
}

impl FromRequestParts<AppState> for CurrentUser {
    type Rejection = AppError;

    async fn from_request_parts(parts: &mut Parts, state: &AppState) -> Result<Self, AppError> {
        // Already looked up by the route's access layer (`web::http::routes`).
        if let Some(user) = parts.extensions.get::<Self>() {
            return Ok(user.clone());
        }
        let back_to = || {
            let next = parts.uri.path_and_query().map_or("/", |p| p.as_str());
            // Only come back to pages someone can GET.
            let next = if parts.method == axum::http::Method::GET {
                next
            } else {
                "/"
            };
            AppError::LoginRequired(next.to_string())
        };
        let Some(token) = cookie(&parts.headers, SESSION_COOKIE) else {
            return Err(back_to());
        };
        match state
            .cache
            .session(&state.pool, &auth::hash_secret(&token))
            .await?
        {
            Some(user) => Ok(user.into()),
            None => Err(back_to()),
        }
    }
}

/// A body that could not be read: 413 when it went past the size limit (also when it came
/// chunked, with no length to refuse it by up front), else 400.
fn body_error(rejection: impl axum::response::IntoResponse) -> AppError {
    if rejection.into_response().status() == axum::http::StatusCode::PAYLOAD_TOO_LARGE {
        AppError::TooLarge
    } else {
        AppError::BadRequest
    }
}

/// A form POST from a signed-in user, its CSRF token checked against the session's.
pub struct SignedForm {
    pub user: CurrentUser,
    pub form: FormData,
}

impl FromRequest<AppState> for SignedForm {
    type Rejection = AppError;

    async fn from_request(req: Request, state: &AppState) -> Result<Self, AppError> {
        let (mut parts, body) = req.into_parts();
        let user = CurrentUser::from_request_parts(&mut parts, state).await?;
        let req = Request::from_parts(parts, body);
        let Form(pairs) = Form::<Vec<(String, String)>>::from_request(req, state)
            .await
            .map_err(body_error)?;
        let form = FormData::new(pairs);
        if !auth::same_secret(form.get("_csrf"), &user.csrf) {
            return Err(AppError::BadCsrf);
        }
        Ok(Self { user, form })
    }
}

/// A form POST from someone not signed in yet (the login form). Cross-site posts are already
/// refused by the CSRF layer's Origin / Sec-Fetch-Site check.
pub struct PlainForm(pub FormData);

impl FromRequest<AppState> for PlainForm {
    type Rejection = AppError;

    async fn from_request(req: Request, state: &AppState) -> Result<Self, AppError> {
        let Form(pairs) = Form::<Vec<(String, String)>>::from_request(req, state)
            .await
            .map_err(body_error)?;
        Ok(Self(FormData::new(pairs)))
    }
}

/// The user behind an API bearer token.
#[derive(Debug, Clone)]
pub struct ApiUser(pub CurrentUser);

/// The token of an `Authorization: Bearer …` header, trimmed; `None` without one.
pub fn bearer(parts: &Parts) -> Option<&str> {
    parts
        .headers
        .get(header::AUTHORIZATION)
        .and_then(|v| v.to_str().ok())
        .and_then(|v| v.strip_prefix("Bearer "))
        .map(str::trim)
        .filter(|t| !t.is_empty())
}

impl FromRequestParts<AppState> for ApiUser {
    type Rejection = ApiError;

    async fn from_request_parts(parts: &mut Parts, state: &AppState) -> Result<Self, ApiError> {
        // Already looked up by the route's access layer (`web::http::routes`).
        if let Some(user) = parts.extensions.get::<Self>() {
            return Ok(user.clone());
        }
        let token = bearer(parts).ok_or(ApiError(AppError::Unauthorized))?;
        let mut conn = state.pool.acquire().await.map_err(AppError::from)?;
        match db::tokens::user(&mut conn, &auth::hash_secret(token))
            .await
            .map_err(AppError::from)?
        {
            Some(user) => Ok(Self(user.into())),
            None => Err(ApiError(AppError::Unauthorized)),
        }
    }
}

/// A JSON body; a type error names the field by its path (`springs.rate`).
pub struct ApiJson<T>(pub T);

impl<T: DeserializeOwned + Send + 'static> FromRequest<AppState> for ApiJson<T> {
    type Rejection = ApiError;

    async fn from_request(req: Request, state: &AppState) -> Result<Self, ApiError> {
        let is_json = req
            .headers()
            .get(header::CONTENT_TYPE)
            .and_then(|v| v.to_str().ok())
            .and_then(|v| v.split(';').next())
            .is_some_and(|mime| mime.trim().eq_ignore_ascii_case("application/json"));
        if !is_json {
            return Err(ApiError(AppError::field(
                "body",
                "send JSON with Content-Type: application/json",
            )));
        }
        let bytes = Bytes::from_request(req, state)
            .await
            .map_err(|e| ApiError(body_error(e)))?;
        if bytes.len() <= JSON_ON_THE_SPOT_BYTES {
            return parse_json(&bytes).map(Self);
        }
        // A large body (a data log) is parsed off the async threads.
        state.heavy.run(move || parse_json(&bytes)).await?.map(Self)
    }
}

/// Largest JSON body parsed on the async thread that read it (every form-sized request).
const JSON_ON_THE_SPOT_BYTES: usize = 64 * 1024;

/// Deserializes JSON, turning an error into a 422 that names the offending field.
pub fn parse_json<T: DeserializeOwned>(bytes: &[u8]) -> Result<T, ApiError> {
    let mut de = serde_json::Deserializer::from_slice(bytes);
    serde_path_to_error::deserialize(&mut de).map_err(field_error)
}

/// [`parse_json`] for a body already read as a JSON value (one that chooses its own shape, such
/// as `/calc/calibrate` by its `method`).
pub fn from_json_value<T: DeserializeOwned>(value: serde_json::Value) -> Result<T, ApiError> {
    serde_path_to_error::deserialize(value).map_err(field_error)
}

/// A deserialization error as a 422 naming the field by its path.
fn field_error(err: serde_path_to_error::Error<serde_json::Error>) -> ApiError {
    {
        let path = err.path().to_string();
        let inner = err.into_inner();
        // serde names a missing field only in its message ("missing field `rate`"): add it
        // to the path of the object it is missing from.
        let text = inner.to_string();
        let missing = text
            .strip_prefix("missing field `")
            .and_then(|rest| rest.split('`').next());
        let field = match (path.as_str(), missing) {
            (".", Some(name)) => name.to_string(),
            (_, Some(name)) => format!("{path}.{name}"),
            (".", None) => "body".to_string(),
            _ => path.clone(),
        };
        let message = if inner.is_syntax() || inner.is_eof() {
            "the body is not valid JSON".to_string()
        } else {
            // serde's message names the expected type ("invalid type: string, expected f64");
            // strip its position suffix, which means nothing to a caller.
            text.split(" at line ").next().unwrap_or(&text).to_string()
        };
        ApiError(AppError::field(&field, message))
    }
}

/// A numeric id from the path; anything else is simply "not found".
pub struct PathId(pub i64);

impl<S: Send + Sync> FromRequestParts<S> for PathId {
    type Rejection = AppError;

    async fn from_request_parts(parts: &mut Parts, state: &S) -> Result<Self, AppError> {
        #[expect(
            clippy::disallowed_types,
            reason = "this is the one wrapper around Path"
        )]
        let path = axum::extract::Path::<i64>::from_request_parts(parts, state).await;
        match path {
            Ok(axum::extract::Path(id)) if id > 0 => Ok(Self(id)),
            _ => Err(AppError::NotFound),
        }
    }
}

impl axum::extract::OptionalFromRequestParts<AppState> for CurrentUser {
    type Rejection = AppError;

    async fn from_request_parts(
        parts: &mut Parts,
        state: &AppState,
    ) -> Result<Option<Self>, AppError> {
        match <Self as FromRequestParts<AppState>>::from_request_parts(parts, state).await {
            Ok(user) => Ok(Some(user)),
            Err(AppError::LoginRequired(_)) => Ok(None),
            Err(other) => Err(other),
        }
    }
}

/// The address of the client at the other end of the connection (`None` when the server was
/// not told, as in tests through the router). Forwarding headers are not trusted: anyone can
/// write them.
pub struct ClientAddr(pub Option<std::net::IpAddr>);

impl<S: Send + Sync> FromRequestParts<S> for ClientAddr {
    type Rejection = std::convert::Infallible;

    async fn from_request_parts(parts: &mut Parts, _state: &S) -> Result<Self, Self::Rejection> {
        Ok(Self(
            parts
                .extensions
                .get::<axum::extract::ConnectInfo<std::net::SocketAddr>>()
                .map(|info| info.0.ip().to_canonical()),
        ))
    }
}

/// A path id for the API: anything but a positive integer is a JSON 404.
pub struct ApiId(pub i64);

impl<S: Send + Sync> FromRequestParts<S> for ApiId {
    type Rejection = ApiError;
    async fn from_request_parts(parts: &mut Parts, state: &S) -> Result<Self, ApiError> {
        PathId::from_request_parts(parts, state)
            .await
            .map(|PathId(id)| Self(id))
            .map_err(ApiError)
    }
}

#[cfg(test)]
mod cookie_tests {
    use super::*;

    #[test]
    fn the_session_cookie_is_read_among_others_and_written_with_its_attributes() {
        let mut headers = HeaderMap::new();
        headers.append(
            header::COOKIE,
            "theme=light; lockpoint_session=abc123".parse().unwrap(),
        );
        headers.append(header::COOKIE, "other=1".parse().unwrap());
        assert_eq!(cookie(&headers, SESSION_COOKIE).as_deref(), Some("abc123"));
        assert_eq!(cookie(&headers, "missing"), None);

        // Read back by the cookie crate's own parser (RFC 6265 attributes).
        let set = cookie::Cookie::parse(session_cookie("abc123", 60, true)).unwrap();
        assert_eq!((set.name(), set.value()), (SESSION_COOKIE, "abc123"));
        assert_eq!(set.http_only(), Some(true));
        assert_eq!(set.secure(), Some(true));
        assert_eq!(set.same_site(), Some(cookie::SameSite::Lax));
        assert_eq!(set.path(), Some("/"));
        assert_eq!(set.max_age(), Some(cookie::time::Duration::seconds(60)));
        let plain = cookie::Cookie::parse(session_cookie("", 0, false)).unwrap();
        assert_eq!(plain.secure(), None);
        assert_eq!(plain.max_age(), Some(cookie::time::Duration::ZERO));
    }
}
