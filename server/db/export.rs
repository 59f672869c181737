//! The whole shop as data: every table's rows with their stored types (integer, real, text,
//! null), written as one JSON document or one RFC 4180 CSV file per table, and the way back,
//! loading such a document into an empty database with every id kept.
//!
//! Both ways stream: an export reads each table's rows with one query (`fetch`, a stream) and
//! writes each row as it comes ([`JsonWriter`], [`CsvWriter`]); an import parses the document
//! from a reader (`serde_json::Deserializer::from_reader`) and inserts the rows in batches as
//! they are parsed. Memory stays the same whatever the size of the shop.
//!
//! Tables are found in `sqlite_master`, never listed here, so a table added by a later migration
//! is exported and imported without a change to this file; foreign keys (`PRAGMA
//! foreign_key_list`) decide the order. Only migration bookkeeping and short-lived sign-in state
//! are left out ([`SKIPPED`]).
//!
//! An import admits only what an export writes and what keeps the shop working: no skipped
//! table, the singleton rows the migrations seed (the shop settings, the audit actor), every
//! cell of its column's stored type, and every row of a record table passing its record's
//! checks (`check`). A refusal names the table, row and column. The document is read twice: a
//! first reading checks its shape and every cell's JSON and keeps the small singleton tables,
//! so those refusals come before anything is written; the second reading checks each row and
//! inserts it. A row refused there stops the import inside its transaction, which the caller
//! rolls back, so nothing is kept.
//!
//! An export holds everything needed to rebuild the shop, staff password hashes and API token
//! hashes included: it must be kept as private as the database file.

use std::collections::{BTreeMap, BTreeSet, HashMap};
use std::fmt::Write as _;
use std::fs::File;
use std::io::{self, BufReader, Read, Write};
use std::path::PathBuf;
use std::str::FromStr;
use std::sync::Arc;

use futures_util::TryStreamExt;
use serde::de::{self, DeserializeSeed, IgnoredAny, MapAccess, SeqAccess, Visitor};
use serde::{Serialize, Serializer};
use serde_json::value::RawValue;
use sqlx::sqlite::{SqliteConnectOptions, SqliteRow};
use sqlx::{AssertSqlSafe, Connection, Row, SqliteConnection, TypeInfo, ValueRef};

use super::MIGRATOR;
use crate::progress::Progress;

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
    "pass_launch_fits",
    "pass_energies",
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
    /// Reading the document or writing a file failed.
    #[error("{0}")]
    Io(#[from] io::Error),
}

/// What an import loaded.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Imported {
    /// The migration the document was written at.
    pub version: i64,
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

// ---- Export: the database's rows, streamed ----

/// One exported table: its columns in declared order and how many rows it holds.
#[derive(Debug, Clone)]
pub struct TablePlan {
    pub name: String,
    pub columns: Vec<String>,
    pub rows: u64,
    /// Its rows in primary-key order (rowid order for a table without one).
    select: String,
}

/// What an export writes: every exported table, parents before the tables that refer to them.
#[derive(Debug, Clone)]
pub struct Plan {
    /// The newest migration applied to the database the rows come from.
    pub version: i64,
    pub tables: Vec<TablePlan>,
}

impl Plan {
    /// The number of rows in all tables.
    pub fn rows(&self) -> u64 {
        self.tables.iter().map(|t| t.rows).sum()
    }
}

/// Finds the tables to export. Run it and [`write`] inside one transaction, so the tables agree
/// with each other (in WAL mode a read transaction sees one snapshot while writers carry on).
pub async fn plan(conn: &mut SqliteConnection) -> sqlx::Result<Plan> {
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
        let select = format!(
            "SELECT {} FROM {} ORDER BY {order}",
            columns
                .iter()
                .map(|c| ident(c))
                .collect::<Vec<_>>()
                .join(", "),
            ident(&name)
        );
        let rows = count(conn, &name).await? as u64;
        out.push(TablePlan {
            name,
            columns,
            rows,
            select,
        });
    }
    Ok(Plan {
        version,
        tables: out,
    })
}

/// Opens the CSV file of the table named.
pub type OpenCsv<'a> = dyn FnMut(&str) -> io::Result<io::BufWriter<File>> + Send + 'a;

/// Streams every table of `plan` into the JSON document `json` and, when `csv` is given, into
/// one CSV file per table (`csv` opens the table's file; each file is flushed to disk once its
/// rows are in). Rows are read one at a time and never collected. Returns the rows written.
pub async fn write<W: Write>(
    conn: &mut SqliteConnection,
    plan: &Plan,
    json: &mut JsonWriter<W>,
    mut csv: Option<&mut OpenCsv<'_>>,
    progress: &mut Progress,
) -> Result<u64, ExportError> {
    let mut total = 0;
    for table in &plan.tables {
        json.table(&table.name)?;
        let mut sheet = match csv.as_mut() {
            Some(open) => Some(CsvWriter::begin(open(&table.name)?, &table.columns)?),
            None => None,
        };
        let mut rows = sqlx::query(AssertSqlSafe(table.select.clone())).fetch(&mut *conn);
        let mut done = 0;
        let mut cells = Vec::with_capacity(table.columns.len());
        while let Some(row) = rows.try_next().await? {
            cells.clear();
            for i in 0..table.columns.len() {
                cells.push(cell(&row, i)?);
            }
            json.row(&table.columns, &cells)?;
            if let Some(sheet) = sheet.as_mut() {
                sheet.row(&cells)?;
            }
            done += 1;
            progress.rows("exporting", &table.name, done, Some(table.rows.max(done)));
        }
        drop(rows);
        json.end_table()?;
        if let Some(sheet) = sheet {
            let file = sheet.finish()?.into_inner().map_err(|e| e.into_error())?;
            file.sync_all()?;
        }
        total += done;
    }
    progress.done();
    Ok(total)
}

/// Writes the JSON document one row at a time: `{"format", "version", "tables": {"<table>":
/// [{column: value}]}}`, tables parents first, columns in declared order, laid out exactly as
/// `serde_json::to_string_pretty` lays it out (two-space indents) with a final newline, so a
/// document written before the export streamed and one written now are the same bytes. Reals
/// are written in the shortest form that reads back to the same number; a real that is not
/// finite and a blob are written as `{"$real": "inf"}` and `{"$blob": "<hex>"}`.
pub struct JsonWriter<W: Write> {
    out: W,
    /// Tables begun.
    tables: usize,
    /// Rows written in the current table.
    rows: u64,
}

impl<W: Write> JsonWriter<W> {
    /// Starts the document of an export made at migration `version`.
    pub fn begin(mut out: W, version: i64) -> io::Result<Self> {
        out.write_all(b"{\n  \"format\": ")?;
        serde_json::to_writer(&mut out, FORMAT)?;
        write!(out, ",\n  \"version\": {version},\n  \"tables\": ")?;
        Ok(Self {
            out,
            tables: 0,
            rows: 0,
        })
    }

    /// Starts a table's list of rows.
    pub fn table(&mut self, name: &str) -> io::Result<()> {
        self.out.write_all(if self.tables == 0 {
            b"{\n    "
        } else {
            b",\n    "
        })?;
        serde_json::to_writer(&mut self.out, name)?;
        self.out.write_all(b": [")?;
        self.tables += 1;
        self.rows = 0;
        Ok(())
    }

    /// One row of the current table.
    pub fn row(&mut self, columns: &[String], cells: &[Cell]) -> io::Result<()> {
        self.out.write_all(if self.rows == 0 {
            b"\n      {"
        } else {
            b",\n      {"
        })?;
        for (i, (column, value)) in columns.iter().zip(cells).enumerate() {
            self.out.write_all(if i == 0 {
                b"\n        "
            } else {
                b",\n        "
            })?;
            serde_json::to_writer(&mut self.out, column.as_str())?;
            self.out.write_all(b": ")?;
            match value {
                Cell::Real(v) if !v.is_finite() => {
                    let v = if *v > 0.0 { "inf" } else { "-inf" };
                    write!(self.out, "{{\n          \"$real\": \"{v}\"\n        }}")?;
                }
                Cell::Blob(v) => {
                    write!(
                        self.out,
                        "{{\n          \"$blob\": \"{}\"\n        }}",
                        to_hex(v)
                    )?;
                }
                other => serde_json::to_writer(&mut self.out, other)?,
            }
        }
        self.out.write_all(if columns.is_empty() {
            b"}"
        } else {
            b"\n      }"
        })?;
        self.rows += 1;
        Ok(())
    }

    /// Ends the current table.
    pub fn end_table(&mut self) -> io::Result<()> {
        self.out
            .write_all(if self.rows == 0 { b"]" } else { b"\n    ]" })
    }

    /// Ends the document and hands back the writer (flushed).
    pub fn finish(mut self) -> io::Result<W> {
        self.out.write_all(if self.tables == 0 {
            b"{}\n}\n"
        } else {
            b"\n  }\n}\n"
        })?;
        self.out.flush()?;
        Ok(self.out)
    }
}

/// A scalar cell as serde_json writes it (the objects for a blob and a real that is not finite
/// are laid out by [`JsonWriter::row`]).
impl Serialize for Cell {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
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

// ---- Import: a document, streamed into an empty database ----

/// Where an import's document is read from. It is read twice (see the module's documentation),
/// so this is something that can be opened again: a file, or a document already in memory (a
/// test's, or a small upload's).
#[derive(Debug, Clone)]
pub enum Document {
    File(PathBuf),
    Bytes(Arc<[u8]>),
}

impl Document {
    /// Reads the whole document through `on`. A file is read through a `BufReader` as such:
    /// serde_json reads its input a byte at a time, and the standard library takes those bytes
    /// straight from a `BufReader`'s buffer (behind a `Box<dyn Read>` each would be a call).
    fn read<H: OnTable>(&self, on: &mut H) -> Result<Head, serde_json::Error> {
        match self {
            Self::File(path) => {
                let file = File::open(path).map_err(serde_json::Error::io)?;
                parse(BufReader::with_capacity(1 << 16, file), on)
            }
            Self::Bytes(bytes) => parse(io::Cursor::new(Arc::clone(bytes)), on),
        }
    }
}

/// The document in `reader`, each table's rows handed to `on`; nothing may follow it.
fn parse<R: Read, H: OnTable>(reader: R, on: &mut H) -> Result<Head, serde_json::Error> {
    let mut de = serde_json::Deserializer::from_reader(reader);
    let head = DocSeed(on).deserialize(&mut de)?;
    de.end()?;
    Ok(head)
}

impl From<String> for Document {
    fn from(text: String) -> Self {
        Self::Bytes(text.into_bytes().into())
    }
}

/// A table as the first reading found it.
#[derive(Debug)]
struct Surveyed {
    name: String,
    /// The keys of its first row, in the document's order.
    columns: Vec<String>,
    rows: u64,
    /// Its rows, for the small tables the import looks into before writing.
    kept: Option<Vec<Vec<Cell>>>,
}

/// The document as the first reading found it.
#[derive(Debug)]
struct Survey {
    format: String,
    version: i64,
    tables: Vec<Surveyed>,
}

/// What the top of the document holds besides its tables.
struct Head {
    format: String,
    version: i64,
}

/// What is done with each table's list of rows as the document is read.
trait OnTable {
    fn rows<'de, A: SeqAccess<'de>>(&mut self, name: String, seq: A) -> Result<(), A::Error>;
}

/// The document: `format`, `version` and `tables` in any order; other keys are passed over.
struct DocSeed<'h, H>(&'h mut H);

impl<'de, H: OnTable> DeserializeSeed<'de> for DocSeed<'_, H> {
    type Value = Head;
    fn deserialize<D: de::Deserializer<'de>>(self, d: D) -> Result<Head, D::Error> {
        d.deserialize_map(self)
    }
}

impl<'de, H: OnTable> Visitor<'de> for DocSeed<'_, H> {
    type Value = Head;
    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("an export document (an object with format, version and tables)")
    }
    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Head, A::Error> {
        let (mut format, mut version, mut tables) = (None, None, false);
        while let Some(key) = map.next_key::<String>()? {
            match key.as_str() {
                "format" => format = Some(map.next_value::<String>()?),
                "version" => version = Some(map.next_value::<i64>()?),
                "tables" => {
                    map.next_value_seed(TablesSeed(&mut *self.0))?;
                    tables = true;
                }
                _ => {
                    map.next_value::<IgnoredAny>()?;
                }
            }
        }
        let format = format.ok_or_else(|| de::Error::missing_field("format"))?;
        let version = version.ok_or_else(|| de::Error::missing_field("version"))?;
        if !tables {
            return Err(de::Error::missing_field("tables"));
        }
        Ok(Head { format, version })
    }
}

struct TablesSeed<'h, H>(&'h mut H);

impl<'de, H: OnTable> DeserializeSeed<'de> for TablesSeed<'_, H> {
    type Value = ();
    fn deserialize<D: de::Deserializer<'de>>(self, d: D) -> Result<(), D::Error> {
        d.deserialize_map(self)
    }
}

impl<'de, H: OnTable> Visitor<'de> for TablesSeed<'_, H> {
    type Value = ();
    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("an object of tables")
    }
    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<(), A::Error> {
        while let Some(name) = map.next_key::<String>()? {
            map.next_value_seed(RowsSeed {
                name,
                on: &mut *self.0,
            })?;
        }
        Ok(())
    }
}

struct RowsSeed<'h, H> {
    name: String,
    on: &'h mut H,
}

impl<'de, H: OnTable> DeserializeSeed<'de> for RowsSeed<'_, H> {
    type Value = ();
    fn deserialize<D: de::Deserializer<'de>>(self, d: D) -> Result<(), D::Error> {
        d.deserialize_seq(self)
    }
}

impl<'de, H: OnTable> Visitor<'de> for RowsSeed<'_, H> {
    type Value = ();
    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        write!(f, "a list of rows for table {:?}", self.name)
    }
    fn visit_seq<A: SeqAccess<'de>>(self, seq: A) -> Result<(), A::Error> {
        self.on.rows(self.name, seq)
    }
}

/// One row: `{column: value}`. The first row of a table sets its columns; every other row
/// must hold the same ones (in any order; its cells come back in the first row's order). With
/// `exact` each value is read into its [`Cell`] from its JSON text; without, it is only checked
/// to be one (nothing is kept).
struct RowSeed<'a> {
    table: &'a str,
    /// The row's place in its table, from 0.
    n: u64,
    columns: &'a mut Vec<String>,
    exact: bool,
}

impl RowSeed<'_> {
    fn other_columns<E: de::Error>(&self) -> E {
        E::custom(format!(
            "row {} of table {:?} has other columns than its first row",
            self.n + 1,
            self.table
        ))
    }
}

impl<'de> DeserializeSeed<'de> for RowSeed<'_> {
    type Value = Vec<Cell>;
    fn deserialize<D: de::Deserializer<'de>>(self, d: D) -> Result<Vec<Cell>, D::Error> {
        d.deserialize_map(self)
    }
}

impl<'de> Visitor<'de> for RowSeed<'_> {
    type Value = Vec<Cell>;
    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        write!(f, "a row of table {:?} (an object)", self.table)
    }
    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Vec<Cell>, A::Error> {
        let first = self.n == 0;
        let width = self.columns.len();
        let mut cells: Vec<Cell> = Vec::new();
        let mut seen = vec![false; width];
        let mut count = 0;
        loop {
            let at = if first {
                let Some(key) = map.next_key::<String>()? else {
                    break;
                };
                if self.columns.contains(&key) {
                    return Err(de::Error::custom(format!(
                        "row 1 of table {:?} holds column {key:?} twice",
                        self.table
                    )));
                }
                self.columns.push(key);
                self.columns.len() - 1
            } else {
                let Some(at) = map.next_key_seed(ColumnOf {
                    columns: self.columns,
                    hint: count,
                })?
                else {
                    break;
                };
                match at {
                    Some(at) if !seen[at] => {
                        seen[at] = true;
                        at
                    }
                    _ => return Err(self.other_columns()),
                }
            };
            count += 1;
            let cell = if self.exact {
                let raw = map.next_value::<Box<RawValue>>()?;
                cell_from_json(&raw)
            } else {
                map.next_value_seed(CheckCell)?.map(|()| Cell::Null)
            };
            let cell = cell.map_err(|why| {
                de::Error::custom(format!(
                    "table {:?}, row {}, column {:?}: {why}",
                    self.table,
                    self.n + 1,
                    self.columns[at]
                ))
            })?;
            if self.exact {
                if first {
                    cells.push(cell);
                } else {
                    if cells.is_empty() {
                        cells.resize(width, Cell::Null);
                    }
                    cells[at] = cell;
                }
            }
        }
        if !first && count != width {
            return Err(self.other_columns());
        }
        Ok(cells)
    }
}

/// A row's key: its column's place among the first row's (`None`: not one of them), without
/// allocating when the key is the one expected at `hint`.
struct ColumnOf<'a> {
    columns: &'a [String],
    hint: usize,
}

impl<'de> DeserializeSeed<'de> for ColumnOf<'_> {
    type Value = Option<usize>;
    fn deserialize<D: de::Deserializer<'de>>(self, d: D) -> Result<Option<usize>, D::Error> {
        d.deserialize_str(self)
    }
}

impl<'de> Visitor<'de> for ColumnOf<'_> {
    type Value = Option<usize>;
    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("a column name")
    }
    fn visit_str<E: de::Error>(self, key: &str) -> Result<Option<usize>, E> {
        if self.columns.get(self.hint).is_some_and(|c| c == key) {
            return Ok(Some(self.hint));
        }
        Ok(self.columns.iter().position(|c| c == key))
    }
}

/// Checks that a value is one a cell can be (null, a whole number in range, a number, text, a
/// `$real` or `$blob` object), without keeping it. The answer is `Err(why)` for one that is not.
struct CheckCell;

type Checked = Result<(), String>;

impl<'de> DeserializeSeed<'de> for CheckCell {
    type Value = Checked;
    fn deserialize<D: de::Deserializer<'de>>(self, d: D) -> Result<Checked, D::Error> {
        d.deserialize_any(self)
    }
}

impl<'de> Visitor<'de> for CheckCell {
    type Value = Checked;
    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("null, a number or text")
    }
    fn visit_unit<E>(self) -> Result<Checked, E> {
        Ok(Ok(()))
    }
    fn visit_i64<E>(self, _: i64) -> Result<Checked, E> {
        Ok(Ok(()))
    }
    fn visit_u64<E>(self, v: u64) -> Result<Checked, E> {
        Ok(i64::try_from(v)
            .map(|_| ())
            .map_err(|e| format!("{v}: {e}")))
    }
    fn visit_f64<E>(self, _: f64) -> Result<Checked, E> {
        Ok(Ok(()))
    }
    fn visit_str<E>(self, _: &str) -> Result<Checked, E> {
        Ok(Ok(()))
    }
    fn visit_bool<E>(self, v: bool) -> Result<Checked, E> {
        Ok(Err(format!("expected null, a number or text, found {v}")))
    }
    fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Checked, A::Error> {
        while seq.next_element::<IgnoredAny>()?.is_some() {}
        Ok(Err("expected null, a number or text, found a list".into()))
    }
    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Checked, A::Error> {
        let mut entries = Vec::new();
        while let Some(key) = map.next_key::<String>()? {
            entries.push((key, map.next_value::<serde_json::Value>()?));
        }
        Ok(match entries.as_slice() {
            [(k, serde_json::Value::String(r))] if k == "$real" && (r == "inf" || r == "-inf") => {
                Ok(())
            }
            [(k, serde_json::Value::String(hex))] if k == "$blob" => from_hex(hex).map(|_| ()),
            _ => Err("unexpected object".into()),
        })
    }
}

/// The first reading: the document's shape, every cell's JSON, each table's columns and row
/// count, and the rows of the tables named in `keep`.
struct SurveyRows<'a> {
    keep: &'a BTreeSet<String>,
    tables: Vec<Surveyed>,
    progress: &'a mut Progress,
}

impl OnTable for SurveyRows<'_> {
    fn rows<'de, A: SeqAccess<'de>>(&mut self, name: String, mut seq: A) -> Result<(), A::Error> {
        let exact = self.keep.contains(&name);
        let mut columns = Vec::new();
        let mut kept = Vec::new();
        let mut n = 0;
        while let Some(cells) = seq.next_element_seed(RowSeed {
            table: &name,
            n,
            columns: &mut columns,
            exact,
        })? {
            if exact {
                kept.push(cells);
            }
            n += 1;
            self.progress.rows("checking", &name, n, None);
        }
        self.progress.rows("checking", &name, n, Some(n));
        self.tables.push(Surveyed {
            name,
            columns,
            rows: n,
            kept: exact.then_some(kept),
        });
        Ok(())
    }
}

fn format_error(e: serde_json::Error) -> ExportError {
    if e.is_io() {
        ExportError::Io(e.into())
    } else {
        ExportError::Format(e.to_string())
    }
}

fn survey(
    doc: &Document,
    keep: &BTreeSet<String>,
    progress: &mut Progress,
) -> Result<Survey, ExportError> {
    let mut on = SurveyRows {
        keep,
        tables: Vec::new(),
        progress,
    };
    let head = doc.read(&mut on).map_err(format_error)?;
    Ok(Survey {
        format: head.format,
        version: head.version,
        tables: on.tables,
    })
}

/// A table of the document as the second reading loads it.
struct Loading {
    name: String,
    columns: Vec<String>,
    rows: u64,
    /// Rows per INSERT statement.
    batch: usize,
    checks: check::RowChecks,
}

/// Rows parsed and checked, on their way to the database.
struct Batch {
    /// Which [`Loading`] table.
    table: usize,
    /// The first row's place in its table, from 0.
    first: u64,
    rows: Vec<Vec<Cell>>,
}

/// The second reading: each row read exactly, checked and sent to the inserter in batches.
struct LoadRows<'a> {
    tables: &'a [Loading],
    next: usize,
    ctx: crate::records::field::Ctx,
    send: tokio::sync::mpsc::Sender<Batch>,
    /// Why the reading stopped, when it was not the JSON.
    stopped: Option<ExportError>,
}

impl LoadRows<'_> {
    fn stop<E: de::Error>(&mut self, why: ExportError) -> E {
        let text = why.to_string();
        self.stopped = Some(why);
        E::custom(text)
    }

    fn send<E: de::Error>(&mut self, batch: Batch) -> Result<(), E> {
        self.send.blocking_send(batch).map_err(|_| {
            // The inserter stopped (and reports why).
            E::custom("the import stopped")
        })
    }
}

impl OnTable for LoadRows<'_> {
    fn rows<'de, A: SeqAccess<'de>>(&mut self, name: String, mut seq: A) -> Result<(), A::Error> {
        let index = self.next;
        self.next += 1;
        let Some(table) = self.tables.get(index).filter(|t| t.name == name) else {
            return Err(self.stop(ExportError::Format(
                "the file changed while it was being imported".into(),
            )));
        };
        let mut columns = Vec::new();
        let mut rows = Vec::with_capacity(table.batch);
        let (mut n, mut first) = (0, 0);
        while let Some(cells) = seq.next_element_seed(RowSeed {
            table: &name,
            n,
            columns: &mut columns,
            exact: true,
        })? {
            if n == 0 && columns != table.columns {
                return Err(self.stop(ExportError::Format(
                    "the file changed while it was being imported".into(),
                )));
            }
            if let Err(why) = table
                .checks
                .check(&name, &columns, n as usize, &cells, &self.ctx)
            {
                return Err(self.stop(why));
            }
            rows.push(cells);
            n += 1;
            if rows.len() == table.batch {
                let full = std::mem::replace(&mut rows, Vec::with_capacity(table.batch));
                self.send(Batch {
                    table: index,
                    first,
                    rows: full,
                })?;
                first = n;
            }
        }
        if !rows.is_empty() {
            self.send(Batch {
                table: index,
                first,
                rows,
            })?;
        }
        Ok(())
    }
}

/// `INSERT INTO table (columns) VALUES (?, ...), ...` for `rows` rows.
fn insert_sql(table: &str, columns: &[String], rows: usize) -> String {
    let one = format!("({})", vec!["?"; columns.len()].join(", "));
    format!(
        "INSERT INTO {} ({}) VALUES {}",
        ident(table),
        columns
            .iter()
            .map(|c| ident(c))
            .collect::<Vec<_>>()
            .join(", "),
        vec![one; rows].join(", ")
    )
}

async fn insert(
    conn: &mut SqliteConnection,
    sql: &str,
    rows: &[Vec<Cell>],
) -> Result<(), sqlx::Error> {
    let mut query = sqlx::query(AssertSqlSafe(sql.to_string()));
    for row in rows {
        for value in row {
            query = match value {
                Cell::Null => query.bind(None::<i64>),
                Cell::Integer(v) => query.bind(*v),
                Cell::Real(v) => query.bind(*v),
                Cell::Text(v) => query.bind(v.clone()),
                Cell::Blob(v) => query.bind(v.clone()),
            };
        }
    }
    query.execute(&mut *conn).await.map(|_| ())
}

/// Inserts a batch; when the database refuses it (a constraint such as NOT NULL or UNIQUE),
/// inserts its rows one at a time to name the row refused by its place.
async fn insert_batch(
    conn: &mut SqliteConnection,
    table: &Loading,
    full: &str,
    batch: &Batch,
) -> Result<(), ExportError> {
    let sql = if batch.rows.len() == table.batch {
        full.to_string()
    } else {
        insert_sql(&table.name, &table.columns, batch.rows.len())
    };
    match insert(conn, &sql, &batch.rows).await {
        Ok(()) => return Ok(()),
        Err(sqlx::Error::Database(_)) => {}
        Err(other) => return Err(other.into()),
    }
    // The refused statement changed nothing; find the row.
    let one = insert_sql(&table.name, &table.columns, 1);
    for (k, row) in batch.rows.iter().enumerate() {
        insert(conn, &one, std::slice::from_ref(row))
            .await
            .map_err(|e| match e {
                sqlx::Error::Database(db) => ExportError::Refused(format!(
                    "{}: {}",
                    check::place(&table.name, &table.columns, (batch.first as usize) + k, row),
                    db.message()
                )),
                other => ExportError::Sql(other),
            })?;
    }
    Ok(())
}

/// Refuses a document without the singleton rows its version holds, or with other rows than
/// those in a singleton table (an empty `shop_settings` would leave every page failing).
/// `latest` holds the ids the newest migrations seed, `by_name` the document's tables.
async fn check_singletons(
    version: i64,
    latest: &BTreeMap<String, Vec<i64>>,
    by_name: &BTreeMap<String, &Surveyed>,
) -> Result<(), ExportError> {
    let at_version = seeded_ids(version).await?;
    for (name, ids) in latest {
        let list = ids
            .iter()
            .map(i64::to_string)
            .collect::<Vec<_>>()
            .join(", ");
        let rows = if ids.len() == 1 { "row" } else { "rows" };
        let Some(table) = by_name.get(name) else {
            if at_version.contains_key(name) {
                return Err(ExportError::Refused(format!(
                    "the export has no table {name:?}: every export holds its {rows} with id \
                     {list}"
                )));
            }
            continue;
        };
        let id = table.columns.iter().position(|c| c == "id");
        let found: Vec<Option<i64>> = table
            .kept
            .iter()
            .flatten()
            .map(|row| match id.map(|i| &row[i]) {
                Some(Cell::Integer(v)) => Some(*v),
                _ => None,
            })
            .collect();
        if found.len() != ids.len() || found.iter().zip(ids).any(|(f, i)| *f != Some(*i)) {
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

/// The shop's time zone as the document's `shop_settings` row holds it.
fn document_zone(by_name: &BTreeMap<String, &Surveyed>) -> Option<String> {
    let table = by_name.get("shop_settings")?;
    let i = table.columns.iter().position(|c| c == "time_zone")?;
    match table.kept.as_ref()?.first()?.get(i)? {
        Cell::Text(zone) => Some(zone.clone()),
        _ => None,
    }
}

/// Loads an export document into an empty database, every row with its id. Run it inside one
/// `BEGIN IMMEDIATE` transaction and commit only when it returns `Ok` (a refusal found while
/// the rows go in leaves rows behind in the transaction).
///
/// The rows the migrations seeded (such as the shop settings row) are replaced by the
/// document's. Triggers are set aside while loading, so audit triggers do not record the load
/// as new edits (the export carries the audit history itself), and put back unchanged before
/// returning. Foreign keys are checked once everything is in, so the tables may come in any
/// order. The derived tables are not worked out here: the caller runs
/// `status::rebuild_derived` in the same transaction.
pub async fn import(
    conn: &mut SqliteConnection,
    doc: &Document,
    progress: &mut Progress,
) -> Result<Imported, ExportError> {
    let latest = latest_known_version();
    let singletons = seeded_ids(latest).await?;
    let mut keep: BTreeSet<String> = singletons.keys().cloned().collect();
    keep.insert("shop_settings".into());

    // First reading, on a thread of its own (parsing is blocking work).
    let survey = {
        let doc = doc.clone();
        let mut shown = std::mem::replace(progress, Progress::none());
        let (survey, shown) = tokio::task::spawn_blocking(move || {
            let survey = survey(&doc, &keep, &mut shown);
            (survey, shown)
        })
        .await
        .map_err(io::Error::other)?;
        *progress = shown;
        survey?
    };
    if survey.format != FORMAT {
        return Err(ExportError::Format(format!(
            "its format is {:?}, expected {FORMAT:?}",
            survey.format
        )));
    }
    if survey.version > latest {
        return Err(ExportError::Refused(format!(
            "the export comes from a newer Lockpoint (database migration {}); this program knows \
             migrations up to {latest}: upgrade Lockpoint first",
            survey.version
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
    // Names are matched exactly, as an export writes them: the record checks go by name.
    let existing = tables(conn).await?;
    let mut by_name: BTreeMap<String, &Surveyed> = BTreeMap::new();
    let mut loading = Vec::with_capacity(survey.tables.len());
    for table in &survey.tables {
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
        loading.push(Loading {
            name: table.name.clone(),
            columns: table.columns.clone(),
            rows: table.rows,
            // SQLite allows 32 766 parameters per statement.
            batch: (30_000 / table.columns.len().max(1)).clamp(1, 200),
            checks: check::RowChecks::new(&table.name, &table.columns, &target_columns),
        });
    }
    check_singletons(survey.version, &singletons, &by_name).await?;
    let ctx = check::import_ctx(document_zone(&by_name).as_deref());
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
    // Checked at commit, and by foreign_key_check below: rows may refer forward (a cycle, a
    // table that refers to itself, or tables in another order than an export writes them).
    sqlx::query("PRAGMA defer_foreign_keys = ON")
        .execute(&mut *conn)
        .await?;
    for name in by_name.keys() {
        if seeded.get(name).copied().unwrap_or(0) > 0 {
            sqlx::query(AssertSqlSafe(format!("DELETE FROM {}", ident(name))))
                .execute(&mut *conn)
                .await?;
        }
    }

    // Second reading: a thread parses and checks, this task inserts.
    let loading = Arc::new(loading);
    let full: Vec<String> = loading
        .iter()
        .map(|t| insert_sql(&t.name, &t.columns, t.batch))
        .collect();
    let (send, mut receive) = tokio::sync::mpsc::channel::<Batch>(4);
    let reader = {
        let (doc, loading) = (doc.clone(), Arc::clone(&loading));
        tokio::task::spawn_blocking(move || -> Result<(), ExportError> {
            let mut on = LoadRows {
                tables: &loading,
                next: 0,
                ctx,
                send,
                stopped: None,
            };
            let read = doc.read(&mut on).map(|_| ());
            match (read, on.stopped) {
                (_, Some(why)) => Err(why),
                (Err(e), None) => Err(format_error(e)),
                (Ok(()), None) => Ok(()),
            }
        })
    };
    let mut rows = 0;
    let mut inserted = async {
        let mut done = vec![0u64; loading.len()];
        while let Some(batch) = receive.recv().await {
            let table = &loading[batch.table];
            insert_batch(conn, table, &full[batch.table], &batch).await?;
            rows += batch.rows.len();
            done[batch.table] += batch.rows.len() as u64;
            progress.rows(
                "importing",
                &table.name,
                done[batch.table],
                Some(table.rows),
            );
        }
        Ok::<_, ExportError>(())
    }
    .await;
    drop(receive);
    let read = reader.await.map_err(io::Error::other)?;
    progress.done();
    // The inserter's refusal comes first: the reader only stopped because of it.
    if inserted.is_ok() {
        inserted = read;
    }
    inserted?;

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
        version: survey.version,
        tables: by_name.len(),
        rows,
    })
}

// ---- JSON cells ----

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

/// One table as RFC 4180 CSV, written a row at a time: a header row of column names, then one
/// record per row, each line ended by CRLF. A field holding a comma, a double quote, CR or LF is
/// enclosed in double quotes and its quotes doubled. NULL is an empty field; a real is written
/// in its shortest exact form; a blob in hex. (CSV cannot tell NULL from empty text: the JSON
/// document is the exact copy.)
///
/// A text cell that a spreadsheet would run as a formula (it starts with `=`, `+`, `-`, `@`, a
/// tab or a carriage return) is written with a `'` in front, so opening the file cannot run
/// `=HYPERLINK(...)` or fetch anything: the usual advice for CSV meant for spreadsheets. Numbers
/// are stored as numbers and are never prefixed; the JSON document keeps every text exact.
pub struct CsvWriter<W: Write> {
    out: W,
    line: String,
}

impl<W: Write> CsvWriter<W> {
    /// Starts the file with its header row.
    pub fn begin(out: W, columns: &[String]) -> io::Result<Self> {
        let mut w = Self {
            out,
            line: String::new(),
        };
        push_record(&mut w.line, columns.iter().map(String::as_str));
        w.out.write_all(w.line.as_bytes())?;
        Ok(w)
    }

    pub fn row(&mut self, cells: &[Cell]) -> io::Result<()> {
        let fields: Vec<String> = cells.iter().map(csv_text).collect();
        self.line.clear();
        push_record(&mut self.line, fields.iter().map(String::as_str));
        self.out.write_all(self.line.as_bytes())
    }

    /// Hands back the writer (flushed).
    pub fn finish(mut self) -> io::Result<W> {
        self.out.flush()?;
        Ok(self.out)
    }
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
    use serde::ser::{SerializeMap, SerializeSeq};

    #[test]
    fn csv_quotes_only_the_fields_that_need_it() {
        // RFC 4180 section 2, rules 6 and 7: fields with commas, quotes or line breaks are
        // enclosed in double quotes, and a quote inside is doubled.
        let mut w =
            CsvWriter::begin(Vec::new(), &["id".into(), "note".into(), "x".into()]).unwrap();
        w.row(&[
            Cell::Integer(7),
            Cell::Text("a, \"b\"\r\nc".into()),
            Cell::Real(0.1),
        ])
        .unwrap();
        assert_eq!(
            String::from_utf8(w.finish().unwrap()).unwrap(),
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

    /// The document as the export wrote it before it streamed: the whole shop in memory, laid
    /// out by `serde_json::to_string_pretty` (the reference the streaming writer must match).
    /// A table: name, columns, rows.
    type T = (String, Vec<String>, Vec<Vec<Cell>>);
    struct Doc<'a>(i64, &'a [T]);
    struct Tables<'a>(&'a [T]);
    struct Rows<'a>(&'a [String], &'a [Vec<Cell>]);
    struct OneRow<'a>(&'a [String], &'a [Cell]);

    impl Serialize for Doc<'_> {
        fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
            let mut map = s.serialize_map(Some(3))?;
            map.serialize_entry("format", FORMAT)?;
            map.serialize_entry("version", &self.0)?;
            map.serialize_entry("tables", &Tables(self.1))?;
            map.end()
        }
    }
    impl Serialize for Tables<'_> {
        fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
            let mut map = s.serialize_map(Some(self.0.len()))?;
            for (name, columns, rows) in self.0 {
                map.serialize_entry(name, &Rows(columns, rows))?;
            }
            map.end()
        }
    }
    impl Serialize for Rows<'_> {
        fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
            let mut seq = s.serialize_seq(Some(self.1.len()))?;
            for row in self.1 {
                seq.serialize_element(&OneRow(self.0, row))?;
            }
            seq.end()
        }
    }
    impl Serialize for OneRow<'_> {
        fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
            let mut map = s.serialize_map(Some(self.0.len()))?;
            for (column, value) in self.0.iter().zip(self.1) {
                map.serialize_entry(column, value)?;
            }
            map.end()
        }
    }

    fn streamed(version: i64, tables: &[T]) -> String {
        let mut w = JsonWriter::begin(Vec::new(), version).unwrap();
        for (name, columns, rows) in tables {
            w.table(name).unwrap();
            for row in rows {
                w.row(columns, row).unwrap();
            }
            w.end_table().unwrap();
        }
        String::from_utf8(w.finish().unwrap()).unwrap()
    }

    #[test]
    fn the_streaming_writer_lays_out_the_document_as_serde_json_pretty_does() {
        let columns: Vec<String> = ["id", "note \"q\"", "x", "b"].map(String::from).into();
        let rows = vec![
            vec![
                Cell::Integer(1),
                Cell::Text("Søren's \"car\",\r\n\u{1}".into()),
                Cell::Real(0.1 + 0.2),
                Cell::Blob(vec![0, 255]),
            ],
            vec![
                Cell::Integer(-9_007_199_254_740_993),
                Cell::Null,
                Cell::Real(f64::INFINITY),
                Cell::Real(f64::NEG_INFINITY),
            ],
            vec![
                Cell::Integer(3),
                Cell::Text(String::new()),
                Cell::Real(5.0),
                Cell::Real(1e300),
            ],
        ];
        let cases: Vec<Vec<T>> = vec![
            vec![],
            vec![("empty".into(), columns.clone(), vec![])],
            vec![
                ("a".into(), columns.clone(), rows.clone()),
                ("empty".into(), vec![], vec![]),
                (
                    "one".into(),
                    vec!["id".into()],
                    vec![vec![Cell::Integer(7)]],
                ),
            ],
        ];
        for tables in cases {
            let mut reference = serde_json::to_string_pretty(&Doc(15, &tables)).unwrap();
            reference.push('\n');
            assert_eq!(streamed(15, &tables), reference);
        }
    }
}
