//! The calculation API: capacity, setting recommendation and disc wear, for any clutch sent as
//! JSON, and the wear of a stored build. Bad input answers 422 naming the field, never 500.

use axum::Json;
use axum::extract::State;

use super::AppState;
use super::api::Id;
use super::extract::{ApiJson, ApiUser};
use crate::clutch::InputError;
use crate::clutch::calibrate::{CalibrateRequest, CalibrationReport};
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
