//! The quick entry forms on a build's page: a setup change, a spring bench test, a cover-height
//! measurement (with shims pulled), a track pass. Each saves in one transaction or re-renders
//! the build page with the typed values and the messages (422).

use axum::extract::State;
use axum::http::StatusCode;
use axum::response::{Html, IntoResponse, Redirect, Response};
use sqlx::{Sqlite, SqliteConnection, Transaction};

use super::AppState;
use super::builds::{EntryForm, EntryForms, render_page};
use super::extract::{CurrentUser, PathId, SignedForm};
use crate::clutch::units::Units;
use crate::db;
use crate::db::builds::Build;
use crate::error::{AppError, AppResult};
use crate::records::bench::BenchInput;
use crate::records::height::{HeightContext, HeightInput};
use crate::records::pass::PassInput;
use crate::records::setup::SetupInput;
use crate::records::{Checked, Ctx, FieldErrors, FormData, field};
use crate::status;

/// Which of the build page's forms was sent.
#[derive(Clone, Copy)]
enum Which {
    Setup,
    Bench,
    Height,
    Pass,
}

impl Which {
    fn anchor(self) -> &'static str {
        match self {
            Self::Setup => "setup",
            Self::Bench => "bench",
            Self::Height => "heights",
            Self::Pass => "passes",
        }
    }
}

/// One entry being saved: its transaction, the build, and the form as typed.
struct Entry {
    tx: Transaction<'static, Sqlite>,
    build: Build,
    ctx: Ctx,
    user: CurrentUser,
    form: FormData,
}

impl Entry {
    async fn begin(state: &AppState, build_id: i64, signed: SignedForm) -> AppResult<Self> {
        let mut tx = state.write(&signed.user).await?;
        let build = db::builds::by_id(&mut tx, build_id)
            .await?
            .ok_or(AppError::NotFound)?;
        let ctx = db::settings::get(&mut tx).await?.ctx();
        Ok(Self {
            tx,
            build,
            ctx,
            user: signed.user,
            form: signed.form,
        })
    }

    /// Commits and goes back to the build page, or shows the page again with the messages.
    async fn finish(
        self,
        state: &AppState,
        which: Which,
        result: Result<(), FieldErrors>,
    ) -> AppResult<Response> {
        let id = self.build.id;
        let errors = match result {
            Ok(()) => {
                let mut tx = self.tx;
                status::refresh_stale(&mut tx).await?;
                tx.commit().await?;
                return Ok(
                    Redirect::to(&format!("/builds/{id}#{}", which.anchor())).into_response()
                );
            }
            Err(errors) => errors,
        };
        drop(self.tx);
        let entry = Some(EntryForm {
            form: self.form,
            errors,
        });
        let mut forms = EntryForms::default();
        match which {
            Which::Setup => forms.setup = entry,
            Which::Bench => forms.bench = entry,
            Which::Height => forms.height = entry,
            Which::Pass => forms.pass = entry,
        }
        let mut conn = state.pool.acquire().await?;
        let html = render_page(&mut conn, &self.user, id, forms).await?;
        Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(html)).into_response())
    }
}

/// One kind of entry on a build page: how it is read from its form, checked against the build
/// and what is already recorded on it, and stored.
trait BuildEntry: Sized + Send + Sync {
    const WHICH: Which;
    fn read(form: &FormData, units: Units, build: &Build) -> (Self, FieldErrors);
    fn check_on(
        self,
        hc: HeightContext,
        ctx: &Ctx,
        errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors>;
    fn store<'a>(
        tx: &'a mut SqliteConnection,
        build_id: i64,
        user_id: i64,
        value: &'a Checked<Self>,
    ) -> impl Future<Output = sqlx::Result<i64>> + Send + 'a;
}

impl BuildEntry for SetupInput {
    const WHICH: Which = Which::Setup;
    fn read(form: &FormData, units: Units, _: &Build) -> (Self, FieldErrors) {
        field::read(form, units)
    }
    fn check_on(
        self,
        _: HeightContext,
        ctx: &Ctx,
        errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors> {
        field::check(self, ctx, errors)
    }
    fn store<'a>(
        tx: &'a mut SqliteConnection,
        b: i64,
        u: i64,
        v: &'a Checked<Self>,
    ) -> impl Future<Output = sqlx::Result<i64>> + Send + 'a {
        db::setups::insert(tx, b, u, v)
    }
}

impl BuildEntry for BenchInput {
    const WHICH: Which = Which::Bench;
    fn read(form: &FormData, units: Units, build: &Build) -> (Self, FieldErrors) {
        Self::from_form(form, units, build.data.spring_count.clamp(0, 24) as usize)
    }
    fn check_on(
        self,
        _: HeightContext,
        ctx: &Ctx,
        errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors> {
        self.check(ctx, errors)
    }
    fn store<'a>(
        tx: &'a mut SqliteConnection,
        b: i64,
        u: i64,
        v: &'a Checked<Self>,
    ) -> impl Future<Output = sqlx::Result<i64>> + Send + 'a {
        db::bench::insert(tx, b, u, v)
    }
}

impl BuildEntry for HeightInput {
    const WHICH: Which = Which::Height;
    fn read(form: &FormData, units: Units, _: &Build) -> (Self, FieldErrors) {
        field::read(form, units)
    }
    fn check_on(
        self,
        hc: HeightContext,
        ctx: &Ctx,
        errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors> {
        self.check_on(hc, ctx, errors)
    }
    fn store<'a>(
        tx: &'a mut SqliteConnection,
        b: i64,
        u: i64,
        v: &'a Checked<Self>,
    ) -> impl Future<Output = sqlx::Result<i64>> + Send + 'a {
        db::heights::insert(tx, b, u, v)
    }
}

impl BuildEntry for PassInput {
    const WHICH: Which = Which::Pass;
    fn read(form: &FormData, units: Units, _: &Build) -> (Self, FieldErrors) {
        field::read(form, units)
    }
    fn check_on(
        self,
        _: HeightContext,
        ctx: &Ctx,
        errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors> {
        field::check(self, ctx, errors)
    }
    fn store<'a>(
        tx: &'a mut SqliteConnection,
        b: i64,
        u: i64,
        v: &'a Checked<Self>,
    ) -> impl Future<Output = sqlx::Result<i64>> + Send + 'a {
        db::passes::insert(tx, b, u, v)
    }
}

/// Reads, checks and stores one entry in one transaction.
async fn add<E: BuildEntry>(
    state: AppState,
    build_id: i64,
    signed: SignedForm,
) -> AppResult<Response> {
    let mut e = Entry::begin(&state, build_id, signed).await?;
    let (previous, next) = db::heights::around(&mut e.tx, e.build.id, None).await?;
    let hc = HeightContext {
        shims_in_stack: e.build.data.shim_stack_mm.len(),
        previous,
        next,
    };
    let (input, errors) = E::read(&e.form, e.ctx.units, &e.build);
    let result = match BuildEntry::check_on(input, hc, &e.ctx, errors) {
        Ok(checked) => {
            E::store(&mut e.tx, e.build.id, e.user.id, &checked).await?;
            Ok(())
        }
        Err(errors) => Err(errors),
    };
    e.finish(&state, E::WHICH, result).await
}

pub async fn add_setup(
    State(state): State<AppState>,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    add::<SetupInput>(state, id, signed).await
}

pub async fn add_bench_test(
    State(state): State<AppState>,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    add::<BenchInput>(state, id, signed).await
}

pub async fn add_height(
    State(state): State<AppState>,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    add::<HeightInput>(state, id, signed).await
}

pub async fn add_pass(
    State(state): State<AppState>,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    add::<PassInput>(state, id, signed).await
}
