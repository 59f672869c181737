//! Adjuster-screw threads. Each full turn of a single-start screw moves it one pitch axially,
//! which is the extra spring compression per turn.

use super::InputError;
use super::quantity::limits;
use super::units::{MM_PER_IN, Units};
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
        let turns = super::require_finite(field, turns)?;
        Ok(turns * self.travel_per_turn_mm(field)?)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pitch(t: Thread) -> f64 {
        t.travel_per_turn_mm("thread").unwrap_or(f64::NAN)
    }

    // ASME B1.1 unified coarse series: 1/4-20, 5/16-18, 3/8-16, 7/16-14, 1/2-13.
    // Expected mm/turn are 25.4/TPI to 5 decimals.
    #[test]
    fn unc_pitches_per_asme_b1_1() {
        let cases = [
            (20.0, 1.27000),
            (18.0, 1.41111),
            (16.0, 1.58750),
            (14.0, 1.81429),
            (13.0, 1.95385),
        ];
        for (tpi, mm) in cases {
            assert!((pitch(Thread::Tpi(tpi)) - mm).abs() < 5e-6, "{tpi} TPI");
        }
    }

    // ISO 261 coarse series: M6 × 1, M8 × 1.25, M10 × 1.5.
    #[test]
    fn iso_metric_coarse_pitches_per_iso_261() {
        for p in [1.0, 1.25, 1.5] {
            assert_eq!(pitch(Thread::MetricPitch(p)), p);
        }
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
