//! Track passes, newest first.

use sqlx::SqliteConnection;

use crate::records::Checked;
use crate::records::pass::PassInput;
use crate::records::stored::Pass;

pub async fn for_build(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Vec<Pass>> {
    sqlx::query_as("SELECT * FROM passes WHERE build_id = ? ORDER BY run_on DESC, id DESC")
        .bind(build_id)
        .fetch_all(conn)
        .await
}

/// `limit` of the build's passes, newest first, skipping the `offset` newest.
pub async fn page_for_build(
    conn: &mut SqliteConnection,
    build_id: i64,
    offset: i64,
    limit: i64,
) -> sqlx::Result<Vec<Pass>> {
    sqlx::query_as(
        "SELECT * FROM passes WHERE build_id = ? ORDER BY run_on DESC, id DESC LIMIT ? OFFSET ?",
    )
    .bind(build_id)
    .bind(limit)
    .bind(offset)
    .fetch_all(conn)
    .await
}

pub async fn count_for_build(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<i64> {
    sqlx::query_scalar("SELECT COUNT(*) FROM passes WHERE build_id = ?")
        .bind(build_id)
        .fetch_one(conn)
        .await
}

pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Pass>> {
    sqlx::query_as(
        "SELECT x.* FROM passes x JOIN builds b ON b.id = x.build_id
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
    p: &Checked<PassInput>,
) -> sqlx::Result<i64> {
    super::record::insert(
        conn,
        "passes",
        &[("build_id", build_id), ("user_id", user_id)],
        p,
    )
    .await
}

pub async fn update(
    conn: &mut SqliteConnection,
    id: i64,
    p: &Checked<PassInput>,
) -> sqlx::Result<bool> {
    super::record::update(conn, "passes", id, p).await
}
