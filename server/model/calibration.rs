//! A stored build's friction calibration: every pass with a lockup seen, each scored with the
//! build as it stood on the pass's date (its setup, its bench test's springs, its wear). No IO.

use super::as_of::BuildAsOf;
use super::{Missing, curve_range};
use crate::records::settings::SettingsInput;
use crate::records::stored::{Dossier, LogSummary, Pass};
use clutch::InputError;
use clutch::calibration::launch::{
    LaunchCalibrateRequest, LaunchPass, calibrate_launch, mean_ci95,
};
use clutch::calibration::{
    CalibrateRequest, CalibrationReport, ENOUGH_PASSES, Fit, PassObserved, calibrate_observations,
    drifting,
};
use clutch::capacity::clamp::SpringPack;
use clutch::capacity::lockup::CapacityLaw;
use clutch::capacity::request::SpringsInput;
use clutch::launch::request::LaunchFriction;
use clutch::quantity::limits;
use clutch::units::Units;

/// A stored build's calibration as the pages show it (storage units: N·m, rpm, g).
#[derive(Debug, Clone)]
pub struct BuildCalibration {
    pub report: CalibrationReport,
    /// Run date of each pass in `report.passes` (oldest first).
    pub dates: Vec<String>,
    /// Id of each pass in `report.passes`.
    pub pass_ids: Vec<i64>,
    /// (adjuster turns, counterweight g, clamp loss N) in force at each pass.
    pub settings: Vec<(f64, f64, f64)>,
    /// At least [`ENOUGH_PASSES`] passes.
    pub enough: bool,
    /// Whether per-pass μ trends with time (`None` below 3 passes).
    pub drifting: Option<bool>,
}

/// The clutch of one date as a pass is scored with it.
struct DayClutch {
    /// The setting in force: turns, counterweight g, clamp loss N.
    setting: (f64, f64, f64),
    springs: SpringPack,
    /// Capacity law at that setting with μ = 1.
    law: CapacityLaw,
}

impl DayClutch {
    /// The build on `day`, or `None` without a setup on or before it (or a usable clutch).
    fn on(d: &Dossier, settings: &SettingsInput, day: &str) -> Option<Self> {
        let at = BuildAsOf::on(d, settings, day);
        at.setup?;
        let valid = at.clutch().ok()?.validate().ok()?;
        let m = &valid.model;
        Some(Self {
            setting: (m.adjuster_turns, m.counterweight_g, m.clamp_loss_n),
            springs: m.springs,
            law: m.law_at(m.adjuster_turns, m.counterweight_g, m.clamp_loss_n, 1.0),
        })
    }

    /// What a pass's data log says of the friction: the median of clutch torque over capacity
    /// at μ = 1 across its slip window (launch + 50 ms to lockup − 50 ms), and the torque that
    /// ratio means at the lockup speed (typed, else the log's), N·m, which is what the
    /// calibration is fed. `None` without clutch torque (no engine inertia) or a usable capacity.
    fn log_value(&self, pass: &Pass, log: &LogSummary) -> Option<(f64, f64)> {
        let law = &self.law;
        let ratio =
            clutch::datalog::analysis::median_ratio(&log.window(), |rpm| law.capacity_nm(rpm))?;
        let rpm = pass
            .data
            .observed_lockup_rpm
            .unwrap_or(log.lockup_engine_rpm);
        let torque = ratio * law.capacity_nm(rpm);
        (ratio > 0.0 && torque > 0.0).then_some((ratio, torque))
    }
}

/// What a pass's data log says of the friction, with the build as it stood on the pass's date:
/// (μ, torque carried at lockup N·m); see [`DayClutch::log_value`].
pub fn log_value(
    d: &Dossier,
    settings: &SettingsInput,
    pass: &Pass,
    log: &LogSummary,
) -> Option<(f64, f64)> {
    DayClutch::on(d, settings, &pass.data.run_on)?.log_value(pass, log)
}

/// The calibration of a loaded build from its passes with a lockup seen (typed, else found in
/// its data log), oldest first, each with the build as it stood on its date; or why there is
/// none (what is missing, under `passes`, or the fit's refusal under its field).
pub fn calibrated(
    d: &Dossier,
    settings: &SettingsInput,
    fit: Fit,
) -> Result<BuildCalibration, InputError> {
    let missing = |m: Missing| InputError::new("passes", m);
    let clutch = BuildAsOf::recorded(d, settings).clutch().map_err(missing)?;
    let (lo, hi) = curve_range(&clutch.engine.torque_curve);
    let mut notes = Vec::new();
    let (mut no_setup, mut outside) = (0, 0);
    let mut passes = Vec::new();
    let mut days: Vec<(String, (f64, f64, f64), SpringPack)> = Vec::new();
    let mut pass_ids = Vec::new();
    let mut day_clutch: Option<(&str, Option<DayClutch>)> = None;
    // Stored newest first; the calibration reads them oldest first.
    for pass in d.passes.iter().rev() {
        let log = d.log_of(pass.id);
        let Some(rpm) = pass
            .data
            .observed_lockup_rpm
            .or(log.map(|l| l.lockup_engine_rpm))
        else {
            continue;
        };
        let day = pass.data.run_on.as_str();
        // Passes come in date order: the clutch of a day is worked out once.
        if day_clutch.as_ref().is_none_or(|(d0, _)| *d0 != day) {
            day_clutch = Some((day, DayClutch::on(d, settings, day)));
        }
        let Some(at) = day_clutch.as_ref().and_then(|(_, c)| c.as_ref()) else {
            no_setup += 1;
            continue;
        };
        if !(lo..=hi).contains(&rpm) {
            outside += 1;
            continue;
        }
        let (turns, counterweight_g, clamp_loss) = at.setting;
        passes.push(PassObserved {
            lockup_rpm: rpm,
            clutch_torque: log.and_then(|l| at.log_value(pass, l)).map(|v| v.1),
            adjuster_turns: Some(turns),
            counterweight_g: Some(counterweight_g),
            clamp_loss,
        });
        days.push((pass.data.run_on.clone(), at.setting, at.springs));
        pass_ids.push(pass.id);
    }
    if no_setup > 0 {
        notes.push(format!(
            "{no_setup} pass(es) with a lockup seen were left out: no setup was recorded on or before their date."
        ));
    }
    if outside > 0 {
        notes.push(format!(
            "{outside} pass(es) were left out: their lockup lies outside the car's torque curve ({lo:.0}–{hi:.0} rpm)."
        ));
    }
    if passes.is_empty() {
        return Err(missing(
            "No pass with a lockup seen (and a setup recorded before it) yet.".into(),
        ));
    }
    let most = limits::CALIBRATION_PASSES_MAX;
    if d.passes_total > d.passes.len() as i64 {
        // A build loads its newest passes only (`db::dossier::PASSES_LOADED`).
        notes.push(format!(
            "Only the latest {} of the build's {} passes were read.",
            d.passes.len(),
            d.passes_total
        ));
    } else if passes.len() > most {
        let skip = passes.len() - most;
        passes.drain(..skip);
        days.drain(..skip);
        pass_ids.drain(..skip);
        notes.push(format!("Only the latest {most} passes were used."));
    }
    let request = CalibrateRequest {
        units: Units::Metric,
        disc: clutch.disc,
        // Each pass carries the wear (and the springs) of its own date.
        springs: SpringsInput {
            clamp_loss: 0.0,
            ..clutch.springs
        },
        levers: clutch.levers,
        engine: clutch.engine,
        fit,
        passes,
    };
    let valid = request.clutch()?;
    let mut observations = request.observations(&valid.model)?;
    for (o, (_, _, springs)) in observations.iter_mut().zip(&days) {
        o.springs = Some(*springs);
    }
    let mut report = calibrate_observations(&request, &valid, &observations)?;
    report.notes.extend(notes);
    let mus: Vec<f64> = report.passes.iter().map(|p| p.mu).collect();
    Ok(BuildCalibration {
        enough: report.n >= ENOUGH_PASSES,
        drifting: drifting(&mus),
        report,
        pass_ids,
        settings: days.iter().map(|(_, s, _)| *s).collect(),
        dates: days.into_iter().map(|(day, _, _)| day).collect(),
    })
}

/// Where a calibrated μ comes from, in words: "0.300 from 3 passes on the track from
/// 2026-10-05 to 2026-10-12, 95 % interval 0.289–0.312".
pub fn calibration_source(c: &BuildCalibration) -> String {
    let r = &c.report;
    let span = match (c.dates.first(), c.dates.last()) {
        (Some(a), Some(b)) if a != b => format!("from {a} to {b}"),
        (Some(a), _) => format!("on {a}"),
        _ => String::new(),
    };
    let interval = r.ci95.map_or("no interval yet".to_string(), |[lo, hi]| {
        format!("95 % interval {lo:.3}–{hi:.3}")
    });
    let passes = if r.n == 1 { "pass" } else { "passes" };
    format!(
        "{:.3} from {} {passes} on the track {span}, {interval}",
        r.mu, r.n
    )
}

/// How far the two methods' μ of one pass may differ before the page says so: 5 % (common shop
/// practice, no published source; the torque balance's own scatter is a few percent).
pub const METHODS_APART_PCT: f64 = 5.0;

/// A stored build's friction read from the whole launch (`clutch::calibration::launch`): each
/// pass with its launch speed typed and a data log's lock time, fitted with the build as it stood
/// on the pass's date (setting, springs, wear) and the car's launch record.
#[derive(Debug, Clone)]
pub struct LaunchMethod {
    /// (pass id, the μ whose simulated launch locks when the log saw it lock), oldest first.
    pub passes: Vec<(i64, f64)>,
    /// Passes that could not be read this way, and why, in words.
    pub notes: Vec<String>,
}

impl LaunchMethod {
    /// Mean μ of the passes read and its 95 % interval (none for one pass); `None` when no
    /// pass could be read.
    pub fn mean(&self) -> Option<(f64, Option<[f64; 2]>)> {
        let mus: Vec<f64> = self.passes.iter().map(|p| p.1).collect();
        (!mus.is_empty()).then(|| mean_ci95(&mus))
    }

    /// The μ this method read from pass `id`, if it read that pass.
    pub fn of(&self, id: i64) -> Option<f64> {
        self.passes.iter().find(|p| p.0 == id).map(|p| p.1)
    }
}

/// The launch method over a loaded build's passes; `None` when no pass can be read by it (no pass
/// with both a launch speed and a data log, or a car without the launch fields). About twenty
/// launch simulations per pass: heavy work, run where the tuning page runs its calibration.
pub fn by_launch(d: &Dossier, settings: &SettingsInput) -> Option<LaunchMethod> {
    let mut passes = Vec::new();
    let mut notes = Vec::new();
    for pass in d.passes.iter().rev() {
        let (Some(launch_rpm), Some(log)) = (pass.data.launch_rpm, d.log_of(pass.id)) else {
            continue;
        };
        let day = pass.data.run_on.as_str();
        let at = BuildAsOf::on(d, settings, day);
        let plan = match at.launch_request(at.trial, Some(launch_rpm)) {
            Ok(plan) => plan,
            Err(missing) => {
                notes.push(format!("Pass of {day}: {missing}"));
                continue;
            }
        };
        let r = plan.request;
        let request = LaunchCalibrateRequest {
            units: r.units,
            disc: r.disc,
            friction: LaunchFriction {
                mu: None,
                ..r.friction
            },
            passes: vec![LaunchPass {
                lockup_time_s: Some(log.lockup_after_launch_s()),
                lockup_rpm: None,
                launch_rpm: None,
                adjuster_turns: None,
                counterweight_g: None,
                clamp_loss: r.springs.clamp_loss,
            }],
            springs: r.springs,
            levers: r.levers,
            engine: r.engine,
            launch_rpm: Some(r.launch_rpm),
            driveline: r.driveline,
            vehicle: r.vehicle,
            thermal: r.thermal,
            step_ms: r.step_ms,
            duration_s: r.duration_s,
        };
        match calibrate_launch(&request) {
            Ok(fit) => passes.push((pass.id, fit.mu)),
            Err(e) => notes.push(format!(
                "Pass of {day}: {}",
                e.message.replace(
                    "this car and setting",
                    "this car and the setting of that day"
                )
            )),
        }
    }
    (!passes.is_empty() || !notes.is_empty()).then_some(LaunchMethod { passes, notes })
}

/// What the tuning page says of a pass the two methods see differently.
#[derive(Debug, Clone, PartialEq)]
pub enum MethodFlag {
    /// Both methods read the pass, more than [`METHODS_APART_PCT`] apart.
    Apart {
        date: String,
        torque_mu: f64,
        launch_mu: f64,
        apart_pct: f64,
    },
    /// Only the torque balance reads the pass, and it locked further below its launch speed
    /// than the shop's clean-lock share (`SettingsInput::launch_bog_pct`, default 15 %, common
    /// shop practice): the engine was still being pulled down at the lock, so the engine
    /// curve's torque there overstates what the clutch carried and the pass reads low.
    FallingLock {
        date: String,
        lockup_rpm: f64,
        launch_rpm: f64,
        below_pct: f64,
    },
}

/// The passes of a calibration that the two methods read apart, or that only the torque
/// balance reads although the engine was still falling at the lock, oldest first.
pub fn method_flags(
    d: &Dossier,
    settings: &SettingsInput,
    cal: &BuildCalibration,
    by_launch: Option<&LaunchMethod>,
) -> Vec<MethodFlag> {
    let mut out = Vec::new();
    for ((id, date), p) in cal.pass_ids.iter().zip(&cal.dates).zip(&cal.report.passes) {
        if let Some(launch_mu) = by_launch.and_then(|m| m.of(*id)) {
            let apart_pct = (launch_mu - p.mu).abs() / p.mu * 100.0;
            if apart_pct > METHODS_APART_PCT {
                out.push(MethodFlag::Apart {
                    date: date.clone(),
                    torque_mu: p.mu,
                    launch_mu,
                    apart_pct,
                });
            }
            continue;
        }
        let launch_rpm = d
            .passes
            .iter()
            .find(|x| x.id == *id)
            .and_then(|x| x.data.launch_rpm);
        if let Some(launch_rpm) = launch_rpm {
            let below_pct = (launch_rpm - p.lockup_rpm) / launch_rpm * 100.0;
            if below_pct > settings.launch_bog_pct {
                out.push(MethodFlag::FallingLock {
                    date: date.clone(),
                    lockup_rpm: p.lockup_rpm,
                    launch_rpm,
                    below_pct,
                });
            }
        }
    }
    out
}
