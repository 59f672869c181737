//! The calculation API: capacity, setting recommendation, disc wear and the launch preview, for any clutch sent as
//! JSON, and the wear of a stored build. Bad input answers 422 naming the field, never 500.

use axum::Json;
use axum::extract::{Query, State};

use super::AppState;
use super::api::Id;
use super::extract::{ApiJson, ApiUser};
use crate::clutch::InputError;
use crate::clutch::calibrate::{CalibrateRequest, CalibrationReport, Fit};
use crate::clutch::launch_request::{LaunchReport, LaunchRequest};
use crate::clutch::recommend::{RecommendRequest, Recommendation};
use crate::clutch::report::CapacityReport;
use crate::clutch::request::CapacityRequest;
use crate::clutch::wear::{WearReport, WearRequest};
use crate::db;
use crate::error::{ApiError, ApiResult, AppError};
use crate::model::BuildFacts;

fn invalid(err: InputError) -> ApiError {
    ApiError(AppError::field(&err.field, err.message))
}

pub async fn capacity(
    _: ApiUser,
    ApiJson(req): ApiJson<CapacityRequest>,
) -> ApiResult<CapacityReport> {
    crate::clutch::capacity(&req).map(Json).map_err(invalid)
}

pub async fn recommend(
    _: ApiUser,
    ApiJson(req): ApiJson<RecommendRequest>,
) -> ApiResult<Recommendation> {
    crate::clutch::recommend(&req).map(Json).map_err(invalid)
}

pub async fn calibrate(
    _: ApiUser,
    ApiJson(req): ApiJson<CalibrateRequest>,
) -> ApiResult<CalibrationReport> {
    crate::clutch::calibrate::calibrate_request(&req)
        .map(Json)
        .map_err(invalid)
}

pub async fn launch(_: ApiUser, ApiJson(req): ApiJson<LaunchRequest>) -> ApiResult<LaunchReport> {
    crate::clutch::launch_request::launch(&req)
        .map(Json)
        .map_err(invalid)
}

pub async fn wear(_: ApiUser, ApiJson(req): ApiJson<WearRequest>) -> ApiResult<WearReport> {
    crate::clutch::wear::analyze(&req)
        .map(Json)
        .map_err(invalid)
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
    let request = BuildFacts::of(&dossier, &settings)
        .wear(&dossier.heights)
        .map_err(|missing| ApiError(AppError::field("measurements", missing)))?;
    crate::clutch::wear::analyze(&request)
        .map(Json)
        .map_err(invalid)
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
    Id(id): Id,
    Query(query): Query<FitQuery>,
) -> ApiResult<CalibrationReport> {
    let mut conn = state.pool.acquire().await.map_err(AppError::from)?;
    let dossier = db::dossier::load(&mut conn, id)
        .await?
        .ok_or(ApiError(AppError::NotFound))?;
    let settings = db::settings::get(&mut conn).await?;
    let input = BuildFacts::of(&dossier, &settings)
        .calibration(&dossier, query.fit)
        .map_err(|missing| ApiError(AppError::field("passes", missing)))?;
    let mut report =
        crate::clutch::calibrate::calibrate_request(&input.request).map_err(invalid)?;
    report.notes.extend(input.notes);
    Ok(Json(report))
}
