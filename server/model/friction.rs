//! The build as it stands now with the friction in force: the calibration from its passes put
//! under the one rule of [`Friction::choose`]. Kept apart from `as_of` because the calibration
//! scores each pass with `BuildAsOf` (no file imports one that imports it back). No IO.

#[cfg(doc)]
use super::as_of::Friction;
use super::as_of::{BuildAsOf, CalibrationSummary};
use super::calibration::{BuildCalibration, calibrated};
use crate::records::settings::SettingsInput;
use crate::records::stored::Dossier;
use clutch::InputError;
use clutch::calibration::Fit;

impl<'a> BuildAsOf<'a> {
    /// The build as recorded now, every record counted, with the friction in force.
    pub fn now(d: &'a Dossier, settings: &'a SettingsInput) -> Self {
        Self::now_calibrated(d, settings).0
    }

    /// [`BuildAsOf::now`] and the calibration it read (for the pages that show it).
    pub fn now_calibrated(
        d: &'a Dossier,
        settings: &'a SettingsInput,
    ) -> (Self, Result<BuildCalibration, InputError>) {
        let calibration = calibrated(d, settings, Fit::Mu);
        let read = calibration
            .as_ref()
            .map(summary)
            .map_err(|e| e.message.clone());
        (
            Self::recorded(d, settings).with_calibration(read),
            calibration,
        )
    }
}

/// What the friction rule reads of a calibration.
pub fn summary(c: &BuildCalibration) -> CalibrationSummary {
    CalibrationSummary {
        mu: c.report.mu,
        passes: c.report.n,
        by_launch: c.by_launch,
        drifting: c.drifting,
    }
}
