//! Backups and export for an admin: a page explaining them, a fresh checked backup file to
//! download, and the JSON export to download.

use askama::Template;
use axum::body::Body;
use axum::extract::State;
use axum::http::header;
use axum::response::{Html, IntoResponse, Response};
use futures_util::StreamExt;
use tokio_util::io::ReaderStream;

use crate::backup::{self, BackupError, TempPath};
use crate::error::{AppError, AppResult};
use crate::progress::Progress;
use crate::records::date::{Date, ShopZone};
use crate::web::AppState;
use crate::web::http::extract::CurrentUser;
use crate::web::pages::layout::Layout;

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

/// A file download that no cache keeps (both files hold password and token hashes): the
/// staged file streamed from disk, and deleted once it is sent or when the client goes away
/// (the guard travels with the body's stream and is dropped with it).
async fn attachment(
    content_type: &'static str,
    file_name: String,
    staged: TempPath,
) -> AppResult<Response> {
    let file = tokio::fs::File::open(staged.path())
        .await
        .map_err(|e| AppError::Internal(format!("cannot read the staged copy: {e}")))?;
    let length = file
        .metadata()
        .await
        .map_err(|e| AppError::Internal(format!("cannot read the staged copy: {e}")))?
        .len();
    let stream = ReaderStream::with_capacity(file, 1 << 16).map(move |chunk| {
        let _keep = &staged;
        chunk
    });
    Ok((
        [
            (header::CONTENT_TYPE, content_type.to_string()),
            (
                header::CONTENT_DISPOSITION,
                format!("attachment; filename=\"{file_name}\""),
            ),
            (header::CACHE_CONTROL, "no-store".to_string()),
            (header::CONTENT_LENGTH, length.to_string()),
        ],
        Body::from_stream(stream),
    )
        .into_response())
}

/// A staged file beside the database (same file system and privacy as the database, not the
/// shared system temp folder), removed when the guard drops.
fn staged(state: &AppState, what: &str, ext: &str) -> TempPath {
    let db = state.pool.connect_options().get_filename().to_path_buf();
    let name = db.file_name().map_or_else(
        || "lockpoint.db".into(),
        |n| n.to_string_lossy().into_owned(),
    );
    TempPath::unique_in(&backup::folder_of(&db), &format!(".{name}.{what}"), ext)
}

/// A backup made now (`VACUUM INTO` a staged file, checked, streamed, deleted), sent as
/// `lockpoint-YYYY-MM-DD.db`.
pub async fn download(State(state): State<AppState>, user: CurrentUser) -> AppResult<Response> {
    user.require_admin()?;
    // Created 0600 (it holds password hashes), and removed when this guard drops: after the
    // body is sent, on an error, or if the client goes away.
    let temp = staged(&state, "download", ".db");
    let checked = backup::backup_pool(&state.pool, temp.path(), &mut Progress::none()).await?;
    tracing::info!(user = %user.username, bytes = checked.bytes, "backup downloaded");
    attachment(
        "application/vnd.sqlite3",
        format!("lockpoint-{}.db", Date::today(&ShopZone::server())),
        temp,
    )
    .await
}

/// Every exported table as one JSON document (written row by row to a staged file, then
/// streamed), sent as `lockpoint-export-YYYY-MM-DD.json`.
pub async fn export_json(State(state): State<AppState>, user: CurrentUser) -> AppResult<Response> {
    user.require_admin()?;
    let temp = staged(&state, "download", ".json");
    let rows = backup::export_json_file(&state.pool, temp.path(), &mut Progress::none()).await?;
    tracing::info!(user = %user.username, rows, "export downloaded");
    attachment(
        "application/json",
        format!("lockpoint-export-{}.json", Date::today(&ShopZone::server())),
        temp,
    )
    .await
}
