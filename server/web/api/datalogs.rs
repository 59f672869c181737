//! Data logs of passes: the analysis of any CSV sent to the calculation API, a pass's file
//! stored through the API and its analysis read back. The file is read and analysed before
//! anything is written; a file that cannot be read or analysed saves nothing.

use std::sync::Arc;

use axum::Json;
use axum::extract::State;
use serde::Deserialize;
use sqlx::SqliteConnection;

use crate::db;
use crate::error::{ApiError, ApiResult, AppError};
use crate::records::stored::Car;
use crate::records::stored::Pass;
use crate::web::AppState;
use crate::web::http::extract::{ApiJson, ApiUser, CurrentUser, PathId};
use crate::web::http::heavy::Caller;
use clutch::InputError;
use clutch::datalog::request::{
    CarFacts, LogAnalysisReport, LogAnalysisRequest, LogColumns, LogResult, LogSettings, TimeUnit,
};
use clutch::quantity::limits;
use clutch::units::Units;

/// Largest body of a log upload: the largest file, with room for JSON escaping or the
/// multipart envelope.
pub const LOG_BODY_LIMIT_BYTES: usize = limits::LOG_FILE_BYTES + limits::LOG_FILE_BYTES / 4;

fn invalid(err: InputError) -> ApiError {
    ApiError(AppError::field(&err.field, err.message))
}

/// POST /api/v1/calc/log-analysis: one of the shop's analyses at once, on the bounded
/// blocking pool, in the caller's turn; a large file's work in two pieces at once while a
/// second place is free (`Heavy::spare_core`).
pub async fn calc(
    State(state): State<AppState>,
    _: ApiUser,
    caller: Caller,
    ApiJson(req): ApiJson<LogAnalysisRequest>,
) -> ApiResult<LogAnalysisReport> {
    let _analysis = state.heavy.analysis()?;
    let heavy = Arc::clone(&state.heavy);
    state
        .heavy
        .run_for(&caller, move || {
            clutch::datalog::request::analyze_request_on(&req, &heavy.spare_core())
        })
        .await?
        .map(Json)
        .map_err(invalid)
}

/// A pass with its car and the shop's units.
pub struct PassCar {
    pub pass: Pass,
    pub car: Car,
    pub units: Units,
}

/// The pass `id` (of a live customer) with its car.
pub async fn pass_car(conn: &mut SqliteConnection, id: i64) -> Result<Option<PassCar>, AppError> {
    let Some(pass) = db::passes::by_id(conn, id).await? else {
        return Ok(None);
    };
    let Some(build) = db::builds::by_id(conn, pass.build_id).await? else {
        return Ok(None);
    };
    let Some(car) = db::cars::by_id(conn, build.car_id).await? else {
        return Ok(None);
    };
    let units = db::settings::get(conn).await?.units();
    Ok(Some(PassCar { pass, car, units }))
}

impl PassCar {
    /// What this car's last log was read with; the engine inertia, when no log gave one, from
    /// the car record (the launch preview's field).
    pub async fn remembered(&self, conn: &mut SqliteConnection) -> sqlx::Result<LogSettings> {
        let mut s = db::pass_logs::mapping(conn, self.car.id)
            .await?
            .unwrap_or_default();
        s.engine_inertia_kgm2 = s.engine_inertia_kgm2.or(self.car.data.engine_inertia_kg_m2);
        Ok(s)
    }

    fn facts(&self) -> CarFacts<'_> {
        let c = &self.car.data;
        CarFacts {
            first_gear_ratio: c.first_gear_ratio,
            final_drive_ratio: c.final_drive_ratio,
            tire_diameter_mm: c.tire_diameter_mm.map(|d| d.mm()),
            torque_curve_nm: &c.torque_curve_nm,
        }
    }

    /// What picks the analysis of a file with `settings` for this car (its ratios, tire and
    /// torque curve, the shop's units): kept analyses are found by it.
    pub fn analysis_key(&self, settings: &LogSettings) -> String {
        let c = &self.car.data;
        format!(
            "{settings:?} {:?} {:?} {:?} {:?} {:?}",
            c.first_gear_ratio,
            c.final_drive_ratio,
            c.tire_diameter_mm,
            c.torque_curve_nm,
            self.units
        )
    }

    /// Reads and analyses `text` with `settings` for this pass's car: one of the shop's
    /// analyses at once, on the bounded blocking pool, in `caller`'s turn (429 past either);
    /// a large file's work in two pieces at once while a second place is free
    /// (`Heavy::spare_core`).
    /// The outer error is the refusal, the inner one the file's.
    pub async fn analyse(
        &self,
        state: &AppState,
        caller: &Caller,
        settings: &LogSettings,
        text: std::sync::Arc<Vec<u8>>,
    ) -> Result<Result<LogResult, InputError>, AppError> {
        let valid = match settings.valid(self.facts(), self.units) {
            Ok(v) => v,
            Err(e) => return Ok(Err(e)),
        };
        let _analysis = state.heavy.analysis()?;
        let heavy = Arc::clone(&state.heavy);
        state
            .heavy
            .run_for(caller, move || valid.run_on(&text, &heavy.spare_core()))
            .await
    }
}

/// Most characters of a log's file name kept (the page's upload and the API alike).
pub const FILE_NAME_CHARS: usize = 200;

/// A file name as kept: at most [`FILE_NAME_CHARS`] characters.
pub fn file_name(name: &str) -> String {
    name.chars().take(FILE_NAME_CHARS).collect()
}

/// POST /api/v1/passes/{id}/log body: the file and how to read it (storage units). Without
/// `columns`, the mapping remembered for the car is used.
#[derive(Debug, Deserialize, utoipa::ToSchema)]
pub struct PassLogBody {
    pub csv: String,
    #[serde(default)]
    pub file_name: String,
    pub columns: Option<LogColumns>,
    pub time_unit: Option<TimeUnit>,
    pub slip_on_pct: Option<f64>,
    pub hold_ms: Option<f64>,
    /// kg·m²; default the one remembered for the car.
    pub engine_inertia_kgm2: Option<f64>,
}

/// POST /api/v1/passes/{id}/log: analyse the file with the car's data and keep it with the
/// pass; answers the analysis (N·m, storage units).
pub async fn api_store(
    State(state): State<AppState>,
    ApiUser(user): ApiUser,
    caller: Caller,
    PathId(id): PathId,
    ApiJson(body): ApiJson<PassLogBody>,
) -> ApiResult<LogAnalysisReport> {
    let mut conn = state.pool.acquire().await.map_err(AppError::from)?;
    let pc = pass_car(&mut conn, id)
        .await?
        .ok_or(ApiError(AppError::NotFound))?;
    let remembered = pc.remembered(&mut conn).await.map_err(AppError::from)?;
    drop(conn);
    let settings = LogSettings {
        columns: body.columns.unwrap_or(remembered.columns),
        time_unit: body.time_unit.unwrap_or(remembered.time_unit),
        slip_on_pct: body.slip_on_pct.unwrap_or(remembered.slip_on_pct),
        hold_ms: body.hold_ms.unwrap_or(remembered.hold_ms),
        engine_inertia_kgm2: body.engine_inertia_kgm2.or(remembered.engine_inertia_kgm2),
    };
    if let Some(i) = settings.engine_inertia_kgm2 {
        limits::ENGINE_INERTIA
            .check("engine_inertia_kgm2", i, Units::Metric)
            .map_err(invalid)?;
    }
    let name = file_name(&body.file_name);
    let text = std::sync::Arc::new(body.csv.into_bytes());
    let result = pc
        .analyse(&state, &caller, &settings, text.clone())
        .await?
        .map_err(invalid)?;
    let file_bytes = text.len();
    let deflated = state
        .heavy
        .run(move || db::pass_logs::deflate(&text))
        .await?;
    let mut tx = state.write(&user).await.map_err(AppError::from)?;
    // The pass may have gone (its customer deleted) while the file was read.
    if db::passes::by_id(&mut tx, id)
        .await
        .map_err(AppError::from)?
        .is_none()
    {
        return Err(ApiError(AppError::NotFound));
    }
    save(
        &mut tx, &pc, &user, &name, file_bytes, &deflated, &settings, &result,
    )
    .await?;
    tx.commit().await.map_err(AppError::from)?;
    Ok(Json(result.report(Units::Metric)))
}

/// Stores a pass's log (deflated beforehand, off the async threads: see
/// [`crate::db::pass_logs::deflate`]) and remembers its settings for the car, in the caller's
/// transaction.
#[expect(
    clippy::too_many_arguments,
    reason = "one call per store, every part named"
)]
pub async fn save(
    conn: &mut SqliteConnection,
    pc: &PassCar,
    user: &CurrentUser,
    file_name: &str,
    file_bytes: usize,
    deflated: &[u8],
    settings: &LogSettings,
    result: &LogResult,
) -> Result<(), AppError> {
    let log = db::pass_logs::NewLog {
        pass_id: pc.pass.id,
        car_id: pc.car.id,
        user_id: user.id,
        file_name,
        file_bytes,
        deflated,
        settings,
        result,
    };
    Ok(db::pass_logs::store(conn, &log).await?)
}

/// GET /api/v1/passes/{id}/analysis: the stored file analysed again (N·m, storage units).
pub async fn api_analysis(
    State(state): State<AppState>,
    _: ApiUser,
    caller: Caller,
    PathId(id): PathId,
) -> ApiResult<LogAnalysisReport> {
    let mut conn = state.pool.acquire().await.map_err(AppError::from)?;
    let pc = pass_car(&mut conn, id)
        .await?
        .ok_or(ApiError(AppError::NotFound))?;
    let raw = db::pass_logs::file(&mut conn, id)
        .await
        .map_err(AppError::from)?
        .ok_or(ApiError(AppError::NotFound))?;
    drop(conn);
    let stored = open(&state, raw)
        .await?
        .map_err(|e| ApiError(AppError::field("csv", e)))?;
    let result = pc
        .analyse(
            &state,
            &caller,
            &stored.settings,
            std::sync::Arc::new(stored.text),
        )
        .await?
        .map_err(invalid)?;
    Ok(Json(result.report(Units::Metric)))
}

/// A stored file inflated and its settings read (off the async threads), or why it cannot be.
pub async fn open(
    state: &AppState,
    raw: db::pass_logs::StoredRaw,
) -> Result<Result<db::pass_logs::StoredFile, String>, AppError> {
    state
        .heavy
        .run(move || raw.open(limits::LOG_FILE_BYTES))
        .await
}
