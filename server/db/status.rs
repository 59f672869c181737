//! The kept-current work-due status of each build (`build_status`, migration 0009): read by the
//! counter, written by `status::refresh_stale` inside the writing transaction (`web::Write::commit` runs it).

use crate::records::stored::BuildOwner;
use sqlx::{FromRow, SqliteConnection};

/// A build's work-due status, as stored: independent of the shop's "due within" window.
#[derive(Debug, Clone, Default, PartialEq, FromRow)]
pub struct BuildStatus {
    /// `disc_due`, `shim_due`, `ok`, or None when wear cannot be worked out.
    pub wear: Option<String>,
    pub next_shim_mm: Option<f64>,
    /// Wear `ok`: the nearer forecast (passes) and whether it is the disc.
    pub soon_passes: Option<f64>,
    pub soon_disc: bool,
    pub springs_flagged: bool,
    pub spread_pct: Option<f64>,
    pub out_of_tolerance: bool,
    pub sagged: i64,
    /// Springs a first bench test found low on load against their set.
    pub low_springs: i64,
    /// The forecast by slip energy (`model::energy::energy_forecast`): passes to the next shim
    /// and to the disc at the current setting's modelled energy per pass.
    pub energy_shim_passes: Option<f64>,
    pub energy_disc_passes: Option<f64>,
}

impl BuildStatus {
    /// Listed whatever the window: a disc or shim due, or the springs flagged.
    pub fn urgent(&self) -> bool {
        matches!(self.wear.as_deref(), Some("disc_due" | "shim_due")) || self.springs_flagged
    }
}

/// A listed status row of an active build of a live customer, with who it belongs to.
#[derive(Debug, Clone, FromRow)]
pub struct Listed {
    pub build_id: i64,
    pub build_label: String,
    #[sqlx(flatten)]
    pub owner: BuildOwner,
    /// Written to since it was last worked out: the caller works it out from the history.
    pub stale: bool,
    #[sqlx(flatten)]
    pub status: BuildStatus,
}

/// The counter's query: status rows listed at `window` passes (urgent, stale, or a forecast
/// within the window) of active builds of live customers, by build id. `CROSS JOIN` keeps
/// SQLite from driving the query from `builds` (a scan of every build): the listed status rows
/// come first, through the indexes of the OR, then their builds and owners by primary key.
pub const LISTED_SQL: &str = "SELECT s.build_id, b.label AS build_label, c.id AS customer_id,
        c.name AS customer_name, c.phone AS customer_phone, k.id AS car_id,
        k.description AS car_description,
        s.stale, s.wear, s.next_shim_mm, s.soon_passes, s.soon_disc, s.springs_flagged,
        s.spread_pct, s.out_of_tolerance, s.sagged, s.low_springs, s.energy_shim_passes,
        s.energy_disc_passes
     FROM build_status s CROSS JOIN builds b ON b.id = s.build_id
     CROSS JOIN cars k ON k.id = b.car_id CROSS JOIN customers c ON c.id = k.customer_id
     WHERE (s.urgent = 1 OR s.soon_passes <= ?) AND b.status = 'active' AND c.deleted_at IS NULL";

pub async fn listed(conn: &mut SqliteConnection, window: i64) -> sqlx::Result<Vec<Listed>> {
    sqlx::query_as(LISTED_SQL)
        .bind(window)
        .fetch_all(conn)
        .await
}

/// Builds whose status was marked stale by a write (found through the `urgent` index).
pub async fn stale(conn: &mut SqliteConnection) -> sqlx::Result<Vec<i64>> {
    sqlx::query_scalar(
        "SELECT build_id FROM build_status WHERE urgent = 1 AND stale = 1 ORDER BY build_id",
    )
    .fetch_all(conn)
    .await
}

/// Marks every build stale, adding a row for any build without one (a database loaded with the
/// triggers set aside, such as an import). Returns how many rows were added.
pub async fn mark_all_stale(conn: &mut SqliteConnection) -> sqlx::Result<u64> {
    sqlx::query("UPDATE build_status SET stale = 1, urgent = 1")
        .execute(&mut *conn)
        .await?;
    mark_missing(conn).await
}

/// Adds a stale row for every build without one; returns how many were added.
pub async fn mark_missing(conn: &mut SqliteConnection) -> sqlx::Result<u64> {
    let done = sqlx::query(
        "INSERT INTO build_status (build_id)
         SELECT id FROM builds WHERE id NOT IN (SELECT build_id FROM build_status)",
    )
    .execute(conn)
    .await?;
    Ok(done.rows_affected())
}

/// Stores a build's worked-out status and clears its stale mark.
pub async fn store(
    conn: &mut SqliteConnection,
    build_id: i64,
    s: &BuildStatus,
) -> sqlx::Result<()> {
    sqlx::query(
        "INSERT INTO build_status (build_id, stale, wear, next_shim_mm, soon_passes, soon_disc,
             springs_flagged, spread_pct, out_of_tolerance, sagged, urgent, low_springs,
             energy_shim_passes, energy_disc_passes)
         VALUES (?1, 0, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13)
         ON CONFLICT (build_id) DO UPDATE SET stale = 0, wear = ?2, next_shim_mm = ?3,
             soon_passes = ?4, soon_disc = ?5, springs_flagged = ?6, spread_pct = ?7,
             out_of_tolerance = ?8, sagged = ?9, urgent = ?10, low_springs = ?11,
             energy_shim_passes = ?12, energy_disc_passes = ?13",
    )
    .bind(build_id)
    .bind(&s.wear)
    .bind(s.next_shim_mm)
    .bind(s.soon_passes)
    .bind(s.soon_disc)
    .bind(s.springs_flagged)
    .bind(s.spread_pct)
    .bind(s.out_of_tolerance)
    .bind(s.sagged)
    .bind(s.urgent())
    .bind(s.low_springs)
    .bind(s.energy_shim_passes)
    .bind(s.energy_disc_passes)
    .execute(conn)
    .await?;
    Ok(())
}

/// The kept forecast by slip energy of `build_ids`: (build, passes to the next shim, passes to
/// the disc), for the builds that have a status row.
pub async fn energy_forecasts(
    conn: &mut SqliteConnection,
    build_ids: &[i64],
) -> sqlx::Result<Vec<(i64, Option<f64>, Option<f64>)>> {
    let ids = format!(
        "[{}]",
        build_ids
            .iter()
            .map(i64::to_string)
            .collect::<Vec<_>>()
            .join(",")
    );
    sqlx::query_as(
        "SELECT build_id, energy_shim_passes, energy_disc_passes FROM build_status
         WHERE build_id IN (SELECT value FROM json_each(?))",
    )
    .bind(ids)
    .fetch_all(conn)
    .await
}
