//! The quick entry forms on a build's page: a setup change, a spring bench test, a cover-height
//! measurement (with shims pulled), a track pass. Each saves in one transaction or re-renders
//! the build page with the typed values and the messages (422).

use axum::extract::State;
use axum::http::StatusCode;
use axum::response::{Html, IntoResponse, Response};

use crate::db;
use crate::db::record::Stored;
use crate::error::{AppError, AppResult};
use crate::model::wear::{current_disc, disc_passes};
use crate::records::bench::BenchInput;
use crate::records::field::Record;
use crate::records::height::{HeightContext, HeightInput};
use crate::records::pass::PassInput;
use crate::records::setup::SetupInput;
use crate::records::stored::{BenchTest, Build, Height, Pass, Setup};
use crate::records::{Checked, Ctx, FieldErrors, FormData, field};
use crate::web::AppState;
use crate::web::http::extract::{CurrentUser, PathId, SignedForm};
use crate::web::http::flash;
use crate::web::pages::builds::show::{EntryForm, EntryForms, render_page};
use clutch::units::Units;

/// Which of the build page's forms was sent.
#[derive(Clone, Copy)]
pub enum Which {
    Setup,
    Bench,
    Height,
    Pass,
}

/// One entry being saved: its transaction, the build, and the form as typed.
pub struct Entry {
    tx: crate::web::Write,
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
        if build.data.status == "retired" {
            // Its page offers no entry forms; a form kept open from before, or a crafted post,
            // gets the reason.
            return Err(AppError::Forbidden(
                "this build is retired: set it back to active (Edit hardware) to record on it",
            ));
        }
        let ctx = db::settings::get(&mut tx).await?.ctx();
        Ok(Self {
            tx,
            build,
            ctx,
            user: signed.user,
            form: signed.form,
        })
    }

    /// Commits and goes back to the build page with a note of what was saved, or shows the
    /// page again with the messages.
    async fn finish(
        self,
        state: &AppState,
        which: Which,
        result: Result<String, FieldErrors>,
    ) -> AppResult<Response> {
        let id = self.build.id;
        let errors = match result {
            Ok(note) => {
                self.tx.commit().await?;
                // Back to the top: the note and the summary, updated, are the first screen.
                return Ok(flash::redirect(state, &format!("/builds/{id}"), &note));
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
        let html = render_page(state, &self.user.viewer(), id, forms).await?.0;
        Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(html)).into_response())
    }
}

/// One kind of entry on a build page: how it is read from its form, checked against the build
/// and what is already recorded on it, and stored. Reading and checking are the record's own
/// unless the entry needs the build (a bench test's rows, a cover height's neighbours).
pub trait BuildEntry: Record + Sized + Send + Sync {
    const WHICH: Which;
    /// The record as stored, which says how it is written under its build.
    type Row: Stored<Input = Self>;
    fn read(e: &Entry) -> (Self, FieldErrors) {
        field::read(&e.form, e.ctx.units)
    }
    fn check_on(
        self,
        e: &Entry,
        _hc: &HeightContext,
        errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors> {
        field::check(self, &e.ctx, errors)
    }
    /// "Saved: ..." in words, saying what changed; worked out before the entry is stored.
    fn saved_note<'a>(
        e: &'a mut Entry,
        value: &'a Checked<Self>,
    ) -> impl Future<Output = sqlx::Result<String>> + Send + 'a;
}

/// "label value" for each shown field of a record, leaving out `skip` (columns).
fn listed<R: Record>(r: &R, units: Units, skip: &[&str]) -> String {
    let shown = field::shown(r, units);
    R::FIELDS
        .iter()
        .filter(|f| !skip.contains(&f.column))
        .filter_map(|f| shown.iter().find(|(l, _)| *l == f.label))
        .map(|(label, value)| format!("{label} {value}"))
        .collect::<Vec<_>>()
        .join(", ")
}

impl BuildEntry for SetupInput {
    const WHICH: Which = Which::Setup;
    type Row = Setup;
    async fn saved_note(e: &mut Entry, v: &Checked<Self>) -> sqlx::Result<String> {
        let units = e.ctx.units;
        let before = db::setups::for_build(&mut e.tx, e.build.id).await?.pop();
        let skip = ["changed_on", "note"];
        Ok(match before {
            None => format!(
                "Saved: the first setup, {}: {}.",
                v.changed_on,
                listed::<Self>(v, units, &skip)
            ),
            Some(before) => match field::changes(&before.data, v, units, &skip) {
                c if c.is_empty() => format!(
                    "Saved: setup check of {}, the same settings as before.",
                    v.changed_on
                ),
                c => format!("Saved: setup change of {}: {}.", v.changed_on, c.join("; ")),
            },
        })
    }
}

impl BuildEntry for BenchInput {
    const WHICH: Which = Which::Bench;
    fn read(e: &Entry) -> (Self, FieldErrors) {
        let springs = e.build.data.spring_count.clamp(0, 24) as usize;
        Self::from_form(&e.form, e.ctx.units, springs)
    }
    fn check_on(
        self,
        e: &Entry,
        _: &HeightContext,
        errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors> {
        self.check(e.build.data.spring_solid_height_mm, &e.ctx, errors)
    }
    type Row = BenchTest;
    async fn saved_note(_: &mut Entry, v: &Checked<Self>) -> sqlx::Result<String> {
        let n = v.springs.len();
        Ok(format!(
            "Saved: bench test of {}, {n} spring{}.",
            v.tested_on,
            if n == 1 { "" } else { "s" }
        ))
    }
}

impl BuildEntry for HeightInput {
    const WHICH: Which = Which::Height;
    fn read(e: &Entry) -> (Self, FieldErrors) {
        let (mut height, errors) = field::read::<Self>(&e.form, e.ctx.units);
        height.confirm = e.form.is_checked("confirm");
        (height, errors)
    }
    fn check_on(
        self,
        e: &Entry,
        hc: &HeightContext,
        errors: FieldErrors,
    ) -> Result<Checked<Self>, FieldErrors> {
        self.check_on(hc, &e.ctx, errors)
    }
    type Row = Height;
    async fn saved_note(e: &mut Entry, v: &Checked<Self>) -> sqlx::Result<String> {
        let units = e.ctx.units;
        let skip: &[&str] = if v.new_disc {
            &["measured_on", "note"]
        } else {
            &["measured_on", "note", "new_disc"]
        };
        Ok(format!(
            "Saved: cover height of {}: {}.",
            v.measured_on,
            listed::<Self>(v, units, skip)
        ))
    }
}

impl BuildEntry for PassInput {
    const WHICH: Which = Which::Pass;
    type Row = Pass;
    async fn saved_note(e: &mut Entry, v: &Checked<Self>) -> sqlx::Result<String> {
        let units = e.ctx.units;
        let heights = db::heights::for_build(&mut e.tx, e.build.id).await?;
        let passes = db::passes::for_build(&mut e.tx, e.build.id).await?;
        let count = disc_passes(&heights, &passes);
        // The new pass counts when it is not dated before the disc's latest measurement.
        let counted = current_disc(&heights)
            .last()
            .is_none_or(|h| v.run_on >= h.data.measured_on);
        let now = count.now() + i64::from(counted);
        let what = listed::<Self>(v, units, &["run_on", "notes"]);
        Ok(format!(
            "Saved: pass of {}{}{what}. Passes on this disc: {now}.",
            v.run_on,
            if what.is_empty() { "" } else { ": " }
        ))
    }
}

/// POST `/builds/{id}/<entries>`: reads, checks and stores one entry of kind `E` (a setup
/// change, a bench test, a cover height, a pass) in one transaction.
pub async fn add<E: BuildEntry>(
    State(state): State<AppState>,
    PathId(build_id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    let mut e = Entry::begin(&state, build_id, signed).await?;
    let hc = db::heights::context(&mut e.tx, &e.build, None).await?;
    let (input, errors) = E::read(&e);
    let result = match BuildEntry::check_on(input, &e, &hc, errors) {
        Ok(checked) => {
            let note = E::saved_note(&mut e, &checked).await?;
            E::Row::insert(&mut e.tx, e.build.id, e.user.id, &checked).await?;
            Ok(note)
        }
        Err(errors) => Err(errors),
    };
    e.finish(&state, E::WHICH, result).await
}
