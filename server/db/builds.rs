//! Clutch builds.

use sqlx::SqliteConnection;

use crate::records::stored::{ActiveBuild, Build, BuildOwner};

pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Build>> {
    super::one(
        conn,
        "SELECT b.* FROM builds b JOIN cars k ON k.id = b.car_id
         JOIN customers c ON c.id = k.customer_id
         WHERE b.id = ? AND c.deleted_at IS NULL",
        id,
    )
    .await
}

/// A build whatever its customer's state (a soft-deleted customer's builds keep their status,
/// so a restore lists them again at once).
pub async fn any_by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Build>> {
    super::one(conn, "SELECT * FROM builds WHERE id = ?", id).await
}

pub async fn owner(conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<BuildOwner> {
    sqlx::query_as(
        "SELECT c.id AS customer_id, c.name AS customer_name, c.phone AS customer_phone,
                k.id AS car_id, k.description AS car_description
         FROM builds b JOIN cars k ON k.id = b.car_id JOIN customers c ON c.id = k.customer_id
         WHERE b.id = ?",
    )
    .bind(build_id)
    .fetch_one(conn)
    .await
}

pub async fn for_car(conn: &mut SqliteConnection, car_id: i64) -> sqlx::Result<Vec<Build>> {
    sqlx::query_as("SELECT * FROM builds WHERE car_id = ? ORDER BY status, id DESC")
        .bind(car_id)
        .fetch_all(conn)
        .await
}

pub async fn page(conn: &mut SqliteConnection, page: i64) -> sqlx::Result<Vec<Build>> {
    sqlx::query_as(
        "SELECT b.* FROM builds b JOIN cars k ON k.id = b.car_id
         JOIN customers c ON c.id = k.customer_id
         WHERE c.deleted_at IS NULL ORDER BY b.id DESC LIMIT ? OFFSET ?",
    )
    .bind(super::PAGE_SIZE)
    .bind(page.max(0) * super::PAGE_SIZE)
    .fetch_all(conn)
    .await
}

pub async fn active(conn: &mut SqliteConnection) -> sqlx::Result<Vec<ActiveBuild>> {
    sqlx::query_as(
        "SELECT b.*, c.id AS customer_id, c.name AS customer_name, c.phone AS customer_phone,
                k.description AS car_description
         FROM builds b JOIN cars k ON k.id = b.car_id JOIN customers c ON c.id = k.customer_id
         WHERE b.status = 'active' AND c.deleted_at IS NULL ORDER BY b.id",
    )
    .fetch_all(conn)
    .await
}
