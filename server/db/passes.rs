//! Track passes, newest first.

use serde::Serialize;
use sqlx::{FromRow, SqliteConnection};

use crate::records::Checked;
use crate::records::pass::PassInput;

#[derive(Debug, Clone, Serialize, FromRow)]
pub struct Pass {
    pub id: i64,
    pub build_id: i64,
    #[sqlx(flatten)]
    #[serde(flatten)]
    pub data: PassInput,
    pub user_id: Option<i64>,
    pub created_at: String,
    pub updated_at: String,
}

pub async fn for_build(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<Vec<Pass>> {
    sqlx::query_as("SELECT * FROM passes WHERE build_id = ? ORDER BY run_on DESC, id DESC")
        .bind(build_id)
        .fetch_all(conn)
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
    sqlx::query_scalar(
        "INSERT INTO passes (build_id, run_on, track, launch_rpm, sixty_ft_s, et_s,
             observed_lockup_rpm, notes, user_id)
         VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?) RETURNING id",
    )
    .bind(build_id)
    .bind(&p.run_on)
    .bind(&p.track)
    .bind(p.launch_rpm)
    .bind(p.sixty_ft_s)
    .bind(p.et_s)
    .bind(p.observed_lockup_rpm)
    .bind(&p.notes)
    .bind(user_id)
    .fetch_one(conn)
    .await
}

pub async fn update(
    conn: &mut SqliteConnection,
    id: i64,
    p: &Checked<PassInput>,
) -> sqlx::Result<bool> {
    let done = sqlx::query(
        "UPDATE passes SET run_on = ?, track = ?, launch_rpm = ?, sixty_ft_s = ?, et_s = ?,
             observed_lockup_rpm = ?, notes = ?, updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')
         WHERE id = ?",
    )
    .bind(&p.run_on)
    .bind(&p.track)
    .bind(p.launch_rpm)
    .bind(p.sixty_ft_s)
    .bind(p.et_s)
    .bind(p.observed_lockup_rpm)
    .bind(&p.notes)
    .bind(id)
    .execute(conn)
    .await?;
    Ok(done.rows_affected() == 1)
}
