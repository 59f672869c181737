//! Import a spreadsheet (admin): send a CSV file, say which column is which (remembered per
//! header), check it (every problem by line and column, the first rows as they would be
//! stored, what an import would make), then import it all or nothing. The work is the API's
//! (`web::api::import::run`); this page only reads and shows it.

use std::collections::BTreeMap;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use askama::Template;
use axum::extract::{Multipart, Query, State};
use axum::http::StatusCode;
use axum::response::{Html, IntoResponse, Redirect, Response};

use crate::db;
use crate::error::{AppError, AppResult};
use crate::import::{self, DATE_ORDERS, DupChoice, Target};
use crate::records::FieldErrors;
use crate::records::build::BuildInput;
use crate::records::car::CarInput;
use crate::records::customer::CustomerInput;
use crate::records::field;
use crate::records::height::HeightInput;
use crate::web::AppState;
use crate::web::api::import::{ImportAnswer, ImportRequest, run, too_large};
use crate::web::http::extract::{CurrentUser, SignedForm};
use crate::web::http::flash::{self, Flash};
use crate::web::pages::layout::Layout;

/// Files waiting for their mapping, at most this many at once (the oldest goes first).
const STAGED_MAX: usize = 4;
/// How long a file waits.
const STAGED_FOR: Duration = Duration::from_secs(3600);
/// Problems listed on the page (the API answers all of them).
const PROBLEMS_SHOWN: usize = 200;

struct Staged {
    token: String,
    user_id: i64,
    name: String,
    deflated: Vec<u8>,
    at: Instant,
}

/// Files sent and not yet imported, kept deflated in memory (never in the database).
#[derive(Default)]
pub struct Staging(Mutex<Vec<Staged>>);

impl Staging {
    fn put(&self, s: Staged) {
        let mut all = self.0.lock().unwrap_or_else(|e| e.into_inner());
        all.retain(|x| x.at.elapsed() < STAGED_FOR);
        if all.len() >= STAGED_MAX {
            all.remove(0);
        }
        all.push(s);
    }

    fn get(&self, token: &str, user_id: i64) -> Option<(String, String)> {
        let all = self.0.lock().unwrap_or_else(|e| e.into_inner());
        let s = all
            .iter()
            .find(|s| s.token == token && s.user_id == user_id && s.at.elapsed() < STAGED_FOR)?;
        let bytes = db::pass_logs::inflate(&s.deflated, import::MAX_BYTES).ok()?;
        Some((s.name.clone(), String::from_utf8(bytes).ok()?))
    }

    fn drop_token(&self, token: &str) {
        let mut all = self.0.lock().unwrap_or_else(|e| e.into_inner());
        all.retain(|s| s.token != token);
    }
}

pub fn staging() -> Arc<Staging> {
    Arc::new(Staging::default())
}

#[derive(Template)]
#[template(path = "admin/import.html")]
pub struct UploadPage {
    pub page: Layout,
    pub flash: Option<String>,
    pub errors: FieldErrors,
    pub max_mb: usize,
    pub max_rows: String,
}

/// One column of the file with what was chosen for it.
pub struct ColumnChoice {
    pub index: usize,
    pub header: String,
    pub sample: String,
    pub key: String,
    pub unit: String,
}

/// A row as it would be stored, in the shop's units.
pub struct PreviewRow {
    pub line: u64,
    pub attached_to: Option<i64>,
    pub customer: Vec<(&'static str, String)>,
    pub car: Vec<(&'static str, String)>,
    pub build: Vec<(&'static str, String)>,
    pub measurement: Vec<(&'static str, String)>,
}

#[derive(Template)]
#[template(path = "admin/import_map.html")]
pub struct MapPage {
    pub page: Layout,
    pub token: String,
    pub file_name: String,
    pub delimiter_words: &'static str,
    pub columns: Vec<ColumnChoice>,
    pub targets: Vec<Target>,
    pub groups: Vec<&'static str>,
    pub units: Vec<&'static str>,
    pub date_orders: &'static [(&'static str, &'static str)],
    pub date_order: String,
    pub duplicates: String,
    /// Per-row choices as posted, by line.
    pub dup_lines: BTreeMap<u64, String>,
    pub errors: FieldErrors,
    /// Mapping problems not about one column (a required field no column gives).
    pub general: Vec<String>,
    pub checked: bool,
    pub answer: ImportAnswer,
    pub row_problems: Vec<import::Problem>,
    pub more_problems: usize,
    pub preview: Vec<PreviewRow>,
}

impl MapPage {
    pub fn dup_choice(&self, line: &u64) -> &str {
        self.dup_lines.get(line).map_or("", String::as_str)
    }
}

/// GET /import: the upload form.
pub async fn page(
    State(state): State<AppState>,
    user: CurrentUser,
    flash: Flash,
) -> AppResult<Response> {
    user.require_admin()?;
    let html = upload_page(&state, &user, flash.note.clone(), FieldErrors::default()).await?;
    Ok(flash.respond(Html(html)))
}

async fn upload_page(
    state: &AppState,
    user: &CurrentUser,
    flash: Option<String>,
    errors: FieldErrors,
) -> AppResult<String> {
    let mut conn = state.pool.acquire().await?;
    let (page, _) = Layout::load(&mut conn, user, "settings", "Import a spreadsheet").await?;
    Ok(UploadPage {
        page,
        flash,
        errors,
        max_mb: import::MAX_BYTES / (1024 * 1024),
        max_rows: "50,000".into(),
    }
    .render()?)
}

async fn refuse_upload(
    state: &AppState,
    user: &CurrentUser,
    message: String,
) -> AppResult<Response> {
    let mut errors = FieldErrors::default();
    errors.add("file", message);
    let html = upload_page(state, user, None, errors).await?;
    Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(html)).into_response())
}

/// POST /import: the file (multipart, with the CSRF token), kept until it is mapped.
pub async fn upload(
    State(state): State<AppState>,
    user: CurrentUser,
    multipart: Result<Multipart, axum::extract::multipart::MultipartRejection>,
) -> AppResult<Response> {
    let Ok(mut multipart) = multipart else {
        return Err(AppError::BadCsrf);
    };
    let (mut csrf, mut name, mut bytes) = (String::new(), String::new(), None::<Vec<u8>>);
    loop {
        let field = match multipart.next_field().await {
            Ok(Some(f)) => f,
            Ok(None) => break,
            Err(e) if e.status() == StatusCode::PAYLOAD_TOO_LARGE => {
                return refuse_upload(&state, &user, too_large()).await;
            }
            Err(_) => return Err(AppError::BadCsrf),
        };
        match field.name() {
            Some("_csrf") => csrf = field.text().await.map_err(|_| AppError::BadCsrf)?,
            Some("file") => {
                name = field.file_name().unwrap_or("").chars().take(200).collect();
                match field.bytes().await {
                    Ok(b) => bytes = Some(b.to_vec()),
                    Err(e) if e.status() == StatusCode::PAYLOAD_TOO_LARGE => {
                        return refuse_upload(&state, &user, too_large()).await;
                    }
                    Err(_) => return Err(AppError::BadCsrf),
                }
            }
            _ => {}
        }
    }
    if !crate::auth::same_secret(&csrf, &user.csrf) {
        return Err(AppError::BadCsrf);
    }
    user.require_admin()?;
    let bytes = bytes.unwrap_or_default();
    if bytes.is_empty() {
        return refuse_upload(&state, &user, "Choose a CSV file to import.".into()).await;
    }
    if bytes.len() > import::MAX_BYTES {
        return refuse_upload(&state, &user, too_large()).await;
    }
    let Ok(text) = String::from_utf8(bytes) else {
        return refuse_upload(
            &state,
            &user,
            "This file is not UTF-8 text: save it from the spreadsheet as “CSV UTF-8” and send it again.".into(),
        )
        .await;
    };
    if let Err(p) = import::read(&text) {
        return refuse_upload(&state, &user, format!("Line {}: {}", p.line, p.message)).await;
    }
    let token = crate::auth::new_secret("im");
    state.staged_imports.put(Staged {
        token: token.clone(),
        user_id: user.id,
        name,
        deflated: db::pass_logs::deflate(text.as_bytes()),
        at: Instant::now(),
    });
    Ok(Redirect::to(&format!("/import/map?upload={token}")).into_response())
}

#[derive(Debug, Default, serde::Deserialize)]
#[serde(default)]
pub struct UploadQuery {
    upload: String,
}

async fn expired(state: &AppState, user: &CurrentUser) -> AppResult<Response> {
    let mut errors = FieldErrors::default();
    errors.add(
        "file",
        "That file has expired (files wait an hour): send it again.",
    );
    let html = upload_page(state, user, None, errors).await?;
    Ok((StatusCode::NOT_FOUND, Html(html)).into_response())
}

/// GET /import/map?upload=...: the mapping for a file just sent, as remembered for its header;
/// checked at once when a mapping was remembered.
pub async fn map_form(
    State(state): State<AppState>,
    user: CurrentUser,
    Query(q): Query<UploadQuery>,
) -> AppResult<Response> {
    user.require_admin()?;
    let Some((name, text)) = state.staged_imports.get(&q.upload, user.id) else {
        return expired(&state, &user).await;
    };
    let req = ImportRequest {
        file_name: name.clone(),
        csv: text.clone(),
        dry_run: Some(true),
        ..ImportRequest::default()
    };
    let (answer, _) = run(&state, &user, req).await?;
    let checked = !answer.mapping.columns.is_empty();
    let page = map_page(
        &state,
        &user,
        q.upload,
        name,
        &text,
        answer,
        FieldErrors::default(),
        checked,
        BTreeMap::new(),
        String::new(),
    )
    .await?;
    Ok(Html(page.render()?).into_response())
}

/// POST /import/map: check the file with the choices made, or import it.
pub async fn map_save(State(state): State<AppState>, signed: SignedForm) -> AppResult<Response> {
    let SignedForm { user, form } = signed;
    user.require_admin()?;
    let token = form.get("upload").to_string();
    let Some((name, text)) = state.staged_imports.get(&token, user.id) else {
        return expired(&state, &user).await;
    };
    let sheet_header = import::read(&text).map(|s| s.header).unwrap_or_default();
    let mut errors = FieldErrors::default();
    let (mut columns, mut units) = (BTreeMap::new(), BTreeMap::new());
    let mut by_key: BTreeMap<String, String> = BTreeMap::new();
    for (i, header) in sheet_header.iter().enumerate() {
        let key = form.get(&format!("map_{i}")).to_string();
        if !key.is_empty() {
            if let Some(other) = by_key.get(&key) {
                errors.add(&format!("map_{i}"), format!("already chosen for “{other}”"));
            } else {
                by_key.insert(key.clone(), header.clone());
                columns.insert(key, header.clone());
            }
        }
        let unit = form.get(&format!("unit_{i}"));
        if !unit.is_empty() {
            units.insert(header.clone(), unit.to_string());
        }
    }
    let choice = |v: &str| match v {
        "attach" => Some(DupChoice::Attach),
        "skip" => Some(DupChoice::Skip),
        _ => None,
    };
    let mut dup_lines = BTreeMap::new();
    let mut duplicate_lines = BTreeMap::new();
    for (k, v) in form.pairs() {
        if let Some(line) = k.strip_prefix("dup_").and_then(|l| l.parse::<u64>().ok()) {
            dup_lines.insert(line, v.trim().to_string());
            if let Some(c) = choice(v.trim()) {
                duplicate_lines.insert(line.to_string(), c);
            }
        }
    }
    let committing = form.get("action") == "import" && errors.is_empty();
    let req = ImportRequest {
        file_name: name.clone(),
        csv: text.clone(),
        columns: Some(columns),
        units: Some(units),
        date_order: Some(form.get("date_order").to_string()),
        duplicates: choice(form.get("duplicates")),
        duplicate_lines,
        dry_run: Some(!committing),
    };
    let (answer, refused) = run(&state, &user, req).await?;
    if committing && !refused {
        state.staged_imports.drop_token(&token);
        let note = format!(
            "Imported “{}”: {} customer{}, {} car{}, {} build{}, {} cover height{}{}{}.",
            if name.is_empty() { "the file" } else { &name },
            answer.customers_created,
            plural(answer.customers_created),
            answer.cars_created,
            plural(answer.cars_created),
            answer.builds_created,
            plural(answer.builds_created),
            answer.measurements_created,
            plural(answer.measurements_created),
            if answer.attached > 0 {
                format!(
                    "; {} row{} added to customers already in the shop",
                    answer.attached,
                    plural(answer.attached)
                )
            } else {
                String::new()
            },
            if answer.skipped > 0 {
                format!("; {} row{} skipped", answer.skipped, plural(answer.skipped))
            } else {
                String::new()
            },
        );
        return Ok(flash::redirect(&state, "/import", &note));
    }
    let status = if refused || !errors.is_empty() {
        StatusCode::UNPROCESSABLE_ENTITY
    } else {
        StatusCode::OK
    };
    let page = map_page(
        &state,
        &user,
        token,
        name,
        &text,
        answer,
        errors,
        true,
        dup_lines,
        form.get("duplicates").to_string(),
    )
    .await?;
    Ok((status, Html(page.render()?)).into_response())
}

fn plural(n: usize) -> &'static str {
    if n == 1 { "" } else { "s" }
}

#[allow(clippy::too_many_arguments)]
async fn map_page(
    state: &AppState,
    user: &CurrentUser,
    token: String,
    file_name: String,
    text: &str,
    answer: ImportAnswer,
    mut errors: FieldErrors,
    checked: bool,
    dup_lines: BTreeMap<u64, String>,
    duplicates: String,
) -> AppResult<MapPage> {
    let mut conn = state.pool.acquire().await?;
    let (page, _) = Layout::load(&mut conn, user, "settings", "Import a spreadsheet").await?;
    drop(conn);
    let sheet = import::read(text).ok();
    let (header, header_line, first) = match &sheet {
        Some(s) => (
            s.header.clone(),
            s.header_line,
            s.rows.first().map(|(_, c)| c.clone()).unwrap_or_default(),
        ),
        None => (Vec::new(), 1, Vec::new()),
    };
    let columns: Vec<ColumnChoice> = header
        .iter()
        .enumerate()
        .map(|(i, h)| ColumnChoice {
            index: i,
            header: h.clone(),
            sample: first.get(i).cloned().unwrap_or_default(),
            key: answer
                .mapping
                .columns
                .iter()
                .find(|(_, v)| *v == h)
                .map(|(k, _)| k.clone())
                .unwrap_or_default(),
            unit: answer.mapping.units.get(h).cloned().unwrap_or_default(),
        })
        .collect();
    let mut general = Vec::new();
    let mut row_problems = Vec::new();
    for p in &answer.problems {
        if p.line == header_line && checked {
            if p.message.contains("order the dates") || p.message.contains("date order") {
                errors.add("date_order", p.message.clone());
            } else if let Some(i) = header.iter().position(|h| *h == p.column) {
                let name = format!("map_{i}");
                if p.message.starts_with("choose ") || p.message.contains("takes no unit") {
                    errors.add(&format!("unit_{i}"), p.message.clone());
                } else {
                    errors.add(&name, p.message.clone());
                }
            } else {
                general.push(p.message.clone());
            }
        } else if p.line != header_line || !checked {
            row_problems.push(p.clone());
        }
    }
    let more_problems = row_problems.len().saturating_sub(PROBLEMS_SHOWN);
    row_problems.truncate(PROBLEMS_SHOWN);
    let units = page.units();
    let shown = |v: &serde_json::Value, which: &str| -> Vec<(&'static str, String)> {
        let v = &v[which];
        if v.is_null() {
            return Vec::new();
        }
        let mut list = match which {
            "customer" => serde_json::from_value::<CustomerInput>(v.clone())
                .map(|r| field::shown(&r, units))
                .unwrap_or_default(),
            "car" => serde_json::from_value::<CarInput>(v.clone())
                .map(|r| field::shown(&r, units))
                .unwrap_or_default(),
            "build" => serde_json::from_value::<BuildInput>(v.clone())
                .map(|r| field::shown(&r, units))
                .unwrap_or_default(),
            _ => serde_json::from_value::<HeightInput>(v.clone())
                .map(|r| field::shown(&r, units))
                .unwrap_or_default(),
        };
        // A torque curve is never imported: "0 points" says nothing.
        list.retain(|(_, words)| words != "0 points");
        list
    };
    let preview = answer
        .preview
        .iter()
        .map(|v| PreviewRow {
            line: v["line"].as_u64().unwrap_or(0),
            attached_to: v["customer_id"].as_i64(),
            customer: shown(v, "customer"),
            car: shown(v, "car"),
            build: shown(v, "build"),
            measurement: shown(v, "measurement"),
        })
        .collect();
    let targets = import::targets();
    let mut groups: Vec<&'static str> = Vec::new();
    for t in &targets {
        if !groups.contains(&t.group) {
            groups.push(t.group);
        }
    }
    let mut units_list: Vec<&'static str> = import::UNITS.to_vec();
    units_list.push("cell");
    Ok(MapPage {
        page,
        token,
        file_name,
        delimiter_words: sheet.as_ref().map_or("commas", |s| s.delimiter_words()),
        columns,
        targets,
        groups,
        units: units_list,
        date_orders: DATE_ORDERS,
        date_order: answer.mapping.date_order.clone(),
        duplicates,
        dup_lines,
        errors,
        general,
        checked,
        row_problems,
        more_problems,
        preview,
        answer,
    })
}
