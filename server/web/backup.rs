//! Backups and export for an admin: a page explaining them, a fresh checked backup file to
//! download, and the JSON export to download.

use askama::Template;
use axum::extract::State;
use axum::http::header;
use axum::response::{Html, IntoResponse, Response};

use super::AppState;
use super::extract::CurrentUser;
use super::layout::Layout;
use crate::backup::{self, BackupError, TempPath};
use crate::error::{AppError, AppResult};
use crate::records::date::{Date, ShopZone};

impl From<BackupError> for AppError {
    fn from(err: BackupError) -> Self {
        Self::Internal(err.to_string())
    }
}

#[derive(Template)]
#[template(path = "admin/backup.html")]
pub struct BackupPage {
    pub page: Layout,
}

pub async fn page(State(state): State<AppState>, user: CurrentUser) -> AppResult<Html<String>> {
    user.require_admin()?;
    let mut conn = state.pool.acquire().await?;
    let (page, _) = Layout::load(&mut conn, &user, "settings", "Backups and export").await?;
    Ok(Html(BackupPage { page }.render()?))
}

/// A file download that no cache keeps (both files hold password and token hashes).
fn attachment(content_type: &'static str, file_name: String, body: Vec<u8>) -> Response {
    (
        [
            (header::CONTENT_TYPE, content_type.to_string()),
            (
                header::CONTENT_DISPOSITION,
                format!("attachment; filename=\"{file_name}\""),
            ),
            (header::CACHE_CONTROL, "no-store".to_string()),
        ],
        body,
    )
        .into_response()
}

/// A backup made now (`VACUUM INTO` a temporary file, checked, read, deleted), sent as
/// `lockpoint-YYYY-MM-DD.db`.
pub async fn download(State(state): State<AppState>, user: CurrentUser) -> AppResult<Response> {
    user.require_admin()?;
    // Staged beside the database, created 0600 (it holds password hashes), and removed when
    // this guard drops: after reading, on an error, or if the client goes away.
    let db = state.pool.connect_options().get_filename().to_path_buf();
    let name = db.file_name().map_or_else(
        || "lockpoint.db".into(),
        |n| n.to_string_lossy().into_owned(),
    );
    let temp = TempPath::unique_in(&backup::folder_of(&db), &format!(".{name}.download"), ".db");
    backup::backup_pool(&state.pool, temp.path()).await?;
    let bytes = tokio::task::spawn_blocking(move || {
        let bytes = std::fs::read(temp.path());
        drop(temp);
        bytes
    })
    .await
    .map_err(|e| AppError::Internal(e.to_string()))?
    .map_err(|e| AppError::Internal(format!("cannot read the backup copy: {e}")))?;
    tracing::info!(user = %user.username, bytes = bytes.len(), "backup downloaded");
    Ok(attachment(
        "application/vnd.sqlite3",
        format!("lockpoint-{}.db", Date::today(&ShopZone::server())),
        bytes,
    ))
}

/// Every exported table as one JSON document, sent as `lockpoint-export-YYYY-MM-DD.json`.
pub async fn export_json(State(state): State<AppState>, user: CurrentUser) -> AppResult<Response> {
    user.require_admin()?;
    let export = backup::read_export(&state.pool).await?;
    tracing::info!(user = %user.username, rows = export.row_count(), "export downloaded");
    Ok(attachment(
        "application/json",
        format!("lockpoint-export-{}.json", Date::today(&ShopZone::server())),
        export.to_json().into_bytes(),
    ))
}
