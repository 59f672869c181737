//! The launch preview on the tuning page: one column per setting (the current one and the one
//! being tried), each with its speed and slip-power charts, its figures and its event log. The
//! columns' charts of one quantity share one scale ([`draw`]), so two runs compare by eye.

use crate::model::Trial;
use crate::model::as_of::BuildAsOf;
use crate::model::launch::{LaunchPlan, PLATE_START_C, SixtyFtCheck};
use crate::records::measure::EngineSpeed;
use crate::web::pages::chart::{Chart, Size};
use crate::web::pages::show::Show;
use clutch::heat::{DEFAULT_TAU_S, HeatFit, cooled_c};
use clutch::launch::request::{LaunchReport, describe};
use clutch::launch::simulation::LaunchRun;
use clutch::launch::target::{Grid, LaunchTarget, NotClean, find_counterweight};
use clutch::quantity::Kind;
use clutch::units::Units;

/// One setting's launch, ready to show.
pub struct LaunchColumn {
    /// "Current setup" / "Trying" and the setting in words.
    pub title: String,
    pub setting: String,
    pub result: Result<LaunchShown, String>,
}

/// A launch worked out, in the shop's units.
pub struct LaunchShown {
    /// The run as the API reports it (its trace is what the charts draw).
    report: LaunchReport,
    /// The column's title in lower case, for the charts' captions.
    name: String,
    /// Engine and clutch speed, then slip power: drawn by [`draw`] once every column is known.
    pub charts: Vec<Chart>,
    /// (label, value) rows.
    pub figures: Vec<(&'static str, String)>,
    /// (time, what) rows.
    pub events: Vec<(String, String)>,
    pub notes: Vec<String>,
    /// Estimates used for values the car's record lacks, in the shop's units.
    pub estimated: Vec<String>,
    /// Bulk pressure plate rise, K, for the heat caution.
    pub plate_rise_k: f64,
    /// The slip in one sentence, for beside the capacity figures' launch warning.
    pub slip: String,
}

/// Pressure-plate bulk rise in one pass, K, above which the page adds a stronger heat warning.
/// Our own threshold, no published source: three or four such passes without cooling take a
/// plate from the air to around the 250 °C working limit commonly quoted for organic facings
/// (from memory).
pub const HOT_RISE_K: f64 = 60.0;

impl LaunchShown {
    /// The bulk pressure-plate rise is past [`HOT_RISE_K`].
    pub fn hot(&self) -> bool {
        self.plate_rise_k > HOT_RISE_K
    }
}

/// The scales every column's charts share: the longest run and the highest speed and slip
/// power any column reaches.
struct Scales {
    t_end: f64,
    rpm_top: f64,
    kw_top: f64,
}

impl Scales {
    fn of<'a>(runs: impl Iterator<Item = &'a LaunchReport>) -> Self {
        runs.fold(
            Scales {
                t_end: 0.1,
                rpm_top: 1000.0,
                kw_top: 1.0,
            },
            |s, r| Scales {
                t_end: r.trace.last().map_or(s.t_end, |p| s.t_end.max(p.time_s)),
                rpm_top: r
                    .trace
                    .iter()
                    .fold(s.rpm_top, |m, p| m.max(p.engine_rpm).max(p.clutch_rpm)),
                kw_top: s.kw_top.max(r.peak_slip_power_kw),
            },
        )
    }
}

/// Draws every column's charts: all speed charts on one scale and all slip-power charts on
/// another, each the largest any column needs, so the settings compare by eye.
pub fn draw(columns: &mut [LaunchColumn]) {
    let scales = Scales::of(
        columns
            .iter()
            .filter_map(|c| c.result.as_ref().ok())
            .map(|s| &s.report),
    );
    for shown in columns.iter_mut().filter_map(|c| c.result.as_mut().ok()) {
        shown.charts = vec![
            speed_chart(&shown.report, &shown.name, &scales),
            power_chart(&shown.report, &shown.name, &scales),
        ];
    }
}

/// Engine and clutch speed against time, with the lockup marked.
fn speed_chart(report: &LaunchReport, title: &str, scales: &Scales) -> Chart {
    let engine: Vec<(f64, f64)> = report
        .trace
        .iter()
        .map(|p| (p.time_s, p.engine_rpm))
        .collect();
    // After lockup the two turn together: the clutch line stops there and the engine line
    // carries both names.
    let lock_s = report.lockup.as_ref().map(|l| l.time_s);
    let locked_at_end = report
        .trace
        .last()
        .is_some_and(|p| (p.engine_rpm - p.clutch_rpm).abs() < 1.0);
    let mut clutch: Vec<(f64, f64)> = report
        .trace
        .iter()
        .filter(|p| !locked_at_end || lock_s.is_none_or(|t| p.time_s <= t))
        .map(|p| (p.time_s, p.clutch_rpm))
        .collect();
    if let (true, Some(l)) = (locked_at_end, &report.lockup) {
        clutch.push((l.time_s, l.engine_rpm));
    }
    let (mut chart, f) = Chart::sized(
        Size::Compact,
        &format!("Engine and clutch speed, {title}"),
        "time (s)",
        "speed (rpm)",
        (0.0, scales.t_end),
        (0.0, scales.rpm_top),
    );
    if locked_at_end {
        chart.line(&f, "clutch", "", &clutch);
        chart.line(&f, "engine", "engine = clutch", &engine);
    } else {
        chart.line(&f, "engine", "engine", &engine);
        chart.line(&f, "clutch", "clutch", &clutch);
    }
    if let Some(l) = &report.lockup {
        chart.mark_x(&f, "lockup", format!("locks {:.2} s", l.time_s), l.time_s);
    }
    chart
}

/// Slip power against time.
fn power_chart(report: &LaunchReport, title: &str, scales: &Scales) -> Chart {
    let power: Vec<(f64, f64)> = report
        .trace
        .iter()
        .map(|p| (p.time_s, p.slip_power_kw))
        .collect();
    let (mut chart, f) = Chart::sized(
        Size::Compact,
        &format!("Heat going into the clutch, {title}"),
        "time (s)",
        "slip power (kW)",
        (0.0, scales.t_end),
        (0.0, scales.kw_top),
    );
    chart.line(&f, "power", "slip power", &power);
    chart
}

fn figures(report: &LaunchReport, u: Units) -> Vec<(&'static str, String)> {
    let speed = u.road_speed_label();
    let end_s = report.trace.last().map_or(0.0, |p| p.time_s);
    let so_far = |figure: String| match report.lockup {
        Some(_) => figure,
        None => format!("so far {figure}, not locked by {end_s:.2} s"),
    };
    let rise = match u {
        Units::Imperial => "°F",
        Units::Metric => "K",
    };
    let spin = if report.tire_spin.is_empty() {
        "none".to_string()
    } else {
        report
            .tire_spin
            .iter()
            .map(|s| match s.end_s {
                Some(e) => format!("{:.2}–{:.2} s", s.start_s, e),
                None => format!("from {:.2} s on", s.start_s),
            })
            .collect::<Vec<_>>()
            .join(", ")
    };
    vec![
        (
            "Lockup",
            report
                .lockup
                .as_ref()
                .map_or("not within the run".into(), |l| {
                    format!(
                        "{:.2} s at {:.0} rpm, {:.0} {speed}",
                        l.time_s, l.engine_rpm, l.speed
                    )
                }),
        ),
        (
            "Lowest engine speed",
            format!("{:.0} rpm", report.min_engine_rpm),
        ),
        // A run that ends still slipping gives figures so far, never read as a whole launch's.
        (
            "Slip energy",
            so_far(Kind::Kilojoules.show(u, report.slip_energy_kj)),
        ),
        (
            "Peak slip power",
            Kind::Kilowatts.show(u, report.peak_slip_power_kw),
        ),
        (
            "Pressure plate / flywheel rise",
            report.thermal.as_ref().map_or("–".into(), |t| {
                so_far(format!(
                    "{:.0} / {:.0} {rise}",
                    t.pressure_plate_rise, t.flywheel_rise
                ))
            }),
        ),
        ("Tire spin", spin),
        (
            "60 ft",
            report
                .sixty_ft_s
                .map_or("not reached".into(), |t| format!("{t:.2} s")),
        ),
    ]
}

fn shown(
    run: &LaunchRun,
    plan: &LaunchPlan,
    duration_s: f64,
    title: &str,
    recorded_sixty_ft: &[f64],
    u: Units,
) -> LaunchShown {
    let report = LaunchReport::of(run, duration_s, u);
    let mut figures = figures(&report, u);
    let mut notes = report.notes.clone();
    if let Some(predicted) = report.sixty_ft_s
        && let Some(check) = SixtyFtCheck::of(predicted, recorded_sixty_ft, &plan.estimated)
    {
        sixty_ft_against_the_record(&mut figures, &mut notes, predicted, &check);
    }
    LaunchShown {
        name: title.to_lowercase(),
        charts: Vec::new(),
        figures,
        events: run
            .events
            .iter()
            .map(|e| (format!("{:.3} s", e.time_s), describe(&e.event, u)))
            .collect(),
        notes,
        estimated: plan.estimated.iter().map(|e| e.text(u)).collect(),
        plate_rise_k: run.plate_rise_k.map_or(0.0, |r| r.0),
        slip: report.slip_text(),
        report,
    }
}

/// The 60-ft figure with the car's recorded times beside it, and a note when the preview is
/// further from them than the shop's tolerance, naming the estimated inputs most likely at fault.
fn sixty_ft_against_the_record(
    figures: &mut [(&'static str, String)],
    notes: &mut Vec<String>,
    predicted: f64,
    check: &SixtyFtCheck,
) {
    let (lo, hi) = check.recorded;
    let recorded = if check.passes == 1 {
        format!("{lo:.2} s recorded")
    } else {
        format!("{lo:.2}–{hi:.2} s recorded in {} passes", check.passes)
    };
    if let Some(f) = figures.iter_mut().find(|f| f.0 == "60 ft") {
        f.1 = format!("{predicted:.2} s (this car: {recorded})");
    }
    if check.differs() {
        let way = if check.off_pct > 0.0 {
            "slower"
        } else {
            "quicker"
        };
        let suspects = match check.suspects.as_slice() {
            [] => "the car's recorded inputs (weight, gearing, tire size) and the torque curve"
                .to_string(),
            list => format!(
                "the estimated {} (not yet in the car's record)",
                list.iter().take(3).copied().collect::<Vec<_>>().join(", ")
            ),
        };
        notes.insert(
            0,
            format!(
                "The preview's 60 ft ({predicted:.2} s) is {:.0} % {way} than this car's \
                 ({recorded}): more than {:.0} %, so read its times with care. Most likely at \
                 fault: {suspects}.",
                check.off_pct.abs(),
                crate::model::launch::SIXTY_FT_TOLERANCE_PCT
            ),
        );
    }
}

/// The setting a column is for: turns and counterweight as everywhere else, and the launch speed.
fn setting_text(u: Units, turns: f64, counterweight_g: f64, rpm: Option<f64>) -> String {
    let show = Show::new(u);
    format!(
        "{}, {} per lever{}",
        show.turns(turns),
        show.grams(counterweight_g),
        rpm.map_or(String::new(), |r| format!(", launch {r:.0} rpm"))
    )
}

/// The launch of `trial` from `launch_rpm` (the car's when `None`) in `u`, or why there is none.
pub fn column(
    facts: &BuildAsOf,
    title: &str,
    trial: Trial,
    launch_rpm: Option<f64>,
    recorded_sixty_ft: &[f64],
    u: Units,
) -> LaunchColumn {
    let plan = facts.launch_request(trial, launch_rpm);
    let rpm = launch_rpm.or(facts.car.launch_rpm.map(EngineSpeed::rpm));
    let result = plan.and_then(|plan| {
        let valid = plan
            .request
            .validate()
            .map_err(|e| format!("{}: {}", e.field, e.message))?;
        let run = valid.model.simulate();
        Ok(shown(
            &run,
            &plan,
            valid.model.duration_s,
            title,
            recorded_sixty_ft,
            u,
        ))
    });
    LaunchColumn {
        title: title.to_string(),
        setting: setting_text(u, trial.adjuster_turns, trial.counterweight_g.g(), rpm),
        result,
    }
}

/// The current setup's next pass `minutes` after the one of `current` (its column): the plate
/// heated by that launch's bulk rise and cooled toward the start temperature by Newton's law
/// (time constant [`DEFAULT_TAU_S`], a shop default from memory), and the friction the fitted
/// μ-against-temperature line gives there (docs/engineering.md §27). `None` when the current
/// launch could not run.
pub fn next_pass_column(
    facts: &BuildAsOf,
    current: &LaunchColumn,
    trial: Trial,
    fit: &HeatFit,
    minutes: f64,
    recorded_sixty_ft: &[f64],
    u: Units,
) -> Option<LaunchColumn> {
    let rise = current.result.as_ref().ok()?.plate_rise_k;
    let start = PLATE_START_C;
    let theta = cooled_c(start + rise, start, minutes * 60.0, DEFAULT_TAU_S);
    let mu = fit.mu_at(theta);
    let title = format!("Next pass, {minutes:.0} min later");
    let mut column = column(
        facts,
        &title,
        Trial {
            mu: Some(mu),
            ..trial
        },
        None,
        recorded_sixty_ft,
        u,
    );
    column.setting = format!(
        "{}; plate at about {} after {rise:.0} K of this launch cooled {minutes:.0} min, so {} by the friction-against-heat line",
        column.setting,
        Kind::Temperature.show(u, theta),
        Show::new(u).mu(mu)
    );
    Some(column)
}

/// The current setup's turns with the counterweight (1 g steps, 0–120 g) that meets `target`
/// from the car's launch speed, as a column.
pub fn target_column(
    facts: &BuildAsOf,
    current: Trial,
    target: LaunchTarget,
    recorded_sixty_ft: &[f64],
    u: Units,
) -> LaunchColumn {
    let title = "For the launch target";
    let rpm = facts.car.launch_rpm.map(EngineSpeed::rpm);
    let mut setting = setting_text(u, current.adjuster_turns, current.counterweight_g.g(), rpm);
    let result = facts.launch_request(current, None).and_then(|plan| {
        let valid = plan
            .request
            .validate()
            .map_err(|e| format!("{}: {}", e.field, e.message))?;
        let pick = find_counterweight(&valid, target, Grid::default(), facts.settings.clean_lock())
            .map_err(|e| e.message)?;
        setting = setting_text(u, pick.adjuster_turns, pick.counterweight_g, rpm);
        let mut s = shown(
            &pick.run,
            &plan,
            valid.model.duration_s,
            title,
            recorded_sixty_ft,
            u,
        );
        let goal = match target {
            LaunchTarget::LockupTime(t) => format!("lock {t:.2} s after the launch"),
            LaunchTarget::MaxSlipEnergy(e) => {
                format!("at most {} of slip energy", Show::new(u).energy_j(e))
            }
        };
        let why = |beyond: &NotClean| match beyond {
            NotClean::TireSpin => "spins the tires".to_string(),
            NotClean::BelowCurve => "pulls the engine below its torque curve".to_string(),
            NotClean::Bog {
                min_rpm,
                launch_rpm,
            } => format!(
                "drags the engine down to {min_rpm:.0} rpm from the {launch_rpm:.0} rpm launch, \
                 more than the shop's {:.0} % (Settings)",
                facts.settings.launch_bog_pct
            ),
        };
        s.notes.insert(
            0,
            match (&pick.beyond, target) {
                (Some(b), LaunchTarget::LockupTime(_)) => format!(
                    "Aiming to {goal}: one gram more {}, so this is as early as the clutch locks \
                     cleanly ({} launches simulated).",
                    why(b),
                    pick.runs
                ),
                (Some(b), LaunchTarget::MaxSlipEnergy(_)) => format!(
                    "The least counterweight that keeps {goal} {}: no clean setting at the \
                     current turns meets the target.",
                    why(b)
                ),
                _ if pick.met => format!(
                    "Counterweight searched in 1 g steps (0–120 g) at the current turns to {goal}; \
                     {} launches simulated.",
                    pick.runs
                ),
                _ => format!(
                    "No counterweight up to 120 g at the current turns meets the target ({goal}); \
                     this is the nearest. More static clamp (turns) or a lower launch speed may."
                ),
            },
        );
        Ok(s)
    });
    LaunchColumn {
        title: title.to_string(),
        setting,
        result,
    }
}
