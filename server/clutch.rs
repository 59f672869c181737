//! Clutch engineering: pure calculations, no IO.
//!
//! Everything here takes plain values in stated units and returns plain values, so it can be
//! checked against handbook examples directly and reused by the API, the pages and the setup
//! sheet. Inside the module internal units are mm, N, N/mm, N·m, rpm and grams; conversion to
//! and from the shop's display units happens only in [`units`] and at the request edges.

/// Friction (and lever gain) calibrated from passes with an observed lockup.
pub mod calibrate;
/// Torque capacity of a dry plate clutch and its effective friction radius.
pub mod capacity;
/// Clamp load: static spring load from compression, centrifugal load from the levers.
pub mod clamp;
/// A logged pass: launch, lockup, slip, clutch torque, slip power and energy, tyre spin.
pub mod datalog;
/// Facing materials: friction coefficients, temperature limits, friction surfaces.
pub mod friction;
/// Launch preview: engine, slipping clutch, driveline and tyres simulated through a launch.
pub mod launch;
/// The launch preview request (as the API receives it), its validation and its answer.
pub mod launch_request;
/// The counterweight that meets a lockup-time target or a slip-energy limit in the launch preview.
pub mod launch_target;
/// Capacity against engine speed: the curve, the lockup speed, the launch ratio.
pub mod lockup;
/// The data-log analysis request (CSV text, column mapping) and its answer.
pub mod log_analysis;
/// Reading a logger's CSV export: delimiter, header, units line, decimal comma, blanks.
pub mod logfile;
/// Quantity kinds (internal and display units) and the one table of limits.
pub mod quantity;
/// Search for adjuster turns and counterweight that meet lockup and launch targets.
pub mod recommend;
/// Ordinary least-squares straight line, numerically careful.
pub mod regression;
/// The capacity calculation report, in the request's units, with warnings.
pub mod report;
/// The capacity calculation request (as received by the API) and its validation.
pub mod request;
/// Savitzky–Golay smoothing and derivatives.
pub mod savgol;
/// Slip energy during engagement and the temperature rise it causes.
pub mod slip;
/// A spring set across its bench tests: rates, spread, sag.
pub mod spring_health;
/// Coil springs: bench rate, set spread, sag between tests, rate from wire geometry.
pub mod springs;
/// Adjuster-screw threads: axial travel per turn from TPI or metric pitch.
pub mod threads;
/// Engine torque curve from dyno points, with linear interpolation.
pub mod torque_curve;
/// Unit systems (imperial / metric), exact conversion factors and labels.
pub mod units;
/// Disc wear from cover-height measurements and the shim stack.
pub mod wear;

pub use recommend::recommend;
pub use report::capacity;

/// A value the caller gave is missing, out of range or inconsistent.
///
/// `field` is the JSON path of the offending value (`"springs.rate"`,
/// `"engine.torque_curve[2]"`, `"measurements[1].cover_height"`), so the web layer can show the
/// message beside the right input.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error, serde::Serialize)]
#[error("{field}: {message}")]
pub struct InputError {
    /// JSON path of the offending value.
    pub field: String,
    /// Plain-English explanation for the user.
    pub message: String,
}

impl InputError {
    /// An error about `field`.
    pub fn new(field: impl Into<String>, message: impl Into<String>) -> Self {
        Self {
            field: field.into(),
            message: message.into(),
        }
    }
}

/// `value` if it is a finite number, else an error naming `field`.
pub fn require_finite(field: &str, value: f64) -> Result<f64, InputError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(InputError::new(field, "must be a finite number"))
    }
}

/// `value` if it is finite and `min <= value <= max`, else an error naming `field`.
pub fn require_range(field: &str, value: f64, min: f64, max: f64) -> Result<f64, InputError> {
    require_finite(field, value)?;
    if value < min || value > max {
        return Err(InputError::new(
            field,
            format!("must be between {min} and {max} (got {value})"),
        ));
    }
    Ok(value)
}

/// `value` if it is finite and `0 < value <= max`, else an error naming `field`.
pub fn require_positive(field: &str, value: f64, max: f64) -> Result<f64, InputError> {
    require_finite(field, value)?;
    if value <= 0.0 || value > max {
        return Err(InputError::new(
            field,
            format!("must be greater than 0 and at most {max} (got {value})"),
        ));
    }
    Ok(value)
}

#[cfg(test)]
mod api_tests;
