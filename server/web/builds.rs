//! Build pages: the build's page (hardware, current setup, bench tests, cover heights, passes,
//! each with a quick entry form), and the new / edit form for its hardware.

use askama::Template;
use axum::extract::State;
use axum::http::StatusCode;
use axum::response::{Html, IntoResponse, Redirect, Response};
use sqlx::SqliteConnection;

use super::AppState;
use super::capacity::{capacity_chart, figure_lines};
use super::chart::Chart;
use super::extract::{CurrentUser, PathId, SignedForm};
use super::layout::Layout;
use super::wear::{self, WearView};
use crate::clutch::friction::FacingMaterial;
use crate::clutch::springs::SetSpread;
use crate::db;
use crate::db::bench::{BenchSpring, BenchTest};
use crate::db::builds::Build;
use crate::db::cars::Car;
use crate::db::dossier::Dossier;
use crate::db::heights::Height;
use crate::db::setups::Setup;
use crate::db::sheets::SheetSummary;
use crate::error::{AppError, AppResult};
use crate::model::{self, BuildFacts, Figures};
use crate::records::build::BuildInput;
use crate::records::height::HeightInput;
use crate::records::pass::PassInput;
use crate::records::settings::SettingsInput;
use crate::records::{Ctx, FieldErrors, FormData, field};

/// One quick-entry form on the build page: what was typed and what was wrong with it.
#[derive(Debug, Clone, Default)]
pub struct EntryForm {
    pub form: FormData,
    pub errors: FieldErrors,
}

/// The four entry forms of a build page.
#[derive(Debug, Clone, Default)]
pub struct EntryForms {
    pub setup: Option<EntryForm>,
    pub bench: Option<EntryForm>,
    pub height: Option<EntryForm>,
    pub pass: Option<EntryForm>,
    /// The "prepare a setup sheet" form (its optional tuning targets).
    pub sheet: Option<EntryForm>,
}

#[derive(Template)]
#[template(path = "builds/show.html")]
pub struct ShowPage {
    pub page: Layout,
    pub d: Dossier,
    pub material: String,
    /// Bench tests, newest first, with what they say about the springs.
    pub bench: Vec<BenchView>,
    /// The capacity of the current setup, or what is missing to work it out.
    pub capacity: Result<Figures, String>,
    pub capacity_chart: Option<Chart>,
    /// The wear story, or why there is none yet.
    pub wear: Result<WearView, String>,
    pub forms: FilledForms,
    /// Spring positions 1..=count, for the bench form's rows.
    pub spring_rows: Vec<usize>,
    /// Setup sheets printed for this build, newest first.
    pub sheets: Vec<SheetSummary>,
    /// The spring rate the figures use, and where it comes from, in words.
    pub rate_used: String,
}

impl ShowPage {
    pub fn setup_form(&self) -> &EntryForm {
        &self.forms.setup
    }
    pub fn bench_form(&self) -> &EntryForm {
        &self.forms.bench
    }
    pub fn height_form(&self) -> &EntryForm {
        &self.forms.height
    }
    pub fn pass_form(&self) -> &EntryForm {
        &self.forms.pass
    }
    pub fn sheet_form(&self) -> &EntryForm {
        &self.forms.sheet
    }

    /// The next shim to pull, if any remain: (shims pulled after it, its thickness mm, the
    /// latest pass count), for the one-step shim-pull form.
    pub fn shim_pull(&self) -> Option<(i64, f64, i64)> {
        let last = model::current_disc(&self.d.heights).last()?;
        let pulled = last.data.shims_pulled.max(0);
        let next = self.d.build.data.shim_stack_mm.get(pulled as usize)?;
        Some((pulled + 1, *next, last.data.passes))
    }

    pub fn today(&self) -> String {
        self.page.today()
    }

    /// The setup in force now (the latest change), if any was recorded.
    pub fn current_setup(&self) -> Option<&Setup> {
        self.d.setups.last()
    }

    pub fn figures(&self) -> Vec<(&'static str, String)> {
        self.capacity
            .as_ref()
            .map(|f| figure_lines(&self.page.u, f))
            .unwrap_or_default()
    }

    pub fn shims(&self) -> String {
        let stack = &self.d.build.data.shim_stack_mm;
        if stack.is_empty() {
            return "none".into();
        }
        let list: Vec<String> = stack.iter().map(|s| self.page.u.len_num(*s)).collect();
        format!("{} {}", list.join(", "), self.page.u.length_unit())
    }

    pub fn thread(&self) -> String {
        super::show::thread_text(&self.d.build.data)
    }
}

/// A bench test with each spring's rate and flags.
pub struct BenchView {
    pub test: BenchTest,
    pub springs: Vec<SpringRow>,
    pub spread: Option<SetSpread>,
}

/// One spring's line in a bench test's table.
pub struct SpringRow {
    pub reading: BenchSpring,
    /// Its rate, N/mm.
    pub rate: Option<f64>,
    /// The rate's change since that spring's last test, percent.
    pub change: Option<f64>,
    /// The percent lost, when that loss is past the shop's sag threshold.
    pub sag: Option<f64>,
    /// Its load at the installed length, N.
    pub load: Option<f64>,
}

/// Pairs each bench test with its review (rates, spread against the tolerance, sag).
fn bench_views(
    tests: &[BenchTest],
    build: &BuildInput,
    settings: &SettingsInput,
) -> Vec<BenchView> {
    let reviews = model::bench_review(tests, build, settings);
    let mut views: Vec<BenchView> = tests
        .iter()
        .enumerate()
        .map(|(i, test)| {
            let review = reviews.as_ref().map(|r| &r[i]);
            let springs = test
                .springs
                .iter()
                .enumerate()
                .map(|(j, s)| {
                    let rate = review.and_then(|r| r.rates.get(j).copied());
                    let sag = review.and_then(|r| {
                        r.sagged
                            .iter()
                            .find(|(pos, _)| *pos as i64 == s.position)
                            .map(|(_, pct)| *pct)
                    });
                    let change = review.and_then(|r| r.change_pct.get(j).copied().flatten());
                    SpringRow {
                        reading: s.clone(),
                        rate,
                        change,
                        sag,
                        load: review.and_then(|r| r.loads_n.get(j).copied().flatten()),
                    }
                })
                .collect();
            BenchView {
                springs,
                spread: review.map(|r| r.spread),
                test: test.clone(),
            }
        })
        .collect();
    views.reverse();
    views
}

/// The four entry forms as shown: submitted ones with their messages, the rest with defaults.
pub struct FilledForms {
    setup: EntryForm,
    bench: EntryForm,
    height: EntryForm,
    pass: EntryForm,
    sheet: EntryForm,
}

/// Renders a build's page; `forms` carries any entry form that failed its checks (422).
pub async fn render_page(
    conn: &mut SqliteConnection,
    user: &CurrentUser,
    id: i64,
    forms: EntryForms,
) -> AppResult<String> {
    let d = db::dossier::load(conn, id)
        .await?
        .ok_or(AppError::NotFound)?;
    let title = format!("{} – {}", d.owner.customer_name, build_title(&d.build));
    let (page, settings) = Layout::load(conn, user, "customers", title).await?;
    let facts = BuildFacts::of(&d, &settings);
    let rate_used = match (
        facts.tested_rate_n_per_mm,
        d.bench.last(),
        facts.spring_rate(),
    ) {
        (Some(k), Some(test), _) => format!(
            "{} (mean of the {} bench test)",
            page.u.rate(k),
            test.tested_on
        ),
        (None, _, Some(k)) => format!("{} (nominal, not bench tested)", page.u.rate(k)),
        _ => "none recorded".into(),
    };
    let capacity = facts
        .capacity_request(BuildFacts::current_trial(&d))
        .and_then(|r| {
            model::figures(&r, page.units()).map_err(|e| format!("{}: {}", e.field, e.message))
        });
    let capacity_chart = capacity
        .as_ref()
        .ok()
        .map(|f| capacity_chart(&page.u, &f.report, None));
    let wear = facts.wear(&d.heights).and_then(|req| {
        crate::clutch::wear::analyze(&req)
            .map(|report| wear::view(&page.u, report, &d.heights, req.shimming_limit))
            .map_err(|e| format!("{}: {}", e.field, e.message))
    });
    let bench = bench_views(&d.bench, &d.build.data, &settings);
    let forms = default_forms(forms, &page.ctx, &d.car, &d.setups, &d.heights);
    let material = super::show::material_text(&d.build.data);
    let spring_rows = (1..=d.build.data.spring_count.clamp(0, 24) as usize).collect();
    let sheets = db::sheets::for_build(conn, id).await?;
    Ok(ShowPage {
        page,
        d,
        material,
        bench,
        capacity,
        capacity_chart,
        wear,
        forms,
        spring_rows,
        sheets,
        rate_used,
    }
    .render()?)
}

/// Fills each entry form the user has not just submitted with sensible defaults: today's date
/// and the build's last values, so a bench entry is a few keystrokes.
fn default_forms(
    forms: EntryForms,
    ctx: &Ctx,
    car: &Car,
    setups: &[Setup],
    heights: &[Height],
) -> FilledForms {
    let today = ctx.today.to_string();
    let filled = |mut form: FormData, date_field: &str| {
        form.set(date_field, &today);
        EntryForm {
            form,
            errors: FieldErrors::default(),
        }
    };
    FilledForms {
        setup: forms.setup.unwrap_or_else(|| {
            let last = setups.last().map(|s| s.data.clone()).unwrap_or_default();
            let mut form = field::to_form(&last, ctx.units);
            form.set("adjuster_turns_each", "");
            form.set("note", "");
            filled(form, "changed_on")
        }),
        bench: forms
            .bench
            .unwrap_or_else(|| filled(FormData::default(), "tested_on")),
        height: forms.height.unwrap_or_else(|| {
            let (passes, shims_pulled) = heights
                .last()
                .map_or((0, 0), |h| (h.data.passes, h.data.shims_pulled));
            let next = HeightInput {
                passes,
                shims_pulled,
                ..HeightInput::default()
            };
            filled(field::to_form(&next, ctx.units), "measured_on")
        }),
        pass: forms.pass.unwrap_or_else(|| {
            let next = PassInput {
                launch_rpm: car.data.launch_rpm,
                ..PassInput::default()
            };
            filled(field::to_form(&next, ctx.units), "run_on")
        }),
        sheet: forms.sheet.unwrap_or_default(),
    }
}

/// A build's name for headings: its label, or its number.
pub fn build_title(build: &Build) -> String {
    if build.data.label.is_empty() {
        format!("build #{}", build.id)
    } else {
        build.data.label.clone()
    }
}

pub async fn show(
    State(state): State<AppState>,
    user: CurrentUser,
    PathId(id): PathId,
) -> AppResult<Html<String>> {
    let mut conn = state.pool.acquire().await?;
    Ok(Html(
        render_page(&mut conn, &user, id, EntryForms::default()).await?,
    ))
}

#[derive(Template)]
#[template(path = "builds/form.html")]
pub struct FormPage {
    pub page: Layout,
    pub car: Car,
    /// The build being edited, or `None` for a new one.
    pub id: Option<i64>,
    pub form: FormData,
    pub errors: FieldErrors,
    pub materials: Vec<(&'static str, &'static str)>,
}

impl FormPage {
    fn new(page: Layout, car: Car, id: Option<i64>, form: FormData, errors: FieldErrors) -> Self {
        let materials = FacingMaterial::CHOICES.to_vec();
        Self {
            page,
            car,
            id,
            form,
            errors,
            materials,
        }
    }

    pub fn action(&self) -> String {
        match self.id {
            Some(id) => format!("/builds/{id}"),
            None => format!("/cars/{}/builds", self.car.id),
        }
    }
}

pub async fn new(
    State(state): State<AppState>,
    user: CurrentUser,
    PathId(car_id): PathId,
) -> AppResult<Html<String>> {
    let mut conn = state.pool.acquire().await?;
    let car = db::cars::by_id(&mut conn, car_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let (page, settings) = Layout::load(&mut conn, &user, "customers", "New clutch build").await?;
    let fresh = BuildInput {
        shimming_limit_mm: Some(settings.shimming_limit_mm),
        ..BuildInput::default()
    };
    let mut form = field::to_form(&fresh, page.units());
    form.set("spring_count", "");
    Ok(Html(
        FormPage::new(page, car, None, form, FieldErrors::default()).render()?,
    ))
}

pub async fn edit(
    State(state): State<AppState>,
    user: CurrentUser,
    PathId(id): PathId,
) -> AppResult<Html<String>> {
    let mut conn = state.pool.acquire().await?;
    let build = db::builds::by_id(&mut conn, id)
        .await?
        .ok_or(AppError::NotFound)?;
    let car = db::cars::by_id(&mut conn, build.car_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let (page, _) = Layout::load(&mut conn, &user, "customers", "Edit clutch build").await?;
    let form = field::to_form(&build.data, page.units());
    Ok(Html(
        FormPage::new(page, car, Some(id), form, FieldErrors::default()).render()?,
    ))
}

pub async fn create(
    State(state): State<AppState>,
    PathId(car_id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    save(state, signed, car_id, None).await
}

pub async fn update(
    State(state): State<AppState>,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    let mut conn = state.pool.acquire().await?;
    let build = db::builds::by_id(&mut conn, id)
        .await?
        .ok_or(AppError::NotFound)?;
    drop(conn);
    save(state, signed, build.car_id, Some(id)).await
}

async fn save(
    state: AppState,
    SignedForm { user, form }: SignedForm,
    car_id: i64,
    id: Option<i64>,
) -> AppResult<Response> {
    let mut tx = state.write(&user).await?;
    let car = db::cars::by_id(&mut tx, car_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let (page, _) = Layout::load(&mut tx, &user, "customers", "Clutch build").await?;
    let (input, errors) = field::read::<BuildInput>(&form, page.units());
    let checked = match field::check(input, &page.ctx, errors) {
        Ok(c) => c,
        Err(errors) => {
            let page = FormPage::new(page, car, id, form, errors);
            return Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(page.render()?)).into_response());
        }
    };
    let id = match id {
        Some(id) => {
            db::builds::update(&mut tx, id, &checked).await?;
            id
        }
        None => db::builds::insert(&mut tx, car_id, &checked).await?,
    };
    crate::status::refresh_stale(&mut tx).await?;
    tx.commit().await?;
    Ok(Redirect::to(&format!("/builds/{id}")).into_response())
}
