//! The whole shop as data: every table's rows with their stored types (integer, real, text,
//! null), written as one JSON document or one RFC 4180 CSV file per table, and the way back,
//! loading such a document into an empty database with every id kept.
//!
//! Tables are found in `sqlite_master`, never listed here, so a table added by a later migration
//! is exported and imported without a change to this file; foreign keys (`PRAGMA
//! foreign_key_list`) decide the order. Only migration bookkeeping and short-lived sign-in state
//! are left out ([`SKIPPED`]).
//!
//! An import admits only what an export writes and what keeps the shop working: no skipped
//! table, the singleton rows the migrations seed (the shop settings, the audit actor), every
//! cell of its column's stored type, and every row of a record table passing its record's
//! checks (`check`). A refusal names the table, row and column; nothing is written before.
//!
//! An export holds everything needed to rebuild the shop, staff password hashes and API token
//! hashes included: it must be kept as private as the database file.

use std::collections::{BTreeMap, BTreeSet, HashMap};
use std::fmt::Write as _;
use std::str::FromStr;

use serde::ser::{SerializeMap, SerializeSeq};
use serde::{Deserialize, Serialize, Serializer};
use serde_json::value::RawValue;
use sqlx::sqlite::{SqliteConnectOptions, SqliteRow};
use sqlx::{AssertSqlSafe, Connection, Row, SqliteConnection, TypeInfo, ValueRef};

use super::MIGRATOR;

mod check;

/// The `format` field of every export document.
pub const FORMAT: &str = "lockpoint-export";

/// The JSON document's file name inside an export directory.
pub const JSON_FILE: &str = "lockpoint-export.json";

/// Tables never exported: the migration history (the target database has its own) and sign-in
/// state that means nothing on another server (sessions, failed sign-ins: `login_failures` up to
/// migration 5, `login_throttle` since).
pub const SKIPPED: &[&str] = &[
    "_sqlx_migrations",
    "sessions",
    "login_failures",
    "login_throttle",
    // derived from the records; the import works it out again
    "build_status",
];

/// One stored value, with SQLite's own storage class.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    Null,
    Integer(i64),
    Real(f64),
    Text(String),
    Blob(Vec<u8>),
}

/// One table: its columns in declared order and its rows in primary-key order.
#[derive(Debug, Clone, PartialEq)]
pub struct Table {
    pub name: String,
    pub columns: Vec<String>,
    pub rows: Vec<Vec<Cell>>,
}

/// Every exported table, parents before the tables that refer to them.
#[derive(Debug, Clone, PartialEq)]
pub struct Export {
    /// The newest migration applied to the database the rows came from.
    pub version: i64,
    pub tables: Vec<Table>,
}

#[derive(Debug, thiserror::Error)]
pub enum ExportError {
    /// The operation is not allowed as asked (a non-empty database, a newer export...).
    #[error("{0}")]
    Refused(String),
    /// The document is not a Lockpoint export, or is damaged.
    #[error("not a Lockpoint export: {0}")]
    Format(String),
    #[error(transparent)]
    Sql(#[from] sqlx::Error),
}

/// What an import loaded.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Imported {
    pub tables: usize,
    pub rows: usize,
}

/// The newest migration this program knows.
pub fn latest_known_version() -> i64 {
    super::latest_migration()
}

/// A name quoted as an SQL identifier.
pub fn ident(name: &str) -> String {
    format!("\"{}\"", name.replace('"', "\"\""))
}

/// Every ordinary table of the database, by name (no SQLite internals, virtual tables or their
/// shadow tables).
pub async fn tables(conn: &mut SqliteConnection) -> sqlx::Result<Vec<String>> {
    sqlx::query_scalar(
        "SELECT name FROM sqlite_master
         WHERE type = 'table' AND name NOT LIKE 'sqlite\\_%' ESCAPE '\\'
           AND sql NOT LIKE 'CREATE VIRTUAL TABLE%'
           AND name NOT IN (SELECT name FROM pragma_table_list
                            WHERE schema = 'main' AND type IN ('shadow', 'virtual'))
         ORDER BY name",
    )
    .fetch_all(conn)
    .await
}

/// The newest migration applied to the database (0 when none).
pub async fn applied_version(conn: &mut SqliteConnection) -> sqlx::Result<i64> {
    sqlx::query_scalar("SELECT COALESCE(MAX(version), 0) FROM _sqlx_migrations WHERE success")
        .fetch_one(conn)
        .await
}

/// A table's columns in declared order (generated and hidden columns left out).
async fn columns(conn: &mut SqliteConnection, table: &str) -> sqlx::Result<Vec<String>> {
    sqlx::query_scalar("SELECT name FROM pragma_table_info(?) ORDER BY cid")
        .bind(table)
        .fetch_all(conn)
        .await
}

/// A table's columns with their declared types, in declared order.
async fn declared_types(
    conn: &mut SqliteConnection,
    table: &str,
) -> sqlx::Result<Vec<(String, String)>> {
    sqlx::query_as("SELECT name, type FROM pragma_table_info(?) ORDER BY cid")
        .bind(table)
        .fetch_all(conn)
        .await
}

/// A table's primary-key columns in key order (empty for a plain rowid table).
async fn primary_key(conn: &mut SqliteConnection, table: &str) -> sqlx::Result<Vec<String>> {
    sqlx::query_scalar("SELECT name FROM pragma_table_info(?) WHERE pk > 0 ORDER BY pk")
        .bind(table)
        .fetch_all(conn)
        .await
}

async fn count(conn: &mut SqliteConnection, table: &str) -> sqlx::Result<i64> {
    sqlx::query_scalar(AssertSqlSafe(format!(
        "SELECT COUNT(*) FROM {}",
        ident(table)
    )))
    .fetch_one(conn)
    .await
}

/// Orders tables so that every table comes after the tables its foreign keys refer to; ties
/// (and the members of a reference cycle, which only deferred checks can load) go by name.
pub async fn in_dependency_order(
    conn: &mut SqliteConnection,
    names: &[String],
) -> sqlx::Result<Vec<String>> {
    let known: BTreeMap<String, String> = names
        .iter()
        .map(|n| (n.to_lowercase(), n.clone()))
        .collect();
    let mut parents: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    for name in names {
        let refs: Vec<String> =
            sqlx::query_scalar("SELECT DISTINCT \"table\" FROM pragma_foreign_key_list(?)")
                .bind(name)
                .fetch_all(&mut *conn)
                .await?;
        let refs = refs
            .iter()
            .filter_map(|r| known.get(&r.to_lowercase()))
            .filter(|r| *r != name)
            .cloned()
            .collect();
        parents.insert(name.clone(), refs);
    }
    let mut placed: Vec<String> = Vec::with_capacity(names.len());
    while !parents.is_empty() {
        let ready = parents
            .iter()
            .find(|(_, ps)| ps.iter().all(|p| placed.contains(p)))
            .map(|(name, _)| name.clone());
        let next = match ready {
            Some(name) => name,
            None => parents.keys().next().cloned().unwrap_or_default(),
        };
        parents.remove(&next);
        placed.push(next);
    }
    Ok(placed)
}

fn cell(row: &SqliteRow, i: usize) -> sqlx::Result<Cell> {
    let raw = row.try_get_raw(i)?;
    if raw.is_null() {
        return Ok(Cell::Null);
    }
    // For a value that is not NULL this is its storage class, whatever the column declares.
    let class = raw.type_info().name().to_string();
    Ok(match class.as_str() {
        "INTEGER" => Cell::Integer(row.try_get(i)?),
        "REAL" => Cell::Real(row.try_get(i)?),
        "BLOB" => Cell::Blob(row.try_get(i)?),
        _ => Cell::Text(row.try_get(i)?),
    })
}

/// Reads every exported table. Run it inside one transaction so the tables agree with each
/// other (in WAL mode a read transaction sees one snapshot while writers carry on).
pub async fn read(conn: &mut SqliteConnection) -> Result<Export, ExportError> {
    let version = applied_version(conn).await?;
    let names: Vec<String> = tables(conn)
        .await?
        .into_iter()
        .filter(|t| !SKIPPED.contains(&t.as_str()))
        .collect();
    let mut out = Vec::with_capacity(names.len());
    for name in in_dependency_order(conn, &names).await? {
        let columns = columns(conn, &name).await?;
        let key = primary_key(conn, &name).await?;
        let order = if key.is_empty() {
            "rowid".to_string()
        } else {
            key.iter().map(|k| ident(k)).collect::<Vec<_>>().join(", ")
        };
        let sql = format!(
            "SELECT {} FROM {} ORDER BY {order}",
            columns
                .iter()
                .map(|c| ident(c))
                .collect::<Vec<_>>()
                .join(", "),
            ident(&name)
        );
        let rows = sqlx::query(AssertSqlSafe(sql))
            .fetch_all(&mut *conn)
            .await?
            .iter()
            .map(|row| (0..columns.len()).map(|i| cell(row, i)).collect())
            .collect::<sqlx::Result<Vec<Vec<Cell>>>>()?;
        out.push(Table {
            name,
            columns,
            rows,
        });
    }
    Ok(Export {
        version,
        tables: out,
    })
}

/// A database in memory with the migrations up to `version` applied.
async fn migrated_in_memory(version: i64) -> sqlx::Result<SqliteConnection> {
    let options = SqliteConnectOptions::from_str("sqlite::memory:")?.foreign_keys(true);
    let mut mem = SqliteConnection::connect_with(&options).await?;
    for migration in MIGRATOR.iter().filter(|m| m.version <= version) {
        sqlx::raw_sql(migration.sql.clone())
            .execute(&mut mem)
            .await?;
    }
    Ok(mem)
}

/// How many rows each table holds before anyone has used the database: the rows the
/// migrations themselves insert (the one shop settings row, for example), found by running them
/// on a database in memory.
async fn seeded_counts() -> sqlx::Result<HashMap<String, i64>> {
    let mut mem = migrated_in_memory(i64::MAX).await?;
    let mut counts = HashMap::new();
    for table in tables(&mut mem).await? {
        let n = count(&mut mem, &table).await?;
        counts.insert(table, n);
    }
    mem.close().await?;
    Ok(counts)
}

/// Tables holding more rows than a freshly migrated database, with their row counts: empty
/// when nothing has been recorded yet.
pub async fn records_present(conn: &mut SqliteConnection) -> sqlx::Result<Vec<(String, i64)>> {
    let seeded = seeded_counts().await?;
    let mut present = Vec::new();
    for table in tables(conn).await? {
        if table == "_sqlx_migrations" {
            continue;
        }
        let n = count(conn, &table).await?;
        if n > seeded.get(&table).copied().unwrap_or(0) {
            present.push((table, n));
        }
    }
    Ok(present)
}

/// The ids of the rows the migrations up to `version` insert, by table: the shop's singleton
/// rows (the shop settings, the audit actor), which the shop cannot work without and which
/// every export made at that version holds.
async fn seeded_ids(version: i64) -> sqlx::Result<BTreeMap<String, Vec<i64>>> {
    let mut mem = migrated_in_memory(version).await?;
    let mut seeded = BTreeMap::new();
    for table in tables(&mut mem).await? {
        if table == "_sqlx_migrations" || count(&mut mem, &table).await? == 0 {
            continue;
        }
        let ids: Vec<i64> = sqlx::query_scalar(AssertSqlSafe(format!(
            "SELECT id FROM {} ORDER BY id",
            ident(&table)
        )))
        .fetch_all(&mut mem)
        .await?;
        seeded.insert(table, ids);
    }
    mem.close().await?;
    Ok(seeded)
}

/// Refuses a document without the singleton rows its version holds, or with other rows than
/// those in a singleton table (an empty `shop_settings` would leave every page failing).
async fn check_singletons(
    export: &Export,
    by_name: &BTreeMap<String, &Table>,
) -> Result<(), ExportError> {
    let at_version = seeded_ids(export.version).await?;
    for (name, ids) in seeded_ids(latest_known_version()).await? {
        let list = ids
            .iter()
            .map(i64::to_string)
            .collect::<Vec<_>>()
            .join(", ");
        let rows = if ids.len() == 1 { "row" } else { "rows" };
        let Some(table) = by_name.get(&name) else {
            if at_version.contains_key(&name) {
                return Err(ExportError::Refused(format!(
                    "the export has no table {name:?}: every export holds its {rows} with id \
                     {list}"
                )));
            }
            continue;
        };
        let id = table.columns.iter().position(|c| c == "id");
        let found: Vec<Option<i64>> = table
            .rows
            .iter()
            .map(|row| match id.map(|i| &row[i]) {
                Some(Cell::Integer(v)) => Some(*v),
                _ => None,
            })
            .collect();
        if found.len() != ids.len() || found.iter().zip(&ids).any(|(f, i)| *f != Some(*i)) {
            return Err(ExportError::Refused(format!(
                "table {name:?} must hold exactly {} {rows} with id {list} (the shop cannot \
                 work without it); the export's table holds {}",
                ids.len(),
                match found.len() {
                    0 => "none".to_string(),
                    1 => "1 row".to_string(),
                    n => format!("{n} rows"),
                }
            )));
        }
    }
    Ok(())
}

/// Loads an export into an empty database, every row with its id, parents first. Run it inside
/// one `BEGIN IMMEDIATE` transaction and commit only when it returns `Ok`.
///
/// The rows the migrations seeded (such as the shop settings row) are replaced by the export's.
/// Triggers are set aside while loading, so audit triggers do not record the load as new edits
/// (the export carries the audit history itself), and put back unchanged before returning.
/// Foreign keys are checked once everything is in. Everything else the import refuses (see the
/// module's documentation) is found before the first row is written.
pub async fn import(conn: &mut SqliteConnection, export: &Export) -> Result<Imported, ExportError> {
    let latest = latest_known_version();
    if export.version > latest {
        return Err(ExportError::Refused(format!(
            "the export comes from a newer Lockpoint (database migration {}); this program knows \
             migrations up to {latest}: upgrade Lockpoint first",
            export.version
        )));
    }
    let present = records_present(conn).await?;
    if !present.is_empty() {
        let list = present
            .iter()
            .map(|(t, n)| format!("{t}: {n}"))
            .collect::<Vec<_>>()
            .join(", ");
        return Err(ExportError::Refused(format!(
            "the database already holds records ({list}); import only into a new, empty \
             database (give a new file with --db)"
        )));
    }
    // Names are matched exactly, as an export writes them: the record checks below go by name.
    let existing = tables(conn).await?;
    let mut by_name: BTreeMap<String, &Table> = BTreeMap::new();
    for table in &export.tables {
        if SKIPPED.iter().any(|s| s.eq_ignore_ascii_case(&table.name)) {
            return Err(ExportError::Refused(format!(
                "the export has a table {:?}, which an export never holds (migration history and \
                 sign-in state belong to the database they were made in)",
                table.name
            )));
        }
        let Some(target) = existing.iter().find(|t| **t == table.name) else {
            return Err(ExportError::Refused(format!(
                "the export has a table {:?} that this database does not have",
                table.name
            )));
        };
        let target_columns = declared_types(conn, target).await?;
        if let Some(c) = table
            .columns
            .iter()
            .find(|c| !target_columns.iter().any(|(t, _)| t == *c))
        {
            return Err(ExportError::Refused(format!(
                "the export's table {:?} has a column {c:?} that this database does not have",
                table.name
            )));
        }
        if by_name.insert(target.clone(), table).is_some() {
            return Err(ExportError::Format(format!(
                "table {:?} appears twice",
                table.name
            )));
        }
        check::stored_types(table, &target_columns)?;
    }
    check_singletons(export, &by_name).await?;
    check::records(export, &check::import_ctx(export))?;
    let seeded = seeded_counts().await?;

    let triggers: Vec<(String, String)> = sqlx::query_as(
        "SELECT name, sql FROM sqlite_master WHERE type = 'trigger' AND sql IS NOT NULL
         ORDER BY name",
    )
    .fetch_all(&mut *conn)
    .await?;
    for (name, _) in &triggers {
        sqlx::query(AssertSqlSafe(format!("DROP TRIGGER {}", ident(name))))
            .execute(&mut *conn)
            .await?;
    }
    // Checked at commit, and by foreign_key_check below: rows may refer forward (a cycle, or a
    // table that refers to itself).
    sqlx::query("PRAGMA defer_foreign_keys = ON")
        .execute(&mut *conn)
        .await?;

    let names: Vec<String> = by_name.keys().cloned().collect();
    let mut rows = 0;
    for name in in_dependency_order(conn, &names).await? {
        let table = by_name[&name];
        if seeded.get(&name).copied().unwrap_or(0) > 0 {
            sqlx::query(AssertSqlSafe(format!("DELETE FROM {}", ident(&name))))
                .execute(&mut *conn)
                .await?;
        }
        if table.rows.is_empty() {
            continue;
        }
        let sql = format!(
            "INSERT INTO {} ({}) VALUES ({})",
            ident(&name),
            table
                .columns
                .iter()
                .map(|c| ident(c))
                .collect::<Vec<_>>()
                .join(", "),
            vec!["?"; table.columns.len()].join(", ")
        );
        for (n, row) in table.rows.iter().enumerate() {
            let mut query = sqlx::query(AssertSqlSafe(sql.clone()));
            for value in row {
                query = match value {
                    Cell::Null => query.bind(None::<i64>),
                    Cell::Integer(v) => query.bind(*v),
                    Cell::Real(v) => query.bind(*v),
                    Cell::Text(v) => query.bind(v.clone()),
                    Cell::Blob(v) => query.bind(v.clone()),
                };
            }
            // A refused row (a constraint such as NOT NULL or UNIQUE) is named by its place.
            query.execute(&mut *conn).await.map_err(|e| match e {
                sqlx::Error::Database(db) => {
                    ExportError::Refused(format!("{}: {}", check::place(table, n), db.message()))
                }
                other => ExportError::Sql(other),
            })?;
            rows += 1;
        }
    }

    let broken: Vec<SqliteRow> = sqlx::query("PRAGMA foreign_key_check")
        .fetch_all(&mut *conn)
        .await?;
    if let Some(first) = broken.first() {
        let table: String = first.try_get(0)?;
        return Err(ExportError::Refused(format!(
            "{} row(s) refer to records missing from the export (first in table {table:?})",
            broken.len()
        )));
    }
    for (_, sql) in &triggers {
        sqlx::raw_sql(AssertSqlSafe(sql.clone()))
            .execute(&mut *conn)
            .await?;
    }
    Ok(Imported {
        tables: by_name.len(),
        rows,
    })
}

// ---- JSON ----

impl Export {
    /// The JSON document: `{"format", "version", "tables": {"<table>": [{column: value}]}}`,
    /// tables parents first, columns in declared order. Reals are written in the shortest form
    /// that reads back to the same number; a real that is not finite and a blob are written as
    /// `{"$real": "inf"}` and `{"$blob": "<hex>"}`.
    pub fn to_json(&self) -> String {
        let mut text = serde_json::to_string_pretty(&JsonDoc(self))
            .expect("an export is plain data and always serializes");
        text.push('\n');
        text
    }

    /// Reads a document written by [`Export::to_json`].
    pub fn from_json(text: &str) -> Result<Self, ExportError> {
        let doc: JsonIn<'_> =
            serde_json::from_str(text).map_err(|e| ExportError::Format(e.to_string()))?;
        if doc.format != FORMAT {
            return Err(ExportError::Format(format!(
                "its format is {:?}, expected {FORMAT:?}",
                doc.format
            )));
        }
        let mut tables = Vec::with_capacity(doc.tables.len());
        for (name, raw_rows) in doc.tables {
            let columns: Vec<String> = raw_rows
                .first()
                .map(|r| r.keys().cloned().collect())
                .unwrap_or_default();
            let mut rows = Vec::with_capacity(raw_rows.len());
            for (n, raw) in raw_rows.iter().enumerate() {
                if raw.len() != columns.len() || !columns.iter().all(|c| raw.contains_key(c)) {
                    return Err(ExportError::Format(format!(
                        "row {} of table {name:?} has other columns than its first row",
                        n + 1
                    )));
                }
                let row = raw
                    .iter()
                    .map(|(column, value)| {
                        cell_from_json(value).map_err(|why| {
                            ExportError::Format(format!(
                                "table {name:?}, row {}, column {column:?}: {why}",
                                n + 1
                            ))
                        })
                    })
                    .collect::<Result<Vec<_>, _>>()?;
                rows.push(row);
            }
            tables.push(Table {
                name,
                columns,
                rows,
            });
        }
        Ok(Self {
            version: doc.version,
            tables,
        })
    }

    /// The number of rows in all tables.
    pub fn row_count(&self) -> usize {
        self.tables.iter().map(|t| t.rows.len()).sum()
    }
}

#[derive(Deserialize)]
struct JsonIn<'a> {
    format: String,
    version: i64,
    #[serde(borrow)]
    tables: BTreeMap<String, Vec<BTreeMap<String, &'a RawValue>>>,
}

/// A value read from its JSON text, so a real is parsed by the standard library (correctly
/// rounded) and an integer never passes through a float.
fn cell_from_json(value: &RawValue) -> Result<Cell, String> {
    let text = value.get().trim();
    match text.as_bytes().first() {
        Some(b'n') if text == "null" => Ok(Cell::Null),
        Some(b'"') => serde_json::from_str(text)
            .map(Cell::Text)
            .map_err(|e| e.to_string()),
        Some(b'-' | b'0'..=b'9') if text.contains(['.', 'e', 'E']) => text
            .parse::<f64>()
            .map(Cell::Real)
            .map_err(|e| format!("{text}: {e}")),
        Some(b'-' | b'0'..=b'9') => text
            .parse::<i64>()
            .map(Cell::Integer)
            .map_err(|e| format!("{text}: {e}")),
        Some(b'{') => {
            let tagged: BTreeMap<String, String> =
                serde_json::from_str(text).map_err(|e| e.to_string())?;
            match (tagged.get("$real"), tagged.get("$blob"), tagged.len()) {
                (Some(r), None, 1) if r == "inf" => Ok(Cell::Real(f64::INFINITY)),
                (Some(r), None, 1) if r == "-inf" => Ok(Cell::Real(f64::NEG_INFINITY)),
                (None, Some(hex), 1) => from_hex(hex).map(Cell::Blob),
                _ => Err(format!("unexpected object {text}")),
            }
        }
        _ => Err(format!(
            "expected null, a number or text, found {}",
            text.chars().take(40).collect::<String>()
        )),
    }
}

fn to_hex(bytes: &[u8]) -> String {
    let mut out = String::with_capacity(bytes.len() * 2);
    for b in bytes {
        let _ = write!(out, "{b:02x}");
    }
    out
}

fn from_hex(hex: &str) -> Result<Vec<u8>, String> {
    if !hex.len().is_multiple_of(2) || !hex.bytes().all(|b| b.is_ascii_hexdigit()) {
        return Err("a blob must be written as pairs of hex digits".into());
    }
    (0..hex.len())
        .step_by(2)
        .map(|i| u8::from_str_radix(&hex[i..i + 2], 16).map_err(|e| e.to_string()))
        .collect()
}

struct JsonDoc<'a>(&'a Export);
struct JsonTables<'a>(&'a [Table]);
struct JsonRows<'a>(&'a Table);
struct JsonRow<'a>(&'a [String], &'a [Cell]);

impl Serialize for JsonDoc<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut map = s.serialize_map(Some(3))?;
        map.serialize_entry("format", FORMAT)?;
        map.serialize_entry("version", &self.0.version)?;
        map.serialize_entry("tables", &JsonTables(&self.0.tables))?;
        map.end()
    }
}

impl Serialize for JsonTables<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut map = s.serialize_map(Some(self.0.len()))?;
        for table in self.0 {
            map.serialize_entry(&table.name, &JsonRows(table))?;
        }
        map.end()
    }
}

impl Serialize for JsonRows<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut seq = s.serialize_seq(Some(self.0.rows.len()))?;
        for row in &self.0.rows {
            seq.serialize_element(&JsonRow(&self.0.columns, row))?;
        }
        seq.end()
    }
}

impl Serialize for JsonRow<'_> {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        let mut map = s.serialize_map(Some(self.0.len()))?;
        for (column, value) in self.0.iter().zip(self.1) {
            map.serialize_entry(column, value)?;
        }
        map.end()
    }
}

impl Serialize for Cell {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        match self {
            Self::Null => s.serialize_unit(),
            Self::Integer(v) => s.serialize_i64(*v),
            Self::Real(v) if v.is_finite() => s.serialize_f64(*v),
            Self::Real(v) => {
                let mut map = s.serialize_map(Some(1))?;
                map.serialize_entry("$real", if *v > 0.0 { "inf" } else { "-inf" })?;
                map.end()
            }
            Self::Text(v) => s.serialize_str(v),
            Self::Blob(v) => {
                let mut map = s.serialize_map(Some(1))?;
                map.serialize_entry("$blob", &to_hex(v))?;
                map.end()
            }
        }
    }
}

// ---- CSV ----

/// A file name for a table's CSV: the table name with anything but letters, digits, `_` and `-`
/// replaced, and `.csv`.
pub fn csv_file_name(table: &str) -> String {
    let stem: String = table
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '_' || c == '-' {
                c
            } else {
                '_'
            }
        })
        .collect();
    format!("{stem}.csv")
}

/// One table as RFC 4180 CSV: a header row of column names, then one record per row, each line
/// ended by CRLF. A field holding a comma, a double quote, CR or LF is enclosed in double quotes
/// and its quotes doubled. NULL is an empty field; a real is written in its shortest exact form;
/// a blob in hex. (CSV cannot tell NULL from empty text: the JSON document is the exact copy.)
///
/// A text cell that a spreadsheet would run as a formula (it starts with `=`, `+`, `-`, `@`, a
/// tab or a carriage return) is written with a `'` in front, so opening the file cannot run
/// `=HYPERLINK(...)` or fetch anything: the usual advice for CSV meant for spreadsheets. Numbers
/// are stored as numbers and are never prefixed; the JSON document keeps every text exact.
pub fn to_csv(table: &Table) -> String {
    let mut out = String::new();
    push_record(&mut out, table.columns.iter().map(String::as_str));
    for row in &table.rows {
        let fields: Vec<String> = row.iter().map(csv_text).collect();
        push_record(&mut out, fields.iter().map(String::as_str));
    }
    out
}

fn csv_text(cell: &Cell) -> String {
    match cell {
        Cell::Null => String::new(),
        Cell::Integer(v) => v.to_string(),
        Cell::Real(v) => format!("{v:?}"),
        Cell::Text(v) if v.starts_with(['=', '+', '-', '@', '\t', '\r']) => format!("'{v}"),
        Cell::Text(v) => v.clone(),
        Cell::Blob(v) => to_hex(v),
    }
}

fn push_record<'a>(out: &mut String, fields: impl Iterator<Item = &'a str>) {
    for (i, field) in fields.enumerate() {
        if i > 0 {
            out.push(',');
        }
        if field.contains([',', '"', '\r', '\n']) {
            out.push('"');
            out.push_str(&field.replace('"', "\"\""));
            out.push('"');
        } else {
            out.push_str(field);
        }
    }
    out.push_str("\r\n");
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_quotes_only_the_fields_that_need_it() {
        let table = Table {
            name: "t".into(),
            columns: vec!["id".into(), "note".into(), "x".into()],
            rows: vec![vec![
                Cell::Integer(7),
                Cell::Text("a, \"b\"\r\nc".into()),
                Cell::Real(0.1),
            ]],
        };
        assert_eq!(
            to_csv(&table),
            "id,note,x\r\n7,\"a, \"\"b\"\"\r\nc\",0.1\r\n"
        );
    }

    #[test]
    fn cells_read_back_exactly_from_their_json() {
        let cells = [
            Cell::Null,
            Cell::Integer(i64::MIN),
            Cell::Integer(9_007_199_254_740_993),
            Cell::Real(0.1 + 0.2),
            Cell::Real(5.0),
            Cell::Real(-1.0e-300),
            Cell::Real(f64::MAX),
            Cell::Real(f64::NEG_INFINITY),
            Cell::Text("\"quoted\"\n{x}".into()),
            Cell::Blob(vec![0, 1, 254, 255]),
        ];
        for c in cells {
            let text = serde_json::to_string(&c).unwrap();
            let raw: Box<RawValue> = serde_json::from_str(&text).unwrap();
            assert_eq!(cell_from_json(&raw), Ok(c.clone()), "{text}");
        }
    }
}
