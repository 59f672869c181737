//! Adjuster-screw threads. Each full turn of a single-start screw moves it one pitch axially,
//! which is the extra spring compression per turn.

use crate::InputError;
use crate::quantity::limits;
use crate::units::{MM_PER_IN, Units};
use serde::{Deserialize, Serialize};

/// An adjuster thread, as the shop names it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Thread {
    /// Inch thread given as threads per inch (ASME B1.1 unified threads), e.g. 16 for 3/8-16.
    Tpi(f64),
    /// Metric thread given as pitch in mm (ISO 261), e.g. 1.25 for M8.
    MetricPitch(f64),
}

impl Thread {
    /// Axial travel per full turn in mm: 25.4 / TPI, or the metric pitch itself
    /// (single-start thread). Source: definition of pitch, ASME B1.1 / ISO 261.
    ///
    /// Valid range: the table of limits (TPI 4–80, metric pitch 0.2–6 mm). `field` names the
    /// thread in errors.
    pub fn travel_per_turn_mm(self, field: &str) -> Result<f64, InputError> {
        match self {
            Thread::Tpi(tpi) => {
                limits::ADJUSTER_TPI.check(field, tpi, Units::Metric)?;
                Ok(MM_PER_IN / tpi)
            }
            Thread::MetricPitch(p) => limits::ADJUSTER_PITCH.check(field, p, Units::Metric),
        }
    }

    /// Axial travel in mm for `turns` turns (fractions allowed): turns × pitch.
    pub fn travel_mm(self, turns: f64, field: &str) -> Result<f64, InputError> {
        let turns = crate::require_finite(field, turns)?;
        Ok(turns * self.travel_per_turn_mm(field)?)
    }
}

/// Unified coarse (UNC) threads per inch by nominal size, as ASME B1.1 lists them for the
/// sizes an adjuster screw uses: 1/4-20, 5/16-18, 3/8-16, 7/16-14, 1/2-13.
const UNC_COARSE: [(&str, f64); 5] = [
    ("1/4", 20.0),
    ("5/16", 18.0),
    ("3/8", 16.0),
    ("7/16", 14.0),
    ("1/2", 13.0),
];

/// ISO metric coarse pitch, mm, by nominal diameter, mm, as ISO 261 lists it:
/// M6 × 1, M8 × 1.25, M10 × 1.5, M12 × 1.75.
const ISO_COARSE: [(f64, f64); 4] = [(6.0, 1.0), (8.0, 1.25), (10.0, 1.5), (12.0, 1.75)];

/// The UNC coarse thread of a nominal inch size ("3/8" → 16 TPI), per ASME B1.1; `None` for a
/// size outside the table.
pub fn unc_coarse(nominal_in: &str) -> Option<Thread> {
    UNC_COARSE
        .iter()
        .find(|(size, _)| *size == nominal_in.trim())
        .map(|&(_, tpi)| Thread::Tpi(tpi))
}

/// The ISO metric coarse thread of a nominal diameter in mm (8 → 1.25 mm), per ISO 261;
/// `None` for a diameter outside the table.
pub fn iso_coarse(nominal_mm: f64) -> Option<Thread> {
    ISO_COARSE
        .iter()
        .find(|(d, _)| *d == nominal_mm)
        .map(|&(_, p)| Thread::MetricPitch(p))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pitch(t: Thread) -> f64 {
        t.travel_per_turn_mm("thread").unwrap_or(f64::NAN)
    }

    // ASME B1.1 unified coarse series rows (nominal size → TPI): 1/4-20, 5/16-18, 3/8-16,
    // 7/16-14, 1/2-13. Travel per turn is 25.4/TPI, to 5 decimals [D].
    #[test]
    fn unc_coarse_rows_per_asme_b1_1() {
        let rows = [
            ("1/4", 20.0, 1.27000),
            ("5/16", 18.0, 1.41111),
            ("3/8", 16.0, 1.58750),
            ("7/16", 14.0, 1.81429),
            ("1/2", 13.0, 1.95385),
        ];
        for (size, tpi, mm) in rows {
            let thread = unc_coarse(size);
            assert_eq!(thread, Some(Thread::Tpi(tpi)), "{size}");
            let travel = thread.map_or(f64::NAN, pitch);
            assert!((travel - mm).abs() < 5e-6, "{size}: {travel}");
        }
        assert_eq!(unc_coarse("5/8"), None);
    }

    // ISO 261 coarse series rows (nominal diameter → pitch): M6 × 1, M8 × 1.25, M10 × 1.5,
    // M12 × 1.75.
    #[test]
    fn iso_coarse_rows_per_iso_261() {
        for (d, p) in [(6.0, 1.0), (8.0, 1.25), (10.0, 1.5), (12.0, 1.75)] {
            let thread = iso_coarse(d);
            assert_eq!(thread, Some(Thread::MetricPitch(p)), "M{d}");
            assert_eq!(thread.map_or(f64::NAN, pitch), p, "M{d}");
        }
        assert_eq!(iso_coarse(7.0), None);
    }

    // [D] 1/6 turn of a 3/8-16 (ASME B1.1) adjuster = 25.4/16/6 = 0.264583 mm; checks our arithmetic.
    #[test]
    fn a_sixth_turn_of_three_eighths_16_is_0_264583_mm() {
        let t = Thread::Tpi(16.0).travel_mm(1.0 / 6.0, "thread");
        assert!(t.is_ok_and(|mm| (mm - 0.264583).abs() < 5e-7));
    }

    #[test]
    fn zero_or_nan_tpi_is_an_error_naming_the_field() {
        let e = Thread::Tpi(0.0).travel_per_turn_mm("springs.thread");
        assert_eq!(e.err().map(|e| e.field), Some("springs.thread".to_string()));
        assert!(
            Thread::MetricPitch(f64::NAN)
                .travel_per_turn_mm("t")
                .is_err()
        );
    }
}
