//! Everything recorded on one build, loaded together for its page, its sheet and the API.

use sqlx::SqliteConnection;

use crate::records::stored::{BenchTest, Build, Dossier, Height};

/// The most passes loaded with a build: the most a calibration uses.
pub const PASSES_LOADED: usize = clutch::quantity::limits::CALIBRATION_PASSES_MAX;

/// The build and all its records (its newest passes), or `None` when there is no such (live) build.
pub async fn load(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Option<Dossier>> {
    let Some(build) = super::builds::by_id(conn, build_id).await? else {
        return Ok(None);
    };
    let heights = super::heights::for_build(conn, build_id).await?;
    let bench = super::bench::for_build(conn, build_id).await?;
    with_parts(conn, build, heights, bench).await
}

/// The dossier of a build whose cover heights and bench tests are already read (the work-due
/// status reads those first), or `None` when its car is gone.
pub async fn with_parts(
    conn: &mut SqliteConnection,
    build: Build,
    heights: Vec<Height>,
    bench: Vec<BenchTest>,
) -> sqlx::Result<Option<Dossier>> {
    let build_id = build.id;
    let Some((car, owner)) = super::cars::with_owner(conn, build.car_id).await? else {
        return Ok(None);
    };
    let passes = super::passes::TABLE
        .page(conn, build_id, 0, PASSES_LOADED as i64)
        .await?;
    // Counted only when the newest passes fill the page: fewer are all there are.
    let passes_total = if passes.len() < PASSES_LOADED {
        passes.len() as i64
    } else {
        super::passes::TABLE.count(conn, build_id).await?
    };
    Ok(Some(Dossier {
        owner,
        car,
        setups: super::setups::for_build(conn, build_id).await?,
        bench,
        heights,
        passes,
        passes_total,
        logs: super::pass_logs::for_build(conn, build_id).await?,
        launch_fits: super::kept::fits(conn, build_id).await?,
        pass_energies: super::kept::energies(conn, build_id).await?,
        build,
    }))
}
