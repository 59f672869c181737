//! The server's own backups: the real binary copying every 10 s while writes go on, killed
//! during copies, refused by a folder it cannot write to; the schedule saved under Settings with
//! a folder that disappears; and `lockpoint backup verify` on sound and damaged files.

use std::collections::BTreeSet;
use std::os::unix::fs::{MetadataExt, PermissionsExt};
use std::os::unix::process::CommandExt;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::str::FromStr;
use std::sync::atomic::{AtomicBool, AtomicU32, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant, SystemTime};

use axum::http::StatusCode;
use lockpoint::backup::plan;
use lockpoint::backup::verify::verify;
use sqlx::sqlite::SqliteConnectOptions;
use sqlx::{Connection, SqliteConnection};

use crate::hostile::Rng;
use crate::support::{
    Server, TestApp, cli_ok as ok, execute_on_file, lockpoint, newer_copy, run_cli as run, serving,
};

const PASSWORD: &str = "scheduled backup password";
/// The unprivileged account a test drops to when it runs as root (where a read-only folder is
/// still writable).
const NOBODY: u32 = 65_534;

/// A temporary folder, removed when dropped.
struct Scratch(PathBuf);

impl Scratch {
    fn new() -> Self {
        static N: AtomicU32 = AtomicU32::new(0);
        let dir = std::env::temp_dir().join(format!(
            "lockpoint-scheduled-{}-{}",
            std::process::id(),
            N.fetch_add(1, Ordering::Relaxed)
        ));
        std::fs::create_dir_all(&dir).unwrap();
        Self(dir)
    }

    fn path(&self, name: &str) -> PathBuf {
        self.0.join(name)
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::set_permissions(&self.0, std::fs::Permissions::from_mode(0o755));
        if let Ok(entries) = std::fs::read_dir(&self.0) {
            for e in entries.flatten() {
                let _ = std::fs::set_permissions(e.path(), std::fs::Permissions::from_mode(0o755));
            }
        }
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// `lockpoint backup FILE --db DB`, which must succeed.
fn backup_to(db: &Path, file: &Path) {
    ok(
        &[
            "backup",
            file.to_str().unwrap(),
            "--db",
            db.to_str().unwrap(),
        ],
        "",
    );
}

/// A database with an admin `boss` and a tech `sam`; answers an API token of the admin.
fn new_shop(db: &Path) -> String {
    let db = db.to_str().unwrap();
    ok(
        &["user", "add", "boss", "--role", "admin", "--db", db],
        PASSWORD,
    );
    ok(
        &["user", "add", "sam", "--role", "tech", "--db", db],
        PASSWORD,
    );
    ok(&["token", "create", "boss", "--db", db], "")
        .trim()
        .to_string()
}

/// `lockpoint serve` on `db` by `cmd`, backing up into `dir` every 10 s with the `more`
/// options, the shop's time read in UTC.
fn start(mut cmd: Command, db: &Path, dir: &Path, more: &[&str]) -> Server {
    Server::spawn(
        serving(&mut cmd, db)
            .args([
                "--backup-dir",
                dir.to_str().unwrap(),
                "--backup-every",
                "10s",
            ])
            .args(more)
            // The names carry the shop's time; with no zone set that is the server's.
            .env("TZ", "UTC")
            .env("RUST_LOG", "warn")
            .stderr(Stdio::null()),
    )
}

/// Signs in through the login form: the session cookie.
fn sign_in(server: &Server, name: &str) -> String {
    let body =
        crate::support::form_encode(&[("username", name), ("password", PASSWORD), ("next", "/")]);
    let (status, head, _) = server.send(
        "POST",
        "/login",
        &[("Content-Type", "application/x-www-form-urlencoded")],
        &body,
    );
    assert_eq!(status, 303, "{head}");
    head.lines()
        .find_map(|l| {
            l.strip_prefix("set-cookie: ")
                .or_else(|| l.strip_prefix("Set-Cookie: "))
        })
        .and_then(|c| c.split(';').next())
        .expect("a session cookie")
        .to_string()
}

/// A page (body) for a signed-in cookie, answered 200 (a plain body, never compressed: the
/// request asks for no encoding).
fn page_for(server: &Server, path: &str, cookie: &str) -> String {
    let (status, head, body) = server.send("GET", path, &[("Cookie", cookie)], "");
    assert_eq!(status, 200, "{path}: {head}");
    body
}

/// Finished copies in `dir` (names as the server gives them).
fn copies(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .map(|entries| {
            entries
                .flatten()
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .filter(|n| n.starts_with("lockpoint-") && n.ends_with(".db"))
                .collect()
        })
        .unwrap_or_default();
    names.sort();
    names
}

/// Every other file in `dir`: temporaries and anything else.
fn others(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| !(n.starts_with("lockpoint-") && n.ends_with(".db")))
        .collect();
    names.sort();
    names
}

/// When a copy named `lockpoint-YYYYMMDD-HHMMSS.db` (read as UTC) began, to the second.
fn began(name: &str) -> SystemTime {
    let stamp = &name["lockpoint-".len().."lockpoint-".len() + 15];
    let civil = jiff::civil::DateTime::strptime("%Y%m%d-%H%M%S", stamp).unwrap();
    let t = civil.to_zoned(jiff::tz::TimeZone::UTC).unwrap().timestamp();
    SystemTime::from(t)
}

/// `lockpoint backup verify FILE`: (success, stdout, stderr).
fn verify_cli(file: &Path) -> (bool, String, String) {
    let out = run(&["backup", "verify", file.to_str().unwrap()], "");
    (
        out.status.success(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

async fn customer_ids(file: &Path) -> BTreeSet<i64> {
    let options = SqliteConnectOptions::from_str("sqlite:")
        .unwrap()
        .filename(file)
        .read_only(true);
    let mut conn = SqliteConnection::connect_with(&options).await.unwrap();
    let ids: Vec<i64> = sqlx::query_scalar("SELECT id FROM customers")
        .fetch_all(&mut conn)
        .await
        .unwrap();
    conn.close().await.unwrap();
    ids.into_iter().collect()
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_server_backing_up_every_10s_keeps_two_private_checked_copies_with_every_acknowledged_write()
 {
    let scratch = Scratch::new();
    let db = scratch.path("shop.db");
    let dir = scratch.path("backups");
    std::fs::create_dir(&dir).unwrap();
    let token = new_shop(&db);
    // The environment names other values; the command line wins over each of them.
    let elsewhere = scratch.path("from-the-environment");
    std::fs::create_dir(&elsewhere).unwrap();
    let mut cmd = lockpoint();
    cmd.env("LOCKPOINT_BACKUP_DIR", &elsewhere)
        .env("LOCKPOINT_BACKUP_EVERY", "1d")
        .env("LOCKPOINT_BACKUP_KEEP", "5");
    let server = start(cmd, &db, &dir, &["--backup-keep", "2"]);
    let server = Arc::new(server);

    // A writer: each customer the server acknowledged, with the moment the answer arrived.
    let acked: Arc<Mutex<Vec<(SystemTime, i64)>>> = Arc::default();
    let stop = Arc::new(AtomicBool::new(false));
    let writer = {
        let (server, acked, stop) = (Arc::clone(&server), Arc::clone(&acked), Arc::clone(&stop));
        std::thread::spawn(move || {
            let mut n = 0;
            while !stop.load(Ordering::Relaxed) {
                n += 1;
                let body = format!("{{\"name\": \"Customer {n}\"}}");
                let auth = format!("Bearer {token}");
                let (status, head, answer) = server.send(
                    "POST",
                    "/api/v1/customers",
                    &[
                        ("Authorization", auth.as_str()),
                        ("Content-Type", "application/json"),
                    ],
                    &body,
                );
                assert_eq!(status, 201, "{head}\n{answer}");
                let id = serde_json::from_str::<serde_json::Value>(&answer).unwrap()["id"]
                    .as_i64()
                    .unwrap();
                acked.lock().unwrap().push((SystemTime::now(), id));
                std::thread::sleep(Duration::from_millis(20));
            }
        })
    };

    // Watch the folder for 32 s: never more than 2 copies; each new one is kept aside (it may
    // be pruned later) once its mode is checked.
    let aside = scratch.path("aside");
    std::fs::create_dir(&aside).unwrap();
    let started = Instant::now();
    let mut seen: BTreeSet<String> = BTreeSet::new();
    let mut most = 0;
    while started.elapsed() < Duration::from_secs(32) {
        let now = copies(&dir);
        most = most.max(now.len());
        for name in now {
            if seen.contains(&name) {
                continue;
            }
            let path = dir.join(&name);
            let Ok(meta) = std::fs::metadata(&path) else {
                continue;
            };
            assert_eq!(
                meta.mode() & 0o077,
                0,
                "{name} is readable by others: {:o}",
                meta.mode()
            );
            if std::fs::copy(&path, aside.join(&name)).is_ok() {
                seen.insert(name);
            }
        }
        std::thread::sleep(Duration::from_millis(100));
    }
    stop.store(true, Ordering::Relaxed);
    writer.join().unwrap();
    assert!(most <= 2, "{most} copies at once with --backup-keep 2");
    assert!(
        seen.len() >= 3,
        "copies seen in 32 s at one every 10 s: {seen:?}"
    );
    assert_eq!(copies(&dir).len(), 2);
    assert!(others(&dir).is_empty(), "{:?}", others(&dir));
    assert!(others(&elsewhere).is_empty() && copies(&elsewhere).is_empty());

    let acked = acked.lock().unwrap().clone();
    let mut checked_writes = 0;
    for name in &seen {
        let file = aside.join(name);
        let (good, out, err) = verify_cli(&file);
        assert!(good, "{name}: {err}");
        assert!(out.contains("a sound Lockpoint backup"), "{out}");
        let held = customer_ids(&file).await;
        let start = began(name);
        for (at, id) in &acked {
            if *at < start {
                assert!(
                    held.contains(id),
                    "{name} lacks customer {id} acknowledged before it began"
                );
                checked_writes += 1;
            }
        }
    }
    assert!(checked_writes > 10, "the writes came before the copies");
    drop(server);
}

/// Sets every finished copy's time back an hour, so the next start makes a copy at once.
fn age_copies(dir: &Path) {
    let hour_ago = SystemTime::now() - Duration::from_secs(3600);
    for name in copies(dir) {
        let f = std::fs::File::options()
            .write(true)
            .open(dir.join(&name))
            .unwrap();
        f.set_modified(hour_ago).unwrap();
    }
}

/// Fills the shop with about 6 MB of notes, so that a copy takes long enough to be killed in.
async fn fill(db: &Path) {
    let pool = lockpoint::db::open(db).await.unwrap();
    let note = "x".repeat(3000);
    let mut tx = pool.begin().await.unwrap();
    for i in 0..2000 {
        sqlx::query("INSERT INTO customers (name, notes) VALUES (?, ?)")
            .bind(format!("Filler {i}"))
            .bind(&note)
            .execute(&mut *tx)
            .await
            .unwrap();
    }
    tx.commit().await.unwrap();
    pool.close().await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn killing_the_server_during_backups_leaves_only_sound_copies_and_no_temporaries() {
    let scratch = Scratch::new();
    let db = scratch.path("shop.db");
    let dir = scratch.path("backups");
    std::fs::create_dir(&dir).unwrap();
    new_shop(&db);
    fill(&db).await;
    let mut rng = Rng::new(0x4C50_4241_434B_5550);
    let mut verified: BTreeSet<String> = BTreeSet::new();
    let mut temps_killed = 0;
    for round in 0..20 {
        let left = others(&dir);
        age_copies(&dir);
        let server = start(lockpoint(), &db, &dir, &[]);
        // The temporaries of the round before are gone once the server has taken the folder up
        // (before its first copy there).
        let deadline = Instant::now() + Duration::from_secs(20);
        while others(&dir).iter().any(|n| left.contains(n)) {
            assert!(
                Instant::now() < deadline,
                "round {round}: left over {:?}",
                others(&dir)
            );
            std::thread::sleep(Duration::from_millis(5));
        }
        // Every other round is killed the moment a copy is being written; the rest at a random
        // moment of the first 1.5 s (during the copy, its check, its rename or the pruning).
        if round % 2 == 0 {
            let deadline = Instant::now() + Duration::from_secs(20);
            while !others(&dir).iter().any(|n| n.ends_with(".tmp")) {
                assert!(Instant::now() < deadline, "round {round}: no copy began");
                std::thread::sleep(Duration::from_millis(2));
            }
        } else {
            std::thread::sleep(Duration::from_millis(rng.below(1500) as u64));
        }
        server.kill();
        if others(&dir).iter().any(|n| n.ends_with(".tmp")) {
            temps_killed += 1;
        }
        for name in copies(&dir) {
            if verified.insert(name.clone()) {
                let found = verify(&dir.join(&name))
                    .await
                    .unwrap_or_else(|e| panic!("round {round}: {name}: {e}"));
                assert_eq!(found.customers, 2000);
            }
        }
    }
    assert!(temps_killed >= 10, "copies cut off: {temps_killed}");
    // One more start cleans up the last round's temporaries; every copy still verifies, the
    // last through the command itself.
    let left = others(&dir);
    let server = start(lockpoint(), &db, &dir, &[]);
    let deadline = Instant::now() + Duration::from_secs(20);
    while others(&dir).iter().any(|n| left.contains(n)) {
        assert!(Instant::now() < deadline, "left over {:?}", others(&dir));
        std::thread::sleep(Duration::from_millis(20));
    }
    server.kill();
    let all = copies(&dir);
    assert!(!all.is_empty());
    for name in &all {
        assert!(plan::is_backup_name(name), "{name}");
    }
    let (good, _, err) = verify_cli(&dir.join(all.last().unwrap()));
    assert!(good, "{err}");
}

/// Whether this process runs as root (the owner of `/proc/self` is the process's user).
fn running_as_root() -> bool {
    std::fs::metadata("/proc/self").is_ok_and(|m| m.uid() == 0)
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_read_only_folder_is_reported_to_admins_and_the_notice_goes_once_a_backup_is_made() {
    let scratch = Scratch::new();
    let db = scratch.path("shop.db");
    let dir = scratch.path("read-only");
    std::fs::create_dir(&dir).unwrap();
    new_shop(&db);
    // An earlier copy, two days old: the first backup is due at start, and fails.
    let earlier = dir.join("lockpoint-20200101-000000.db");
    backup_to(&db, &earlier);
    std::fs::File::options()
        .write(true)
        .open(&earlier)
        .unwrap()
        .set_modified(SystemTime::now() - Duration::from_secs(2 * 86_400))
        .unwrap();
    // Root writes into a 0555 folder anyway: the server then runs as an unprivileged account,
    // which owns the database but not the folder.
    let mut cmd = lockpoint();
    if running_as_root() {
        std::os::unix::fs::chown(&scratch.0, Some(NOBODY), Some(NOBODY)).unwrap();
        for entry in std::fs::read_dir(&scratch.0).unwrap().flatten() {
            if entry.path() != dir {
                std::os::unix::fs::chown(entry.path(), Some(NOBODY), Some(NOBODY)).unwrap();
            }
        }
        cmd.uid(NOBODY).gid(NOBODY);
    }
    std::fs::set_permissions(&dir, std::fs::Permissions::from_mode(0o555)).unwrap();
    let server = start(cmd, &db, &dir, &[]);
    let boss = sign_in(&server, "boss");
    let sam = sign_in(&server, "sam");
    let deadline = Instant::now() + Duration::from_secs(20);
    let page = loop {
        let page = page_for(&server, "/backup", &boss);
        if page.contains("▲ failing") {
            break page;
        }
        assert!(Instant::now() < deadline, "no failure reported:\n{page}");
        std::thread::sleep(Duration::from_millis(200));
    };
    assert!(page.contains("Permission denied"), "{page}");
    assert_eq!(server.send("GET", "/healthz", &[], "").0, 200);
    let counter = page_for(&server, "/", &boss);
    assert!(counter.contains("The last backup failed"), "{counter}");
    assert!(counter.contains("Permission denied"), "{counter}");
    let tech = page_for(&server, "/", &sam);
    assert!(
        !tech.contains("backup-notice"),
        "a tech sees the notice:\n{tech}"
    );
    // The earlier copy is kept, nothing half-written is left.
    assert_eq!(copies(&dir), ["lockpoint-20200101-000000.db"]);
    assert!(others(&dir).is_empty(), "{:?}", others(&dir));

    // The folder made writable: the next attempt (a period later) succeeds and the notice goes.
    std::fs::set_permissions(&dir, std::fs::Permissions::from_mode(0o777)).unwrap();
    let deadline = Instant::now() + Duration::from_secs(30);
    loop {
        let counter = page_for(&server, "/", &boss);
        if !counter.contains("backup-notice") {
            break;
        }
        assert!(Instant::now() < deadline, "the notice stayed:\n{counter}");
        std::thread::sleep(Duration::from_millis(200));
    }
    let now = copies(&dir);
    assert_eq!(now.len(), 2, "{now:?}");
    assert_eq!(now[0], "lockpoint-20200101-000000.db");
    let page = page_for(&server, "/backup", &boss);
    assert!(!page.contains("▲ failing"), "{page}");
    assert!(page.contains(&now[1]), "{page}");
    server.kill();
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_folder_that_disappears_is_reported_and_the_counter_notice_shows_for_admins_until_a_backup_is_made()
 {
    let app = TestApp::new().await;
    let boss = app.login("boss").await;
    let sam = app.login("sam").await;
    let scratch = Scratch::new();
    let dir = scratch.path("usb");
    std::fs::create_dir(&dir).unwrap();

    // Before any folder is chosen, admins get a one-line suggestion; techs nothing.
    let counter = boss.get("/").await.body;
    assert!(counter.contains("Backups are not scheduled"), "{counter}");
    assert!(!sam.get("/").await.body.contains("backup-notice"));

    // A bad schedule is refused beside its fields.
    let refused = boss
        .post(
            "/backup/schedule",
            &[("dir", "usb"), ("every", "5s"), ("keep", "0")],
        )
        .await;
    assert_eq!(refused.status, StatusCode::UNPROCESSABLE_ENTITY);
    for msg in ["full path", "at least 10s", "from 1 to 1000"] {
        assert!(refused.body.contains(msg), "{msg}: {}", refused.body);
    }

    let saved = boss
        .post(
            "/backup/schedule",
            &[
                ("dir", dir.to_str().unwrap()),
                ("every", "1d"),
                ("keep", "3"),
            ],
        )
        .await;
    let page = boss.follow(&saved).await.body;
    assert!(page.contains("Saved: backups every day into"), "{page}");
    // The first copy is made at once (the folder holds none younger than a day).
    let wait_for = |what: &'static str, f: Box<dyn Fn() -> bool + Send>| async move {
        let deadline = Instant::now() + Duration::from_secs(20);
        while !f() {
            assert!(Instant::now() < deadline, "waited in vain for {what}");
            tokio::time::sleep(Duration::from_millis(50)).await;
        }
    };
    let d = dir.clone();
    wait_for("the first copy", Box::new(move || copies(&d).len() == 1)).await;
    let backups = Arc::clone(&app.state.backups);
    let b = Arc::clone(&backups);
    wait_for(
        "the copy on record",
        Box::new(move || b.snapshot().record.last_good.is_some()),
    )
    .await;
    let counter = boss.get("/").await.body;
    assert!(!counter.contains("backup-notice"), "{counter}");
    assert_eq!(app.count("backup_schedule").await, 1);
    // The folder and the database are both under the system's temporary folder.
    let page = boss.get("/backup").await.body;
    assert!(page.contains("on the same disk as the database"), "{page}");

    // The drive is pulled.
    std::fs::remove_dir_all(&dir).unwrap();
    boss.post_saved("/backup/now", &[]).await;
    let b = Arc::clone(&backups);
    wait_for("the failure", Box::new(move || b.snapshot().record.failing)).await;
    assert_eq!(app.get("/healthz", None).await.status, StatusCode::OK);
    let page = boss.get("/backup").await.body;
    assert!(page.contains("▲ failing"), "{page}");
    assert!(page.contains("does not exist"), "{page}");
    let counter = boss.get("/").await.body;
    assert!(counter.contains("The last backup failed"), "{counter}");
    assert!(counter.contains("does not exist"), "{counter}");
    assert!(!sam.get("/").await.body.contains("backup-notice"));
    // The server did not make the folder for itself.
    assert!(!dir.exists());

    // The drive is back: a backup made by hand clears the notice.
    std::fs::create_dir(&dir).unwrap();
    boss.post("/backup/now", &[]).await;
    let b = Arc::clone(&backups);
    wait_for(
        "the good copy",
        Box::new(move || {
            !b.snapshot().record.failing && b.snapshot().record.running_since.is_none()
        }),
    )
    .await;
    let counter = boss.get("/").await.body;
    assert!(!counter.contains("backup-notice"), "{counter}");
    let page = boss.get("/backup").await.body;
    assert!(!page.contains("▲ failing"), "{page}");
    assert!(page.contains("since then a backup succeeded"), "{page}");
    assert_eq!(copies(&dir).len(), 1);
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn verify_refuses_damaged_text_empty_foreign_and_newer_files_with_the_reason() {
    let scratch = Scratch::new();
    let db = scratch.path("shop.db");
    // A demo shop, copied by `lockpoint backup`.
    let pool = lockpoint::db::open(&db).await.unwrap();
    lockpoint::demo::seed_if_empty(&pool).await.unwrap();
    let (customers, passes): (i64, i64) =
        sqlx::query_as("SELECT (SELECT COUNT(*) FROM customers), (SELECT COUNT(*) FROM passes)")
            .fetch_one(&pool)
            .await
            .unwrap();
    pool.close().await;
    let good = scratch.path("good.db");
    backup_to(&db, &good);
    let before = std::fs::read(&good).unwrap();
    let (sound, out, err) = verify_cli(&good);
    assert!(sound, "{err}");
    assert!(
        out.contains(&format!("customers: {customers},"))
            && out.contains(&format!("passes: {passes}")),
        "{out}"
    );
    assert!(out.contains("newest record: 20"), "{out}");
    // Read-only: not one byte changed, no journal left beside it.
    assert_eq!(std::fs::read(&good).unwrap(), before);

    // Every byte of a page in the middle flipped.
    let mut flipped = before.clone();
    let page = 4096 * (before.len() / 4096 / 2);
    for b in &mut flipped[page..page + 4096] {
        *b ^= 0xFF;
    }
    let cases: Vec<(&str, Vec<u8>, &str)> = vec![
        ("flipped.db", flipped, "damaged"),
        (
            "notes.txt",
            b"customer list\nnot a database\n".to_vec(),
            "not a SQLite database",
        ),
        ("empty.db", Vec::new(), "empty file"),
    ];
    for (name, bytes, reason) in cases {
        let path = scratch.path(name);
        std::fs::write(&path, bytes).unwrap();
        let (sound, _, err) = verify_cli(&path);
        assert!(!sound, "{name} passed verify");
        assert!(err.contains(reason), "{name}: {err}");
    }

    // A sound SQLite file that is not a shop, and a shop from a newer Lockpoint.
    let foreign = scratch.path("other.db");
    execute_on_file(
        &foreign,
        "CREATE TABLE parts (id INTEGER PRIMARY KEY, name TEXT)",
    )
    .await;
    let (sound, _, err) = verify_cli(&foreign);
    assert!(!sound && err.contains("not a Lockpoint database"), "{err}");

    let newer = scratch.path("newer.db");
    newer_copy(&good, &newer).await;
    let (sound, _, err) = verify_cli(&newer);
    assert!(!sound && err.contains("newer Lockpoint"), "{err}");
}
