//! Setup changes on a build (adjuster turns, counterweight, friction), oldest first.

use sqlx::SqliteConnection;

use super::record::BuildTable;
use crate::records::stored::Setup;

/// The table and its order, newest first: its records are read by id, paged and counted
/// through it.
pub const TABLE: BuildTable<Setup> = BuildTable::new("setup_changes", "changed_on DESC, id DESC");

pub async fn for_build(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Vec<Setup>> {
    sqlx::query_as("SELECT * FROM setup_changes WHERE build_id = ? ORDER BY changed_on, id")
        .bind(build_id)
        .fetch_all(conn)
        .await
}

pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Setup>> {
    TABLE.by_id(conn, id).await
}
