//! Migrations: every file in `migrations/` is built in, and a database migrated by the
//! hand-written list that came before `sqlx::migrate!` opens unchanged under it.

use std::str::FromStr;

use lockpoint::db;
use sqlx::migrate::{Migration, MigrationType, Migrator};
use sqlx::sqlite::SqliteConnectOptions;
use sqlx::{AssertSqlSafe, Connection, SqlSafeStr, SqliteConnection};

use crate::support::TempDb;

const FOLDER: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/migrations");

/// The file names in `migrations/`, sorted.
fn files() -> Vec<String> {
    let mut files: Vec<String> = std::fs::read_dir(FOLDER)
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .collect();
    files.sort();
    files
}

/// The runner as it was before `sqlx::migrate!`: a hand-written list of (version, description,
/// SQL) turned into `Migration::new` steps. Frozen here so the test keeps meaning something.
fn hand_listed_runner() -> Migrator {
    const OLD_LIST: [(i64, &str, &str); 5] = [
        (1, "shop records", "0001_shop_records.sql"),
        (2, "new disc baseline", "0002_new_disc_baseline.sql"),
        (3, "setup sheets", "0003_setup_sheets.sql"),
        (4, "audit history", "0004_audit_history.sql"),
        (5, "turns per adjuster", "0005_turns_per_adjuster.sql"),
    ];
    Migrator::with_migrations(
        OLD_LIST
            .iter()
            .map(|(version, description, file)| {
                let sql = std::fs::read_to_string(format!("{FOLDER}/{file}")).unwrap();
                Migration::new(
                    *version,
                    (*description).into(),
                    MigrationType::Simple,
                    AssertSqlSafe(sql).into_sql_str(),
                    false,
                )
            })
            .collect(),
    )
}

async fn connect(db: &TempDb) -> SqliteConnection {
    let options = SqliteConnectOptions::from_str("sqlite:")
        .unwrap()
        .filename(&db.path)
        .create_if_missing(true);
    SqliteConnection::connect_with(&options).await.unwrap()
}

/// What `_sqlx_migrations` records: version, description, checksum, success, when applied.
type History = Vec<(i64, String, Vec<u8>, bool, String)>;

async fn history(conn: &mut SqliteConnection) -> History {
    sqlx::query_as(
        "SELECT version, description, checksum, success, installed_on
         FROM _sqlx_migrations ORDER BY version",
    )
    .fetch_all(conn)
    .await
    .unwrap()
}

#[test]
fn every_file_in_the_migrations_folder_is_built_in_unchanged() {
    let files = files();
    let built_in: Vec<&Migration> = db::MIGRATOR.iter().collect();
    // sqlx skips a file whose name does not read `<number>_<name>.sql` without a word.
    assert_eq!(files.len(), built_in.len(), "{files:?}");
    for (i, (file, migration)) in files.iter().zip(&built_in).enumerate() {
        let number = i64::try_from(i).unwrap() + 1;
        assert_eq!(
            migration.version, number,
            "{file}: numbered in order, no gaps"
        );
        assert!(file.starts_with(&format!("{number:04}_")), "{file}");
        assert_eq!(migration.migration_type, MigrationType::Simple, "{file}");
        assert!(!migration.no_tx, "{file} runs in a transaction");
        let on_disk = std::fs::read_to_string(format!("{FOLDER}/{file}")).unwrap();
        assert_eq!(migration.sql.as_str(), on_disk, "{file}");
    }
    assert_eq!(db::latest_migration(), i64::try_from(files.len()).unwrap());
}

#[test]
fn the_built_in_steps_carry_the_versions_names_and_checksums_the_old_runner_recorded() {
    let old = hand_listed_runner();
    let new: Vec<_> = db::MIGRATOR
        .iter()
        .map(|m| (m.version, m.description.to_string(), m.checksum.to_vec()))
        .collect();
    let before: Vec<_> = old
        .iter()
        .map(|m| (m.version, m.description.to_string(), m.checksum.to_vec()))
        .collect();
    assert_eq!(new[..before.len()], before[..]);
    assert_eq!(db::MIGRATOR.table_name, old.table_name);
}

#[tokio::test]
async fn a_database_made_by_the_old_runner_opens_and_is_not_migrated_again() {
    let file = TempDb::new();
    let mut conn = connect(&file).await;
    hand_listed_runner().run(&mut conn).await.unwrap();
    sqlx::query("INSERT INTO customers (name) VALUES ('Kept Customer')")
        .execute(&mut conn)
        .await
        .unwrap();
    let recorded = history(&mut conn).await;
    assert_eq!(recorded.len(), 5);
    conn.close().await.unwrap();

    let pool = db::open(&file.path)
        .await
        .expect("the new runner accepts it");
    let mut conn = pool.acquire().await.unwrap();
    let after = history(&mut conn).await;
    assert_eq!(
        after[..recorded.len()],
        recorded[..],
        "the old steps stand as recorded (none re-run)"
    );
    assert_eq!(
        after.len(),
        db::MIGRATOR.iter().count(),
        "steps newer than the old list are applied"
    );
    let kept: i64 =
        sqlx::query_scalar("SELECT COUNT(*) FROM customers WHERE name = 'Kept Customer'")
            .fetch_one(&mut *conn)
            .await
            .unwrap();
    assert_eq!(kept, 1);
}

#[tokio::test]
async fn a_database_made_by_the_new_runner_is_accepted_by_the_old_one() {
    let file = TempDb::new();
    let pool = db::open(&file.path).await.unwrap();
    pool.close().await;
    let mut conn = connect(&file).await;
    // An older build on the same file (a rollback) finds no changed step among the ones it
    // knows; the newer steps are unknown to it, which it is told to accept here (left to
    // itself, an older build refuses a newer database, as it should).
    let mut old = hand_listed_runner();
    old.set_ignore_missing(true);
    old.run(&mut conn).await.unwrap();
    assert_eq!(history(&mut conn).await.len(), db::MIGRATOR.iter().count());
}
