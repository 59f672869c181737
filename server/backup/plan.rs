//! The scheduled backups as decisions, with no IO and no clock: how often, where and how many
//! (the command line and environment over the stored schedule, value by value), the names a
//! copy is written under, which old copies go, and whether the shop must be told that its
//! backups stopped. [`super::scheduler`] does the IO with these answers.

use std::fmt;
use std::path::{Path, PathBuf};

use jiff::Timestamp;
use jiff::civil::DateTime;

/// The shortest period accepted (short periods exist for tests; a shop wants a day).
pub const MIN_EVERY_S: u64 = 10;
/// The longest period accepted: a year.
pub const MAX_EVERY_S: u64 = 366 * 86_400;
/// How often when nothing says otherwise: once a day.
pub const DEFAULT_EVERY: Every = Every(86_400);
/// Copies kept when nothing says otherwise: two weeks of daily copies.
pub const DEFAULT_KEEP: u32 = 14;
/// The most copies that may be kept.
pub const MAX_KEEP: u32 = 1000;
/// The longest wait before a failed backup is tried again (sooner when the period is shorter).
pub const RETRY_S: u64 = 15 * 60;

/// The start of every scheduled copy's name: `lockpoint-YYYYMMDD-HHMMSS.db`.
const PREFIX: &str = "lockpoint-";
/// The start of a copy still being written (hidden, and never taken for a finished copy).
const TEMP_PREFIX: &str = ".lockpoint-backup-";

/// A backup period, in whole seconds: written `30s`, `15m`, `6h` or `1d`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub struct Every(u64);

impl Every {
    /// Reads a number and one unit (`s`, `m`, `h`, `d`), at least [`MIN_EVERY_S`].
    pub fn parse(text: &str) -> Result<Self, String> {
        const HOW: &str = "give a number and a unit: 30s, 15m, 6h or 1d";
        let text = text.trim();
        let split = text
            .find(|c: char| !c.is_ascii_digit())
            .ok_or_else(|| HOW.to_string())?;
        let (number, unit) = text.split_at(split);
        let n: u64 = number.parse().map_err(|_| HOW.to_string())?;
        let scale = match unit.trim() {
            "s" => 1,
            "m" => 60,
            "h" => 3_600,
            "d" => 86_400,
            _ => return Err(HOW.to_string()),
        };
        Self::from_secs(n.saturating_mul(scale))
    }

    /// A period of `secs` seconds, checked against the shortest and longest.
    pub fn from_secs(secs: u64) -> Result<Self, String> {
        if secs < MIN_EVERY_S {
            return Err(format!("at least {MIN_EVERY_S}s"));
        }
        if secs > MAX_EVERY_S {
            return Err("at most 366d".to_string());
        }
        Ok(Self(secs))
    }

    pub fn secs(self) -> u64 {
        self.0
    }

    /// The period as a duration on the wall clock.
    pub fn span(self) -> jiff::SignedDuration {
        jiff::SignedDuration::from_secs(i64::try_from(self.0).unwrap_or(i64::MAX))
    }

    /// The wait before a failed backup is tried again: the period, or [`RETRY_S`] when shorter.
    pub fn retry(self) -> jiff::SignedDuration {
        Self(self.0.min(RETRY_S)).span()
    }

    /// In words for a page: "every day", "every 6 hours", "every 30 seconds".
    pub fn words(self) -> String {
        let (n, unit) = self.largest_unit();
        let unit = match unit {
            "d" => "day",
            "h" => "hour",
            "m" => "minute",
            _ => "second",
        };
        if n == 1 {
            format!("every {unit}")
        } else {
            format!("every {n} {unit}s")
        }
    }

    fn largest_unit(self) -> (u64, &'static str) {
        for (scale, unit) in [(86_400, "d"), (3_600, "h"), (60, "m")] {
            if self.0.is_multiple_of(scale) {
                return (self.0 / scale, unit);
            }
        }
        (self.0, "s")
    }
}

/// As it is typed: `1d`, `6h`, `90s`.
impl fmt::Display for Every {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let (n, unit) = self.largest_unit();
        write!(f, "{n}{unit}")
    }
}

impl std::str::FromStr for Every {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        Self::parse(s)
    }
}

/// Reads a number of copies to keep (1 to [`MAX_KEEP`]).
pub fn parse_keep(text: &str) -> Result<u32, String> {
    let msg = || format!("a whole number from 1 to {MAX_KEEP}");
    let n: u32 = text.trim().parse().map_err(|_| msg())?;
    if (1..=MAX_KEEP).contains(&n) {
        Ok(n)
    } else {
        Err(msg())
    }
}

/// Reads a backup folder: empty for none, else a full path (`/mnt/backup`), since a relative
/// one would depend on where the server happened to be started.
pub fn parse_dir(text: &str) -> Result<Option<PathBuf>, String> {
    let text = text.trim();
    if text.is_empty() {
        return Ok(None);
    }
    if text.chars().any(char::is_control) {
        return Err("a folder name without control characters".into());
    }
    let path = PathBuf::from(text);
    if !path.is_absolute() {
        return Err("give the full path of the folder, such as /mnt/backup".into());
    }
    Ok(Some(path))
}

/// The schedule as stored (Settings → Backups), one row at most.
#[derive(Debug, Clone, PartialEq, Eq, sqlx::FromRow)]
pub struct Stored {
    /// Empty: no folder chosen.
    pub dir: String,
    pub every_s: i64,
    pub keep: i64,
}

impl Default for Stored {
    fn default() -> Self {
        Self {
            dir: String::new(),
            every_s: DEFAULT_EVERY.0 as i64,
            keep: i64::from(DEFAULT_KEEP),
        }
    }
}

impl Stored {
    /// Reads the schedule form (`dir`, `every`, `keep`), each message under its field.
    pub fn from_form(
        dir: &str,
        every: &str,
        keep: &str,
    ) -> Result<Self, Vec<(&'static str, String)>> {
        let mut errors = Vec::new();
        let dir = parse_dir(dir).unwrap_or_else(|e| {
            errors.push(("dir", e));
            None
        });
        let every = Every::parse(every).unwrap_or_else(|e| {
            errors.push(("every", e));
            DEFAULT_EVERY
        });
        let keep = parse_keep(keep).unwrap_or_else(|e| {
            errors.push(("keep", e));
            DEFAULT_KEEP
        });
        if !errors.is_empty() {
            return Err(errors);
        }
        Ok(Self {
            dir: dir.map(|d| d.display().to_string()).unwrap_or_default(),
            every_s: every.0 as i64,
            keep: i64::from(keep),
        })
    }
}

/// What the server was started with (`serve --backup-*` or `LOCKPOINT_BACKUP_*`): each value
/// given there wins over the stored one.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Fixed {
    pub dir: Option<PathBuf>,
    pub every: Option<Every>,
    pub keep: Option<u32>,
}

impl Fixed {
    /// Whether nothing was given at start.
    pub fn is_empty(&self) -> bool {
        self.dir.is_none() && self.every.is_none() && self.keep.is_none()
    }
}

/// The schedule in force.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Plan {
    pub dir: PathBuf,
    pub every: Every,
    pub keep: u32,
}

/// The schedule in force: each value from the start (command line, then environment), else the
/// stored one, else the default; `None` while no folder is chosen (backups are off). A stored
/// value out of range (written by hand) counts as the default.
pub fn resolve(fixed: &Fixed, stored: &Stored) -> Option<Plan> {
    let dir = fixed
        .dir
        .clone()
        .or_else(|| parse_dir(&stored.dir).ok().flatten())?;
    let every = fixed.every.unwrap_or_else(|| {
        u64::try_from(stored.every_s)
            .ok()
            .and_then(|s| Every::from_secs(s).ok())
            .unwrap_or(DEFAULT_EVERY)
    });
    let keep = fixed.keep.unwrap_or_else(|| {
        u32::try_from(stored.keep)
            .ok()
            .filter(|k| (1..=MAX_KEEP).contains(k))
            .unwrap_or(DEFAULT_KEEP)
    });
    Some(Plan { dir, every, keep })
}

/// The name of a finished copy begun at `local` (the shop's time):
/// `lockpoint-20261204-061500.db`; `n` above 1 when that name is taken already (a clock set
/// back repeats names): `lockpoint-20261204-061500-2.db`.
pub fn file_name(local: DateTime, n: u32) -> String {
    let stamp = local.strftime("%Y%m%d-%H%M%S");
    if n <= 1 {
        format!("{PREFIX}{stamp}.db")
    } else {
        format!("{PREFIX}{stamp}-{n}.db")
    }
}

/// Whether `name` is a finished scheduled copy (as [`file_name`] writes them).
pub fn is_backup_name(name: &str) -> bool {
    let Some(rest) = name
        .strip_prefix(PREFIX)
        .and_then(|r| r.strip_suffix(".db"))
    else {
        return false;
    };
    let digits = |s: &str, n: usize| s.len() == n && s.bytes().all(|b| b.is_ascii_digit());
    let mut parts = rest.split('-');
    let (Some(date), Some(time)) = (parts.next(), parts.next()) else {
        return false;
    };
    let extra_ok = match parts.next() {
        None => true,
        Some(n) => !n.is_empty() && n.len() <= 4 && n.bytes().all(|b| b.is_ascii_digit()),
    };
    digits(date, 8) && digits(time, 6) && extra_ok && parts.next().is_none()
}

/// The name a copy is written under until it is checked and complete: hidden, ending in `.tmp`,
/// unique to this process and attempt.
pub fn temp_name(local: DateTime, pid: u32, attempt: u64) -> String {
    format!(
        "{TEMP_PREFIX}{}-{pid}-{attempt}.tmp",
        local.strftime("%Y%m%d-%H%M%S")
    )
}

/// Whether `name` is a copy left half-written (or SQLite's journal beside one) by a server that
/// stopped during a backup.
pub fn is_temp_name(name: &str) -> bool {
    name.starts_with(TEMP_PREFIX)
        && [".tmp", ".tmp-journal", ".tmp-wal", ".tmp-shm"]
            .iter()
            .any(|end| name.ends_with(end))
}

/// A finished copy found in the folder.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Found {
    pub name: String,
    /// When it was written (its modification time).
    pub at: Timestamp,
    pub bytes: u64,
}

/// The copies to remove after `made` was written so that `keep` stay: the oldest by the time
/// they were written (not by name: a clock set back repeats names), never `made` itself, the
/// newest good copy, whatever the clock says about it.
pub fn to_prune(found: &[Found], made: &str, keep: u32) -> Vec<String> {
    let mut others: Vec<&Found> = found.iter().filter(|f| f.name != made).collect();
    // Newest first; equal times by name, so the choice does not depend on the listing order.
    others.sort_by(|a, b| b.at.cmp(&a.at).then_with(|| b.name.cmp(&a.name)));
    let room = keep.saturating_sub(1) as usize;
    others
        .into_iter()
        .skip(room)
        .map(|f| f.name.clone())
        .collect()
}

/// The newest finished copy by the time it was written.
pub fn newest(found: &[Found]) -> Option<&Found> {
    found
        .iter()
        .max_by(|a, b| a.at.cmp(&b.at).then_with(|| a.name.cmp(&b.name)))
}

/// A backup that was made.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Good {
    /// When it began (the moment its snapshot is of, at the latest).
    pub at: Timestamp,
    /// Its full path.
    pub file: PathBuf,
    pub bytes: u64,
}

/// A backup that failed, and why.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Failure {
    pub at: Timestamp,
    pub reason: String,
}

/// What the scheduled backups have done since the server started (the last good copy may come
/// from the folder, found at start).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Record {
    pub last_good: Option<Good>,
    pub last_failure: Option<Failure>,
    /// Whether the latest attempt (or check of a running one) failed.
    pub failing: bool,
    /// When the backup running now began.
    pub running_since: Option<Timestamp>,
}

/// What the counter shows admins about the backups.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Alarm {
    /// Backups are scheduled and working.
    Quiet,
    /// No folder is chosen: a one-line suggestion.
    NotConfigured,
    /// The latest attempt failed, with its reason.
    Failed(String),
    /// The last good copy is older than two periods (when it was made).
    Overdue(Timestamp),
}

/// Whether the shop must hear about its backups at `now`: the latest attempt failed, or the
/// last good copy is older than two periods (a copy still running does not count until it
/// finishes). No copy at all and no failure yet: quiet (the first one is on its way).
pub fn alarm(plan: Option<&Plan>, record: &Record, now: Timestamp) -> Alarm {
    let Some(plan) = plan else {
        return Alarm::NotConfigured;
    };
    if record.failing {
        let reason = record
            .last_failure
            .as_ref()
            .map_or_else(|| "unknown".to_string(), |f| f.reason.clone());
        return Alarm::Failed(reason);
    }
    match &record.last_good {
        Some(good) if now.duration_since(good.at) > plan.every.span() * 2 => {
            Alarm::Overdue(good.at)
        }
        _ => Alarm::Quiet,
    }
}

/// When the first backup after a start (or a change of schedule) is due: one period after the
/// newest copy in the folder, and at once when there is none or it is older than that.
pub fn first_due(newest: Option<&Found>, every: Every, now: Timestamp) -> Timestamp {
    match newest {
        Some(f) => {
            let due = f.at.checked_add(every.span()).unwrap_or(now);
            if due < now { now } else { due }
        }
        None => now,
    }
}

/// Whether the folder `dir` is on the same file system as the database, given each one's
/// device number (a disk failure would take both).
pub fn same_device(dir: Option<u64>, db_folder: Option<u64>) -> Option<bool> {
    Some(dir? == db_folder?)
}

/// The file name part of `path`, for a page.
pub fn shown_name(path: &Path) -> String {
    path.file_name().map_or_else(
        || path.display().to_string(),
        |n| n.to_string_lossy().into(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ts(s: &str) -> Timestamp {
        s.parse().unwrap()
    }

    fn found(name: &str, at: &str) -> Found {
        Found {
            name: name.into(),
            at: ts(at),
            bytes: 1,
        }
    }

    #[test]
    fn periods_read_as_typed_and_refuse_what_is_too_short_or_unitless() {
        assert_eq!(Every::parse("30s").unwrap().secs(), 30);
        assert_eq!(Every::parse("15m").unwrap().secs(), 900);
        assert_eq!(Every::parse(" 6h ").unwrap().secs(), 21_600);
        assert_eq!(Every::parse("1d").unwrap().secs(), 86_400);
        assert_eq!(Every::parse("10s").unwrap().secs(), 10);
        assert!(Every::parse("9s").unwrap_err().contains("at least 10s"));
        for bad in ["", "30", "s", "1w", "1.5h", "-1d", "1 d x"] {
            assert!(Every::parse(bad).is_err(), "{bad:?}");
        }
        assert!(Every::parse("367d").is_err());
        assert!(Every::parse("99999999999999999999d").is_err());
        assert_eq!(Every::parse("90m").unwrap().to_string(), "90m");
        assert_eq!(Every::parse("120m").unwrap().to_string(), "2h");
        assert_eq!(Every::parse("1d").unwrap().words(), "every day");
        assert_eq!(Every::parse("45s").unwrap().words(), "every 45 seconds");
    }

    #[test]
    fn the_start_wins_over_the_stored_schedule_value_by_value() {
        let stored = Stored {
            dir: "/mnt/stored".into(),
            every_s: 3_600,
            keep: 5,
        };
        let plan = resolve(&Fixed::default(), &stored).unwrap();
        assert_eq!(
            (plan.dir.as_path(), plan.every.secs(), plan.keep),
            (Path::new("/mnt/stored"), 3_600, 5)
        );
        let fixed = Fixed {
            dir: Some("/mnt/fixed".into()),
            every: None,
            keep: Some(2),
        };
        let plan = resolve(&fixed, &stored).unwrap();
        assert_eq!(
            (plan.dir.as_path(), plan.every.secs(), plan.keep),
            (Path::new("/mnt/fixed"), 3_600, 2)
        );
        // No folder anywhere: off, whatever else is set.
        assert_eq!(resolve(&Fixed::default(), &Stored::default()), None);
        // Defaults: a day, 14 kept.
        let fixed = Fixed {
            dir: Some("/b".into()),
            ..Fixed::default()
        };
        let plan = resolve(&fixed, &Stored::default()).unwrap();
        assert_eq!((plan.every, plan.keep), (DEFAULT_EVERY, 14));
    }

    #[test]
    fn the_schedule_form_puts_each_message_under_its_field() {
        let ok = Stored::from_form(" /mnt/usb ", "6h", "7").unwrap();
        assert_eq!(
            ok,
            Stored {
                dir: "/mnt/usb".into(),
                every_s: 21_600,
                keep: 7
            }
        );
        assert_eq!(Stored::from_form("", "1d", "14").unwrap().dir, "");
        let bad = Stored::from_form("backups", "5s", "0").unwrap_err();
        let fields: Vec<&str> = bad.iter().map(|(f, _)| *f).collect();
        assert_eq!(fields, ["dir", "every", "keep"]);
    }

    #[test]
    fn names_carry_the_local_start_time_and_only_finished_copies_match() {
        let local: DateTime = "2026-12-04T06:15:09".parse().unwrap();
        assert_eq!(file_name(local, 1), "lockpoint-20261204-061509.db");
        assert_eq!(file_name(local, 3), "lockpoint-20261204-061509-3.db");
        assert!(is_backup_name(&file_name(local, 1)));
        assert!(is_backup_name(&file_name(local, 3)));
        let temp = temp_name(local, 42, 7);
        assert!(temp.starts_with('.') && temp.ends_with(".tmp"), "{temp}");
        assert!(!is_backup_name(&temp));
        assert!(is_temp_name(&temp));
        assert!(is_temp_name(&format!("{temp}-journal")));
        for other in [
            "lockpoint-2026120-061509.db",
            "lockpoint-20261204-061509.db-journal",
            "lockpoint-20261204-061509.db.bak",
            "lockpoint.db",
            "lockpoint-export.json",
            "lockpoint-20261204-061509-.db",
            ".lockpoint-other.tmp",
        ] {
            assert!(!is_backup_name(other), "{other}");
            assert!(!is_temp_name(other), "{other}");
        }
    }

    #[test]
    fn pruning_goes_by_the_time_written_and_never_takes_the_copy_just_made() {
        // The clock was set back: the newest name sorts first but was written last.
        let files = [
            found("lockpoint-20261204-100000.db", "2026-12-04T10:00:00Z"),
            found("lockpoint-20261204-110000.db", "2026-12-04T11:00:00Z"),
            found("lockpoint-20261204-120000.db", "2026-12-04T12:00:00Z"),
            found("lockpoint-20261204-103000.db", "2026-12-04T12:30:00Z"),
        ];
        assert_eq!(
            to_prune(&files, "lockpoint-20261204-103000.db", 2),
            [
                "lockpoint-20261204-110000.db",
                "lockpoint-20261204-100000.db"
            ]
        );
        // The copy just made is kept even when its time looks oldest (a clock set back a day).
        assert_eq!(
            to_prune(&files, "lockpoint-20261204-100000.db", 1),
            [
                "lockpoint-20261204-103000.db",
                "lockpoint-20261204-120000.db",
                "lockpoint-20261204-110000.db"
            ]
        );
        assert!(to_prune(&files, "lockpoint-20261204-103000.db", 14).is_empty());
        assert_eq!(newest(&files).unwrap().name, "lockpoint-20261204-103000.db");
    }

    #[test]
    fn the_alarm_sounds_on_a_failure_or_a_copy_older_than_two_periods() {
        let plan = Plan {
            dir: "/b".into(),
            every: Every::parse("1h").unwrap(),
            keep: 3,
        };
        let now = ts("2026-12-04T12:00:00Z");
        let good = |at: &str| Good {
            at: ts(at),
            file: "/b/x".into(),
            bytes: 1,
        };
        assert_eq!(alarm(None, &Record::default(), now), Alarm::NotConfigured);
        assert_eq!(alarm(Some(&plan), &Record::default(), now), Alarm::Quiet);
        let fresh = Record {
            last_good: Some(good("2026-12-04T10:00:01Z")),
            ..Record::default()
        };
        assert_eq!(alarm(Some(&plan), &fresh, now), Alarm::Quiet);
        let stale = Record {
            last_good: Some(good("2026-12-04T09:59:59Z")),
            ..Record::default()
        };
        assert_eq!(
            alarm(Some(&plan), &stale, now),
            Alarm::Overdue(ts("2026-12-04T09:59:59Z"))
        );
        let failed = Record {
            last_failure: Some(Failure {
                at: now,
                reason: "disk full".into(),
            }),
            failing: true,
            ..fresh.clone()
        };
        assert_eq!(
            alarm(Some(&plan), &failed, now),
            Alarm::Failed("disk full".into())
        );
        // An old failure followed by a good copy: quiet, the failure stays on record.
        let recovered = Record {
            failing: false,
            ..failed
        };
        assert_eq!(alarm(Some(&plan), &recovered, now), Alarm::Quiet);
    }

    #[test]
    fn the_first_backup_runs_at_once_unless_a_copy_younger_than_a_period_is_there() {
        let every = Every::parse("1d").unwrap();
        let now = ts("2026-12-04T08:00:00Z");
        assert_eq!(first_due(None, every, now), now);
        let last_night = found("a", "2026-12-03T20:00:00Z");
        assert_eq!(
            first_due(Some(&last_night), every, now),
            ts("2026-12-04T20:00:00Z")
        );
        let last_week = found("a", "2026-11-27T20:00:00Z");
        assert_eq!(first_due(Some(&last_week), every, now), now);
    }

    #[test]
    fn a_retry_waits_the_period_or_a_quarter_hour_whichever_is_shorter() {
        assert_eq!(Every::parse("10s").unwrap().retry().as_secs(), 10);
        assert_eq!(Every::parse("1d").unwrap().retry().as_secs(), 900);
    }
}
