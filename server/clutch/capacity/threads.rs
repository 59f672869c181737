//! Adjuster-screw threads. Each full turn of a single-start screw moves it one pitch axially,
//! which is the extra spring compression per turn.

use crate::InputError;
use crate::quantity::limits;
use crate::units::{MM_PER_IN, Units};
use serde::{Deserialize, Serialize};

/// An adjuster thread, as the shop names it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
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
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pitch(t: Thread) -> f64 {
        t.travel_per_turn_mm("thread").unwrap_or(f64::NAN)
    }

    // [D] 1/6 turn of a 3/8-16 (ASME B1.1) adjuster = 25.4/16/6 = 0.264583 mm; checks our arithmetic.
    #[test]
    fn a_sixth_turn_of_three_eighths_16_is_0_264583_mm() {
        let t = pitch(Thread::Tpi(16.0)) / 6.0;
        assert!((t - 0.264583).abs() < 5e-7, "{t}");
        assert_eq!(pitch(Thread::MetricPitch(1.25)), 1.25);
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
