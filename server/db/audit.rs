//! The audit history written by the triggers of migration 0004, and the one way to open a
//! write transaction: `begin_as`, which tells the triggers who is acting.

use serde::Serialize;
use sqlx::{FromRow, Sqlite, SqliteConnection, SqlitePool, Transaction};

/// Begins a write transaction (`BEGIN IMMEDIATE`: the write lock is taken at once, so the
/// transaction never fails half-way with "database is locked") and records who is acting, for
/// the audit triggers.
pub async fn begin_as(
    pool: &SqlitePool,
    user_id: Option<i64>,
    username: &str,
) -> sqlx::Result<Transaction<'static, Sqlite>> {
    let mut tx = pool.begin_with("BEGIN IMMEDIATE").await?;
    sqlx::query("UPDATE audit_actor SET user_id = ?, username = ? WHERE id = 1")
        .bind(user_id)
        .bind(username)
        .execute(&mut *tx)
        .await?;
    Ok(tx)
}

#[derive(Debug, Clone, FromRow, Serialize)]
pub struct Entry {
    pub id: i64,
    pub at: String,
    pub username: String,
    pub action: String,
    pub table_name: String,
    pub record_id: i64,
    pub before: Option<String>,
    pub after: Option<String>,
}

/// Everything recorded about a build and its records, newest first.
pub async fn for_build(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Vec<Entry>> {
    sqlx::query_as(
        "SELECT id, at, username, action, table_name, record_id, before, after FROM audit_log
         WHERE build_id = ? ORDER BY id DESC LIMIT 500",
    )
    .bind(build_id)
    .fetch_all(conn)
    .await
}
