//! The spreadsheet import's database side: the mapping remembered per header, the customers
//! and cars already in the shop (for duplicates), and the import's writes.

use super::customers::Customer;
use super::record::Stored;
use crate::records::stored::{Build, Car, Height};
use sqlx::{FromRow, SqliteConnection};

use crate::import::{Known, KnownCar, Mapping, Owner, Plan};

/// The key a header is remembered under.
fn key(header: &[String]) -> String {
    serde_json::to_string(header).unwrap_or_default()
}

/// The mapping last committed for a file with this header.
pub async fn remembered(
    conn: &mut SqliteConnection,
    header: &[String],
) -> sqlx::Result<Option<Mapping>> {
    let row: Option<(String,)> =
        sqlx::query_as("SELECT mapping FROM import_mappings WHERE header = ?")
            .bind(key(header))
            .fetch_optional(conn)
            .await?;
    Ok(row.and_then(|(m,)| serde_json::from_str(&m).ok()))
}

/// Keeps the mapping for the next file with this header.
pub async fn remember(
    conn: &mut SqliteConnection,
    header: &[String],
    mapping: &Mapping,
) -> sqlx::Result<()> {
    sqlx::query(
        "INSERT INTO import_mappings (header, mapping) VALUES (?, ?)
         ON CONFLICT (header) DO UPDATE SET mapping = excluded.mapping,
           updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')",
    )
    .bind(key(header))
    .bind(serde_json::to_string(mapping).unwrap_or_default())
    .execute(conn)
    .await?;
    Ok(())
}

#[derive(FromRow)]
struct KnownRow {
    id: i64,
    name: String,
    phone: String,
    email: String,
}

/// The customers in the shop (not deleted), as duplicates are found.
pub async fn known(conn: &mut SqliteConnection) -> sqlx::Result<Vec<Known>> {
    let rows: Vec<KnownRow> = sqlx::query_as(
        "SELECT id, name, phone, email FROM customers WHERE deleted_at IS NULL ORDER BY id",
    )
    .fetch_all(conn)
    .await?;
    Ok(rows
        .into_iter()
        .map(|r| Known {
            id: r.id,
            name: r.name,
            phone: r.phone,
            email: r.email,
        })
        .collect())
}

/// Every car in the shop, by customer and description.
pub async fn known_cars(conn: &mut SqliteConnection) -> sqlx::Result<Vec<KnownCar>> {
    let rows: Vec<(i64, i64, String)> =
        sqlx::query_as("SELECT id, customer_id, description FROM cars ORDER BY id")
            .fetch_all(conn)
            .await?;
    Ok(rows
        .into_iter()
        .map(|(id, customer_id, description)| KnownCar {
            id,
            customer_id,
            description,
        })
        .collect())
}

/// Names the import in the audit history of every record the transaction makes from here on:
/// the acting staff member's name followed by the import and its file.
pub async fn name_in_audit(
    conn: &mut SqliteConnection,
    username: &str,
    file_name: &str,
) -> sqlx::Result<()> {
    sqlx::query("UPDATE audit_actor SET username = ? WHERE id = 1")
        .bind(format!(
            "{username} (spreadsheet import of “{}”)",
            if file_name.is_empty() {
                "an unnamed file"
            } else {
                file_name
            }
        ))
        .execute(conn)
        .await?;
    Ok(())
}

/// Writes everything the plan makes, in the caller's transaction.
pub async fn write(conn: &mut SqliteConnection, plan: &Plan, user_id: i64) -> sqlx::Result<()> {
    let mut customers = Vec::with_capacity(plan.customers.len());
    for c in &plan.customers {
        customers.push(Customer::insert(conn, 0, user_id, c).await?);
    }
    let mut cars = Vec::with_capacity(plan.cars.len());
    for (owner, car) in &plan.cars {
        let customer = match owner {
            Owner::New(i) => customers[*i],
            Owner::Existing(id) => *id,
        };
        cars.push(Car::insert(conn, customer, user_id, car).await?);
    }
    for (car, build, height) in &plan.builds {
        let car = match car {
            Owner::New(i) => cars[*i],
            Owner::Existing(id) => *id,
        };
        let build_id = Build::insert(conn, car, user_id, build).await?;
        if let Some(h) = height {
            Height::insert(conn, build_id, user_id, h).await?;
        }
    }
    Ok(())
}
