//! A pass's page (its data log's traces, events and figures) and the upload of a log: the file
//! is sent (its layout read at once, so an unreadable file is refused before anything is kept),
//! held in memory for the mapping step, then read with the columns chosen from its own header
//! names and stored with the pass. Nothing is written to the database before the analysis has
//! succeeded.

use std::collections::HashMap;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use askama::Template;
use axum::extract::{Multipart, Query, State};
use axum::http::StatusCode;
use axum::response::{Html, IntoResponse, Redirect, Response};

use crate::db;
use crate::error::{AppError, AppResult};
use crate::records::FieldErrors;
use crate::records::date::ShopZone;
use crate::records::stored::LogSummary;
use crate::web::AppState;
use crate::web::api::datalogs::{PassCar, file_name, pass_car, save};
use crate::web::http::cache::PageKey;
use crate::web::http::extract::{CurrentUser, PathId, SignedForm, Viewer};
use crate::web::http::heavy::Caller;
use crate::web::pages::chart::{Chart, Size};
use crate::web::pages::layout::Layout;
use clutch::InputError;
use clutch::datalog::file;
use clutch::datalog::request::{LogColumns, LogResult, LogSettings, TimeUnit};
use clutch::datalog::roles::{self, Clash};
use clutch::datalog::span::TimeSpan;
use clutch::quantity::{Kind, limits};

/// Uploads waiting for their mapping, at most this many at once shop-wide.
const STAGED_MAX: usize = 6;
/// Uploads one user may have waiting at once (their own upload for the same pass is replaced);
/// past it, or past the shop's [`STAGED_MAX`], a new upload is refused (429) and no one's
/// waiting upload is dropped for it.
const STAGED_PER_USER: usize = 2;
/// How long an upload waits for its mapping.
const STAGED_FOR: Duration = Duration::from_secs(3600);

/// A file sent but not yet mapped, kept deflated in memory (never in the database).
struct Staged {
    token: String,
    pass_id: i64,
    user_id: i64,
    name: String,
    bytes: usize,
    deflated: Arc<Vec<u8>>,
    at: Instant,
}

/// Uploads waiting for their mapping.
#[derive(Default)]
pub struct Staging(Mutex<Vec<Staged>>);

/// A waiting upload handed out: its name, size and deflated file.
struct StagedFile {
    name: String,
    bytes: usize,
    deflated: Arc<Vec<u8>>,
}

impl Staging {
    /// Keeps `s`, or refuses it (429) when its user or the shop has no room.
    fn put(&self, s: Staged) -> Result<(), AppError> {
        let mut all = self.0.lock().unwrap_or_else(|e| e.into_inner());
        all.retain(|x| {
            x.at.elapsed() < STAGED_FOR && !(x.pass_id == s.pass_id && x.user_id == s.user_id)
        });
        if all.iter().filter(|x| x.user_id == s.user_id).count() >= STAGED_PER_USER {
            return Err(AppError::Busy(
                "you have 2 uploads waiting for their columns already: finish or send one again first",
            ));
        }
        if all.len() >= STAGED_MAX {
            return Err(AppError::Busy(
                "the shop has 6 uploads waiting for their columns; try again when one is done",
            ));
        }
        all.push(s);
        Ok(())
    }

    /// An upload for this pass and user.
    fn get(&self, token: &str, pass_id: i64, user_id: i64) -> Option<StagedFile> {
        let all = self.0.lock().unwrap_or_else(|e| e.into_inner());
        let s = all.iter().find(|s| {
            s.token == token
                && s.pass_id == pass_id
                && s.user_id == user_id
                && s.at.elapsed() < STAGED_FOR
        })?;
        Some(StagedFile {
            name: s.name.clone(),
            bytes: s.bytes,
            deflated: Arc::clone(&s.deflated),
        })
    }

    fn drop_token(&self, token: &str) {
        let mut all = self.0.lock().unwrap_or_else(|e| e.into_inner());
        all.retain(|s| s.token != token);
    }
}

/// Stored logs' analyses kept at most (each thinned to [`VIEW_POINTS`]: a few tens of KB).
const VIEWS_MAX: usize = 512;
/// Samples a kept analysis holds for its charts (the charts draw no more than that).
const VIEW_POINTS: usize = 900;

/// The last analysis of each stored log, cut to the stretch its charts show and thinned for its
/// page, found by the pass and the stretch, and what picks the analysis (the stored file's
/// stamp, its settings and the car's data): a pass's page is analysed again only when its file
/// or its car changed, not after every commit.
#[derive(Default)]
pub struct Views(Mutex<HashMap<(i64, Stretch), (String, LogView)>>);

/// Which stretch of a log a pass's charts show: from a second before the launch to a second
/// after the lockup (what the page opens on), or the whole file (`?window=all`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Stretch {
    Launch,
    Whole,
}

impl Stretch {
    /// `all` is the whole file; anything else (nothing, a typo) the launch.
    fn from_query(q: &str) -> Self {
        if q.trim() == "all" {
            Self::Whole
        } else {
            Self::Launch
        }
    }

    /// The stretch of `r` (the full analysis) this names.
    fn span(self, r: &LogResult) -> TimeSpan {
        match self {
            Self::Launch => r.launch_span(),
            Self::Whole => r.whole_span(),
        }
    }
}

/// A stored log's analysis thinned for its page, or why its file does not read.
type LogView = Arc<Result<LogResult, InputError>>;

impl Views {
    fn get(&self, at: (i64, Stretch), key: &str) -> Option<LogView> {
        let all = self.0.lock().unwrap_or_else(|e| e.into_inner());
        all.get(&at)
            .filter(|(k, _)| k == key)
            .map(|(_, v)| Arc::clone(v))
    }

    fn keep(&self, at: (i64, Stretch), key: String, view: LogView) {
        let mut all = self.0.lock().unwrap_or_else(|e| e.into_inner());
        if all.len() >= VIEWS_MAX && !all.contains_key(&at) {
            let any = all.keys().next().copied();
            if let Some(k) = any {
                all.remove(&k);
            }
        }
        all.insert(at, (key, view));
    }
}

/// A stored log's analysis cut to `stretch` and thinned: the kept one, else the file read,
/// analysed and kept. `Ok(None)` without a stored log; the inner error says why the file does
/// not read.
async fn stored_view(
    state: &AppState,
    caller: &Caller,
    pc: &PassCar,
    pass_id: i64,
    stretch: Stretch,
) -> AppResult<Option<LogView>> {
    let mut conn = state.pool.acquire().await?;
    let Some(stamp) = db::pass_logs::stamp(&mut conn, pass_id).await? else {
        return Ok(None);
    };
    let Some(raw) = db::pass_logs::file(&mut conn, pass_id).await? else {
        return Ok(None);
    };
    drop(conn);
    // The settings travel with the file: read them without inflating it.
    let settings: Result<LogSettings, _> = serde_json::from_str(&raw.settings);
    let key = match &settings {
        Ok(s) => format!("{stamp} {}", pc.analysis_key(s)),
        Err(_) => stamp,
    };
    if let Some(v) = state.log_views.get((pass_id, stretch), &key) {
        return Ok(Some(v));
    }
    let view = match crate::web::api::datalogs::open(state, raw).await? {
        Err(why) => Err(InputError::new("csv", why)),
        Ok(file) => pc
            .analyse(state, caller, &file.settings, Arc::new(file.text))
            .await?
            .map(|r| match stretch {
                Stretch::Whole => r.thinned(VIEW_POINTS),
                Stretch::Launch => r.cut(r.launch_span()).thinned(VIEW_POINTS),
            }),
    };
    let view = Arc::new(view);
    state
        .log_views
        .keep((pass_id, stretch), key, Arc::clone(&view));
    Ok(Some(view))
}

/// One trace chart and what it shows.
pub struct TraceChart {
    pub chart: Chart,
    /// Drawn across the whole row (the two passes compared), not one of two side by side.
    pub full_row: bool,
}

#[derive(Template)]
#[template(path = "passes/show.html")]
pub struct PassPage {
    pub page: Layout,
    /// Other passes of the build with a log: (id, label), for the comparison.
    pub others: Vec<(i64, String)>,
    pub compare: Option<i64>,
    pub pc: PassCar,
    pub build_label: String,
    pub log: Option<LogSummary>,
    /// Charts of the stored log (speeds, slip, slip power).
    pub charts: Vec<TraceChart>,
    /// What stretch of the file the charts show, in words ("1.32–3.90 s: ...").
    pub shown: String,
    /// The link to the other stretch: (address, words), when it shows something else.
    pub other_stretch: Option<(String, &'static str)>,
    /// The whole file was asked for (`?window=all`; the comparison form keeps it).
    pub whole_file: bool,
    /// The analysis of the stored file, when it reads.
    pub figures: Vec<(&'static str, String)>,
    pub notes: Vec<String>,
    /// The friction value this pass contributes to the calibration, in words.
    pub calibration: Option<String>,
    /// Why the stored file does not read any more (the method changed), if so.
    pub problem: Option<String>,
    pub upload_error: Option<String>,
}

impl PassPage {
    /// Whether pass `id` is the one drawn beside this one.
    pub fn is_compared(&self, id: &i64) -> bool {
        self.compare == Some(*id)
    }
}

/// Every other sample at most `n` points (the charts need no more than the pixels they have).
fn thin(n: usize, len: usize) -> usize {
    len.div_ceil(n).max(1)
}

/// The stretch `span` of a view (cut to it) in words, for the page and the captions: "1.32–4.65
/// s: from 1 s before the launch to 1 s after the lockup", "...: from 1 s before the launch to
/// the file's end", "0.00–3.90 s: the whole file".
fn span_words(span: TimeSpan, view: &LogResult) -> String {
    use clutch::datalog::span::EDGE_S;
    let range = format!("{:.2}–{:.2} s", span.from_s, span.to_s);
    let from = match view.reaches_ends(span) {
        (true, true) => return format!("{range}: the whole file"),
        (false, _) => format!("{EDGE_S:.0} s before the launch"),
        (true, _) => "the file's start".into(),
    };
    let to = match view.reaches_ends(span).1 {
        false => format!("{EDGE_S:.0} s after the lockup"),
        true => "the file's end".into(),
    };
    format!("{range}: from {from} to {to}")
}

/// The speed, slip and slip-power charts of one pass over `span` of its file.
fn charts(r: &LogResult, span: TimeSpan, shown_torque: bool) -> Vec<TraceChart> {
    let s = &r.series;
    let a = &r.analysis;
    let step = thin(VIEW_POINTS, s.time_s.len());
    let idx: Vec<usize> = (0..s.time_s.len()).step_by(step).collect();
    let x = (span.from_s, span.to_s);
    let x_title = "time from the file's start, s";
    let words = span_words(span, r);
    let mark = |c: &mut Chart, f: &crate::web::pages::chart::Frame| {
        c.mark_x(
            f,
            "launch",
            format!("launch {:.3} s", a.launch_s),
            a.launch_s,
        );
        c.mark_x(
            f,
            "lockup",
            format!("lockup {:.3} s", a.lockup_s),
            a.lockup_s,
        );
        for [x, y] in &a.tire_spin {
            c.mark_x(f, "spin", format!("tire spin {x:.2}–{y:.2} s"), *x);
        }
    };
    let chart = |title: &str, y_title: &str, y: (f64, f64)| {
        Chart::over(
            Size::Compact,
            &format!("{title} over {words}"),
            x_title,
            y_title,
            x,
            y,
        )
    };
    let mut out = Vec::new();
    let top = s
        .engine_rpm
        .iter()
        .chain(&s.input_rpm)
        .copied()
        .fold(0.0, f64::max);
    let (mut c, f) = chart("Engine and input shaft speed", "rpm", (0.0, top * 1.05));
    let pts = |v: &[f64]| -> Vec<(f64, f64)> { idx.iter().map(|&i| (s.time_s[i], v[i])).collect() };
    c.line(&f, "engine", "engine", &pts(&s.engine_rpm));
    c.line(&f, "input", "input", &pts(&s.input_rpm));
    // Locked, both lines end together: keep their labels apart.
    c.spread_labels();
    mark(&mut c, &f);
    out.push(TraceChart {
        chart: c,
        full_row: false,
    });
    let slip: Vec<f64> = a.slip_pct.iter().map(|v| v.clamp(-5.0, 100.0)).collect();
    let (mut c, f) = chart("Clutch slip", "slip, %", (-5.0, 100.0));
    c.line(&f, "slip", "slip", &pts(&slip));
    mark(&mut c, &f);
    out.push(TraceChart {
        chart: c,
        full_row: false,
    });
    if let (Some(p), true) = (&a.slip_power_w, shown_torque) {
        let kw: Vec<f64> = p.iter().map(|w| w / 1000.0).collect();
        let peak = kw.iter().copied().fold(1.0, f64::max);
        let (mut c, f) = chart("Slip power", "kW", (0.0, peak * 1.05));
        c.line(&f, "power", "slip power", &pts(&kw));
        mark(&mut c, &f);
        out.push(TraceChart {
            chart: c,
            full_row: false,
        });
    }
    out
}

/// GET /passes/{id}: through the page cache, so the stored log is analysed again only after
/// a commit (or a new day), not on every view.
pub async fn show(
    State(state): State<AppState>,
    user: CurrentUser,
    caller: Caller,
    PathId(id): PathId,
    Query(q): Query<PassQuery>,
) -> AppResult<Response> {
    let compare = q.compare.trim().parse::<i64>().ok().filter(|&c| c != id);
    let stretch = Stretch::from_query(&q.window);
    let key = PageKey::Pass(id, compare, stretch == Stretch::Whole);
    let (state_ref, caller) = (&state, &caller);
    let render = |stand_in: Viewer| async move {
        let asked = Asked { compare, stretch };
        render_with(state_ref, caller, &stand_in, id, None, asked).await
    };
    Ok(Html(state.cache.page(key, &user, render).await?).into_response())
}

/// `?compare=<pass id>`: another logged pass of the same build drawn over this one;
/// `?window=all`: the whole file instead of the launch.
#[derive(Debug, Default, serde::Deserialize)]
#[serde(default)]
pub struct PassQuery {
    compare: String,
    window: String,
}

/// What a pass's page was asked to draw: the other pass, and the stretch of the files.
#[derive(Debug, Clone, Copy)]
struct Asked {
    compare: Option<i64>,
    stretch: Stretch,
}

impl Asked {
    /// The page's address with the other stretch (the comparison kept), and its link's words.
    fn other_stretch(&self, id: i64) -> (String, &'static str) {
        let compare = self.compare.map(|c| format!("compare={c}"));
        let (window, words) = match self.stretch {
            Stretch::Launch => (Some("window=all".to_string()), "Show the whole file"),
            Stretch::Whole => (None, "Back to the launch"),
        };
        let query: Vec<String> = compare.into_iter().chain(window).collect();
        let address = if query.is_empty() {
            format!("/passes/{id}")
        } else {
            format!("/passes/{id}?{}", query.join("&"))
        };
        (address, words)
    }
}

async fn render(
    state: &AppState,
    caller: &Caller,
    user: &CurrentUser,
    id: i64,
    upload_error: Option<String>,
    status: StatusCode,
) -> AppResult<Response> {
    let asked = Asked {
        compare: None,
        stretch: Stretch::Launch,
    };
    let (html, _) = render_with(state, caller, &user.viewer(), id, upload_error, asked).await?;
    Ok((status, Html(html)).into_response())
}

/// Engine and input speed of two passes against time from each one's launch, over the stretch
/// each view was cut to, the labels in a legend below the plot (so none lies across the other
/// pass's trace).
fn compare_chart(this: (&str, &LogResult), other: (&str, &LogResult), stretch: Stretch) -> Chart {
    let shifted = |r: &LogResult, v: &[f64]| -> Vec<(f64, f64)> {
        let s = &r.series;
        let step = thin(VIEW_POINTS, s.time_s.len());
        (0..s.time_s.len())
            .step_by(step)
            .map(|i| (s.time_s[i] - r.analysis.launch_s, v[i]))
            .collect()
    };
    let from_launch = |r: &LogResult| {
        let span = stretch.span(r);
        (
            span.from_s - r.analysis.launch_s,
            span.to_s - r.analysis.launch_s,
        )
    };
    let (a0, a1) = from_launch(this.1);
    let (b0, b1) = from_launch(other.1);
    let x = (a0.min(b0), a1.max(b1));
    let top = [this.1, other.1]
        .iter()
        .flat_map(|r| r.series.engine_rpm.iter().chain(&r.series.input_rpm))
        .copied()
        .fold(0.0, f64::max);
    let words = match stretch {
        Stretch::Launch => "each launch to its lockup with up to 1 s either side",
        Stretch::Whole => "the whole files",
    };
    let (mut c, f) = Chart::over(
        Size::Wide,
        &format!(
            "Two passes, time from each launch: {words}, {:.2} to {:.2} s",
            x.0, x.1
        ),
        "time from launch, s",
        "rpm",
        x,
        (0.0, top * 1.05),
    );
    let (a, b) = (this.1, other.1);
    for (class, name, r, rpm) in [
        (
            "engine",
            format!("engine {}", this.0),
            a,
            &a.series.engine_rpm,
        ),
        ("input", format!("input {}", this.0), a, &a.series.input_rpm),
        (
            "before",
            format!("engine {}", other.0),
            b,
            &b.series.engine_rpm,
        ),
        (
            "static",
            format!("input {}", other.0),
            b,
            &b.series.input_rpm,
        ),
    ] {
        c.line(&f, class, &name, &shifted(r, rpm));
    }
    for (class, name, r) in [("lockup", this.0, a), ("other", other.0, b)] {
        let at = r.analysis.lockup_s - r.analysis.launch_s;
        c.mark_x(&f, class, format!("lockup {name}"), at);
    }
    c.legend_below();
    c
}

async fn render_with(
    state: &AppState,
    caller: &Caller,
    user: &Viewer,
    id: i64,
    upload_error: Option<String>,
    asked: Asked,
) -> AppResult<(String, ShopZone)> {
    let Asked { compare, stretch } = asked;
    let mut conn = state.pool.acquire().await?;
    let pc = pass_car(&mut conn, id).await?.ok_or(AppError::NotFound)?;
    let (page, settings) = Layout::load(
        &mut conn,
        user,
        "customers",
        format!("Pass on {}", pc.pass.data.run_on),
    )
    .await?;
    let build = db::builds::by_id(&mut conn, pc.pass.build_id)
        .await?
        .ok_or(AppError::NotFound)?;
    let build_label = crate::web::pages::builds::show::build_title(&build);
    let log = db::pass_logs::summary(&mut conn, id).await?;
    let passes = db::passes::TABLE
        .page(
            &mut conn,
            pc.pass.build_id,
            0,
            db::dossier::PASSES_LOADED as i64,
        )
        .await?;
    let logged = db::pass_logs::for_build(&mut conn, pc.pass.build_id).await?;
    let others: Vec<(i64, String)> = passes
        .iter()
        .filter(|p| p.id != id)
        .filter_map(|p| {
            let l = logged.iter().find(|l| l.pass_id == p.id)?;
            Some((
                p.id,
                format!(
                    "{} · lockup {:.3} s after launch",
                    p.data.run_on,
                    l.lockup_after_launch_s()
                ),
            ))
        })
        .collect();
    let compare = compare.filter(|c| others.iter().any(|o| o.0 == *c));
    let compare_day = compare.and_then(|c| {
        passes
            .iter()
            .find(|p| p.id == c)
            .map(|p| p.data.run_on.clone())
    });
    let calibration = match &log {
        Some(l) => {
            let dossier = state.reader.dossier(pc.pass.build_id).await?;
            dossier.and_then(|d| {
                crate::model::calibration::log_value(&d, &settings, &pc.pass, l)
                    .map(|(mu, tc)| {
                        format!(
                            "μ {mu:.3} (median of clutch torque over capacity at μ = 1 from launch + 50 ms to lockup − 50 ms), fed to the calibration as {} carried at {}",
                            page.u.torque(tc),
                            page.u.rpm(pc.pass.data.observed_lockup_rpm.unwrap_or(l.lockup_engine_rpm))
                        )
                    })
            })
        }
        None => None,
    };
    drop(conn);
    let (mut charts_v, mut figures, mut notes, mut problem) =
        (Vec::new(), Vec::new(), Vec::new(), None);
    let (mut shown, mut other_stretch) = (String::new(), None);
    let stored = match log {
        Some(_) => stored_view(state, caller, &pc, id, stretch).await?,
        None => None,
    };
    if let Some(view) = stored {
        match view.as_ref() {
            Ok(r) => {
                let a = &r.analysis;
                let u = &page.u;
                figures.push((
                    "Samples",
                    format!(
                        "{} at {:.0} Hz (time read in {})",
                        a.samples,
                        a.sample_rate_hz,
                        if r.ms { "ms" } else { "s" }
                    ),
                ));
                figures.push((
                    "Launch",
                    format!("{:.3} s, engine {}", a.launch_s, u.rpm(a.launch_engine_rpm)),
                ));
                figures.push((
                    "Lockup",
                    format!(
                        "{:.3} s ({:.3} s after launch), engine {}",
                        a.lockup_s,
                        a.lockup_s - a.launch_s,
                        u.rpm(a.lockup_engine_rpm)
                    ),
                ));
                figures.push(("Lowest engine speed", u.rpm(a.min_engine_rpm)));
                figures.push((
                    "Slip energy",
                    a.slip_energy_j
                        .map_or("– (no engine inertia)".into(), |e| u.energy_j(e)),
                ));
                figures.push((
                    "Peak slip power",
                    a.peak_slip_power_w.map_or("–".into(), |p| u.power_w(p)),
                ));
                figures.push((
                    "Tire spin",
                    if a.tire_spin.is_empty() {
                        "none found".into()
                    } else {
                        a.tire_spin
                            .iter()
                            .map(|[x, y]| format!("{x:.2}–{y:.2} s"))
                            .collect::<Vec<_>>()
                            .join(", ")
                    },
                ));
                notes = a.notes.clone();
                let span = stretch.span(r);
                shown = span_words(span, r);
                // A launch stretch that is the whole file anyway needs no second link.
                if stretch == Stretch::Whole || r.reaches_ends(span) != (true, true) {
                    other_stretch = Some(asked.other_stretch(id));
                }
                charts_v = charts(r, span, true);
                let other = match compare {
                    Some(c) => compare_view(state, caller, c, stretch).await?,
                    None => None,
                };
                if let (Some(other), Some(day)) = (&other, &compare_day)
                    && let Ok(other) = other.as_ref()
                {
                    let this_day = pc.pass.data.run_on.clone();
                    charts_v.insert(
                        0,
                        TraceChart {
                            chart: compare_chart((&this_day, r), (day, other), stretch),
                            full_row: true,
                        },
                    );
                }
            }
            Err(e) => problem = Some(format!("{}: {}", e.field, e.message)),
        }
    }
    let page = PassPage {
        page,
        others,
        compare,
        pc,
        build_label,
        log,
        charts: charts_v,
        shown,
        other_stretch,
        whole_file: stretch == Stretch::Whole,
        figures,
        notes,
        calibration,
        problem,
        upload_error,
    };
    let zone = page.page.zone.clone();
    Ok((page.render()?, zone))
}

/// The analysis of another pass's stored log (its car's data) over the same kind of stretch,
/// for the comparison chart.
async fn compare_view(
    state: &AppState,
    caller: &Caller,
    id: i64,
    stretch: Stretch,
) -> AppResult<Option<LogView>> {
    let mut conn = state.pool.acquire().await?;
    let Some(pc) = pass_car(&mut conn, id).await? else {
        return Ok(None);
    };
    drop(conn);
    stored_view(state, caller, &pc, id, stretch).await
}

/// POST /passes/{id}/log: the file (multipart, with the CSRF token), its layout read at once;
/// on to the mapping.
pub async fn upload(
    State(state): State<AppState>,
    user: CurrentUser,
    caller: Caller,
    PathId(id): PathId,
    multipart: Result<Multipart, axum::extract::multipart::MultipartRejection>,
) -> AppResult<Response> {
    // Until the form's token has been read and matched, a body that is not our upload form is
    // a form that did not come from Lockpoint.
    let Ok(mut multipart) = multipart else {
        return Err(AppError::BadCsrf);
    };
    let (mut csrf, mut name, mut text) = (String::new(), String::new(), None::<Vec<u8>>);
    let unread = |csrf: &str| {
        if crate::auth::same_secret(csrf, &user.csrf) {
            AppError::BadRequest
        } else {
            AppError::BadCsrf
        }
    };
    let refuse_too_large = || {
        let status = StatusCode::PAYLOAD_TOO_LARGE;
        render(&state, &caller, &user, id, Some(too_large()), status)
    };
    loop {
        let field = match multipart.next_field().await {
            Ok(Some(f)) => f,
            Ok(None) => break,
            Err(e) if e.status() == StatusCode::PAYLOAD_TOO_LARGE => {
                return refuse_too_large().await;
            }
            Err(_) => return Err(unread(&csrf)),
        };
        match field.name() {
            Some("_csrf") => csrf = field.text().await.map_err(|_| AppError::BadCsrf)?,
            Some("file") => {
                name = file_name(field.file_name().unwrap_or(""));
                match field.bytes().await {
                    Ok(b) => text = Some(b.to_vec()),
                    Err(e) if e.status() == StatusCode::PAYLOAD_TOO_LARGE => {
                        return refuse_too_large().await;
                    }
                    Err(_) => return Err(unread(&csrf)),
                }
            }
            _ => {}
        }
    }
    if !crate::auth::same_secret(&csrf, &user.csrf) {
        return Err(AppError::BadCsrf);
    }
    {
        let mut conn = state.pool.acquire().await?;
        pass_car(&mut conn, id).await?.ok_or(AppError::NotFound)?;
    }
    let text = text.unwrap_or_default();
    let bytes = text.len();
    let read = if text.is_empty() {
        Err("Choose a CSV file to upload.".to_string())
    } else if text.len() > limits::LOG_FILE_BYTES {
        Err(too_large())
    } else {
        // The layout read and the file deflated off the async threads, in the caller's turn.
        state
            .heavy
            .run_for(&caller, move || {
                file::layout_for_mapping(&text).map(|_| db::pass_logs::deflate(&text))
            })
            .await?
            .map_err(|e| {
                format!(
                    "This file cannot be read as a data log: {}. Nothing was saved.",
                    e.message
                )
            })
    };
    let deflated = match read {
        Ok(d) => d,
        Err(m) => {
            let status = StatusCode::UNPROCESSABLE_ENTITY;
            return render(&state, &caller, &user, id, Some(m), status).await;
        }
    };
    let token = crate::auth::new_secret("up");
    state.staged_logs.put(Staged {
        token: token.clone(),
        pass_id: id,
        user_id: user.id,
        name,
        bytes,
        deflated: Arc::new(deflated),
        at: Instant::now(),
    })?;
    Ok(Redirect::to(&format!("/passes/{id}/log/map?upload={token}")).into_response())
}

/// What a form of a staged upload that is no longer kept says.
fn expired() -> Option<String> {
    Some("That upload has expired: send the file again.".into())
}

fn too_large() -> String {
    format!(
        "The file is larger than {} MB. Nothing was saved.",
        limits::LOG_FILE_BYTES / 1048576
    )
}

#[derive(Debug, Default, serde::Deserialize)]
#[serde(default)]
pub struct UploadQuery {
    upload: String,
}

/// Data rows of the file shown beside the mapping choice.
const PREVIEW_ROWS: usize = 5;

/// One mapping choice on the form.
pub struct Choice {
    pub name: &'static str,
    pub label: &'static str,
    pub required: bool,
    pub selected: String,
}

#[derive(Template)]
#[template(path = "passes/map.html")]
pub struct MapPage {
    pub page: Layout,
    pub pass_id: i64,
    pub pass_day: String,
    pub token: String,
    pub file_name: String,
    pub file_kb: String,
    pub layout_words: String,
    pub names: Vec<String>,
    /// The first data rows of the file, cell by cell, shown beside the choice.
    pub preview: Vec<Vec<String>>,
    pub choices: Vec<Choice>,
    pub time_unit: String,
    pub slip_on: String,
    pub hold_ms: String,
    pub inertia: String,
    pub inertia_unit: &'static str,
    pub wheel_unit: &'static str,
    pub errors: FieldErrors,
}

const ROLES: &[(&str, &str, bool)] = &[
    ("time", "Time", true),
    ("engine_rpm", "Engine speed (rpm)", true),
    ("input_rpm", "Input shaft speed (rpm)", false),
    (
        "driveshaft_rpm",
        "Driveshaft speed (rpm, × first gear)",
        false,
    ),
    ("driven_wheel_speed", "Driven wheel speed", false),
    ("undriven_wheel_speed", "Undriven wheel speed", false),
    ("throttle", "Throttle", false),
    ("clutch_switch", "Clutch switch", false),
];

/// The mapping form's words for a role (`LogColumns` key); the key itself when unknown.
pub fn role_label(key: &str) -> &str {
    ROLES.iter().find(|r| r.0 == key).map_or(key, |r| r.1)
}

fn column_of<'a>(c: &'a LogColumns, key: &str) -> Option<&'a str> {
    match key {
        "time" => Some(&c.time),
        "engine_rpm" => Some(&c.engine_rpm),
        "input_rpm" => c.input_rpm.as_deref(),
        "driveshaft_rpm" => c.driveshaft_rpm.as_deref(),
        "driven_wheel_speed" => c.driven_wheel_speed.as_deref(),
        "undriven_wheel_speed" => c.undriven_wheel_speed.as_deref(),
        "throttle" => c.throttle.as_deref(),
        "clutch_switch" => c.clutch_switch.as_deref(),
        _ => None,
    }
}

impl MapPage {
    fn new(
        page: Layout,
        pc: &PassCar,
        token: String,
        staged: &StagedFile,
        (layout, preview): (file::Layout, Vec<Vec<String>>),
        settings: &LogSettings,
        errors: FieldErrors,
    ) -> Self {
        let delimiter = match layout.delimiter {
            b'\t' => "tabs",
            b';' => "semicolons",
            _ => "commas",
        };
        let layout_words = format!(
            "{} columns separated by {delimiter}{}; header on line {}{}, data from line {}",
            layout.names.len(),
            if layout.decimal_comma {
                " (decimal comma accepted)"
            } else {
                ""
            },
            layout.header_line,
            layout
                .units_line
                .map_or(String::new(), |l| format!(", units line {l} skipped")),
            layout.first_data_line
        );
        // The choice made for this car before, where the file has that column; else a header
        // name that plainly says what it is.
        let mut guessed = roles::guess(&layout.names);
        let in_file = |name: &str| file::find(&layout.names, name);
        if roles::DRIVEN_SIDE
            .iter()
            .any(|&k| column_of(&settings.columns, k).and_then(in_file).is_some())
        {
            // The car's remembered source of the driven side stands; no second one is guessed.
            (
                guessed.input_rpm,
                guessed.driveshaft_rpm,
                guessed.driven_wheel_speed,
            ) = (None, None, None);
        }
        let choices = ROLES
            .iter()
            .map(|&(key, label, required)| {
                let selected = column_of(&settings.columns, key)
                    .and_then(in_file)
                    .or_else(|| column_of(&guessed, key).and_then(in_file))
                    .map(|i| layout.names[i].clone())
                    .unwrap_or_default();
                Choice {
                    name: key,
                    label,
                    required,
                    selected,
                }
            })
            .collect();
        let u = page.units();
        Self {
            pass_id: pc.pass.id,
            pass_day: pc.pass.data.run_on.clone(),
            token,
            file_name: staged.name.clone(),
            file_kb: format!("{:.0} KB", staged.bytes as f64 / 1024.0),
            layout_words,
            names: layout.names,
            preview,
            choices,
            time_unit: settings.time_unit.key().into(),
            slip_on: format!("{}", settings.slip_on_pct),
            hold_ms: format!("{}", settings.hold_ms),
            inertia: settings
                .engine_inertia_kgm2
                .map_or(String::new(), |i| Kind::Inertia.number(u, i)),
            inertia_unit: Kind::Inertia.symbol(u),
            wheel_unit: Kind::RoadSpeed.symbol(u),
            errors,
            page,
        }
    }
}

/// A waiting upload inflated and its layout read (off the async threads, in the caller's turn).
async fn open_staged(
    state: &AppState,
    caller: &Caller,
    staged: &StagedFile,
) -> AppResult<(Vec<u8>, (file::Layout, Vec<Vec<String>>))> {
    let deflated = Arc::clone(&staged.deflated);
    state
        .heavy
        .run_for(caller, move || {
            let text = db::pass_logs::inflate(&deflated, limits::LOG_FILE_BYTES)?;
            let layout = file::layout_for_mapping(&text).map_err(|e| e.message)?;
            let preview = file::preview(&text, PREVIEW_ROWS).map_err(|e| e.message)?;
            Ok::<_, String>((text, (layout, preview)))
        })
        .await?
        .map_err(AppError::Internal)
}

/// GET /passes/{id}/log/map?upload=...: the mapping form for a file just sent.
pub async fn map_form(
    State(state): State<AppState>,
    user: CurrentUser,
    caller: Caller,
    PathId(id): PathId,
    Query(q): Query<UploadQuery>,
) -> AppResult<Response> {
    let Some(staged) = state.staged_logs.get(&q.upload, id, user.id) else {
        return render(&state, &caller, &user, id, expired(), StatusCode::NOT_FOUND).await;
    };
    let mut conn = state.pool.acquire().await?;
    let pc = pass_car(&mut conn, id).await?.ok_or(AppError::NotFound)?;
    let settings = pc.remembered(&mut conn).await?;
    let (page, _) = Layout::load(&mut conn, &user, "customers", "Map the log's columns").await?;
    drop(conn);
    let (_, layout) = open_staged(&state, &caller, &staged).await?;
    let map = MapPage::new(
        page,
        &pc,
        q.upload,
        &staged,
        layout,
        &settings,
        FieldErrors::default(),
    );
    Ok(Html(map.render()?).into_response())
}

/// The form's name for an analysis error's field.
fn form_name(field: &str) -> &str {
    match field {
        "engine.inertia" | "engine_inertia_kgm2" => "inertia",
        f => f.strip_prefix("columns.").unwrap_or(f),
    }
}

/// POST /passes/{id}/log/map: read the file with the chosen columns; store it with the pass,
/// or show the form again with the message beside the choice it is about.
pub async fn map_save(
    State(state): State<AppState>,
    caller: Caller,
    PathId(id): PathId,
    signed: SignedForm,
) -> AppResult<Response> {
    let SignedForm { user, form } = signed;
    let token = form.get("upload").to_string();
    let Some(staged) = state.staged_logs.get(&token, id, user.id) else {
        return render(
            &state,
            &caller,
            &user,
            id,
            expired(),
            StatusCode::UNPROCESSABLE_ENTITY,
        )
        .await;
    };
    let mut conn = state.pool.acquire().await?;
    let pc = pass_car(&mut conn, id).await?.ok_or(AppError::NotFound)?;
    let (page, _) = Layout::load(&mut conn, &user, "customers", "Map the log's columns").await?;
    drop(conn);
    let u = page.units();
    let pick = |k: &str| Some(form.get(k).trim().to_string()).filter(|s| !s.is_empty());
    let mut errors = FieldErrors::default();
    let number = |k: &str, errors: &mut FieldErrors| -> Option<f64> {
        let t = form.get(k).trim();
        if t.is_empty() {
            return None;
        }
        match t.parse::<f64>() {
            Ok(v) if v.is_finite() => Some(v),
            _ => {
                errors.add(k, "enter a number");
                None
            }
        }
    };
    let slip_on = number("slip_on_pct", &mut errors);
    let hold = number("hold_ms", &mut errors);
    let inertia = number("inertia", &mut errors).map(|v| Kind::Inertia.from_shown(u, v));
    if let Some(i) = inertia
        && let Err(e) = limits::ENGINE_INERTIA.check("inertia", i, u)
    {
        errors.add("inertia", e.message);
    }
    let defaults = LogSettings::default();
    let settings = LogSettings {
        columns: LogColumns {
            time: pick("time").unwrap_or_default(),
            engine_rpm: pick("engine_rpm").unwrap_or_default(),
            input_rpm: pick("input_rpm"),
            driveshaft_rpm: pick("driveshaft_rpm"),
            driven_wheel_speed: pick("driven_wheel_speed"),
            undriven_wheel_speed: pick("undriven_wheel_speed"),
            throttle: pick("throttle"),
            clutch_switch: pick("clutch_switch"),
        },
        time_unit: TimeUnit::from_key(form.get("time_unit")).unwrap_or_default(),
        slip_on_pct: slip_on.unwrap_or(defaults.slip_on_pct),
        hold_ms: hold.unwrap_or(defaults.hold_ms),
        engine_inertia_kgm2: inertia,
    };
    let (text, layout) = open_staged(&state, &caller, &staged).await?;
    for clash in roles::clashes(&settings.columns, &layout.0.names) {
        match clash {
            Clash::SameColumn { role, other } => errors.add(
                role,
                format!(
                    "is the column already chosen for {}: pick another, or leave it blank",
                    role_label(other).to_lowercase()
                ),
            ),
            Clash::TimeColumn { role } => errors.add(
                role,
                "is the file's time column: pick the column this channel was logged in",
            ),
        }
    }
    // Every choice that names nothing in the file, all at once, in the form's words.
    for &(key, _, required) in ROLES {
        match column_of(&settings.columns, key).filter(|n| !n.is_empty()) {
            None if required => errors.add(key, "choose the file's column for this"),
            Some(name) if file::find(&layout.0.names, name).is_none() => errors.add(
                key,
                format!(
                    "the file has no column “{}”: pick one from the list",
                    file::echo(name)
                ),
            ),
            _ => {}
        }
    }
    let sources = roles::DRIVEN_SIDE
        .iter()
        .filter(|&&k| column_of(&settings.columns, k).is_some_and(|n| !n.is_empty()))
        .count();
    if sources != 1 {
        errors.add(
            "input_rpm",
            "give exactly one of input shaft speed, driveshaft speed or driven wheel speed",
        );
    }
    let text = Arc::new(text);
    if errors.is_empty() {
        match pc.analyse(&state, &caller, &settings, text).await? {
            Ok(result) => {
                let mut tx = state.write(&user).await?;
                if db::passes::by_id(&mut tx, id).await?.is_none() {
                    return Err(AppError::NotFound);
                }
                let (name, deflated) = (&staged.name, &staged.deflated);
                save(
                    &mut tx,
                    &pc,
                    &user,
                    name,
                    staged.bytes,
                    deflated,
                    &settings,
                    &result,
                )
                .await?;
                tx.commit().await?;
                state.staged_logs.drop_token(&token);
                return Ok(Redirect::to(&format!("/passes/{id}")).into_response());
            }
            Err(e) => {
                let at = form_name(&e.field);
                let known = ROLES.iter().any(|r| r.0 == at)
                    || ["slip_on_pct", "hold_ms", "inertia"].contains(&at);
                let msg = if known {
                    e.message
                } else {
                    format!("{} (from the car: {})", e.message, e.field)
                };
                errors.add(
                    if known { at } else { "csv" },
                    format!("{msg}. Nothing was saved."),
                );
            }
        }
    }
    let map = MapPage::new(page, &pc, token, &staged, layout, &settings, errors);
    Ok((StatusCode::UNPROCESSABLE_ENTITY, Html(map.render()?)).into_response())
}

/// Shared with the state: see [`Staging`].
pub fn staging() -> Arc<Staging> {
    Arc::new(Staging::default())
}
