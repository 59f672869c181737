//! The form pages of the records that have a page of their own (customer, car, build): new,
//! edit and save are one implementation. [`PageRecord`] says what a record hangs on, how it is
//! read and written and which page shows its form; the handlers below do the rest: read the
//! form in the shop's units (an edit keeps every number left as shown), check it as the API
//! does, re-show it with the messages (422) or store it and go to the record's page with what
//! changed.

use std::future::Future;

use askama::Template;
use axum::extract::State;
use axum::http::StatusCode;
use axum::response::{Html, IntoResponse, Response};
use sqlx::SqliteConnection;

use crate::db;
use crate::db::customers::Customer;
use crate::db::record::Stored;
use crate::error::{AppError, AppResult};
use crate::records::build::BuildInput;
use crate::records::car::CarInput;
use crate::records::customer::CustomerInput;
use crate::records::settings::SettingsInput;
use crate::records::stored::{Build, Car};
use crate::records::{Checked, Ctx, FieldErrors, FormData, field};
use crate::web::AppState;
use crate::web::http::extract::{CurrentUser, PathId, SignedForm};
use crate::web::http::flash;
use crate::web::pages::builds::show::FormPage as BuildForm;
use crate::web::pages::customers::car::FormPage as CarForm;
use crate::web::pages::customers::customer::FormPage as CustomerForm;
use crate::web::pages::layout::Layout;

/// A stored record ([`Stored`]) with a form page of its own.
pub trait PageRecord: Stored<Input: Clone> {
    /// What it hangs on, as its form page shows it (`()` for a customer).
    type Parent: Send;
    /// Its form page.
    type Page: Template;
    /// The form page's title for a new record and for an edit.
    const NEW_TITLE: &'static str;
    const EDIT_TITLE: &'static str;
    /// What the "Saved: ..." note calls it ("the car").
    const NOUN: &'static str;
    /// The note after a new one is saved, with the next step.
    const NEW_NOTE: &'static str;

    /// Its own page.
    fn path(id: i64) -> String;
    fn data(&self) -> &Self::Input;
    fn page(
        layout: Layout,
        parent: Self::Parent,
        id: Option<i64>,
        form: FormData,
        errors: FieldErrors,
    ) -> Self::Page;

    /// The live parent `id`.
    fn parent(
        conn: &mut SqliteConnection,
        id: i64,
    ) -> impl Future<Output = sqlx::Result<Option<Self::Parent>>> + Send;

    /// The form of a new record, prefilled from the shop's settings where it takes a default.
    fn blank_form(_settings: &SettingsInput, units: clutch::units::Units) -> FormData {
        let _ = units;
        FormData::default()
    }

    /// The checks of a new record (`before` None) or an edit of `before`.
    fn check(
        input: Self::Input,
        _before: Option<&Self::Input>,
        ctx: &Ctx,
        errors: FieldErrors,
    ) -> Result<Checked<Self::Input>, FieldErrors> {
        field::check(input, ctx, errors)
    }
}

/// GET the form of a new record under `parent`.
pub async fn new_under<R: PageRecord>(
    State(state): State<AppState>,
    user: CurrentUser,
    PathId(parent): PathId,
) -> AppResult<Html<String>> {
    new_page::<R>(&state, &user, parent).await
}

/// The form of a new record under `parent` (0 for a record that hangs on nothing).
async fn new_page<R: PageRecord>(
    state: &AppState,
    user: &CurrentUser,
    parent: i64,
) -> AppResult<Html<String>> {
    let mut conn = state.pool.acquire().await?;
    let parent = R::parent(&mut conn, parent)
        .await?
        .ok_or(AppError::NotFound)?;
    let (layout, settings) = Layout::load(&mut conn, user, "customers", R::NEW_TITLE).await?;
    let form = R::blank_form(&settings, layout.units());
    let page = R::page(layout, parent, None, form, FieldErrors::default());
    Ok(Html(page.render()?))
}

/// GET `/<records>/{id}/edit`: the form of a stored record, in the shop's units.
pub async fn edit<R: PageRecord>(
    State(state): State<AppState>,
    user: CurrentUser,
    PathId(id): PathId,
) -> AppResult<Html<String>> {
    let mut conn = state.pool.acquire().await?;
    let record = R::by_id(&mut conn, id).await?.ok_or(AppError::NotFound)?;
    let parent = R::parent(&mut conn, record.parent_of())
        .await?
        .ok_or(AppError::NotFound)?;
    let (layout, _) = Layout::load(&mut conn, &user, "customers", R::EDIT_TITLE).await?;
    let form = field::to_form(record.data(), layout.units());
    let page = R::page(layout, parent, Some(id), form, FieldErrors::default());
    Ok(Html(page.render()?))
}

/// GET /customers/new: a customer hangs on nothing.
pub async fn new_customer(
    State(state): State<AppState>,
    user: CurrentUser,
) -> AppResult<Html<String>> {
    new_page::<Customer>(&state, &user, 0).await
}

/// POST /customers: a new customer.
pub async fn create_customer(
    State(state): State<AppState>,
    signed: SignedForm,
) -> AppResult<Response> {
    save::<Customer>(&state, signed, 0, None).await
}

/// POST a new record under `parent`.
pub async fn create_under<R: PageRecord>(
    State(state): State<AppState>,
    PathId(parent): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    save::<R>(&state, signed, parent, None).await
}

/// POST `/<records>/{id}`: an edit.
pub async fn update<R: PageRecord>(
    State(state): State<AppState>,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    let mut conn = state.pool.acquire().await?;
    let record = R::by_id(&mut conn, id).await?.ok_or(AppError::NotFound)?;
    drop(conn);
    save::<R>(&state, signed, record.parent_of(), Some(id)).await
}

/// Checks the form and saves it in one transaction, or re-shows it with the messages.
async fn save<R: PageRecord>(
    state: &AppState,
    SignedForm { user, form }: SignedForm,
    parent_id: i64,
    id: Option<i64>,
) -> AppResult<Response> {
    let mut tx = state.write(&user).await?;
    let parent = R::parent(&mut tx, parent_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let title = if id.is_some() {
        R::EDIT_TITLE
    } else {
        R::NEW_TITLE
    };
    let (layout, _) = Layout::load(&mut tx, &user, "customers", title).await?;
    let before = match id {
        Some(id) => Some(R::by_id(&mut tx, id).await?.ok_or(AppError::NotFound)?),
        None => None,
    };
    // An edit keeps the stored value of every number left as shown (the display rounds).
    let (input, errors) = match &before {
        Some(b) => field::read_edit(&form, layout.units(), b.data()),
        None => field::read::<R::Input>(&form, layout.units()),
    };
    let checked = match R::check(input, before.as_ref().map(R::data), &layout.ctx, errors) {
        Ok(c) => c,
        Err(errors) => {
            let page = R::page(layout, parent, id, form, errors);
            return Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(page.render()?)).into_response());
        }
    };
    let (id, note) = match (id, before) {
        (Some(id), Some(before)) => {
            R::update(&mut tx, id, &checked).await?;
            let changes = field::changes(before.data(), &checked, layout.units(), &[]);
            (id, flash::saved_note(R::NOUN, &changes))
        }
        _ => (
            R::insert(&mut tx, parent_id, user.id, &checked).await?,
            R::NEW_NOTE.to_string(),
        ),
    };
    tx.commit().await?;
    Ok(flash::redirect(state, &R::path(id), &note))
}

impl PageRecord for Customer {
    type Parent = ();
    type Page = CustomerForm;
    const NEW_TITLE: &'static str = "New customer";
    const EDIT_TITLE: &'static str = "Edit customer";
    const NOUN: &'static str = "the customer";
    const NEW_NOTE: &'static str = "Saved: a new customer. Add their car next.";

    fn path(id: i64) -> String {
        format!("/customers/{id}")
    }
    fn data(&self) -> &CustomerInput {
        &self.data
    }
    fn page(
        layout: Layout,
        _: (),
        id: Option<i64>,
        form: FormData,
        errors: FieldErrors,
    ) -> Self::Page {
        CustomerForm {
            page: layout,
            id,
            form,
            errors,
        }
    }
    async fn parent(_: &mut SqliteConnection, _: i64) -> sqlx::Result<Option<()>> {
        Ok(Some(()))
    }
}

impl PageRecord for Car {
    type Parent = Customer;
    type Page = CarForm;
    const NEW_TITLE: &'static str = "New car";
    const EDIT_TITLE: &'static str = "Edit car";
    const NOUN: &'static str = "the car";
    const NEW_NOTE: &'static str = "Saved: a new car. Add its clutch build next.";

    fn path(id: i64) -> String {
        format!("/cars/{id}")
    }
    fn data(&self) -> &CarInput {
        &self.data
    }
    fn page(
        layout: Layout,
        customer: Customer,
        id: Option<i64>,
        form: FormData,
        errors: FieldErrors,
    ) -> Self::Page {
        CarForm {
            page: layout,
            customer,
            id,
            form,
            errors,
        }
    }
    async fn parent(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Customer>> {
        db::customers::by_id(conn, id).await
    }
}

impl PageRecord for Build {
    type Parent = Car;
    type Page = BuildForm;
    const NEW_TITLE: &'static str = "New clutch build";
    const EDIT_TITLE: &'static str = "Edit clutch build";
    const NOUN: &'static str = "the build";
    const NEW_NOTE: &'static str = "Saved: a new build. Record its setup next.";

    fn path(id: i64) -> String {
        format!("/builds/{id}")
    }
    fn data(&self) -> &BuildInput {
        &self.data
    }
    fn page(
        layout: Layout,
        car: Car,
        id: Option<i64>,
        form: FormData,
        errors: FieldErrors,
    ) -> Self::Page {
        BuildForm::new(layout, car, id, form, errors)
    }
    async fn parent(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Car>> {
        db::cars::by_id(conn, id).await
    }

    /// A new build takes the shop's shimming limit; the spring count starts blank.
    fn blank_form(settings: &SettingsInput, units: clutch::units::Units) -> FormData {
        let fresh = BuildInput {
            shimming_limit_mm: Some(settings.shimming_limit_mm),
            ..BuildInput::default()
        };
        let mut form = field::to_form(&fresh, units);
        form.set("spring_count", "");
        form
    }

    /// An edit keeps the adjuster thread the build had.
    fn check(
        input: BuildInput,
        before: Option<&BuildInput>,
        ctx: &Ctx,
        errors: FieldErrors,
    ) -> Result<Checked<BuildInput>, FieldErrors> {
        input.check_edit(before, ctx, errors)
    }
}
