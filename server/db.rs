//! Database access: opening the SQLite file, and one module per table or aggregate with one
//! function per query, named for what it returns. Functions take a connection (`&mut *tx` or a
//! pooled connection) and never begin their own transaction: the handler owns the unit of work.

pub mod activity;
pub mod audit;
pub mod backup_schedule;
pub mod bench;
pub mod builds;
pub mod cars;
pub mod customers;
pub mod dossier;
pub mod export;
pub mod heights;
pub mod imports;
pub mod kept;
pub mod pass_logs;
pub mod passes;
pub mod read;
pub mod record;
pub mod search;
pub mod sessions;
pub mod settings;
pub mod setups;
pub mod sheets;
pub mod status;
pub mod throttle;
pub mod tokens;
pub mod users;

use std::path::Path;
use std::str::FromStr;
use std::time::Duration;

use sqlx::migrate::Migrator;
use sqlx::sqlite::{SqliteConnectOptions, SqliteJournalMode, SqlitePoolOptions, SqliteSynchronous};
use sqlx::{SqliteConnection, SqlitePool};

/// Opens (creating if needed) the database file and applies pending migrations.
///
/// WAL lets readers run beside the one writer. `synchronous = FULL` makes every acknowledged
/// commit durable across power loss, not only process crashes: the shop's measurements cannot be
/// re-taken, and the write rate of a counter is small enough to pay an fsync per commit.
pub async fn open(path: &Path) -> Result<SqlitePool, sqlx::Error> {
    create_private(path)?;
    let options = SqliteConnectOptions::from_str("sqlite:")?
        .filename(path)
        .create_if_missing(true)
        .journal_mode(SqliteJournalMode::Wal)
        .synchronous(SqliteSynchronous::Full)
        .busy_timeout(Duration::from_secs(10))
        .foreign_keys(true)
        // Sized for a 2-core box with a 64 MB goal: see DEVELOPERS.md, "SQLite and the pool".
        .pragma("cache_size", "-1024")
        .pragma("mmap_size", "0")
        .pragma("temp_store", "memory");
    let pool = SqlitePoolOptions::new()
        .max_connections(POOL_SIZE)
        .min_connections(1)
        .idle_timeout(Duration::from_secs(60))
        // A connection to a local file does not go stale: no ping (a round trip to the
        // connection's worker thread) before each use.
        .test_before_acquire(false)
        .connect_with(options)
        .await?;
    MIGRATOR.run(&pool).await?;
    Ok(pool)
}

/// Creates a missing database file empty (an empty file is an empty SQLite database) and
/// readable by its owner only (0600 on Unix): it holds password and token hashes, and SQLite
/// gives its `-wal` and `-shm` files the database file's permissions. An existing file is left
/// as it is.
fn create_private(path: &Path) -> std::io::Result<()> {
    let mut options = std::fs::OpenOptions::new();
    options.write(true).create_new(true);
    #[cfg(unix)]
    std::os::unix::fs::OpenOptionsExt::mode(&mut options, 0o600);
    match options.open(path) {
        Ok(_) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => Ok(()),
        // A path SQLite may still open its own way (such as ":memory:"): let it say.
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(()),
        Err(e) => Err(e),
    }
}

/// Pooled connections: the one writer (the others wait for their turn before they take one),
/// the pages' small reads (sessions, the frame, lists, search) and the background tasks; a
/// whole build is read on `read::Reader`'s own connections. Few, so that the per-connection
/// page caches (and the thread each connection runs on) stay small: 8 here cost 16 MB of peak
/// memory, for customer pages about a sixth faster and the rest the same (DEVELOPERS.md,
/// "SQLite and the pool").
pub const POOL_SIZE: u32 = 4;

/// Every file in `migrations/`, in order, built into the binary by `sqlx::migrate!` (the build
/// script reruns it when a file is added). Each applied step is recorded in `_sqlx_migrations`
/// with its version, description (the file name after the number, `_` read as a space) and the
/// SHA-384 of the file, exactly as the hand-written list before it recorded them, so databases,
/// backups and exports made by earlier builds open unchanged.
pub static MIGRATOR: Migrator = sqlx::migrate!();

/// The newest migration this program knows (0 when it knows none).
pub fn latest_migration() -> i64 {
    MIGRATOR.iter().map(|m| m.version).max().unwrap_or(0)
}

/// Whether this program knows the migration numbered `version`.
pub fn knows_migration(version: i64) -> bool {
    MIGRATOR.version_exists(version)
}

/// Rows per page in long lists.
pub const PAGE_SIZE: i64 = 25;

/// The row `sql` (a statement with one `?`, bound to `key`) finds, if any: how a db module reads
/// one row by its key.
pub(crate) async fn one<T>(
    conn: &mut SqliteConnection,
    sql: &'static str,
    key: i64,
) -> sqlx::Result<Option<T>>
where
    T: for<'r> sqlx::FromRow<'r, sqlx::sqlite::SqliteRow> + Send + Unpin,
{
    sqlx::query_as(sql).bind(key).fetch_optional(conn).await
}
