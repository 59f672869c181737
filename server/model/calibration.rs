//! A stored build's friction calibration: every pass with a lockup seen, each scored with the
//! build as it stood on the pass's date (its setup, its bench test's springs, its wear). No IO.

use super::as_of::BuildAsOf;
use super::{Missing, curve_range};
use crate::records::measure::{EngineSpeed, Seconds};
use crate::records::settings::SettingsInput;
use crate::records::stored::{Dossier, KeptLaunchFit, LogSummary, Pass};
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
    /// How many of `report.passes` carry the whole launch's μ rather than the torque balance's.
    pub by_launch: usize,
    /// The torque balance's own μ of each pass in `report.passes` when some are read by the
    /// whole launch (`None` for a pass it cannot read: no lockup seen); empty when none are.
    pub torque_mu: Vec<Option<f64>>,
    /// The whole launch over the build's passes, every pass it read or could not.
    pub launch: Option<LaunchMethod>,
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
            .unwrap_or(log.lockup_engine_rpm)
            .rpm();
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
/// its data log, else the whole launch's), oldest first, each with the build as it stood on its
/// date. A pass the whole launch reads ([`by_launch`]) carries the torque that method's μ gives
/// at its lockup; the rest are read by the torque balance. Or why there is none (what is
/// missing, under `passes`, or the fit's refusal under its field).
pub fn calibrated(
    d: &Dossier,
    settings: &SettingsInput,
    fit: Fit,
) -> Result<BuildCalibration, InputError> {
    let missing = |m: Missing| InputError::new("passes", m);
    let clutch = BuildAsOf::recorded(d, settings).clutch().map_err(missing)?;
    let launch = by_launch(d, settings);
    let (lo, hi) = curve_range(&clutch.engine.torque_curve);
    let mut notes = Vec::new();
    let (mut no_setup, mut outside) = (0, 0);
    // (the pass as the torque balance reads it, the torque the whole launch gives, if it reads it)
    let mut passes: Vec<(PassObserved, Option<f64>)> = Vec::new();
    let mut days: Vec<(String, (f64, f64, f64), SpringPack)> = Vec::new();
    let mut pass_ids = Vec::new();
    let mut day_clutch: Option<(&str, Option<DayClutch>)> = None;
    // Stored newest first; the calibration reads them oldest first.
    for pass in d.passes.iter().rev() {
        let log = d.log_of(pass.id);
        let read = launch.as_ref().and_then(|m| m.of(pass.id));
        let seen = pass
            .data
            .observed_lockup_rpm
            .or(log.map(|l| l.lockup_engine_rpm));
        let Some(rpm) = seen.or(read.map(|r| r.lockup_rpm)).map(EngineSpeed::rpm) else {
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
        let observed = PassObserved {
            lockup_rpm: rpm,
            clutch_torque: log.and_then(|l| at.log_value(pass, l)).map(|v| v.1),
            adjuster_turns: Some(turns),
            counterweight_g: Some(counterweight_g),
            clamp_loss,
        };
        passes.push((observed, read.map(|r| r.mu * at.law.capacity_nm(rpm))));
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
    let springs: Vec<SpringPack> = days.iter().map(|(_, _, s)| *s).collect();
    let run = |fit: Fit, passes: Vec<PassObserved>| {
        let request = CalibrateRequest {
            units: Units::Metric,
            disc: clutch.disc.clone(),
            // Each pass carries the wear (and the springs) of its own date.
            springs: SpringsInput {
                clamp_loss: 0.0,
                ..clutch.springs.clone()
            },
            levers: clutch.levers.clone(),
            engine: clutch.engine.clone(),
            fit,
            passes,
        };
        let valid = request.clutch()?;
        let mut observations = request.observations(&valid.model)?;
        for (o, springs) in observations.iter_mut().zip(&springs) {
            o.springs = Some(*springs);
        }
        calibrate_observations(&request, &valid, &observations)
    };
    let by_launch = passes.iter().filter(|(_, t)| t.is_some()).count();
    // The torque balance's own reading of each pass, for the pages that show both methods.
    let torque_mu: Vec<Option<f64>> = if by_launch == 0 {
        Vec::new()
    } else {
        let balance: Vec<PassObserved> = passes.iter().map(|(p, _)| p.clone()).collect();
        let report = run(Fit::Mu, balance)?;
        report
            .passes
            .iter()
            .zip(&pass_ids)
            .map(|(r, id)| {
                let seen = d.passes.iter().find(|p| p.id == *id).is_some_and(|p| {
                    p.data.observed_lockup_rpm.is_some() || d.log_of(p.id).is_some()
                });
                seen.then_some(r.mu)
            })
            .collect()
    };
    let used: Vec<PassObserved> = passes
        .iter()
        .map(|(p, launch_torque)| PassObserved {
            clutch_torque: launch_torque.or(p.clutch_torque),
            ..p.clone()
        })
        .collect();
    let mut report = run(fit, used)?;
    if by_launch > 0 {
        notes.push(format!(
            "{by_launch} of the {} passes read from the whole launch (the friction whose simulated launch locks when the pass did); {}.",
            passes.len(),
            match passes.len() - by_launch {
                0 => "none by the torque at lockup".to_string(),
                n => format!("{n} by the torque at lockup"),
            }
        ));
    }
    report.notes.extend(notes);
    let mus: Vec<f64> = report.passes.iter().map(|p| p.mu).collect();
    Ok(BuildCalibration {
        enough: report.n >= ENOUGH_PASSES,
        drifting: drifting(&mus),
        report,
        pass_ids,
        settings: days.iter().map(|(_, s, _)| *s).collect(),
        dates: days.into_iter().map(|(day, _, _)| day).collect(),
        torque_mu,
        by_launch,
        launch,
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
/// pass with its launch speed typed and a lock time (typed, else its data log's), fitted with the
/// build as it stood on the pass's date (setting, springs, wear) and the car's launch record.
#[derive(Debug, Clone, Default)]
pub struct LaunchMethod {
    /// Each pass read, oldest first.
    pub passes: Vec<LaunchRead>,
    /// Passes that could not be read this way, and why, in words.
    pub notes: Vec<String>,
}

/// One pass read by the whole launch.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LaunchRead {
    pub pass_id: i64,
    /// The μ whose simulated launch locks when the pass did.
    pub mu: f64,
    /// The simulated lockup engine speed at that μ.
    pub lockup_rpm: EngineSpeed,
}

impl LaunchMethod {
    /// Mean μ of the passes read and its 95 % interval (none for one pass); `None` when no
    /// pass could be read.
    pub fn mean(&self) -> Option<(f64, Option<[f64; 2]>)> {
        let mus: Vec<f64> = self.passes.iter().map(|p| p.mu).collect();
        (!mus.is_empty()).then(|| mean_ci95(&mus))
    }

    /// What this method read from pass `id`, if it read that pass.
    pub fn of(&self, id: i64) -> Option<&LaunchRead> {
        self.passes.iter().find(|p| p.pass_id == id)
    }
}

/// The fingerprint of a request a kept figure was worked out from (a whole-launch fit's, a launch
/// preview's): FNV-1a (64-bit) over its JSON, so the kept figure is used only while everything
/// it read is unchanged.
pub fn fingerprint(request: &impl serde::Serialize) -> i64 {
    let bytes = serde_json::to_vec(request).unwrap_or_default();
    let hash = bytes.iter().fold(0xcbf2_9ce4_8422_2325_u64, |h, b| {
        (h ^ u64::from(*b)).wrapping_mul(0x0000_0100_0000_01b3)
    });
    hash as i64
}

/// The whole-launch fit of one pass: its request, or why the pass cannot be read this way (the
/// car lacks what the launch model needs); `None` for a pass without a launch speed and a lock
/// time, which this method does not read.
fn launch_request_of(
    d: &Dossier,
    settings: &SettingsInput,
    pass: &Pass,
) -> Option<Result<LaunchCalibrateRequest, String>> {
    let launch_rpm = pass.data.launch_rpm?.rpm();
    let lock_time = pass
        .data
        .lockup_time_s
        .map(Seconds::s)
        .or(d.log_of(pass.id).map(LogSummary::lockup_after_launch_s))?;
    let day = pass.data.run_on.as_str();
    let at = BuildAsOf::on(d, settings, day);
    let plan = match at.launch_request(at.trial, Some(launch_rpm)) {
        Ok(plan) => plan,
        Err(missing) => return Some(Err(format!("Pass of {day}: {missing}"))),
    };
    let r = plan.request;
    Some(Ok(LaunchCalibrateRequest {
        units: r.units,
        disc: r.disc,
        friction: LaunchFriction {
            mu: None,
            ..r.friction
        },
        passes: vec![LaunchPass {
            lockup_time_s: Some(lock_time),
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
    }))
}

/// The whole-launch fit of every pass of a loaded build this method reads, oldest first: the kept
/// fit where its fingerprint still matches, else worked out here (about twenty launch
/// simulations a pass). `status::work_out` keeps what this returns, so pages find it kept.
pub fn launch_fits(d: &Dossier, settings: &SettingsInput) -> Vec<KeptLaunchFit> {
    let mut out = Vec::new();
    for pass in d.passes.iter().rev() {
        let Some(request) = launch_request_of(d, settings, pass) else {
            continue;
        };
        let fit = match request {
            Err(note) => KeptLaunchFit {
                pass_id: pass.id,
                inputs: 0,
                mu: None,
                lockup_rpm: None,
                note: Some(note),
            },
            Ok(request) => {
                let inputs = fingerprint(&request);
                let kept = d
                    .launch_fits
                    .iter()
                    .find(|k| k.pass_id == pass.id && k.inputs == inputs);
                match kept {
                    Some(k) => k.clone(),
                    None => fit_one(pass, inputs, &request),
                }
            }
        };
        out.push(fit);
    }
    out
}

/// One pass fitted by the whole launch, as kept.
fn fit_one(pass: &Pass, inputs: i64, request: &LaunchCalibrateRequest) -> KeptLaunchFit {
    let day = &pass.data.run_on;
    let (mu, lockup_rpm, note) = match calibrate_launch(request) {
        Ok(fit) => (
            Some(fit.mu),
            fit.passes
                .first()
                .map(|p| EngineSpeed::from_rpm(p.simulated_lockup_rpm)),
            None,
        ),
        Err(e) => (
            None,
            None,
            Some(format!(
                "Pass of {day}: {}",
                e.message.replace(
                    "this car and setting",
                    "this car and the setting of that day"
                )
            )),
        ),
    };
    KeptLaunchFit {
        pass_id: pass.id,
        inputs,
        mu,
        lockup_rpm,
        note,
    }
}

/// The launch method over a loaded build's passes (from [`launch_fits`]); `None` when no pass
/// can be read by it (no pass with both a launch speed and a lock time).
pub fn by_launch(d: &Dossier, settings: &SettingsInput) -> Option<LaunchMethod> {
    let fits = launch_fits(d, settings);
    (!fits.is_empty()).then(|| {
        let mut m = LaunchMethod::default();
        for f in fits {
            match (f.mu, f.lockup_rpm) {
                (Some(mu), Some(lockup_rpm)) => m.passes.push(LaunchRead {
                    pass_id: f.pass_id,
                    mu,
                    lockup_rpm,
                }),
                _ => m.notes.extend(f.note),
            }
        }
        m
    })
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
) -> Vec<MethodFlag> {
    let mut out = Vec::new();
    for (i, ((id, date), p)) in cal
        .pass_ids
        .iter()
        .zip(&cal.dates)
        .zip(&cal.report.passes)
        .enumerate()
    {
        if let Some(read) = cal.launch.as_ref().and_then(|m| m.of(*id)) {
            if let Some(torque_mu) = cal.torque_mu.get(i).copied().flatten() {
                let apart_pct = (read.mu - torque_mu).abs() / torque_mu * 100.0;
                if apart_pct > METHODS_APART_PCT {
                    out.push(MethodFlag::Apart {
                        date: date.clone(),
                        torque_mu,
                        launch_mu: read.mu,
                        apart_pct,
                    });
                }
            }
            continue;
        }
        let launch_rpm = d
            .passes
            .iter()
            .find(|x| x.id == *id)
            .and_then(|x| x.data.launch_rpm)
            .map(EngineSpeed::rpm);
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
