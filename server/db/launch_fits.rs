//! The kept whole-launch friction of each pass (`pass_launch_fits`, migration 0025): derived,
//! written by `status::work_out` in the writing transaction, read with the build's dossier.

use sqlx::SqliteConnection;

use crate::records::stored::KeptLaunchFit;

/// The kept fits of a build's passes, by build id (also read by `db::read`).
pub(super) const FOR_BUILD: &str = "SELECT f.pass_id, f.inputs, f.mu, f.lockup_rpm, f.note
     FROM pass_launch_fits f JOIN passes p ON p.id = f.pass_id WHERE p.build_id = ?";

/// The kept fits of a build's passes.
pub async fn for_build(
    conn: &mut SqliteConnection,
    build_id: i64,
) -> sqlx::Result<Vec<KeptLaunchFit>> {
    sqlx::query_as(FOR_BUILD)
        .bind(build_id)
        .fetch_all(conn)
        .await
}

/// Replaces a build's kept fits with `fits` (those of its passes the whole launch can read).
pub async fn replace(
    conn: &mut SqliteConnection,
    build_id: i64,
    fits: &[KeptLaunchFit],
) -> sqlx::Result<()> {
    sqlx::query(
        "DELETE FROM pass_launch_fits
         WHERE pass_id IN (SELECT id FROM passes WHERE build_id = ?)",
    )
    .bind(build_id)
    .execute(&mut *conn)
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
    Ok(())
}
