//! Browser sessions, stored by the hash of the cookie value.

use sqlx::{FromRow, SqliteConnection};

/// The signed-in user behind a session cookie.
#[derive(Debug, Clone, FromRow)]
pub struct SessionUser {
    pub user_id: i64,
    pub username: String,
    pub role: String,
    pub csrf_token: String,
}

/// How long a sign-in lasts.
pub const LIFETIME_DAYS: i64 = 7;

pub async fn create(
    conn: &mut SqliteConnection,
    token_hash: &str,
    user_id: i64,
    csrf: &str,
) -> sqlx::Result<()> {
    // Expired sessions are removed here, so the table never grows without bound.
    sqlx::query("DELETE FROM sessions WHERE expires_at < strftime('%Y-%m-%dT%H:%M:%SZ', 'now')")
        .execute(&mut *conn)
        .await?;
    sqlx::query(
        "INSERT INTO sessions (token_hash, user_id, csrf_token, expires_at)
         VALUES (?, ?, ?, strftime('%Y-%m-%dT%H:%M:%SZ', 'now', ?))",
    )
    .bind(token_hash)
    .bind(user_id)
    .bind(csrf)
    .bind(format!("+{LIFETIME_DAYS} days"))
    .execute(conn)
    .await?;
    Ok(())
}

/// The user behind a live session and how many seconds the session has left.
pub async fn user(
    conn: &mut SqliteConnection,
    token_hash: &str,
) -> sqlx::Result<Option<(SessionUser, f64)>> {
    #[derive(FromRow)]
    struct Row {
        #[sqlx(flatten)]
        user: SessionUser,
        left_s: f64,
    }
    let row: Option<Row> = sqlx::query_as(
        "SELECT u.id AS user_id, u.username, u.role, s.csrf_token,
                (julianday(s.expires_at) - julianday('now')) * 86400.0 AS left_s
         FROM sessions s JOIN users u ON u.id = s.user_id
         WHERE s.token_hash = ? AND u.disabled = 0
           AND s.expires_at > strftime('%Y-%m-%dT%H:%M:%SZ', 'now')",
    )
    .bind(token_hash)
    .fetch_optional(conn)
    .await?;
    Ok(row.map(|r| (r.user, r.left_s)))
}

pub async fn delete(conn: &mut SqliteConnection, token_hash: &str) -> sqlx::Result<()> {
    sqlx::query("DELETE FROM sessions WHERE token_hash = ?")
        .bind(token_hash)
        .execute(conn)
        .await?;
    Ok(())
}

/// Signs a user out everywhere (after a password reset or when disabled).
pub async fn delete_for_user(conn: &mut SqliteConnection, user_id: i64) -> sqlx::Result<()> {
    sqlx::query("DELETE FROM sessions WHERE user_id = ?")
        .bind(user_id)
        .execute(conn)
        .await?;
    Ok(())
}
