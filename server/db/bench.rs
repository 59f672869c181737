//! Spring bench tests and the per-spring readings.

use sqlx::SqliteConnection;

use crate::records::Checked;
use crate::records::bench::BenchInput;
use crate::records::stored::{BenchSpring, BenchTest};

/// A build's bench tests, oldest first, each with its readings by spring position.
pub async fn for_build(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Vec<BenchTest>> {
    with_springs(conn, "t.build_id = ?", Some(build_id)).await
}

/// The bench tests of every active build of a live customer, by build, oldest first.
pub async fn for_active_builds(conn: &mut SqliteConnection) -> sqlx::Result<Vec<BenchTest>> {
    with_springs(
        conn,
        "t.build_id IN (SELECT b.id FROM builds b JOIN cars k ON k.id = b.car_id
             JOIN customers c ON c.id = k.customer_id
             WHERE b.status = 'active' AND c.deleted_at IS NULL)",
        None,
    )
    .await
}

/// Bench tests matching `filter` (a fixed condition on `t`, optionally binding one id) with
/// their readings: two queries, whatever the number of tests.
async fn with_springs(
    conn: &mut SqliteConnection,
    filter: &str,
    id: Option<i64>,
) -> sqlx::Result<Vec<BenchTest>> {
    let tests_sql = format!(
        "SELECT t.id, t.build_id, t.tested_on, t.note, t.created_at FROM bench_tests t
         WHERE {filter} ORDER BY t.build_id, t.tested_on, t.id"
    );
    let springs_sql = format!(
        "SELECT s.bench_test_id, s.position, s.free_length_mm, s.compression_mm, s.force_n
         FROM bench_springs s JOIN bench_tests t ON t.id = s.bench_test_id
         WHERE {filter} ORDER BY s.bench_test_id, s.position"
    );
    let mut tests_q = sqlx::query_as::<_, BenchTest>(sqlx::AssertSqlSafe(tests_sql));
    let mut springs_q = sqlx::query_as::<_, BenchSpring>(sqlx::AssertSqlSafe(springs_sql));
    if let Some(id) = id {
        tests_q = tests_q.bind(id);
        springs_q = springs_q.bind(id);
    }
    let mut tests = tests_q.fetch_all(&mut *conn).await?;
    let springs = springs_q.fetch_all(conn).await?;
    let mut by_test: std::collections::HashMap<i64, Vec<BenchSpring>> =
        std::collections::HashMap::new();
    for s in springs {
        by_test.entry(s.bench_test_id).or_default().push(s);
    }
    for test in &mut tests {
        test.springs = by_test.remove(&test.id).unwrap_or_default();
    }
    Ok(tests)
}

pub async fn insert(
    conn: &mut SqliteConnection,
    build_id: i64,
    user_id: i64,
    b: &Checked<BenchInput>,
) -> sqlx::Result<i64> {
    let id: i64 = sqlx::query_scalar(
        "INSERT INTO bench_tests (build_id, tested_on, note, user_id) VALUES (?, ?, ?, ?) RETURNING id",
    )
    .bind(build_id)
    .bind(&b.tested_on)
    .bind(&b.note)
    .bind(user_id)
    .fetch_one(&mut *conn)
    .await?;
    for (i, s) in b.springs.iter().enumerate() {
        sqlx::query(
            "INSERT INTO bench_springs (bench_test_id, position, free_length_mm, compression_mm, force_n)
             VALUES (?, ?, ?, ?, ?)",
        )
        .bind(id)
        .bind(s.position.unwrap_or(i as i64 + 1))
        .bind(s.free_length_mm)
        .bind(s.compression_mm)
        .bind(s.force_n)
        .execute(&mut *conn)
        .await?;
    }
    Ok(id)
}

/// One bench test with its readings.
pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<BenchTest>> {
    let live =
        "t.id = ? AND t.build_id IN (SELECT b.id FROM builds b JOIN cars k ON k.id = b.car_id
                JOIN customers c ON c.id = k.customer_id WHERE c.deleted_at IS NULL)";
    Ok(with_springs(conn, live, Some(id)).await?.pop())
}

/// Corrects a bench test: date, note and each spring's reading, in place (the number of
/// springs stays; a different set is a new test). False when there is no such test.
pub async fn update(
    conn: &mut SqliteConnection,
    id: i64,
    b: &Checked<BenchInput>,
) -> sqlx::Result<bool> {
    let done = sqlx::query(
        "UPDATE bench_tests SET tested_on = ?, note = ?,
             updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now') WHERE id = ?",
    )
    .bind(&b.tested_on)
    .bind(&b.note)
    .bind(id)
    .execute(&mut *conn)
    .await?;
    for (i, s) in b.springs.iter().enumerate() {
        sqlx::query(
            "UPDATE bench_springs SET free_length_mm = ?, compression_mm = ?, force_n = ?,
                 updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')
             WHERE bench_test_id = ? AND position = ?",
        )
        .bind(s.free_length_mm)
        .bind(s.compression_mm)
        .bind(s.force_n)
        .bind(id)
        .bind(i as i64 + 1)
        .execute(&mut *conn)
        .await?;
    }
    Ok(done.rows_affected() == 1)
}
