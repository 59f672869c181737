//! What an import admits, checked row by row as the document is read: every cell has the
//! stored type its column declares, and every row of a record table passes its record's checks
//! (the same declarations, limits and rules as the forms and the record API), so a value that
//! would break a page later (`builds.facing_od_mm = "abc"`, a facing wider than any clutch) is
//! refused with the table, row and column it is in.

use super::{Cell, ExportError};
use crate::db::record::set_stored;
use crate::records::FieldErrors;
use crate::records::date::{Date, ShopZone};
use crate::records::field::{self, Ctx, Field, Record};
use crate::records::tables::{RecordVisitor, for_table};
use clutch::units::Units;

/// Where a row is, for messages: `table "builds", row 3 (id 7)`. Rows count from 1 in the
/// document's order; `n` counts from 0.
pub(super) fn place(table: &str, columns: &[String], n: usize, row: &[Cell]) -> String {
    let id = columns
        .iter()
        .position(|c| c == "id")
        .and_then(|i| match row.get(i) {
            Some(Cell::Integer(id)) => Some(format!(" (id {id})")),
            _ => None,
        })
        .unwrap_or_default();
    format!("table {table:?}, row {}{id}", n + 1)
}

/// A cell in words, for messages.
fn found(cell: &Cell) -> String {
    match cell {
        Cell::Null => "null".into(),
        Cell::Integer(v) => format!("the whole number {v}"),
        Cell::Real(v) => format!("the number {v}"),
        Cell::Text(v) => format!("text {:?}", v.chars().take(40).collect::<String>()),
        Cell::Blob(_) => "binary data".into(),
    }
}

/// The stored type a column's declared type asks for (SQLite's affinity rules, simplified to
/// the types our migrations use).
#[derive(Clone, Copy)]
enum Stored {
    Whole,
    Number,
    Text,
}

impl Stored {
    /// `None` for a declared type that takes anything.
    fn of(declared: &str) -> Option<Self> {
        let t = declared.to_ascii_uppercase();
        if t.contains("INT") {
            Some(Self::Whole)
        } else if t.contains("CHAR") || t.contains("CLOB") || t.contains("TEXT") {
            Some(Self::Text)
        } else if t.contains("REAL") || t.contains("FLOA") || t.contains("DOUB") {
            Some(Self::Number)
        } else {
            None
        }
    }

    /// NULL fits any column here: NOT NULL is the column's own constraint.
    fn admits(self, cell: &Cell) -> bool {
        matches!(
            (self, cell),
            (_, Cell::Null)
                | (Self::Whole, Cell::Integer(_))
                | (Self::Number, Cell::Integer(_) | Cell::Real(_))
                | (Self::Text, Cell::Text(_))
        )
    }

    fn words(self) -> &'static str {
        match self {
            Self::Whole => "a whole number",
            Self::Number => "a number",
            Self::Text => "text",
        }
    }
}

/// A record's per-row check: the first (column, message) it finds.
type RecordCheck = Box<dyn Fn(&[Cell], &Ctx) -> Option<(String, String)> + Send + Sync>;

/// Everything one table's rows are checked against, prepared once per table.
pub(super) struct RowChecks {
    /// The stored type each column of the document's table asks for (`None`: anything).
    types: Vec<Option<Stored>>,
    /// The record's checks, for a table that stores a declared record.
    record: Option<RecordCheck>,
}

impl RowChecks {
    /// For a table whose document columns are `columns`, `declared` giving each column's
    /// declared type in the target database.
    pub(super) fn new(table: &str, columns: &[String], declared: &[(String, String)]) -> Self {
        let types = columns
            .iter()
            .map(|c| {
                declared
                    .iter()
                    .find(|(name, _)| name == c)
                    .and_then(|(_, t)| Stored::of(t))
            })
            .collect();
        struct Build<'a>(&'a [String]);
        impl RecordVisitor for Build<'_> {
            type Out = RecordCheck;
            fn visit<R: Record>(self) -> Self::Out {
                record_check::<R>(self.0, R::WHOLE_ROW)
            }
        }
        Self {
            types,
            record: for_table(table, Build(columns)),
        }
    }

    /// Refuses a cell whose stored type is not its column's (text in a number column would be
    /// kept as text by SQLite and fail when a page reads it), then a row its record refuses.
    pub(super) fn check(
        &self,
        table: &str,
        columns: &[String],
        n: usize,
        row: &[Cell],
        ctx: &Ctx,
    ) -> Result<(), ExportError> {
        let refused = |column: &str, why: String| {
            ExportError::Refused(format!(
                "{}, column {column:?}: {why}",
                place(table, columns, n, row)
            ))
        };
        for ((column, cell), want) in columns.iter().zip(row).zip(&self.types) {
            if let Some(want) = want
                && !want.admits(cell)
            {
                return Err(refused(
                    column,
                    format!("expected {}, found {}", want.words(), found(cell)),
                ));
            }
        }
        if let Some(record) = &self.record
            && let Some((column, why)) = record(row, ctx)
        {
            return Err(refused(&column, why));
        }
        if table == "pass_logs"
            && let Some((column, why)) = pass_log(columns, row)
        {
            return Err(refused(column, why));
        }
        Ok(())
    }
}

/// A stored data log as the pages will read it: the file inflates (at most the largest file
/// accepted), to the size its row says, and its settings read. A row that fails would make its
/// pass's log unreadable, so it is refused like any other bad row.
fn pass_log(columns: &[String], row: &[Cell]) -> Option<(&'static str, String)> {
    let cell = |name: &str| {
        columns
            .iter()
            .position(|c| c == name)
            .and_then(|i| row.get(i))
    };
    if let Some(Cell::Blob(deflated)) = cell("file_deflated") {
        let text =
            match crate::db::pass_logs::inflate(deflated, clutch::quantity::limits::LOG_FILE_BYTES)
            {
                Ok(text) => text,
                Err(why) => return Some(("file_deflated", why)),
            };
        if let Some(Cell::Integer(bytes)) = cell("file_bytes")
            && *bytes != text.len() as i64
        {
            return Some((
                "file_bytes",
                format!(
                    "the row says {bytes} bytes; the stored file has {}",
                    text.len()
                ),
            ));
        }
    }
    if let Some(Cell::Text(settings)) = cell("settings")
        && let Err(e) = serde_json::from_str::<clutch::datalog::request::LogSettings>(settings)
    {
        return Some((
            "settings",
            format!("the stored log's settings cannot be read: {e}"),
        ));
    }
    None
}

/// What the record checks of imported rows run with: storage units (the stored values are
/// metric, as in the record API) and a today late enough for history: the later of the
/// server's today and the imported shop's today in its own time zone (`zone`, the document's
/// `shop_settings.time_zone`).
pub(super) fn import_ctx(zone: Option<&str>) -> Ctx {
    let server = Date::today(&ShopZone::server());
    let shop = zone
        .and_then(|zone| ShopZone::parse(zone).ok())
        .map(|zone| Date::today(&zone));
    Ctx {
        units: Units::Metric,
        today: shop.map_or(server, |shop| shop.max(server)),
    }
}

/// A row of the document's table as record `R` (its declared columns; a column the document
/// lacks keeps the record's default), checked field by field and, when `whole`, by the record's
/// own rules. A bench test's row holds only the test's date and note (its springs are rows of
/// `bench_springs`, checked on their own), so it gets the field checks without the rules about
/// the whole test.
fn record_check<R: Record>(columns: &[String], whole: bool) -> RecordCheck {
    let at: Vec<(&'static Field<R>, usize)> = R::FIELDS
        .iter()
        .filter_map(|f| Some((f, columns.iter().position(|c| c == f.column)?)))
        .collect();
    Box::new(move |row: &[Cell], ctx: &Ctx| {
        let mut r = R::default();
        for (f, i) in &at {
            if let Err(want) = set_stored(&mut r, f, row[*i].clone()) {
                let why = format!("expected {want}, found {}", found(&row[*i]));
                return Some((f.column.to_string(), why));
            }
        }
        let mut errors = FieldErrors::default();
        field::check_fields(&mut r, ctx, &mut errors);
        if whole {
            r.check_more(ctx, &mut errors);
        }
        errors
            .first()
            .map(|(path, message)| (path, message.to_string()))
    })
}
