//! The counter's work-due list from a per-build status kept current by every write
//! (`build_status`, migration 0009), so the counter reads a few rows whatever the history's size.
//!
//! The status of a build is worked out here from its full history ([`of_history`], the same wear
//! analysis and spring review `model::due::work_due` uses); the triggers mark a build stale when a
//! record it depends on is written, and every write path calls [`refresh_stale`] before it
//! commits. [`work_due`] reads the listed rows and gives exactly `model::due::work_due`'s answer (the
//! property test in `tests/integration/status.rs` compares the two on random histories).

use crate::records::measure::SpringRate;
use sqlx::SqliteConnection;

use crate::db;
use crate::db::status::{BuildStatus, Listed};
use crate::model::as_of::{BuildAsOf, bench_review};
use crate::model::calibration::launch_fits;
use crate::model::due::{Due, DueReason, soonest};
use crate::model::energy::{energy_forecast, pass_energies};
use crate::model::launch::launch_ready;
use crate::model::wear::wear_request;
use crate::records::build::BuildInput;
use crate::records::settings::SettingsInput;
use crate::records::stored::Height;
use crate::records::stored::{BenchTest, KeptEnergy, KeptLaunchFit};
use clutch::wear::{self, WearStatus};

/// A build's status from its whole history: its cover heights (recorded order) and bench tests
/// (oldest first), with the shop's limits. Independent of the "due within" window.
pub fn of_history(
    build: &BuildInput,
    heights: &[Height],
    bench: &[BenchTest],
    settings: &SettingsInput,
) -> BuildStatus {
    let review = bench_review(bench, build, settings);
    let tested = review
        .as_ref()
        .and_then(|r| r.last().map(|t| t.spread.mean));
    let rate = tested
        .map(SpringRate::from_n_per_mm)
        .or(build.spring_rate_n_per_mm);
    let mut s = BuildStatus::default();
    if let Ok(req) = wear_request(build, settings, rate, heights)
        && let Ok(report) = wear::analyze(&req)
    {
        match report.status {
            WearStatus::DiscDue => s.wear = Some("disc_due".into()),
            WearStatus::ShimDue => {
                s.wear = Some("shim_due".into());
                s.next_shim_mm = report.next_shim;
            }
            WearStatus::Ok => {
                s.wear = Some("ok".into());
                // The nearer forecast, the shim's on a tie (as `model::due::work_due` picks it).
                if let Some((passes, disc)) = soonest(&report) {
                    s.soon_passes = Some(passes);
                    s.soon_disc = disc;
                }
            }
        }
    }
    if let Some(last) = review.as_ref().and_then(|r| r.last())
        && last.flagged()
    {
        s.springs_flagged = true;
        s.spread_pct = Some(last.spread.spread_pct);
        s.out_of_tolerance = last.spread.out_of_tolerance;
        s.sagged = last.sagged.len() as i64;
        s.low_springs = last.low.len() as i64;
    }
    s
}

/// The lines of the due list one build's status gives at `window` passes, wear first.
pub fn lines(row: &Listed, status: &BuildStatus, window: i64) -> Vec<Due> {
    let line = |reason| Due {
        build_id: row.build_id,
        build_label: row.build_label.clone(),
        owner: row.owner.clone(),
        reason,
    };
    let mut out = Vec::new();
    let wear = match status.wear.as_deref() {
        Some("disc_due") => Some(DueReason::DiscDue),
        Some("shim_due") => Some(DueReason::ShimDue(status.next_shim_mm)),
        _ => status
            .soon_passes
            .filter(|p| *p <= window as f64)
            .map(|passes| DueReason::Soon {
                passes,
                disc: status.soon_disc,
            }),
    };
    out.extend(wear.map(line));
    if status.springs_flagged {
        out.push(line(DueReason::Springs {
            spread_pct: status.spread_pct.unwrap_or(0.0),
            out_of_tolerance: status.out_of_tolerance,
            sagged: status.sagged.max(0) as usize,
            low: status.low_springs.max(0) as usize,
        }));
    }
    out
}

/// What a build keeps beside its status, each pass's figures that take launch simulations
/// (empty without the car's launch fields).
#[derive(Debug, Default)]
pub struct KeptFigures {
    /// The whole-launch friction of its passes (`model::calibration::launch_fits`).
    pub fits: Vec<KeptLaunchFit>,
    /// The launch preview's slip energy of its passes (`model::energy::pass_energies`).
    pub energies: Vec<KeptEnergy>,
}

/// Works out one build's status from its stored history (None when there is no such build),
/// with its forecast by slip energy (`model::energy::energy_forecast`, launch previews: the
/// reason it is kept rather than worked out per counter view), and what it keeps of its
/// passes for the same reason ([`KeptFigures`]).
pub async fn work_out(
    conn: &mut SqliteConnection,
    build_id: i64,
    settings: &SettingsInput,
) -> sqlx::Result<Option<(BuildStatus, KeptFigures)>> {
    let Some(build) = db::builds::any_by_id(conn, build_id).await? else {
        return Ok(None);
    };
    let heights = db::heights::for_build(conn, build_id).await?;
    let bench = db::bench::for_build(conn, build_id).await?;
    let mut status = of_history(&build.data, &heights, &bench, settings);
    // The forecast by energy and the whole-launch fits run the launch model: without the car's
    // launch fields there is neither, and the rest of the build need not be read (a pass written
    // at a counter without them costs only the wear and springs above).
    let car = db::cars::by_id(conn, build.car_id).await?;
    if !car.is_some_and(|c| launch_ready(&c.data)) {
        return Ok(Some((status, KeptFigures::default())));
    }
    // A build of a deleted customer is listed nowhere: its wear and springs are enough.
    if db::builds::by_id(conn, build_id).await?.is_none() {
        return Ok(Some((status, KeptFigures::default())));
    }
    let Some(mut d) = db::dossier::with_parts(conn, build, heights, bench).await? else {
        return Ok(Some((status, KeptFigures::default())));
    };
    let fits = launch_fits(&d, settings);
    // The forecast's friction in force reads the fits just worked out, and its passes' slip
    // energies the ones just kept.
    d.launch_fits.clone_from(&fits);
    let energies = pass_energies(&d, settings);
    d.pass_energies.clone_from(&energies);
    if let Ok(e) = energy_forecast(&d, &BuildAsOf::now(&d, settings)) {
        status.energy_shim_passes = e.passes_to_shim_due;
        status.energy_disc_passes = e.passes_to_disc_due;
    }
    Ok(Some((status, KeptFigures { fits, energies })))
}

/// Works out and stores every build marked stale by this transaction's writes; returns how many.
/// Every write path calls it before committing.
pub async fn refresh_stale(conn: &mut SqliteConnection) -> sqlx::Result<usize> {
    let ids = db::status::stale(conn).await?;
    refresh(conn, &ids).await
}

/// Works out and stores the builds `ids`; returns how many.
async fn refresh(conn: &mut SqliteConnection, ids: &[i64]) -> sqlx::Result<usize> {
    if ids.is_empty() {
        return Ok(0);
    }
    let settings = db::settings::get(conn).await?;
    for &id in ids {
        if let Some((status, kept)) = work_out(conn, id, &settings).await? {
            db::status::store(conn, id, &status).await?;
            db::kept::replace(conn, id, &kept.fits, &kept.energies).await?;
        }
    }
    Ok(ids.len())
}

/// Gives every build a status row and works out the stale ones, and fills the search index
/// when it does not hold every customer: for a database that was loaded
/// with the triggers set aside, or that has just been migrated. Merges the search index into
/// one segment ([`db::search::compact`]). Returns how many were worked out.
pub async fn ensure(conn: &mut SqliteConnection) -> sqlx::Result<usize> {
    if db::search::in_step(conn).await? {
        db::search::compact(conn).await?;
    } else {
        db::search::rebuild(conn).await?;
    }
    db::status::mark_missing(conn).await?;
    // After an upgrade that changes what is kept (such as migration 0027) every launch-ready
    // build is worked out here, launch simulations included: say so before the wait.
    let ids = db::status::stale(conn).await?;
    if !ids.is_empty() {
        tracing::info!(
            builds = ids.len(),
            "working out builds' status and kept launch figures"
        );
    }
    refresh(conn, &ids).await
}

/// Runs until the server stops: once a day merges the search index into one segment again
/// ([`db::search::compact`]), as the day's new and changed customers add segments to it. One
/// short write, off the request path; a failure is logged and tried again the next day.
pub async fn keep_search_compact(pool: sqlx::SqlitePool) {
    const DAY: std::time::Duration = std::time::Duration::from_secs(24 * 60 * 60);
    loop {
        tokio::time::sleep(DAY).await;
        let merged = match pool.acquire().await {
            Ok(mut conn) => db::search::compact(&mut conn).await,
            Err(e) => Err(e),
        };
        if let Err(e) = merged {
            tracing::warn!(error = %e, "merging the search index failed");
        }
    }
}

/// Works out every derived table again from the records: every build's status and the search
/// index. For `restore`, and for `import` to call once its rows are in (inside its transaction).
pub async fn rebuild_derived(conn: &mut SqliteConnection) -> sqlx::Result<usize> {
    db::search::rebuild(conn).await?;
    db::status::mark_all_stale(conn).await?;
    refresh_stale(conn).await
}

/// The work due across the shop, most urgent first: exactly `model::due::work_due` on the full
/// history, read from the kept status. A row still marked stale (a write path that did not
/// refresh) is worked out here from its history, so the list is right either way.
pub async fn work_due(
    conn: &mut SqliteConnection,
    settings: &SettingsInput,
) -> sqlx::Result<Vec<Due>> {
    let window = settings.due_within_passes;
    let rows = db::status::listed(conn, window).await?;
    let mut out = Vec::new();
    for row in &rows {
        if row.stale {
            if let Some((status, _)) = work_out(conn, row.build_id, settings).await? {
                out.extend(lines(row, &status, window));
            }
        } else {
            out.extend(lines(row, &row.status, window));
        }
    }
    out.sort_by(|a, b| a.reason.urgency().total_cmp(&b.reason.urgency()));
    Ok(out)
}
