//! Capacity against engine speed for a build: the chart, the figures, trying other settings
//! without saving, and the setting recommendation.

use crate::records::measure::{EngineSpeed, Grams};
use std::collections::HashMap;

use askama::Template;
use axum::extract::{Query, RawQuery, State};
use axum::response::Html;

use crate::error::{AppError, AppResult};
use crate::model::as_of::{BuildAsOf, Friction};
use crate::model::calibration::{
    BuildCalibration, LaunchMethod, MethodFlag, calibration_source, method_flags,
};
use crate::model::heat::{self, HeatStudy};
use crate::model::{Figures, Trial, TuningTargets, figures};
use crate::records::date::ShopZone;
use crate::records::setup::SetupInput;
use crate::records::stored::Dossier;
use crate::records::{Ctx, FieldErrors, FormData, field};
use crate::web::AppState;
use crate::web::http::cache::PageKey;
use crate::web::http::extract::{CurrentUser, PathId, Viewer};
use crate::web::http::heavy::Caller;
use crate::web::pages::builds::launch::LaunchColumn;
use crate::web::pages::chart::{Chart, Size};
use crate::web::pages::layout::Layout;
use crate::web::pages::show::Show;
use clutch::capacity::recommend::Recommendation;
use clutch::capacity::report::CapacityReport;
use clutch::launch::target::LaunchTarget;
use clutch::quantity::{Bound, Kind, Limit, limits};

/// The capacity chart: engine torque, clutch capacity, its static share, the slip region, and
/// the launch and lockup speeds marked. `before` adds the current setting for comparison.
pub fn capacity_chart(
    size: Size,
    u: &Show,
    report: &CapacityReport,
    before: Option<&CapacityReport>,
) -> Chart {
    // Report values are already in the shop's units (see `model::figures`).
    let engine: Vec<(f64, f64)> = report
        .curve
        .iter()
        .map(|p| (p.rpm, p.engine_torque))
        .collect();
    let capacity: Vec<(f64, f64)> = report.curve.iter().map(|p| (p.rpm, p.capacity)).collect();
    let static_share: Vec<(f64, f64)> = report
        .curve
        .iter()
        .map(|p| {
            (
                p.rpm,
                if p.total_clamp > 0.0 {
                    p.capacity * report.static_clamp / p.total_clamp
                } else {
                    0.0
                },
            )
        })
        .collect();
    let before_line: Vec<(f64, f64)> = before
        .map(|b| b.curve.iter().map(|p| (p.rpm, p.capacity)).collect())
        .unwrap_or_default();
    let x = (
        engine.first().map_or(0.0, |p| p.0),
        engine.last().map_or(1.0, |p| p.0),
    );
    let y_max = engine
        .iter()
        .chain(&capacity)
        .chain(&before_line)
        .map(|p| p.1)
        .fold(0.0, f64::max);
    // Cap the scale so a huge capacity at the top does not flatten the engine curve.
    let engine_max = engine.iter().map(|p| p.1).fold(0.0, f64::max);
    let y_top = y_max.min(engine_max * 2.5);
    let (mut chart, f) = Chart::sized(
        size,
        "Clutch capacity against engine torque",
        "engine speed (rpm)",
        &format!("torque ({})", u.torque_unit()),
        x,
        (0.0, y_top),
    );
    chart.shade_below(&f, "slip", &capacity, &engine);
    chart.line(&f, "static", "static share", &static_share);
    if before.is_some() {
        chart.line(&f, "before", "before", &before_line);
    }
    chart.line(&f, "engine", "engine", &engine);
    chart.line(&f, "capacity", "clutch", &capacity);
    if let Some(l) = &report.launch {
        chart.mark_x(&f, "launch", format!("launch {:.0}", l.rpm), l.rpm);
    }
    if let Some(rpm) = report.lockup_rpm {
        let label = if rpm <= x.0 {
            format!("lockup at or below {rpm:.0}")
        } else {
            format!("lockup {rpm:.0}")
        };
        chart.mark_x(&f, "lockup", label, rpm);
    }
    chart
}

/// The first speed of the torque curve the figures were worked out over (0 without figures).
pub fn curve_start<E>(figures: &Result<Figures, E>) -> f64 {
    figures
        .as_ref()
        .ok()
        .and_then(|f| f.report.curve.first())
        .map_or(0.0, |p| p.rpm)
}

#[derive(Template)]
#[template(path = "builds/tune.html")]
pub struct TunePage {
    pub page: Layout,
    pub dossier: Dossier,
    pub current_trial: Trial,
    pub current: Result<Figures, String>,
    /// A setting being tried (not saved), with its figures.
    pub trial: Option<(Trial, Figures)>,
    pub recommendation: Option<Recommendation>,
    pub recommended: Option<Figures>,
    pub chart: Option<Chart>,
    pub form: FormData,
    pub errors: FieldErrors,
    pub today: String,
    /// μ fitted to the build's passes with a lockup seen, or why there is none.
    pub calibration: Result<BuildCalibration, String>,
    /// The setting the recommendation searched from (its μ included).
    pub recommended_from: Trial,
    /// Launch previews: the current setup, and the setting tried or recommended beside it.
    pub launch: Vec<LaunchColumn>,
    /// The friction coefficient in force (the current column's), and why.
    pub friction: Friction,
    /// μ against the facing's temperature at launch, from the calibration's passes.
    pub heat: Option<HeatStudy>,
    /// μ read from the whole launch of the passes that allow it, beside the torque balance.
    pub by_launch: Option<LaunchMethod>,
    /// Passes the two methods see differently.
    pub method_flags: Vec<MethodFlag>,
}

/// Reads a setting to try (turns, counterweight, optional μ) with the same checks as a setup
/// change, or `None` with the messages.
fn read_trial(form: &FormData, ctx: &Ctx, errors: &mut FieldErrors) -> Option<Trial> {
    let (mut input, read_errors) = field::read::<SetupInput>(form, ctx.units);
    input.changed_on = ctx.today.to_string();
    input.note.clear();
    input.adjuster_turns_each.clear();
    match field::check(input, ctx, read_errors) {
        Ok(checked) => Some(Trial::from_setup(Some(&checked))),
        Err(e) => {
            *errors = e;
            None
        }
    }
}

/// GET /builds/{id}/tune: the current setting; `try=1` with turns/counterweight/mu shows a
/// trial; `recommend=1` with a target lockup (and launch ratio) searches for settings.
pub async fn tune(
    State(state): State<AppState>,
    user: CurrentUser,
    PathId(id): PathId,
    caller: Caller,
    Query(query): Query<HashMap<String, String>>,
    RawQuery(raw): RawQuery,
) -> AppResult<Html<String>> {
    let key = PageKey::Tune(id, raw.unwrap_or_default());
    let (state_ref, caller) = (&state, &caller);
    let render = |stand_in: Viewer| async move {
        render_tune(state_ref, caller, &stand_in, id, query).await
    };
    Ok(Html(state.cache.page(key, &user, render).await?))
}

/// The tuning page for `query` (see [`tune`]), and the shop's zone it was rendered in.
async fn render_tune(
    state: &AppState,
    caller: &Caller,
    user: &Viewer,
    id: i64,
    query: HashMap<String, String>,
) -> AppResult<(String, ShopZone)> {
    // The reads, then the calibration, the recommendation's search and the launch
    // simulations: heavy work, in the caller's turn, off the other requests' way.
    let user = user.clone();
    state
        .heavy
        .read_then(
            caller,
            &state.reader,
            move |conn| crate::db::read::build_page(conn, id, |_| Ok(())),
            move |read| -> AppResult<(String, ShopZone)> {
                let (dossier, settings, ()) = read.ok_or(AppError::NotFound)?;
                let page = Layout::new(&settings, &user, "customers", "Capacity and tuning");
                let (facts, calibration) = BuildAsOf::now_calibrated(&dossier, &settings);
                let calibration = calibration.map_err(|e| e.message);
                let heat = calibration
                    .as_ref()
                    .ok()
                    .map(|c| heat::study(&dossier, &settings, c));
                let by_launch = calibration.as_ref().ok().and_then(|c| c.launch.clone());
                let method_flags = calibration
                    .as_ref()
                    .map_or_else(|_| Vec::new(), |c| method_flags(&dossier, &settings, c));
                let friction = facts.friction.clone();
                let current_trial = facts.trial;
                // The 60-ft times the car's passes recorded, for the launch preview to be read against.
                let recorded_sixty_ft: Vec<f64> = dossier
                    .passes
                    .iter()
                    .filter_map(|p| p.data.sixty_ft_s.map(|s| s.s()))
                    .collect();
                let current = facts.figures(page.units());

                let mut form = FormData::new(query.into_iter().collect());
                let mut errors = FieldErrors::default();
                let mut trial = None;
                let mut recommended = None;
                let mut recommended_from = current_trial;
                if form.get("try") == "1"
                    && let Some(t) = read_trial(&form, &page.ctx, &mut errors)
                {
                    match facts.capacity_request(t).map(|r| figures(&r, page.units())) {
                        Ok(Ok(f)) => trial = Some((t, f)),
                        Ok(Err(e)) => errors.add("adjuster_turns", e.message),
                        Err(missing) => errors.add("adjuster_turns", missing),
                    }
                }
                if form.get("recommend") == "1" {
                    let units = page.units();
                    // One range, the one the search can use: the car's torque curve.
                    let curve = current.as_ref().ok().and_then(|f| {
                        Some((f.report.curve.first()?.rpm, f.report.curve.last()?.rpm))
                    });
                    let lockup_limit = curve.map_or(limits::ENGINE_SPEED, |(lo, hi)| {
                        Limit::new(Kind::Speed, Bound::Incl(lo), Bound::Incl(hi))
                    });
                    let (lockup, ratio) = typed_targets(&form, lockup_limit, units, &mut errors);
                    if lockup.is_none() && !errors.has("target_lockup") {
                        errors.add("target_lockup", "required");
                    }
                    // The μ being tried (e.g. the calibrated one) carries into the recommendation.
                    if !form.get("mu").is_empty() {
                        let mu = field::number(&form, "mu", limits::MU, units, &mut errors);
                        recommended_from.mu = mu.or(current_trial.mu);
                    }
                    if let (Some(lockup_rpm), true, true) =
                        (lockup, errors.is_empty(), current.is_ok())
                    {
                        let targets = TuningTargets {
                            lockup_rpm: EngineSpeed::from_rpm(lockup_rpm),
                            launch_ratio: ratio,
                        };
                        match facts.recommend(recommended_from, targets, page.units()) {
                            Ok(found) => recommended = Some(found),
                            Err(e) if e.field == "targets.launch_ratio" => {
                                errors.add("target_ratio", e.message)
                            }
                            Err(e) => errors.add("target_lockup", e.message),
                        }
                    }
                }
                if form.get("adjuster_turns").is_empty() {
                    let now = current_trial.as_setup();
                    let prefill = field::to_form(&now, page.units());
                    for name in ["adjuster_turns", "counterweight_g", "mu"] {
                        // A μ given for the recommendation (e.g. the calibrated one) stays.
                        if name != "mu" || form.get("mu").is_empty() {
                            form.set(name, prefill.get(name));
                        }
                    }
                }
                let (recommendation, recommended) = match recommended {
                    Some((r, f)) => (Some(r), Some(f)),
                    None => (None, None),
                };
                let mut launch = launch_columns(
                    &facts,
                    &mut form,
                    &mut errors,
                    &page.ctx,
                    current.is_ok(),
                    current_trial,
                    Asked {
                        trial: &trial,
                        recommendation: &recommendation,
                        recommended_from,
                        recorded_sixty_ft: &recorded_sixty_ft,
                        heat: heat.as_ref().map(|h| &h.fit),
                    },
                );
                crate::web::pages::builds::launch::draw(&mut launch);
                let shown = recommended.as_ref().or(trial.as_ref().map(|(_, f)| f));
                let chart = match (&current, shown) {
                    (Ok(cur), Some(new)) => Some(capacity_chart(
                        Size::Wide,
                        &page.u,
                        &new.report,
                        Some(&cur.report),
                    )),
                    (Ok(cur), None) => Some(capacity_chart(Size::Wide, &page.u, &cur.report, None)),
                    _ => None,
                };
                let today = page.today();
                let zone = page.zone.clone();
                let page = TunePage {
                    page,
                    dossier,
                    current_trial,
                    current,
                    trial,
                    recommendation,
                    recommended,
                    chart,
                    form,
                    errors,
                    today,
                    calibration,
                    recommended_from,
                    launch,
                    friction,
                    heat,
                    by_launch,
                    method_flags,
                };
                Ok((page.render()?, zone))
            },
        )
        .await
}

/// What the tuning page was asked to show beside the current setup, for the launch preview: a
/// setting tried, a recommendation and the setting it started from, and the 60-ft times the
/// car's passes recorded.
struct Asked<'a> {
    trial: &'a Option<(Trial, Figures)>,
    recommendation: &'a Option<Recommendation>,
    recommended_from: Trial,
    recorded_sixty_ft: &'a [f64],
    /// The μ-against-temperature line, or why there is none (for the next pass's column).
    heat: Option<&'a Result<clutch::heat::HeatFit, String>>,
}

/// The launch preview columns: the current setup from the car's launch speed, and beside it the
/// recommended or tried setting from the launch speed tried (`launch_rpm`, with `try=1`).
/// Prefills the launch speed with the car's.
fn launch_columns(
    facts: &BuildAsOf,
    form: &mut FormData,
    errors: &mut FieldErrors,
    ctx: &Ctx,
    capacity_ok: bool,
    current_trial: Trial,
    asked: Asked,
) -> Vec<LaunchColumn> {
    let Asked {
        trial,
        recommendation,
        recommended_from,
        recorded_sixty_ft,
        heat,
    } = asked;
    let units = ctx.units;
    let tried_rpm = if form.get("try") == "1" && !form.get("launch_rpm").is_empty() {
        field::number(form, "launch_rpm", limits::ENGINE_SPEED, units, errors)
    } else {
        None
    };
    if form.get("launch_rpm").is_empty()
        && let Some(rpm) = facts.car.launch_rpm
    {
        form.set("launch_rpm", format!("{:.0}", rpm.rpm()));
    }
    let target = if form.get("launch_target") == "1" {
        let time = field::number(form, "target_lock_time", limits::LOCKUP_TIME, units, errors);
        let energy = field::number(form, "max_slip_energy", limits::SLIP_ENERGY, units, errors);
        match (time, energy) {
            (Some(t), None) => Some(LaunchTarget::LockupTime(t)),
            (None, Some(e)) => Some(LaunchTarget::MaxSlipEnergy(e * 1000.0)),
            (Some(_), Some(_)) => {
                errors.add(
                    "max_slip_energy",
                    "give a lockup time or a slip energy, not both",
                );
                None
            }
            (None, None) => {
                if !errors.has("target_lock_time") && !errors.has("max_slip_energy") {
                    errors.add("target_lock_time", "give a lockup time or a slip energy");
                }
                None
            }
        }
    } else {
        None
    };
    if !capacity_ok {
        return Vec::new();
    }
    let mut columns = vec![crate::web::pages::builds::launch::column(
        facts,
        "Current setup",
        current_trial,
        None,
        recorded_sixty_ft,
        units,
    )];
    if form.get("next_pass") == "1" {
        let minutes = field::number(
            form,
            "next_after_min",
            limits::NEXT_PASS_MINUTES,
            units,
            errors,
        );
        if let Some(minutes) = minutes {
            match heat {
                Some(Ok(fit)) => {
                    if let Some(next) = crate::web::pages::builds::launch::next_pass_column(
                        facts,
                        &columns[0],
                        current_trial,
                        fit,
                        minutes,
                        recorded_sixty_ft,
                        units,
                    ) {
                        columns.push(next);
                    }
                }
                Some(Err(why)) => errors.add(
                    "next_after_min",
                    format!("needs the friction-against-heat line first: {why}"),
                ),
                None => errors.add(
                    "next_after_min",
                    "needs the friction-against-heat line first, from a calibration",
                ),
            }
        }
        return columns;
    }
    if let Some(target) = target {
        columns.push(crate::web::pages::builds::launch::target_column(
            facts,
            current_trial,
            target,
            recorded_sixty_ft,
            units,
        ));
        return columns;
    }
    let other = match (recommendation, trial) {
        (Some(r), _) => Some((
            "Recommended",
            Trial {
                adjuster_turns: r.recommended.adjuster_turns,
                counterweight_g: Grams::from_g(r.recommended.counterweight_g),
                mu: recommended_from.mu,
            },
        )),
        (None, Some((t, _))) => Some(("Trying", *t)),
        (None, None) => tried_rpm.map(|_| ("Trying", current_trial)),
    };
    if let Some((title, t)) = other {
        columns.push(crate::web::pages::builds::launch::column(
            facts,
            title,
            t,
            tried_rpm,
            recorded_sixty_ft,
            units,
        ));
    }
    columns
}

/// The figures a page quotes for one setting, formatted in the shop's units.
pub fn figure_lines(u: &Show, f: &Figures) -> Vec<(&'static str, String)> {
    let r = &f.report;
    let t = |v: f64| format!("{v:.0} {}", u.torque_unit());
    let clamp = |v: f64| format!("{v:.0} {}", u.force_unit());
    let mut lines = vec![("Static clamp", clamp(r.static_clamp))];
    if r.clamp_loss > 0.0 {
        // Already taken off the static clamp above.
        lines.push(("Wear since last shim", format!("−{}", clamp(r.clamp_loss))));
    }
    if let Some(t) = r.coil_bind_turns {
        lines.push((
            "Most turns with the coil-bind margin",
            format!("{t:.2} turns"),
        ));
    }
    if let Some(c) = r.coil_bind_clearance {
        lines.push((
            "Clearance to coil bind, released",
            format!("{c:.3} {}", u.length_unit()),
        ));
    }
    lines.extend([
        (
            "Clamp at launch",
            f.clamp_at_launch.map_or("–".into(), clamp),
        ),
        ("Clamp at the top", clamp(f.clamp_at_top)),
        (
            "Launch ratio (capacity / engine)",
            r.launch.as_ref().map_or("–".into(), |l| {
                format!(
                    "{:.2} ({:.0} / {})",
                    l.ratio,
                    l.capacity,
                    t(l.engine_torque)
                )
            }),
        ),
        (
            "Lockup speed",
            u.lockup(&r.lockup_rpm, r.curve.first().map_or(0.0, |p| p.rpm)),
        ),
        (
            "Margin at the top",
            format!("{:.2} × at {:.0} rpm", r.top.ratio, r.top.rpm),
        ),
    ]);
    lines
}

impl TunePage {
    /// Rows of (figure, current, trial or recommended).
    pub fn table(&self) -> Vec<(&'static str, String, String)> {
        let current = self
            .current
            .as_ref()
            .ok()
            .map(|f| figure_lines(&self.page.u, f))
            .unwrap_or_default();
        let other = self
            .recommended
            .as_ref()
            .or(self.trial.as_ref().map(|(_, f)| f))
            .map(|f| figure_lines(&self.page.u, f));
        current
            .into_iter()
            .enumerate()
            .map(|(i, (label, value))| {
                let o = other.as_ref().map_or(String::new(), |o| o[i].1.clone());
                (label, value, o)
            })
            .collect()
    }

    pub fn other_title(&self) -> &'static str {
        if self.recommended.is_some() {
            "Recommended"
        } else if self.trial.is_some() {
            "Trying"
        } else {
            ""
        }
    }

    /// Warnings of the setting shown last (recommended, tried, or current).
    /// The launch warning carries the slip time of the same setting's launch preview.
    pub fn warnings(&self) -> Vec<String> {
        let (title, figures) = match (&self.recommended, &self.trial) {
            (Some(f), _) => ("Recommended", Some(f)),
            (None, Some((_, f))) => ("Trying", Some(f)),
            (None, None) => ("Current setup", self.current.as_ref().ok()),
        };
        let w = figures
            .map(|f| f.report.warnings.clone())
            .unwrap_or_default();
        let slip = self
            .launch
            .iter()
            .find(|c| c.title == title)
            .and_then(|c| c.result.as_ref().ok())
            .map(|s| s.slip.as_str());
        crate::model::launch::beside_launch_warning(w, slip)
    }

    /// The first speed of the car's torque curve (where "at or below" lockups sit).
    pub fn curve_start(&self) -> f64 {
        curve_start(&self.current)
    }

    /// The recommended setting, with the friction the search used.
    pub fn recommended_setting(&self) -> Option<Trial> {
        self.recommendation.as_ref().map(|r| Trial {
            adjuster_turns: r.recommended.adjuster_turns,
            counterweight_g: Grams::from_g(r.recommended.counterweight_g),
            mu: self.recommended_from.mu,
        })
    }

    /// The setting a "save as new setup" button would record.
    pub fn to_save(&self) -> Option<Trial> {
        self.recommended_setting()
            .or(self.trial.as_ref().map(|(t, _)| *t))
    }
}

impl TunePage {
    /// The calibrated μ as the try form takes it (3 decimals), when there is one the setup
    /// form accepts.
    pub fn calibrated_mu_text(&self) -> Option<String> {
        let cal = self.calibration.as_ref().ok()?;
        limits::MU
            .admits(cal.report.mu)
            .then(|| format!("{:.3}", cal.report.mu))
    }

    /// Whether the μ being tried (or recommended from) is the calibrated one.
    pub fn using_calibration(&self) -> bool {
        let Some(text) = self.calibrated_mu_text() else {
            return false;
        };
        let tried = if self.recommendation.is_some() {
            self.recommended_from.mu
        } else if let Some((t, _)) = &self.trial {
            t.mu
        } else {
            self.current_trial.mu
        };
        tried.is_some_and(|mu| format!("{mu:.3}") == text)
    }

    /// The link that tries the current setting with the calibrated μ.
    pub fn use_calibration_href(&self) -> Option<String> {
        let mu = self.calibrated_mu_text()?;
        let t = self.current_trial;
        Some(format!(
            "/builds/{}/tune?try=1&adjuster_turns={}&counterweight_g={}&mu={mu}#try",
            self.dossier.build.id,
            t.adjuster_turns,
            t.counterweight_g.g()
        ))
    }

    /// The link that shows the current setting with the facing's nominal μ (a new disc), when
    /// the figures use another.
    pub fn use_nominal_href(&self) -> Option<String> {
        let t = self.current_trial;
        t.mu.map(|_| {
            format!(
                "/builds/{}/tune?try=1&adjuster_turns={}&counterweight_g={}&mu=#try",
                self.dossier.build.id,
                t.adjuster_turns,
                t.counterweight_g.g()
            )
        })
    }

    /// The note a setup saved from this page carries.
    pub fn save_note(&self) -> String {
        let how = if self.recommendation.is_some() {
            "recommended on the tuning page"
        } else {
            "tried on the tuning page"
        };
        match (&self.calibration, self.using_calibration()) {
            (Ok(c), true) => format!("{how}; μ {}", calibration_source(c)),
            _ => how.to_string(),
        }
    }

    /// The friction read from the whole launch, in one line, when any pass allows it.
    pub fn launch_method_words(&self) -> Option<String> {
        let m = self.by_launch.as_ref()?;
        let u = &self.page.u;
        Some(match m.mean() {
            Some((mu, ci)) => format!(
                "By the whole launch (the launch model run until it locks when the pass did): {} from {}{}. The calibration above takes each of these passes at this method's μ.",
                u.mu(mu),
                u.counted(m.passes.len() as i64, "pass", "passes"),
                ci.map_or(String::new(), |[lo, hi]| format!(
                    ", 95 % interval {lo:.3}–{hi:.3}"
                ))
            ),
            None => "By the whole launch: no pass could be read.".into(),
        })
    }

    /// Passes the two methods read differently, and passes that locked well below their launch
    /// speed with only the torque balance to read them, in words.
    pub fn method_flags(&self) -> Vec<String> {
        let u = &self.page.u;
        let mut out: Vec<String> = self
            .method_flags
            .iter()
            .map(|f| match f {
                MethodFlag::Apart {
                    date,
                    torque_mu,
                    launch_mu,
                    apart_pct,
                } => format!(
                    "Pass of {date}: {} by the torque balance, {} by the whole launch ({apart_pct:.0} % apart). The torque balance takes the engine as steady at the lock, the whole launch does not: look at the log's engine speed at the lock, and at the car's launch record (its estimated inputs are listed under the launch preview).",
                    u.mu(*torque_mu),
                    u.mu(*launch_mu)
                ),
                MethodFlag::FallingLock {
                    date,
                    lockup_rpm,
                    launch_rpm,
                    below_pct,
                } => format!(
                    "Pass of {date} locked at {}, {below_pct:.0} % below its {} launch, and only the torque balance can read it: the engine was still falling at lock, so this pass reads low.",
                    u.rpm(*lockup_rpm),
                    u.rpm(*launch_rpm)
                ),
            })
            .collect();
        if let Some(m) = &self.by_launch {
            out.extend(m.notes.iter().cloned());
        }
        out
    }

    /// The verdict on the calibration in plain words.
    pub fn calibration_verdict(&self) -> Vec<String> {
        self.calibration
            .as_ref()
            .map(calibration_verdict)
            .unwrap_or_default()
    }

    /// Per-pass rows: date, setting, lockup seen, torque carried, μ, residual, predicted.
    pub fn calibration_rows(&self) -> Vec<[String; 7]> {
        let Ok(c) = &self.calibration else {
            return Vec::new();
        };
        let u = &self.page.u;
        c.report
            .passes
            .iter()
            .zip(&c.dates)
            .zip(&c.settings)
            .zip(&c.pass_ids)
            .map(|(((p, date), (turns, cw, _)), id)| {
                let by_launch = c.launch.as_ref().is_some_and(|m| m.of(*id).is_some());
                [
                    date.clone(),
                    format!("{turns} turns, {}", u.grams(*cw)),
                    u.rpm(p.lockup_rpm),
                    u.torque(p.clutch_torque),
                    if by_launch {
                        format!("{:.3} (whole launch)", p.mu)
                    } else {
                        format!("{:.3}", p.mu)
                    },
                    format!(
                        "{:+.1} {}",
                        Kind::Torque.to_shown(self.page.units(), p.residual),
                        u.torque_unit()
                    ),
                    u.opt_rpm(&p.predicted_lockup_rpm),
                ]
            })
            .collect()
    }

    /// Per-pass μ against the pass date, with the calibrated value as a level.
    pub fn calibration_chart(&self) -> Option<Chart> {
        let c = self.calibration.as_ref().ok()?;
        let days: Vec<f64> = c
            .dates
            .iter()
            .map(|d| day_number(d))
            .collect::<Option<_>>()?;
        let first = *days.first()?;
        let points: Vec<(f64, f64)> = days
            .iter()
            .zip(&c.report.passes)
            .map(|(d, p)| (d - first, p.mu))
            .collect();
        let tips: Vec<String> = c
            .dates
            .iter()
            .zip(&c.report.passes)
            .map(|(d, p)| format!("{d}: μ {:.3}", p.mu))
            .collect();
        let lo = points.iter().map(|p| p.1).fold(c.report.mu, f64::min);
        let hi = points.iter().map(|p| p.1).fold(c.report.mu, f64::max);
        let pad = ((hi - lo) * 0.2).max(0.01);
        let last = points.last().map_or(1.0, |p| p.0).max(1.0);
        let (mut chart, f) = Chart::new(
            "Friction of each pass against its date",
            &format!("days since {}", c.dates[0]),
            "μ",
            (0.0, last),
            (lo - pad, hi + pad),
        );
        chart.mark_y(
            &f,
            "calibrated",
            format!("μ {:.3}", c.report.mu),
            c.report.mu,
        );
        chart.line_with_dots(&f, "mu", "per pass", &points, &tips);
        Some(chart)
    }
}

impl TunePage {
    /// The slope of μ against launch temperature in words, in the shop's units: "μ falls 0.012
    /// per 100 °C (95 %: 0.004 to 0.020) from 6 passes spanning 62 °C", or why there is none.
    pub fn heat_words(&self) -> Option<String> {
        let study = self.heat.as_ref()?;
        let units = self.page.units();
        let label = units.temperature_label();
        // A temperature difference of 100 shop degrees, in kelvin.
        let per = units.temperature_to_c(100.0) - units.temperature_to_c(0.0);
        Some(match &study.fit {
            Err(why) => why.clone(),
            Ok(f) => {
                let (a, b) = (f.k_ci95[0] * per, f.k_ci95[1] * per);
                let k = f.k_per_k * per;
                // The change in the direction named: a fall is told as positive numbers.
                let (way, lo, hi) = if k < 0.0 {
                    ("falls", -b, -a)
                } else {
                    ("rises", a, b)
                };
                let sure = if a * b > 0.0 {
                    "the whole interval is on that side"
                } else {
                    "the interval takes in no change at all, so the passes do not show a trend yet"
                };
                format!(
                    "μ {way} {:.3} per 100 {label} of launch temperature (95 %: {lo:.3} to \
                     {hi:.3}; {sure}). μ {:.3} at {:.0} {label}, from {} passes spanning \
                     {:.0} {label}.",
                    k.abs(),
                    f.mu0,
                    units.c_to_temperature(f.theta_ref_c),
                    f.n,
                    f.spread_k / per * 100.0,
                )
            }
        })
    }

    /// μ of each calibrated pass against its launch temperature, with the fitted line.
    pub fn heat_chart(&self) -> Option<Chart> {
        let study = self.heat.as_ref()?;
        let units = self.page.units();
        let shown: Vec<(f64, f64)> = study
            .points
            .iter()
            .map(|&(t, mu)| (units.c_to_temperature(t), mu))
            .collect();
        let fit = study.fit.as_ref().ok()?;
        let x = |i: fn(f64, f64) -> f64| shown.iter().map(|p| p.0).fold(shown[0].0, i);
        let (lo_x, hi_x) = (x(f64::min), x(f64::max));
        let y = |i: fn(f64, f64) -> f64| shown.iter().map(|p| p.1).fold(fit.mu0, i);
        let (lo_y, hi_y) = (y(f64::min), y(f64::max));
        let pad = ((hi_y - lo_y) * 0.2).max(0.01);
        let label = units.temperature_label();
        let (mut chart, f) = Chart::new(
            "Friction of each pass against the facing's temperature at launch",
            &format!("launch temperature, {label}"),
            "μ",
            (lo_x, hi_x),
            (lo_y - pad, hi_y + pad),
        );
        let line: Vec<(f64, f64)> = [lo_x, hi_x]
            .iter()
            .map(|&t| (t, fit.mu_at(units.temperature_to_c(t))))
            .collect();
        chart.line(&f, "calibrated", "fitted", &line);
        let tips: Vec<String> = shown
            .iter()
            .map(|(t, mu)| format!("{t:.0} {label}: μ {mu:.3}"))
            .collect();
        chart.line_with_dots(&f, "mu", "per pass", &shown, &tips);
        Some(chart)
    }
}

/// Days since 1970-01-01 of an ISO date ("2026-10-05").
fn day_number(iso: &str) -> Option<f64> {
    let date: jiff::civil::Date = iso.parse().ok()?;
    let epoch = jiff::civil::date(1970, 1, 1);
    Some(f64::from((date - epoch).get_days()))
}

/// The plain-words verdict: enough data or not; steady or drifting; the interval's width.
pub fn calibration_verdict(c: &BuildCalibration) -> Vec<String> {
    let r = &c.report;
    let mut out = Vec::new();
    if c.enough {
        out.push(format!("Enough data: {} passes with a lockup seen.", r.n));
    } else {
        out.push(format!(
            "Not enough data yet: {} pass{} with a lockup seen; at least {} are needed before this value should steer a setting.",
            r.n,
            if r.n == 1 { "" } else { "es" },
            clutch::calibration::ENOUGH_PASSES
        ));
    }
    match c.drifting {
        Some(true) => out.push(
            "Drifting: the friction changes steadily from pass to pass (a trend at the 95 % level). The facing may be bedding in, glazing or running hotter; the latest passes say more than the average.".into(),
        ),
        Some(false) => out.push("Steady: no trend in the friction from pass to pass.".into()),
        None => {}
    }
    if let Some([lo, hi]) = r.ci95 {
        out.push(format!(
            "With 95 % confidence the clutch's friction lies between {lo:.3} and {hi:.3}."
        ));
    }
    out
}

/// The cooling time constant the launch temperatures use, minutes.
pub fn heat_tau_min() -> f64 {
    clutch::heat::DEFAULT_TAU_S / 60.0
}

/// The tuning targets typed on a form (the tuning page's recommendation, a new setup sheet):
/// the lockup speed within `lockup_limit` and the optional launch ratio, each checked against
/// its limit, in internal units; each form adds its own rule between the two.
pub fn typed_targets(
    form: &FormData,
    lockup_limit: Limit,
    units: clutch::units::Units,
    errors: &mut FieldErrors,
) -> (Option<f64>, Option<f64>) {
    let lockup = field::number(form, "target_lockup", lockup_limit, units, errors);
    let ratio = field::number(form, "target_ratio", limits::LAUNCH_RATIO, units, errors);
    (lockup, ratio)
}
