//! The spreadsheet import (`POST /api/v1/import/spreadsheet`, and the admin page through
//! [`run`]): a dry run answers what a commit would make and every problem; a commit writes all
//! or nothing, in one audited transaction naming the import.

use std::collections::BTreeMap;

use axum::Json;
use axum::extract::State;
use axum::http::StatusCode;
use axum::response::{IntoResponse, Response};
use serde::{Deserialize, Serialize};
use serde_json::Value as JsonValue;

use crate::db;
use crate::error::{ApiError, AppError};
use crate::import::{self, DupChoice, Duplicate, Mapping, Problem};
use crate::web::AppState;
use crate::web::http::extract::{ApiJson, ApiUser, CurrentUser};

/// Largest body of an import: the largest file twice over (JSON escaping of a quoted file).
pub const IMPORT_BODY_LIMIT_BYTES: usize = 2 * import::MAX_BYTES + 1024 * 1024;

/// What an import is asked to do.
#[derive(Debug, Clone, Default, Deserialize, utoipa::ToSchema)]
#[serde(default, deny_unknown_fields)]
pub struct ImportRequest {
    /// The file's name, for the audit history ("customers-2019.csv").
    pub file_name: String,
    /// The file's text (CSV: comma, semicolon or tab; a header row).
    pub csv: String,
    /// Mapping key (`customer_name`, `build_spring_rate_n_per_mm`, ...) → the file's header
    /// text. Absent: the mapping remembered for this header.
    pub columns: Option<BTreeMap<String, String>>,
    /// The file's header text → unit (`in`, `mm`, `lbf`, `N`, `lbf/in`, `N/mm`, `lb`, `kg`,
    /// `g`, or `cell`). Absent: as remembered; a column without a unit is in the stored unit.
    pub units: Option<BTreeMap<String, String>>,
    /// `ymd`, `dmy` or `mdy`. Absent: as remembered.
    pub date_order: Option<String>,
    /// What to do with every row matching a customer already in the shop.
    pub duplicates: Option<DupChoice>,
    /// The same for single rows, by line ("7": "skip"); wins over `duplicates`.
    pub duplicate_lines: BTreeMap<String, DupChoice>,
    /// Check only (the default); `false` writes when no problem remains.
    pub dry_run: Option<bool>,
}

/// What an import made (or, in a dry run, would make).
#[derive(Debug, Clone, Default, Serialize, utoipa::ToSchema)]
pub struct ImportAnswer {
    pub dry_run: bool,
    /// Data rows read (blank rows left out).
    pub rows: usize,
    pub customers_created: usize,
    pub cars_created: usize,
    pub builds_created: usize,
    pub measurements_created: usize,
    /// Rows attached to customers that were in the shop before.
    pub attached: usize,
    pub skipped: usize,
    pub duplicates: Vec<Duplicate>,
    pub problems: Vec<Problem>,
    /// The first rows as they would be stored (storage units).
    pub preview: Vec<JsonValue>,
    /// The mapping used (the request's, or the one remembered for this header).
    pub mapping: Mapping,
    /// The file's header cells.
    pub header: Vec<String>,
    /// How the cells were split: `,`, `;` or `\t`.
    pub delimiter: String,
}

/// The import's message for a file past the size limit.
pub fn too_large() -> String {
    format!(
        "the file is larger than {} MB; split it and import each part (nothing was imported)",
        import::MAX_BYTES / (1024 * 1024)
    )
}

/// Runs an import for `user`: the answer, and whether it was refused (a commit with problems
/// left).
pub async fn run(
    state: &AppState,
    user: &CurrentUser,
    req: ImportRequest,
) -> Result<(ImportAnswer, bool), AppError> {
    let dry_run = req.dry_run.unwrap_or(true);
    let mut answer = ImportAnswer {
        dry_run,
        ..ImportAnswer::default()
    };
    let text = req.csv;
    let sheet = tokio::task::spawn_blocking(move || import::read(&text))
        .await
        .map_err(|e| AppError::Internal(e.to_string()))?;
    let sheet = match sheet {
        Ok(s) => s,
        Err(p) => {
            answer.problems.push(p);
            return Ok((answer, !dry_run));
        }
    };
    answer.rows = sheet.rows.len();
    answer.header = sheet.header.clone();
    answer.delimiter = (sheet.delimiter as char).to_string();
    let mut conn = state.pool.acquire().await?;
    let settings = db::settings::get(&mut conn).await?;
    let remembered = db::imports::remembered(&mut conn, &sheet.header)
        .await?
        .unwrap_or_default();
    let mapping = Mapping {
        columns: req
            .columns
            .filter(|c| !c.is_empty())
            .unwrap_or(remembered.columns),
        units: req.units.unwrap_or(remembered.units),
        date_order: req.date_order.unwrap_or(remembered.date_order),
    };
    answer.mapping = mapping.clone();
    let known = db::imports::known(&mut conn).await?;
    let known_cars = db::imports::known_cars(&mut conn).await?;
    drop(conn);
    let ctx = settings.ctx();
    let mut per_line = BTreeMap::new();
    for (line, choice) in req.duplicate_lines {
        if let Ok(n) = line.trim().parse::<u64>() {
            per_line.insert(n, choice);
        }
    }
    let all = req.duplicates;
    let (plan, sheet) = tokio::task::spawn_blocking(move || {
        let (rows, mut problems) = import::check_rows(&sheet, &mapping, &ctx);
        let shown_under = ["customer_phone", "customer_email", "customer_name"]
            .iter()
            .find_map(|k| mapping.columns.get(*k))
            .cloned()
            .unwrap_or_default();
        let mut plan = import::plan(rows, &known, &known_cars, all, &per_line, &shown_under);
        problems.append(&mut plan.problems);
        problems.sort_by_key(|p| p.line);
        plan.problems = problems;
        (plan, sheet)
    })
    .await
    .map_err(|e| AppError::Internal(e.to_string()))?;
    answer.customers_created = plan.customers.len();
    answer.cars_created = plan.cars.len();
    answer.builds_created = plan.builds.len();
    answer.measurements_created = plan.measurements();
    answer.attached = plan.attached;
    answer.skipped = plan.skipped;
    answer.duplicates = plan.duplicates.clone();
    answer.preview = plan.preview.clone();
    answer.problems = plan.problems.clone();
    if dry_run {
        return Ok((answer, false));
    }
    if !answer.problems.is_empty() {
        return Ok((answer, true));
    }
    let mut tx = state.write(user).await?;
    db::imports::name_in_audit(&mut tx, &user.username, &req.file_name).await?;
    db::imports::write(&mut tx, &plan, user.id).await?;
    db::imports::remember(&mut tx, &sheet.header, &answer.mapping).await?;
    tx.commit().await?;
    Ok((answer, false))
}

/// POST /api/v1/import/spreadsheet (admin).
pub async fn spreadsheet(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    ApiJson(req): ApiJson<ImportRequest>,
) -> Result<Response, ApiError> {
    user.require_admin()?;
    if req.csv.len() > import::MAX_BYTES {
        // The error shape of the API, with the import's own words.
        let body = serde_json::json!({ "error": too_large(), "field": "csv" });
        return Ok((StatusCode::PAYLOAD_TOO_LARGE, Json(body)).into_response());
    }
    let (answer, refused) = run(&s, &user, req).await?;
    let status = if refused {
        StatusCode::UNPROCESSABLE_ENTITY
    } else {
        StatusCode::OK
    };
    Ok((status, Json(answer)).into_response())
}
