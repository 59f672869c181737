//! Failed sign-ins counted per client address and per name (migration 6): one row each, bounded
//! by a background purge. Times are Unix milliseconds, given by the caller.

use sqlx::{FromRow, SqliteConnection};

/// How many recent failures a key has, and when the last one was.
#[derive(Debug, Clone, Copy, PartialEq, Eq, FromRow)]
pub struct Failures {
    pub failures: i64,
    pub last_failure_ms: i64,
}

/// The counters of both keys (a missing row is `None`).
pub async fn get(
    conn: &mut SqliteConnection,
    client_key: &str,
    name_key: &str,
) -> sqlx::Result<(Option<Failures>, Option<Failures>)> {
    let rows: Vec<(String, i64, i64)> = sqlx::query_as(
        "SELECT key, failures, last_failure_ms FROM login_throttle WHERE key IN (?, ?)",
    )
    .bind(client_key)
    .bind(name_key)
    .fetch_all(conn)
    .await?;
    let find = |key: &str| {
        rows.iter()
            .find(|(k, _, _)| k == key)
            .map(|&(_, failures, last_failure_ms)| Failures {
                failures,
                last_failure_ms,
            })
    };
    Ok((find(client_key), find(name_key)))
}

/// Counts one failure against both keys: one statement (so one short write), upserting by the
/// primary key. A count whose last failure is older than `window_start_ms` starts again at 1.
pub async fn note_failure(
    conn: &mut SqliteConnection,
    client_key: &str,
    name_key: &str,
    now_ms: i64,
    window_start_ms: i64,
) -> sqlx::Result<()> {
    sqlx::query(
        "INSERT INTO login_throttle (key, failures, last_failure_ms) VALUES (?1, 1, ?3), (?2, 1, ?3)
         ON CONFLICT (key) DO UPDATE SET
             failures = CASE WHEN last_failure_ms < ?4 THEN 1 ELSE failures + 1 END,
             last_failure_ms = excluded.last_failure_ms",
    )
    .bind(client_key)
    .bind(name_key)
    .bind(now_ms)
    .bind(window_start_ms)
    .execute(conn)
    .await?;
    Ok(())
}

/// Forgets a key's failures (a name after its correct password).
pub async fn clear(conn: &mut SqliteConnection, key: &str) -> sqlx::Result<()> {
    sqlx::query("DELETE FROM login_throttle WHERE key = ?")
        .bind(key)
        .execute(conn)
        .await?;
    Ok(())
}

/// The purge's statement for rows whose window has passed: the oldest `?2` rows last failing
/// before `?1`, found through the age index (a test checks the query plan).
pub const PURGE_EXPIRED: &str = "DELETE FROM login_throttle WHERE key IN (
    SELECT key FROM login_throttle WHERE last_failure_ms < ?1 ORDER BY last_failure_ms LIMIT ?2)";

/// The purge's statement for rows past the cap: the oldest `?2` rows, as long as more than
/// `?1` rows are kept (counting at most `?1 + ?2` entries of the age index).
pub const PURGE_OVER_CAP: &str = "DELETE FROM login_throttle WHERE key IN (
    SELECT key FROM login_throttle ORDER BY last_failure_ms LIMIT (
        SELECT COUNT(*) FROM (
            SELECT 1 FROM login_throttle ORDER BY last_failure_ms DESC LIMIT ?2 OFFSET ?1)))";

/// One bounded purge step: deletes at most `batch` rows, those whose window has passed first,
/// else the oldest ones while the table holds more than `cap` rows. Returns how many went.
pub async fn purge_batch(
    conn: &mut SqliteConnection,
    window_start_ms: i64,
    cap: i64,
    batch: i64,
) -> sqlx::Result<u64> {
    let expired = sqlx::query(PURGE_EXPIRED)
        .bind(window_start_ms)
        .bind(batch)
        .execute(&mut *conn)
        .await?
        .rows_affected();
    if expired > 0 {
        return Ok(expired);
    }
    Ok(sqlx::query(PURGE_OVER_CAP)
        .bind(cap)
        .bind(batch)
        .execute(conn)
        .await?
        .rows_affected())
}

/// How many keys are tracked.
pub async fn count(conn: &mut SqliteConnection) -> sqlx::Result<i64> {
    sqlx::query_scalar("SELECT COUNT(*) FROM login_throttle")
        .fetch_one(conn)
        .await
}
