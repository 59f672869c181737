//! A stored build as engineering inputs: turns a build with its car, setup, bench tests and
//! cover heights into the clutch module's requests. Storage units (mm, N, N/mm, N*m, g) are the
//! metric request units, so nothing is converted here. No IO: it works on loaded records.

use std::collections::HashMap;

/// A stored build's launch preview request, with estimates for what the car's record lacks.
pub mod launch;

use crate::db::bench::BenchTest;
use crate::db::builds::ActiveBuild;
use crate::db::dossier::Dossier;
use crate::db::heights::Height;
use crate::db::passes::Pass;
use crate::records::build::BuildInput;
use crate::records::car::CarInput;
use crate::records::height::HeightInput;
use crate::records::settings::SettingsInput;
use crate::records::setup::SetupInput;
use clutch::InputError;
use clutch::calibration::{
    CalibrateRequest, CalibrationReport, ENOUGH_PASSES, Fit, PassObserved, calibrate_request,
    drifting,
};
use clutch::capacity::friction::FacingMaterial;
use clutch::capacity::recommend::{Limits, RecommendRequest, Recommendation, Steps, Targets};
use clutch::capacity::report::{CapacityReport, report_for};
use clutch::capacity::request::{
    CapacityRequest, DiscInput, DrivelineInput, EngineInput, FrictionInput, LeversInput,
    SpringsInput,
};
use clutch::capacity::spring_health::{self, TestReview};
use clutch::capacity::springs::BenchPoint;
use clutch::capacity::threads::Thread;
use clutch::capacity::torque::Theory;
use clutch::quantity::limits;
use clutch::units::Units;
use clutch::wear::{Measurement, WearRequest};

/// The settings a capacity figure is for: the recorded setup, or one being tried.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Trial {
    pub adjuster_turns: f64,
    pub counterweight_g: f64,
    /// `None` uses the facing material's nominal friction coefficient.
    pub mu: Option<f64>,
}

impl Trial {
    /// The setup in force, or zero turns and no counterweight when none was recorded.
    pub fn from_setup(setup: Option<&SetupInput>) -> Self {
        setup.map_or(
            Self {
                adjuster_turns: 0.0,
                counterweight_g: 0.0,
                mu: None,
            },
            |s| Self {
                adjuster_turns: s.adjuster_turns,
                counterweight_g: s.counterweight_g,
                mu: s.mu,
            },
        )
    }

    /// Whether going from this setting to `to` moves both the adjusters and the counterweight.
    pub fn moves_both(&self, to: &Trial) -> bool {
        (to.adjuster_turns - self.adjuster_turns).abs() > 1e-9
            && (to.counterweight_g - self.counterweight_g).abs() > 1e-9
    }

    /// This setting as a setup record (no date or note), e.g. to prefill a form.
    pub fn as_setup(&self) -> SetupInput {
        SetupInput {
            adjuster_turns: self.adjuster_turns,
            counterweight_g: self.counterweight_g,
            mu: self.mu,
            ..SetupInput::default()
        }
    }
}

/// Why a build's capacity cannot be worked out yet, in words for the page.
pub type Missing = String;

/// What a tuner aims for: a lockup speed, and optionally a launch ratio.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct TuningTargets {
    pub lockup_rpm: f64,
    pub launch_ratio: Option<f64>,
}

/// Reviews a build's bench tests (oldest first) with the shop's tolerances, each spring's load
/// taken at the installed length (see [`installed_length_mm`]).
pub fn bench_review(
    bench: &[BenchTest],
    build: &BuildInput,
    settings: &SettingsInput,
) -> Option<Vec<TestReview>> {
    let tests = health_tests(bench);
    spring_health::review(
        &tests,
        settings.spring_spread_pct,
        settings.spring_sag_pct,
        installed_length_mm(&tests, build),
    )
    .ok()
}

/// Stored bench tests as the spring-health review reads them.
fn health_tests(bench: &[BenchTest]) -> Vec<spring_health::BenchTest> {
    bench
        .iter()
        .map(|t| spring_health::BenchTest {
            readings: t
                .springs
                .iter()
                .map(|s| {
                    let point = BenchPoint {
                        compression_mm: s.compression_mm,
                        force_n: s.force_n,
                    };
                    (s.position.max(1) as usize, point)
                })
                .collect(),
            free_lengths_mm: t.springs.iter().map(|s| s.free_length_mm).collect(),
        })
        .collect()
}

/// The length the clutch holds its springs at with the adjusters at zero turns, mm: their mean
/// free length at the first bench test that measured every free length, minus the base
/// compression (free length when first tested stands for the free length the base compression
/// was measured against). `None` without such a test or a base compression.
fn installed_length_mm(tests: &[spring_health::BenchTest], build: &BuildInput) -> Option<f64> {
    let free = tests.iter().find_map(|t| t.mean_free_length_mm())?;
    base_compression_mm(build).map(|base| free - base)
}

/// Base compression of a build's springs, mm: given directly, or free minus installed cover
/// height.
pub fn base_compression_mm(b: &BuildInput) -> Option<f64> {
    b.base_compression_mm.or(
        match (b.cover_height_free_mm, b.cover_height_installed_mm) {
            (Some(free), Some(installed)) => Some(free - installed),
            _ => None,
        },
    )
}

impl<'a> BuildFacts<'a> {
    /// The facts of a loaded build: the spring rate is the latest bench test's mean.
    pub fn of(d: &'a Dossier, settings: &'a SettingsInput) -> Self {
        let review = bench_review(&d.bench, &d.build.data, settings);
        let latest = review.as_ref().and_then(|r| r.last());
        let mut facts = Self {
            build: &d.build.data,
            car: &d.car.data,
            settings,
            tested_rate_n_per_mm: latest.map(|t| t.spread.mean),
            tested_load_n: latest.and_then(|t| t.mean_load_n()),
            clamp_loss_n: 0.0,
            installed_length_mm: installed_length_mm(&health_tests(&d.bench), &d.build.data),
        };
        facts.clamp_loss_n = facts.clamp_loss(&d.heights);
        facts
    }

    /// The setup in force on a loaded build.
    pub fn current_trial(d: &Dossier) -> Trial {
        Trial::from_setup(d.setups.last().map(|s| &s.data))
    }

    /// The wear request of a loaded build (its current disc).
    pub fn wear(&self, heights: &[crate::db::heights::Height]) -> Result<WearRequest, Missing> {
        wear_request(self.build, self.settings, self.spring_rate(), heights)
    }
}

/// Everything the capacity calculation needs from the records.
pub struct BuildFacts<'a> {
    pub build: &'a BuildInput,
    pub car: &'a CarInput,
    pub settings: &'a SettingsInput,
    /// Mean spring rate of the latest bench test, N/mm, when there is one.
    pub tested_rate_n_per_mm: Option<f64>,
    /// Mean spring load at the installed length in the latest bench test, N, when it measured
    /// free lengths (see [`bench_review`]).
    pub tested_load_n: Option<f64>,
    /// Static clamp lost to disc wear since the last shim, N, by the latest cover height.
    pub clamp_loss_n: f64,
    /// The length the clutch holds its springs at with the adjusters at zero turns, mm (see
    /// [`bench_review`]).
    pub installed_length_mm: Option<f64>,
}

impl BuildFacts<'_> {
    /// The spring rate the figures use: the latest bench test's mean, else the nominal rate.
    pub fn spring_rate(&self) -> Option<f64> {
        self.tested_rate_n_per_mm
            .or(self.build.spring_rate_n_per_mm)
    }

    /// Spring compression at zero turns the figures use, mm: the one the latest bench test's
    /// loads at the installed length give at its mean rate (so sagged springs clamp less),
    /// else the build's base compression.
    pub fn base_compression_mm(&self) -> Option<f64> {
        match (self.tested_load_n, self.tested_rate_n_per_mm) {
            (Some(load), Some(rate)) if rate > 0.0 => Some(load / rate),
            _ => base_compression_mm(self.build),
        }
    }

    /// Adjuster travel per turn, mm (one thread pitch).
    pub fn pitch_mm(&self) -> f64 {
        let thread = match (self.build.adjuster_tpi, self.build.adjuster_pitch_mm) {
            (Some(tpi), _) => Thread::Tpi(tpi),
            (None, Some(p)) => Thread::MetricPitch(p),
            _ => return 0.0,
        };
        thread.travel_per_turn_mm("adjuster_tpi").unwrap_or(0.0)
    }

    /// Searches adjuster turns and counterweight for the targets, starting from `current`, on
    /// the clutch module's default grid and limits; returns the recommendation (in `units`) and
    /// the figures of the recommended setting.
    pub fn recommend(
        &self,
        current: Trial,
        targets: TuningTargets,
        units: Units,
    ) -> Result<(Recommendation, Figures), InputError> {
        let setup = self
            .capacity_request(current)
            .map_err(|missing| InputError::new("build", missing))?;
        let recommendation = clutch::capacity::recommend::recommend(&RecommendRequest {
            setup: setup.in_units(units),
            targets: Targets {
                lockup_rpm: targets.lockup_rpm,
                launch_ratio: targets.launch_ratio,
            },
            steps: Steps::default(),
            limits: Limits::default(),
        })?;
        let chosen = Trial {
            adjuster_turns: recommendation.recommended.adjuster_turns,
            counterweight_g: recommendation.recommended.counterweight_g,
            mu: current.mu,
        };
        let request = self
            .capacity_request(chosen)
            .map_err(|missing| InputError::new("build", missing))?;
        Ok((recommendation, figures(&request, units)?))
    }

    /// The capacity request for a setting, or what is missing to make one.
    pub fn capacity_request(&self, trial: Trial) -> Result<CapacityRequest, Missing> {
        let (b, car) = (self.build, self.car);
        if car.torque_curve_nm.len() < 3 {
            return Err("Enter the car's engine torque curve (at least 3 dyno points).".into());
        }
        let rate = self
            .spring_rate()
            .ok_or("Record a spring bench test or a nominal spring rate.")?;
        let base = self
            .base_compression_mm()
            .ok_or("Enter the base compression, or the cover heights free and installed.")?;
        let levers = (b.lever_count > 0).then(|| LeversInput {
            count: b.lever_count as u32,
            counterweight_g: trial.counterweight_g,
            lever_mass_g: b.lever_mass_g,
            cg_radius: b
                .lever_gain_n_per_g
                .is_none()
                .then_some(b.lever_cg_radius_mm)
                .flatten(),
            arm_ratio: b
                .lever_gain_n_per_g
                .is_none()
                .then_some(b.lever_arm_ratio)
                .flatten(),
            gain: b.lever_gain_n_per_g,
            body_cg_radius: b
                .lever_gain_n_per_g
                .is_none()
                .then_some(b.lever_body_cg_radius_mm)
                .flatten(),
            body_arm_ratio: None,
            body_force_at_1000: None,
        });
        let (lo, hi) = curve_range(&car.torque_curve_nm);
        let launch_rpm = car.launch_rpm.filter(|rpm| (lo..=hi).contains(rpm));
        Ok(CapacityRequest {
            units: Units::Metric,
            disc: DiscInput {
                outer_diameter: b.facing_od_mm,
                inner_diameter: b.facing_id_mm,
                count: b.disc_count as u32,
                theory: Theory::UniformWear,
                // Full share is the API's default; only a derated shop sends it.
                extra_face_efficiency: (self.settings.extra_face_efficiency < 1.0)
                    .then_some(self.settings.extra_face_efficiency),
            },
            friction: FrictionInput {
                mu: trial.mu,
                material: FacingMaterial::from_key(&b.facing_material),
            },
            springs: SpringsInput {
                count: b.spring_count as u32,
                rate,
                base_compression: base,
                adjuster_pitch: self.pitch_mm(),
                adjuster_turns: trial.adjuster_turns,
                clamp_loss: self.clamp_loss_n,
                // The springs' free length now: installed length plus compression at zero turns.
                free_length: self
                    .installed_length_mm
                    .filter(|_| b.spring_solid_height_mm.is_some())
                    .map(|l| l + base),
                solid_height: self.installed_length_mm.and(b.spring_solid_height_mm),
                release_travel: b.release_travel_mm,
                bind_margin: Some(self.settings.bind_margin_mm),
                adjuster_turns_each: None,
            },
            levers,
            engine: EngineInput {
                torque_curve: car.torque_curve_nm.clone(),
            },
            launch_rpm,
            driveline: car
                .rated_input_torque_nm
                .map(|t| DrivelineInput { rated_torque: t }),
            overclamp_factor: Some(self.settings.overclamp_factor),
        })
    }
}

/// A stored build's calibration request: every pass with a lockup seen, oldest first, each with
/// the setting in force on its date and the wear (clamp loss since the last shim) measured on or
/// before it; the run date of each pass; and notes on the passes left out.
pub struct CalibrationInput {
    pub request: CalibrateRequest,
    /// Run date of each pass in `request.passes`.
    pub dates: Vec<String>,
    /// Why some passes were left out, in words.
    pub notes: Vec<String>,
}

impl BuildFacts<'_> {
    /// The calibration request of a loaded build (storage units), or what is missing.
    pub fn calibration(&self, d: &Dossier, fit: Fit) -> Result<CalibrationInput, Missing> {
        let clutch = self.capacity_request(Self::current_trial(d))?;
        let (lo, hi) = curve_range(&clutch.engine.torque_curve);
        let mut notes = Vec::new();
        let (mut no_setup, mut outside) = (0, 0);
        let mut passes = Vec::new();
        let mut dates = Vec::new();
        // Stored newest first; the calibration reads them oldest first.
        for pass in d.passes.iter().rev() {
            // The lockup typed by the technician, else the one the pass's data log found.
            let log = d.log_of(pass.id);
            let Some(rpm) = pass
                .data
                .observed_lockup_rpm
                .or(log.map(|l| l.lockup_engine_rpm))
            else {
                continue;
            };
            let day = pass.data.run_on.as_str();
            let Some(setup) = d
                .setups
                .iter()
                .rev()
                .find(|s| s.data.changed_on.as_str() <= day)
            else {
                no_setup += 1;
                continue;
            };
            if !(lo..=hi).contains(&rpm) {
                outside += 1;
                continue;
            }
            passes.push(PassObserved {
                lockup_rpm: rpm,
                clutch_torque: log.and_then(|l| self.log_value(d, pass, l)).map(|v| v.1),
                adjuster_turns: Some(setup.data.adjuster_turns),
                counterweight_g: Some(setup.data.counterweight_g),
                clamp_loss: self.clamp_loss_on(&d.heights, day),
            });
            dates.push(pass.data.run_on.clone());
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
            return Err("No pass with a lockup seen (and a setup recorded before it) yet.".into());
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
            dates.drain(..skip);
            notes.push(format!("Only the latest {most} passes were used."));
        }
        Ok(CalibrationInput {
            request: CalibrateRequest {
                units: Units::Metric,
                disc: clutch.disc,
                // Each pass carries the wear at its own date.
                springs: SpringsInput {
                    clamp_loss: 0.0,
                    ..clutch.springs
                },
                levers: clutch.levers,
                engine: clutch.engine,
                fit,
                passes,
            },
            dates,
            notes,
        })
    }

    /// What a pass's data log says of the friction: the median of clutch torque over capacity
    /// at μ = 1 across its slip window (launch + 50 ms to lockup − 50 ms, the setting in force
    /// on the pass's date), and the torque that ratio means at the lockup speed (typed, else
    /// the log's), N·m, which is what the calibration is fed. `None` without a setup on or
    /// before the pass, without clutch torque (no engine inertia) or a usable capacity.
    pub fn log_value(
        &self,
        d: &Dossier,
        pass: &crate::db::passes::Pass,
        log: &crate::db::pass_logs::LogSummary,
    ) -> Option<(f64, f64)> {
        let day = pass.data.run_on.as_str();
        let setup = d
            .setups
            .iter()
            .rev()
            .find(|s| s.data.changed_on.as_str() <= day)?;
        let clutch = self.capacity_request(Self::current_trial(d)).ok()?;
        let request = CalibrateRequest {
            units: Units::Metric,
            disc: clutch.disc,
            springs: clutch.springs,
            levers: clutch.levers,
            engine: clutch.engine,
            fit: Fit::Mu,
            passes: Vec::new(),
        };
        let model = request.clutch().ok()?.model;
        let law = model.law_at(
            setup.data.adjuster_turns,
            setup.data.counterweight_g,
            self.clamp_loss_on(&d.heights, day),
            1.0,
        );
        let ratio =
            clutch::datalog::analysis::median_ratio(&log.window(), |rpm| law.capacity_nm(rpm))?;
        let rpm = pass
            .data
            .observed_lockup_rpm
            .unwrap_or(log.lockup_engine_rpm);
        let torque = ratio * law.capacity_nm(rpm);
        (ratio > 0.0 && torque > 0.0).then_some((ratio, torque))
    }

    /// Static clamp lost to wear, N, by the latest cover-height measurement on or before `day`
    /// (the wear model's clamp loss; 0 without measurements or a spring rate).
    fn clamp_loss_on(&self, heights: &[crate::db::heights::Height], day: &str) -> f64 {
        let upto: Vec<&HeightInput> = heights
            .iter()
            .map(|h| &h.data)
            .filter(|h| h.measured_on.as_str() <= day)
            .collect();
        self.clamp_loss(&upto)
    }

    /// Static clamp lost to wear, N, by the last of `heights` (oldest first): the wear model's
    /// clamp loss, 0 without measurements or a spring rate.
    pub fn clamp_loss<H: AsRef<HeightInput>>(&self, heights: &[H]) -> f64 {
        wear_request(self.build, self.settings, self.spring_rate(), heights)
            .ok()
            .and_then(|req| clutch::wear::analyze(&req).ok())
            .and_then(|r| r.measurements.last().map(|m| m.clamp_loss.max(0.0)))
            .unwrap_or(0.0)
    }
}

/// A stored build's calibration as the pages show it (storage units: N·m, rpm, g).
#[derive(Debug, Clone)]
pub struct BuildCalibration {
    pub report: CalibrationReport,
    /// Run date of each pass in `report.passes` (oldest first).
    pub dates: Vec<String>,
    /// (adjuster turns, counterweight g, clamp loss N) in force at each pass.
    pub settings: Vec<(f64, f64, f64)>,
    /// At least [`ENOUGH_PASSES`] passes.
    pub enough: bool,
    /// Whether per-pass μ trends with time (`None` below 3 passes).
    pub drifting: Option<bool>,
}

impl BuildFacts<'_> {
    /// The μ calibration of a loaded build from its passes with a lockup seen, or why there is
    /// none.
    pub fn calibrated(&self, d: &Dossier) -> Result<BuildCalibration, Missing> {
        let input = self.calibration(d, Fit::Mu)?;
        let mut report = calibrate_request(&input.request).map_err(|e| e.message)?;
        report.notes.extend(input.notes);
        let mus: Vec<f64> = report.passes.iter().map(|p| p.mu).collect();
        let valid = input.request.clutch().map_err(|e| e.message)?;
        let settings = input
            .request
            .observations(&valid.model)
            .map_err(|e| e.message)?
            .iter()
            .map(|o| (o.adjuster_turns, o.counterweight_g, o.clamp_loss_n))
            .collect();
        Ok(BuildCalibration {
            enough: report.n >= ENOUGH_PASSES,
            drifting: drifting(&mus),
            report,
            dates: input.dates,
            settings,
        })
    }
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

/// Where the μ of the setup in force comes from, in words, for the setup sheet: the track's
/// calibration (when the setup's μ is the calibrated one to 3 decimals), a value entered with
/// the setup, or the facing's nominal value; with what the passes say when that differs.
/// `None` for the nominal value with no calibration (the sheet already says "nominal").
pub fn mu_source(facts: &BuildFacts, d: &Dossier) -> Option<String> {
    let setup = d.setups.last().map(|s| &s.data);
    let cal = facts.calibrated(d).ok();
    let same = |mu: f64, c: &BuildCalibration| format!("{mu:.3}") == format!("{:.3}", c.report.mu);
    Some(
        match (setup.and_then(|s| s.mu.map(|mu| (mu, &s.changed_on))), &cal) {
            (Some((mu, _)), Some(c)) if same(mu, c) => {
                format!("calibrated: μ {}", calibration_source(c))
            }
            (Some((_, day)), Some(c)) => format!(
                "entered with the setup of {day}; the calibration now gives μ {}",
                calibration_source(c)
            ),
            (Some((_, day)), None) => format!("entered with the setup of {day}"),
            (None, Some(c)) => format!(
                "the facing's nominal value; the calibration gives μ {}",
                calibration_source(c)
            ),
            (None, None) => return None,
        },
    )
}

fn curve_range(points: &[[f64; 2]]) -> (f64, f64) {
    points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), p| {
            (lo.min(p[0]), hi.max(p[0]))
        })
}

/// The wear request for a build's cover-height history (storage units). The baseline is the
/// first measurement (new disc, full shim stack). The wear allowance is new minus minimum disc
/// thickness, times the number of discs in the pack; without disc data it is the shimming limit
/// plus the whole stack, so the disc is due exactly when the shims run out.
pub fn wear_request<T: AsRef<HeightInput>>(
    build: &BuildInput,
    settings: &SettingsInput,
    spring_rate_n_per_mm: Option<f64>,
    heights: &[T],
) -> Result<WearRequest, Missing> {
    let heights = current_disc(heights);
    let first = heights
        .first()
        .ok_or("No cover-height measurement yet.")?
        .as_ref();
    let rate =
        spring_rate_n_per_mm.ok_or("Record a spring bench test or a nominal spring rate.")?;
    let limit = shimming_limit_mm(build, settings);
    // Cover height grows with the wear of the whole pack, so the allowance is per disc times
    // the number of discs.
    let allowance = match (build.disc_thickness_new_mm, build.disc_thickness_min_mm) {
        (Some(new), Some(min)) => (new - min) * build.disc_count.max(1) as f64,
        _ => limit + build.shim_stack_mm.iter().sum::<f64>(),
    };
    Ok(WearRequest {
        units: Units::Metric,
        baseline_cover_height: first.height_mm,
        shimming_limit: limit,
        shims: build.shim_stack_mm.clone(),
        spring_count: build.spring_count as u32,
        spring_rate: rate,
        disc_wear_allowance: allowance,
        measurements: heights
            .iter()
            .map(|h| h.as_ref())
            .map(|h| Measurement {
                passes: h.passes.max(0) as u32,
                cover_height: h.height_mm,
                shims_pulled: h.shims_pulled.max(0) as u32,
            })
            .collect(),
    })
}

/// The measurements of the disc in the clutch now: from the latest new-disc baseline on.
pub fn current_disc<T: AsRef<HeightInput>>(heights: &[T]) -> &[T] {
    let start = heights
        .iter()
        .rposition(|h| h.as_ref().new_disc)
        .unwrap_or(0);
    &heights[start..]
}

/// The pass count of the disc in the clutch now, worked out so nobody counts passes twice.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct DiscPasses {
    /// The count recorded with the latest cover height of this disc, if any.
    pub measured: Option<i64>,
    /// Passes logged after that measurement: a later date, or its date and entered after it.
    pub logged_since: i64,
}

impl DiscPasses {
    /// The disc's passes now: the measured count plus the passes logged since.
    pub fn now(&self) -> i64 {
        self.measured.unwrap_or(0) + self.logged_since
    }
}

/// The disc's pass count from the latest cover height of the current disc and the passes
/// logged after it; with no measurement yet, every logged pass counts.
pub fn disc_passes(heights: &[Height], passes: &[Pass]) -> DiscPasses {
    let last = current_disc(heights).last();
    let after = |p: &&Pass| match last {
        None => true,
        Some(h) => {
            p.data.run_on.as_str() > h.data.measured_on.as_str()
                || (p.data.run_on == h.data.measured_on && p.created_at > h.created_at)
        }
    };
    DiscPasses {
        measured: last.map(|h| h.data.passes),
        logged_since: passes.iter().filter(after).count() as i64,
    }
}

/// The build's own shimming limit, or the shop's default.
pub fn shimming_limit_mm(build: &BuildInput, settings: &SettingsInput) -> f64 {
    build
        .shimming_limit_mm
        .unwrap_or(settings.shimming_limit_mm)
}

/// The capacity report of a setting plus the clamp figures the pages quote, all in the units
/// the figures were asked for (so warnings and numbers read in the shop's units).
#[derive(Debug, Clone)]
pub struct Figures {
    pub units: Units,
    pub report: CapacityReport,
    /// Total clamp at the launch speed (when the car has one inside its curve).
    pub clamp_at_launch: Option<f64>,
    /// Total clamp at the top of the torque curve.
    pub clamp_at_top: f64,
}

/// Works out the capacity report and clamp figures for a stored-units request, in `units`.
pub fn figures(req: &CapacityRequest, units: Units) -> Result<Figures, InputError> {
    let valid = req.in_units(units).validate()?;
    let law = valid.model.law();
    let (_, top) = valid.model.engine.range();
    Ok(Figures {
        units,
        clamp_at_launch: valid
            .launch_rpm
            .map(|rpm| units.n_to_force(law.clamp_n(rpm))),
        clamp_at_top: units.n_to_force(law.clamp_n(top)),
        report: report_for(&valid),
    })
}

/// Why a build is on the work-due list, most urgent first.
#[derive(Debug, Clone, PartialEq)]
pub enum DueReason {
    DiscDue,
    /// A shim is due now; the thickness of the next one (mm).
    ShimDue(Option<f64>),
    /// A forecast falls within the shop's window: passes to go, and whether it is the disc.
    Soon {
        passes: f64,
        disc: bool,
    },
    /// The latest bench test found the set out of tolerance or a spring sagged.
    Springs {
        spread_pct: f64,
        out_of_tolerance: bool,
        sagged: usize,
    },
}

impl DueReason {
    /// Sort key: smaller is more urgent.
    pub fn urgency(&self) -> f64 {
        match self {
            Self::DiscDue => 0.0,
            Self::ShimDue(_) => 1.0,
            Self::Soon { passes, .. } => 2.0 + passes / 1e6,
            Self::Springs { .. } => 3.0,
        }
    }
}

/// One line of the counter's work-due list.
#[derive(Debug, Clone)]
pub struct Due {
    pub build_id: i64,
    pub build_label: String,
    pub customer_id: i64,
    pub customer_name: String,
    pub customer_phone: String,
    pub car_description: String,
    pub reason: DueReason,
}

/// The work due across the shop: builds with a disc or shim due, forecasts within
/// `settings.due_within_passes`, and spring sets flagged by their latest bench test; most
/// urgent first. Inputs are grouped by build id (any order within the slices is kept).
pub fn work_due(
    builds: &[ActiveBuild],
    heights: &[crate::db::heights::Height],
    bench: &[BenchTest],
    settings: &SettingsInput,
) -> Vec<Due> {
    let window = settings.due_within_passes as f64;
    let mut tests_of: HashMap<i64, Vec<BenchTest>> = HashMap::new();
    for t in bench {
        tests_of.entry(t.build_id).or_default().push(t.clone());
    }
    let mut heights_of: HashMap<i64, Vec<&HeightInput>> = HashMap::new();
    for h in heights {
        heights_of.entry(h.build_id).or_default().push(&h.data);
    }
    let mut out = Vec::new();
    for ab in builds {
        let b = &ab.build;
        let review = bench_review(
            tests_of.get(&b.id).map_or(&[], |t| t.as_slice()),
            &b.data,
            settings,
        );
        let tested = review
            .as_ref()
            .and_then(|r| r.last().map(|t| t.spread.mean));
        let own = heights_of.get(&b.id).map_or(&[][..], |h| h.as_slice());
        let line = |reason| Due {
            build_id: b.id,
            build_label: b.data.label.clone(),
            customer_id: ab.owner.customer_id,
            customer_name: ab.owner.customer_name.clone(),
            customer_phone: ab.owner.customer_phone.clone(),
            car_description: ab.owner.car_description.clone(),
            reason,
        };
        let rate = tested.or(b.data.spring_rate_n_per_mm);
        if let Ok(req) = wear_request(&b.data, settings, rate, own)
            && let Ok(report) = clutch::wear::analyze(&req)
        {
            use clutch::wear::WearStatus;
            let reason = match report.status {
                WearStatus::DiscDue => Some(DueReason::DiscDue),
                WearStatus::ShimDue => Some(DueReason::ShimDue(report.next_shim)),
                WearStatus::Ok => {
                    let shim = report.passes_to_shim_due.map(|p| (p, false));
                    let disc = report.passes_to_disc_due.map(|p| (p, true));
                    [shim, disc]
                        .into_iter()
                        .flatten()
                        .filter(|(p, _)| *p <= window)
                        .min_by(|a, b| a.0.total_cmp(&b.0))
                        .map(|(passes, disc)| DueReason::Soon { passes, disc })
                }
            };
            out.extend(reason.map(line));
        }
        if let Some(last) = review.as_ref().and_then(|r| r.last())
            && (last.spread.out_of_tolerance || !last.sagged.is_empty())
        {
            out.push(line(DueReason::Springs {
                spread_pct: last.spread.spread_pct,
                out_of_tolerance: last.spread.out_of_tolerance,
                sagged: last.sagged.len(),
            }));
        }
    }
    out.sort_by(|a, b| a.reason.urgency().total_cmp(&b.reason.urgency()));
    out
}
