//! Admin pages: the shop's settings and the staff accounts.

use askama::Template;
use axum::extract::{Query, State};
use axum::http::StatusCode;
use axum::response::{Html, IntoResponse, Redirect, Response};

use crate::auth;
use crate::db;
use crate::db::users::User;
use crate::error::{AppError, AppResult};
use crate::records::date::ShopZone;
use crate::records::field;
use crate::records::settings::SettingsInput;
use crate::records::user::{NewUser, Role, check_password};
use crate::records::{Ctx, FieldErrors, FormData};
use crate::web::AppState;
use crate::web::http::extract::{CurrentUser, PathId, SignedForm};
use crate::web::pages::layout::Layout;
use clutch::units::Units;

#[derive(Template)]
#[template(path = "admin/settings.html")]
pub struct SettingsPage {
    pub page: Layout,
    pub form: FormData,
    pub errors: FieldErrors,
    pub saved: bool,
    /// The server's own time zone, used when the shop names none.
    pub server_zone: String,
}

/// The settings form prefilled, numbers in the shop's units (and which units those are).
fn settings_form(s: &SettingsInput) -> FormData {
    let mut form = field::to_form(s, s.units());
    form.set("shown_units", &s.units);
    form
}

#[derive(Debug, Default, serde::Deserialize)]
#[serde(default)]
pub struct SavedQuery {
    saved: String,
}

pub async fn settings(
    State(state): State<AppState>,
    user: CurrentUser,
    Query(q): Query<SavedQuery>,
) -> AppResult<Html<String>> {
    user.require_admin()?;
    let mut conn = state.pool.acquire().await?;
    let (page, settings) = Layout::load(&mut conn, &user, "settings", "Shop settings").await?;
    let form = settings_form(&settings);
    Ok(Html(
        SettingsPage {
            page,
            form,
            errors: FieldErrors::default(),
            saved: q.saved == "1",
            server_zone: ShopZone::server().name().to_string(),
        }
        .render()?,
    ))
}

pub async fn save_settings(
    State(state): State<AppState>,
    SignedForm { user, form }: SignedForm,
) -> AppResult<Response> {
    user.require_admin()?;
    let mut tx = state.write(&user).await?;
    let (page, settings) = Layout::load(&mut tx, &user, "settings", "Shop settings").await?;
    // Numbers are read in the units the form showed them in, so switching the units alone
    // changes how values are shown, never the stored values.
    let shown = Units::from_key(form.get("shown_units")).unwrap_or(settings.units());
    // A value left as shown keeps its stored value exactly (the display rounds).
    let (input, errors) = field::read_edit(&form, shown, &settings);
    let ctx = Ctx {
        units: shown,
        ..settings.ctx()
    };
    match field::check(input, &ctx, errors) {
        Ok(checked) => {
            db::settings::update(&mut tx, &checked).await?;
            // A changed shimming limit or spring tolerance marks every build stale.
            tx.commit().await?;
            Ok(Redirect::to("/settings?saved=1").into_response())
        }
        Err(errors) => {
            let page = SettingsPage {
                page,
                form,
                errors,
                saved: false,
                server_zone: ShopZone::server().name().to_string(),
            };
            Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(page.render()?)).into_response())
        }
    }
}

#[derive(Template)]
#[template(path = "admin/users.html")]
pub struct UsersPage {
    pub page: Layout,
    pub users: Vec<User>,
    pub form: FormData,
    pub errors: FieldErrors,
    pub notice: Option<String>,
}

async fn users_page(
    state: &AppState,
    user: &CurrentUser,
    form: FormData,
    errors: FieldErrors,
    notice: Option<String>,
) -> AppResult<String> {
    let mut conn = state.pool.acquire().await?;
    let (page, _) = Layout::load(&mut conn, user, "users", "Staff accounts").await?;
    let users = db::users::all(&mut conn).await?;
    Ok(UsersPage {
        page,
        users,
        form,
        errors,
        notice,
    }
    .render()?)
}

pub async fn users(State(state): State<AppState>, user: CurrentUser) -> AppResult<Html<String>> {
    user.require_admin()?;
    let mut form = FormData::default();
    form.set("role", "tech");
    Ok(Html(
        users_page(&state, &user, form, FieldErrors::default(), None).await?,
    ))
}

pub async fn add_user(
    State(state): State<AppState>,
    SignedForm { user, form }: SignedForm,
) -> AppResult<Response> {
    user.require_admin()?;
    let password = form.get("password").to_string();
    let mut errors = FieldErrors::default();
    let role = Role::parse(form.get("role"));
    if role.is_none() {
        errors.add("role", "choose admin or tech");
    }
    let new_user = match role.map(|r| NewUser::parse(form.get("username"), &password, r)) {
        Some(Ok(u)) => Some(u),
        Some(Err(e)) => {
            errors.add(e.field, e.message);
            None
        }
        None => None,
    };
    if let Some(new_user) = new_user {
        let hash = auth::hash_password(password).await?;
        let mut tx = state.write(&user).await?;
        if db::users::by_name(&mut tx, &new_user.username)
            .await?
            .is_some()
        {
            errors.add("username", "that name is taken");
        } else {
            db::users::insert(&mut tx, &new_user, &hash).await?;
            tx.commit().await?;
            return Ok(Redirect::to("/users").into_response());
        }
    }
    let html = users_page(&state, &user, form, errors, None).await?;
    Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(html)).into_response())
}

async fn set_disabled(
    state: &AppState,
    admin: &CurrentUser,
    id: i64,
    disabled: bool,
) -> AppResult<Response> {
    admin.require_admin()?;
    if id == admin.id && disabled {
        return Err(AppError::Forbidden("you cannot disable your own account"));
    }
    let mut tx = state.write(admin).await?;
    db::users::by_id(&mut tx, id)
        .await?
        .ok_or(AppError::NotFound)?;
    db::users::set_disabled(&mut tx, id, disabled).await?;
    if disabled {
        db::sessions::delete_for_user(&mut tx, id).await?;
        db::tokens::revoke_for_user(&mut tx, id).await?;
    }
    tx.commit().await?;
    Ok(Redirect::to("/users").into_response())
}

pub async fn disable_user(
    State(state): State<AppState>,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    set_disabled(&state, &signed.user, id, true).await
}

pub async fn enable_user(
    State(state): State<AppState>,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    set_disabled(&state, &signed.user, id, false).await
}

/// Sets a new password for a user and signs them out everywhere.
pub async fn reset_password(
    State(state): State<AppState>,
    PathId(id): PathId,
    SignedForm { user, form }: SignedForm,
) -> AppResult<Response> {
    user.require_admin()?;
    let mut conn = state.pool.acquire().await?;
    db::users::by_id(&mut conn, id)
        .await?
        .ok_or(AppError::NotFound)?;
    drop(conn);
    let password = form.get("password").to_string();
    if let Err(e) = check_password(&password) {
        let mut errors = FieldErrors::default();
        errors.add(&format!("password_{id}"), e.message);
        let html = users_page(&state, &user, FormData::default(), errors, None).await?;
        return Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(html)).into_response());
    }
    let hash = auth::hash_password(password).await?;
    let mut tx = state.write(&user).await?;
    let target = db::users::by_id(&mut tx, id)
        .await?
        .ok_or(AppError::NotFound)?;
    db::users::set_password(&mut tx, id, &hash).await?;
    db::sessions::delete_for_user(&mut tx, id).await?;
    tx.commit().await?;
    let notice = format!("New password set for {}.", target.username);
    Ok(Html(
        users_page(
            &state,
            &user,
            FormData::default(),
            FieldErrors::default(),
            Some(notice),
        )
        .await?,
    )
    .into_response())
}

/// The longest display name a sheet shows.
const DISPLAY_NAME_MAX: usize = 60;

/// POST /users/{id}/display-name: the name customers see on the sheets this person prints
/// (empty: the shop's name).
pub async fn set_display_name(
    State(state): State<AppState>,
    PathId(id): PathId,
    SignedForm { user, form }: SignedForm,
) -> AppResult<Response> {
    user.require_admin()?;
    let name = form.get("display_name").to_string();
    let problem = if name.chars().count() > DISPLAY_NAME_MAX {
        Some(format!("at most {DISPLAY_NAME_MAX} characters"))
    } else if name.chars().any(char::is_control) {
        Some("letters, digits, spaces and punctuation only".to_string())
    } else {
        None
    };
    if let Some(message) = problem {
        let mut conn = state.pool.acquire().await?;
        db::users::by_id(&mut conn, id)
            .await?
            .ok_or(AppError::NotFound)?;
        drop(conn);
        let mut errors = FieldErrors::default();
        errors.add(&format!("display_name_{id}"), message);
        let html = users_page(&state, &user, FormData::default(), errors, None).await?;
        return Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(html)).into_response());
    }
    let mut tx = state.write(&user).await?;
    db::users::by_id(&mut tx, id)
        .await?
        .ok_or(AppError::NotFound)?;
    db::users::set_display_name(&mut tx, id, &name).await?;
    tx.commit().await?;
    Ok(Redirect::to("/users").into_response())
}
