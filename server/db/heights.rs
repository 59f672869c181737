//! Cover-height measurements, in pass order.

use sqlx::SqliteConnection;

use super::record::BuildTable;
use crate::records::height::{HeightContext, HeightInput};
use crate::records::stored::{Build, Height};

/// The table and its order, newest first: its records are read by id, paged and counted
/// through it.
pub const TABLE: BuildTable<Height> = BuildTable::new("cover_heights", "id DESC");

pub async fn for_build(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Vec<Height>> {
    sqlx::query_as("SELECT * FROM cover_heights WHERE build_id = ? ORDER BY id")
        .bind(build_id)
        .fetch_all(conn)
        .await
}

pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Height>> {
    TABLE.by_id(conn, id).await
}

/// What a measurement of `build` is checked against: its shim stack, the latest three
/// measurements recorded before it on its disc and the one just after it, in recorded order
/// (for a new measurement, `id` None: the latest ones and nothing after). A following
/// new-disc baseline is not a neighbour (it starts its own counts).
pub async fn context(
    conn: &mut SqliteConnection,
    build: &Build,
    id: Option<i64>,
) -> sqlx::Result<HeightContext> {
    let at = id.unwrap_or(i64::MAX);
    let mut before: Vec<HeightInput> = sqlx::query_as(
        "SELECT * FROM cover_heights WHERE build_id = ? AND id < ? ORDER BY id DESC LIMIT 3",
    )
    .bind(build.id)
    .bind(at)
    .fetch_all(&mut *conn)
    .await?;
    if let Some(baseline) = before.iter().position(|h| h.new_disc) {
        before.truncate(baseline + 1);
    }
    before.reverse();
    let next = sqlx::query_as(
        "SELECT * FROM cover_heights WHERE build_id = ? AND id > ? AND new_disc = 0
         ORDER BY id LIMIT 1",
    )
    .bind(build.id)
    .bind(at)
    .fetch_optional(conn)
    .await?;
    Ok(HeightContext {
        shims_mm: build.data.shim_stack_mm.clone(),
        before,
        next,
    })
}

/// Cover heights of every active build of a live customer, by build then in recorded order.
pub async fn for_active_builds(conn: &mut SqliteConnection) -> sqlx::Result<Vec<Height>> {
    sqlx::query_as(
        "SELECT h.* FROM cover_heights h JOIN builds b ON b.id = h.build_id
         JOIN cars k ON k.id = b.car_id JOIN customers c ON c.id = k.customer_id
         WHERE b.status = 'active' AND c.deleted_at IS NULL ORDER BY h.build_id, h.id",
    )
    .fetch_all(conn)
    .await
}
