//! Staff accounts.

use serde::Serialize;
use sqlx::{FromRow, SqliteConnection};

use crate::records::user::{NewUser, Role};

#[derive(Debug, Clone, Serialize, FromRow)]
pub struct User {
    pub id: i64,
    pub username: String,
    /// What customers see on a sheet; empty shows the shop's name.
    pub display_name: String,
    #[serde(skip)]
    pub password_hash: String,
    pub role: String,
    pub disabled: bool,
    pub created_at: String,
}

impl User {
    pub fn role(&self) -> Role {
        Role::parse(&self.role).unwrap_or(Role::Tech)
    }

    /// The name a customer sees: the display name, or the shop's name when none is set.
    pub fn shown_to_customers(&self, shop_name: &str) -> String {
        match self.display_name.trim() {
            "" => shop_name.to_string(),
            name => name.to_string(),
        }
    }
}

pub async fn by_name(conn: &mut SqliteConnection, name: &str) -> sqlx::Result<Option<User>> {
    sqlx::query_as("SELECT id, username, display_name, password_hash, role, disabled, created_at FROM users WHERE username = ?")
        .bind(name.trim())
        .fetch_optional(conn)
        .await
}

pub async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<User>> {
    super::one(conn, "SELECT id, username, display_name, password_hash, role, disabled, created_at FROM users WHERE id = ?", id).await
}

pub async fn all(conn: &mut SqliteConnection) -> sqlx::Result<Vec<User>> {
    sqlx::query_as("SELECT id, username, display_name, password_hash, role, disabled, created_at FROM users ORDER BY username")
        .fetch_all(conn)
        .await
}

pub async fn count(conn: &mut SqliteConnection) -> sqlx::Result<i64> {
    sqlx::query_scalar("SELECT COUNT(*) FROM users")
        .fetch_one(conn)
        .await
}

pub async fn insert(
    conn: &mut SqliteConnection,
    user: &NewUser,
    password_hash: &str,
) -> sqlx::Result<i64> {
    sqlx::query_scalar(
        "INSERT INTO users (username, password_hash, role) VALUES (?, ?, ?) RETURNING id",
    )
    .bind(&user.username)
    .bind(password_hash)
    .bind(user.role.as_str())
    .fetch_one(conn)
    .await
}

pub async fn set_disabled(
    conn: &mut SqliteConnection,
    id: i64,
    disabled: bool,
) -> sqlx::Result<()> {
    sqlx::query("UPDATE users SET disabled = ?, updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now') WHERE id = ?")
        .bind(disabled)
        .bind(id)
        .execute(conn)
        .await?;
    Ok(())
}

pub async fn set_display_name(
    conn: &mut SqliteConnection,
    id: i64,
    display_name: &str,
) -> sqlx::Result<()> {
    sqlx::query("UPDATE users SET display_name = ?, updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now') WHERE id = ?")
        .bind(display_name)
        .bind(id)
        .execute(conn)
        .await?;
    Ok(())
}

/// Replaces user `id`'s password hash `old` with `new`; false (and nothing changed) when the
/// stored hash is no longer `old`.
pub async fn replace_password_hash(
    conn: &mut SqliteConnection,
    id: i64,
    old: &str,
    new: &str,
) -> sqlx::Result<bool> {
    let done = sqlx::query(
        "UPDATE users SET password_hash = ?, updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')
         WHERE id = ? AND password_hash = ?",
    )
    .bind(new)
    .bind(id)
    .bind(old)
    .execute(conn)
    .await?;
    Ok(done.rows_affected() == 1)
}

pub async fn set_password(
    conn: &mut SqliteConnection,
    id: i64,
    password_hash: &str,
) -> sqlx::Result<()> {
    sqlx::query("UPDATE users SET password_hash = ?, updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now') WHERE id = ?")
        .bind(password_hash)
        .bind(id)
        .execute(conn)
        .await?;
    Ok(())
}
