//! Every record field declared once: its column (also its JSON name), its form input, its
//! label, what kind of value it holds and the limit it must meet. Reading a form, prefilling
//! one, the range checks and their messages, the SQL column lists and the History view are all
//! worked out from these declarations, so no unit or name is ever guessed from spelling.

use serde_json::Value as Json;

use super::date::Date;
use super::measure::{
    EngineSpeed, Force, Grams, Length, LeverGain, Mass, Seconds, SpringRate, Temperature, Torque,
};
use super::{FieldErrors, FormData};
use clutch::quantity::{Kind, Limit};
use clutch::units::Units;

/// What a check needs to know beyond the record: the units the person reads (so messages quote
/// limits in them) and the shop's today (so a date cannot lie in the future).
#[derive(Debug, Clone, Copy)]
pub struct Ctx {
    pub units: Units,
    pub today: Date,
}

/// One stored field of record `R`.
pub struct Field<R: 'static> {
    /// Column and JSON name, in storage units (`facing_od_mm`).
    pub column: &'static str,
    /// The form input's name (`facing_od`), in the shop's units.
    pub form: &'static str,
    /// What people call it ("Facing outer diameter").
    pub label: &'static str,
    /// More words a form shows after the label ("optional; blank counts as 0"); empty for none.
    pub hint: &'static str,
    /// The unit a form shows beside the input when it is not the unit of the value's kind
    /// (":1" for a gear ratio); empty for the kind's own.
    pub unit: &'static str,
    pub value: Value<R>,
}

impl<R> Field<R> {
    /// The same field with `hint` shown after its label on forms.
    pub const fn hint(mut self, hint: &'static str) -> Self {
        self.hint = hint;
        self
    }

    /// The same field with `unit` shown beside its input instead of its kind's unit.
    pub const fn unit(mut self, unit: &'static str) -> Self {
        self.unit = unit;
        self
    }
}

/// Declares one field of a record from the record's own field name, which is also its column
/// and its JSON name; the accessors are written from that name:
///
/// - `field!(text name, "name", "Name", 120, required)`: at most 120 characters; without
///   `required`, it may stay empty;
/// - `field!(number facing_od_mm, "facing_od", "Facing outer diameter", limits::FACING_DIAMETER,
///   required)`: a measured value, held as [`NumberSlot`] says;
/// - `field!(whole disc_count, "disc_count", "Discs", limits::DISC_COUNT, default 1)`: a whole
///   number; without a default, required;
/// - `field!(number bind_margin_mm, "bind_margin", "Coil-bind margin", limits::BIND_MARGIN,
///   blank default_bind_margin())`: a blank input stores that value;
/// - `field!(list shim_stack_mm, "shim_stack", "Shim stack", limits::SHIM, limits::SHIM_COUNT,
///   "shim")`: numbers typed in one input, at most that many, each named by the last word in
///   messages;
/// - `field!(date run_on, "run_on", "Date")`, `field!(flag ..)`, `field!(curve ..)` and
///   `field!(choice status, "status", "Status", &CHOICES, blank "active")` (without `blank`, an
///   empty choice stays empty for its check).
///
/// A field read or written any other way is declared as a [`Field`] literal. The macro is used
/// inside `impl Record for R`, where `Self` is the record.
macro_rules! field {
    (@required) => { false };
    (@required required) => { true };
    (@default) => { None };
    (@default $d:expr) => { Some($d) };
    (@field $col:ident, $form:literal, $label:literal, $value:expr) => {
        $crate::records::field::Field {
            column: stringify!($col),
            form: $form,
            label: $label,
            hint: "",
            unit: "",
            value: $value,
        }
    };
    (text $col:ident, $form:literal, $label:literal, $max:expr $(, $req:ident)?) => {
        field!(@field $col, $form, $label, $crate::records::field::Value::Text {
            max_chars: $max,
            required: field!(@required $($req)?),
            get: |r: &Self| &r.$col,
            set: |r: &mut Self, v| r.$col = v,
        })
    };
    (number $col:ident, $form:literal, $label:literal, $limit:expr, blank $blank:expr) => {
        field!(@field $col, $form, $label, $crate::records::field::Value::Number {
            limit: $limit,
            required: false,
            get: |r: &Self| $crate::records::field::NumberSlot::read(&r.$col),
            set: |r: &mut Self, v| match v {
                Some(_) => $crate::records::field::NumberSlot::write(&mut r.$col, v),
                None => r.$col = $blank,
            },
        })
    };
    (number $col:ident, $form:literal, $label:literal, $limit:expr $(, $req:ident)?) => {
        field!(@field $col, $form, $label, $crate::records::field::Value::Number {
            limit: $limit,
            required: field!(@required $($req)?),
            get: |r: &Self| $crate::records::field::NumberSlot::read(&r.$col),
            set: |r: &mut Self, v| $crate::records::field::NumberSlot::write(&mut r.$col, v),
        })
    };
    (whole $col:ident, $form:literal, $label:literal, $limit:expr $(, default $d:expr)?) => {
        field!(@field $col, $form, $label, $crate::records::field::Value::Whole {
            limit: $limit,
            default: field!(@default $($d)?),
            get: |r: &Self| r.$col,
            set: |r: &mut Self, v| r.$col = v,
        })
    };
    (date $col:ident, $form:literal, $label:literal) => {
        field!(@field $col, $form, $label, $crate::records::field::Value::Date {
            get: |r: &Self| &r.$col,
            set: |r: &mut Self, v| r.$col = v,
        })
    };
    (choice $col:ident, $form:literal, $label:literal, $options:expr $(, blank $blank:literal)?) => {
        field!(@field $col, $form, $label, $crate::records::field::Value::Choice {
            options: $options,
            get: |r: &Self| &r.$col,
            set: |r: &mut Self, v| {
                $(let v = if v.is_empty() { $blank.to_string() } else { v };)?
                r.$col = v
            },
        })
    };
    (list $col:ident, $form:literal, $label:literal, $limit:expr, $max:expr, $item:literal) => {
        field!(@field $col, $form, $label, $crate::records::field::Value::List {
            limit: $limit,
            max_items: $max,
            item: $item,
            get: |r: &Self| r.$col.iter().map(|x| $crate::records::field::NumberSlot::read(x).unwrap_or(f64::NAN)).collect(),
            set: |r: &mut Self, v| {
                r.$col = v
                    .into_iter()
                    .map(|x| {
                        let mut item = Default::default();
                        $crate::records::field::NumberSlot::write(&mut item, Some(x));
                        item
                    })
                    .collect()
            },
        })
    };
    (flag $col:ident, $form:literal, $label:literal) => {
        field!(@field $col, $form, $label, $crate::records::field::Value::Flag {
            get: |r: &Self| r.$col,
            set: |r: &mut Self, v| r.$col = v,
        })
    };
    (curve $col:ident, $form:literal, $label:literal) => {
        field!(@field $col, $form, $label, $crate::records::field::Value::Curve {
            get: |r: &Self| &r.$col,
            set: |r: &mut Self, v| r.$col = v,
        })
    };
}
pub(crate) use field;

/// How a record holds a measured number, in its internal unit: an optional value is `None`
/// when blank; a required one holds NaN until its check refuses the blank; a counterweight
/// or lever mass left blank weighs nothing.
pub trait NumberSlot {
    fn read(&self) -> Option<f64>;
    fn write(&mut self, v: Option<f64>);
}

impl NumberSlot for f64 {
    fn read(&self) -> Option<f64> {
        Some(*self)
    }
    fn write(&mut self, v: Option<f64>) {
        *self = v.unwrap_or(f64::NAN);
    }
}

impl NumberSlot for Option<f64> {
    fn read(&self) -> Option<f64> {
        *self
    }
    fn write(&mut self, v: Option<f64>) {
        *self = v;
    }
}

impl NumberSlot for Grams {
    fn read(&self) -> Option<f64> {
        Some(self.g())
    }
    fn write(&mut self, v: Option<f64>) {
        *self = Grams::from_g(v.unwrap_or(0.0));
    }
}

macro_rules! number_slot {
    ($($q:ident: $unit:ident, $from:ident;)*) => {$(
        impl NumberSlot for $q {
            fn read(&self) -> Option<f64> {
                Some(self.$unit())
            }
            fn write(&mut self, v: Option<f64>) {
                *self = $q::$from(v.unwrap_or(f64::NAN));
            }
        }

        impl NumberSlot for Option<$q> {
            fn read(&self) -> Option<f64> {
                self.map($q::$unit)
            }
            fn write(&mut self, v: Option<f64>) {
                *self = v.map($q::$from);
            }
        }
    )*};
}

number_slot! {
    Length: mm, from_mm;
    Force: n, from_n;
    SpringRate: n_per_mm, from_n_per_mm;
    Torque: nm, from_nm;
    Mass: kg, from_kg;
    LeverGain: n_per_g, from_n_per_g;
    EngineSpeed: rpm, from_rpm;
    Temperature: c, from_c;
    Seconds: s, from_s;
}

/// The kind of value a field holds, how to reach it on the record, and its rules.
pub enum Value<R: 'static> {
    Text {
        max_chars: usize,
        required: bool,
        get: fn(&R) -> &str,
        set: fn(&mut R, String),
    },
    /// A measured number; `None` is an empty input.
    Number {
        limit: Limit,
        required: bool,
        get: fn(&R) -> Option<f64>,
        set: fn(&mut R, Option<f64>),
    },
    /// A whole number; an empty input takes `default`, or is required when there is none.
    Whole {
        limit: Limit,
        default: Option<i64>,
        get: fn(&R) -> i64,
        set: fn(&mut R, i64),
    },
    /// A list of numbers typed in one input, separated by commas or spaces; `item` names one
    /// entry in messages ("shim 2: ...").
    List {
        limit: Limit,
        max_items: usize,
        item: &'static str,
        get: fn(&R) -> Vec<f64>,
        set: fn(&mut R, Vec<f64>),
    },
    /// `rpm, torque` lines (a pasted dyno table).
    Curve {
        get: fn(&R) -> &[[f64; 2]],
        set: fn(&mut R, Vec<[f64; 2]>),
    },
    /// A calendar date, `YYYY-MM-DD`, not later than the day after the shop's today.
    Date {
        get: fn(&R) -> &str,
        set: fn(&mut R, String),
    },
    /// One of a fixed set of keys, each with its words.
    Choice {
        options: &'static [(&'static str, &'static str)],
        get: fn(&R) -> &str,
        set: fn(&mut R, String),
    },
    /// A yes/no box.
    Flag {
        get: fn(&R) -> bool,
        set: fn(&mut R, bool),
    },
}

/// A record type whose fields are declared in one table.
pub trait Record: Default + Sized + 'static {
    const FIELDS: &'static [Field<Self>];

    /// Whether one stored row holds the whole record (a bench test's springs are rows of a
    /// table of their own, so its row holds only the date and note).
    const WHOLE_ROW: bool = true;

    /// Rules between fields, with messages in `ctx.units`. Runs after the per-field checks; a
    /// field that already has a message keeps it (the first message per field wins).
    fn check_more(&mut self, _ctx: &Ctx, _errors: &mut FieldErrors) {}

    /// The declaration of the field stored in `column`.
    fn field(column: &str) -> Option<&'static Field<Self>> {
        Self::FIELDS.iter().find(|f| f.column == column)
    }

    /// Records a message for the field stored in `column` (or for a list item,
    /// `column[index]`), under both its column and its form name.
    fn fault(errors: &mut FieldErrors, path: &str, message: impl Into<String>) {
        let (base, index) = split_path(path);
        match Self::field(base) {
            Some(f) => errors.add_at(f.column, f.form, index, message),
            None => {
                debug_assert!(false, "no field stored in {base}");
                errors.add(path, message);
            }
        }
    }
}

/// `shim_stack_mm[2]` → (`shim_stack_mm`, Some(2)).
fn split_path(path: &str) -> (&str, Option<usize>) {
    super::list_item(path).map_or((path, None), |(base, i)| (base, Some(i)))
}

/// The stored column names of `R`, in declaration order (for SQL and exports).
pub fn columns<R: Record>() -> impl Iterator<Item = &'static str> {
    R::FIELDS.iter().map(|f| f.column)
}

/// A number as people type it ("1.905", "-0.5", "1e3"). Commas separate list items, so a
/// decimal comma is not a number here; NaN and infinities spelled out are refused.
pub fn parse_number(raw: &str) -> Option<f64> {
    let raw = raw.trim();
    let ok_chars = raw
        .chars()
        .all(|c| c.is_ascii_digit() || matches!(c, '.' | '-' | '+' | 'e' | 'E'));
    if !ok_chars || raw.is_empty() {
        return None;
    }
    raw.parse::<f64>().ok().filter(|v| v.is_finite())
}

/// Items of a typed list: separated by commas, semicolons, spaces or new lines.
fn list_items(raw: &str) -> impl Iterator<Item = &str> {
    raw.split([',', ';', ' ', '\n', '\t', '\r'])
        .map(str::trim)
        .filter(|s| !s.is_empty())
}

/// The rows of a pasted dyno table as (engine speed, torque) in the units typed. Accepts the
/// usual exports: two or more columns separated by tabs, semicolons, commas or spaces (the
/// first of those a line holds), with a decimal comma when columns are split by semicolons, and
/// an optional header line naming the columns: the engine speed is the column whose header says
/// rpm or speed, the torque the one that says torque or tq; without a header, the first two.
/// A line that cannot be read gives its message (line number and text as typed).
pub fn dyno_rows(raw: &str) -> Vec<Result<[f64; 2], String>> {
    let split = |line: &str| -> (Vec<String>, bool) {
        let (cells, decimal_comma): (Vec<&str>, bool) = if line.contains('\t') {
            (line.split('\t').collect(), false)
        } else if line.contains(';') {
            (line.split(';').collect(), true)
        } else if line.contains(',') {
            (line.split(',').collect(), false)
        } else {
            (line.split_whitespace().collect(), false)
        };
        let cells = cells
            .into_iter()
            .map(|c| c.trim().to_string())
            .filter(|c| !c.is_empty())
            .collect();
        (cells, decimal_comma)
    };
    let mut columns = (0, 1);
    let mut rows = Vec::new();
    let mut first = true;
    for (line_no, line) in raw.lines().enumerate() {
        let line = line.trim();
        if line.is_empty() {
            continue;
        }
        let (cells, decimal_comma) = split(line);
        let find = |words: &[&str]| {
            cells.iter().position(|c| {
                let c = c.to_lowercase();
                words.iter().any(|w| c.contains(w))
            })
        };
        let named = find(&["rpm", "speed"]).zip(find(&["torque", "tq"]));
        // A header: the first line when it holds words, or any line before the data that
        // names both columns.
        if rows.is_empty() && (named.is_some() || (first && line.chars().any(char::is_alphabetic)))
        {
            if let Some(named) = named {
                columns = named;
            }
            first = false;
            continue;
        }
        first = false;
        let number = |i: usize| {
            let cell = cells.get(i)?;
            let cell = if decimal_comma {
                cell.replace(',', ".")
            } else {
                cell.clone()
            };
            parse_number(&cell)
        };
        rows.push(match (number(columns.0), number(columns.1)) {
            (Some(rpm), Some(torque)) => Ok([rpm, torque]),
            _ => Err(format!(
                "line {}: expected an engine speed and a torque, got “{}”",
                line_no + 1,
                cells.join(" | ")
            )),
        });
    }
    rows
}

/// A number in the shop's display units as internal units.
fn number_in(kind: Kind, units: Units, raw: &str) -> Result<Option<f64>, &'static str> {
    if raw.is_empty() {
        return Ok(None);
    }
    parse_number(raw)
        .map(|v| Some(kind.from_shown(units, v)))
        .ok_or("enter a number")
}

/// One number typed on a form that is not a record (a target, a number of days), checked
/// against its limit, in internal units; `None` when empty or refused (with the message).
pub fn number(
    form: &FormData,
    name: &str,
    limit: Limit,
    units: Units,
    errors: &mut FieldErrors,
) -> Option<f64> {
    match number_in(limit.kind, units, form.get(name)) {
        Ok(Some(v)) if limit.kind == Kind::Count && v.fract() != 0.0 => {
            errors.add(name, "enter a whole number");
            None
        }
        Ok(Some(v)) if limit.admits(v) => Some(v),
        Ok(Some(_)) => {
            errors.add(name, limit.message(units));
            None
        }
        Ok(None) => None,
        Err(m) => {
            errors.add(name, m);
            None
        }
    }
}

/// Reads a record from a form typed in `units`. Text that does not parse is an error beside its
/// input; the person's text stays in the form for the re-rendered page.
pub fn read<R: Record>(form: &FormData, units: Units) -> (R, FieldErrors) {
    let mut r = R::default();
    let mut errors = FieldErrors::default();
    for f in R::FIELDS {
        let raw = form.get(f.form);
        let mut fault = |index: Option<usize>, m: String| errors.add_at(f.column, f.form, index, m);
        match &f.value {
            Value::Text { set, .. } | Value::Date { set, .. } | Value::Choice { set, .. } => {
                set(&mut r, raw.to_string())
            }
            Value::Number {
                limit,
                required,
                set,
                ..
            } => match number_in(limit.kind, units, raw) {
                Ok(None) if *required => {
                    fault(None, "required".into());
                    set(&mut r, Some(f64::NAN));
                }
                Ok(v) => set(&mut r, v),
                Err(m) => {
                    fault(None, m.into());
                    set(&mut r, Some(f64::NAN));
                }
            },
            Value::Whole { default, set, .. } => match (raw.is_empty(), default) {
                (true, Some(d)) => set(&mut r, *d),
                (true, None) => fault(None, "required".into()),
                (false, _) => match parse_number(raw) {
                    Some(v) if v.fract() == 0.0 && v.abs() < 1e15 => set(&mut r, v as i64),
                    Some(_) => fault(None, "enter a whole number".into()),
                    None => fault(None, "enter a number".into()),
                },
            },
            Value::List {
                limit, item, set, ..
            } => {
                let mut values = Vec::new();
                for (i, text) in list_items(raw).enumerate() {
                    match parse_number(text) {
                        Some(v) => values.push(limit.kind.from_shown(units, v)),
                        None => {
                            fault(
                                Some(i),
                                format!("{item} {}: “{text}” is not a number", i + 1),
                            );
                            values.push(f64::NAN);
                        }
                    }
                }
                set(&mut r, values);
            }
            Value::Curve { set, .. } => {
                let mut points = Vec::new();
                for row in dyno_rows(raw) {
                    match row {
                        Ok([rpm, torque]) => {
                            points.push([rpm, Kind::Torque.from_shown(units, torque)])
                        }
                        Err(message) => {
                            fault(Some(points.len()), message);
                            points.push([f64::NAN, f64::NAN]);
                        }
                    }
                }
                set(&mut r, points);
            }
            Value::Flag { set, .. } => set(&mut r, form.is_checked(f.form)),
        }
    }
    (r, errors)
}

/// Checks every field against its declaration, then the record's own rules. Fields that already
/// have a message (from reading the form) are not checked again.
pub fn check<R: Record>(
    mut r: R,
    ctx: &Ctx,
    mut errors: FieldErrors,
) -> Result<super::Checked<R>, FieldErrors> {
    check_fields(&mut r, ctx, &mut errors);
    r.check_more(ctx, &mut errors);
    errors.into_result(super::Checked(r))
}

/// Checks every field against its own declaration only (no rules between fields or records):
/// what an imported row of a table holding part of a record is checked with.
pub fn check_fields<R: Record>(r: &mut R, ctx: &Ctx, errors: &mut FieldErrors) {
    let units = ctx.units;
    for f in R::FIELDS {
        if errors.has(f.column) {
            continue;
        }
        let mut fault = |index: Option<usize>, m: String| errors.add_at(f.column, f.form, index, m);
        match &f.value {
            Value::Text {
                max_chars,
                required,
                get,
                set,
            } => {
                let text = get(r).trim().to_string();
                if *required && text.is_empty() {
                    fault(None, "required".into());
                } else if text.chars().count() > *max_chars {
                    fault(None, format!("too long (at most {max_chars} characters)"));
                }
                set(r, text);
            }
            Value::Number {
                limit,
                required,
                get,
                ..
            } => match get(r) {
                Some(v) if v.is_nan() && *required => fault(None, "required".into()),
                Some(v) if !limit.admits(v) => fault(None, limit.message(units)),
                None if *required => fault(None, "required".into()),
                _ => {}
            },
            Value::Whole { limit, get, .. } => {
                if !limit.admits(get(r) as f64) {
                    fault(None, limit.message(units));
                }
            }
            Value::List {
                limit,
                max_items,
                item,
                get,
                ..
            } => {
                let values = get(r);
                if values.len() > *max_items {
                    fault(None, format!("at most {max_items} entries"));
                }
                for (i, v) in values.iter().enumerate() {
                    if !limit.admits(*v) {
                        fault(
                            Some(i),
                            format!("{item} {}: {}", i + 1, limit.message(units)),
                        );
                    }
                }
            }
            Value::Curve { get, set } => match check_curve(get(r), f.column, units) {
                Ok(points) => set(r, points),
                Err((index, m)) => fault(index, m),
            },
            Value::Date { get, .. } => {
                if let Err(m) = Date::parse(get(r))
                    .map_err(String::from)
                    .and_then(|d| d.not_after(ctx.today))
                {
                    fault(None, m);
                }
            }
            Value::Choice { options, get, .. } => {
                let key = get(r);
                if !options.iter().any(|(k, _)| *k == key) {
                    let words: Vec<&str> = options.iter().map(|(_, w)| *w).collect();
                    fault(None, format!("choose {}", words.join(", ")));
                }
            }
            Value::Flag { .. } => {}
        }
    }
}

/// A torque curve's points checked one by one (engine speed and torque limits), then as a curve
/// (distinct speeds, at least three points). Returns the points sorted by engine speed.
fn check_curve(
    points: &[[f64; 2]],
    column: &str,
    units: Units,
) -> Result<Vec<[f64; 2]>, (Option<usize>, String)> {
    if points.is_empty() {
        return Ok(Vec::new());
    }
    let pairs: Vec<(f64, f64)> = points.iter().map(|p| (p[0], p[1])).collect();
    match clutch::capacity::torque_curve::TorqueCurve::new(&pairs, column, units) {
        Ok(curve) => Ok(curve.points().map(|(r, t)| [r, t]).collect()),
        Err(e) => Err((split_path(&e.field).1, e.message)),
    }
}

/// Reads an edit of the `stored` record from a form typed in `units`, as [`read`] does, except
/// that a number the person left as the form showed it keeps its stored value exactly: a value
/// whose text reads as the same number [`to_form`] prefilled (list items and torque-curve rows
/// one by one) was not edited, so the rounding of the display never reaches the database (a
/// 0.381 mm limit shown as 0.38 mm stays 0.381 mm when the form is saved untouched).
pub fn read_edit<R: Record>(form: &FormData, units: Units, stored: &R) -> (R, FieldErrors) {
    let (mut r, errors) = read::<R>(form, units);
    let shown = to_form(stored, units);
    let same = |a: &str, b: &str| match (parse_number(a), parse_number(b)) {
        (Some(x), Some(y)) => x == y,
        _ => a.trim().is_empty() && b.trim().is_empty(),
    };
    for f in R::FIELDS {
        let (typed, prefilled) = (form.get(f.form), shown.get(f.form));
        match &f.value {
            Value::Number { get, set, .. } if same(typed, prefilled) => set(&mut r, get(stored)),
            Value::List { get, set, .. } => {
                let (typed, prefilled): (Vec<&str>, Vec<&str>) =
                    (list_items(typed).collect(), list_items(prefilled).collect());
                let mut values = get(&r).to_vec();
                let old = get(stored);
                for (i, v) in values.iter_mut().enumerate() {
                    if let (Some(t), Some(p), Some(o)) =
                        (typed.get(i), prefilled.get(i), old.get(i))
                        && same(t, p)
                    {
                        *v = *o;
                    }
                }
                set(&mut r, values);
            }
            Value::Curve { get, set, .. } => {
                let (typed, prefilled) = (dyno_rows(typed), dyno_rows(prefilled));
                let mut points = get(&r).to_vec();
                let old = get(stored);
                // Rows line up with the points only when every typed row was read.
                if typed.len() == points.len() {
                    for (i, p) in points.iter_mut().enumerate() {
                        if let (Some(Ok(t)), Some(Ok(s)), Some(o)) =
                            (typed.get(i), prefilled.get(i), old.get(i))
                            && t == s
                        {
                            *p = *o;
                        }
                    }
                }
                set(&mut r, points);
            }
            _ => {}
        }
    }
    (r, errors)
}

/// `v` with `decimals`, trailing zeros dropped ("1.500" → "1.5").
fn trimmed(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// The form prefilled from a stored record, in `units`.
pub fn to_form<R: Record>(r: &R, units: Units) -> FormData {
    let mut form = FormData::default();
    for f in R::FIELDS {
        let text = match &f.value {
            Value::Text { get, .. } | Value::Date { get, .. } | Value::Choice { get, .. } => {
                get(r).to_string()
            }
            Value::Number { limit, get, .. } => get(r)
                .filter(|v| v.is_finite())
                .map(|v| {
                    let kind = limit.kind;
                    trimmed(kind.to_shown(units, v), kind.entry_decimals(units))
                })
                .unwrap_or_default(),
            Value::Whole { get, .. } => get(r).to_string(),
            Value::List { limit, get, .. } => {
                let kind = limit.kind;
                let items: Vec<String> = get(r)
                    .iter()
                    .map(|v| {
                        format!(
                            "{:.*}",
                            kind.entry_decimals(units),
                            kind.to_shown(units, *v)
                        )
                    })
                    .collect();
                items.join(", ")
            }
            Value::Curve { get, .. } => {
                let lines: Vec<String> = get(r)
                    .iter()
                    .map(|[rpm, nm]| {
                        format!("{rpm:.0},{}", trimmed(Kind::Torque.to_shown(units, *nm), 1))
                    })
                    .collect();
                lines.join("\n")
            }
            Value::Flag { get, .. } => if get(r) { "on" } else { "" }.to_string(),
        };
        form.set(f.form, text);
    }
    form
}

/// Each field with a value, as the forms show it and with its unit: (label, "1.75 turns").
pub fn shown<R: Record>(r: &R, units: Units) -> Vec<(&'static str, String)> {
    let form = to_form(r, units);
    R::FIELDS
        .iter()
        .filter_map(|f| {
            let text = form.get(f.form);
            let words = match &f.value {
                Value::Number { limit, .. } | Value::List { limit, .. } if !text.is_empty() => {
                    match limit.kind.symbol(units) {
                        "" => text.to_string(),
                        "turns" if text == "1" => "1 turn".into(),
                        unit => format!("{text} {unit}"),
                    }
                }
                Value::Curve { get, .. } => {
                    let n = get(r).len();
                    format!("{n} point{}", if n == 1 { "" } else { "s" })
                }
                Value::Flag { get, .. } => if get(r) { "yes" } else { "no" }.into(),
                _ => text.to_string(),
            };
            (!words.is_empty()).then_some((f.label, words))
        })
        .collect()
}

/// What differs between two versions of a record, as the forms show it: "Label: before → after"
/// (a dash for an empty value), in declaration order; `skip` names columns left out.
pub fn changes<R: Record>(before: &R, after: &R, units: Units, skip: &[&str]) -> Vec<String> {
    let (old, new) = (shown(before, units), shown(after, units));
    let of = |list: &[(&'static str, String)], label: &str| {
        list.iter()
            .find(|(l, _)| *l == label)
            .map_or("–".to_string(), |(_, v)| v.clone())
    };
    R::FIELDS
        .iter()
        .filter(|f| !skip.contains(&f.column))
        .filter_map(|f| {
            let (a, b) = (of(&old, f.label), of(&new, f.label));
            (a != b).then(|| format!("{}: {a} → {b}", f.label))
        })
        .collect()
}

/// A field's stored value (as the audit log keeps it, JSON in storage units) in words and the
/// shop's units, the way the pages show it.
pub fn show_stored<R: Record>(f: &Field<R>, stored: &Json, units: Units) -> String {
    const DASH: &str = "–";
    let number = |kind: Kind, v: &Json| v.as_f64().map_or(DASH.into(), |x| kind.show(units, x));
    match (&f.value, stored) {
        (_, Json::Null) => DASH.into(),
        (Value::Number { limit, .. }, v) => number(limit.kind, v),
        (Value::Whole { .. }, v) => v.as_i64().map_or(DASH.into(), |n| n.to_string()),
        (Value::List { limit, .. }, v) => {
            let items = list_of(v);
            if items.is_empty() {
                "none".into()
            } else {
                let shown: Vec<String> = items.iter().map(|x| number(limit.kind, x)).collect();
                shown.join(", ")
            }
        }
        (Value::Curve { .. }, v) => {
            let n = list_of(v).len();
            format!("{n} point{}", if n == 1 { "" } else { "s" })
        }
        (Value::Flag { .. }, v) => {
            if v.as_i64() == Some(1) || v.as_bool() == Some(true) {
                "yes".into()
            } else {
                "no".into()
            }
        }
        (Value::Choice { options, .. }, Json::String(s)) => options
            .iter()
            .find(|(k, _)| k == s)
            .map_or_else(|| s.clone(), |(_, w)| (*w).to_string()),
        (_, Json::String(s)) if s.is_empty() => "(empty)".into(),
        (_, Json::String(s)) => s.clone(),
        (_, other) => other.to_string(),
    }
}

/// A JSON list, or a JSON list stored as text (SQLite JSON columns read back as text).
fn list_of(v: &Json) -> Vec<Json> {
    match v {
        Json::Array(a) => a.clone(),
        Json::String(s) => serde_json::from_str::<Vec<Json>>(s).unwrap_or_default(),
        _ => Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn list_paths_split_into_column_and_index() {
        assert_eq!(split_path("shim_stack_mm[2]"), ("shim_stack_mm", Some(2)));
        assert_eq!(
            split_path("torque_curve_nm[0]"),
            ("torque_curve_nm", Some(0))
        );
        assert_eq!(split_path("label"), ("label", None));
    }

    #[test]
    fn dyno_exports_are_read_by_their_header() {
        // Tab-separated, three columns, header naming them in another order.
        let tab = "Power (hp)\tEngine speed (rpm)\tTorque (lbf·ft)\n250\t3000\t410\n330\t4000\t455";
        let rows: Vec<_> = dyno_rows(tab).into_iter().map(Result::unwrap).collect();
        assert_eq!(rows, vec![[3000.0, 410.0], [4000.0, 455.0]]);
        // Semicolons with decimal commas, no header: the first two columns.
        let semi = "3000;410,5;234\n4000;455;346";
        let rows: Vec<_> = dyno_rows(semi).into_iter().map(Result::unwrap).collect();
        assert_eq!(rows, vec![[3000.0, 410.5], [4000.0, 455.0]]);
        // A bad line is named with its text, tabs shown as column breaks, never as escapes.
        let bad = dyno_rows("rpm\ttorque\n3000\tx");
        let message = bad[0].clone().unwrap_err();
        assert_eq!(
            message,
            "line 2: expected an engine speed and a torque, got “3000 | x”"
        );
        assert!(!message.contains('\\'));
    }

    #[test]
    fn numbers_as_people_type_them() {
        assert_eq!(parse_number(" 1.905 "), Some(1.905));
        assert_eq!(parse_number("1e3"), Some(1000.0));
        assert_eq!(parse_number("NaN"), None);
        assert_eq!(parse_number("inf"), None);
        assert_eq!(parse_number("0,5"), None);
        assert_eq!(parse_number("1e400"), None);
    }
}
