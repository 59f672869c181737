//! The JSON API under `/api/v1`: list, read, create and update for every record, with the same
//! checks as the forms. Values are in storage units named in each field (`facing_od_mm`).
//! Errors are `{"error": "...", "field": "..."}`: 422 for bad input, 404 for unknown ids,
//! 401 without a valid bearer token.
//!
//! One implementation serves every record: [`Stored`] (in `db::record`) reads and writes it,
//! [`ApiRecord`] lists it under its parent and checks it, and the generic handlers below do the
//! rest.

use std::future::Future;

use axum::Json;
use axum::extract::{Query, State};
use axum::http::StatusCode;
use axum::response::{IntoResponse, Response};
use serde::de::DeserializeOwned;
use serde::{Deserialize, Serialize};
use sqlx::SqliteConnection;

use crate::db;
use crate::db::customers::Customer;
use crate::db::record::Stored;
use crate::error::{ApiError, ApiResult, AppError};
use crate::records::bench::BenchInput;
use crate::records::build::BuildInput;
use crate::records::customer::CustomerInput;
use crate::records::height::HeightInput;
use crate::records::stored::{BenchTest, Build, Car, Height, Pass, Setup};
use crate::records::{Checked, Ctx, FieldErrors, field};
use crate::web::AppState;
use crate::web::http::extract::{ApiId as Id, ApiJson, ApiUser};

/// A stored record the API serves ([`Stored`]: read by id, inserted under its parent, updated in
/// place), listed under its parent and checked as its form checks it.
pub trait ApiRecord: Stored<Input: DeserializeOwned> + Serialize {
    /// The records of a live parent; `None` when there is no such parent.
    fn of_parent(
        conn: &mut SqliteConnection,
        parent: i64,
    ) -> impl Future<Output = sqlx::Result<Option<Vec<Self>>>> + Send;

    /// `input` checked as the form checks it, for a new record under `parent` or an edit of
    /// `existing`; an `Err` is the answer (404 for a missing parent, 422 for bad input).
    fn check(
        conn: &mut SqliteConnection,
        input: Self::Input,
        parent: i64,
        existing: Option<&Self>,
    ) -> impl Future<Output = Result<Checked<Self::Input>, ApiError>> + Send;
}

/// GET `/<parents>/{id}/<records>`: the records of one parent.
pub async fn of_parent<R: ApiRecord>(
    State(s): State<AppState>,
    _: ApiUser,
    Id(parent): Id,
) -> ApiResult<Vec<R>> {
    Ok(Json(found(
        R::of_parent(&mut *conn(&s).await?, parent).await?,
    )?))
}

/// GET `/<records>/{id}`.
pub async fn get<R: ApiRecord>(State(s): State<AppState>, _: ApiUser, Id(id): Id) -> ApiResult<R> {
    Ok(Json(found(R::by_id(&mut *conn(&s).await?, id).await?)?))
}

/// POST `/<parents>/{id}/<records>`: 201 with the stored record.
pub async fn create<R: ApiRecord>(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(parent): Id,
    ApiJson(input): ApiJson<R::Input>,
) -> Result<Response, ApiError> {
    let mut tx = write_tx(&s, &user).await?;
    let checked = R::check(&mut tx, input, parent, None).await?;
    let id = R::insert(&mut tx, parent, user.id, &checked).await?;
    let row = found(R::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok((StatusCode::CREATED, Json(row)).into_response())
}

/// PUT `/<records>/{id}`: the stored record after the edit.
pub async fn update<R: ApiRecord>(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    Id(id): Id,
    ApiJson(input): ApiJson<R::Input>,
) -> ApiResult<R> {
    let mut tx = write_tx(&s, &user).await?;
    let existing = found(R::by_id(&mut tx, id).await?)?;
    let checked = R::check(&mut tx, input, existing.parent_of(), Some(&existing)).await?;
    if !R::update(&mut tx, id, &checked).await? {
        return Err(ApiError(AppError::NotFound));
    }
    let row = found(R::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok(Json(row))
}

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

/// A page of the customer list (`GET /customers?q=...&page=...`).
#[derive(Debug, serde::Serialize, utoipa::ToSchema)]
pub struct CustomerList {
    pub customers: Vec<db::customers::CustomerSummary>,
    /// Customers matching, over all pages.
    pub total: i64,
    /// This page (0 is the first).
    pub page: i64,
}

/// GET `/customers`: a page of the customer list (`?q=` searches it).
pub async fn customers_list(
    State(s): State<AppState>,
    _: ApiUser,
    Query(q): Query<ListQuery>,
) -> ApiResult<CustomerList> {
    let (rows, total) = (s.reader)
        .search(&q.q, q.page(), db::customers::Order::Best)
        .await
        .map_err(AppError::from)?;
    Ok(Json(CustomerList {
        customers: rows,
        total,
        page: q.page(),
    }))
}

/// POST `/customers`: a customer hangs on nothing, so it is made here rather than by [`create`].
pub async fn customer_create(
    State(s): State<AppState>,
    ApiUser(user): ApiUser,
    ApiJson(input): ApiJson<CustomerInput>,
) -> Result<Response, ApiError> {
    let mut tx = write_tx(&s, &user).await?;
    let checked = checked(&mut tx, input).await?;
    let id = Customer::insert(&mut tx, 0, user.id, &checked).await?;
    let row = found(db::customers::by_id(&mut tx, id).await?)?;
    tx.commit().await?;
    Ok((StatusCode::CREATED, Json(row)).into_response())
}

/// GET `/cars`: a page of every car.
pub async fn cars_list(
    State(s): State<AppState>,
    _: ApiUser,
    Query(q): Query<ListQuery>,
) -> ApiResult<Vec<Car>> {
    Ok(Json(db::cars::page(&mut *conn(&s).await?, q.page()).await?))
}

/// GET `/builds`: a page of every build.
pub async fn builds_list(
    State(s): State<AppState>,
    _: ApiUser,
    Query(q): Query<ListQuery>,
) -> ApiResult<Vec<Build>> {
    Ok(Json(
        db::builds::page(&mut *conn(&s).await?, q.page()).await?,
    ))
}

impl ApiRecord for Customer {
    async fn of_parent(_: &mut SqliteConnection, _: i64) -> sqlx::Result<Option<Vec<Self>>> {
        Ok(None)
    }
    async fn check(
        conn: &mut SqliteConnection,
        input: CustomerInput,
        _: i64,
        _: Option<&Self>,
    ) -> Result<Checked<CustomerInput>, ApiError> {
        checked(conn, input).await
    }
}

/// The [`ApiRecord`] of a record that hangs on a parent of type `$parent_row`: listed by its db
/// module's `$list`, checked by `$check`.
macro_rules! child_record {
    ($row:ty, $db:ident::$list:ident, $parent_row:ty, check $check:expr) => {
        impl ApiRecord for $row {
            async fn of_parent(
                conn: &mut SqliteConnection,
                parent: i64,
            ) -> sqlx::Result<Option<Vec<Self>>> {
                if <$parent_row as Stored>::by_id(conn, parent)
                    .await?
                    .is_none()
                {
                    return Ok(None);
                }
                db::$db::$list(conn, parent).await.map(Some)
            }
            async fn check(
                conn: &mut SqliteConnection,
                input: <$row as Stored>::Input,
                parent: i64,
                existing: Option<&Self>,
            ) -> Result<Checked<<$row as Stored>::Input>, ApiError> {
                ($check)(conn, input, parent, existing).await
            }
        }
    };
}

child_record!(Car, cars::for_customer, Customer, check check_under::<Customer, _, _>);
child_record!(Build, builds::for_car, Car, check check_build);
child_record!(Setup, setups::for_build, Build, check check_under::<Build, _, _>);
child_record!(Pass, passes::for_build, Build, check check_under::<Build, _, _>);
child_record!(BenchTest, bench::for_build, Build, check check_bench);
child_record!(Height, heights::for_build, Build, check check_height);

/// A record checked as its form checks it, under a parent that must exist (404 otherwise).
async fn check_under<P: Stored, T: field::Record, R>(
    conn: &mut SqliteConnection,
    input: T,
    parent: i64,
    _existing: Option<&R>,
) -> Result<Checked<T>, ApiError> {
    let checked = checked(conn, input).await?;
    found(P::by_id(conn, parent).await?)?;
    Ok(checked)
}

/// A build checked as its form checks it, under a car that must exist; an edit keeps the
/// adjuster thread.
async fn check_build(
    conn: &mut SqliteConnection,
    input: BuildInput,
    parent: i64,
    existing: Option<&Build>,
) -> Result<Checked<BuildInput>, ApiError> {
    let ctx = record_ctx(conn).await?;
    let checked = input
        .check_edit(existing.map(|b| &b.data), &ctx, FieldErrors::default())
        .map_err(|e| ApiError(AppError::Invalid(e)))?;
    found(db::cars::by_id(conn, parent).await?)?;
    Ok(checked)
}

/// A bench test checked as its form checks it; an edit keeps the number of springs (a
/// different set is a new bench test).
async fn check_bench(
    conn: &mut SqliteConnection,
    input: BenchInput,
    parent: i64,
    existing: Option<&BenchTest>,
) -> Result<Checked<BenchInput>, ApiError> {
    let build = found(db::builds::by_id(conn, parent).await?)?;
    let ctx = record_ctx(conn).await?;
    let checked = input
        .check(
            build.data.spring_solid_height_mm,
            &ctx,
            FieldErrors::default(),
        )
        .map_err(|e| ApiError(AppError::Invalid(e)))?;
    if let Some(existing) = existing
        && existing.springs.len() != checked.springs.len()
    {
        return Err(ApiError(AppError::field(
            "springs",
            format!(
                "this test has {} springs; a different set is a new bench test",
                existing.springs.len()
            ),
        )));
    }
    Ok(checked)
}

/// A cover height checked against the measurements around it and the build's shim stack.
async fn check_height(
    conn: &mut SqliteConnection,
    input: HeightInput,
    parent: i64,
    existing: Option<&Height>,
) -> Result<Checked<HeightInput>, ApiError> {
    let build = found(db::builds::by_id(conn, parent).await?)?;
    let context = db::heights::context(conn, &build, existing.map(|h| h.id)).await?;
    let ctx = record_ctx(conn).await?;
    input
        .check_on(&context, &ctx, FieldErrors::default())
        .map_err(|e| ApiError(AppError::Invalid(e)))
}

/// A declared record checked as its form checks it (storage units, the shop's today).
async fn checked<T: field::Record>(
    conn: &mut SqliteConnection,
    input: T,
) -> Result<Checked<T>, ApiError> {
    let ctx = record_ctx(conn).await?;
    field::check(input, &ctx, FieldErrors::default()).map_err(|e| ApiError(AppError::Invalid(e)))
}

fn found<T>(value: Option<T>) -> Result<T, ApiError> {
    value.ok_or(ApiError(AppError::NotFound))
}

/// What the record API checks with: storage units (the JSON's own) and the shop's today.
async fn record_ctx(conn: &mut SqliteConnection) -> Result<Ctx, ApiError> {
    Ok(db::settings::get(conn).await?.record_ctx())
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
