//! The server-rendered pages, by area; each page struct sits above its handler, its template
//! under `templates/<area>/`.

/// Admin: the shop's settings, staff accounts, backups and export.
pub mod admin;
/// A clutch build: its page and entry forms, its lists, the wear panel, tuning and launch preview.
pub mod builds;
/// SVG charts drawn by the pages and the sheet.
pub mod chart;
/// The counter: the front page with the work-due list.
pub mod counter;
/// Customers and their cars.
pub mod customers;
/// The audit history.
pub mod history;
/// A record's form inputs as its field declarations describe them.
pub mod input;
/// The frame every page shares: the viewer, the shop's units and zone.
pub mod layout;
/// Sign-in, sign-out and the sign-in throttle.
pub mod login;
/// A pass's page, its data-log upload and column mapping.
pub mod passes;
/// The form pages of customers, cars and builds: new, edit and save, one implementation.
pub mod record_form;
/// The setup sheet and the customer link.
pub mod sheets;
/// Numbers, units and words as the pages show them.
pub mod show;
