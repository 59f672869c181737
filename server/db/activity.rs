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

/// The latest records of every kind, newest first, of live customers.
///
/// Each kind is read newest first through its `*_recent` index (migration 0011) and stops after
/// `limit` live rows, so the feed costs the same at a million measurements as at ten; the
/// newest `limit` of all kinds are among those. Each kind is read alone, so its index fixes the
/// order (with joins and a large database's statistics SQLite drove the read from `cars` and
/// sorted every measurement); the live-customer check is a primary-key lookup per row read, as
/// a join made SQLite build a Bloom filter over every car or customer first.
pub async fn recent(conn: &mut SqliteConnection, limit: i64) -> sqlx::Result<Vec<Activity>> {
    sqlx::query_as(RECENT_SQL).bind(limit).fetch_all(conn).await
}

const RECENT_SQL: &str = "WITH events (kind, happened_on, stamp, build_id) AS (
         SELECT * FROM (SELECT 'setup', x.changed_on, x.created_at, x.build_id
             FROM setup_changes x WHERE (SELECT c.deleted_at FROM builds bb JOIN cars k ON k.id = bb.car_id
                 JOIN customers c ON c.id = k.customer_id WHERE bb.id = x.build_id) IS NULL ORDER BY x.changed_on DESC, x.created_at DESC LIMIT ?1)
         UNION ALL SELECT * FROM (SELECT 'bench', x.tested_on, x.created_at, x.build_id
             FROM bench_tests x WHERE (SELECT c.deleted_at FROM builds bb JOIN cars k ON k.id = bb.car_id
                 JOIN customers c ON c.id = k.customer_id WHERE bb.id = x.build_id) IS NULL ORDER BY x.tested_on DESC, x.created_at DESC LIMIT ?1)
         UNION ALL SELECT * FROM (SELECT 'height', x.measured_on, x.created_at, x.build_id
             FROM cover_heights x WHERE (SELECT c.deleted_at FROM builds bb JOIN cars k ON k.id = bb.car_id
                 JOIN customers c ON c.id = k.customer_id WHERE bb.id = x.build_id) IS NULL ORDER BY x.measured_on DESC, x.created_at DESC LIMIT ?1)
         UNION ALL SELECT * FROM (SELECT 'pass', x.run_on, x.created_at, x.build_id
             FROM passes x WHERE (SELECT c.deleted_at FROM builds bb JOIN cars k ON k.id = bb.car_id
                 JOIN customers c ON c.id = k.customer_id WHERE bb.id = x.build_id) IS NULL ORDER BY x.run_on DESC, x.created_at DESC LIMIT ?1)
         UNION ALL SELECT * FROM (SELECT 'build', substr(b.created_at, 1, 10), b.created_at, b.id
             FROM builds b WHERE (SELECT c.deleted_at FROM builds bb JOIN cars k ON k.id = bb.car_id
                 JOIN customers c ON c.id = k.customer_id WHERE bb.id = b.id) IS NULL ORDER BY b.created_at DESC LIMIT ?1))
     SELECT e.kind, e.happened_on, e.build_id, b.label AS build_label,
            c.name AS customer_name, k.description AS car_description
     FROM events e JOIN builds b ON b.id = e.build_id JOIN cars k ON k.id = b.car_id
     JOIN customers c ON c.id = k.customer_id
     ORDER BY e.happened_on DESC, e.stamp DESC LIMIT ?1";
