//! The JSON API under `/api/v1`: list, read, create and update for every record, with the same
//! checks as the forms. Values are in storage units named in each field (`facing_od_mm`).
//! Errors are `{"error": "...", "field": "..."}`: 422 for bad input, 404 for unknown ids,
//! 401 without a valid bearer token.

use axum::Json;
use axum::extract::{Query, State};
use axum::http::StatusCode;
use axum::response::{IntoResponse, Response};
use serde::Deserialize;
use sqlx::SqliteConnection;

use crate::db;
use crate::error::{ApiError, ApiResult, AppError};
use crate::records::bench::BenchInput;
use crate::records::build::BuildInput;
use crate::records::car::CarInput;
use crate::records::customer::CustomerInput;
use crate::records::height::{HeightContext, HeightInput};
use crate::records::pass::PassInput;
use crate::records::setup::SetupInput;
use crate::records::{Checked, Ctx, FieldErrors, field};
use crate::web::AppState;
use crate::web::http::extract::{ApiId as Id, ApiJson, ApiUser};

#[derive(Debug, Default, Deserialize)]
#[serde(default)]
pub struct ListQuery {
    q: String,
    page: String,
}

impl ListQuery {
    /// The page asked for; anything but a number is the first page.
    fn page(&self) -> i64 {
        self.page.parse::<i64>().unwrap_or(0).clamp(0, 100_000)
    }
}

fn checked<T>(result: Result<Checked<T>, FieldErrors>) -> Result<Checked<T>, ApiError> {
    result.map_err(|e| ApiError(AppError::Invalid(e)))
}

fn created<T: serde::Serialize>(value: T) -> Response {
    (StatusCode::CREATED, Json(value)).into_response()
}

fn found<T>(value: Option<T>) -> Result<T, ApiError> {
    value.ok_or(ApiError(AppError::NotFound))
}

/// What the record API checks with: storage units (the JSON's own) and the shop's today.
async fn record_ctx(state: &AppState) -> Result<Ctx, ApiError> {
    let settings = db::settings::get(&mut *conn(state).await?).await?;
    Ok(settings.record_ctx())
}

async fn conn(state: &AppState) -> Result<sqlx::pool::PoolConnection<sqlx::Sqlite>, ApiError> {
    Ok(state.pool.acquire().await.map_err(AppError::from)?)
}

async fn write_tx(
    state: &AppState,
    user: &crate::web::http::extract::CurrentUser,
) -> Result<crate::web::Write, ApiError> {
    Ok(state.write(user).await.map_err(AppError::from)?)
}

async fn build_exists(
    conn: &mut SqliteConnection,
    id: i64,
) -> Result<crate::records::stored::Build, ApiError> {
    found(db::builds::by_id(conn, id).await.map_err(AppError::from)?)
}

// Customers

/// A page of the customer list (`GET /customers?q=...&page=...`).
#[derive(Debug, serde::Serialize, utoipa::ToSchema)]
pub struct CustomerList {
    pub customers: Vec<db::customers::CustomerSummary>,
    /// Customers matching, over all pages.
    pub total: i64,
    /// This page (0 is the first).
    pub page: i64,
}

pub async fn customers_list(
    State(s): State<AppState>,
    _: ApiUser,
    Query(q): Query<ListQuery>,
) -> ApiResult<CustomerList> {
    let (rows, total) = db::search::list(
        &mut *conn(&s).await?,
        &q.q,
        q.page(),
        db::customers::Order::Best,
    )
    .await?;
    Ok(Json(CustomerList {
        customers: rows,
        total,
        page: q.page(),
    }))
}

pub async fn customer_get(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<db::customers::Customer> {
    Ok(Json(found(
        db::customers::by_id(&mut *conn(&s).await?, id).await?,
    )?))
}

pub async fn customer_create(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    ApiJson(input): ApiJson<CustomerInput>,
) -> Result<Response, ApiError> {
    let c = checked(field::check(
        input,
        &record_ctx(&s).await?,
        FieldErrors::default(),
    ))?;
    let mut tx = write_tx(&s, &user).await?;
    let id = db::customers::insert(&mut tx, &c).await?;
    let row = found(db::customers::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok(created(row))
}

pub async fn customer_update(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(id): Id,
    ApiJson(input): ApiJson<CustomerInput>,
) -> ApiResult<db::customers::Customer> {
    let c = checked(field::check(
        input,
        &record_ctx(&s).await?,
        FieldErrors::default(),
    ))?;
    let mut tx = write_tx(&s, &user).await?;
    if !db::customers::update(&mut tx, id, &c).await? {
        return Err(ApiError(AppError::NotFound));
    }
    let row = found(db::customers::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok(Json(row))
}

// Cars

pub async fn cars_list(
    State(s): State<AppState>,
    _: ApiUser,
    Query(q): Query<ListQuery>,
) -> ApiResult<Vec<crate::records::stored::Car>> {
    Ok(Json(db::cars::page(&mut *conn(&s).await?, q.page()).await?))
}

pub async fn cars_of_customer(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<Vec<crate::records::stored::Car>> {
    let mut c = conn(&s).await?;
    found(db::customers::by_id(&mut c, id).await?)?;
    Ok(Json(db::cars::for_customer(&mut c, id).await?))
}

pub async fn car_get(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<crate::records::stored::Car> {
    Ok(Json(found(
        db::cars::by_id(&mut *conn(&s).await?, id).await?,
    )?))
}

pub async fn car_create(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(customer_id): Id,
    ApiJson(input): ApiJson<CarInput>,
) -> Result<Response, ApiError> {
    let c = checked(field::check(
        input,
        &record_ctx(&s).await?,
        FieldErrors::default(),
    ))?;
    let mut tx = write_tx(&s, &user).await?;
    found(db::customers::by_id(&mut tx, customer_id).await?)?;
    let id = db::cars::insert(&mut tx, customer_id, &c).await?;
    let row = found(db::cars::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok(created(row))
}

pub async fn car_update(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(id): Id,
    ApiJson(input): ApiJson<CarInput>,
) -> ApiResult<crate::records::stored::Car> {
    let c = checked(field::check(
        input,
        &record_ctx(&s).await?,
        FieldErrors::default(),
    ))?;
    let mut tx = write_tx(&s, &user).await?;
    found(db::cars::by_id(&mut tx, id).await?)?;
    db::cars::update(&mut tx, id, &c).await?;
    let row = found(db::cars::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok(Json(row))
}

// Builds

pub async fn builds_list(
    State(s): State<AppState>,
    _: ApiUser,
    Query(q): Query<ListQuery>,
) -> ApiResult<Vec<crate::records::stored::Build>> {
    Ok(Json(
        db::builds::page(&mut *conn(&s).await?, q.page()).await?,
    ))
}

pub async fn builds_of_car(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<Vec<crate::records::stored::Build>> {
    let mut c = conn(&s).await?;
    found(db::cars::by_id(&mut c, id).await?)?;
    Ok(Json(db::builds::for_car(&mut c, id).await?))
}

pub async fn build_get(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<crate::records::stored::Build> {
    Ok(Json(build_exists(&mut *conn(&s).await?, id).await?))
}

pub async fn build_create(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(car_id): Id,
    ApiJson(input): ApiJson<BuildInput>,
) -> Result<Response, ApiError> {
    let b = checked(field::check(
        input,
        &record_ctx(&s).await?,
        FieldErrors::default(),
    ))?;
    let mut tx = write_tx(&s, &user).await?;
    found(db::cars::by_id(&mut tx, car_id).await?)?;
    let id = db::builds::insert(&mut tx, car_id, &b).await?;
    let row = build_exists(&mut tx, id).await?;
    tx.commit().await?;
    Ok(created(row))
}

pub async fn build_update(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(id): Id,
    ApiJson(input): ApiJson<BuildInput>,
) -> ApiResult<crate::records::stored::Build> {
    let b = checked(field::check(
        input,
        &record_ctx(&s).await?,
        FieldErrors::default(),
    ))?;
    let mut tx = write_tx(&s, &user).await?;
    build_exists(&mut tx, id).await?;
    db::builds::update(&mut tx, id, &b).await?;
    let row = build_exists(&mut tx, id).await?;
    tx.commit().await?;
    Ok(Json(row))
}

// Setup changes

pub async fn setups_of_build(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<Vec<crate::records::stored::Setup>> {
    let mut c = conn(&s).await?;
    build_exists(&mut c, id).await?;
    Ok(Json(db::setups::for_build(&mut c, id).await?))
}

pub async fn setup_get(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<crate::records::stored::Setup> {
    Ok(Json(found(
        db::setups::by_id(&mut *conn(&s).await?, id).await?,
    )?))
}

pub async fn setup_create(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(build_id): Id,
    ApiJson(input): ApiJson<SetupInput>,
) -> Result<Response, ApiError> {
    let v = checked(field::check(
        input,
        &record_ctx(&s).await?,
        FieldErrors::default(),
    ))?;
    let mut tx = write_tx(&s, &user).await?;
    build_exists(&mut tx, build_id).await?;
    let id = db::setups::insert(&mut tx, build_id, user.id, &v).await?;
    let row = found(db::setups::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok(created(row))
}

pub async fn setup_update(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(id): Id,
    ApiJson(input): ApiJson<SetupInput>,
) -> ApiResult<crate::records::stored::Setup> {
    let v = checked(field::check(
        input,
        &record_ctx(&s).await?,
        FieldErrors::default(),
    ))?;
    let mut tx = write_tx(&s, &user).await?;
    found(db::setups::by_id(&mut tx, id).await?)?;
    db::setups::update(&mut tx, id, &v).await?;
    let row = found(db::setups::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok(Json(row))
}

// Bench tests

pub async fn bench_of_build(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<Vec<crate::records::stored::BenchTest>> {
    let mut c = conn(&s).await?;
    build_exists(&mut c, id).await?;
    Ok(Json(db::bench::for_build(&mut c, id).await?))
}

pub async fn bench_create(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(build_id): Id,
    ApiJson(input): ApiJson<BenchInput>,
) -> Result<Response, ApiError> {
    let v = checked(input.check(&record_ctx(&s).await?, FieldErrors::default()))?;
    let mut tx = write_tx(&s, &user).await?;
    build_exists(&mut tx, build_id).await?;
    let id = db::bench::insert(&mut tx, build_id, user.id, &v).await?;
    let rows = db::bench::for_build(&mut tx, build_id).await?;
    tx.commit().await?;
    let row = rows.into_iter().find(|t| t.id == id);
    Ok(created(found(row)?))
}

pub async fn bench_get(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<crate::records::stored::BenchTest> {
    Ok(Json(found(
        db::bench::by_id(&mut *conn(&s).await?, id).await?,
    )?))
}

pub async fn bench_update(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(id): Id,
    ApiJson(input): ApiJson<BenchInput>,
) -> ApiResult<crate::records::stored::BenchTest> {
    let v = checked(input.check(&record_ctx(&s).await?, FieldErrors::default()))?;
    let mut tx = write_tx(&s, &user).await?;
    let existing = found(db::bench::by_id(&mut tx, id).await?)?;
    if existing.springs.len() != v.springs.len() {
        return Err(ApiError(AppError::field(
            "springs",
            format!(
                "this test has {} springs; a different set is a new bench test",
                existing.springs.len()
            ),
        )));
    }
    db::bench::update(&mut tx, id, &v).await?;
    let row = found(db::bench::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok(Json(row))
}

// Cover-height measurements

pub async fn heights_of_build(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<Vec<crate::records::stored::Height>> {
    let mut c = conn(&s).await?;
    build_exists(&mut c, id).await?;
    Ok(Json(db::heights::for_build(&mut c, id).await?))
}

pub async fn height_get(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<crate::records::stored::Height> {
    Ok(Json(found(
        db::heights::by_id(&mut *conn(&s).await?, id).await?,
    )?))
}

async fn height_context(
    conn: &mut SqliteConnection,
    build_id: i64,
    id: Option<i64>,
) -> Result<HeightContext, ApiError> {
    let build = build_exists(conn, build_id).await?;
    let (previous, next) = db::heights::around(conn, build_id, id).await?;
    Ok(HeightContext {
        shims_in_stack: build.data.shim_stack_mm.len(),
        previous,
        next,
    })
}

pub async fn height_create(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(build_id): Id,
    ApiJson(input): ApiJson<HeightInput>,
) -> Result<Response, ApiError> {
    let mut tx = write_tx(&s, &user).await?;
    let hc = height_context(&mut tx, build_id, None).await?;
    let ctx = db::settings::get(&mut tx).await?.record_ctx();
    let v = checked(input.check_on(hc, &ctx, FieldErrors::default()))?;
    let id = db::heights::insert(&mut tx, build_id, user.id, &v).await?;
    let row = found(db::heights::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok(created(row))
}

pub async fn height_update(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(id): Id,
    ApiJson(input): ApiJson<HeightInput>,
) -> ApiResult<crate::records::stored::Height> {
    let mut tx = write_tx(&s, &user).await?;
    let existing = found(db::heights::by_id(&mut tx, id).await?)?;
    let hc = height_context(&mut tx, existing.build_id, Some(id)).await?;
    let ctx = db::settings::get(&mut tx).await?.record_ctx();
    let v = checked(input.check_on(hc, &ctx, FieldErrors::default()))?;
    db::heights::update(&mut tx, id, &v).await?;
    let row = found(db::heights::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok(Json(row))
}

// Track passes

pub async fn passes_of_build(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<Vec<crate::records::stored::Pass>> {
    let mut c = conn(&s).await?;
    build_exists(&mut c, id).await?;
    Ok(Json(db::passes::for_build(&mut c, id).await?))
}

pub async fn pass_get(
    State(s): State<AppState>,
    _: ApiUser,
    Id(id): Id,
) -> ApiResult<crate::records::stored::Pass> {
    Ok(Json(found(
        db::passes::by_id(&mut *conn(&s).await?, id).await?,
    )?))
}

pub async fn pass_create(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(build_id): Id,
    ApiJson(input): ApiJson<PassInput>,
) -> Result<Response, ApiError> {
    let v = checked(field::check(
        input,
        &record_ctx(&s).await?,
        FieldErrors::default(),
    ))?;
    let mut tx = write_tx(&s, &user).await?;
    build_exists(&mut tx, build_id).await?;
    let id = db::passes::insert(&mut tx, build_id, user.id, &v).await?;
    let row = found(db::passes::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok(created(row))
}

pub async fn pass_update(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(id): Id,
    ApiJson(input): ApiJson<PassInput>,
) -> ApiResult<crate::records::stored::Pass> {
    let v = checked(field::check(
        input,
        &record_ctx(&s).await?,
        FieldErrors::default(),
    ))?;
    let mut tx = write_tx(&s, &user).await?;
    found(db::passes::by_id(&mut tx, id).await?)?;
    db::passes::update(&mut tx, id, &v).await?;
    let row = found(db::passes::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok(Json(row))
}
