//! What happened lately across the shop, for the counter's front page.

use serde::Serialize;
use sqlx::{FromRow, SqliteConnection};

#[derive(Debug, Clone, Serialize, FromRow)]
pub struct Activity {
    /// `setup`, `bench`, `height`, `pass` or `build`.
    pub kind: String,
    pub happened_on: String,
    pub build_id: i64,
    pub build_label: String,
    pub customer_name: String,
    pub car_description: String,
}

/// The latest records of every kind, newest first.
pub async fn recent(conn: &mut SqliteConnection, limit: i64) -> sqlx::Result<Vec<Activity>> {
    sqlx::query_as(
        "WITH events (kind, happened_on, stamp, build_id) AS (
             SELECT 'setup', changed_on, created_at, build_id FROM setup_changes
             UNION ALL SELECT 'bench', tested_on, created_at, build_id FROM bench_tests
             UNION ALL SELECT 'height', measured_on, created_at, build_id FROM cover_heights
             UNION ALL SELECT 'pass', run_on, created_at, build_id FROM passes
             UNION ALL SELECT 'build', substr(created_at, 1, 10), created_at, id FROM builds)
         SELECT e.kind, e.happened_on, e.build_id, b.label AS build_label,
                c.name AS customer_name, k.description AS car_description
         FROM events e JOIN builds b ON b.id = e.build_id JOIN cars k ON k.id = b.car_id
         JOIN customers c ON c.id = k.customer_id
         WHERE c.deleted_at IS NULL
         ORDER BY e.happened_on DESC, e.stamp DESC LIMIT ?",
    )
    .bind(limit)
    .fetch_all(conn)
    .await
}
