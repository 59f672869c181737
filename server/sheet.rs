//! The setup sheet handed to the customer: the snapshot of inputs it is printed from, and the
//! figures it shows, worked out again from that snapshot (so a reprint matches the original).
//! No IO.

use crate::records::measure::{Force, Length, SpringRate};
use serde::{Deserialize, Serialize};

use crate::model::as_of::{BuildAsOf, tested_rate};
use crate::model::wear::current_disc;
use crate::model::{Figures, TuningTargets};
use crate::records::build::BuildInput;
use crate::records::car::CarInput;
use crate::records::height::HeightInput;
use crate::records::settings::SettingsInput;
use crate::records::setup::SetupInput;
use crate::records::stored::Dossier;
use clutch::capacity::recommend::Recommendation;
use clutch::units::Units;
use clutch::wear::{WearReport, analyze};

/// Everything a sheet was printed from, stored with it as JSON.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SheetInputs {
    pub prepared_on: String,
    pub prepared_by: String,
    /// Shop name, contact, units and limits as they were.
    pub settings: SettingsInput,
    pub customer_name: String,
    pub customer_phone: String,
    pub car: CarInput,
    pub build: BuildInput,
    /// The setup in force.
    pub setup: Option<SetupInput>,
    /// The latest spring bench test: date and (compression mm, force N) per spring.
    pub bench: Option<BenchOnSheet>,
    /// Cover heights of the disc in the clutch, oldest first.
    pub heights: Vec<HeightInput>,
    /// Targets for a recommendation, when the technician asked for one.
    pub targets: Option<TuningTargets>,
    /// Where the friction coefficient came from, in words (absent on sheets printed before
    /// the calibration existed).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mu_source: Option<String>,
    /// Whether the figures take the static clamp lost to wear since the last shim off the
    /// springs' clamp (absent, so false, on sheets printed before they did: those reprint the
    /// figures they showed).
    #[serde(default)]
    pub wear_in_clamp: bool,
    /// The friction coefficient the figures used when it was printed (the rule of
    /// `model::as_of::Friction`, the calibration then included; absent on sheets printed before
    /// the rule: those use the setup's own μ, as they did).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub friction: Option<FrictionOnSheet>,
    /// Whether the wear status says "soon" as the shop's one work-due status does (absent, so
    /// false, on sheets printed before: those keep the words they showed).
    #[serde(default)]
    pub soon_status: bool,
    /// The launch preview's integration step when it was printed, ms (absent on sheets printed
    /// before the previews took
    /// [`PREVIEW_STEP_MS`](crate::model::launch::PREVIEW_STEP_MS): those reprint at the 0.5 ms they used, so
    /// a run that leaves the torque curve ends where it did).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub preview_step_ms: Option<f64>,
}

/// The friction in force when a sheet was printed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FrictionOnSheet {
    /// The μ the figures used; `None`: the facing's nominal.
    pub mu: Option<f64>,
    /// In a few words ("μ 0.281 from 5 passes").
    pub short: String,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BenchOnSheet {
    pub tested_on: String,
    pub readings: Vec<[f64; 2]>,
    /// Mean spring load at the installed length, N, when the test measured free lengths
    /// (absent on sheets printed before loads were tracked: those keep their figures).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub installed_load_n: Option<Force>,
    /// The springs' installed length, mm, when known (for the coil-bind check).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub installed_length_mm: Option<Length>,
}

impl SheetInputs {
    /// The snapshot of a loaded build as it is now.
    pub fn capture(
        d: &Dossier,
        settings: &SettingsInput,
        prepared_by: &str,
        prepared_on: &str,
        targets: Option<TuningTargets>,
    ) -> Self {
        let now = BuildAsOf::now(d, settings);
        Self {
            prepared_on: prepared_on.into(),
            prepared_by: prepared_by.into(),
            settings: settings.clone(),
            customer_name: d.owner.customer_name.clone(),
            customer_phone: d.owner.customer_phone.clone(),
            car: d.car.data.clone(),
            build: d.build.data.clone(),
            setup: now.setup.cloned(),
            bench: now.bench_index.map(|i| &d.bench[i]).map(|t| BenchOnSheet {
                tested_on: t.tested_on.clone(),
                readings: t
                    .springs
                    .iter()
                    .map(|s| [s.compression_mm.mm(), s.force_n.n()])
                    .collect(),
                installed_load_n: now.tested_load,
                installed_length_mm: now.installed_length,
            }),
            heights: current_disc(&d.heights)
                .iter()
                .map(|h| h.data.clone())
                .collect(),
            targets,
            mu_source: now.friction.beside(),
            wear_in_clamp: true,
            friction: Some(FrictionOnSheet {
                mu: now.friction.mu,
                short: now.friction.short(),
            }),
            soon_status: true,
            preview_step_ms: Some(now.preview_step_ms),
        }
    }

    pub fn units(&self) -> Units {
        Units::from_key(&self.settings.units).unwrap_or_default()
    }
}

/// What the sheet shows, worked out from its inputs.
pub struct SheetFigures {
    /// Mean tested spring rate (N/mm) when there was a bench test.
    pub tested_rate_n_per_mm: Option<SpringRate>,
    pub capacity: Result<Figures, String>,
    pub wear: Result<WearReport, String>,
    pub recommendation: Option<Result<Recommendation, String>>,
    /// The launch preview's slip of the setting in force, in one sentence, when the car's
    /// record lets the preview run (shown beside the launch warning).
    pub launch_slip: Option<String>,
}

/// Works out the sheet's figures (capacity in the shop's units; wear in storage units).
pub fn figures(inputs: &SheetInputs) -> SheetFigures {
    let tested = inputs
        .bench
        .as_ref()
        .and_then(|b| tested_rate(&b.readings, &inputs.settings));
    let mut build = BuildAsOf::assemble(
        &inputs.build,
        &inputs.car,
        &inputs.settings,
        inputs.setup.as_ref(),
        inputs.bench.as_ref().map(|_| 0),
        tested.map(SpringRate::from_n_per_mm),
        inputs.bench.as_ref().and_then(|b| b.installed_load_n),
        inputs.bench.as_ref().and_then(|b| b.installed_length_mm),
        inputs.heights.iter().collect(),
    );
    if let Some(f) = &inputs.friction {
        // The friction in force when it was printed (the calibration of that day included).
        build.trial.mu = f.mu;
    }
    build.preview_step_ms = inputs
        .preview_step_ms
        .unwrap_or(clutch::launch::request::DEFAULT_STEP_MS);
    if !inputs.wear_in_clamp {
        // Printed before the figures took wear off the static clamp: they reprint as shown.
        build.clamp_loss = Force::from_n(0.0);
    }
    let units = inputs.units();
    let capacity = build.figures(units);
    let launch_slip = build.launch_slip_text(build.trial);
    let wear = build
        .wear()
        .and_then(|r| analyze(&r).map_err(|e| e.to_string()));
    let recommendation = inputs.targets.map(|t| {
        build
            .recommend(build.trial, t, units)
            .map(|(r, _)| r)
            .map_err(|e| e.to_string())
    });
    SheetFigures {
        tested_rate_n_per_mm: tested.map(SpringRate::from_n_per_mm),
        capacity,
        wear,
        recommendation,
        launch_slip,
    }
}
