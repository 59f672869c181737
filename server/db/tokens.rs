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

/// Revokes the live token stored as `token_hash`; how many were revoked (0 or 1).
pub async fn revoke_by_hash(conn: &mut SqliteConnection, token_hash: &str) -> sqlx::Result<u64> {
    revoke_where(conn, "token_hash = ?", token_hash).await
}

/// Revokes every live token of `user_id`; how many were revoked.
pub async fn revoke_for_user(conn: &mut SqliteConnection, user_id: i64) -> sqlx::Result<u64> {
    revoke_where(conn, "user_id = ?", user_id).await
}

/// Revokes the live tokens matching `condition` (one `?`, bound to `value`).
async fn revoke_where<'q, T>(
    conn: &mut SqliteConnection,
    condition: &'static str,
    value: T,
) -> sqlx::Result<u64>
where
    T: sqlx::Encode<'q, sqlx::Sqlite> + sqlx::Type<sqlx::Sqlite> + Send + 'q,
{
    let sql = format!(
        "UPDATE api_tokens SET revoked_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now'),
             updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')
         WHERE {condition} AND revoked_at IS NULL"
    );
    let done = sqlx::query(sqlx::AssertSqlSafe(sql))
        .bind(value)
        .execute(conn)
        .await?;
    Ok(done.rows_affected())
}
