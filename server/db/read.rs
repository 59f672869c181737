//! The pages' largest reads, a whole build (its dossier) and a customer search
//! (`db::search::list`), and what the build and tuning pages read beside the dossier (the
//! shop's settings, the build's sheets): all their rows read in one synchronous call on a
//! blocking thread, on connections of their own.
//!
//! Why a second SQLite binding: sqlx runs each SQLite connection on a worker thread and hands
//! every row of every query across a channel, so a dossier (ten queries, about 150 rows at
//! scale) costs a dozen thread wake-ups on top of SQLite's own work; on two busy cores that
//! was most of a build page's time (DEVELOPERS.md, "Where the time goes"). Here the same
//! queries run one after the other on one thread with cached statements, in one read
//! transaction. Writes, and reads inside a write's transaction, stay on sqlx
//! (`AppState::write`): this module only reads, on connections opened for reading and writing
//! (as WAL wants of a reader that may find no shared-memory file yet) that refuse to write
//! (`query_only`).
//!
//! A row is read into the same records as sqlx reads it: a record's declared fields through
//! [`super::record::set_stored`], the way [`super::record`] writes them; a test reads every
//! dossier of the demo shop both ways and compares them.

use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};

use rusqlite::types::ValueRef;
use rusqlite::{CachedStatement, Connection, OpenFlags, Row};

use super::customers::{CustomerSummary, Order};
use super::export::Cell;
use super::record::set_stored;
use super::sheets::SheetSummary;
use crate::records::field::Record;
use crate::records::measure::{EngineSpeed, Force, Length, Seconds};
use crate::records::settings::SettingsInput;
use crate::records::stored::{
    BenchSpring, BenchTest, Build, BuildOwner, Car, Dossier, Height, KeptEnergy, KeptLaunchFit,
    LogSummary, Pass, Setup,
};

/// Connections reading at once: one a core of the machine the goals were set on; a page waits
/// its turn beyond that (the reading itself is CPU work).
const READERS: usize = 2;

/// Read-only connections to the database file, opened when first needed.
pub struct Reader {
    path: PathBuf,
    idle: Mutex<Vec<Connection>>,
    turns: Arc<tokio::sync::Semaphore>,
}

/// Why a read failed (SQLite's own error, or the blocking thread's end).
#[derive(Debug, thiserror::Error)]
#[error("reading the database: {0}")]
pub struct ReadError(String);

impl Reader {
    /// Reads the database file at `path` (the file the pool opened).
    pub fn new(path: &Path) -> Arc<Self> {
        Arc::new(Self {
            path: path.to_owned(),
            idle: Mutex::new(Vec::new()),
            turns: Arc::new(tokio::sync::Semaphore::new(READERS)),
        })
    }

    /// Runs `read` on a blocking thread with a connection of its own, in turn, inside one read
    /// transaction (so its queries see one state of the file). The turn is held by the blocking
    /// work itself, so a request given up while it reads frees no turn early.
    pub async fn read<T, F>(self: &Arc<Self>, read: F) -> Result<T, ReadError>
    where
        T: Send + 'static,
        F: FnOnce(&Connection) -> rusqlite::Result<T> + Send + 'static,
    {
        self.read_then(read, |out| out).await
    }

    /// [`Reader::read`], then `then` on what it read, on the same blocking thread once the
    /// connection and the turn are given back: a page's reads and its calculations in one
    /// hand-over to a blocking thread instead of two.
    pub async fn read_then<R, T, F, G>(self: &Arc<Self>, read: F, then: G) -> Result<T, ReadError>
    where
        T: Send + 'static,
        F: FnOnce(&Connection) -> rusqlite::Result<R> + Send + 'static,
        G: FnOnce(R) -> T + Send + 'static,
    {
        let turn = Arc::clone(&self.turns)
            .acquire_owned()
            .await
            .map_err(|e| ReadError(e.to_string()))?;
        let me = Arc::clone(self);
        tokio::task::spawn_blocking(move || {
            let out = {
                let _turn = turn;
                let conn = me.connection()?;
                let out = in_transaction(&conn, read);
                // At most one idle connection a turn: never more than `READERS` are kept.
                let mut idle = me.idle.lock().unwrap_or_else(|e| e.into_inner());
                if idle.len() < READERS {
                    idle.push(conn);
                }
                out.map_err(|e| ReadError(e.to_string()))?
            };
            Ok(then(out))
        })
        .await
        .map_err(|e| ReadError(e.to_string()))?
    }

    /// The dossier of build `id` (see [`super::dossier::load`]).
    pub async fn dossier(self: &Arc<Self>, id: i64) -> Result<Option<Dossier>, ReadError> {
        self.read(move |conn| dossier(conn, id)).await
    }

    /// One page of the customer list or search for `query` (see [`super::search::list`]).
    pub async fn search(
        self: &Arc<Self>,
        query: &str,
        page: i64,
        order: Order,
    ) -> Result<(Vec<CustomerSummary>, i64), ReadError> {
        let query = query.to_owned();
        self.read(move |conn| super::search::list(conn, &query, page, order))
            .await
    }

    fn connection(&self) -> Result<Connection, ReadError> {
        if let Some(conn) = self.idle.lock().unwrap_or_else(|e| e.into_inner()).pop() {
            return Ok(conn);
        }
        let flags = OpenFlags::SQLITE_OPEN_READ_WRITE | OpenFlags::SQLITE_OPEN_NO_MUTEX;
        let open = || -> rusqlite::Result<Connection> {
            let conn = Connection::open_with_flags(&self.path, flags)?;
            // As the pool's connections (db::open), and never a write.
            conn.execute_batch(
                "PRAGMA query_only = ON; PRAGMA cache_size = -1024; PRAGMA mmap_size = 0;
                 PRAGMA temp_store = MEMORY; PRAGMA busy_timeout = 10000;",
            )?;
            conn.set_prepared_statement_cache_capacity(32);
            Ok(conn)
        };
        open().map_err(|e| ReadError(e.to_string()))
    }
}

/// `read` inside one read transaction, begun and ended by cached statements (a transaction
/// object prepares both anew each time, a few percent of a page); ended after an error too,
/// so the connection goes back idle outside any transaction.
fn in_transaction<T>(
    conn: &Connection,
    read: impl FnOnce(&Connection) -> rusqlite::Result<T>,
) -> rusqlite::Result<T> {
    conn.prepare_cached("BEGIN")?.execute([])?;
    let out = read(conn);
    let end = conn
        .prepare_cached(if out.is_ok() { "COMMIT" } else { "ROLLBACK" })
        .and_then(|mut s| s.execute([]));
    let out = out?;
    end?;
    Ok(out)
}

/// What a build's own pages read: its dossier, the shop's settings and `more` (the build
/// page's sheets), in one read; `None` when there is no such build.
pub fn build_page<T>(
    conn: &Connection,
    id: i64,
    more: impl FnOnce(&Connection) -> rusqlite::Result<T>,
) -> rusqlite::Result<Option<(Dossier, SettingsInput, T)>> {
    Ok(match dossier(conn, id)? {
        Some(d) => Some((d, settings(conn)?, more(conn)?)),
        None => None,
    })
}

/// The query text `$sql` makes, made once for the process (the declarations it is made from
/// do not change while it runs).
macro_rules! once {
    ($sql:expr) => {{
        static SQL: std::sync::OnceLock<String> = std::sync::OnceLock::new();
        SQL.get_or_init(|| $sql).as_str()
    }};
}

/// Build `id` with all its records, read as [`super::dossier::load`] reads them.
pub fn dossier(conn: &Connection, id: i64) -> rusqlite::Result<Option<Dossier>> {
    // Both read by their primary key: one row at most.
    let build = all(conn, once!(stored_sql::<Build>(BUILD)), id, stored)?.pop();
    let Some(build): Option<Build> = build else {
        return Ok(None);
    };
    let Some((car, owner)) = all(
        conn,
        once!(stored_sql::<Car>(CAR)),
        build.car_id,
        car_with_owner,
    )?
    .pop() else {
        return Ok(None);
    };
    let passes: Vec<Pass> = all(
        conn,
        once!(format!(
            "{} LIMIT {}",
            stored_sql::<Pass>(PASSES),
            super::dossier::PASSES_LOADED
        )),
        build.id,
        stored,
    )?;
    let passes_total = if passes.len() < super::dossier::PASSES_LOADED {
        passes.len() as i64
    } else {
        prepare(conn, "SELECT COUNT(*) FROM passes WHERE build_id = ?")?
            .query_row([build.id], |r| r.get(0))?
    };
    Ok(Some(Dossier {
        owner,
        car,
        setups: all(conn, once!(stored_sql::<Setup>(SETUPS)), build.id, stored)?,
        bench: bench(conn, build.id)?,
        heights: all(conn, once!(stored_sql::<Height>(HEIGHTS)), build.id, stored)?,
        passes,
        passes_total,
        logs: all(conn, once!(logs_sql()), build.id, log_summary)?,
        launch_fits: all(conn, super::kept::FITS_FOR_BUILD, build.id, launch_fit)?,
        pass_energies: all(conn, super::kept::ENERGIES_FOR_BUILD, build.id, |r| {
            Ok(KeptEnergy {
                pass_id: r.get(0)?,
                inputs: r.get(1)?,
                energy_j: r.get(2)?,
                note: r.get(3)?,
            })
        })?,
        build,
    }))
}

/// A stored record: its leading columns (ids and stamps, as listed in its `From` query), then
/// its declared fields in declaration order.
trait StoredRow: Sized {
    type Input: Record;
    /// How many leading columns come before the declared fields.
    const LEADING: usize;
    fn assemble(row: &Row, data: Self::Input) -> rusqlite::Result<Self>;
}

/// The query of a stored record: `from` is `"<leading columns> FROM ... WHERE ... ?"`, with the
/// record's table aliased `x`; the declared fields are read after the leading columns.
fn stored_sql<T: StoredRow>(from: &str) -> String {
    let fields: Vec<String> = crate::records::field::columns::<T::Input>()
        .map(|c| format!("x.{c}"))
        .collect();
    let (leading, rest) = from.split_once(" FROM ").expect("a query with FROM");
    format!("SELECT {leading}, {} FROM {rest}", fields.join(", "))
}

fn stored<T: StoredRow>(row: &Row) -> rusqlite::Result<T> {
    let mut data = T::Input::default();
    for (i, f) in T::Input::FIELDS.iter().enumerate() {
        let at = T::LEADING + i;
        let cell = cell(row.get_ref(at)?);
        set_stored(&mut data, f, cell).map_err(|want| {
            rusqlite::Error::FromSqlConversionFailure(
                at,
                row.get_ref(at)
                    .map_or(rusqlite::types::Type::Null, |v| v.data_type()),
                format!("{}: expected {want}", f.column).into(),
            )
        })?;
    }
    T::assemble(row, data)
}

fn cell(v: ValueRef<'_>) -> Cell {
    match v {
        ValueRef::Null => Cell::Null,
        ValueRef::Integer(i) => Cell::Integer(i),
        ValueRef::Real(r) => Cell::Real(r),
        ValueRef::Text(t) => match std::str::from_utf8(t) {
            Ok(t) => Cell::Text(t.to_owned()),
            // Not text as sqlx would read it: refused by the field as a blob would be.
            Err(_) => Cell::Blob(t.to_vec()),
        },
        ValueRef::Blob(b) => Cell::Blob(b.to_vec()),
    }
}

const BUILD: &str = "x.id, x.car_id, x.created_at, x.updated_at FROM builds x
     JOIN cars k ON k.id = x.car_id JOIN customers c ON c.id = k.customer_id
     WHERE x.id = ? AND c.deleted_at IS NULL";

const CAR: &str = "x.id, x.customer_id, x.created_at, x.updated_at, c.name, c.phone FROM cars x
     JOIN customers c ON c.id = x.customer_id WHERE x.id = ? AND c.deleted_at IS NULL";

/// The car and its owner's name and phone (the two columns after the car's stamps).
fn car_with_owner(row: &Row) -> rusqlite::Result<(Car, BuildOwner)> {
    let car: Car = stored(row)?;
    let owner = BuildOwner {
        customer_id: car.customer_id,
        customer_name: row.get(4)?,
        customer_phone: row.get(5)?,
        car_id: car.id,
        car_description: car.data.description.clone(),
    };
    Ok((car, owner))
}

/// The [`StoredRow`] of a record whose leading columns are `$leading` in all, its own first,
/// in the order its query lists them.
macro_rules! stored_row {
    ($row:ty, $input:ty, $leading:literal: $($own:ident),+) => {
        impl StoredRow for $row {
            type Input = $input;
            const LEADING: usize = $leading;
            fn assemble(row: &Row, data: Self::Input) -> rusqlite::Result<Self> {
                let mut at = 0;
                $(
                    let $own = row.get(at)?;
                    at += 1;
                )+
                debug_assert!(at <= Self::LEADING);
                Ok(Self { $($own,)+ data })
            }
        }
    };
}

stored_row!(Build, crate::records::build::BuildInput, 4: id, car_id, created_at, updated_at);
// The owner's name and phone follow the car's own columns (see `car_with_owner`).
stored_row!(Car, crate::records::car::CarInput, 6: id, customer_id, created_at, updated_at);
stored_row!(Setup, crate::records::setup::SetupInput, 5: id, build_id, user_id, created_at, updated_at);
stored_row!(Height, crate::records::height::HeightInput, 5: id, build_id, user_id, created_at, updated_at);
stored_row!(Pass, crate::records::pass::PassInput, 5: id, build_id, user_id, created_at, updated_at);

/// The settings row's id leads its query; the settings are its declared fields alone.
impl StoredRow for SettingsInput {
    type Input = SettingsInput;
    const LEADING: usize = 1;
    fn assemble(_: &Row, data: Self::Input) -> rusqlite::Result<Self> {
        Ok(data)
    }
}

const SETTINGS: &str = "x.id FROM shop_settings x WHERE x.id = ?";

/// The shop's settings, as [`super::settings::get`] reads them.
pub fn settings(conn: &Connection) -> rusqlite::Result<SettingsInput> {
    all(
        conn,
        once!(stored_sql::<SettingsInput>(SETTINGS)),
        1,
        stored,
    )?
    .pop()
    .ok_or(rusqlite::Error::QueryReturnedNoRows)
}

/// A build's sheets, newest first, with their live links ([`super::sheets::FOR_BUILD`]).
pub fn sheets(conn: &Connection, build_id: i64) -> rusqlite::Result<Vec<SheetSummary>> {
    all(conn, super::sheets::FOR_BUILD, build_id, |r| {
        Ok(SheetSummary {
            id: r.get(0)?,
            prepared_on: r.get(1)?,
            prepared_by: r.get(2)?,
            live_links: r.get(3)?,
        })
    })
}

const SETUPS: &str = concat!(
    "x.id, x.build_id, x.user_id, x.created_at, x.updated_at",
    " FROM setup_changes x WHERE x.build_id = ? ORDER BY x.changed_on, x.id"
);
const HEIGHTS: &str = concat!(
    "x.id, x.build_id, x.user_id, x.created_at, x.updated_at",
    " FROM cover_heights x WHERE x.build_id = ? ORDER BY x.id"
);
const PASSES: &str = concat!(
    "x.id, x.build_id, x.user_id, x.created_at, x.updated_at",
    " FROM passes x WHERE x.build_id = ? ORDER BY x.run_on DESC, x.id DESC"
);

/// A build's bench tests, oldest first, each with its readings by position (two queries, as
/// `db::bench::for_build`).
fn bench(conn: &Connection, build_id: i64) -> rusqlite::Result<Vec<BenchTest>> {
    let mut tests: Vec<BenchTest> = all(
        conn,
        "SELECT t.id, t.build_id, t.tested_on, t.note, t.created_at FROM bench_tests t
         WHERE t.build_id = ? ORDER BY t.build_id, t.tested_on, t.id",
        build_id,
        |r| {
            Ok(BenchTest {
                id: r.get(0)?,
                build_id: r.get(1)?,
                tested_on: r.get(2)?,
                note: r.get(3)?,
                created_at: r.get(4)?,
                springs: Vec::new(),
            })
        },
    )?;
    let springs: Vec<BenchSpring> = all(
        conn,
        "SELECT s.bench_test_id, s.position, s.free_length_mm, s.compression_mm, s.force_n
         FROM bench_springs s JOIN bench_tests t ON t.id = s.bench_test_id
         WHERE t.build_id = ? ORDER BY s.bench_test_id, s.position",
        build_id,
        |r| {
            Ok(BenchSpring {
                bench_test_id: r.get(0)?,
                position: r.get(1)?,
                free_length_mm: r.get::<_, Option<f64>>(2)?.map(Length::from_mm),
                compression_mm: Length::from_mm(r.get(3)?),
                force_n: Force::from_n(r.get(4)?),
            })
        },
    )?;
    for s in springs {
        if let Some(test) = tests.iter_mut().find(|t| t.id == s.bench_test_id) {
            test.springs.push(s);
        }
    }
    Ok(tests)
}

/// A build's logs: the figures `db::pass_logs` lists.
fn logs_sql() -> String {
    format!(
        "SELECT {} FROM pass_logs l JOIN passes p ON p.id = l.pass_id WHERE p.build_id = ?",
        super::pass_logs::SUMMARY
    )
}

fn log_summary(r: &Row) -> rusqlite::Result<LogSummary> {
    Ok(LogSummary {
        pass_id: r.get(0)?,
        file_name: r.get(1)?,
        file_bytes: r.get(2)?,
        sample_rate_hz: r.get(3)?,
        launch_s: Seconds::from_s(r.get(4)?),
        lockup_s: Seconds::from_s(r.get(5)?),
        lockup_engine_rpm: EngineSpeed::from_rpm(r.get(6)?),
        slip_energy_j: r.get(7)?,
        peak_slip_power_w: r.get(8)?,
        slip_window: r.get(9)?,
        created_at: r.get(10)?,
    })
}

fn launch_fit(r: &Row) -> rusqlite::Result<KeptLaunchFit> {
    Ok(KeptLaunchFit {
        pass_id: r.get(0)?,
        inputs: r.get(1)?,
        mu: r.get(2)?,
        lockup_rpm: r.get::<_, Option<f64>>(3)?.map(EngineSpeed::from_rpm),
        note: r.get(4)?,
    })
}

/// The cached statement for `sql`, its text logged at debug level under the target
/// `lockpoint::read` (field `db.statement`, as sqlx logs its own under `sqlx::query`): how the
/// query-plan test sees what the pages read here.
pub fn prepare<'c>(conn: &'c Connection, sql: &str) -> rusqlite::Result<CachedStatement<'c>> {
    tracing::debug!(target: "lockpoint::read", { db.statement = sql }, "read");
    conn.prepare_cached(sql)
}

/// The rows `sql` finds for `key`, each read by `read`.
fn all<T>(
    conn: &Connection,
    sql: &str,
    key: i64,
    read: impl FnMut(&Row) -> rusqlite::Result<T>,
) -> rusqlite::Result<Vec<T>> {
    prepare(conn, sql)?.query_map([key], read)?.collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    // rusqlite's `is_autocommit` is SQLite's own word on whether a transaction is open
    // (sqlite3_get_autocommit).
    #[test]
    fn a_read_runs_inside_one_transaction_and_leaves_none_open_after_success_or_error() {
        let conn = Connection::open_in_memory().unwrap();
        let inside = in_transaction(&conn, |c| Ok(c.is_autocommit())).unwrap();
        assert!(!inside, "the read ran inside a transaction");
        assert!(conn.is_autocommit(), "ended after success");
        let failed = in_transaction(&conn, |c| {
            c.prepare_cached("SELECT * FROM no_such_table").map(|_| ())
        });
        assert!(failed.is_err());
        assert!(conn.is_autocommit(), "ended after an error");
        // And the connection reads again.
        assert_eq!(
            in_transaction(&conn, |c| c
                .query_row("SELECT 40 + 2", [], |r| r.get::<_, i64>(0)))
            .unwrap(),
            42
        );
    }
}
