//! Writing a declared record: the column list and the binds come from its field declarations
//! (`records::field`), so a new field is stored by declaring it.

use sqlx::SqliteConnection;

use crate::records::Checked;
use crate::records::field::{Record, Value};

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
    let sets: Vec<String> = crate::records::field::columns::<R>()
        .map(|c| format!("{c} = ?"))
        .collect();
    let sql = format!(
        "UPDATE {table} SET {}, updated_at = strftime('%Y-%m-%dT%H:%M:%SZ', 'now') WHERE id = ?",
        sets.join(", ")
    );
    let done = bind_fields(sqlx::query(sqlx::AssertSqlSafe(sql)), &**r)
        .bind(id)
        .execute(conn)
        .await?;
    Ok(done.rows_affected() == 1)
}
