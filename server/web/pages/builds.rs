//! A clutch build's pages.

/// The build's entry forms (setup, bench test, cover height, pass) and how they save.
pub mod entries;
/// The launch preview columns of the tuning page.
pub mod launch;
/// Every pass and every cover height of a build, paged.
pub mod lists;
/// The build's page and its edit form.
pub mod show;
/// Capacity and tuning: the chart, trying settings, the recommendation (`/builds/{id}/tune`).
pub mod tune;
/// The wear panel.
pub mod wear;
