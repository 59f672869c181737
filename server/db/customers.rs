//! Customers.

use serde::Serialize;
use sqlx::{FromRow, SqliteConnection};

use crate::records::Checked;
use crate::records::customer::CustomerInput;

#[derive(Debug, Clone, Serialize, FromRow)]
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
#[derive(Debug, Clone, Serialize, FromRow)]
pub struct CustomerSummary {
    pub id: i64,
    pub name: String,
    pub phone: String,
    pub car_count: i64,
    pub cars: String,
    /// Search results: the customer's cars, each with its active builds, for direct links.
    #[sqlx(skip)]
    #[serde(skip)]
    pub found_cars: Vec<super::search::FoundCar>,
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
    sqlx::query_as("SELECT * FROM customers WHERE id = ? AND deleted_at IS NULL")
        .bind(id)
        .fetch_optional(conn)
        .await
}

/// One page of customers whose name, phone, email, or any car's description or engine
/// matches `query`, and the total count of matches: through the trigram index, best match
/// first (`db::search`), when any word has 3 or more characters; otherwise (a 1-2 character
/// query, or none) by case-insensitive substring over name, phone and cars, by name.
pub async fn search(
    conn: &mut SqliteConnection,
    query: &str,
    page: i64,
    order: Order,
) -> sqlx::Result<(Vec<CustomerSummary>, i64)> {
    if let Some(expr) = super::search::match_expr(query) {
        return super::search::customers(conn, &expr, page, order).await;
    }
    let everyone = query.trim().is_empty();
    let pattern = format!("%{}%", escape_like(query.trim()));
    // No query lists everyone: no pattern to test on every row (?1 goes unused).
    const EVERYONE: &str = "c.deleted_at IS NULL";
    const MATCH: &str =
        "c.deleted_at IS NULL AND (c.name LIKE ?1 ESCAPE '\\' OR c.phone LIKE ?1 ESCAPE '\\'
         OR EXISTS (SELECT 1 FROM cars k WHERE k.customer_id = c.id
                    AND (k.description LIKE ?1 ESCAPE '\\' OR k.engine LIKE ?1 ESCAPE '\\')))";
    let mut rows = sqlx::query_as(sqlx::AssertSqlSafe(format!(
        "SELECT c.id, c.name, c.phone,
                (SELECT COUNT(*) FROM cars k WHERE k.customer_id = c.id) AS car_count,
                COALESCE((SELECT group_concat(k.description, '; ') FROM cars k
                          WHERE k.customer_id = c.id), '') AS cars
         FROM customers c WHERE {}
         ORDER BY {} LIMIT ?2 OFFSET ?3",
        if everyone { EVERYONE } else { MATCH },
        order.terms()
    )))
    .bind(&pattern)
    .bind(super::PAGE_SIZE)
    .bind(page.max(0) * super::PAGE_SIZE)
    .fetch_all(&mut *conn)
    .await?;
    let total: i64 = if everyone {
        sqlx::query_scalar(sqlx::AssertSqlSafe(format!(
            "SELECT COUNT(*) FROM customers c WHERE {EVERYONE}"
        )))
        .fetch_one(&mut *conn)
        .await?
    } else {
        sqlx::query_scalar(sqlx::AssertSqlSafe(format!(
            "SELECT COUNT(*) FROM customers c WHERE {MATCH}"
        )))
        .bind(&pattern)
        .fetch_one(&mut *conn)
        .await?
    };
    super::search::attach_links(conn, &mut rows).await?;
    Ok((rows, total))
}

pub async fn insert(conn: &mut SqliteConnection, c: &Checked<CustomerInput>) -> sqlx::Result<i64> {
    super::record::insert(conn, "customers", &[], c).await
}

/// Updates a customer; false when there is no such (live) customer.
pub async fn update(
    conn: &mut SqliteConnection,
    id: i64,
    c: &Checked<CustomerInput>,
) -> sqlx::Result<bool> {
    super::record::update(conn, "customers", id, c).await
}

/// Escapes `%`, `_` and `\` so user text matches literally in `LIKE ... ESCAPE '\'`.
pub(crate) fn escape_like(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        if matches!(c, '%' | '_' | '\\') {
            out.push('\\');
        }
        out.push(c);
    }
    out
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
