//! Everything recorded on one build, loaded together for its page, its sheet and the API.

use sqlx::SqliteConnection;

use super::bench::BenchTest;
use super::builds::{Build, BuildOwner};
use super::cars::Car;
use super::heights::Height;
use super::pass_logs::LogSummary;
use super::passes::Pass;
use super::setups::Setup;

pub struct Dossier {
    pub build: Build,
    pub owner: BuildOwner,
    pub car: Car,
    /// Oldest first; the last one is in force.
    pub setups: Vec<Setup>,
    /// Oldest first.
    pub bench: Vec<BenchTest>,
    /// In pass order.
    pub heights: Vec<Height>,
    /// The newest passes, newest first: at most [`PASSES_LOADED`] (what a calibration uses).
    pub passes: Vec<Pass>,
    /// How many passes the build has in all.
    pub passes_total: i64,
    /// The data logs of those passes (figures only; the files stay in the table).
    pub logs: Vec<LogSummary>,
}

impl Dossier {
    /// The data log of pass `pass_id`, if it has one.
    pub fn log_of(&self, pass_id: i64) -> Option<&LogSummary> {
        self.logs.iter().find(|l| l.pass_id == pass_id)
    }
}

/// The most passes loaded with a build: the most a calibration uses.
pub const PASSES_LOADED: usize = clutch::quantity::limits::CALIBRATION_PASSES_MAX;

/// The build and all its records (its newest passes), or `None` when there is no such (live) build.
pub async fn load(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Option<Dossier>> {
    let Some(build) = super::builds::by_id(conn, build_id).await? else {
        return Ok(None);
    };
    let owner = super::builds::owner(conn, build_id).await?;
    let Some(car) = super::cars::by_id(conn, build.car_id).await? else {
        return Ok(None);
    };
    Ok(Some(Dossier {
        owner,
        car,
        setups: super::setups::for_build(conn, build_id).await?,
        bench: super::bench::for_build(conn, build_id).await?,
        heights: super::heights::for_build(conn, build_id).await?,
        passes: super::passes::page_for_build(conn, build_id, 0, PASSES_LOADED as i64).await?,
        passes_total: super::passes::count_for_build(conn, build_id).await?,
        logs: super::pass_logs::for_build(conn, build_id).await?,
        build,
    }))
}
