//! Spring bench tests and the per-spring readings.

use serde::Serialize;
use sqlx::{FromRow, SqliteConnection};

use crate::records::Checked;
use crate::records::bench::BenchInput;

#[derive(Debug, Clone, Serialize, FromRow)]
pub struct BenchTest {
    pub id: i64,
    pub build_id: i64,
    pub tested_on: String,
    pub note: String,
    pub created_at: String,
    #[sqlx(skip)]
    pub springs: Vec<BenchSpring>,
}

#[derive(Debug, Clone, Serialize, FromRow)]
pub struct BenchSpring {
    #[serde(skip)]
    pub bench_test_id: i64,
    pub position: i64,
    pub free_length_mm: Option<f64>,
    pub compression_mm: f64,
    pub force_n: f64,
}

/// A build's bench tests, oldest first, each with its readings by spring position.
pub async fn for_build(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Vec<BenchTest>> {
    let mut tests: Vec<BenchTest> = sqlx::query_as(
        "SELECT id, build_id, tested_on, note, created_at FROM bench_tests
         WHERE build_id = ? ORDER BY tested_on, id",
    )
    .bind(build_id)
    .fetch_all(&mut *conn)
    .await?;
    let springs: Vec<BenchSpring> = sqlx::query_as(
        "SELECT s.bench_test_id, s.position, s.free_length_mm, s.compression_mm, s.force_n
         FROM bench_springs s JOIN bench_tests t ON t.id = s.bench_test_id
         WHERE t.build_id = ? ORDER BY s.bench_test_id, s.position",
    )
    .bind(build_id)
    .fetch_all(conn)
    .await?;
    for test in &mut tests {
        test.springs = springs
            .iter()
            .filter(|s| s.bench_test_id == test.id)
            .cloned()
            .collect();
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
        .bind(i as i64 + 1)
        .bind(s.free_length_mm)
        .bind(s.compression_mm)
        .bind(s.force_n)
        .execute(&mut *conn)
        .await?;
    }
    Ok(id)
}
