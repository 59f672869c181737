//! Build pages: the build's page (hardware, current setup, bench tests, cover heights, passes,
//! each with a quick entry form), and the new / edit form for its hardware.

use crate::records::measure::Length;

use askama::Template;
use axum::response::{Html, Response};

use crate::db;
use crate::db::sheets::SheetSummary;
use crate::error::{AppError, AppResult};
use crate::model::Figures;
use crate::model::as_of::{BuildAsOf, Friction, bench_review};
use crate::model::due::WorkStatus;
use crate::model::energy::energy_forecast;
use crate::model::wear::{DiscPasses, current_disc, disc_passes};
use crate::records::build::BuildInput;
use crate::records::date::ShopZone;
use crate::records::height::HeightInput;
use crate::records::pass::PassInput;
use crate::records::settings::SettingsInput;
use crate::records::stored::Build;
use crate::records::stored::Car;
use crate::records::stored::Dossier;
use crate::records::stored::LogSummary;
use crate::records::stored::Setup;
use crate::records::stored::{BenchSpring, BenchTest};
use crate::records::{Ctx, FieldErrors, FormData, field};
use crate::web::AppState;
use crate::web::http::cache::PageKey;
use crate::web::http::extract::Viewer;
use crate::web::http::flash::RecordView;
use crate::web::http::heavy::Caller;
use crate::web::pages::builds::tune::{capacity_chart, figure_lines};
use crate::web::pages::builds::wear::{self, WearView};
use crate::web::pages::chart::{Chart, Size};
use crate::web::pages::layout::Layout;
use clutch::capacity::friction::FacingMaterial;
use clutch::capacity::springs::SetSpread;

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
    /// "Saved: ..." left by the form that redirected here.
    pub flash: Option<String>,
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
    /// "Saved: ..." after a save, shown once.
    pub flash: Option<String>,
    /// The disc's pass count now (the cover-height form starts from it).
    pub disc_passes: DiscPasses,
    /// The friction coefficient the figures use, and why.
    pub friction: Friction,
    /// The build's work-due status (`model::due::WorkStatus`, as the counter says it).
    pub work_status: WorkStatus,
}

impl ShowPage {
    /// The entry form the page was re-shown for because its save was refused: what it records,
    /// the id of the form (to link to), and how many of its inputs need fixing.
    pub fn refused(&self) -> Option<(&'static str, &'static str, usize)> {
        [
            ("setup change", "setup-form", self.setup_form()),
            ("setup sheet", "sheet-form", self.sheet_form()),
            ("bench test", "bench-form", self.bench_form()),
            ("cover height", "height-form", self.height_form()),
            ("track pass", "pass-form", self.pass_form()),
        ]
        .into_iter()
        .find(|(_, _, f)| !f.errors.is_empty())
        .map(|(what, id, f)| (what, id, f.errors.len()))
    }

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

    /// The next shim to pull, if any remain: its thickness and the one-step shim-pull form
    /// (date and pass count to confirm, the shim count and a note already filled in).
    pub fn shim_pull(&self) -> Option<(Length, EntryForm)> {
        let last = current_disc(&self.d.heights).last()?;
        let pulled = last.data.shims_pulled.max(0);
        let next = *self.d.build.data.shim_stack_mm.get(pulled as usize)?;
        let mut form = FormData::default();
        form.set("measured_on", self.page.today());
        form.set("passes", self.disc_passes.now().to_string());
        form.set("shims_pulled", (pulled + 1).to_string());
        form.set("note", format!("pulled the {} shim", self.page.u.len(next)));
        Some((
            next,
            EntryForm {
                form,
                errors: FieldErrors::default(),
            },
        ))
    }

    /// Whether a shim is due now (the shim-pull form opens by itself).
    pub fn shim_due(&self) -> bool {
        matches!(&self.wear, Ok(w) if w.report.status == clutch::wear::WearStatus::ShimDue)
    }

    /// The passes the page lists: the newest [`RECENT_ROWS`] (all of them on their own page).
    pub fn recent_passes(&self) -> &[crate::records::stored::Pass] {
        &self.d.passes[..self.d.passes.len().min(RECENT_ROWS)]
    }

    pub fn log_of(&self, pass_id: i64) -> Option<&LogSummary> {
        self.d.log_of(pass_id)
    }

    pub fn heading(&self) -> String {
        build_title(&self.d.build)
    }

    /// Whether the build is retired: its page shows the record but no entry forms.
    pub fn retired(&self) -> bool {
        self.d.build.data.status == "retired"
    }

    /// The status tag beside the title, unless the title already says it.
    pub fn status_tag(&self) -> Option<&str> {
        let status = self.d.build.data.status.as_str();
        let label = self.d.build.data.label.to_lowercase();
        (!label.contains(status)).then_some(status)
    }

    /// The current setting in words for the summary: "1.75 turns · 26.0 g per lever".
    pub fn setting_text(&self) -> String {
        match self.current_setup() {
            Some(s) => {
                let turns = format!("{}", s.data.adjuster_turns);
                let word = if turns == "1" { "turn" } else { "turns" };
                format!(
                    "{turns} {word} · {} per lever",
                    self.page.u.grams(s.data.counterweight_g)
                )
            }
            None => "no setup recorded".into(),
        }
    }

    /// The lockup figure of the current setting, as the capacity figures say it.
    pub fn lockup_text(&self) -> String {
        self.figures()
            .into_iter()
            .find(|(label, _)| label.starts_with("Lockup"))
            .map_or_else(|| "–".into(), |(_, v)| v)
    }

    /// The wear in one line for the summary: its rate, or why there is no forecast.
    pub fn wear_line(&self) -> String {
        match &self.wear {
            Ok(w) => w.forecast.first().cloned().unwrap_or_default(),
            Err(_) => "no cover height recorded yet".into(),
        }
    }

    /// What is due on this build, in words: a shim or the disc now, the forecast, the springs.
    pub fn due_lines(&self) -> Vec<String> {
        let mut lines = Vec::new();
        if self.retired() {
            return lines;
        }
        if let Ok(w) = &self.wear {
            if w.report.status != clutch::wear::WearStatus::Ok {
                lines.push(w.headline.clone());
            }
            lines.extend(
                w.forecast
                    .iter()
                    .filter(|l| l.starts_with("About"))
                    .cloned(),
            );
        }
        if let Some(latest) = self.bench.first() {
            if latest.spread.is_some_and(|s| s.out_of_tolerance) {
                lines.push("Springs: the latest bench test is out of tolerance.".into());
            }
            let sagged = latest.springs.iter().filter(|r| r.sag.is_some()).count();
            if sagged > 0 {
                lines.push(format!(
                    "Springs: {sagged} lost load (sagged) since the previous test."
                ));
            }
            let low = latest.low_springs();
            if low > 0 {
                lines.push(format!(
                    "Springs: {low} low on load against the set at the installed height."
                ));
            }
        }
        lines
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
        crate::web::pages::show::thread_text(&self.d.build.data)
    }
}

/// A bench test with each spring's rate and flags.
pub struct BenchView {
    pub test: BenchTest,
    pub springs: Vec<SpringRow>,
    pub spread: Option<SetSpread>,
}

impl BenchView {
    /// Springs this test found low on load against their set (their first test).
    pub fn low_springs(&self) -> usize {
        self.springs.iter().filter(|r| r.low.is_some()).count()
    }
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
    /// A spring's first test: the percent its load is below the set's mean, when past the
    /// shop's sag threshold.
    pub low: Option<f64>,
    /// Its load at the installed length, N.
    pub load: Option<f64>,
}

/// Pairs each bench test with its review (rates, spread against the tolerance, sag).
fn bench_views(
    tests: &[BenchTest],
    build: &BuildInput,
    settings: &SettingsInput,
) -> Vec<BenchView> {
    let reviews = bench_review(tests, build, settings);
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
                    let low = review.and_then(|r| {
                        r.low
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
                        low,
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

/// Rows of passes and of cover heights a build's page lists; the rest are a link away.
pub const RECENT_ROWS: usize = 20;

/// Renders a build's page; `forms` carries any entry form that failed its checks (422).
/// Answers the page and the shop's zone it was rendered in. The reads and the page's
/// calculations (the forecast by slip energy runs launch previews: heavy work) run one after
/// the other on one blocking thread, in a heavy-work place (the page is kept in the page cache
/// until the next write).
pub async fn render_page(
    state: &AppState,
    user: &Viewer,
    id: i64,
    forms: EntryForms,
) -> AppResult<(String, ShopZone)> {
    let user = user.clone();
    state
        .heavy
        .read_then(
            &Caller(None),
            &state.reader,
            move |conn| db::read::build_page(conn, id, |conn| db::read::sheets(conn, id)),
            move |read| {
                let (d, settings, sheets) = read.ok_or(AppError::NotFound)?;
                page_of(d, settings, sheets, &user, forms)
            },
        )
        .await
}

/// The build page of dossier `d` (see [`render_page`]).
fn page_of(
    d: Dossier,
    settings: SettingsInput,
    sheets: Vec<SheetSummary>,
    user: &Viewer,
    forms: EntryForms,
) -> AppResult<(String, ShopZone)> {
    let title = page_title(&d.owner.customer_name, &d.build);
    let page = Layout::new(&settings, user, "customers", title);
    let now = BuildAsOf::now(&d, &settings);
    let rate_used = match (
        now.tested_rate,
        now.bench_index.map(|i| &d.bench[i]),
        now.spring_rate(),
    ) {
        (Some(k), Some(test), _) => format!(
            "{} (mean of the {} bench test)",
            page.u.rate(k),
            test.tested_on
        ),
        (None, _, Some(k)) => format!("{} (nominal, not bench tested)", page.u.rate(k)),
        _ => "none recorded".into(),
    };
    let capacity = now.figures(page.units());
    let friction = now.friction.clone();
    let capacity_chart = capacity
        .as_ref()
        .ok()
        .map(|f| capacity_chart(Size::Wide, &page.u, &f.report, None));
    let energy = energy_forecast(&d, &now);
    let wear = now.wear().and_then(|req| {
        clutch::wear::analyze(&req)
            .map(|report| {
                wear::view(
                    &page.u,
                    report,
                    &d.heights,
                    req.shimming_limit,
                    settings.due_within_passes,
                    &energy,
                    RECENT_ROWS,
                )
            })
            .map_err(|e| format!("{}: {}", e.field, e.message))
    });
    let bench = bench_views(&d.bench, &d.build.data, &settings);
    // The shop's one work-due status (the counter's and the search's word).
    let springs_flagged = bench_review(&d.bench, &d.build.data, &settings)
        .as_ref()
        .and_then(|r| r.last())
        .is_some_and(|t| t.flagged());
    let work_status = WorkStatus::of_report(
        wear.as_ref().ok().map(|w| &w.report),
        springs_flagged,
        settings.due_within_passes,
    );
    let flash = forms.flash.clone();
    let forms = default_forms(forms, &page.ctx, &d);
    let material = crate::web::pages::show::material_text(&d.build.data);
    let spring_rows = (1..=d.build.data.spring_count.clamp(0, 24) as usize).collect();
    let disc_passes = disc_passes(&d.heights, &d.passes);
    let zone = page.zone.clone();
    let html = ShowPage {
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
        flash,
        disc_passes,
        friction,
        work_status,
    }
    .render()?;
    Ok((html, zone))
}

/// Fills each entry form the user has not just submitted with sensible defaults: today's date
/// and the build's last values, so a bench entry is a few keystrokes.
fn default_forms(forms: EntryForms, ctx: &Ctx, d: &Dossier) -> FilledForms {
    let (car, setups) = (&d.car, &d.setups);
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
            // The passes logged since the last measurement count on the disc already.
            let passes = disc_passes(&d.heights, &d.passes).now();
            let shims_pulled = d.heights.last().map_or(0, |h| h.data.shims_pulled);
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
        format!("Clutch build #{}", build.id)
    } else {
        build.data.label.clone()
    }
}

/// The browser title of a build's pages: "customer – build".
pub fn page_title(customer_name: &str, build: &Build) -> String {
    format!("{customer_name} – {}", build_title(build))
}

pub async fn show(RecordView(state, user, id, flash): RecordView) -> AppResult<Response> {
    let html = if flash.note.is_some() {
        let forms = EntryForms {
            flash: flash.note.clone(),
            ..EntryForms::default()
        };
        render_page(&state, &user.viewer(), id, forms).await?.0
    } else {
        let state_ref = &state;
        let render = |stand_in: Viewer| async move {
            render_page(state_ref, &stand_in, id, EntryForms::default()).await
        };
        state.cache.page(PageKey::Build(id), &user, render).await?
    };
    Ok(flash.respond(Html(html)))
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
    pub fn new(
        page: Layout,
        car: Car,
        id: Option<i64>,
        form: FormData,
        errors: FieldErrors,
    ) -> Self {
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
