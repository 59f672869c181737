//! The calculation API: capacity, setting recommendation, disc wear and the launch preview, for any clutch sent as
//! JSON, and the wear of a stored build. Bad input answers 422 naming the field, never 500.

use axum::Json;
use axum::extract::{Query, State};

use crate::db;
use crate::error::{ApiError, ApiResult, AppError};
use crate::model::as_of::BuildAsOf;
use crate::model::calibration::calibrated;
use crate::web::AppState;
use crate::web::http::extract::{ApiId as Id, ApiJson, ApiUser};
use crate::web::http::heavy::Caller;
use clutch::InputError;
use clutch::calibration::{CalibrateRequest, CalibrationReport, Fit};
use clutch::capacity::recommend::{RecommendRequest, Recommendation};
use clutch::capacity::report::CapacityReport;
use clutch::capacity::request::CapacityRequest;
use clutch::launch::request::{LaunchReport, LaunchRequest};
use clutch::wear::{WearReport, WearRequest};

fn invalid(err: InputError) -> ApiError {
    ApiError(AppError::field(&err.field, err.message))
}

pub async fn capacity(
    _: ApiUser,
    ApiJson(req): ApiJson<CapacityRequest>,
) -> ApiResult<CapacityReport> {
    clutch::capacity::report::capacity(&req)
        .map(Json)
        .map_err(invalid)
}

/// The search: heavy work, on the bounded pool in the caller's turn (`web::http::heavy`).
pub async fn recommend(
    State(state): State<AppState>,
    _: ApiUser,
    caller: Caller,
    ApiJson(req): ApiJson<RecommendRequest>,
) -> ApiResult<Recommendation> {
    state
        .heavy
        .run_for(&caller, move || {
            clutch::capacity::recommend::recommend(&req)
        })
        .await?
        .map(Json)
        .map_err(invalid)
}

/// The fit: heavy work, on the bounded pool in the caller's turn.
pub async fn calibrate(
    State(state): State<AppState>,
    _: ApiUser,
    caller: Caller,
    ApiJson(req): ApiJson<CalibrateRequest>,
) -> ApiResult<CalibrationReport> {
    state
        .heavy
        .run_for(&caller, move || {
            clutch::calibration::calibrate_request(&req)
        })
        .await?
        .map(Json)
        .map_err(invalid)
}

/// The simulation (up to tens of ms at the costliest request): on the bounded pool in the
/// caller's turn.
pub async fn launch(
    State(state): State<AppState>,
    _: ApiUser,
    caller: Caller,
    ApiJson(req): ApiJson<LaunchRequest>,
) -> ApiResult<LaunchReport> {
    state
        .heavy
        .run_for(&caller, move || clutch::launch::request::launch(&req))
        .await?
        .map(Json)
        .map_err(invalid)
}

pub async fn wear(_: ApiUser, ApiJson(req): ApiJson<WearRequest>) -> ApiResult<WearReport> {
    clutch::wear::analyze(&req).map(Json).map_err(invalid)
}

/// The wear of a stored build, in storage units (mm, N).
pub async fn build_wear(
    State(state): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<WearReport> {
    let mut conn = state.pool.acquire().await.map_err(AppError::from)?;
    let dossier = db::dossier::load(&mut conn, id)
        .await?
        .ok_or(ApiError(AppError::NotFound))?;
    let settings = db::settings::get(&mut conn).await?;
    let request = BuildAsOf::now(&dossier, &settings)
        .wear()
        .map_err(|missing| ApiError(AppError::field("measurements", missing)))?;
    clutch::wear::analyze(&request).map(Json).map_err(invalid)
}

/// `?fit=mu_and_gain` on a stored build's calibration (default `mu`).
#[derive(Debug, Default, serde::Deserialize)]
#[serde(default)]
pub struct FitQuery {
    fit: Fit,
}

/// The calibration of a stored build from its passes with a lockup seen (storage units: N·m),
/// each with the setting in force and the wear measured on or before its date.
pub async fn build_calibration(
    State(state): State<AppState>,
    _: ApiUser,
    caller: Caller,
    Id(id): Id,
    Query(query): Query<FitQuery>,
) -> ApiResult<CalibrationReport> {
    let mut conn = state.pool.acquire().await.map_err(AppError::from)?;
    let dossier = db::dossier::load(&mut conn, id)
        .await?
        .ok_or(ApiError(AppError::NotFound))?;
    let settings = db::settings::get(&mut conn).await?;
    drop(conn);
    let calibration = state
        .heavy
        .run_for(&caller, move || {
            calibrated(&dossier, &settings, query.fit).map(|c| c.report)
        })
        .await?
        .map_err(invalid)?;
    Ok(Json(calibration))
}
