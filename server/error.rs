//! One error type for the whole web layer. Pages render it as a plain HTML page with a way back;
//! the JSON API renders it as `{"error": "...", "field": "..."}`. Internal errors are logged once,
//! inside the request's trace span, and the user sees a generic message.

use askama::Template;
use axum::Json;
use axum::http::StatusCode;
use axum::response::{Html, IntoResponse, Redirect, Response};

use crate::records::FieldErrors;

/// Seconds a caller refused for being busy (429) is asked to wait.
pub const RETRY_AFTER_S: u64 = 2;

pub type AppResult<T> = Result<T, AppError>;

#[derive(Debug, thiserror::Error)]
pub enum AppError {
    #[error("not found")]
    NotFound,
    #[error("{0}")]
    Forbidden(&'static str),
    /// A page needs a signed-in user; carries the path to come back to.
    #[error("sign in first")]
    LoginRequired(String),
    /// The API needs a valid bearer token.
    #[error("a valid API token is required (Authorization: Bearer ...)")]
    Unauthorized,
    /// The form's CSRF token was missing or wrong.
    #[error("this form has expired or did not come from Lockpoint; go back, reload and try again")]
    BadCsrf,
    /// Input that breaks a rule; names the field.
    #[error("{}", .0.summary())]
    Invalid(FieldErrors),
    #[error("the request body is too large or malformed")]
    BadRequest,
    /// The body went past the size limit while it was read (a chunked upload has no length).
    #[error("the request body is too large")]
    TooLarge,
    /// Too much heavy work asked for at once; answered 429 with `Retry-After`.
    #[error("{0}")]
    Busy(&'static str),
    #[error("internal error: {0}")]
    Internal(String),
}

impl AppError {
    /// A rule broken by one field.
    pub fn field(field: &str, message: impl Into<String>) -> Self {
        let mut errors = FieldErrors::default();
        errors.add(field, message);
        Self::Invalid(errors)
    }

    pub fn status(&self) -> StatusCode {
        match self {
            Self::NotFound => StatusCode::NOT_FOUND,
            Self::Forbidden(_) | Self::BadCsrf => StatusCode::FORBIDDEN,
            Self::LoginRequired(_) => StatusCode::SEE_OTHER,
            Self::Unauthorized => StatusCode::UNAUTHORIZED,
            Self::Invalid(_) => StatusCode::UNPROCESSABLE_ENTITY,
            Self::BadRequest => StatusCode::BAD_REQUEST,
            Self::TooLarge => StatusCode::PAYLOAD_TOO_LARGE,
            Self::Busy(_) => StatusCode::TOO_MANY_REQUESTS,
            Self::Internal(_) => StatusCode::INTERNAL_SERVER_ERROR,
        }
    }

    /// What the user may read: internal details stay in the log.
    fn public_message(&self) -> String {
        match self {
            Self::Internal(detail) => {
                tracing::error!(%detail, "request failed");
                "Something went wrong on our side. Nothing was saved; please try again.".into()
            }
            other => other.to_string(),
        }
    }
}

macro_rules! internal_from {
    ($($t:ty),*) => {$(
        impl From<$t> for AppError {
            fn from(err: $t) -> Self {
                Self::Internal(err.to_string())
            }
        }
    )*};
}
internal_from!(
    sqlx::Error,
    askama::Error,
    serde_json::Error,
    crate::auth::PasswordError,
    crate::db::read::ReadError
);

#[derive(Template)]
#[template(path = "error.html")]
struct ErrorPage {
    status: u16,
    title: &'static str,
    message: String,
}

impl IntoResponse for AppError {
    fn into_response(self) -> Response {
        if let Self::LoginRequired(next) = &self {
            let target = if next.is_empty() || next == "/" {
                "/login".to_string()
            } else {
                let query = form_urlencoded::Serializer::new(String::new())
                    .append_pair("next", next)
                    .finish();
                format!("/login?{query}")
            };
            return Redirect::to(&target).into_response();
        }
        let status = self.status();
        let page = ErrorPage {
            status: status.as_u16(),
            title: status.canonical_reason().unwrap_or("Error"),
            message: self.public_message(),
        };
        let mut response = match page.render() {
            Ok(html) => (status, Html(html)).into_response(),
            Err(_) => (status, page.message).into_response(),
        };
        retry_after(&mut response);
        response
    }
}

/// The same errors, answered as JSON for the API.
#[derive(Debug)]
pub struct ApiError(pub AppError);

/// Every API error: what went wrong, and the field it is about (its JSON path, such as
/// `springs.rate` or `shim_stack_mm[1]`), when one field is.
#[derive(Debug, serde::Serialize, utoipa::ToSchema)]
pub struct ErrorBody {
    pub error: String,
    pub field: Option<String>,
}

pub type ApiResult<T> = Result<Json<T>, ApiError>;

impl<E: Into<AppError>> From<E> for ApiError {
    fn from(err: E) -> Self {
        Self(err.into())
    }
}

impl IntoResponse for ApiError {
    fn into_response(self) -> Response {
        let status = self.0.status();
        let status = if status == StatusCode::SEE_OTHER {
            StatusCode::UNAUTHORIZED
        } else {
            status
        };
        let field = match &self.0 {
            AppError::Invalid(errors) => errors.first().map(|(f, _)| f.to_string()),
            _ => None,
        };
        let message = match &self.0 {
            AppError::Invalid(errors) => errors
                .first()
                .map(|(_, m)| m.to_string())
                .unwrap_or_default(),
            other => other.public_message(),
        };
        let mut response = (
            status,
            Json(ErrorBody {
                error: message,
                field,
            }),
        )
            .into_response();
        retry_after(&mut response);
        response
    }
}

/// A 429 says when to come back.
fn retry_after(response: &mut Response) {
    if response.status() == StatusCode::TOO_MANY_REQUESTS {
        response.headers_mut().insert(
            axum::http::header::RETRY_AFTER,
            axum::http::HeaderValue::from(RETRY_AFTER_S),
        );
    }
}
