//! Car pages: a car with its torque curve and builds; new (under a customer) and edit.

use askama::Template;
use axum::extract::State;
use axum::http::StatusCode;
use axum::response::{Html, IntoResponse, Response};

use crate::db;
use crate::db::customers::Customer;
use crate::error::{AppError, AppResult};
use crate::records::car::CarInput;
use crate::records::stored::Build;
use crate::records::stored::Car;
use crate::records::{FieldErrors, FormData, field};
use crate::web::AppState;
use crate::web::http::extract::{CurrentUser, PathId, SignedForm};
use crate::web::http::flash::{self, Flash, saved_note};
use crate::web::pages::layout::Layout;

#[derive(Template)]
#[template(path = "cars/show.html")]
pub struct ShowPage {
    pub page: Layout,
    pub car: Car,
    pub customer: Customer,
    pub builds: Vec<Build>,
    /// "Saved: ..." after a save, shown once.
    pub flash: Option<String>,
}

pub async fn show(
    State(state): State<AppState>,
    user: CurrentUser,
    PathId(id): PathId,
    flash: Flash,
) -> AppResult<Response> {
    let mut conn = state.pool.acquire().await?;
    let car = db::cars::by_id(&mut conn, id)
        .await?
        .ok_or(AppError::NotFound)?;
    let customer = db::customers::by_id(&mut conn, car.customer_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let (page, _) =
        Layout::load(&mut conn, &user, "customers", car.data.description.clone()).await?;
    let builds = db::builds::for_car(&mut conn, id).await?;
    let page = ShowPage {
        page,
        car,
        customer,
        builds,
        flash: flash.note.clone(),
    };
    Ok(flash.respond(Html(page.render()?)))
}

#[derive(Template)]
#[template(path = "cars/form.html")]
pub struct FormPage {
    pub page: Layout,
    pub customer: Customer,
    /// The car being edited, or `None` for a new one.
    pub id: Option<i64>,
    pub form: FormData,
    pub errors: FieldErrors,
}

impl FormPage {
    pub fn action(&self) -> String {
        match self.id {
            Some(id) => format!("/cars/{id}"),
            None => format!("/customers/{}/cars", self.customer.id),
        }
    }
}

pub async fn new(
    State(state): State<AppState>,
    user: CurrentUser,
    PathId(customer_id): PathId,
) -> AppResult<Html<String>> {
    let mut conn = state.pool.acquire().await?;
    let customer = db::customers::by_id(&mut conn, customer_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let (page, _) = Layout::load(&mut conn, &user, "customers", "New car").await?;
    let page = FormPage {
        page,
        customer,
        id: None,
        form: FormData::default(),
        errors: FieldErrors::default(),
    };
    Ok(Html(page.render()?))
}

pub async fn edit(
    State(state): State<AppState>,
    user: CurrentUser,
    PathId(id): PathId,
) -> AppResult<Html<String>> {
    let mut conn = state.pool.acquire().await?;
    let car = db::cars::by_id(&mut conn, id)
        .await?
        .ok_or(AppError::NotFound)?;
    let customer = db::customers::by_id(&mut conn, car.customer_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let (page, _) = Layout::load(&mut conn, &user, "customers", "Edit car").await?;
    let form = field::to_form(&car.data, page.units());
    Ok(Html(
        FormPage {
            page,
            customer,
            id: Some(id),
            form,
            errors: FieldErrors::default(),
        }
        .render()?,
    ))
}

pub async fn create(
    State(state): State<AppState>,
    PathId(customer_id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    save(state, signed, customer_id, None).await
}

pub async fn update(
    State(state): State<AppState>,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    let mut conn = state.pool.acquire().await?;
    let car = db::cars::by_id(&mut conn, id)
        .await?
        .ok_or(AppError::NotFound)?;
    drop(conn);
    save(state, signed, car.customer_id, Some(id)).await
}

async fn save(
    state: AppState,
    SignedForm { user, form }: SignedForm,
    customer_id: i64,
    id: Option<i64>,
) -> AppResult<Response> {
    let mut tx = state.write(&user).await?;
    let customer = db::customers::by_id(&mut tx, customer_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let (page, _) = Layout::load(&mut tx, &user, "customers", "Car").await?;
    let before = match id {
        Some(id) => Some(
            db::cars::by_id(&mut tx, id)
                .await?
                .ok_or(AppError::NotFound)?,
        ),
        None => None,
    };
    // An edit keeps the stored value of every number left as shown (the display rounds).
    let (input, errors) = match &before {
        Some(c) => field::read_edit(&form, page.units(), &c.data),
        None => field::read::<CarInput>(&form, page.units()),
    };
    let checked = match field::check(input, &page.ctx, errors) {
        Ok(c) => c,
        Err(errors) => {
            let page = FormPage {
                page,
                customer,
                id,
                form,
                errors,
            };
            return Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(page.render()?)).into_response());
        }
    };
    let (id, note) = match (id, before) {
        (Some(id), Some(before)) => {
            db::cars::update(&mut tx, id, &checked).await?;
            let changes = field::changes(&before.data, &checked, page.units(), &[]);
            (id, saved_note("the car", &changes))
        }
        _ => {
            let id = db::cars::insert(&mut tx, customer_id, &checked).await?;
            (
                id,
                "Saved: a new car. Add its clutch build next.".to_string(),
            )
        }
    };
    tx.commit().await?;
    Ok(flash::redirect(&state, &format!("/cars/{id}"), &note))
}
