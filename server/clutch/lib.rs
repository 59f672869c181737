//! Clutch engineering: pure calculations, no IO.
//!
//! Everything here takes plain values in stated units and returns plain values, so it can be
//! checked against handbook examples directly and reused by the API, the pages and the setup
//! sheet. Inside the module internal units are mm, N, N/mm, N·m, rpm and grams; conversion to
//! and from the shop's display units happens only in [`units`] and at the request edges.

/// Friction (and lever gain) calibrated from passes with an observed lockup.
pub mod calibration;
/// The clutch at rest and turning: springs, clamp, friction, capacity, lockup, recommendation.
pub mod capacity;
/// A logger's CSV file read and analysed: launch, lockup, slip, clutch torque, slip energy.
pub mod datalog;
/// Friction against heat: launch temperatures through a day and μ against temperature.
pub mod heat;
/// Launch preview: engine, slipping clutch, driveline and tires simulated through a launch.
pub mod launch;
/// Quantity kinds (internal and display units) and the one table of limits.
pub mod quantity;
/// The reference cases of `docs/engineering.md` the tests and benchmarks start from.
#[cfg(any(test, feature = "reference"))]
pub mod reference;
/// Ordinary least-squares straight line, numerically careful.
pub mod regression;
/// Unit systems (imperial / metric), exact conversion factors and labels.
pub mod units;
/// Disc wear from cover-height measurements and the shim stack.
pub mod wear;

use std::fmt::Display;

/// A value the caller gave is missing, out of range or inconsistent.
///
/// `field` is the JSON path of the offending value (`"springs.rate"`,
/// `"engine.torque_curve[2]"`, `"measurements[1].cover_height"`), so the web layer can show the
/// message beside the right input.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error, serde::Serialize)]
#[cfg_attr(feature = "openapi", derive(utoipa::ToSchema))]
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

/// The name of a value inside a list item, `list[index].name` (`list[index]` when `name` is
/// empty), for the checks below: written out only when one fails.
#[derive(Debug, Clone, Copy)]
pub struct ItemField<'a> {
    pub list: &'a str,
    pub index: usize,
    pub name: &'a str,
}

impl Display for ItemField<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}[{}]", self.list, self.index)?;
        if self.name.is_empty() {
            Ok(())
        } else {
            write!(f, ".{}", self.name)
        }
    }
}

/// `value` if it is a finite number, else an error naming `field`. Field names are
/// `impl Display` so that a list's checks can name an item (`format_args!("{list}[{i}]")`)
/// without writing the name out unless it fails.
pub fn require_finite(field: impl Display + Copy, value: f64) -> Result<f64, InputError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(InputError::new(
            field.to_string(),
            "must be a finite number",
        ))
    }
}

/// `value` if it is finite and `min <= value <= max`, else an error naming `field`.
pub fn require_range(
    field: impl Display + Copy,
    value: f64,
    min: f64,
    max: f64,
) -> Result<f64, InputError> {
    require_finite(field, value)?;
    if value < min || value > max {
        return Err(InputError::new(
            field.to_string(),
            format!("must be between {min} and {max} (got {value})"),
        ));
    }
    Ok(value)
}

/// `value` if it is finite and `0 < value <= max`, else an error naming `field`.
pub fn require_positive(
    field: impl Display + Copy,
    value: f64,
    max: f64,
) -> Result<f64, InputError> {
    require_finite(field, value)?;
    if value <= 0.0 || value > max {
        return Err(InputError::new(
            field.to_string(),
            format!("must be greater than 0 and at most {max} (got {value})"),
        ));
    }
    Ok(value)
}

#[cfg(test)]
mod api_tests;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_list_items_value_is_named_by_its_path_when_a_check_fails() {
        let at = |index, name| ItemField {
            list: "passes",
            index,
            name,
        };
        assert_eq!(at(3, "lockup_rpm").to_string(), "passes[3].lockup_rpm");
        assert_eq!(at(0, "").to_string(), "passes[0]");
        assert_eq!(require_positive(at(2, "et_s"), 9.8, 60.0).unwrap(), 9.8);
        let refused = require_range(at(4, "lockup_rpm"), 99_000.0, 500.0, 20_000.0).unwrap_err();
        assert_eq!(refused.field, "passes[4].lockup_rpm");
        assert_eq!(
            require_finite(format_args!("springs[{}]", 1), f64::NAN)
                .unwrap_err()
                .field,
            "springs[1]"
        );
    }
}
