//! What an import admits, checked before anything is written: every cell has the stored type
//! its column declares, and every row of a record table passes its record's checks (the same
//! declarations, limits and rules as the forms and the record API), so a value that would break
//! a page later (`builds.facing_od_mm = "abc"`, a facing wider than any clutch) is refused with
//! the table, row and column it is in.

use super::{Cell, Export, ExportError, Table};
use crate::clutch::units::Units;
use crate::records::FieldErrors;
use crate::records::date::{Date, ShopZone};
use crate::records::field::{self, Ctx, Field, Record, RecordVisitor, Value, for_table};

/// Where a row is, for messages: `table "builds", row 3 (id 7)`. Rows count from 1 in the
/// document's order.
pub(super) fn place(table: &Table, row: usize) -> String {
    let id = table
        .columns
        .iter()
        .position(|c| c == "id")
        .and_then(|i| match table.rows[row].get(i) {
            Some(Cell::Integer(id)) => Some(format!(" (id {id})")),
            _ => None,
        })
        .unwrap_or_default();
    format!("table {:?}, row {}{id}", table.name, row + 1)
}

/// A refusal naming the cell: `table "builds", row 3 (id 7), column "facing_od_mm": ...`.
fn refused(table: &Table, row: usize, column: &str, why: impl std::fmt::Display) -> ExportError {
    ExportError::Refused(format!("{}, column {column:?}: {why}", place(table, row)))
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

/// Refuses a cell whose stored type is not its column's: text in a number column would be kept
/// as text by SQLite and fail when a page reads it. `declared` gives each column's declared
/// type in the target database.
pub(super) fn stored_types(
    table: &Table,
    declared: &[(String, String)],
) -> Result<(), ExportError> {
    let wanted: Vec<Option<Stored>> = table
        .columns
        .iter()
        .map(|c| {
            declared
                .iter()
                .find(|(name, _)| name == c)
                .and_then(|(_, t)| Stored::of(t))
        })
        .collect();
    for (n, row) in table.rows.iter().enumerate() {
        for ((column, cell), want) in table.columns.iter().zip(row).zip(&wanted) {
            if let Some(want) = want
                && !want.admits(cell)
            {
                return Err(refused(
                    table,
                    n,
                    column,
                    format!("expected {}, found {}", want.words(), found(cell)),
                ));
            }
        }
    }
    Ok(())
}

/// What the record checks of imported rows run with: storage units (the stored values are
/// metric, as in the record API) and a today late enough for history: the later of the
/// server's today and the imported shop's today in its own time zone.
pub(super) fn import_ctx(export: &Export) -> Ctx {
    let server = Date::today(&ShopZone::server());
    let shop = export
        .tables
        .iter()
        .find(|t| t.name == "shop_settings")
        .and_then(|t| {
            let i = t.columns.iter().position(|c| c == "time_zone")?;
            match t.rows.first()?.get(i)? {
                Cell::Text(zone) => ShopZone::parse(zone).ok(),
                _ => None,
            }
        })
        .map(|zone| Date::today(&zone));
    Ctx {
        units: Units::Metric,
        today: shop.map_or(server, |shop| shop.max(server)),
    }
}

/// Runs every row of every record table through its record's checks. A bench test's row holds
/// only the test's date and note (its springs are rows of `bench_springs`, checked on their
/// own), so it gets the field checks without the rules about the whole test.
pub(super) fn records(export: &Export, ctx: &Ctx) -> Result<(), ExportError> {
    struct Rows<'a> {
        table: &'a Table,
        ctx: &'a Ctx,
    }
    impl RecordVisitor for Rows<'_> {
        type Out = Result<(), ExportError>;
        fn visit<R: Record>(self) -> Self::Out {
            rows::<R>(self.table, self.ctx, R::WHOLE_ROW)
        }
    }
    for table in &export.tables {
        if let Some(result) = for_table(&table.name, Rows { table, ctx }) {
            result?;
        }
    }
    Ok(())
}

/// Each row of `table` as record `R` (its declared columns; a column the document lacks keeps
/// the record's default), checked field by field and, when `whole`, by the record's own rules.
fn rows<R: Record>(table: &Table, ctx: &Ctx, whole: bool) -> Result<(), ExportError> {
    let at: Vec<(&Field<R>, usize)> = R::FIELDS
        .iter()
        .filter_map(|f| Some((f, table.columns.iter().position(|c| c == f.column)?)))
        .collect();
    for (n, row) in table.rows.iter().enumerate() {
        let mut r = R::default();
        for (f, i) in &at {
            set_stored(&mut r, f, &row[*i]).map_err(|why| refused(table, n, f.column, why))?;
        }
        let mut errors = FieldErrors::default();
        field::check_fields(&mut r, ctx, &mut errors);
        if whole {
            r.check_more(ctx, &mut errors);
        }
        if let Some((path, message)) = errors.first() {
            return Err(refused(table, n, &path, message));
        }
    }
    Ok(())
}

/// Sets field `f` of `r` from its stored cell, the way `db::record` stores it: text as text,
/// numbers as reals (NULL when empty), whole numbers as integers, lists and torque curves as
/// JSON text, flags as 0 or 1.
fn set_stored<R: Record>(r: &mut R, f: &Field<R>, cell: &Cell) -> Result<(), String> {
    let wrong = |want: &str| format!("expected {want}, found {}", found(cell));
    match (&f.value, cell) {
        (
            Value::Text { set, .. } | Value::Date { set, .. } | Value::Choice { set, .. },
            Cell::Text(v),
        ) => set(r, v.clone()),
        (Value::Text { .. } | Value::Date { .. } | Value::Choice { .. }, _) => {
            return Err(wrong("text"));
        }
        (Value::Number { set, .. }, Cell::Null) => set(r, None),
        (Value::Number { set, .. }, Cell::Integer(v)) => set(r, Some(*v as f64)),
        (Value::Number { set, .. }, Cell::Real(v)) => set(r, Some(*v)),
        (Value::Number { .. }, _) => return Err(wrong("a number")),
        (Value::Whole { set, .. }, Cell::Integer(v)) => set(r, *v),
        (Value::Whole { .. }, _) => return Err(wrong("a whole number")),
        (Value::List { set, .. }, Cell::Text(v)) => match serde_json::from_str(v) {
            Ok(items) => set(r, items),
            Err(_) => return Err(wrong("a JSON list of numbers")),
        },
        (Value::List { .. }, _) => return Err(wrong("a JSON list of numbers")),
        (Value::Curve { set, .. }, Cell::Text(v)) => match serde_json::from_str(v) {
            Ok(points) => set(r, points),
            Err(_) => return Err(wrong("a JSON list of [rpm, N*m] pairs")),
        },
        (Value::Curve { .. }, _) => return Err(wrong("a JSON list of [rpm, N*m] pairs")),
        (Value::Flag { set, .. }, Cell::Integer(v @ (0 | 1))) => set(r, *v == 1),
        (Value::Flag { .. }, _) => return Err(wrong("0 or 1")),
    }
    Ok(())
}
