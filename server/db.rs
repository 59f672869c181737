//! Database access: opening the SQLite file, and one module per table or aggregate with one
//! function per query, named for what it returns. Functions take a connection (`&mut *tx` or a
//! pooled connection) and never begin their own transaction: the handler owns the unit of work.

pub mod activity;
pub mod audit;
pub mod bench;
pub mod builds;
pub mod cars;
pub mod customers;
pub mod dossier;
pub mod export;
pub mod heights;
pub mod passes;
pub mod record;
pub mod sessions;
pub mod settings;
pub mod setups;
pub mod sheets;
pub mod throttle;
pub mod tokens;
pub mod users;

use std::path::Path;
use std::str::FromStr;
use std::time::Duration;

use sqlx::migrate::{Migration, MigrationType, Migrator};
use sqlx::sqlite::{SqliteConnectOptions, SqliteJournalMode, SqlitePoolOptions, SqliteSynchronous};
use sqlx::{AssertSqlSafe, SqlSafeStr, SqlitePool};

/// Opens (creating if needed) the database file and applies pending migrations.
///
/// WAL lets readers run beside the one writer. `synchronous = FULL` makes every acknowledged
/// commit durable across power loss, not only process crashes: the shop's measurements cannot be
/// re-taken, and the write rate of a counter is small enough to pay an fsync per commit.
pub async fn open(path: &Path) -> Result<SqlitePool, sqlx::Error> {
    let options = SqliteConnectOptions::from_str("sqlite:")?
        .filename(path)
        .create_if_missing(true)
        .journal_mode(SqliteJournalMode::Wal)
        .synchronous(SqliteSynchronous::Full)
        .busy_timeout(Duration::from_secs(10))
        .foreign_keys(true);
    let pool = SqlitePoolOptions::new()
        .max_connections(8)
        .connect_with(options)
        .await?;
    migrator().run(&pool).await?;
    Ok(pool)
}

/// Every migration, in order, built into the binary. A new file in `migrations/` is added here
/// (a test checks that the folder and this list agree).
pub const MIGRATIONS: &[(i64, &str, &str)] = &[
    (
        1,
        "shop records",
        include_str!("../migrations/0001_shop_records.sql"),
    ),
    (
        2,
        "new disc baseline",
        include_str!("../migrations/0002_new_disc_baseline.sql"),
    ),
    (
        3,
        "setup sheets",
        include_str!("../migrations/0003_setup_sheets.sql"),
    ),
    (
        4,
        "audit history",
        include_str!("../migrations/0004_audit_history.sql"),
    ),
    (
        5,
        "turns per adjuster",
        include_str!("../migrations/0005_turns_per_adjuster.sql"),
    ),
    (
        6,
        "sign in throttle",
        include_str!("../migrations/0006_sign_in_throttle.sql"),
    ),
    (
        7,
        "staff display name",
        include_str!("../migrations/0007_staff_display_name.sql"),
    ),
    (
        8,
        "shop time zone",
        include_str!("../migrations/0008_shop_time_zone.sql"),
    ),
];

fn migrator() -> Migrator {
    Migrator::with_migrations(
        MIGRATIONS
            .iter()
            .map(|(version, description, sql)| {
                Migration::new(
                    *version,
                    (*description).into(),
                    MigrationType::Simple,
                    AssertSqlSafe(*sql).into_sql_str(),
                    false,
                )
            })
            .collect(),
    )
}

/// Rows per page in long lists.
pub const PAGE_SIZE: i64 = 25;
