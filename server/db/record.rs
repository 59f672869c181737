//! Writing a declared record: the column list and the binds come from its field declarations
//! (`records::field`), so a new field is stored by declaring it; and [`Stored`], the one way
//! every record is read by id, inserted under its parent and updated.

use std::future::Future;

use sqlx::SqliteConnection;

use super::customers::Customer;
use super::export::Cell;
use crate::records::Checked;
use crate::records::bench::BenchInput;
use crate::records::build::BuildInput;
use crate::records::car::CarInput;
use crate::records::customer::CustomerInput;
use crate::records::field::{Field, Record, Value};
use crate::records::height::HeightInput;
use crate::records::pass::PassInput;
use crate::records::setup::SetupInput;
use crate::records::stored::{BenchTest, Build, Car, Height, Pass, Setup};

/// A stored record as the API and the form pages reach it: read by id, hung on its parent
/// (0 for a customer, which hangs on nothing), inserted under it and updated in place.
pub trait Stored: Send + Sized + 'static {
    /// The record as it is checked and written (storage units).
    type Input: Record + Send + Sync;

    /// The live record `id`, if there is one.
    fn by_id(
        conn: &mut SqliteConnection,
        id: i64,
    ) -> impl Future<Output = sqlx::Result<Option<Self>>> + Send;

    /// The id of the record this one hangs on.
    fn parent_of(&self) -> i64;

    /// Stores a checked new record under `parent` by `user_id`; its id.
    fn insert(
        conn: &mut SqliteConnection,
        parent: i64,
        user_id: i64,
        input: &Checked<Self::Input>,
    ) -> impl Future<Output = sqlx::Result<i64>> + Send;

    /// Stores a checked edit of record `id`.
    fn update(
        conn: &mut SqliteConnection,
        id: i64,
        input: &Checked<Self::Input>,
    ) -> impl Future<Output = sqlx::Result<bool>> + Send;
}

type Query<'q> = sqlx::query::Query<'q, sqlx::Sqlite, sqlx::sqlite::SqliteArguments>;

/// Binds every declared field of `r`, in declaration order.
fn bind_fields<'q, R: Record>(mut q: Query<'q>, r: &'q R) -> Query<'q> {
    for f in R::FIELDS {
        q = match &f.value {
            Value::Text { get, .. } | Value::Date { get, .. } | Value::Choice { get, .. } => {
                q.bind(get(r))
            }
            Value::Number { get, .. } => q.bind(get(r)),
            Value::Whole { get, .. } => q.bind(get(r)),
            Value::List { get, .. } => q.bind(sqlx::types::Json(get(r))),
            Value::Curve { get, .. } => q.bind(sqlx::types::Json(get(r))),
            Value::Flag { get, .. } => q.bind(get(r)),
        };
    }
    q
}

/// Sets field `f` of `r` from its stored cell, as [`bind_fields`] stores it: text as text,
/// numbers as reals (NULL when empty), whole numbers as integers, lists and torque curves as
/// JSON text, flags as 0 or 1. Else what the column should have held, in words. The cell is
/// taken, so its text moves into the record uncopied.
pub fn set_stored<R: Record>(r: &mut R, f: &Field<R>, cell: Cell) -> Result<(), &'static str> {
    match (&f.value, cell) {
        (
            Value::Text { set, .. } | Value::Date { set, .. } | Value::Choice { set, .. },
            Cell::Text(v),
        ) => set(r, v),
        (Value::Text { .. } | Value::Date { .. } | Value::Choice { .. }, _) => {
            return Err("text");
        }
        (Value::Number { set, .. }, Cell::Null) => set(r, None),
        (Value::Number { set, .. }, Cell::Integer(v)) => set(r, Some(v as f64)),
        (Value::Number { set, .. }, Cell::Real(v)) => set(r, Some(v)),
        (Value::Number { .. }, _) => return Err("a number"),
        (Value::Whole { set, .. }, Cell::Integer(v)) => set(r, v),
        (Value::Whole { .. }, _) => return Err("a whole number"),
        (Value::List { set, .. }, Cell::Text(v)) => match serde_json::from_str(&v) {
            Ok(items) => set(r, items),
            Err(_) => return Err("a JSON list of numbers"),
        },
        (Value::List { .. }, _) => return Err("a JSON list of numbers"),
        (Value::Curve { set, .. }, Cell::Text(v)) => match serde_json::from_str(&v) {
            Ok(points) => set(r, points),
            Err(_) => return Err("a JSON list of [rpm, N*m] pairs"),
        },
        (Value::Curve { .. }, _) => return Err("a JSON list of [rpm, N*m] pairs"),
        (Value::Flag { set, .. }, Cell::Integer(v @ (0 | 1))) => set(r, v == 1),
        (Value::Flag { .. }, _) => return Err("0 or 1"),
    }
    Ok(())
}

/// Inserts `r` into `table` with its owning ids (`build_id`, `user_id`, ...); the new row's id.
pub async fn insert<R: Record>(
    conn: &mut SqliteConnection,
    table: &'static str,
    owners: &[(&'static str, i64)],
    r: &Checked<R>,
) -> sqlx::Result<i64> {
    let columns: Vec<&str> = crate::records::field::columns::<R>()
        .chain(owners.iter().map(|(c, _)| *c))
        .collect();
    let sql = format!(
        "INSERT INTO {table} ({}) VALUES ({}) RETURNING id",
        columns.join(", "),
        vec!["?"; columns.len()].join(", ")
    );
    let mut q = bind_fields(sqlx::query(sqlx::AssertSqlSafe(sql)), &**r);
    for (_, id) in owners {
        q = q.bind(id);
    }
    let row = q.fetch_one(conn).await?;
    sqlx::Row::try_get(&row, 0)
}

/// Updates the row `id` of `table` to `r`; false when there is no such row.
pub async fn update<R: Record>(
    conn: &mut SqliteConnection,
    table: &'static str,
    id: i64,
    r: &Checked<R>,
) -> sqlx::Result<bool> {
    let columns: Vec<&str> = crate::records::field::columns::<R>().collect();
    let sets: Vec<String> = columns.iter().map(|c| format!("{c} = ?")).collect();
    // The stamp moves only when a value does: a form saved as it was shown changes nothing.
    // (The CASE reads the row as it was before this UPDATE, as every SET expression does.)
    let changed: Vec<String> = columns.iter().map(|c| format!("{c} IS NOT ?")).collect();
    let sql = format!(
        "UPDATE {table} SET {}, updated_at = CASE WHEN {} THEN strftime('%Y-%m-%dT%H:%M:%SZ', 'now')
         ELSE updated_at END WHERE id = ?",
        sets.join(", "),
        changed.join(" OR ")
    );
    let q = bind_fields(sqlx::query(sqlx::AssertSqlSafe(sql)), &**r);
    let done = bind_fields(q, &**r).bind(id).execute(conn).await?;
    Ok(done.rows_affected() == 1)
}

/// The records of a build kept in `table` (which has `build_id` and the build's live-customer
/// join): their rows read by id, paged and counted (they are inserted through [`Stored`]).
pub struct BuildTable<T> {
    pub table: &'static str,
    /// ORDER BY terms for the newest first.
    pub newest_first: &'static str,
    /// What a row reads as.
    row: std::marker::PhantomData<fn() -> T>,
}

impl<T> BuildTable<T>
where
    T: for<'r> sqlx::FromRow<'r, sqlx::sqlite::SqliteRow> + Send + Unpin,
{
    /// The records kept in `table`, newest first by `newest_first` (ORDER BY terms).
    pub const fn new(table: &'static str, newest_first: &'static str) -> Self {
        Self {
            table,
            newest_first,
            row: std::marker::PhantomData,
        }
    }

    /// Record `id`, when its build's customer is live.
    pub async fn by_id(&self, conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<T>> {
        let sql = format!(
            "SELECT x.* FROM {} x JOIN builds b ON b.id = x.build_id
             JOIN cars k ON k.id = b.car_id JOIN customers c ON c.id = k.customer_id
             WHERE x.id = ? AND c.deleted_at IS NULL",
            self.table
        );
        sqlx::query_as(sqlx::AssertSqlSafe(sql))
            .bind(id)
            .fetch_optional(conn)
            .await
    }

    /// `limit` of the build's records, newest first, skipping the `offset` newest.
    pub async fn page(
        &self,
        conn: &mut SqliteConnection,
        build_id: i64,
        offset: i64,
        limit: i64,
    ) -> sqlx::Result<Vec<T>> {
        let sql = format!(
            "SELECT * FROM {} WHERE build_id = ? ORDER BY {} LIMIT ? OFFSET ?",
            self.table, self.newest_first
        );
        sqlx::query_as(sqlx::AssertSqlSafe(sql))
            .bind(build_id)
            .bind(limit)
            .bind(offset)
            .fetch_all(conn)
            .await
    }

    /// How many records the build has.
    pub async fn count(&self, conn: &mut SqliteConnection, build_id: i64) -> sqlx::Result<i64> {
        let sql = format!("SELECT COUNT(*) FROM {} WHERE build_id = ?", self.table);
        sqlx::query_scalar(sqlx::AssertSqlSafe(sql))
            .bind(build_id)
            .fetch_one(conn)
            .await
    }
}

/// The [`Stored`] of a record kept in `$table` and read by its db module's `by_id`, hanging on
/// the record whose id is in its field `$parent` (a column of the same name); `by_user` when
/// the table keeps who made each row.
macro_rules! stored {
    ($row:ty, $input:ty, $module:ident, $table:literal, $parent:ident $(, $by_user:ident)?) => {
        impl Stored for $row {
            type Input = $input;
            async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Self>> {
                super::$module::by_id(conn, id).await
            }
            fn parent_of(&self) -> i64 {
                self.$parent
            }
            async fn insert(
                conn: &mut SqliteConnection,
                parent: i64,
                user_id: i64,
                input: &Checked<$input>,
            ) -> sqlx::Result<i64> {
                let _ = user_id;
                let links = [(stringify!($parent), parent) $(, stored!(@$by_user user_id))?];
                insert(conn, $table, &links, input).await
            }
            async fn update(
                conn: &mut SqliteConnection,
                id: i64,
                input: &Checked<$input>,
            ) -> sqlx::Result<bool> {
                update(conn, $table, id, input).await
            }
        }
    };
    (@by_user $user_id:ident) => { ("user_id", $user_id) };
}

stored!(Car, CarInput, cars, "cars", customer_id);
stored!(Build, BuildInput, builds, "builds", car_id);
stored!(
    Setup,
    SetupInput,
    setups,
    "setup_changes",
    build_id,
    by_user
);
stored!(Pass, PassInput, passes, "passes", build_id, by_user);
stored!(
    Height,
    HeightInput,
    heights,
    "cover_heights",
    build_id,
    by_user
);

/// A customer hangs on nothing.
impl Stored for Customer {
    type Input = CustomerInput;
    async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Self>> {
        super::customers::by_id(conn, id).await
    }
    fn parent_of(&self) -> i64 {
        0
    }
    async fn insert(
        conn: &mut SqliteConnection,
        _: i64,
        _: i64,
        input: &Checked<CustomerInput>,
    ) -> sqlx::Result<i64> {
        insert(conn, "customers", &[], input).await
    }
    async fn update(
        conn: &mut SqliteConnection,
        id: i64,
        input: &Checked<CustomerInput>,
    ) -> sqlx::Result<bool> {
        update(conn, "customers", id, input).await
    }
}

/// A bench test's springs are rows of a table of their own (`db::bench`).
impl Stored for BenchTest {
    type Input = BenchInput;
    async fn by_id(conn: &mut SqliteConnection, id: i64) -> sqlx::Result<Option<Self>> {
        super::bench::by_id(conn, id).await
    }
    fn parent_of(&self) -> i64 {
        self.build_id
    }
    async fn insert(
        conn: &mut SqliteConnection,
        parent: i64,
        user_id: i64,
        input: &Checked<BenchInput>,
    ) -> sqlx::Result<i64> {
        super::bench::insert(conn, parent, user_id, input).await
    }
    async fn update(
        conn: &mut SqliteConnection,
        id: i64,
        input: &Checked<BenchInput>,
    ) -> sqlx::Result<bool> {
        super::bench::update(conn, id, input).await
    }
}
