//! The kept slip energy of each pass's launch preview (`pass_energies`, migration 0028): derived,
//! written by `status::work_out` in the writing transaction, read with the build's dossier.

use sqlx::SqliteConnection;

use crate::records::stored::KeptEnergy;

/// The kept energies of a build's passes, by build id (also read by `db::read`).
pub(super) const FOR_BUILD: &str = "SELECT e.pass_id, e.inputs, e.energy_j, e.note
     FROM pass_energies e JOIN passes p ON p.id = e.pass_id WHERE p.build_id = ?";

/// The kept energies of a build's passes.
pub async fn for_build(
    conn: &mut SqliteConnection,
    build_id: i64,
) -> sqlx::Result<Vec<KeptEnergy>> {
    sqlx::query_as(FOR_BUILD)
        .bind(build_id)
        .fetch_all(conn)
        .await
}

/// Replaces a build's kept energies with `energies`.
pub async fn replace(
    conn: &mut SqliteConnection,
    build_id: i64,
    energies: &[KeptEnergy],
) -> sqlx::Result<()> {
    sqlx::query(
        "DELETE FROM pass_energies WHERE pass_id IN (SELECT id FROM passes WHERE build_id = ?)",
    )
    .bind(build_id)
    .execute(&mut *conn)
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
