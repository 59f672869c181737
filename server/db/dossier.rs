//! Everything recorded on one build, loaded together for its page, its sheet and the API.

use sqlx::SqliteConnection;

use super::bench::BenchTest;
use super::builds::{Build, BuildOwner};
use super::cars::Car;
use super::heights::Height;
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
    /// Newest first.
    pub passes: Vec<Pass>,
}

/// The build and all its records, or `None` when there is no such (live) build.
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
        passes: super::passes::for_build(conn, build_id).await?,
        build,
    }))
}
