//! `lockpoint backup verify FILE`: whether a file is a backup this program can restore, and what
//! it holds. The file is opened read-only and left exactly as it was.

use std::fs::File;
use std::io::Read;
use std::path::Path;
use std::str::FromStr;
use std::time::Duration;

use sqlx::sqlite::SqliteConnectOptions;
use sqlx::{AssertSqlSafe, Connection, SqliteConnection};

use super::{BackupError, Checked, check_connection};
use crate::records::date::ShopZone;

/// The first 16 bytes of every SQLite database file.
const SQLITE_HEADER: &[u8; 16] = b"SQLite format 3\0";

/// The record tables a backup's contents are judged by, for the newest record's time.
const RECORD_TABLES: [&str; 7] = [
    "customers",
    "cars",
    "builds",
    "setup_changes",
    "bench_tests",
    "cover_heights",
    "passes",
];

/// What a sound backup holds.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Verified {
    pub checked: Checked,
    pub shop_name: String,
    pub customers: i64,
    pub builds: i64,
    pub cover_heights: i64,
    pub passes: i64,
    /// When the newest record was written, in the backup's shop time zone (`2026-12-04 06:15`).
    pub newest_record: Option<String>,
}

/// Checks the file at `path` read-only: a SQLite database (by its header), sound (SQLite's
/// integrity check), a Lockpoint database with a migration history no newer than this program;
/// then counts what it holds. A refusal says which of those it is not.
pub async fn verify(path: &Path) -> Result<Verified, BackupError> {
    let shown = path.display();
    let refuse = |why: String| BackupError::Refused(format!("{shown}: {why}"));
    let mut file = File::open(path).map_err(|e| refuse(format!("cannot be read ({e})")))?;
    let bytes = file
        .metadata()
        .map_err(|e| refuse(format!("cannot be read ({e})")))?
        .len();
    if bytes == 0 {
        return Err(refuse("an empty file, not a SQLite database".into()));
    }
    let mut head = [0_u8; 16];
    let read = file.read(&mut head).unwrap_or(0);
    if read < head.len() || &head != SQLITE_HEADER {
        return Err(refuse(
            "not a SQLite database (it does not begin with SQLite's header)".into(),
        ));
    }
    drop(file);
    let options = SqliteConnectOptions::from_str("sqlite:")?
        .filename(path)
        .read_only(true)
        .create_if_missing(false)
        .busy_timeout(Duration::from_secs(10));
    let mut conn = SqliteConnection::connect_with(&options)
        .await
        .map_err(|e| refuse(format!("damaged: SQLite cannot open it ({e})")))?;
    let found = contents(&mut conn).await;
    let _ = conn.close().await;
    let mut found = found.map_err(|e| match e {
        BackupError::Refused(why) => refuse(why),
        BackupError::Sql(e) => refuse(format!("damaged: {e}")),
        other => other,
    })?;
    found.checked.bytes = bytes;
    Ok(found)
}

async fn contents(conn: &mut SqliteConnection) -> Result<Verified, BackupError> {
    let checked = check_connection(conn).await.map_err(|e| match e {
        BackupError::Refused(why) if why.starts_with("the integrity check") => {
            BackupError::Refused(format!("damaged: {why}"))
        }
        other => other,
    })?;
    let shop_name: String = sqlx::query_scalar("SELECT name FROM shop_settings WHERE id = 1")
        .fetch_optional(&mut *conn)
        .await?
        .unwrap_or_default();
    // The zone is stored from migration 8 on; an older backup is read in the server's zone.
    let zone: String = sqlx::query_scalar("SELECT time_zone FROM shop_settings WHERE id = 1")
        .fetch_optional(&mut *conn)
        .await
        .ok()
        .flatten()
        .unwrap_or_default();
    let count = |table: &'static str| {
        sqlx::query_scalar::<_, i64>(AssertSqlSafe(format!("SELECT COUNT(*) FROM {table}")))
    };
    let customers = count("customers").fetch_one(&mut *conn).await?;
    let builds = count("builds").fetch_one(&mut *conn).await?;
    let cover_heights = count("cover_heights").fetch_one(&mut *conn).await?;
    let passes = count("passes").fetch_one(&mut *conn).await?;
    let mut newest: Option<String> = None;
    for table in RECORD_TABLES {
        let columns: Vec<String> = sqlx::query_scalar("SELECT name FROM pragma_table_info(?)")
            .bind(table)
            .fetch_all(&mut *conn)
            .await?;
        let Some(column) = ["updated_at", "created_at"]
            .into_iter()
            .find(|c| columns.iter().any(|have| have == c))
        else {
            continue;
        };
        let latest: Option<String> =
            sqlx::query_scalar(AssertSqlSafe(format!("SELECT MAX({column}) FROM {table}")))
                .fetch_one(&mut *conn)
                .await?;
        if latest > newest {
            newest = latest;
        }
    }
    let zone = ShopZone::parse(&zone).unwrap_or_else(|_| ShopZone::server());
    Ok(Verified {
        checked,
        shop_name,
        customers,
        builds,
        cover_heights,
        passes,
        newest_record: newest.map(|t| zone.local_stamp(&t)),
    })
}
