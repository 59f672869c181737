//! A build's disc as the wear model reads it: the cover heights of the disc in the clutch, the
//! shimming limit, the allowance, and the pass count of the disc. No IO.

use crate::records::build::BuildInput;
use crate::records::height::HeightInput;
use crate::records::settings::SettingsInput;
use std::collections::HashMap;

use crate::records::stored::{Dossier, Height, Pass};
use clutch::units::Units;
use clutch::wear::{EnergyWear, Measurement, WearRequest, passes_to_due};

use super::as_of::BuildAsOf;
use super::{Missing, Trial};

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
