//! The stored backup schedule (Settings → Backups): one row at most.

use sqlx::SqliteConnection;

use crate::backup::plan::Stored;

/// The stored schedule; the defaults (no folder, every day, 14 kept) while none was saved.
pub async fn get(conn: &mut SqliteConnection) -> sqlx::Result<Stored> {
    Ok(
        sqlx::query_as("SELECT dir, every_s, keep FROM backup_schedule WHERE id = 1")
            .fetch_optional(conn)
            .await?
            .unwrap_or_default(),
    )
}

/// Saves the schedule (audited by the table's triggers).
pub async fn save(conn: &mut SqliteConnection, s: &Stored) -> sqlx::Result<()> {
    sqlx::query(
        "INSERT INTO backup_schedule (id, dir, every_s, keep) VALUES (1, ?, ?, ?)
         ON CONFLICT (id) DO UPDATE SET dir = excluded.dir, every_s = excluded.every_s,
                                        keep = excluded.keep",
    )
    .bind(&s.dir)
    .bind(s.every_s)
    .bind(s.keep)
    .execute(conn)
    .await?;
    Ok(())
}
