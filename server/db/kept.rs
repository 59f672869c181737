//! The figures kept for each pass of a build because they take launch simulations: its
//! whole-launch friction (`pass_launch_fits`, migration 0025) and its launch preview's slip
//! energy (`pass_energies`, migration 0028). Derived: written by `status::work_out` in the
//! writing transaction, read with the build's dossier, each row valid only while its
//! fingerprint matches the request it answered.

use sqlx::SqliteConnection;
use sqlx::sqlite::SqliteRow;

use crate::records::stored::{KeptEnergy, KeptLaunchFit};

/// The kept fits of a build's passes, by build id (also read by `db::read`).
pub(super) const FITS_FOR_BUILD: &str = "SELECT f.pass_id, f.inputs, f.mu, f.lockup_rpm, f.note
     FROM pass_launch_fits f JOIN passes p ON p.id = f.pass_id WHERE p.build_id = ?";

/// The kept energies of a build's passes, by build id (also read by `db::read`).
pub(super) const ENERGIES_FOR_BUILD: &str = "SELECT e.pass_id, e.inputs, e.energy_j, e.note
     FROM pass_energies e JOIN passes p ON p.id = e.pass_id WHERE p.build_id = ?";

/// The rows `sql` keeps for a build's passes.
async fn for_build<T>(
    conn: &mut SqliteConnection,
    sql: &'static str,
    build_id: i64,
) -> sqlx::Result<Vec<T>>
where
    T: for<'r> sqlx::FromRow<'r, SqliteRow> + Send + Unpin,
{
    sqlx::query_as(sql).bind(build_id).fetch_all(conn).await
}

/// The kept fits of a build's passes.
pub async fn fits(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Vec<KeptLaunchFit>> {
    for_build(conn, FITS_FOR_BUILD, build_id).await
}

/// The kept energies of a build's passes.
pub async fn energies(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Vec<KeptEnergy>> {
    for_build(conn, ENERGIES_FOR_BUILD, build_id).await
}

/// Takes out what one table keeps for a build's passes (`sql`: its `DELETE`, by build id).
async fn clear(conn: &mut SqliteConnection, sql: &'static str, build_id: i64) -> sqlx::Result<()> {
    sqlx::query(sql).bind(build_id).execute(conn).await?;
    Ok(())
}

/// Replaces a build's kept fits with `fits` (those of its passes the whole launch can read) and
/// its kept energies with `energies` (those of its passes whose launch preview has a request).
pub async fn replace(
    conn: &mut SqliteConnection,
    build_id: i64,
    fits: &[KeptLaunchFit],
    energies: &[KeptEnergy],
) -> sqlx::Result<()> {
    clear(
        conn,
        "DELETE FROM pass_launch_fits WHERE pass_id IN (SELECT id FROM passes WHERE build_id = ?)",
        build_id,
    )
    .await?;
    for f in fits {
        sqlx::query(
            "INSERT INTO pass_launch_fits (pass_id, inputs, mu, lockup_rpm, note)
             VALUES (?, ?, ?, ?, ?)",
        )
        .bind(f.pass_id)
        .bind(f.inputs)
        .bind(f.mu)
        .bind(f.lockup_rpm)
        .bind(&f.note)
        .execute(&mut *conn)
        .await?;
    }
    clear(
        conn,
        "DELETE FROM pass_energies WHERE pass_id IN (SELECT id FROM passes WHERE build_id = ?)",
        build_id,
    )
    .await?;
    for e in energies {
        sqlx::query(
            "INSERT INTO pass_energies (pass_id, inputs, energy_j, note) VALUES (?, ?, ?, ?)",
        )
        .bind(e.pass_id)
        .bind(e.inputs)
        .bind(e.energy_j)
        .bind(&e.note)
        .execute(&mut *conn)
        .await?;
    }
    Ok(())
}
