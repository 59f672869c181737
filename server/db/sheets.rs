//! Printed setup sheets (snapshots of their inputs) and the customer's read-only links.

use serde::Serialize;
use sqlx::{FromRow, SqliteConnection};

/// A stored sheet. `inputs` is its snapshot, a JSON document the `sheet` module writes and
/// reads; the database keeps it as it was printed.
#[derive(Debug, Clone, FromRow)]
pub struct Sheet {
    pub id: i64,
    pub build_id: i64,
    pub prepared_on: String,
    pub inputs: String,
    pub created_at: String,
}

/// A sheet in a build's list of printed sheets.
#[derive(Debug, Clone, FromRow, Serialize)]
pub struct SheetSummary {
    pub id: i64,
    pub prepared_on: String,
    pub prepared_by: String,
    pub live_links: i64,
}

#[derive(Debug, Clone, FromRow, Serialize)]
pub struct Link {
    pub id: i64,
    pub sheet_id: i64,
    pub expires_at: String,
    pub revoked_at: Option<String>,
    pub created_at: String,
}

/// What a customer's link leads to.
pub enum LinkState {
    Live(Box<Sheet>),
    /// Revoked or expired: the link existed but no longer shows anything.
    Gone,
    Unknown,
}

/// Stores a sheet's snapshot (`inputs`, a JSON document) prepared on `prepared_on`.
pub async fn insert(
    conn: &mut SqliteConnection,
    build_id: i64,
    user_id: i64,
    prepared_on: &str,
    inputs: &str,
) -> sqlx::Result<i64> {
    sqlx::query_scalar(
        "INSERT INTO sheets (build_id, prepared_by, prepared_on, inputs) VALUES (?, ?, ?, ?) RETURNING id",
    )
    .bind(build_id)
    .bind(user_id)
    .bind(prepared_on)
    .bind(inputs)
    .fetch_one(conn)
    .await
}

pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Sheet>> {
    // A deleted customer's sheets are hidden with them, customer links included.
    super::one(
        conn,
        "SELECT s.id, s.build_id, s.prepared_on, s.inputs, s.created_at FROM sheets s
         JOIN builds b ON b.id = s.build_id JOIN cars k ON k.id = b.car_id
         JOIN customers c ON c.id = k.customer_id
         WHERE s.id = ? AND c.deleted_at IS NULL",
        id,
    )
    .await
}

/// A build's sheets, newest first, with their live links counted (read by `db::read::sheets`
/// for the build page).
pub const FOR_BUILD: &str = "SELECT s.id, s.prepared_on, COALESCE(u.username, '') AS prepared_by,
        (SELECT COUNT(*) FROM sheet_links l WHERE l.sheet_id = s.id AND l.revoked_at IS NULL
           AND l.expires_at > strftime('%Y-%m-%dT%H:%M:%SZ', 'now')) AS live_links
     FROM sheets s LEFT JOIN users u ON u.id = s.prepared_by
     WHERE s.build_id = ? ORDER BY s.id DESC";

pub async fn insert_link(
    conn: &mut SqliteConnection,
    sheet_id: i64,
    user_id: i64,
    token_hash: &str,
    valid_days: i64,
) -> sqlx::Result<i64> {
    sqlx::query_scalar(
        "INSERT INTO sheet_links (sheet_id, token_hash, expires_at, created_by)
         VALUES (?, ?, strftime('%Y-%m-%dT%H:%M:%SZ', 'now', ?), ?) RETURNING id",
    )
    .bind(sheet_id)
    .bind(token_hash)
    .bind(format!("+{valid_days} days"))
    .bind(user_id)
    .fetch_one(conn)
    .await
}

pub async fn links(conn: &mut SqliteConnection, sheet_id: i64) -> sqlx::Result<Vec<Link>> {
    sqlx::query_as(
        "SELECT id, sheet_id, expires_at, revoked_at, created_at FROM sheet_links
         WHERE sheet_id = ? ORDER BY id DESC",
    )
    .bind(sheet_id)
    .fetch_all(conn)
    .await
}

pub async fn link_by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Link>> {
    super::one(
        conn,
        "SELECT id, sheet_id, expires_at, revoked_at, created_at FROM sheet_links WHERE id = ?",
        id,
    )
    .await
}

pub async fn revoke_link(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<()> {
    sqlx::query(
        "UPDATE sheet_links SET revoked_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now'),
             updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')
         WHERE id = ? AND revoked_at IS NULL",
    )
    .bind(id)
    .execute(conn)
    .await?;
    Ok(())
}

/// The sheet behind a link's secret, if the link is live.
pub async fn by_link(conn: &mut SqliteConnection, token_hash: &str) -> sqlx::Result<LinkState> {
    let link: Option<(i64, bool)> = sqlx::query_as(
        "SELECT sheet_id, (revoked_at IS NULL AND expires_at > strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
         FROM sheet_links WHERE token_hash = ?",
    )
    .bind(token_hash)
    .fetch_optional(&mut *conn)
    .await?;
    Ok(match link {
        None => LinkState::Unknown,
        Some((_, false)) => LinkState::Gone,
        Some((sheet_id, true)) => match by_id(conn, sheet_id).await? {
            Some(sheet) => LinkState::Live(Box::new(sheet)),
            None => LinkState::Gone,
        },
    })
}
