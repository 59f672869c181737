//! API bearer tokens, stored by hash.

use sqlx::SqliteConnection;

use super::sessions::SessionUser;

pub async fn insert(
    conn: &mut SqliteConnection,
    user_id: i64,
    token_hash: &str,
) -> sqlx::Result<i64> {
    sqlx::query_scalar("INSERT INTO api_tokens (user_id, token_hash) VALUES (?, ?) RETURNING id")
        .bind(user_id)
        .bind(token_hash)
        .fetch_one(conn)
        .await
}

/// The user behind a live token (not revoked, user not disabled).
pub async fn user(
    conn: &mut SqliteConnection,
    token_hash: &str,
) -> sqlx::Result<Option<SessionUser>> {
    sqlx::query_as(
        "SELECT u.id AS user_id, u.username, u.role, '' AS csrf_token
         FROM api_tokens t JOIN users u ON u.id = t.user_id
         WHERE t.token_hash = ? AND t.revoked_at IS NULL AND u.disabled = 0",
    )
    .bind(token_hash)
    .fetch_optional(conn)
    .await
}

pub async fn revoke_by_hash(conn: &mut SqliteConnection, token_hash: &str) -> sqlx::Result<u64> {
    let done = sqlx::query(
        "UPDATE api_tokens SET revoked_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now'),
             updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')
         WHERE token_hash = ? AND revoked_at IS NULL",
    )
    .bind(token_hash)
    .execute(conn)
    .await?;
    Ok(done.rows_affected())
}

pub async fn revoke_for_user(conn: &mut SqliteConnection, user_id: i64) -> sqlx::Result<u64> {
    let done = sqlx::query(
        "UPDATE api_tokens SET revoked_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now'),
             updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')
         WHERE user_id = ? AND revoked_at IS NULL",
    )
    .bind(user_id)
    .execute(conn)
    .await?;
    Ok(done.rows_affected())
}
