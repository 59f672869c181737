//! A stored build as engineering inputs: the clutch module's requests worked out from the shop's
//! records (never from database rows). [`as_of::BuildAsOf`] is the one way to get a stored
//! build's clutch: the build as it stood on a date. Storage units (mm, N, N/mm, N·m, g) are the
//! metric request units, so nothing is converted here. No IO: it works on loaded records.

/// A build as it stood on a date: setup, bench test and wear in force, capacity requests.
pub mod as_of;
/// A stored build's friction calibration, each pass scored with the build of its date.
pub mod calibration;
/// The counter's work-due list across the shop.
pub mod due;
/// Disc wear per unit of slip energy and the forecast by energy.
pub mod energy;
/// The build now with the friction in force (its calibration under the one rule).
pub mod friction;
/// Friction against the facing's temperature at launch, from the passes of a season.
pub mod heat;
/// A stored build's launch preview request, with estimates for what the car's record lacks.
pub mod launch;
/// A build's disc: its cover heights as a wear request, its pass count, its shimming limit.
pub mod wear;

use crate::records::measure::{EngineSpeed, Grams};
use clutch::InputError;
use clutch::capacity::report::{CapacityReport, report_for};
use clutch::capacity::request::CapacityRequest;
use clutch::units::Units;

use crate::records::setup::SetupInput;

/// The settings a capacity figure is for: the recorded setup, or one being tried.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Trial {
    pub adjuster_turns: f64,
    pub counterweight_g: Grams,
    /// `None` uses the facing material's nominal friction coefficient.
    pub mu: Option<f64>,
}

impl Trial {
    /// The setup in force, or zero turns and no counterweight when none was recorded.
    pub fn from_setup(setup: Option<&SetupInput>) -> Self {
        setup.map_or(
            Self {
                adjuster_turns: 0.0,
                counterweight_g: Grams::from_g(0.0),
                mu: None,
            },
            |s| Self {
                adjuster_turns: s.adjuster_turns,
                counterweight_g: s.counterweight_g,
                mu: s.mu.filter(|_| !s.nominal_mu),
            },
        )
    }

    /// Whether going from this setting to `to` moves both the adjusters and the counterweight.
    pub fn moves_both(&self, to: &Trial) -> bool {
        (to.adjuster_turns - self.adjuster_turns).abs() > 1e-9
            && (to.counterweight_g - self.counterweight_g).abs().g() > 1e-9
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
    pub lockup_rpm: EngineSpeed,
    pub launch_ratio: Option<f64>,
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
    let valid = req.validate_shown(units)?;
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

fn curve_range(points: &[[f64; 2]]) -> (f64, f64) {
    points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), p| {
            (lo.min(p[0]), hi.max(p[0]))
        })
}
