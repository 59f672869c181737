//! Backups and restores of the database file, exports and imports, and the lock that tells a
//! running server from a stopped one.
//!
//! - A backup is `VACUUM INTO` a new file: one consistent snapshot taken in a read transaction,
//!   so the server keeps answering and writing while it runs. The copy is then checked
//!   (`PRAGMA integrity_check`, a migration history this program knows), switched to a plain
//!   rollback journal so it is one self-contained file, and flushed to disk.
//! - The server holds an exclusive advisory lock on `<db>.lock` for as long as it runs. A
//!   restore or an import takes the same lock, so it cannot replace the file under a running
//!   server; the lock is named from the database's canonical path, so a symlink or another
//!   spelling of the path finds the same lock (see [`DbLock`]).
//! - A restore checks the backup on a staged copy beside the database, migrates that copy, keeps
//!   the current database as `<db>.before-restore-<unix time>`, and only then renames the staged
//!   copy into place.

pub mod plan;
pub mod scheduler;
pub mod verify;

use std::ffi::OsString;
use std::fs::{self, File, OpenOptions};
use std::io;
use std::path::{Path, PathBuf};
use std::str::FromStr;
use std::sync::atomic::{AtomicU64, Ordering};
use std::time::{Duration, SystemTime, UNIX_EPOCH};

use sqlx::sqlite::{SqliteConnectOptions, SqliteJournalMode, SqlitePoolOptions};
use sqlx::{AssertSqlSafe, Connection, SqliteConnection, SqlitePool};

use crate::db;
use crate::db::export::{self, Document, ExportError, JsonWriter};
use crate::progress::Progress;

#[derive(Debug, thiserror::Error)]
pub enum BackupError {
    /// Not done, for a reason the user can act on.
    #[error("{0}")]
    Refused(String),
    #[error("{what}: {source}")]
    Io {
        what: String,
        #[source]
        source: io::Error,
    },
    #[error("database: {0}")]
    Sql(#[from] sqlx::Error),
    #[error("{0}")]
    Export(#[from] ExportError),
}

fn io_err(what: impl Into<String>) -> impl FnOnce(io::Error) -> BackupError {
    let what = what.into();
    move |source| BackupError::Io { what, source }
}

/// `path` with `suffix` added to its file name (`shop.db` + `.lock` = `shop.db.lock`).
pub fn with_suffix(path: &Path, suffix: &str) -> PathBuf {
    let mut name = OsString::from(path.as_os_str());
    name.push(suffix);
    PathBuf::from(name)
}

/// The database file's one true name: symlinks, `.` and `..` resolved (the folder's, when the
/// file does not exist yet), so every path that reaches the same file gives the same locks.
pub fn canonical(db: &Path) -> PathBuf {
    if let Ok(path) = fs::canonicalize(db) {
        return path;
    }
    match (fs::canonicalize(folder_of(db)), db.file_name()) {
        (Ok(dir), Some(name)) => dir.join(name),
        _ => db.to_path_buf(),
    }
}

/// The lock file of a database: beside its canonical name, whatever path the command was given.
pub fn lock_path(db: &Path) -> PathBuf {
    with_suffix(&canonical(db), ".lock")
}

/// The lock that one-shot commands (`user`, `token`) hold while they write, so a restore or an
/// import never replaces the file under them; the server does not take it.
pub fn command_lock_path(db: &Path) -> PathBuf {
    with_suffix(&canonical(db), ".command-lock")
}

/// An exclusive OS advisory lock on a lock file beside the database, held until dropped (or
/// until the process ends, however it ends: the OS releases it). Dropping it removes the lock
/// file while still holding the lock; a taker that locked the old file just as it was removed
/// sees that the name now points elsewhere and starts again.
///
/// - `<db>.lock` ([`DbLock::try_acquire`]): the server, `restore` and `import`; one at a time.
/// - `<db>.command-lock` ([`DbLock::wait_for_commands`]): `user`, `token`, and `restore` and
///   `import` too, so a one-shot write and a replacement of the file never overlap.
///
/// Both are named from the canonical path of the database, so a symlink or another spelling of
/// the path cannot slip past them.
#[derive(Debug)]
pub struct DbLock {
    file: File,
    pub path: PathBuf,
}

impl DbLock {
    /// Takes the server lock, or `Ok(None)` when another process (or another handle) holds it.
    pub fn try_acquire(db: &Path) -> Result<Option<Self>, BackupError> {
        Self::take(lock_path(db), false)
    }

    /// Takes the command lock, waiting while a restore, an import or another command holds it.
    pub fn wait_for_commands(db: &Path) -> Result<Self, BackupError> {
        Self::take(command_lock_path(db), true)?
            .ok_or_else(|| BackupError::Refused("the command lock could not be taken".to_string()))
    }

    fn take(path: PathBuf, wait: bool) -> Result<Option<Self>, BackupError> {
        for _ in 0..10 {
            let file = OpenOptions::new()
                .read(true)
                .write(true)
                .create(true)
                .truncate(false)
                .open(&path)
                .map_err(io_err(format!(
                    "cannot open the lock file {}",
                    path.display()
                )))?;
            let locked = if wait {
                file.lock().map_err(fs::TryLockError::Error)
            } else {
                file.try_lock()
            };
            match locked {
                Ok(()) => {}
                Err(fs::TryLockError::WouldBlock) => return Ok(None),
                Err(fs::TryLockError::Error(e)) => {
                    return Err(io_err(format!("cannot lock {}", path.display()))(e));
                }
            }
            if names_this_file(&path, &file) {
                return Ok(Some(Self { file, path }));
            }
        }
        Err(BackupError::Refused(format!(
            "the lock file {} keeps changing: is another program removing it?",
            path.display()
        )))
    }
}

/// Whether `path` still names the open `file` (and not a newer file of the same name).
fn names_this_file(path: &Path, file: &File) -> bool {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        match (fs::metadata(path), file.metadata()) {
            (Ok(named), Ok(open)) => named.dev() == open.dev() && named.ino() == open.ino(),
            _ => false,
        }
    }
    #[cfg(not(unix))]
    {
        let _ = (path, file);
        true
    }
}

impl Drop for DbLock {
    fn drop(&mut self) {
        // Still locked here: the file is closed (and unlocked) after this returns.
        if names_this_file(&self.path, &self.file) {
            let _ = fs::remove_file(&self.path);
        }
    }
}

/// A file removed when this guard is dropped (a temporary download, a staged restore).
#[derive(Debug)]
pub struct TempPath(PathBuf);

impl TempPath {
    /// A unique name in `dir`: `<prefix>-<pid>-<time>-<n><ext>`. Nothing is created yet.
    pub fn unique_in(dir: &Path, prefix: &str, ext: &str) -> Self {
        static N: AtomicU64 = AtomicU64::new(0);
        let nanos = SystemTime::now()
            .duration_since(UNIX_EPOCH)
            .map_or(0, |d| d.as_nanos());
        Self(dir.join(format!(
            "{prefix}-{}-{nanos}-{}{ext}",
            std::process::id(),
            N.fetch_add(1, Ordering::Relaxed)
        )))
    }

    pub fn path(&self) -> &Path {
        &self.0
    }
}

impl Drop for TempPath {
    fn drop(&mut self) {
        for suffix in ["", "-journal", "-wal", "-shm"] {
            let _ = fs::remove_file(with_suffix(&self.0, suffix));
        }
    }
}

/// What a check of a database file found.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Checked {
    /// The newest migration applied to it.
    pub version: i64,
    /// Its ordinary tables (migration history included).
    pub tables: usize,
    /// Its size on disk.
    pub bytes: u64,
}

/// Opens an existing database file as it is: not created when missing, not migrated.
pub async fn open_existing(path: &Path) -> Result<SqlitePool, BackupError> {
    if !path.is_file() {
        return Err(BackupError::Refused(format!(
            "no database at {}",
            path.display()
        )));
    }
    let options = SqliteConnectOptions::from_str("sqlite:")?
        .filename(path)
        .create_if_missing(false)
        .busy_timeout(Duration::from_secs(10))
        .foreign_keys(true);
    Ok(SqlitePoolOptions::new()
        .max_connections(1)
        .connect_with(options)
        .await?)
}

/// Checks that a file is a sound Lockpoint database this program can open: SQLite's integrity
/// check answers "ok", and it has a migration history with no failed step and nothing newer
/// than this program knows. Switches the file to a rollback journal, so the file is complete by
/// itself (a fresh copy, not a live database, is what this is for).
pub async fn check_file(path: &Path) -> Result<Checked, BackupError> {
    let shown = path.display();
    let options = SqliteConnectOptions::from_str("sqlite:")?
        .filename(path)
        .create_if_missing(false)
        .journal_mode(SqliteJournalMode::Delete)
        .busy_timeout(Duration::from_secs(10));
    let mut conn = SqliteConnection::connect_with(&options)
        .await
        .map_err(|e| {
            BackupError::Refused(format!("{shown} is not a usable SQLite database: {e}"))
        })?;
    let checked = check_connection(&mut conn).await.map_err(|e| match e {
        BackupError::Refused(why) => BackupError::Refused(format!("{shown}: {why}")),
        BackupError::Sql(e) => BackupError::Refused(format!("{shown} could not be checked: {e}")),
        other => other,
    });
    conn.close().await?;
    let mut checked = checked?;
    checked.bytes = fs::metadata(path)
        .map_err(io_err(format!("cannot read {shown}")))?
        .len();
    Ok(checked)
}

async fn check_connection(conn: &mut SqliteConnection) -> Result<Checked, BackupError> {
    let report: Vec<String> = sqlx::query_scalar("PRAGMA integrity_check")
        .fetch_all(&mut *conn)
        .await?;
    if report != ["ok"] {
        let first: Vec<&str> = report.iter().take(3).map(String::as_str).collect();
        return Err(BackupError::Refused(format!(
            "the integrity check failed: {}",
            first.join("; ")
        )));
    }
    let has_history: i64 = sqlx::query_scalar(
        "SELECT COUNT(*) FROM sqlite_master WHERE type = 'table' AND name = '_sqlx_migrations'",
    )
    .fetch_one(&mut *conn)
    .await?;
    if has_history == 0 {
        return Err(BackupError::Refused(
            "not a Lockpoint database (it has no migration history)".into(),
        ));
    }
    let applied: Vec<(i64, bool)> =
        sqlx::query_as("SELECT version, success FROM _sqlx_migrations ORDER BY version")
            .fetch_all(&mut *conn)
            .await?;
    if applied.is_empty() {
        return Err(BackupError::Refused(
            "not a Lockpoint database (its migration history is empty)".into(),
        ));
    }
    if let Some((version, _)) = applied.iter().find(|(_, ok)| !ok) {
        return Err(BackupError::Refused(format!(
            "migration {version} failed part-way in that database"
        )));
    }
    let latest = export::latest_known_version();
    let newest = applied.iter().map(|(v, _)| *v).max().unwrap_or(0);
    if newest > latest {
        return Err(BackupError::Refused(format!(
            "it was written by a newer Lockpoint (migration {newest}; this program knows up to \
             {latest}): upgrade Lockpoint first"
        )));
    }
    if let Some((version, _)) = applied.iter().find(|(v, _)| !db::knows_migration(*v)) {
        return Err(BackupError::Refused(format!(
            "it has migration {version}, which this program does not know"
        )));
    }
    let tables = export::tables(conn).await?.len();
    Ok(Checked {
        version: newest,
        tables,
        bytes: 0,
    })
}

/// Options that create a file only its owner can read and write (0600 on Unix): backups and
/// exports hold password and token hashes and customer data.
fn private_file() -> OpenOptions {
    let mut options = OpenOptions::new();
    #[cfg(unix)]
    std::os::unix::fs::OpenOptionsExt::mode(&mut options, 0o600);
    options
}

/// Creates a directory (and its parents) that only its owner can enter (0700 on Unix); an
/// existing directory is left as it is.
fn private_dir(dir: &Path) -> io::Result<()> {
    let mut builder = fs::DirBuilder::new();
    builder.recursive(true);
    #[cfg(unix)]
    std::os::unix::fs::DirBuilderExt::mode(&mut builder, 0o700);
    builder.create(dir)
}

/// The folder holding a database file, where its temporary copies are staged (the same file
/// system and the same privacy as the database, not the shared system temp folder).
pub fn folder_of(db: &Path) -> PathBuf {
    match db.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

/// Flushes a file and the directory entry that names it to disk.
fn sync_to_disk(path: &Path) -> Result<(), BackupError> {
    File::open(path)
        .and_then(|f| f.sync_all())
        .map_err(io_err(format!("cannot flush {} to disk", path.display())))?;
    #[cfg(unix)]
    if let Some(dir) = path.parent() {
        let dir = if dir.as_os_str().is_empty() {
            Path::new(".")
        } else {
            dir
        };
        // Best effort: not every file system lets a directory be opened and synced.
        let _ = File::open(dir).and_then(|d| d.sync_all());
    }
    Ok(())
}

/// Writes a consistent, checked copy of the database behind `pool` to `dest`, which must not
/// exist yet. Safe while the server reads and writes: the copy is one snapshot.
pub async fn backup_pool(
    pool: &SqlitePool,
    dest: &Path,
    progress: &mut Progress,
) -> Result<Checked, BackupError> {
    let Some(dest_text) = dest.to_str() else {
        return Err(BackupError::Refused(format!(
            "{} is not a UTF-8 path; choose another name",
            dest.display()
        )));
    };
    // Claims the name: refuses an existing file, and VACUUM INTO accepts an empty one. Only the
    // owner may read it: it holds password and token hashes and customer data.
    match private_file().write(true).create_new(true).open(dest) {
        Ok(_) => {}
        Err(e) if e.kind() == io::ErrorKind::AlreadyExists => {
            return Err(BackupError::Refused(format!(
                "{} already exists: a backup never overwrites a file, choose a new name",
                dest.display()
            )));
        }
        Err(e) => return Err(io_err(format!("cannot create {}", dest.display()))(e)),
    }
    let made = async {
        let size: (i64, i64) = sqlx::query_as(
            "SELECT page_count * page_size, freelist_count * page_size
             FROM pragma_page_count(), pragma_page_size(), pragma_freelist_count()",
        )
        .fetch_one(pool)
        .await?;
        let expected = (size.0 - size.1).max(0) as u64;
        let vacuum = sqlx::query("VACUUM INTO ?").bind(dest_text).execute(pool);
        tokio::pin!(vacuum);
        loop {
            tokio::select! {
                done = &mut vacuum => {
                    done?;
                    break;
                }
                () = tokio::time::sleep(Duration::from_millis(250)), if progress.is_on() => {
                    let written = fs::metadata(dest).map_or(0, |m| m.len());
                    progress.step(&format!(
                        "backing up: {} / {} MB",
                        written / 1_000_000,
                        expected / 1_000_000
                    ));
                }
            }
        }
        progress.step("backing up: checking the copy (integrity check)");
        let checked = check_file(dest).await?;
        sync_to_disk(dest)?;
        progress.done();
        Ok(checked)
    }
    .await;
    if made.is_err() {
        for suffix in ["", "-journal", "-wal", "-shm"] {
            let _ = fs::remove_file(with_suffix(dest, suffix));
        }
    }
    made
}

/// `lockpoint backup`: a checked copy of the database file `db` at `dest` (a new file).
pub async fn backup_file(
    db: &Path,
    dest: &Path,
    progress: &mut Progress,
) -> Result<Checked, BackupError> {
    if same_file(db, dest) {
        return Err(BackupError::Refused(
            "the backup must be a different file from the database".into(),
        ));
    }
    let pool = open_existing(db).await?;
    let made = backup_pool(&pool, dest, progress).await;
    pool.close().await;
    made
}

fn same_file(a: &Path, b: &Path) -> bool {
    match (fs::canonicalize(a), fs::canonicalize(b)) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    }
}

/// What a restore did.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Restored {
    /// The restored database as checked after migrating it.
    pub checked: Checked,
    /// The migration the backup was at before it was migrated.
    pub backup_version: i64,
    /// Where the database that was replaced now is (None when there was none).
    pub safety_copy: Option<PathBuf>,
    /// Set when the replaced database could not be copied cleanly and was copied byte for byte.
    pub safety_note: Option<String>,
}

/// `lockpoint restore`: replaces the database `db` with the backup at `src`. Refused while a
/// server holds the database's lock, and for any file that is not a sound Lockpoint database.
pub async fn restore(
    db: &Path,
    src: &Path,
    progress: &mut Progress,
) -> Result<Restored, BackupError> {
    if !src.is_file() {
        return Err(BackupError::Refused(format!(
            "no backup file at {}",
            src.display()
        )));
    }
    if same_file(db, src) {
        return Err(BackupError::Refused(
            "that file is the database itself".into(),
        ));
    }
    let src_wal = with_suffix(src, "-wal");
    if fs::metadata(&src_wal).is_ok_and(|m| m.len() > 0) {
        return Err(BackupError::Refused(format!(
            "{} has a write-ahead log beside it ({}), so it is a live database or an incomplete \
             copy of one: make a backup of it with `lockpoint backup` and restore that",
            src.display(),
            src_wal.display()
        )));
    }
    let Some(_lock) = DbLock::try_acquire(db)? else {
        return Err(BackupError::Refused(format!(
            "a Lockpoint server is running on {} (it holds {}): stop it, then restore",
            db.display(),
            lock_path(db).display()
        )));
    };
    let _commands = DbLock::wait_for_commands(db)?;

    // Stage the backup beside the database (same file system, so the final rename is atomic),
    // check it, and bring it up to this program's migrations. The backup file is never touched.
    let dir = folder_of(db);
    let file_name = db
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "lockpoint.db".into());
    let staged = TempPath::unique_in(&dir, &format!(".{file_name}.restoring"), "");
    progress.step("restoring: copying the backup");
    fs::copy(src, staged.path()).map_err(io_err(format!(
        "cannot copy {} to {}",
        src.display(),
        staged.path().display()
    )))?;
    progress.step("restoring: checking the backup (integrity check)");
    let before = check_file(staged.path()).await.map_err(|e| match e {
        // Name the user's file, not the staged copy.
        BackupError::Refused(why) => BackupError::Refused(why.replace(
            &staged.path().display().to_string(),
            &src.display().to_string(),
        )),
        other => other,
    })?;
    progress.step("restoring: bringing the backup up to this program's migrations");
    let pool = db::open(staged.path()).await?;
    pool.close().await;
    let checked = check_file(staged.path()).await?;
    sync_to_disk(staged.path())?;

    // Keep the database being replaced.
    let (safety_copy, safety_note) = if db.exists() {
        progress.step("restoring: keeping a copy of the database being replaced");
        let (path, note) = safety_copy(db, progress).await?;
        (Some(path), note)
    } else {
        (None, None)
    };

    // A log left beside the old file would be replayed into the new one: remove it first.
    for suffix in ["-wal", "-shm", "-journal"] {
        let stale = with_suffix(db, suffix);
        match fs::remove_file(&stale) {
            Ok(()) => {}
            Err(e) if e.kind() == io::ErrorKind::NotFound => {}
            Err(e) => return Err(io_err(format!("cannot remove {}", stale.display()))(e)),
        }
    }
    fs::rename(staged.path(), db).map_err(io_err(format!(
        "cannot move the restored database into place at {}",
        db.display()
    )))?;
    sync_to_disk(db)?;

    // Open it as the server will (WAL, migrations) to be sure it starts, and work out the
    // derived tables (work-due status, search index) from the restored records.
    progress.step("restoring: working out the work-due status and the search index");
    let pool = db::open(db).await?;
    let mut tx = db::audit::begin_as(&pool, None, "restore").await?;
    crate::status::rebuild_derived(&mut tx).await?;
    tx.commit().await?;
    pool.close().await;
    progress.done();
    Ok(Restored {
        checked,
        backup_version: before.version,
        safety_copy,
        safety_note,
    })
}

/// Copies the database about to be replaced to `<db>.before-restore-<unix time>`: a checked
/// snapshot when possible, the raw files (with any write-ahead log) when the database is damaged.
async fn safety_copy(
    db: &Path,
    progress: &mut Progress,
) -> Result<(PathBuf, Option<String>), BackupError> {
    let secs = SystemTime::now()
        .duration_since(UNIX_EPOCH)
        .map_or(0, |d| d.as_secs());
    let mut dest = with_suffix(db, &format!(".before-restore-{secs}"));
    let mut n = 1;
    while dest.exists() {
        n += 1;
        dest = with_suffix(db, &format!(".before-restore-{secs}-{n}"));
    }
    match backup_file(db, &dest, progress).await {
        Ok(_) => Ok((dest, None)),
        Err(why) => {
            fs::copy(db, &dest).map_err(io_err(format!(
                "cannot keep a copy of {} at {}",
                db.display(),
                dest.display()
            )))?;
            let wal = with_suffix(db, "-wal");
            if wal.exists() {
                fs::copy(&wal, with_suffix(&dest, "-wal"))
                    .map_err(io_err(format!("cannot keep a copy of {}", wal.display())))?;
            }
            sync_to_disk(&dest)?;
            Ok((
                dest,
                Some(format!(
                    "the replaced database could not be copied cleanly ({why}); its files were \
                     copied as they were"
                )),
            ))
        }
    }
}

/// What `lockpoint export` wrote.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Exported {
    pub version: i64,
    pub tables: usize,
    pub rows: u64,
    /// Every file written, the JSON document first.
    pub files: Vec<PathBuf>,
}

/// A new file only its owner can read, behind a buffer.
fn create_private(path: &Path) -> io::Result<io::BufWriter<File>> {
    let file = private_file().write(true).create_new(true).open(path)?;
    Ok(io::BufWriter::with_capacity(1 << 16, file))
}

/// Flushes a buffered file and the file itself to disk.
fn finish_file(out: io::BufWriter<File>) -> io::Result<()> {
    out.into_inner().map_err(|e| e.into_error())?.sync_all()
}

/// `lockpoint export`: writes `lockpoint-export.json` and one CSV file per table into `dir`,
/// streaming the rows from one snapshot of the database. The files are written into a hidden
/// folder beside `dir` (`.<dir>.exporting-…`, 0700), flushed, and that folder is renamed to
/// `dir` only when every file is complete: an export stopped half-way leaves no file under an
/// export's name, and `dir` never holds part of one. Refuses a `dir` that exists and is not
/// empty (an export never overwrites a file); an empty one is replaced.
pub async fn export_dir(
    db: &Path,
    dir: &Path,
    progress: &mut Progress,
) -> Result<Exported, BackupError> {
    let taken = fs::read_dir(dir).is_ok_and(|mut entries| entries.next().is_some());
    if taken {
        return Err(BackupError::Refused(format!(
            "{} already exists and is not empty: an export never overwrites a file, choose a new directory",
            dir.display()
        )));
    }
    let name = dir
        .file_name()
        .map_or_else(|| "export".into(), |n| n.to_string_lossy().into_owned());
    let parent = folder_of(dir);
    private_dir(&parent).map_err(io_err(format!("cannot create {}", parent.display())))?;
    let temp = TempDir(TempPath::unique_in(
        &parent,
        &format!(".{name}.exporting"),
        "",
    ));
    let work = temp.0.path().to_path_buf();
    private_dir(&work).map_err(io_err(format!("cannot create {}", work.display())))?;
    let pool = open_existing(db).await?;
    let done = async {
        let mut tx = pool.begin().await?;
        let plan = export::plan(&mut tx).await?;
        let mut files = vec![dir.join(export::JSON_FILE)];
        files.extend(
            plan.tables
                .iter()
                .map(|t| dir.join(export::csv_file_name(&t.name))),
        );
        let written = async {
            let mut json =
                JsonWriter::begin(create_private(&work.join(export::JSON_FILE))?, plan.version)?;
            let mut open_csv = |table: &str| {
                let path = work.join(export::csv_file_name(table));
                create_private(&path)
            };
            let rows =
                export::write(&mut tx, &plan, &mut json, Some(&mut open_csv), progress).await?;
            finish_file(json.finish()?)?;
            Ok::<_, ExportError>(rows)
        }
        .await;
        let rows = match written {
            Ok(rows) => rows,
            Err(ExportError::Io(e)) => {
                return Err(io_err(format!(
                    "cannot write the export into {}",
                    work.display()
                ))(e));
            }
            Err(other) => return Err(other.into()),
        };
        tx.rollback().await?;
        // Complete: the folder takes its name (an empty `dir` made beforehand gives way).
        if dir.is_dir() {
            fs::remove_dir(dir).map_err(io_err(format!("cannot replace {}", dir.display())))?;
        }
        fs::rename(&work, dir).map_err(io_err(format!(
            "cannot rename {} to {}",
            work.display(),
            dir.display()
        )))?;
        sync_to_disk(&dir.join(export::JSON_FILE))?;
        Ok(Exported {
            version: plan.version,
            tables: plan.tables.len(),
            rows,
            files,
        })
    }
    .await;
    pool.close().await;
    done
}

/// A folder removed with what it holds when this guard is dropped (gone already once renamed).
struct TempDir(TempPath);

impl Drop for TempDir {
    fn drop(&mut self) {
        let _ = fs::remove_dir_all(self.0.path());
    }
}

/// Removes the copies a download staged beside the database (`.<db>.download-…`) that a
/// stopped server left behind: run at the server's start, before any download can be staged.
/// Returns how many were removed.
pub fn sweep_staged_downloads(db: &Path) -> usize {
    let Some(name) = db.file_name().map(|n| n.to_string_lossy().into_owned()) else {
        return 0;
    };
    let prefix = format!(".{name}.download-");
    let Ok(entries) = fs::read_dir(folder_of(db)) else {
        return 0;
    };
    entries
        .flatten()
        .filter(|e| e.file_name().to_string_lossy().starts_with(&prefix))
        .filter(|e| fs::remove_file(e.path()).is_ok())
        .count()
}

/// Writes the JSON export of the database behind `pool` to `dest` (a new file, readable by its
/// owner only), streaming the rows from one snapshot. Returns the rows written.
pub async fn export_json_file(
    pool: &SqlitePool,
    dest: &Path,
    progress: &mut Progress,
) -> Result<u64, BackupError> {
    let mut tx = pool.begin().await?;
    let plan = export::plan(&mut tx).await?;
    let out = create_private(dest).map_err(io_err(format!("cannot create {}", dest.display())))?;
    let written = async {
        let mut json = JsonWriter::begin(out, plan.version)?;
        let rows = export::write(&mut tx, &plan, &mut json, None, progress).await?;
        finish_file(json.finish()?)?;
        Ok::<_, ExportError>(rows)
    }
    .await;
    tx.rollback().await?;
    Ok(written?)
}

/// What `lockpoint import` loaded.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ImportedFile {
    pub version: i64,
    pub imported: export::Imported,
}

/// `lockpoint import`: loads a JSON export into the database `db` (created and migrated when
/// missing), which must hold no records yet, streaming the rows from the file. All or nothing:
/// one transaction, which also works out the derived tables (work-due status, search index).
pub async fn import_file(
    db: &Path,
    file: &Path,
    progress: &mut Progress,
) -> Result<ImportedFile, BackupError> {
    File::open(file).map_err(io_err(format!("cannot read {}", file.display())))?;
    let Some(_lock) = DbLock::try_acquire(db)? else {
        return Err(BackupError::Refused(format!(
            "a Lockpoint server or a restore is using {} (it holds {}): stop it, then import",
            db.display(),
            lock_path(db).display()
        )));
    };
    let _commands = DbLock::wait_for_commands(db)?;
    // A database this import creates is removed again when the import is refused, so a
    // refusal leaves nothing behind (the document is only read once the database is open).
    let created = !db.exists();
    let pool = db::open(db).await?;
    let done = import_into(&pool, &Document::File(file.to_path_buf()), progress).await;
    pool.close().await;
    if done.is_err() && created {
        for suffix in ["", "-wal", "-shm", "-journal"] {
            let _ = fs::remove_file(with_suffix(db, suffix));
        }
    }
    let imported = done?;
    Ok(ImportedFile {
        version: imported.version,
        imported,
    })
}

/// The import's page cache, in KiB (see [`import_into`]).
const IMPORT_CACHE_KIB: i64 = 32 * 1024;

/// Loads a document into the empty database behind `pool` in one `BEGIN IMMEDIATE`
/// transaction, then works out the derived tables (work-due status, search index) from the
/// imported records in the same transaction: the one way an import is done.
pub async fn import_into(
    pool: &SqlitePool,
    doc: &Document,
    progress: &mut Progress,
) -> Result<export::Imported, BackupError> {
    let mut tx = pool.begin_with("BEGIN IMMEDIATE").await?;
    // A larger page cache for this one transaction: with the usual 2 MiB the pages of the
    // tables and indexes being filled spill to the write-ahead log and are written there again
    // and again. Put back before the connection returns to the pool.
    let usual: i64 = sqlx::query_scalar("PRAGMA cache_size")
        .fetch_one(&mut *tx)
        .await?;
    sqlx::query(AssertSqlSafe(format!(
        "PRAGMA cache_size = -{IMPORT_CACHE_KIB}"
    )))
    .execute(&mut *tx)
    .await?;
    let done = async {
        let imported = export::import(&mut tx, doc, progress).await?;
        progress.step("importing: working out the work-due status and the search index");
        crate::status::rebuild_derived(&mut tx).await?;
        Ok::<_, BackupError>(imported)
    }
    .await;
    sqlx::query(AssertSqlSafe(format!("PRAGMA cache_size = {usual}")))
        .execute(&mut *tx)
        .await?;
    let imported = done?;
    tx.commit().await?;
    progress.done();
    Ok(imported)
}
