//! A pass's data log: the logger's CSV file read into columns, the analysis of a logged pass,
//! its smoothing, and the analysis API (request and answer).

/// A logged pass analysed: launch, lockup, slip, clutch torque, slip power and energy, tire spin.
pub mod analysis;
/// Reading a logger's CSV export: delimiter, header, units line, decimal comma, blanks.
pub mod file;
/// The data-log analysis request (CSV text, column mapping) and its answer.
pub mod request;
/// Which column is which: a first guess from the header names, and choices that cannot be right.
pub mod roles;
/// Savitzky–Golay smoothing and derivatives.
pub mod savgol;
/// The stretch of a log a chart opens on: the launch to the lockup, a second either side.
pub mod span;
/// A long trace thinned to a bounded number of points, every event kept.
pub mod thin;
