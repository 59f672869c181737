//! A build's disc as the wear model reads it: the cover heights of the disc in the clutch, the
//! shimming limit, the allowance, and the pass count of the disc. No IO.

use crate::records::build::BuildInput;
use crate::records::height::HeightInput;
use crate::records::measure::{Length, SpringRate};
use crate::records::settings::SettingsInput;
use crate::records::stored::{Height, Pass};
use clutch::units::Units;
use clutch::wear::{Measurement, WearRequest};

use super::Missing;

/// The wear request for a build's cover-height history (storage units). The baseline is the
/// first measurement (new disc, full shim stack). The wear allowance is new minus minimum disc
/// thickness, times the number of discs in the pack; without disc data it is the shimming limit
/// plus the whole stack, so the disc is due exactly when the shims run out.
pub fn wear_request<T: AsRef<HeightInput>>(
    build: &BuildInput,
    settings: &SettingsInput,
    spring_rate: Option<SpringRate>,
    heights: &[T],
) -> Result<WearRequest, Missing> {
    let heights = current_disc(heights);
    let first = heights
        .first()
        .ok_or("No cover-height measurement yet.")?
        .as_ref();
    let rate = spring_rate.ok_or("Record a spring bench test or a nominal spring rate.")?;
    let limit = shimming_limit(build, settings);
    // Cover height grows with the wear of the whole pack, so the allowance is per disc times
    // the number of discs.
    let allowance = match (build.disc_thickness_new_mm, build.disc_thickness_min_mm) {
        (Some(new), Some(min)) => (new - min) * build.disc_count.max(1) as f64,
        _ => limit + build.shim_stack_mm.iter().sum::<Length>(),
    };
    Ok(WearRequest {
        units: Units::Metric,
        baseline_cover_height: first.height_mm.mm(),
        shimming_limit: limit.mm(),
        shims: build.shim_stack_mm.iter().map(|s| s.mm()).collect(),
        spring_count: build.spring_count as u32,
        spring_rate: rate.n_per_mm(),
        disc_wear_allowance: allowance.mm(),
        measurements: heights
            .iter()
            .map(|h| h.as_ref())
            .map(|h| Measurement {
                passes: h.passes.max(0) as u32,
                cover_height: h.height_mm.mm(),
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
pub fn shimming_limit(build: &BuildInput, settings: &SettingsInput) -> Length {
    build
        .shimming_limit_mm
        .unwrap_or(settings.shimming_limit_mm)
}
