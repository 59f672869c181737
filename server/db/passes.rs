//! Track passes, newest first.

use sqlx::SqliteConnection;

use super::record::BuildTable;
use crate::records::stored::Pass;

/// The table and its order, newest first: its records are read by id, paged and counted
/// through it.
pub const TABLE: BuildTable<Pass> = BuildTable::new("passes", "run_on DESC, id DESC");

pub async fn for_build(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Vec<Pass>> {
    sqlx::query_as("SELECT * FROM passes WHERE build_id = ? ORDER BY run_on DESC, id DESC")
        .bind(build_id)
        .fetch_all(conn)
        .await
}

pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Pass>> {
    TABLE.by_id(conn, id).await
}
