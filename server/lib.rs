//! Lockpoint: clutch build records, engineering and setup sheets for a drag-racing clutch shop.
//!
//! Dependencies run one way: `web` -> `db` -> `records`/`clutch`, and `web` -> `clutch`.

/// Password hashing, random tokens and their stored hashes.
pub mod auth;
/// Backups, restore, export and import of the database, and the server's database lock.
pub mod backup;
/// What each command of the binary does.
pub mod cli;
/// The command line and its environment variables.
pub mod config;
/// SQLite access, one module per table or aggregate.
pub mod db;
/// The invented demo shop loaded by `serve --demo`.
pub mod demo;
/// The web layer's error type (HTML pages and JSON).
pub mod error;
/// The spreadsheet import: reading a CSV file, its mapping, units and dates, each row checked as the forms check it (no IO).
pub mod import;
/// A stored build as engineering inputs (records -> clutch requests).
pub mod model;
/// Progress of long command-line work on a terminal (stderr, only when it is a terminal).
pub mod progress;
/// Shop records as checked inputs, read from forms or JSON (no IO).
pub mod records;
/// The setup sheet: its stored inputs and the figures it shows (no IO).
pub mod sheet;
/// The counter's work-due list from the per-build status kept current by every write.
pub mod status;
/// Pages, forms, the JSON API and the router.
pub mod web;

pub use web::{AppState, app};
