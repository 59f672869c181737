//! A pass's data-log file (deflated) with the figures the pages list, and the log mapping
//! remembered per car.

use std::io::{Read, Write};

use sqlx::SqliteConnection;

use crate::records::stored::LogSummary;
use clutch::datalog::request::{LogResult, LogSettings};

/// The figures of a log the pages list, from `pass_logs l` (also read by `db::read`).
pub(super) const SUMMARY: &str =
    "l.pass_id, l.file_name, l.file_bytes, l.sample_rate_hz, l.launch_s, l.lockup_s,
     l.lockup_engine_rpm, l.slip_energy_j, l.peak_slip_power_w, l.slip_window, l.created_at";

/// The logs of a build's passes.
pub async fn for_build(
    conn: &mut SqliteConnection,
    build_id: i64,
) -> sqlx::Result<Vec<LogSummary>> {
    sqlx::query_as(sqlx::AssertSqlSafe(format!(
        "SELECT {SUMMARY} FROM pass_logs l JOIN passes p ON p.id = l.pass_id WHERE p.build_id = ?"
    )))
    .bind(build_id)
    .fetch_all(conn)
    .await
}

/// One pass's log figures.
pub async fn summary(
    conn: &mut SqliteConnection,
    pass_id: i64,
) -> sqlx::Result<Option<LogSummary>> {
    sqlx::query_as(sqlx::AssertSqlSafe(format!(
        "SELECT {SUMMARY} FROM pass_logs l WHERE l.pass_id = ?"
    )))
    .bind(pass_id)
    .fetch_optional(conn)
    .await
}

/// A stored file: its text (inflated) and the settings it was read with.
pub struct StoredFile {
    pub name: String,
    pub text: Vec<u8>,
    pub settings: LogSettings,
}

/// A stored file as the database holds it: deflated, its settings as JSON, and what changes
/// whenever it is replaced (`stamp`).
pub struct StoredRaw {
    pub name: String,
    pub deflated: Vec<u8>,
    pub settings: String,
    pub stamp: String,
}

impl StoredRaw {
    /// The file inflated (at most `max_bytes`) with its settings, or why it cannot be read
    /// (CPU work: run it off the async threads).
    pub fn open(self, max_bytes: usize) -> Result<StoredFile, String> {
        let text = inflate(&self.deflated, max_bytes)?;
        let settings = serde_json::from_str(&self.settings)
            .map_err(|e| format!("the stored log's settings cannot be read: {e}"))?;
        Ok(StoredFile {
            name: self.name,
            text,
            settings,
        })
    }
}

/// The stored file of a pass's log, deflated.
pub async fn file(conn: &mut SqliteConnection, pass_id: i64) -> sqlx::Result<Option<StoredRaw>> {
    let row: Option<(String, Vec<u8>, String, String)> = sqlx::query_as(
        "SELECT file_name, file_deflated, settings, updated_at || ' ' || file_bytes || ' ' || length(file_deflated)
         FROM pass_logs WHERE pass_id = ?",
    )
    .bind(pass_id)
    .fetch_optional(conn)
    .await?;
    Ok(row.map(|(name, deflated, settings, stamp)| StoredRaw {
        name,
        deflated,
        settings,
        stamp,
    }))
}

/// What changes whenever a pass's stored log is replaced (its time and size), `None` without
/// one: read without the file, to find a kept analysis of it.
pub async fn stamp(conn: &mut SqliteConnection, pass_id: i64) -> sqlx::Result<Option<String>> {
    let row: Option<(String,)> = sqlx::query_as(
        "SELECT updated_at || ' ' || file_bytes || ' ' || length(file_deflated) FROM pass_logs WHERE pass_id = ?",
    )
    .bind(pass_id)
    .fetch_optional(conn)
    .await?;
    Ok(row.map(|r| r.0))
}

/// A log to store with its pass (storage units): the file, how it was read, and what its
/// analysis found.
pub struct NewLog<'a> {
    pub pass_id: i64,
    /// The pass's car, which remembers the settings for its next file.
    pub car_id: i64,
    pub user_id: i64,
    pub file_name: &'a str,
    /// The file's size before deflating, bytes.
    pub file_bytes: usize,
    /// The file deflated by [`deflate`] (CPU work: done off the async threads).
    pub deflated: &'a [u8],
    pub settings: &'a LogSettings,
    pub result: &'a LogResult,
}

/// Stores (or replaces) a pass's log and remembers its settings for the car, in the caller's
/// transaction.
pub async fn store(conn: &mut SqliteConnection, log: &NewLog<'_>) -> sqlx::Result<()> {
    let settings = serde_json::to_string(log.settings).unwrap_or_default();
    let window =
        serde_json::to_string(&log.result.calibration_pairs()).unwrap_or_else(|_| "[]".into());
    let a = &log.result.analysis;
    sqlx::query(
        "INSERT INTO pass_logs (pass_id, file_name, file_bytes, file_deflated, settings,
             sample_rate_hz, launch_s, lockup_s, lockup_engine_rpm, slip_energy_j,
             peak_slip_power_w, slip_window, user_id)
         VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
         ON CONFLICT (pass_id) DO UPDATE SET file_name = excluded.file_name,
             file_bytes = excluded.file_bytes, file_deflated = excluded.file_deflated,
             settings = excluded.settings, sample_rate_hz = excluded.sample_rate_hz,
             launch_s = excluded.launch_s, lockup_s = excluded.lockup_s,
             lockup_engine_rpm = excluded.lockup_engine_rpm,
             slip_energy_j = excluded.slip_energy_j,
             peak_slip_power_w = excluded.peak_slip_power_w,
             slip_window = excluded.slip_window, user_id = excluded.user_id,
             updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')",
    )
    .bind(log.pass_id)
    .bind(log.file_name)
    .bind(log.file_bytes as i64)
    .bind(log.deflated)
    .bind(settings)
    .bind(a.sample_rate_hz)
    .bind(a.launch_s)
    .bind(a.lockup_s)
    .bind(a.lockup_engine_rpm)
    .bind(a.slip_energy_j)
    .bind(a.peak_slip_power_w)
    .bind(window)
    .bind(log.user_id)
    .execute(&mut *conn)
    .await?;
    remember(conn, log.car_id, log.settings).await
}

/// The log settings last used for a car.
pub async fn mapping(
    conn: &mut SqliteConnection,
    car_id: i64,
) -> sqlx::Result<Option<LogSettings>> {
    let row: Option<(String,)> =
        sqlx::query_as("SELECT settings FROM car_log_mappings WHERE car_id = ?")
            .bind(car_id)
            .fetch_optional(conn)
            .await?;
    Ok(row.and_then(|(s,)| serde_json::from_str(&s).ok()))
}

/// Remembers the log settings for a car's next file.
pub async fn remember(
    conn: &mut SqliteConnection,
    car_id: i64,
    settings: &LogSettings,
) -> sqlx::Result<()> {
    sqlx::query(
        "INSERT INTO car_log_mappings (car_id, settings) VALUES (?, ?)
         ON CONFLICT (car_id) DO UPDATE SET settings = excluded.settings,
             updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now')",
    )
    .bind(car_id)
    .bind(serde_json::to_string(settings).unwrap_or_default())
    .execute(conn)
    .await?;
    Ok(())
}

/// Deflates (zlib stream, fast level: log text shrinks about 4–6 times either way).
pub fn deflate(text: &[u8]) -> Vec<u8> {
    let mut enc = flate2::write::ZlibEncoder::new(
        Vec::with_capacity(text.len() / 4),
        flate2::Compression::fast(),
    );
    // Writing to a Vec cannot fail.
    let _ = enc.write_all(text);
    enc.finish().unwrap_or_default()
}

/// Inflates a stored file, refusing one that grows past `max_bytes`.
pub fn inflate(deflated: &[u8], max_bytes: usize) -> Result<Vec<u8>, String> {
    let mut out = Vec::new();
    flate2::read::ZlibDecoder::new(deflated)
        .take(max_bytes as u64 + 1)
        .read_to_end(&mut out)
        .map_err(|e| format!("the stored log cannot be inflated: {e}"))?;
    if out.len() > max_bytes {
        return Err("the stored log is larger than any accepted file".into());
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_file_comes_back_byte_for_byte_and_smaller() {
        let text: Vec<u8> = (0..2000)
            .flat_map(|i| format!("{:.3},{},{}\n", i as f64 * 0.001, 6000 - i, i * 3).into_bytes())
            .collect();
        let d = deflate(&text);
        assert!(d.len() * 2 < text.len(), "{} of {}", d.len(), text.len());
        assert_eq!(inflate(&d, text.len()).unwrap(), text);
        assert!(inflate(&d, text.len() - 1).is_err());
    }
}
