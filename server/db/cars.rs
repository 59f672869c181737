//! Cars and their engine torque curves.

use serde::Serialize;
use sqlx::{FromRow, SqliteConnection};

use crate::records::Checked;
use crate::records::car::CarInput;

#[derive(Debug, Clone, Serialize, FromRow)]
pub struct Car {
    pub id: i64,
    pub customer_id: i64,
    #[sqlx(flatten)]
    #[serde(flatten)]
    pub data: CarInput,
    pub created_at: String,
    pub updated_at: String,
}

pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Car>> {
    sqlx::query_as(
        "SELECT k.* FROM cars k JOIN customers c ON c.id = k.customer_id
         WHERE k.id = ? AND c.deleted_at IS NULL",
    )
    .bind(id)
    .fetch_optional(conn)
    .await
}

pub async fn for_customer(conn: &mut SqliteConnection, customer_id: i64) -> sqlx::Result<Vec<Car>> {
    sqlx::query_as("SELECT * FROM cars WHERE customer_id = ? ORDER BY id")
        .bind(customer_id)
        .fetch_all(conn)
        .await
}

/// Every car of live customers, newest first, a page at a time (for the API list).
pub async fn page(conn: &mut SqliteConnection, page: i64) -> sqlx::Result<Vec<Car>> {
    sqlx::query_as(
        "SELECT k.* FROM cars k JOIN customers c ON c.id = k.customer_id
         WHERE c.deleted_at IS NULL ORDER BY k.id DESC LIMIT ? OFFSET ?",
    )
    .bind(super::PAGE_SIZE)
    .bind(page.max(0) * super::PAGE_SIZE)
    .fetch_all(conn)
    .await
}

pub async fn insert(
    conn: &mut SqliteConnection,
    customer_id: i64,
    c: &Checked<CarInput>,
) -> sqlx::Result<i64> {
    sqlx::query_scalar(
        "INSERT INTO cars (customer_id, description, engine, weight_kg, transmission,
             rated_input_torque_nm, first_gear_ratio, final_drive_ratio, tire_diameter_mm,
             launch_rpm, torque_curve_nm, notes)
         VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?) RETURNING id",
    )
    .bind(customer_id)
    .bind(&c.description)
    .bind(&c.engine)
    .bind(c.weight_kg)
    .bind(&c.transmission)
    .bind(c.rated_input_torque_nm)
    .bind(c.first_gear_ratio)
    .bind(c.final_drive_ratio)
    .bind(c.tire_diameter_mm)
    .bind(c.launch_rpm)
    .bind(sqlx::types::Json(&c.torque_curve_nm))
    .bind(&c.notes)
    .fetch_one(conn)
    .await
}

pub async fn update(
    conn: &mut SqliteConnection,
    id: i64,
    c: &Checked<CarInput>,
) -> sqlx::Result<bool> {
    let done = sqlx::query(
        "UPDATE cars SET description = ?, engine = ?, weight_kg = ?, transmission = ?,
             rated_input_torque_nm = ?, first_gear_ratio = ?, final_drive_ratio = ?,
             tire_diameter_mm = ?, launch_rpm = ?, torque_curve_nm = ?, notes = ?,
             updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')
         WHERE id = ?",
    )
    .bind(&c.description)
    .bind(&c.engine)
    .bind(c.weight_kg)
    .bind(&c.transmission)
    .bind(c.rated_input_torque_nm)
    .bind(c.first_gear_ratio)
    .bind(c.final_drive_ratio)
    .bind(c.tire_diameter_mm)
    .bind(c.launch_rpm)
    .bind(sqlx::types::Json(&c.torque_curve_nm))
    .bind(&c.notes)
    .bind(id)
    .execute(conn)
    .await?;
    Ok(done.rows_affected() == 1)
}
