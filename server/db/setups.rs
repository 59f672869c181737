//! Setup changes on a build (adjuster turns, counterweight, friction), oldest first.

use sqlx::SqliteConnection;

use crate::records::Checked;
use crate::records::setup::SetupInput;
use crate::records::stored::Setup;

pub async fn for_build(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Vec<Setup>> {
    sqlx::query_as("SELECT * FROM setup_changes WHERE build_id = ? ORDER BY changed_on, id")
        .bind(build_id)
        .fetch_all(conn)
        .await
}

pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Setup>> {
    sqlx::query_as(
        "SELECT x.* FROM setup_changes x JOIN builds b ON b.id = x.build_id
         JOIN cars k ON k.id = b.car_id JOIN customers c ON c.id = k.customer_id
         WHERE x.id = ? AND c.deleted_at IS NULL",
    )
    .bind(id)
    .fetch_optional(conn)
    .await
}

pub async fn insert(
    conn: &mut SqliteConnection,
    build_id: i64,
    user_id: i64,
    s: &Checked<SetupInput>,
) -> sqlx::Result<i64> {
    super::record::insert(
        conn,
        "setup_changes",
        &[("build_id", build_id), ("user_id", user_id)],
        s,
    )
    .await
}

pub async fn update(
    conn: &mut SqliteConnection,
    id: i64,
    s: &Checked<SetupInput>,
) -> sqlx::Result<bool> {
    super::record::update(conn, "setup_changes", id, s).await
}
