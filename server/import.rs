//! The spreadsheet import, without IO: a CSV file read (comma, semicolon or tab, detected; a
//! decimal comma with semicolons; quoted cells; a header row), its columns mapped to record
//! fields by the file's own header, each number in the unit chosen for its column, each date in
//! the order chosen, and every row read and checked exactly as the forms read and check it
//! (`records::field::read` and `check`). `plan` then decides which customers and cars rows
//! share, and which rows meet a customer already in the shop. The web layer does the rest
//! (`web::api::import`): the database, the answer, the write.

use std::collections::{BTreeMap, HashMap};

use serde::{Deserialize, Serialize};
use serde_json::Value as Json;

use crate::records::build::BuildInput;
use crate::records::car::CarInput;
use crate::records::customer::CustomerInput;
use crate::records::field::{self, Field, Record, Value};
use crate::records::height::{HeightContext, HeightInput};
use crate::records::{Checked, Ctx, FieldErrors, FormData};
use clutch::quantity::Kind;
use clutch::units::{KG_PER_LB, MM_PER_IN, N_PER_LBF, Units};

/// The largest file taken (bytes of CSV text).
pub const MAX_BYTES: usize = 20 * 1024 * 1024;
/// The most data rows taken from one file.
pub const MAX_ROWS: usize = 50_000;
/// How many rows the answer shows as they would be stored.
pub const PREVIEW_ROWS: usize = 20;

/// N/mm per lbf/in, the exact factor the import converts spring rates with (lbf → N and in →
/// mm, NIST SP 811 B.8: 4.4482216152605 / 25.4).
pub const N_PER_MM_PER_LBF_PER_IN: f64 = 0.175126835246476;

/// The units a column may be given in.
pub const UNITS: &[&str] = &["in", "mm", "lbf", "N", "lbf/in", "N/mm", "lb", "kg", "g"];

/// The orders a date may be written in.
pub const DATE_ORDERS: &[(&str, &str)] = &[
    ("ymd", "year, month, day"),
    ("dmy", "day, month, year"),
    ("mdy", "month, day, year"),
];

/// One thing wrong: the line as an editor shows it (the header is line 1, blank lines
/// counted), the file's header text of the column (empty when the line as a whole is wrong)
/// and the form's message.
#[derive(Debug, Clone, PartialEq, Serialize, utoipa::ToSchema)]
pub struct Problem {
    pub line: u64,
    pub column: String,
    pub message: String,
}

impl Problem {
    fn new(line: u64, column: impl Into<String>, message: impl Into<String>) -> Self {
        Self {
            line,
            column: column.into(),
            message: message.into(),
        }
    }
}

/// What the person chose: which header column holds which field (`customer_name` → "Name"),
/// the unit of numeric columns (by header text) and the order dates are written in. Kept per
/// header for the next file (`db::imports`).
#[derive(Debug, Clone, Default, PartialEq, Deserialize, Serialize, utoipa::ToSchema)]
#[serde(default)]
pub struct Mapping {
    pub columns: BTreeMap<String, String>,
    pub units: BTreeMap<String, String>,
    pub date_order: String,
}

/// A file read: its header and its data rows (line, trimmed cells), blank rows left out.
#[derive(Debug, Clone)]
pub struct Sheet {
    pub header: Vec<String>,
    pub header_line: u64,
    pub rows: Vec<(u64, Vec<String>)>,
    pub delimiter: u8,
}

impl Sheet {
    /// The delimiter in words.
    pub fn delimiter_words(&self) -> &'static str {
        match self.delimiter {
            b';' => "semicolons (decimal commas read)",
            b'\t' => "tabs",
            _ => "commas",
        }
    }

    fn decimal_comma(&self) -> bool {
        self.delimiter == b';'
    }
}

/// The delimiter of a file: whichever of tab, semicolon and comma its first non-blank line
/// holds most of outside quotes (a comma on a tie, or when it holds none).
fn delimiter(text: &str) -> u8 {
    let line = text.lines().find(|l| !l.trim().is_empty()).unwrap_or("");
    let (mut quoted, mut counts) = (false, [0usize; 3]);
    for c in line.chars() {
        match c {
            '"' => quoted = !quoted,
            '\t' if !quoted => counts[0] += 1,
            ';' if !quoted => counts[1] += 1,
            ',' if !quoted => counts[2] += 1,
            _ => {}
        }
    }
    let best = counts.iter().copied().max().unwrap_or(0);
    if best == 0 || counts[2] == best {
        b','
    } else if counts[0] == best {
        b'\t'
    } else {
        b';'
    }
}

/// Reads a CSV file. A file that cannot be read at all (no header, too many rows, broken
/// quoting) is one problem.
pub fn read(text: &str) -> Result<Sheet, Problem> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let delimiter = delimiter(text);
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .has_headers(false)
        .flexible(true)
        .from_reader(text.as_bytes());
    let mut header: Option<(u64, Vec<String>)> = None;
    let mut rows = Vec::new();
    let mut record = csv::StringRecord::new();
    loop {
        match reader.read_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {}
            Err(e) => {
                let line = e.position().map_or(0, csv::Position::line);
                return Err(Problem::new(
                    line,
                    "",
                    format!("this line cannot be read as CSV ({e}); nothing was imported"),
                ));
            }
        }
        // The reader's position is where it began, before any blank lines it skipped: count
        // them, so the line is the one an editor shows.
        let (mut line, mut at) = record
            .position()
            .map_or((0, 0), |p| (p.line(), p.byte() as usize));
        let bytes = text.as_bytes();
        while at < bytes.len() && matches!(bytes[at], b'\n' | b'\r') {
            if bytes[at] == b'\n' {
                line += 1;
            }
            at += 1;
        }
        let cells: Vec<String> = record.iter().map(|c| c.trim().to_string()).collect();
        if cells.iter().all(String::is_empty) {
            continue;
        }
        if header.is_none() {
            header = Some((line, cells));
            continue;
        }
        if rows.len() == MAX_ROWS {
            return Err(Problem::new(
                line,
                "",
                format!(
                    "the file has more than {} rows; split it into files of at most {} rows and import each",
                    group(MAX_ROWS),
                    group(MAX_ROWS)
                ),
            ));
        }
        rows.push((line, cells));
    }
    let Some((header_line, header)) = header else {
        return Err(Problem::new(
            1,
            "",
            "the file is empty: it needs a header row naming its columns",
        ));
    };
    Ok(Sheet {
        header,
        header_line,
        rows,
        delimiter,
    })
}

/// 50000 → "50,000".
fn group(n: usize) -> String {
    let s = n.to_string();
    let mut out = String::new();
    for (i, c) in s.chars().enumerate() {
        if i > 0 && (s.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    out
}

/// The records a row may fill, by the prefix of their mapping keys.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Part {
    Customer,
    Car,
    Build,
    Measurement,
}

impl Part {
    const ALL: [Part; 4] = [Part::Customer, Part::Car, Part::Build, Part::Measurement];

    fn prefix(self) -> &'static str {
        match self {
            Part::Customer => "customer",
            Part::Car => "car",
            Part::Build => "build",
            Part::Measurement => "measurement",
        }
    }

    fn words(self) -> &'static str {
        match self {
            Part::Customer => "Customer",
            Part::Car => "Car",
            Part::Build => "Build",
            Part::Measurement => "Last cover height",
        }
    }
}

/// The measurement fields a sheet may give (the rest take their defaults: no shims pulled,
/// not a new disc).
const MEASUREMENT_COLUMNS: &[&str] = &["measured_on", "height_mm", "passes"];

/// One field a column can be mapped to.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Target {
    /// The mapping key (`build_spring_rate_n_per_mm`).
    pub key: String,
    /// "Build: Spring rate".
    pub label: String,
    pub group: &'static str,
    /// Units a column of it may be given in (empty: none apply).
    pub units: Vec<&'static str>,
    pub required: bool,
}

/// Every field a column can be mapped to, record by record.
pub fn targets() -> Vec<Target> {
    fn of<R: Record>(part: Part, only: Option<&[&str]>) -> Vec<Target> {
        R::FIELDS
            .iter()
            .filter(|f| only.is_none_or(|o| o.contains(&f.column)))
            .filter(|f| !matches!(f.value, Value::Curve { .. }))
            .map(|f| Target {
                key: format!("{}_{}", part.prefix(), f.column),
                label: f.label.to_string(),
                group: part.words(),
                units: kind_of(f)
                    .and_then(dimension)
                    .map(|(d, _)| d.units())
                    .unwrap_or_default(),
                required: required(f),
            })
            .collect()
    }
    let mut all = of::<CustomerInput>(Part::Customer, None);
    all.extend(of::<CarInput>(Part::Car, None));
    all.extend(of::<BuildInput>(Part::Build, None));
    all.extend(of::<HeightInput>(
        Part::Measurement,
        Some(MEASUREMENT_COLUMNS),
    ));
    all
}

fn kind_of<R>(f: &Field<R>) -> Option<Kind> {
    match &f.value {
        Value::Number { limit, .. } | Value::List { limit, .. } => Some(limit.kind),
        _ => None,
    }
}

/// Whether a row that fills the record must give this field (a whole number takes the form's
/// default, a measurement's pass count 0).
fn required<R: Record>(f: &Field<R>) -> bool {
    match &f.value {
        Value::Text { required, .. } | Value::Number { required, .. } => *required,
        // A whole number the form would start at a value it refuses (no springs).
        Value::Whole {
            default: None,
            limit,
            get,
            ..
        } => f.column != "passes" && !limit.admits(get(&R::default()) as f64),
        Value::Date { .. } => true,
        _ => false,
    }
}

/// What a unit measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Dim {
    Length,
    Force,
    Rate,
    Mass,
}

impl Dim {
    fn units(self) -> Vec<&'static str> {
        match self {
            Dim::Length => vec!["in", "mm"],
            Dim::Force => vec!["lbf", "N"],
            Dim::Rate => vec!["lbf/in", "N/mm"],
            Dim::Mass => vec!["lb", "kg", "g"],
        }
    }
}

/// What a field's values measure, and the unit the forms read them in when the shop works in
/// metric (the stored unit: mm, N, N/mm, kg, g).
fn dimension(kind: Kind) -> Option<(Dim, &'static str)> {
    match kind {
        Kind::Length | Kind::Pitch => Some((Dim::Length, "mm")),
        Kind::Force => Some((Dim::Force, "N")),
        Kind::Rate => Some((Dim::Rate, "N/mm")),
        Kind::VehicleMass => Some((Dim::Mass, "kg")),
        Kind::Grams => Some((Dim::Mass, "g")),
        _ => None,
    }
}

/// A unit symbol as typed (in a cell or a choice): its canonical spelling and dimension.
fn unit(symbol: &str) -> Option<(&'static str, Dim)> {
    Some(match symbol.trim().to_ascii_lowercase().as_str() {
        "in" | "\"" | "″" => ("in", Dim::Length),
        "mm" => ("mm", Dim::Length),
        "lbf" => ("lbf", Dim::Force),
        "n" => ("N", Dim::Force),
        "lbf/in" => ("lbf/in", Dim::Rate),
        "n/mm" => ("N/mm", Dim::Rate),
        "lb" => ("lb", Dim::Mass),
        "kg" => ("kg", Dim::Mass),
        "g" => ("g", Dim::Mass),
        _ => return None,
    })
}

/// `v` in unit `from` as unit `to` (same dimension), with the exact factors: 1 in = 25.4 mm,
/// 1 lbf = 4.4482216152605 N, 1 lbf/in = 0.175126835246476 N/mm, 1 lb = 0.45359237 kg (NIST SP
/// 811 B.8), 1 kg = 1000 g. One multiplication (or division by 1000), so the stored value is
/// the sheet's value times the factor, exactly as IEEE arithmetic gives it.
pub fn convert(v: f64, from: &str, to: &str) -> f64 {
    match (from, to) {
        (a, b) if a == b => v,
        ("in", "mm") => v * MM_PER_IN,
        ("lbf", "N") => v * N_PER_LBF,
        ("lbf/in", "N/mm") => v * N_PER_MM_PER_LBF_PER_IN,
        ("lb", "kg") => v * KG_PER_LB,
        ("lb", "g") => v * (KG_PER_LB * 1000.0),
        ("kg", "g") => v * 1000.0,
        ("g", "kg") => v / 1000.0,
        ("mm", "in") => v / MM_PER_IN,
        _ => v,
    }
}

/// The columns of each record, resolved against the header: field column → header index.
#[derive(Debug, Default)]
struct Resolved {
    parts: HashMap<&'static str, Vec<(&'static str, usize)>>,
    units: Vec<Option<&'static str>>,
    /// Header columns whose unit is "cell" (each cell carries its own).
    in_cell: Vec<bool>,
    date_order: Option<&'static str>,
}

impl Resolved {
    fn of(&self, part: Part) -> &[(&'static str, usize)] {
        self.parts.get(part.prefix()).map_or(&[], |v| v.as_slice())
    }
}

/// Checks the mapping against the header (problems on the header's line, each under the
/// column concerned) and resolves it.
fn resolve(sheet: &Sheet, mapping: &Mapping) -> (Resolved, Vec<Problem>) {
    let line = sheet.header_line;
    let mut problems = Vec::new();
    let mut r = Resolved {
        units: vec![None; sheet.header.len()],
        in_cell: vec![false; sheet.header.len()],
        ..Resolved::default()
    };
    let all = targets();
    let find_header = |h: &str| -> Vec<usize> {
        sheet
            .header
            .iter()
            .enumerate()
            .filter(|(_, x)| x.as_str() == h.trim())
            .map(|(i, _)| i)
            .collect()
    };
    let mut used: HashMap<usize, &str> = HashMap::new();
    for (key, header) in &mapping.columns {
        if header.trim().is_empty() {
            continue;
        }
        let Some(target) = all.iter().find(|t| &t.key == key) else {
            problems.push(Problem::new(
                line,
                header.clone(),
                format!("“{key}” is not a field the import knows"),
            ));
            continue;
        };
        let at = find_header(header);
        let i = match at.as_slice() {
            [i] => *i,
            [] => {
                problems.push(Problem::new(
                    line,
                    header.clone(),
                    format!("the file has no column “{header}” (for {})", target.key),
                ));
                continue;
            }
            _ => {
                problems.push(Problem::new(
                    line,
                    header.clone(),
                    "more than one column has this header; rename one",
                ));
                continue;
            }
        };
        if let Some(other) = used.insert(i, key.as_str()) {
            problems.push(Problem::new(
                line,
                header.clone(),
                format!("this column is already mapped to {other}"),
            ));
            continue;
        }
        let (prefix, column) = key.split_at(target.group_prefix_len());
        let (prefix, column) = (static_prefix(prefix), static_column(prefix, &column[1..]));
        r.parts.entry(prefix).or_default().push((column, i));
    }
    for (header, u) in &mapping.units {
        let u = u.trim();
        if u.is_empty() {
            continue;
        }
        let at = find_header(header);
        let Some(&i) = at.first() else {
            problems.push(Problem::new(
                line,
                header.clone(),
                format!("a unit is given for “{header}”, which the file does not have"),
            ));
            continue;
        };
        let Some(key) = used.get(&i) else { continue };
        let target = all.iter().find(|t| t.key == *key).expect("a known key");
        if u == "cell" {
            if target.units.is_empty() {
                problems.push(Problem::new(
                    line,
                    header.clone(),
                    format!("{} takes no unit", target.label),
                ));
            } else {
                r.in_cell[i] = true;
            }
            continue;
        }
        match unit(u) {
            Some((canon, _)) if UNITS.contains(&u) && target.units.contains(&canon) => {
                r.units[i] = Some(canon)
            }
            _ if target.units.is_empty() => problems.push(Problem::new(
                line,
                header.clone(),
                format!("{} takes no unit", target.label),
            )),
            _ => problems.push(Problem::new(
                line,
                header.clone(),
                format!(
                    "choose {}, or cell (each cell gives its unit)",
                    target.units.join(", ")
                ),
            )),
        }
    }
    r.date_order = DATE_ORDERS
        .iter()
        .map(|(k, _)| *k)
        .find(|k| *k == mapping.date_order.trim());
    let dated: Vec<usize> = [Part::Measurement]
        .iter()
        .flat_map(|p| r.of(*p).iter())
        .filter(|(c, _)| *c == "measured_on")
        .map(|(_, i)| *i)
        .collect();
    if r.date_order.is_none() {
        if let Some(&i) = dated.first() {
            problems.push(Problem::new(
                line,
                sheet.header[i].clone(),
                "choose the order the dates are written in (ymd, dmy or mdy)",
            ));
        } else if !mapping.date_order.trim().is_empty() {
            problems.push(Problem::new(line, "", "the date order is ymd, dmy or mdy"));
        }
    }
    // A record a row fills needs its required fields mapped; every row makes (or finds) its
    // customer and car.
    for part in Part::ALL {
        let mapped = r.of(part);
        let in_use = matches!(part, Part::Customer | Part::Car) || !mapped.is_empty();
        if !in_use {
            continue;
        }
        for t in all.iter().filter(|t| t.required && t.group == part.words()) {
            let column = &t.key[part.prefix().len() + 1..];
            if !mapped.iter().any(|(c, _)| *c == column) {
                problems.push(Problem::new(
                    line,
                    t.key.clone(),
                    format!(
                        "{}: {} is required; choose the column that holds it",
                        part.words(),
                        t.label
                    ),
                ));
            }
        }
    }
    (r, problems)
}

impl Target {
    fn group_prefix_len(&self) -> usize {
        self.key.find('_').unwrap_or(self.key.len())
    }
}

fn static_prefix(p: &str) -> &'static str {
    Part::ALL
        .iter()
        .map(|p| p.prefix())
        .find(|x| *x == p)
        .unwrap_or("customer")
}

/// The declared column name (a `'static` str) of a mapping key.
fn static_column(prefix: &str, column: &str) -> &'static str {
    fn find<R: Record>(c: &str) -> Option<&'static str> {
        R::FIELDS.iter().map(|f| f.column).find(|x| *x == c)
    }
    match prefix {
        "customer" => find::<CustomerInput>(column),
        "car" => find::<CarInput>(column),
        "build" => find::<BuildInput>(column),
        _ => find::<HeightInput>(column),
    }
    .unwrap_or("")
}

/// One row read and checked: each record it fills, as it would be stored.
#[derive(Debug, Clone)]
pub struct Row {
    pub line: u64,
    pub customer: Checked<CustomerInput>,
    pub car: Checked<CarInput>,
    pub build: Option<Checked<BuildInput>>,
    pub measurement: Option<Checked<HeightInput>>,
}

/// How a file's cells of one column are read: the kind of value, the unit the column names
/// (or, with `in_cell`, that each cell names), and whether decimals are written with commas.
#[derive(Debug, Clone, Copy)]
struct Cell<'a> {
    kind: Kind,
    column_unit: Option<&'a str>,
    in_cell: bool,
    decimal_comma: bool,
}

/// A number cell as the forms would read it: a decimal comma taken when the file is split by
/// semicolons, the unit of the column (or, with `in_cell`, of the cell) converted to the stored
/// unit. Text in a column that takes no unit goes to the form as it is (the form says what is
/// wrong with it).
fn number_cell(raw: &str, how: Cell) -> Result<String, String> {
    let Cell {
        kind,
        column_unit,
        in_cell,
        decimal_comma,
    } = how;
    let text = if decimal_comma {
        raw.replace(',', ".")
    } else {
        raw.to_string()
    };
    let Some((dim, stored)) = dimension(kind) else {
        return Ok(text);
    };
    let t = text.trim();
    let (number, from) = if in_cell {
        let split = t
            .char_indices()
            .find(|(_, c)| !(c.is_ascii_digit() || matches!(c, '.' | '-' | '+' | 'e' | 'E')))
            .map_or(t.len(), |(i, _)| i);
        let (n, u) = t.split_at(split);
        match unit(u) {
            Some((canon, d)) if d == dim => (n.trim(), canon),
            _ if u.trim().is_empty() => {
                return Err(format!(
                    "give the unit in the cell ({})",
                    dim.units().join(", ")
                ));
            }
            _ => {
                return Err(format!(
                    "“{}” is not a unit for this column ({})",
                    u.trim(),
                    dim.units().join(", ")
                ));
            }
        }
    } else {
        (t, column_unit.unwrap_or(stored))
    };
    match field::parse_number(number) {
        Some(v) => Ok(format!("{}", convert(v, from, stored))),
        None => Err("enter a number".into()),
    }
}

/// A list cell (shims): items split by commas, semicolons or spaces (only commas and
/// semicolons when each item carries its unit; no commas with decimal commas), each converted.
fn list_cell(raw: &str, how: Cell) -> Result<String, String> {
    let seps: &[char] = match (how.in_cell, how.decimal_comma) {
        (true, true) => &[';'],
        (true, false) => &[',', ';'],
        (false, true) => &[';', ' ', '\t'],
        (false, false) => &[',', ';', ' ', '\t'],
    };
    let items: Result<Vec<String>, String> = raw
        .split(seps)
        .map(str::trim)
        .filter(|s| !s.is_empty())
        .enumerate()
        .map(|(i, item)| number_cell(item, how).map_err(|m| format!("item {}: {m}", i + 1)))
        .collect();
    items.map(|v| v.join(" "))
}

/// A date cell in `order` as `YYYY-MM-DD`; never guessed: a cell that cannot be read in that
/// order is refused.
pub fn date_cell(raw: &str, order: &str) -> Result<String, String> {
    let words = DATE_ORDERS
        .iter()
        .find(|(k, _)| *k == order)
        .map_or("the chosen order", |(_, w)| w);
    let refuse = || format!("“{raw}” is not a date written {words} (as chosen for this file)");
    let parts: Vec<&str> = raw
        .trim()
        .split(['-', '/', '.', ' '])
        .filter(|p| !p.is_empty())
        .collect();
    if parts.len() != 3 || parts.iter().any(|p| !p.chars().all(|c| c.is_ascii_digit())) {
        return Err(refuse());
    }
    let (y, m, d) = match order {
        "ymd" => (parts[0], parts[1], parts[2]),
        "dmy" => (parts[2], parts[1], parts[0]),
        "mdy" => (parts[2], parts[0], parts[1]),
        _ => return Err(refuse()),
    };
    if y.len() != 4 || m.len() > 2 || d.len() > 2 {
        return Err(refuse());
    }
    let (y, m, d): (u32, u32, u32) = (
        y.parse().map_err(|_| refuse())?,
        m.parse().map_err(|_| refuse())?,
        d.parse().map_err(|_| refuse())?,
    );
    if !(1..=12).contains(&m) || !(1..=31).contains(&d) {
        return Err(refuse());
    }
    Ok(format!("{y:04}-{m:02}-{d:02}"))
}

/// Reads one record of a row through its form, as the page would: the row's cells (converted)
/// become the form's inputs, unmapped inputs keep the form's defaults. Cell problems are kept
/// by column; the form's own reading and checks give the rest.
fn read_part<R: Record>(
    cells: &[String],
    mapped: &[(&'static str, usize)],
    r: &Resolved,
    decimal_comma: bool,
    base: FormData,
) -> (R, FieldErrors) {
    let mut form = base;
    let mut errors = FieldErrors::default();
    for (column, i) in mapped {
        let Some(f) = R::field(column) else { continue };
        let raw = cells.get(*i).map_or("", String::as_str);
        if raw.is_empty() {
            continue;
        }
        let text = match &f.value {
            Value::Number { limit, .. } | Value::List { limit, .. } => {
                let how = Cell {
                    kind: limit.kind,
                    column_unit: r.units[*i],
                    in_cell: r.in_cell[*i],
                    decimal_comma,
                };
                if matches!(f.value, Value::List { .. }) {
                    list_cell(raw, how)
                } else {
                    number_cell(raw, how)
                }
            }
            Value::Whole { .. } => Ok(if decimal_comma {
                raw.replace(',', ".")
            } else {
                raw.to_string()
            }),
            Value::Date { .. } => date_cell(raw, r.date_order.unwrap_or("")),
            Value::Choice { options, .. } => options
                .iter()
                .find(|(k, w)| k.eq_ignore_ascii_case(raw) || w.eq_ignore_ascii_case(raw))
                .map(|(k, _)| (*k).to_string())
                .ok_or_else(|| {
                    let words: Vec<&str> = options.iter().map(|(_, w)| *w).collect();
                    format!("choose {}", words.join(", "))
                }),
            Value::Flag { .. } => match raw.to_ascii_lowercase().as_str() {
                "yes" | "y" | "true" | "1" | "x" | "on" => Ok("on".into()),
                "no" | "n" | "false" | "0" | "off" => Ok(String::new()),
                _ => Err("enter yes or no".into()),
            },
            Value::Text { .. } | Value::Curve { .. } => Ok(raw.to_string()),
        };
        match text {
            Ok(t) => form.set(f.form, t),
            Err(m) => errors.add_at(f.column, f.form, None, m),
        }
    }
    let (rec, read_errors) = field::read::<R>(&form, Units::Metric);
    for (path, m) in read_errors.iter() {
        let (base, index) =
            crate::records::list_item(&path).map_or((path.as_str(), None), |(b, i)| (b, Some(i)));
        if let Some(f) = R::field(base)
            && !errors.has(f.column)
        {
            errors.add_at(f.column, f.form, index, m.to_string());
        }
    }
    (rec, errors)
}

/// Turns a record's check failures into problems under the file's header text (or the mapping
/// key, for a field no column gives).
fn problems_of(
    errors: &FieldErrors,
    part: Part,
    mapped: &[(&'static str, usize)],
    header: &[String],
    line: u64,
    out: &mut Vec<Problem>,
) {
    for (path, message) in errors.iter() {
        let base = crate::records::list_item(&path).map_or(path.as_str(), |(b, _)| b);
        let column = match mapped.iter().find(|(c, _)| *c == base) {
            Some((_, i)) => header[*i].clone(),
            None => format!("{}_{base}", part.prefix()),
        };
        if !out
            .iter()
            .any(|p| p.line == line && p.column == column && p.message == message)
        {
            out.push(Problem::new(line, column, message));
        }
    }
}

/// Every row read and checked: the rows that passed and the problems of all (in line order).
pub fn check_rows(sheet: &Sheet, mapping: &Mapping, ctx: &Ctx) -> (Vec<Row>, Vec<Problem>) {
    let (r, mut problems) = resolve(sheet, mapping);
    if !problems.is_empty() {
        return (Vec::new(), problems);
    }
    let decimal_comma = sheet.decimal_comma();
    let base_customer = field::to_form(&CustomerInput::default(), Units::Metric);
    let base_car = field::to_form(&CarInput::default(), Units::Metric);
    let base_build = field::to_form(&BuildInput::default(), Units::Metric);
    let mut base_height = field::to_form(&HeightInput::default(), Units::Metric);
    base_height.set("passes", "0");
    let filled = |cells: &[String], part: Part| {
        r.of(part)
            .iter()
            .any(|(_, i)| cells.get(*i).is_some_and(|c| !c.is_empty()))
    };
    let mut rows = Vec::with_capacity(sheet.rows.len());
    for (line, cells) in &sheet.rows {
        let line = *line;
        let mut row_problems = Vec::new();
        macro_rules! part {
            ($t:ty, $part:expr, $base:expr, $check:expr) => {{
                let (rec, errors) =
                    read_part::<$t>(cells, r.of($part), &r, decimal_comma, $base.clone());
                match $check(rec, errors) {
                    Ok(c) => Some(c),
                    Err(errors) => {
                        problems_of(
                            &errors,
                            $part,
                            r.of($part),
                            &sheet.header,
                            line,
                            &mut row_problems,
                        );
                        None
                    }
                }
            }};
        }
        let customer = part!(CustomerInput, Part::Customer, base_customer, |rec, e| {
            field::check(rec, ctx, e)
        });
        let car = part!(CarInput, Part::Car, base_car, |rec, e| field::check(
            rec, ctx, e
        ));
        let build = if filled(cells, Part::Build) {
            part!(BuildInput, Part::Build, base_build, |rec, e| field::check(
                rec, ctx, e
            ))
            .map(Some)
        } else {
            Some(None)
        };
        let measurement = if filled(cells, Part::Measurement) {
            match &build {
                Some(Some(b)) => {
                    // A row is checked alone (shims in the stack), as it was written down.
                    let hc = HeightContext {
                        shims_mm: b.shim_stack_mm.clone(),
                        ..HeightContext::default()
                    };
                    part!(
                        HeightInput,
                        Part::Measurement,
                        base_height,
                        |rec: HeightInput, e| rec.check_on(&hc, ctx, e)
                    )
                    .map(Some)
                }
                Some(None) => {
                    let (_, i) = r.of(Part::Measurement)[0];
                    row_problems.push(Problem::new(
                        line,
                        sheet.header[i].clone(),
                        "a cover height needs a build on the same row",
                    ));
                    None
                }
                None => Some(None),
            }
        } else {
            Some(None)
        };
        match (customer, car, build, measurement) {
            (Some(customer), Some(car), Some(build), Some(measurement))
                if row_problems.is_empty() =>
            {
                rows.push(Row {
                    line,
                    customer,
                    car,
                    build,
                    measurement,
                })
            }
            _ => problems.extend(row_problems),
        }
    }
    (rows, problems)
}

/// Who a new car belongs to, and which car a new build goes on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Owner {
    /// The n-th customer (car) this import makes.
    New(usize),
    /// A record already in the shop.
    Existing(i64),
}

/// A customer already in the shop, as duplicates are found: by phone digits or email.
#[derive(Debug, Clone)]
pub struct Known {
    pub id: i64,
    pub name: String,
    pub phone: String,
    pub email: String,
}

/// A car already in the shop (an attached row's car is found by its description).
#[derive(Debug, Clone)]
pub struct KnownCar {
    pub id: i64,
    pub customer_id: i64,
    pub description: String,
}

/// A row whose phone digits or email match a customer already in the shop.
#[derive(Debug, Clone, PartialEq, Serialize, utoipa::ToSchema)]
pub struct Duplicate {
    pub line: u64,
    pub customer_id: i64,
    pub name: String,
    /// What will be done: "attach", "skip", or "" while nobody has chosen.
    pub choice: String,
}

/// Attach a duplicate row to the customer already in the shop, or leave it out.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, Serialize, utoipa::ToSchema)]
#[serde(rename_all = "lowercase")]
pub enum DupChoice {
    Attach,
    Skip,
}

/// What a commit would write.
#[derive(Debug, Default)]
pub struct Plan {
    pub customers: Vec<Checked<CustomerInput>>,
    pub cars: Vec<(Owner, Checked<CarInput>)>,
    /// (the car, the build, its last cover height).
    pub builds: Vec<(Owner, Checked<BuildInput>, Option<Checked<HeightInput>>)>,
    pub attached: usize,
    pub skipped: usize,
    pub duplicates: Vec<Duplicate>,
    pub problems: Vec<Problem>,
    pub preview: Vec<Json>,
}

impl Plan {
    pub fn measurements(&self) -> usize {
        self.builds.iter().filter(|(_, _, m)| m.is_some()).count()
    }
}

fn digits(phone: &str) -> String {
    phone.chars().filter(char::is_ascii_digit).collect()
}

fn fold(s: &str) -> String {
    s.split_whitespace()
        .collect::<Vec<_>>()
        .join(" ")
        .to_lowercase()
}

/// Decides what rows share (the same customer: the same name with the same phone digits, or
/// the same email; the same car: the same customer and description) and which rows meet a
/// customer already in the shop. `phone_header` names the column a duplicate's problem is
/// shown under.
pub fn plan(
    rows: Vec<Row>,
    known: &[Known],
    known_cars: &[KnownCar],
    all: Option<DupChoice>,
    per_line: &BTreeMap<u64, DupChoice>,
    phone_header: &str,
) -> Plan {
    let mut by_digits: HashMap<String, &Known> = HashMap::new();
    let mut by_email: HashMap<String, &Known> = HashMap::new();
    for k in known {
        let d = digits(&k.phone);
        if !d.is_empty() {
            by_digits.entry(d).or_insert(k);
        }
        if !k.email.trim().is_empty() {
            by_email.entry(k.email.trim().to_lowercase()).or_insert(k);
        }
    }
    let mut cars_of: HashMap<(i64, String), i64> = HashMap::new();
    for c in known_cars {
        cars_of
            .entry((c.customer_id, fold(&c.description)))
            .or_insert(c.id);
    }
    let mut p = Plan::default();
    let mut customer_keys: HashMap<(String, String), usize> = HashMap::new();
    let mut car_keys: HashMap<(Owner, String), Owner> = HashMap::new();
    for row in rows {
        let c = &*row.customer;
        let (d, email) = (digits(&c.phone), c.email.trim().to_lowercase());
        let existing = (!d.is_empty())
            .then(|| by_digits.get(&d))
            .flatten()
            .or_else(|| (!email.is_empty()).then(|| by_email.get(&email)).flatten())
            .copied();
        let owner = if let Some(k) = existing {
            let choice = per_line.get(&row.line).copied().or(all);
            p.duplicates.push(Duplicate {
                line: row.line,
                customer_id: k.id,
                name: k.name.clone(),
                choice: match choice {
                    Some(DupChoice::Attach) => "attach".into(),
                    Some(DupChoice::Skip) => "skip".into(),
                    None => String::new(),
                },
            });
            match choice {
                Some(DupChoice::Skip) => {
                    p.skipped += 1;
                    continue;
                }
                Some(DupChoice::Attach) => {
                    p.attached += 1;
                    Owner::Existing(k.id)
                }
                None => {
                    p.problems.push(Problem::new(
                        row.line,
                        phone_header,
                        format!(
                            "the phone or email of customer #{} ({}) already in the shop: choose attach or skip",
                            k.id, k.name
                        ),
                    ));
                    continue;
                }
            }
        } else {
            let same = if d.is_empty() {
                format!("e:{email}")
            } else {
                format!("p:{d}")
            };
            let key = (fold(&c.name), same);
            let n = *customer_keys.entry(key).or_insert_with(|| {
                p.customers.push(row.customer.clone());
                p.customers.len() - 1
            });
            Owner::New(n)
        };
        let car_key = (owner, fold(&row.car.description));
        let car = match car_keys.get(&car_key) {
            Some(car) => *car,
            None => {
                let car = match owner {
                    Owner::Existing(id) => cars_of.get(&(id, car_key.1.clone())).copied(),
                    Owner::New(_) => None,
                }
                .map(Owner::Existing)
                .unwrap_or_else(|| {
                    p.cars.push((owner, row.car.clone()));
                    Owner::New(p.cars.len() - 1)
                });
                car_keys.insert(car_key, car);
                car
            }
        };
        if p.preview.len() < PREVIEW_ROWS {
            p.preview.push(serde_json::json!({
                "line": row.line,
                "customer_id": match owner { Owner::Existing(id) => Some(id), Owner::New(_) => None },
                "customer": &*row.customer,
                "car": &*row.car,
                "build": row.build.as_deref(),
                "measurement": row.measurement.as_deref(),
            }));
        }
        if let Some(b) = row.build {
            p.builds.push((car, b, row.measurement));
        }
    }
    p
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::records::date::Date;

    fn ctx() -> Ctx {
        Ctx {
            units: Units::Metric,
            today: Date::parse("2026-12-01").unwrap(),
        }
    }

    #[test]
    fn delimiters_are_detected_and_lines_count_blank_ones() {
        let sheet = read("Name;Rate\n\nAda Example;\"12,5\"\r\n\n;\nBo Sample;3\n").unwrap();
        assert_eq!(sheet.delimiter, b';');
        assert_eq!(sheet.header, vec!["Name", "Rate"]);
        let lines: Vec<u64> = sheet.rows.iter().map(|(l, _)| *l).collect();
        assert_eq!(lines, vec![3, 6]);
        assert_eq!(read("a\tb\n1\t2").unwrap().delimiter, b'\t');
        assert_eq!(read("a,b;c,d\n").unwrap().delimiter, b',');
        // A quoted cell holding the other delimiters and a line break.
        let sheet = read("Name,Notes\n\"Ex, Ada\",\"one; two\nthree\"\nCy,x\n").unwrap();
        assert_eq!(sheet.rows[0].1, vec!["Ex, Ada", "one; two\nthree"]);
        assert_eq!(sheet.rows[1].0, 4);
    }

    #[test]
    fn too_many_rows_is_one_problem_with_a_clear_message() {
        let mut text = String::from("Name\n");
        for i in 0..=MAX_ROWS {
            text.push_str(&format!("n{i}\n"));
        }
        let p = read(&text).unwrap_err();
        assert_eq!(p.line, MAX_ROWS as u64 + 2);
        assert!(p.message.contains("more than 50,000 rows"), "{}", p.message);
    }

    /// Factors as NIST SP 811 (B.8) gives them: 1 in = 25.4 mm, 1 lbf = 4.4482216152605 N,
    /// 1 lbf/in = 0.175126835246476 N/mm, 1 lb = 0.45359237 kg.
    #[test]
    fn units_convert_with_the_exact_factors() {
        assert_eq!(convert(2.1, "in", "mm"), 2.1 * 25.4); // NIST SP 811: 1 in = 25.4 mm
        assert_eq!(convert(100.0, "lbf", "N"), 100.0 * 4.4482216152605); // NIST SP 811: lbf
        assert_eq!(convert(300.0, "lbf/in", "N/mm"), 300.0 * 0.175126835246476); // lbf/in
        assert_eq!(convert(3000.0, "lb", "kg"), 3000.0 * 0.45359237); // NIST SP 811: 1 lb
        assert_eq!(convert(250.0, "g", "kg"), 0.25);
        assert_eq!(convert(0.5, "kg", "g"), 500.0);
        assert!((N_PER_MM_PER_LBF_PER_IN - N_PER_LBF / MM_PER_IN).abs() < 1e-15);
        // Units written in cells.
        assert_eq!(
            number_cell("2.100 in", cell(Kind::Length, None, true, false)),
            Ok(format!("{}", 2.1 * 25.4))
        );
        assert_eq!(
            number_cell("0.5\"", cell(Kind::Length, None, true, false)),
            Ok("12.7".into())
        );
        assert_eq!(
            number_cell("53 mm", cell(Kind::Length, None, true, false)),
            Ok("53".into())
        );
        assert!(number_cell("53", cell(Kind::Length, None, true, false)).is_err());
        assert!(number_cell("53 lbf", cell(Kind::Length, None, true, false)).is_err());
        assert_eq!(
            number_cell("12,5", cell(Kind::Rate, Some("N/mm"), false, true)),
            Ok("12.5".into())
        );
    }

    fn cell(kind: Kind, column_unit: Option<&str>, in_cell: bool, decimal_comma: bool) -> Cell<'_> {
        Cell {
            kind,
            column_unit,
            in_cell,
            decimal_comma,
        }
    }

    #[test]
    fn dates_are_read_in_the_chosen_order_only() {
        assert_eq!(date_cell("2019-03-04", "ymd").unwrap(), "2019-03-04");
        assert_eq!(date_cell("04/03/2019", "dmy").unwrap(), "2019-03-04");
        assert_eq!(date_cell("3/4/2019", "mdy").unwrap(), "2019-03-04");
        assert!(date_cell("2019-03-04", "mdy").is_err());
        assert!(date_cell("13/04/2019", "mdy").is_err());
        assert!(date_cell("3/4/19", "mdy").is_err());
        assert!(date_cell("43527", "ymd").is_err());
    }

    #[test]
    fn rows_are_checked_as_the_forms_check_them() {
        let sheet = read(
            "Name,Phone,Car,Rate,OD,ID,Checked on,Height,Springs\n\
             Ada Example,555 0101,Blue coupe,300,7.25 in,5 in,3/4/2019,2.1,6\n\
             Ada Example,(555) 0101,Blue coupe,310,7.25 in,5 in,2019-03-04,2.0,6\n\
             ,555,Red,x,7.25 in,5 in,,,6\n",
        )
        .unwrap();
        let mut m = Mapping::default();
        for (k, h) in [
            ("customer_name", "Name"),
            ("customer_phone", "Phone"),
            ("car_description", "Car"),
            ("build_spring_rate_n_per_mm", "Rate"),
            ("build_facing_od_mm", "OD"),
            ("build_facing_id_mm", "ID"),
            ("measurement_measured_on", "Checked on"),
            ("measurement_height_mm", "Height"),
            ("build_spring_count", "Springs"),
        ] {
            m.columns.insert(k.into(), h.into());
        }
        m.units.insert("Rate".into(), "lbf/in".into());
        m.units.insert("OD".into(), "cell".into());
        m.units.insert("ID".into(), "cell".into());
        m.units.insert("Height".into(), "in".into());
        // No date order chosen: a problem beside the date column, nothing read.
        let (rows, problems) = check_rows(&sheet, &m, &ctx());
        assert!(rows.is_empty());
        assert_eq!(problems[0].column, "Checked on");
        m.date_order = "mdy".into();
        let (rows, problems) = check_rows(&sheet, &m, &ctx());
        let at: Vec<(u64, &str)> = problems
            .iter()
            .map(|p| (p.line, p.column.as_str()))
            .collect();
        assert_eq!(at, vec![(3, "Checked on"), (4, "Name"), (4, "Rate")]);
        assert_eq!(problems[1].message, "required");
        assert_eq!(problems[2].message, "enter a number");
        assert_eq!(rows.len(), 1);
        let b = rows[0].build.as_ref().unwrap();
        assert_eq!(
            b.spring_rate_n_per_mm.map(|r| r.n_per_mm()),
            Some(300.0 * 0.175126835246476)
        );
        assert_eq!(b.facing_od_mm.mm(), 7.25 * 25.4);
        let h = rows[0].measurement.as_ref().unwrap();
        assert_eq!(h.height_mm.mm(), 2.1 * 25.4);
        assert_eq!(h.passes, 0);
        assert_eq!(h.measured_on, "2019-03-04");
    }
}
