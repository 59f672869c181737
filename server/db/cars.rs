//! Cars and their engine torque curves.

use sqlx::SqliteConnection;

use crate::records::stored::{BuildOwner, Car};

pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Car>> {
    super::one(
        conn,
        "SELECT k.* FROM cars k JOIN customers c ON c.id = k.customer_id
         WHERE k.id = ? AND c.deleted_at IS NULL",
        id,
    )
    .await
}

/// The live car `id` and who it belongs to, in one read (a build's dossier).
pub async fn with_owner(
    conn: &mut SqliteConnection,
    id: i64,
) -> sqlx::Result<Option<(Car, BuildOwner)>> {
    #[derive(sqlx::FromRow)]
    struct Row {
        #[sqlx(flatten)]
        car: Car,
        customer_name: String,
        customer_phone: String,
    }
    let row: Option<Row> = super::one(
        conn,
        "SELECT k.*, c.name AS customer_name, c.phone AS customer_phone
         FROM cars k JOIN customers c ON c.id = k.customer_id
         WHERE k.id = ? AND c.deleted_at IS NULL",
        id,
    )
    .await?;
    Ok(row.map(|r| {
        let owner = BuildOwner {
            customer_id: r.car.customer_id,
            customer_name: r.customer_name,
            customer_phone: r.customer_phone,
            car_id: r.car.id,
            car_description: r.car.data.description.clone(),
        };
        (r.car, owner)
    }))
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
