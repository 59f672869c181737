//! Customers.

use serde::Serialize;
use sqlx::{FromRow, SqliteConnection};

use crate::records::customer::CustomerInput;

#[derive(Debug, Clone, Serialize, FromRow, utoipa::ToSchema)]
pub struct Customer {
    pub id: i64,
    #[sqlx(flatten)]
    #[serde(flatten)]
    pub data: CustomerInput,
    pub deleted_at: Option<String>,
    pub created_at: String,
    pub updated_at: String,
}

/// A customer row in a list, with how many cars they have.
#[derive(Debug, Clone, Serialize, FromRow, utoipa::ToSchema)]
pub struct CustomerSummary {
    pub id: i64,
    pub name: String,
    pub phone: String,
    pub car_count: i64,
    pub cars: String,
    /// Search results: the customer's cars, each with its active builds, for direct links.
    #[sqlx(skip)]
    #[serde(skip)]
    pub found_cars: Vec<FoundCar>,
}

/// A car of a found customer, with its active builds (id, label), for the result's links.
#[derive(Debug, Clone, Default, Serialize)]
pub struct FoundCar {
    pub id: i64,
    pub description: String,
    pub builds: Vec<FoundBuild>,
}

/// An active build of a found customer's car, with its kept work-due status.
#[derive(Debug, Clone, Default, Serialize)]
pub struct FoundBuild {
    pub id: i64,
    pub label: String,
    /// `disc_due`, `shim_due`, `ok`, or None when wear cannot be worked out yet.
    pub wear: Option<String>,
    pub springs_flagged: bool,
    /// Passes to the nearer shim or disc forecast, and whether it is the disc (kept status).
    pub soon_passes: Option<f64>,
    pub soon_disc: bool,
    /// The shop's "due within" window of passes.
    pub due_within_passes: i64,
}

/// How a list of customers is sorted.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub enum Order {
    /// A search: best match first; the whole list: by name as written (first name first).
    #[default]
    Best,
    /// By the last word of the name (the family name, as most customers give it), then by name.
    LastName,
}

impl Order {
    /// The sort a page asked for (`sort=last`); anything else is the default.
    pub fn from_query(sort: &str) -> Self {
        if sort == "last" {
            Self::LastName
        } else {
            Self::Best
        }
    }

    /// The ORDER BY terms after the match rank (`c` is the customers table).
    pub(crate) fn terms(self) -> &'static str {
        match self {
            Self::Best => "c.name COLLATE NOCASE, c.id",
            // The last word: what follows the last space (rtrim strips the trailing run of the
            // name's non-space characters, leaving everything up to that space).
            Self::LastName => {
                "substr(trim(c.name), length(rtrim(trim(c.name), replace(trim(c.name), ' ', ''))) + 1)
                     COLLATE NOCASE, c.name COLLATE NOCASE, c.id"
            }
        }
    }
}

pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Customer>> {
    super::one(
        conn,
        "SELECT * FROM customers WHERE id = ? AND deleted_at IS NULL",
        id,
    )
    .await
}

/// Soft-deletes (`deleted = true`) or restores a customer; false when nothing changed.
pub async fn set_deleted(
    conn: &mut SqliteConnection,
    id: i64,
    deleted: bool,
) -> sqlx::Result<bool> {
    let sql = if deleted {
        "UPDATE customers SET deleted_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now'),
             updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now') WHERE id = ? AND deleted_at IS NULL"
    } else {
        "UPDATE customers SET deleted_at = NULL, updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')
         WHERE id = ? AND deleted_at IS NOT NULL"
    };
    Ok(sqlx::query(sql)
        .bind(id)
        .execute(conn)
        .await?
        .rows_affected()
        == 1)
}

/// Soft-deleted customers, most recently deleted first.
pub async fn deleted(conn: &mut SqliteConnection) -> sqlx::Result<Vec<Customer>> {
    sqlx::query_as(
        "SELECT * FROM customers WHERE deleted_at IS NOT NULL ORDER BY deleted_at DESC, id DESC",
    )
    .fetch_all(conn)
    .await
}
