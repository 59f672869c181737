//! Backups and export for an admin: the scheduled backups (their folder, period and count,
//! what the last ones did, a copy made now), a fresh checked backup file to download, and the
//! JSON export to download. Also the counter's line about the backups for admins.

use askama::Template;
use axum::body::Body;
use axum::extract::State;
use axum::http::{StatusCode, header};
use axum::response::{Html, IntoResponse, Response};
use futures_util::StreamExt;
use tokio_util::io::ReaderStream;

use crate::backup::plan::{self, Alarm, Every, Stored};
use crate::backup::scheduler::Backups;
use crate::backup::{self, BackupError, TempPath};
use crate::db;
use crate::error::{AppError, AppResult};
use crate::progress::Progress;
use crate::records::date::{Date, ShopZone};
use crate::records::{FieldErrors, FormData};
use crate::web::AppState;
use crate::web::http::extract::{CurrentUser, SignedForm, Viewer};
use crate::web::http::flash::{self, Flash};
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
    /// "Saved: ..." after the schedule was saved or a backup started, shown once.
    pub flash: Option<String>,
    /// The schedule form (as stored, or as typed when refused).
    pub form: FormData,
    pub errors: FieldErrors,
    pub status: ScheduleView,
}

/// The scheduled backups as the page words them, times in the shop's zone.
pub struct ScheduleView {
    /// "every day into /mnt/backup, 14 kept"; `None` while no folder is chosen.
    pub in_force: Option<String>,
    /// Values given when the server was started, which win over the form: (field, value).
    pub fixed: Vec<(&'static str, String)>,
    /// (time, size, file) of the last good copy.
    pub last_good: Option<(String, String, String)>,
    /// (time, reason) of the last failure.
    pub last_failure: Option<(String, String)>,
    /// Whether the latest attempt failed.
    pub failing: bool,
    pub running_since: Option<String>,
    pub next_due: Option<String>,
    /// Whether the folder is on the same file system as the database.
    pub same_disk: bool,
    /// What the counter shows admins now (none when all is well).
    pub notice: Option<CounterNotice>,
}

impl ScheduleView {
    fn new(backups: &Backups, zone: &ShopZone) -> Self {
        let s = backups.snapshot();
        let mut fixed = Vec::new();
        if let Some(dir) = &s.fixed.dir {
            fixed.push(("dir", dir.display().to_string()));
        }
        if let Some(every) = s.fixed.every {
            fixed.push(("every", every.to_string()));
        }
        if let Some(keep) = s.fixed.keep {
            fixed.push(("keep", keep.to_string()));
        }
        Self {
            in_force: s.plan.as_ref().map(|p| {
                format!(
                    "{} into {}, the newest {} kept",
                    p.every.words(),
                    p.dir.display(),
                    p.keep
                )
            }),
            fixed,
            last_good: s.record.last_good.as_ref().map(|g| {
                (
                    zone.show_time(g.at),
                    size_text(g.bytes),
                    g.file.display().to_string(),
                )
            }),
            last_failure: s
                .record
                .last_failure
                .as_ref()
                .map(|f| (zone.show_time(f.at), f.reason.clone())),
            failing: s.record.failing,
            running_since: s.record.running_since.map(|t| zone.show_time(t)),
            next_due: s.plan.as_ref().and(s.next_due).map(|t| zone.show_time(t)),
            same_disk: s.same_disk == Some(true),
            notice: {
                let (alarm, every) = backups.alarm();
                notice(&alarm, every, zone)
            },
        }
    }
}

impl BackupPage {
    /// A value given at start, in words.
    pub fn fixed_label(field: &str) -> &'static str {
        match field {
            "dir" => "folder",
            "every" => "every",
            _ => "copies kept",
        }
    }
}

/// What the counter shows admins about the backups.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CounterNotice {
    /// A warning (backups failing or old) rather than a suggestion.
    pub alarm: bool,
    pub text: String,
}

/// The counter's line about the backups for `user`: admins only, and only when backups are
/// not scheduled (a suggestion) or not working (a warning).
pub fn counter_notice(
    backups: &Backups,
    viewer: &Viewer,
    zone: &ShopZone,
) -> Option<CounterNotice> {
    if !viewer.is_admin {
        return None;
    }
    let (alarm, every) = backups.alarm();
    notice(&alarm, every, zone)
}

fn notice(alarm: &Alarm, every: Option<Every>, zone: &ShopZone) -> Option<CounterNotice> {
    let (alarm, text) = match alarm {
        Alarm::Quiet => return None,
        Alarm::NotConfigured => (
            false,
            "Backups are not scheduled: choose a folder on another disk under Settings → \
             Backups and the server copies the shop there by itself."
                .to_string(),
        ),
        Alarm::Failed(reason) => (
            true,
            format!(
                "The last backup failed: {reason}. Earlier copies are kept; the server keeps \
                 trying."
            ),
        ),
        Alarm::Overdue(at) => (
            true,
            format!(
                "The last good backup is from {}, more than two periods ago ({}).",
                zone.show_time(*at),
                every.map_or_else(String::new, Every::words)
            ),
        ),
    };
    Some(CounterNotice { alarm, text })
}

/// A file size in words: "834 bytes", "12.4 kB", "3.1 MB".
fn size_text(bytes: u64) -> String {
    match bytes {
        0..1_000 => format!("{bytes} bytes"),
        1_000..1_000_000 => format!("{:.1} kB", bytes as f64 / 1e3),
        1_000_000..1_000_000_000 => format!("{:.1} MB", bytes as f64 / 1e6),
        _ => format!("{:.2} GB", bytes as f64 / 1e9),
    }
}

/// The schedule form prefilled from the stored schedule.
fn schedule_form(stored: &Stored) -> FormData {
    let mut form = FormData::default();
    form.set("dir", stored.dir.clone());
    let every = u64::try_from(stored.every_s)
        .ok()
        .and_then(|s| Every::from_secs(s).ok())
        .map_or_else(|| format!("{}s", stored.every_s), |e| e.to_string());
    form.set("every", every);
    form.set("keep", stored.keep.to_string());
    form
}

async fn render_page(
    state: &AppState,
    user: &CurrentUser,
    form: Option<FormData>,
    errors: FieldErrors,
    flash: Option<String>,
) -> AppResult<String> {
    let mut conn = state.pool.acquire().await?;
    let (page, _) = Layout::load(&mut conn, user, "settings", "Backups and export").await?;
    let form = match form {
        Some(form) => form,
        None => schedule_form(&db::backup_schedule::get(&mut conn).await?),
    };
    let status = ScheduleView::new(&state.backups, &page.zone);
    Ok(BackupPage {
        page,
        flash,
        form,
        errors,
        status,
    }
    .render()?)
}

pub async fn page(
    State(state): State<AppState>,
    user: CurrentUser,
    flash: Flash,
) -> AppResult<Response> {
    user.require_admin()?;
    let html = render_page(
        &state,
        &user,
        None,
        FieldErrors::default(),
        flash.note.clone(),
    )
    .await?;
    Ok(flash.respond(Html(html)))
}

/// POST /backup/schedule: the stored schedule (the values given at start still win).
pub async fn save_schedule(
    State(state): State<AppState>,
    SignedForm { user, form }: SignedForm,
) -> AppResult<Response> {
    user.require_admin()?;
    let stored = match Stored::from_form(form.get("dir"), form.get("every"), form.get("keep")) {
        Ok(stored) => stored,
        Err(problems) => {
            let mut errors = FieldErrors::default();
            for (field, message) in problems {
                errors.add(field, message);
            }
            let html = render_page(&state, &user, Some(form), errors, None).await?;
            return Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(html)).into_response());
        }
    };
    let mut tx = state.write(&user).await?;
    db::backup_schedule::save(&mut tx, &stored).await?;
    tx.commit().await?;
    state.backups.wake();
    let mut note = match plan::parse_dir(&stored.dir).ok().flatten() {
        None => "Saved: backups are not scheduled (no folder).".to_string(),
        Some(dir) => {
            let every = u64::try_from(stored.every_s)
                .ok()
                .and_then(|s| Every::from_secs(s).ok())
                .map_or_else(String::new, Every::words);
            let mut note = format!(
                "Saved: backups {every} into {}, the newest {} kept.",
                dir.display(),
                stored.keep
            );
            if !dir.is_dir() {
                note.push_str(
                    " That folder does not exist now: backups fail until it does (it is never \
                     created for you).",
                );
            }
            note
        }
    };
    if !state.backups.snapshot().fixed.is_empty() {
        note.push_str(" Values given when the server was started still win.");
    }
    Ok(flash::redirect(&state, "/backup", &note))
}

/// POST /backup/now: a scheduled copy now, into the folder in force.
pub async fn back_up_now(
    State(state): State<AppState>,
    SignedForm { user, .. }: SignedForm,
) -> AppResult<Response> {
    user.require_admin()?;
    let note = match state.backups.back_up_now(&state.pool) {
        Ok(()) => {
            tracing::info!(user = %user.username, "backup started by hand");
            "Backup started: this page shows how it went once it is done (reload it).".to_string()
        }
        Err(why) => format!("Not started: {why}."),
    };
    Ok(flash::redirect(&state, "/backup", &note))
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
