//! Admin pages.

/// Backups and export downloads.
pub mod backup;
/// The shop's settings and the staff accounts.
pub mod settings;
