//! The server's own backups: a task that copies the database into the backup folder every
//! period, keeps the newest copies, and remembers what happened so the pages can say when the
//! backups stopped working. The decisions are in [`super::plan`]; this file does the IO.
//!
//! - One copy at a time: a copy that is still running when the next is due is reported as a
//!   failure (and the next one waits); the server keeps serving meanwhile, since the copy is
//!   one read snapshot (see [`super::backup_pool`]).
//! - A copy is written under a hidden temporary name in the folder, checked, flushed, and only
//!   then renamed to `lockpoint-YYYYMMDD-HHMMSS.db`, so a finished name always holds a checked,
//!   complete copy, whatever happens to the process. Half-written copies left by a server that
//!   was killed are removed when the folder is next taken up (at start).
//! - The folder is never created: an unplugged drive or an unmounted share must not fill the
//!   system disk. A missing folder is a failure, reported like any other.

use std::fs;
use std::io;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Arc, Mutex};
use std::time::Duration;

use jiff::Timestamp;
use sqlx::SqlitePool;
use tokio::sync::Notify;

use super::plan::{self, Alarm, Failure, Fixed, Found, Good, Plan, Record, Stored};
use super::{BackupError, backup_pool, folder_of};
use crate::db;
use crate::progress::Progress;
use crate::records::date::ShopZone;

/// The longest the task sleeps before looking again (a clock changed, a computer woke up).
const LOOK_AGAIN: Duration = Duration::from_secs(30);

/// Called whenever what the pages show about the backups changes (the page cache listens).
type OnChange = Arc<dyn Fn() + Send + Sync>;

/// The scheduled backups of one server: what it was started with, the schedule in force and
/// what the copies did. Shared by the task and the pages.
pub struct Backups {
    fixed: Fixed,
    /// The database file, for telling whether the folder is on the same disk.
    db: PathBuf,
    state: Mutex<State>,
    wake: Notify,
    /// Held by the copy being made: never two at once.
    running: Arc<tokio::sync::Mutex<()>>,
    attempts: AtomicU64,
    on_change: Mutex<Option<OnChange>>,
}

#[derive(Default)]
struct State {
    plan: Option<Plan>,
    record: Record,
    next_due: Option<Timestamp>,
    /// The plan the folder was last taken up for (leftovers removed, newest copy found).
    taken_up: Option<Plan>,
}

/// What the pages show: the schedule in force and what the copies did.
#[derive(Debug, Clone)]
pub struct Snapshot {
    pub fixed: Fixed,
    pub plan: Option<Plan>,
    pub record: Record,
    pub next_due: Option<Timestamp>,
    /// Whether the folder is on the same file system as the database (`None`: cannot tell).
    pub same_disk: Option<bool>,
}

impl Backups {
    /// The backups of the database `db`, with the values given at start in `fixed`. Nothing
    /// runs until [`Backups::start`].
    pub fn new(fixed: Fixed, db: &Path) -> Arc<Self> {
        Arc::new(Self {
            fixed,
            db: db.to_path_buf(),
            state: Mutex::default(),
            wake: Notify::new(),
            running: Arc::default(),
            attempts: AtomicU64::new(0),
            on_change: Mutex::default(),
        })
    }

    /// Starts the task on `pool` (it ends when the pool is closed).
    pub fn start(self: &Arc<Self>, pool: SqlitePool) {
        let me = Arc::clone(self);
        tokio::spawn(async move { me.run(pool).await });
    }

    /// Calls `f` whenever what the pages show about the backups changes.
    pub fn on_change(&self, f: impl Fn() + Send + Sync + 'static) {
        *lock(&self.on_change) = Some(Arc::new(f));
    }

    /// The stored schedule changed: take it up now.
    pub fn wake(&self) {
        self.wake.notify_one();
    }

    /// What the pages show.
    pub fn snapshot(&self) -> Snapshot {
        let (plan, record, next_due) = {
            let state = lock(&self.state);
            (state.plan.clone(), state.record.clone(), state.next_due)
        };
        let same_disk = plan
            .as_ref()
            .and_then(|p| plan::same_device(device(&p.dir), device(&folder_of(&self.db))));
        Snapshot {
            fixed: self.fixed.clone(),
            plan,
            record,
            next_due,
            same_disk,
        }
    }

    /// What the counter tells admins now, and the period in force (`None`: no folder).
    pub fn alarm(&self) -> (Alarm, Option<plan::Every>) {
        let state = lock(&self.state);
        let alarm = plan::alarm(state.plan.as_ref(), &state.record, Timestamp::now());
        (alarm, state.plan.as_ref().map(|p| p.every))
    }

    /// Starts a copy now (the admin's "Back up now"); refused while one runs or when no folder
    /// is chosen.
    pub fn back_up_now(self: &Arc<Self>, pool: &SqlitePool) -> Result<(), String> {
        let plan = lock(&self.state)
            .plan
            .clone()
            .ok_or("no backup folder is chosen")?;
        self.begin(pool, plan)
    }

    async fn run(self: Arc<Self>, pool: SqlitePool) {
        loop {
            let stored = match pool.acquire().await {
                Ok(mut conn) => db::backup_schedule::get(&mut conn).await,
                Err(e) => Err(e),
            };
            let stored = match stored {
                Ok(s) => s,
                Err(_) if pool.is_closed() => return,
                Err(e) => {
                    tracing::warn!(error = %e, "cannot read the backup schedule; using the defaults");
                    Stored::default()
                }
            };
            self.take_up(plan::resolve(&self.fixed, &stored));
            let Some(wait) = self.tick(&pool, Timestamp::now()) else {
                continue;
            };
            tokio::select! {
                () = tokio::time::sleep(wait) => {}
                () = self.wake.notified() => {}
            }
        }
    }

    /// Starts the copy that is due at `now`, if one is; answers how long to sleep, or `None` to
    /// look again at once (a copy was started, or an overrun reported).
    fn tick(self: &Arc<Self>, pool: &SqlitePool, now: Timestamp) -> Option<Duration> {
        let (plan, due) = {
            let state = lock(&self.state);
            (state.plan.clone(), state.next_due)
        };
        let (Some(plan), Some(due)) = (plan, due) else {
            return Some(LOOK_AGAIN);
        };
        if due <= now {
            if self.begin(pool, plan.clone()).is_ok() {
                return None;
            }
            // One is running: past a whole period that is a failure to report; before that (the
            // schedule was changed meanwhile) the next waits for it to end.
            let since = lock(&self.state).record.running_since;
            let overran =
                since.is_none_or(|s| s.checked_add(plan.every.span()).is_ok_and(|end| end <= now));
            if overran {
                self.overran(&plan);
                return None;
            }
        }
        let left = Duration::try_from(due.duration_since(now)).unwrap_or(LOOK_AGAIN);
        Some(left.clamp(Duration::from_millis(50), LOOK_AGAIN))
    }

    /// Puts `plan` in force. A new folder or period is taken up: leftovers of copies that never
    /// finished are removed (unless a copy is being made), the newest copy there found, and the
    /// next copy due one period after it (at once when there is none, or it is older).
    fn take_up(&self, plan: Option<Plan>) {
        let mut state = lock(&self.state);
        if state.taken_up == plan {
            return;
        }
        state.plan.clone_from(&plan);
        state.taken_up.clone_from(&plan);
        let Some(plan) = plan else {
            state.next_due = None;
            drop(state);
            self.changed();
            return;
        };
        let running = state.record.running_since.is_some();
        if !running {
            remove_leftovers(&plan.dir);
        }
        let found = list(&plan.dir).unwrap_or_default();
        let newest = plan::newest(&found);
        if let Some(f) = newest {
            let older = state.record.last_good.as_ref().is_none_or(|g| g.at < f.at);
            if older {
                state.record.last_good = Some(Good {
                    at: f.at,
                    file: plan.dir.join(&f.name),
                    bytes: f.bytes,
                });
            }
        }
        state.next_due = Some(plan::first_due(newest, plan.every, Timestamp::now()));
        drop(state);
        self.changed();
    }

    /// Starts a copy on its own task, or says why not (one is running).
    fn begin(self: &Arc<Self>, pool: &SqlitePool, plan: Plan) -> Result<(), String> {
        let Ok(turn) = Arc::clone(&self.running).try_lock_owned() else {
            return Err("a backup is running already".into());
        };
        let began = Timestamp::now();
        {
            let mut state = lock(&self.state);
            state.record.running_since = Some(began);
            state.next_due = began.checked_add(plan.every.span()).ok();
        }
        self.changed();
        let attempt = self.attempts.fetch_add(1, Ordering::Relaxed);
        let me = Arc::clone(self);
        let pool = pool.clone();
        tokio::spawn(async move {
            let made = make_one(&pool, &plan, began, attempt).await;
            me.finish(&plan, made);
            drop(turn);
            me.wake();
        });
        Ok(())
    }

    fn finish(&self, plan: &Plan, made: Result<Good, String>) {
        {
            let mut state = lock(&self.state);
            state.record.running_since = None;
            match made {
                Ok(good) => {
                    tracing::info!(file = %good.file.display(), bytes = good.bytes, "backup made");
                    state.record.last_good = Some(good);
                    state.record.failing = false;
                }
                Err(reason) => {
                    tracing::error!(folder = %plan.dir.display(), %reason, "backup failed");
                    let at = Timestamp::now();
                    state.record.last_failure = Some(Failure { at, reason });
                    state.record.failing = true;
                    // A failure is tried again sooner than a period when the period is long.
                    if let Ok(retry) = at.checked_add(plan.every.retry())
                        && state.next_due.is_none_or(|due| retry < due)
                    {
                        state.next_due = Some(retry);
                    }
                }
            }
        }
        self.changed();
    }

    /// The next copy is due while the last one still runs: reported, and the next waits a period.
    fn overran(&self, plan: &Plan) {
        let now = Timestamp::now();
        {
            let mut state = lock(&self.state);
            let reason = format!(
                "a backup is still running after a whole period ({}): the disk or the share may \
                 be too slow, or the period too short; the next one waits for it",
                plan.every
            );
            tracing::error!(%reason, "backup overran its period");
            state.record.last_failure = Some(Failure { at: now, reason });
            state.record.failing = true;
            state.next_due = now.checked_add(plan.every.span()).ok();
        }
        self.changed();
    }

    fn changed(&self) {
        let f = lock(&self.on_change).clone();
        if let Some(f) = f {
            f();
        }
    }
}

/// One scheduled copy: checked, complete, under its final name in the plan's folder, then the
/// oldest beyond the plan's count removed. The error is the reason, in words.
async fn make_one(
    pool: &SqlitePool,
    plan: &Plan,
    began: Timestamp,
    attempt: u64,
) -> Result<Good, String> {
    let zone = match pool.acquire().await {
        Ok(mut conn) => db::settings::get(&mut conn)
            .await
            .map_or_else(|_| ShopZone::server(), |s| s.zone()),
        Err(e) => return Err(format!("the database could not be read: {e}")),
    };
    let local = zone.civil(began);
    let dir = &plan.dir;
    match fs::metadata(dir) {
        Ok(m) if m.is_dir() => {}
        Ok(_) => return Err(format!("{} is not a folder", dir.display())),
        Err(e) if e.kind() == io::ErrorKind::NotFound => {
            return Err(format!(
                "the backup folder {} does not exist: is the drive plugged in, the share \
                 mounted? (It is never created for you.)",
                dir.display()
            ));
        }
        Err(e) => {
            return Err(format!(
                "the backup folder {} cannot be reached: {e}",
                dir.display()
            ));
        }
    }
    let temp = dir.join(plan::temp_name(local, std::process::id(), attempt));
    let checked = backup_pool(pool, &temp, &mut Progress::none())
        .await
        .map_err(|e| match e {
            BackupError::Io { what, source } => format!("{what}: {source}"),
            other => format!("the copy failed: {other}"),
        })?;
    let dest = free_name(dir, local);
    if let Err(e) = fs::rename(&temp, &dest) {
        let _ = fs::remove_file(&temp);
        return Err(format!(
            "the checked copy could not be named {}: {e}",
            dest.display()
        ));
    }
    // The rename is durable once the folder's entry is on disk (best effort: not every file
    // system lets a folder be synced).
    let _ = fs::File::open(dir).and_then(|d| d.sync_all());
    let made = plan::shown_name(&dest);
    match list(dir) {
        Ok(found) => {
            for old in plan::to_prune(&found, &made, plan.keep) {
                if let Err(e) = fs::remove_file(dir.join(&old)) {
                    tracing::warn!(file = %old, error = %e, "an old backup could not be removed");
                }
            }
        }
        Err(e) => {
            tracing::warn!(error = %e, "the backup folder could not be listed to remove old copies")
        }
    }
    Ok(Good {
        at: began,
        file: dest,
        bytes: checked.bytes,
    })
}

/// The first name for a copy begun at `local` that is not taken (a clock set back repeats
/// names, and a copy is never overwritten).
fn free_name(dir: &Path, local: jiff::civil::DateTime) -> PathBuf {
    (1..)
        .map(|n| dir.join(plan::file_name(local, n)))
        .find(|p| fs::symlink_metadata(p).is_err())
        .unwrap_or_else(|| dir.join(plan::file_name(local, 1)))
}

/// The finished copies in `dir`, with the time each was written and its size.
pub fn list(dir: &Path) -> io::Result<Vec<Found>> {
    let mut found = Vec::new();
    for entry in fs::read_dir(dir)? {
        let entry = entry?;
        let name = entry.file_name().to_string_lossy().into_owned();
        if !plan::is_backup_name(&name) {
            continue;
        }
        let Ok(meta) = entry.metadata() else { continue };
        if !meta.is_file() {
            continue;
        }
        let at = meta
            .modified()
            .ok()
            .and_then(|t| Timestamp::try_from(t).ok())
            .unwrap_or(Timestamp::UNIX_EPOCH);
        found.push(Found {
            name,
            at,
            bytes: meta.len(),
        });
    }
    Ok(found)
}

/// Removes copies a stopped server left half-written in `dir` (and SQLite's journals beside
/// them); finished copies and every other file are left alone.
pub fn remove_leftovers(dir: &Path) {
    let Ok(entries) = fs::read_dir(dir) else {
        return;
    };
    for entry in entries.flatten() {
        let name = entry.file_name().to_string_lossy().into_owned();
        if plan::is_temp_name(&name) {
            match fs::remove_file(entry.path()) {
                Ok(()) => tracing::info!(file = %name, "removed an unfinished backup"),
                Err(e) => {
                    tracing::warn!(file = %name, error = %e, "an unfinished backup could not be removed")
                }
            }
        }
    }
}

/// The device a path lives on (its folder's, for a file that does not exist).
fn device(path: &Path) -> Option<u64> {
    #[cfg(unix)]
    {
        use std::os::unix::fs::MetadataExt;
        fs::metadata(path).ok().map(|m| m.dev())
    }
    #[cfg(not(unix))]
    {
        let _ = path;
        None
    }
}

fn lock<T>(m: &Mutex<T>) -> std::sync::MutexGuard<'_, T> {
    m.lock().unwrap_or_else(std::sync::PoisonError::into_inner)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A copy still running when the next is due is a reported failure once a whole period has
    /// passed since it began, and nothing (the next waits) before that; no second copy starts.
    #[tokio::test]
    async fn a_copy_running_past_its_period_is_reported_and_no_second_one_starts() {
        let dir = std::env::temp_dir().join(format!("lockpoint-overrun-{}", std::process::id()));
        fs::create_dir_all(&dir).unwrap();
        let db = dir.join("shop.db");
        let pool = crate::db::open(&db).await.unwrap();
        let backups = Backups::new(Fixed::default(), &db);
        let every = plan::Every::parse("10s").unwrap();
        backups.take_up(Some(Plan {
            dir: dir.clone(),
            every,
            keep: 2,
        }));
        let now = Timestamp::now();
        // A copy holds the turn, begun 3 s ago; the schedule says the next is due.
        let turn = Arc::clone(&backups.running).try_lock_owned().unwrap();
        {
            let mut state = lock(&backups.state);
            state.record.running_since = Some(now - jiff::SignedDuration::from_secs(3));
            state.next_due = Some(now - jiff::SignedDuration::from_secs(1));
        }
        let wait = backups.tick(&pool, now);
        assert!(wait.is_some(), "waits for the running copy");
        assert!(!lock(&backups.state).record.failing);
        // Begun a whole period ago: reported, and the next is due a period from now.
        lock(&backups.state).record.running_since = Some(now - every.span());
        assert_eq!(backups.tick(&pool, now), None);
        {
            let state = lock(&backups.state);
            assert!(state.record.failing);
            let reason = &state.record.last_failure.as_ref().unwrap().reason;
            assert!(
                reason.contains("still running after a whole period (10s)"),
                "{reason}"
            );
            assert!(state.next_due.unwrap() > now);
        }
        assert!(backups.alarm().0 != Alarm::Quiet);
        // Nothing was written while the turn was held.
        assert!(list(&dir).unwrap().is_empty());
        drop(turn);
        pool.close().await;
        let _ = fs::remove_dir_all(&dir);
    }
}
