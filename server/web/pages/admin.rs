//! Admin pages.

/// Backups and export downloads.
pub mod backup;
/// Import a spreadsheet: customers, cars and builds from a CSV file.
pub mod import;
/// The shop's settings and the staff accounts.
pub mod settings;
