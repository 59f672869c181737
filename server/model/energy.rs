//! A build's disc wear per unit of slip energy, and the forecast that follows at the current
//! setting's slip energy per pass. No IO.

use std::collections::HashMap;

use super::Trial;
use super::as_of::BuildAsOf;
use super::wear::current_disc;
use crate::records::settings::SettingsInput;
use crate::records::stored::{Dossier, Pass};
use clutch::wear::{EnergyWear, passes_to_due};

/// A build's disc wear against the slip energy its passes took, and the forecast that follows
/// at the current setting (storage units: mm, J).
#[derive(Debug, Clone, PartialEq)]
pub struct EnergyForecast {
    /// Wear per MJ of slip energy, mm/MJ, over the intervals whose passes all have a known
    /// energy.
    pub fit: EnergyWear,
    /// The current setting's modelled slip energy per pass, J (the launch preview's, when it
    /// locks).
    pub energy_per_pass_j: Option<f64>,
    /// Passes until a shim is due at that energy per pass.
    pub passes_to_shim_due: Option<f64>,
    /// Passes until the disc is due at that energy per pass.
    pub passes_to_disc_due: Option<f64>,
}

/// The slip energy of a launch of `build` at `trial` from `launch_rpm` (the car's when `None`),
/// J, by the launch preview; `None` when the preview cannot run or does not lock.
fn modelled_energy_j(build: &BuildAsOf, trial: Trial, launch_rpm: Option<f64>) -> Option<f64> {
    let plan = build.launch_request(trial, launch_rpm).ok()?;
    let run = plan.request.validate().ok()?.model.simulate();
    run.lockup.map(|_| run.slip_energy_j)
}

/// Wear per unit of slip energy on the disc in the clutch (docs/engineering.md §13): between
/// consecutive cover heights, the growth in total wear against the slip energy of the passes
/// dated after the earlier measurement and on or before the later one, each from its data log,
/// else from the launch preview at the setting of its date; intervals with a pass of unknown
/// energy, or with no pass, are left out. `None` without an interval to fit.
pub fn energy_forecast(d: &Dossier, settings: &SettingsInput) -> Option<EnergyForecast> {
    let now = BuildAsOf::now(d, settings);
    let req = now.wear().ok()?;
    let report = clutch::wear::analyze(&req).ok()?;
    let heights = current_disc(&d.heights);
    // The launch preview of a date's setting from a launch speed, worked out once.
    let mut modelled: HashMap<(String, Option<u64>), Option<f64>> = HashMap::new();
    let mut energy_of = |pass: &Pass| -> Option<f64> {
        if let Some(e) = d.log_of(pass.id).and_then(|l| l.slip_energy_j) {
            return Some(e);
        }
        let key = (
            pass.data.run_on.clone(),
            pass.data.launch_rpm.map(f64::to_bits),
        );
        *modelled.entry(key).or_insert_with(|| {
            let at = BuildAsOf::on(d, settings, &pass.data.run_on);
            at.setup?;
            modelled_energy_j(&at, at.trial, pass.data.launch_rpm)
        })
    };
    let mut intervals = Vec::new();
    for (k, pair) in heights.windows(2).enumerate() {
        let (from, to) = (&pair[0].data.measured_on, &pair[1].data.measured_on);
        let passes: Vec<&Pass> = d
            .passes
            .iter()
            .filter(|p| p.data.run_on.as_str() > from.as_str() && p.data.run_on <= *to)
            .collect();
        if passes.is_empty() {
            continue;
        }
        let energy: Option<f64> = passes.iter().map(|p| energy_of(p)).sum();
        let growth = report.measurements[k + 1].total_wear - report.measurements[k].total_wear;
        if let Some(e) = energy {
            intervals.push((growth, e));
        }
    }
    let fit = clutch::wear::wear_per_mj(&intervals)?;
    let energy_per_pass_j = modelled_energy_j(&now, now.trial, None);
    let last = report.measurements.last()?;
    let pulled = heights
        .last()
        .map_or(0, |h| h.data.shims_pulled.max(0) as u32);
    let (passes_to_shim_due, passes_to_disc_due) = energy_per_pass_j.map_or((None, None), |e| {
        passes_to_due(&req, last, pulled, fit.per_mj * e / 1e6)
    });
    Some(EnergyForecast {
        fit,
        energy_per_pass_j,
        passes_to_shim_due,
        passes_to_disc_due,
    })
}
