//! A build as it stood on a date: the one way every page, sheet and API answer gets the clutch
//! of a stored build. The setup, the bench test, the cover heights (so the wear clamp loss) are
//! the ones in force on that date; the build's hardware and the car are as recorded. Storage
//! units (mm, N, N/mm, N·m, g) are the metric request units, so nothing is converted here. No IO.

use super::launch::PREVIEW_STEP_MS;
use super::wear::wear_request;
use super::{Figures, Missing, Trial, TuningTargets, curve_range, figures};
use crate::records::build::BuildInput;
use crate::records::car::CarInput;
use crate::records::height::HeightInput;
use crate::records::measure::{EngineSpeed, Force, Grams, Length, LeverGain, SpringRate};
use crate::records::settings::SettingsInput;
use crate::records::setup::SetupInput;
use crate::records::stored::{BenchTest, Dossier};
use clutch::InputError;
use clutch::capacity::friction::FacingMaterial;
use clutch::capacity::recommend::{Limits, RecommendRequest, Recommendation, Steps, Targets};
use clutch::capacity::request::{
    CapacityRequest, DiscInput, DrivelineInput, EngineInput, FrictionInput, LeversInput,
    SpringsInput,
};
use clutch::capacity::spring_health::{self, TestReview};
use clutch::capacity::springs::BenchPoint;
use clutch::capacity::threads::Thread;
use clutch::capacity::torque::Theory;
use clutch::units::Units;
use clutch::wear::WearRequest;

/// A stored build as it stood on a date (see the module notes).
#[derive(Debug, Clone)]
pub struct BuildAsOf<'a> {
    pub build: &'a BuildInput,
    pub car: &'a CarInput,
    pub settings: &'a SettingsInput,
    /// The setup record in force: the latest changed on or before the date.
    pub setup: Option<&'a SetupInput>,
    /// The setting in force (zero turns and no counterweight without a setup).
    pub trial: Trial,
    /// Index (oldest first) of the bench test in force: the latest on or before the date, the
    /// earliest when none is before it.
    pub bench_index: Option<usize>,
    /// Mean spring rate of the bench test in force, when there is one.
    pub tested_rate: Option<SpringRate>,
    /// Mean spring load at the installed length in the bench test in force, when it measured
    /// free lengths (see [`bench_review`]).
    pub tested_load: Option<Force>,
    /// The length the clutch holds its springs at with the adjusters at zero turns (see
    /// [`bench_review`]).
    pub installed_length: Option<Length>,
    /// Cover heights measured on or before the date, in pass order (every disc).
    pub heights: Vec<&'a HeightInput>,
    /// Static clamp lost to disc wear since the last shim, by the latest of `heights`.
    pub clamp_loss: Force,
    /// The friction coefficient in force and why (`trial.mu` is its `mu`).
    pub friction: Friction,
    /// Integration step of its launch previews, ms: [`PREVIEW_STEP_MS`], or the step a sheet
    /// was printed with.
    pub preview_step_ms: f64,
}

/// What a build's calibration says, as the friction rule reads it.
#[derive(Debug, Clone, PartialEq)]
pub struct CalibrationSummary {
    /// The calibrated μ.
    pub mu: f64,
    /// Passes it was fitted to.
    pub passes: usize,
    /// How many of them the whole launch read (the rest by the torque at lockup).
    pub by_launch: usize,
    /// Whether the passes' μ trends with time (`None` below 3 passes).
    pub drifting: Option<bool>,
}

/// Where the friction coefficient the figures use comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum FrictionSource {
    /// The build's calibration: enough passes (`by_launch` of them read from the whole
    /// launch), and steady.
    Calibrated { passes: usize, by_launch: usize },
    /// The μ entered with the setup in force, on its date.
    Entered { on: String },
    /// The facing's nominal μ.
    Nominal,
}

/// The friction coefficient in force on a build, and why: THE ONE RULE every page, sheet and
/// API answer about a stored build follows (see [`Friction::choose`]).
#[derive(Debug, Clone, PartialEq)]
pub struct Friction {
    /// The μ the figures use; `None` is the facing's nominal value.
    pub mu: Option<f64>,
    /// The facing's nominal μ (0 for a facing the clutch module does not know).
    pub nominal: f64,
    pub source: FrictionSource,
    /// Why the calibration is not in force, in words, when it was looked at and is not.
    pub why_not_calibrated: Option<String>,
}

impl Friction {
    /// The rule: the setup's "nominal μ" choice (a new disc) keeps the facing's nominal value;
    /// else the calibration when it has at least `ENOUGH_PASSES` passes and does not drift;
    /// else the μ entered with the setup; else the nominal one. `calibration` is `None` when it
    /// was not worked out (a past date, a sheet's snapshot): the setup's own μ then.
    pub fn choose(
        setup: Option<&SetupInput>,
        nominal: f64,
        calibration: Option<Result<CalibrationSummary, String>>,
    ) -> Self {
        let entered = |why: Option<String>| match setup.and_then(|s| s.mu.map(|mu| (mu, s))) {
            Some((mu, s)) => Self {
                mu: Some(mu),
                nominal,
                source: FrictionSource::Entered {
                    on: s.changed_on.clone(),
                },
                why_not_calibrated: why,
            },
            None => Self {
                mu: None,
                nominal,
                source: FrictionSource::Nominal,
                why_not_calibrated: why,
            },
        };
        if let Some(s) = setup.filter(|s| s.nominal_mu) {
            let why = format!(
                "the setup of {} keeps the facing's nominal μ (a new disc)",
                s.changed_on
            );
            return Self {
                mu: None,
                nominal,
                source: FrictionSource::Nominal,
                why_not_calibrated: calibration.map(|_| why),
            };
        }
        let enough = clutch::calibration::ENOUGH_PASSES;
        match calibration {
            None => entered(None),
            Some(Err(why)) => {
                let why = why.trim_end_matches('.');
                let mut chars = why.chars();
                let why = chars.next().map_or(String::new(), |c| {
                    c.to_lowercase().chain(chars).collect::<String>()
                });
                entered(Some(format!("no calibration yet: {why}")))
            }
            Some(Ok(c)) if c.passes < enough => entered(Some(format!(
                "the calibration has {} {} with a lockup seen, {enough} needed",
                c.passes,
                if c.passes == 1 { "pass" } else { "passes" }
            ))),
            Some(Ok(c)) if c.drifting == Some(true) => entered(Some(format!(
                "the calibration (μ {:.3} from {} passes) drifts from pass to pass: the facing is still changing",
                c.mu, c.passes
            ))),
            Some(Ok(c)) => Self {
                mu: Some(c.mu),
                nominal,
                source: FrictionSource::Calibrated {
                    passes: c.passes,
                    by_launch: c.by_launch,
                },
                why_not_calibrated: None,
            },
        }
    }

    /// The μ the figures use.
    pub fn value(&self) -> f64 {
        self.mu.unwrap_or(self.nominal)
    }

    /// Whether the figures use the calibrated μ.
    pub fn calibrated(&self) -> bool {
        matches!(self.source, FrictionSource::Calibrated { .. })
    }

    /// The μ in force in a few words: "μ 0.281 from 5 passes", "μ 0.289 from 5 passes, 1 read
    /// from the whole launch", "μ 0.300 entered 2026-10-02", "nominal μ 0.350".
    pub fn short(&self) -> String {
        match &self.source {
            FrictionSource::Calibrated { passes, by_launch } => format!(
                "μ {:.3} from {}{}",
                self.value(),
                clutch::quantity::counted(*passes as f64, "pass", "passes"),
                if *by_launch > 0 {
                    format!(", {by_launch} read from the whole launch")
                } else {
                    String::new()
                }
            ),
            FrictionSource::Entered { on } => format!("μ {:.3} entered {on}", self.value()),
            FrictionSource::Nominal => format!("nominal μ {:.3}", self.value()),
        }
    }

    /// What goes beside [`Friction::short`]: the nominal μ when another is used, and why the
    /// calibration is not used when it was looked at and is not; `None` when nothing.
    pub fn beside(&self) -> Option<String> {
        let nominal = (self.source != FrictionSource::Nominal)
            .then(|| format!("the facing's nominal μ {:.3}", self.nominal));
        let why = self
            .why_not_calibrated
            .as_ref()
            .map(|why| format!("not the calibrated μ: {why}"));
        match (nominal, why) {
            (Some(a), Some(b)) => Some(format!("{a}; {b}")),
            (a, b) => a.or(b),
        }
    }

    /// The μ in force with what goes beside it: "μ 0.281 from 5 passes (the facing's nominal
    /// μ 0.350)".
    pub fn words(&self) -> String {
        match self.beside() {
            Some(b) => format!("{} ({b})", self.short()),
            None => self.short(),
        }
    }
}

impl<'a> BuildAsOf<'a> {
    /// The build as recorded now with the friction the setup gives, the calibration not
    /// looked at (the calibration itself starts from it; every page uses `BuildAsOf::now`, in
    /// `model::friction`, which puts the calibration under the rule).
    pub fn recorded(d: &'a Dossier, settings: &'a SettingsInput) -> Self {
        Self::of(d, settings, None)
    }

    /// The build as it stood on `day` (`YYYY-MM-DD`): records dated after it do not count.
    pub fn on(d: &'a Dossier, settings: &'a SettingsInput, day: &str) -> Self {
        Self::of(d, settings, Some(day))
    }

    fn of(d: &'a Dossier, settings: &'a SettingsInput, day: Option<&str>) -> Self {
        let upto = |date: &str| day.is_none_or(|day| date <= day);
        let setup = d
            .setups
            .iter()
            .rev()
            .find(|s| upto(&s.data.changed_on))
            .map(|s| &s.data);
        let bench_index = d
            .bench
            .iter()
            .rposition(|t| upto(&t.tested_on))
            .or((!d.bench.is_empty()).then_some(0));
        let tests = health_tests(&d.bench[..bench_index.map_or(0, |i| i + 1)]);
        let installed = installed_length(&tests, &d.build.data);
        let review = review(&tests, settings, installed);
        let in_force = review.as_ref().and_then(|r| r.last());
        Self::assemble(
            &d.build.data,
            &d.car.data,
            settings,
            setup,
            bench_index,
            in_force.map(|t| SpringRate::from_n_per_mm(t.spread.mean)),
            in_force.and_then(|t| t.mean_load_n()).map(Force::from_n),
            installed,
            d.heights
                .iter()
                .map(|h| &h.data)
                .filter(|h| upto(&h.measured_on))
                .collect(),
        )
    }

    /// The build from parts already chosen for a date (a setup sheet's stored snapshot): the
    /// clamp loss is worked out from `heights` with the spring rate in force.
    #[expect(
        clippy::too_many_arguments,
        reason = "each part is one record of the build"
    )]
    pub fn assemble(
        build: &'a BuildInput,
        car: &'a CarInput,
        settings: &'a SettingsInput,
        setup: Option<&'a SetupInput>,
        bench_index: Option<usize>,
        tested_rate: Option<SpringRate>,
        tested_load: Option<Force>,
        installed_length: Option<Length>,
        heights: Vec<&'a HeightInput>,
    ) -> Self {
        let nominal =
            FacingMaterial::from_key(&build.facing_material).map_or(0.0, |m| m.data().mu_nominal);
        let mut build = Self {
            build,
            car,
            settings,
            setup,
            trial: Trial::from_setup(setup),
            friction: Friction::choose(setup, nominal, None),
            bench_index,
            tested_rate,
            tested_load,
            installed_length,
            heights,
            clamp_loss: Force::from_n(0.0),
            preview_step_ms: PREVIEW_STEP_MS,
        };
        build.trial.mu = build.friction.mu;
        build.clamp_loss = build.wear_clamp_loss();
        build
    }

    /// Puts the friction `calibration` gives under the rule in force (see [`Friction::choose`]):
    /// the figures of the setting in force then use its μ.
    pub fn with_calibration(mut self, calibration: Result<CalibrationSummary, String>) -> Self {
        let nominal = self.friction.nominal;
        self.friction = Friction::choose(self.setup, nominal, Some(calibration));
        self.trial.mu = self.friction.mu;
        self
    }

    /// The spring rate the figures use: the bench test's mean, else the nominal rate.
    pub fn spring_rate(&self) -> Option<SpringRate> {
        self.tested_rate.or(self.build.spring_rate_n_per_mm)
    }

    /// Spring compression at zero turns the figures use: the one the bench test's loads at
    /// the installed length give at its mean rate (so sagged springs clamp less), else the
    /// build's base compression.
    pub fn base_compression(&self) -> Option<Length> {
        match (self.tested_load, self.tested_rate) {
            (Some(load), Some(rate)) if rate.n_per_mm() > 0.0 => {
                Some(Length::from_mm(load.n() / rate.n_per_mm()))
            }
            _ => base_compression(self.build),
        }
    }

    /// Adjuster travel per turn (one thread pitch).
    pub fn pitch(&self) -> Length {
        let thread = match (self.build.adjuster_tpi, self.build.adjuster_pitch_mm) {
            (Some(tpi), _) => Thread::Tpi(tpi),
            (None, Some(p)) => Thread::MetricPitch(p.mm()),
            _ => return Length::from_mm(0.0),
        };
        Length::from_mm(thread.travel_per_turn_mm("adjuster_tpi").unwrap_or(0.0))
    }

    /// The wear request of the disc in the clutch on the date.
    pub fn wear(&self) -> Result<WearRequest, Missing> {
        wear_request(self.build, self.settings, self.spring_rate(), &self.heights)
    }

    /// Static clamp lost to wear by the latest cover height: the wear model's clamp loss, 0
    /// without measurements or a spring rate.
    fn wear_clamp_loss(&self) -> Force {
        Force::from_n(
            self.wear()
                .ok()
                .and_then(|req| clutch::wear::analyze(&req).ok())
                .and_then(|r| r.measurements.last().map(|m| m.clamp_loss.max(0.0)))
                .unwrap_or(0.0),
        )
    }

    /// The capacity request of the setting in force, or what is missing to make one.
    pub fn clutch(&self) -> Result<CapacityRequest, Missing> {
        self.capacity_request(self.trial)
    }

    /// The capacity figures of the setting in force, in `units`.
    pub fn figures(&self, units: Units) -> Result<Figures, String> {
        self.clutch()
            .and_then(|r| figures(&r, units).map_err(|e| format!("{}: {}", e.field, e.message)))
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
        let recommendation = clutch::capacity::recommend::recommend_shown(
            &RecommendRequest {
                setup,
                targets: Targets {
                    lockup_rpm: targets.lockup_rpm.rpm(),
                    launch_ratio: targets.launch_ratio,
                },
                steps: Steps::default(),
                limits: Limits::default(),
            },
            units,
        )?;
        let chosen = Trial {
            adjuster_turns: recommendation.recommended.adjuster_turns,
            counterweight_g: Grams::from_g(recommendation.recommended.counterweight_g),
            mu: current.mu,
        };
        let request = self
            .capacity_request(chosen)
            .map_err(|missing| InputError::new("build", missing))?;
        Ok((recommendation, figures(&request, units)?))
    }

    /// The capacity request for a setting of this build, or what is missing to make one.
    pub fn capacity_request(&self, trial: Trial) -> Result<CapacityRequest, Missing> {
        let (b, car) = (self.build, self.car);
        if car.torque_curve_nm.len() < 3 {
            return Err("Enter the car's engine torque curve (at least 3 dyno points).".into());
        }
        let rate = self
            .spring_rate()
            .ok_or("Record a spring bench test or a nominal spring rate.")?;
        let base = self
            .base_compression()
            .ok_or("Enter the base compression, or the cover heights free and installed.")?;
        // A measured gain stands for the whole lever; the geometry is used only without one.
        let geometry = b.lever_gain_n_per_g.is_none();
        let levers = (b.lever_count > 0).then(|| LeversInput {
            count: b.lever_count as u32,
            counterweight_g: trial.counterweight_g.g(),
            lever_mass_g: b.lever_mass_g.g(),
            cg_radius: b.lever_cg_radius_mm.map(Length::mm).filter(|_| geometry),
            arm_ratio: b.lever_arm_ratio.filter(|_| geometry),
            gain: b.lever_gain_n_per_g.map(LeverGain::n_per_g),
            body_cg_radius: b
                .lever_body_cg_radius_mm
                .map(Length::mm)
                .filter(|_| geometry),
            body_arm_ratio: None,
            body_force_at_1000: None,
        });
        let (lo, hi) = curve_range(&car.torque_curve_nm);
        let launch_rpm = car
            .launch_rpm
            .map(EngineSpeed::rpm)
            .filter(|rpm| (lo..=hi).contains(rpm));
        Ok(CapacityRequest {
            units: Units::Metric,
            disc: DiscInput {
                outer_diameter: b.facing_od_mm.mm(),
                inner_diameter: b.facing_id_mm.mm(),
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
                rate: rate.n_per_mm(),
                base_compression: base.mm(),
                adjuster_pitch: self.pitch().mm(),
                adjuster_turns: trial.adjuster_turns,
                clamp_loss: self.clamp_loss.n(),
                // The springs' free length now: installed length plus compression at zero turns.
                free_length: self
                    .installed_length
                    .filter(|_| b.spring_solid_height_mm.is_some())
                    .map(|l| (l + base).mm()),
                solid_height: self
                    .installed_length
                    .and(b.spring_solid_height_mm)
                    .map(Length::mm),
                release_travel: b.release_travel_mm.map(Length::mm),
                bind_margin: Some(self.settings.bind_margin_mm.mm()),
                adjuster_turns_each: None,
            },
            levers,
            engine: EngineInput {
                torque_curve: car.torque_curve_nm.clone(),
            },
            launch_rpm,
            driveline: car.rated_input_torque_nm.map(|t| DrivelineInput {
                rated_torque: t.nm(),
            }),
            overclamp_factor: Some(self.settings.overclamp_factor),
        })
    }
}

/// Reviews a build's bench tests (oldest first) with the shop's tolerances, each spring's load
/// taken at the installed length (see [`installed_length`]).
pub fn bench_review(
    bench: &[BenchTest],
    build: &BuildInput,
    settings: &SettingsInput,
) -> Option<Vec<TestReview>> {
    let tests = health_tests(bench);
    review(&tests, settings, installed_length(&tests, build))
}

/// One bench test's readings (spring position, compression mm, force N) reviewed alone: the
/// set's mean rate, N/mm (a setup sheet's stored test).
pub fn tested_rate(readings: &[[f64; 2]], settings: &SettingsInput) -> Option<f64> {
    let test = spring_health::BenchTest {
        readings: readings
            .iter()
            .enumerate()
            .map(|(i, [x, f])| {
                let point = BenchPoint {
                    compression_mm: *x,
                    force_n: *f,
                };
                (i + 1, point)
            })
            .collect(),
        free_lengths_mm: Vec::new(),
    };
    review(&[test], settings, None).and_then(|r| r.last().map(|t| t.spread.mean))
}

fn review(
    tests: &[spring_health::BenchTest],
    settings: &SettingsInput,
    installed_length: Option<Length>,
) -> Option<Vec<TestReview>> {
    spring_health::review(
        tests,
        settings.spring_spread_pct,
        settings.spring_sag_pct,
        installed_length.map(Length::mm),
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
                        compression_mm: s.compression_mm.mm(),
                        force_n: s.force_n.n(),
                    };
                    (s.position.max(1) as usize, point)
                })
                .collect(),
            free_lengths_mm: t
                .springs
                .iter()
                .map(|s| s.free_length_mm.map(Length::mm))
                .collect(),
        })
        .collect()
}

/// The length the clutch holds its springs at with the adjusters at zero turns, mm: their mean
/// free length at the first bench test that measured every free length, minus the base
/// compression (free length when first tested stands for the free length the base compression
/// was measured against). `None` without such a test or a base compression.
fn installed_length(tests: &[spring_health::BenchTest], build: &BuildInput) -> Option<Length> {
    let free = Length::from_mm(tests.iter().find_map(|t| t.mean_free_length_mm())?);
    base_compression(build).map(|base| free - base)
}

/// Base compression of a build's springs: given directly, or free minus installed cover height.
pub fn base_compression(b: &BuildInput) -> Option<Length> {
    b.base_compression_mm.or(
        match (b.cover_height_free_mm, b.cover_height_installed_mm) {
            (Some(free), Some(installed)) => Some(free - installed),
            _ => None,
        },
    )
}
