//! The calculation API: capacity, setting recommendation, disc wear and the launch preview, for any clutch sent as
//! JSON, and the wear of a stored build. Bad input answers 422 naming the field, never 500.

use axum::Json;
use axum::extract::{Query, State};

use crate::db;
use crate::error::{ApiError, ApiResult, AppError};
use crate::model::as_of::{BuildAsOf, FrictionSource, bench_review};
use crate::model::calibration::calibrated;
use crate::model::due::WorkStatus;
use crate::model::energy::energy_forecast;
use crate::web::AppState;
use crate::web::http::extract::{ApiId as Id, ApiJson, ApiUser, from_json_value};
use crate::web::http::heavy::Caller;
use clutch::InputError;
use clutch::calibration::launch::{LaunchCalibrateRequest, calibrate_launch};
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

/// POST /calc/calibrate: by `method`, the torque balance at lockup (`"torque_balance"`, the
/// default) or the whole launch (`"launch"`, the body of `/calc/launch` without `friction.mu`).
/// Heavy work: on the bounded pool in the caller's turn.
pub async fn calibrate(
    State(state): State<AppState>,
    _: ApiUser,
    caller: Caller,
    ApiJson(body): ApiJson<serde_json::Value>,
) -> ApiResult<serde_json::Value> {
    enum Method {
        TorqueBalance(Box<CalibrateRequest>),
        Launch(Box<LaunchCalibrateRequest>),
    }
    let method = match body.get("method") {
        None => Method::TorqueBalance(from_json_value(body)?),
        Some(m) if m == "torque_balance" => Method::TorqueBalance(from_json_value(body)?),
        Some(m) if m == "launch" => Method::Launch(from_json_value(body)?),
        Some(_) => {
            return Err(ApiError(AppError::field(
                "method",
                "must be \"torque_balance\" (the default) or \"launch\"",
            )));
        }
    };
    let answer = state
        .heavy
        .run_for(&caller, move || match method {
            Method::TorqueBalance(req) => clutch::calibration::calibrate_request(&req)
                .map(|r| serde_json::to_value(r).unwrap_or_default()),
            Method::Launch(req) => {
                calibrate_launch(&req).map(|r| serde_json::to_value(r).unwrap_or_default())
            }
        })
        .await?
        .map_err(invalid)?;
    Ok(Json(answer))
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

/// A stored build's wear (storage units: mm, N), with the forecast by slip energy beside the
/// one per pass.
#[derive(Debug, serde::Serialize, utoipa::ToSchema)]
pub struct BuildWear {
    #[serde(flatten)]
    pub report: WearReport,
    /// Total wear per MJ of slip energy, mm/MJ (null without an interval whose passes all have
    /// a known energy).
    pub wear_per_mj: Option<f64>,
    /// Its 95 % interval, mm/MJ (null below two intervals).
    pub wear_per_mj_ci95: Option<[f64; 2]>,
    /// Intervals between cover heights used.
    pub wear_per_mj_n: usize,
    /// Passes until a shim is due at the current setting's modelled slip energy per pass.
    pub passes_to_shim_due_by_energy: Option<f64>,
    /// Passes until the disc is due at that energy per pass.
    pub passes_to_disc_due_by_energy: Option<f64>,
}

/// The wear of a stored build, in storage units (mm, N).
pub async fn build_wear(
    State(state): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<BuildWear> {
    let (dossier, settings) = stored_build(&state, id).await?;
    // The build as of today and the forecast by energy (launch previews): off the async workers.
    let (request, energy) = state
        .heavy
        .run(move || {
            let now = BuildAsOf::now(&dossier, &settings);
            (now.wear(), energy_forecast(&dossier, &now).ok())
        })
        .await?;
    let request = request.map_err(|missing| ApiError(AppError::field("measurements", missing)))?;
    let report = clutch::wear::analyze(&request).map_err(invalid)?;
    Ok(Json(BuildWear {
        report,
        wear_per_mj: energy.as_ref().map(|e| e.fit.per_mj),
        wear_per_mj_ci95: energy.as_ref().and_then(|e| e.fit.ci95),
        wear_per_mj_n: energy.as_ref().map_or(0, |e| e.fit.n),
        passes_to_shim_due_by_energy: energy.as_ref().and_then(|e| e.passes_to_shim_due),
        passes_to_disc_due_by_energy: energy.as_ref().and_then(|e| e.passes_to_disc_due),
    }))
}

/// The friction in force on a stored build, as the API answers it.
#[derive(Debug, serde::Serialize, utoipa::ToSchema)]
pub struct FrictionAnswer {
    /// The μ the figures use.
    pub mu: f64,
    /// The facing's nominal μ.
    pub nominal_mu: f64,
    /// "calibrated", "entered" or "nominal".
    pub source: &'static str,
    /// Passes the calibrated μ comes from (only when `source` is "calibrated").
    #[serde(skip_serializing_if = "Option::is_none")]
    pub passes: Option<usize>,
    /// Why the calibration is not used, when it was looked at and is not.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub why_not_calibrated: Option<String>,
    /// In words, as the pages say it.
    pub words: String,
}

/// The capacity of a stored build's setting in force (storage units, metric), with the
/// friction it used (`model::as_of::Friction`: the calibrated μ when steady).
#[derive(Debug, serde::Serialize, utoipa::ToSchema)]
pub struct BuildCapacity {
    pub friction: FrictionAnswer,
    pub report: CapacityReport,
}

/// GET /builds/{id}/capacity: the capacity of the setting in force, with the friction in force.
pub async fn build_capacity(
    State(state): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<BuildCapacity> {
    let (dossier, settings) = stored_build(&state, id).await?;
    let now = BuildAsOf::now(&dossier, &settings);
    let request = now
        .clutch()
        .map_err(|missing| ApiError(AppError::field("build", missing)))?;
    let report = clutch::capacity::report::capacity(&request).map_err(invalid)?;
    let f = &now.friction;
    let (source, passes) = match f.source {
        FrictionSource::Calibrated { passes, .. } => ("calibrated", Some(passes)),
        FrictionSource::Entered { .. } => ("entered", None),
        FrictionSource::Nominal => ("nominal", None),
    };
    Ok(Json(BuildCapacity {
        friction: FrictionAnswer {
            mu: f.value(),
            nominal_mu: f.nominal,
            source,
            passes,
            why_not_calibrated: f.why_not_calibrated.clone(),
            words: f.words(),
        },
        report,
    }))
}

/// A stored build's work-due status, as the counter, the search, the build page and the sheet
/// say it (`model::due::WorkStatus`).
#[derive(Debug, serde::Serialize, utoipa::ToSchema)]
pub struct StatusAnswer {
    /// "disc_due", "shim_due", "springs", "shim_soon", "disc_soon", "ok" or "no_data".
    pub status: &'static str,
    /// The word the pages show.
    pub word: &'static str,
    /// Passes to go, for "shim_soon" and "disc_soon".
    #[serde(skip_serializing_if = "Option::is_none")]
    pub passes: Option<f64>,
}

/// GET /builds/{id}/status: the build's work-due status.
pub async fn build_status(
    State(state): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<StatusAnswer> {
    let (dossier, settings) = stored_build(&state, id).await?;
    let report = BuildAsOf::recorded(&dossier, &settings)
        .wear()
        .ok()
        .and_then(|r| clutch::wear::analyze(&r).ok());
    let springs_flagged = bench_review(&dossier.bench, &dossier.build.data, &settings)
        .as_ref()
        .and_then(|r| r.last())
        .is_some_and(|t| t.flagged());
    let s = WorkStatus::of_report(report.as_ref(), springs_flagged, settings.due_within_passes);
    Ok(Json(StatusAnswer {
        status: s.key(),
        word: s.word(),
        passes: match s {
            WorkStatus::Soon { passes, .. } => Some(passes),
            _ => None,
        },
    }))
}

/// A stored build's calibration (storage units: N·m), with friction against launch temperature.
#[derive(Debug, serde::Serialize, utoipa::ToSchema)]
pub struct BuildCalibrationAnswer {
    #[serde(flatten)]
    pub report: CalibrationReport,
    /// μ = μ0 + k·(θ − θref) over the passes' launch temperatures (°C); null with
    /// `mu_vs_temperature_reason` until 5 passes span 50 K.
    pub mu_vs_temperature: Option<clutch::heat::HeatFit>,
    /// Why there is no line yet (null when there is one).
    pub mu_vs_temperature_reason: Option<String>,
    /// `"launch"` when some passes above are read from the whole launch (their μ is the
    /// launch method's, their torque that μ times the capacity at lockup), else
    /// `"torque_balance"`.
    pub method: &'static str,
    /// μ read from the whole launch of each pass with its launch speed and a lock time (typed,
    /// else its data log's) (`"method": "launch"` of `/calc/calibrate`, the build of each
    /// pass's date); null when no pass allows it. The calibration above uses these μ.
    pub by_launch: Option<ByLaunchAnswer>,
}

/// The launch method over a stored build's passes.
#[derive(Debug, serde::Serialize, utoipa::ToSchema)]
pub struct ByLaunchAnswer {
    /// Passes read.
    pub n: usize,
    /// Mean μ of the passes read; null when none could be.
    pub mu: Option<f64>,
    /// mean ± t(0.975, n − 1)·sd/√n; null below two passes.
    pub ci95: Option<[f64; 2]>,
    /// Each pass read: its id and μ.
    pub passes: Vec<ByLaunchPass>,
    /// Passes that could not be read, and why.
    pub notes: Vec<String>,
}

/// One pass read by the launch method.
#[derive(Debug, serde::Serialize, utoipa::ToSchema)]
pub struct ByLaunchPass {
    pub pass_id: i64,
    pub mu: f64,
}

impl From<crate::model::calibration::LaunchMethod> for ByLaunchAnswer {
    fn from(m: crate::model::calibration::LaunchMethod) -> Self {
        let mean = m.mean();
        Self {
            n: m.passes.len(),
            mu: mean.map(|(mu, _)| mu),
            ci95: mean.and_then(|(_, ci)| ci),
            passes: m
                .passes
                .iter()
                .map(|p| ByLaunchPass {
                    pass_id: p.pass_id,
                    mu: p.mu,
                })
                .collect(),
            notes: m.notes,
        }
    }
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
) -> ApiResult<BuildCalibrationAnswer> {
    let (dossier, settings) = stored_build(&state, id).await?;
    let calibration = state
        .heavy
        .run_for(&caller, move || {
            calibrated(&dossier, &settings, query.fit).map(|c| {
                let heat = crate::model::heat::study(&dossier, &settings, &c);
                BuildCalibrationAnswer {
                    method: if c.by_launch > 0 {
                        "launch"
                    } else {
                        "torque_balance"
                    },
                    report: c.report,
                    mu_vs_temperature_reason: heat.fit.as_ref().err().cloned(),
                    mu_vs_temperature: heat.fit.ok(),
                    by_launch: c.launch.map(ByLaunchAnswer::from),
                }
            })
        })
        .await?
        .map_err(invalid)?;
    Ok(Json(calibration))
}

/// A stored build with everything recorded on it, and the shop's settings (404 for no such
/// live build); the connection goes back to the pool before any work on them.
async fn stored_build(
    state: &AppState,
    id: i64,
) -> Result<
    (
        crate::records::stored::Dossier,
        crate::records::settings::SettingsInput,
    ),
    ApiError,
> {
    let dossier = (state.reader.dossier(id).await)
        .map_err(AppError::from)?
        .ok_or(ApiError(AppError::NotFound))?;
    let mut conn = state.pool.acquire().await.map_err(AppError::from)?;
    let settings = db::settings::get(&mut conn).await?;
    Ok((dossier, settings))
}
