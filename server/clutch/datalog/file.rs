//! Reading a logger's CSV export: the delimiter (comma, semicolon or tab) found from the first
//! lines, a decimal comma accepted with semicolons or tabs, metadata lines before the header and
//! a units line after it skipped, RFC 4180 quoting (the `csv` crate), blank cells kept as blanks
//! (NaN) for the caller to interpolate. Errors name the line (counted from 1, as an editor
//! shows it) and the column.

use super::{InTurn, Join};
use crate::InputError;

/// Lines looked at to find the delimiter.
const SNIFF_LINES: usize = 50;
/// Most characters of a header name or a cell quoted in a message (a longer one is cut, with
/// "…"): a message stays readable and small whatever the file holds.
pub const ECHO_CHARS: usize = 80;
/// Most header names listed in a message.
pub const ECHO_NAMES: usize = 20;
/// Most columns a file offered for mapping may have (the mapping page lists them).
pub const MAPPING_MAX_COLUMNS: usize = 1_000;
/// Most characters of a header name offered for mapping.
pub const MAPPING_MAX_NAME_CHARS: usize = 100;

/// `text` as quoted in a message: at most [`ECHO_CHARS`] characters.
pub fn echo(text: &str) -> String {
    match text.char_indices().nth(ECHO_CHARS) {
        Some((cut, _)) => format!("{}…", &text[..cut]),
        None => text.to_string(),
    }
}

/// The header names as listed in a message: the first [`ECHO_NAMES`], each through [`echo`].
pub fn echo_names(names: &[String]) -> String {
    let mut out: Vec<String> = names.iter().take(ECHO_NAMES).map(|n| echo(n)).collect();
    if names.len() > ECHO_NAMES {
        out.push(format!("and {} more", names.len() - ECHO_NAMES));
    }
    out.join(", ")
}

/// The layout of a file to be mapped by hand: refused past [`MAPPING_MAX_COLUMNS`] columns or
/// a header name past [`MAPPING_MAX_NAME_CHARS`] characters (no logger writes either; the
/// mapping page lists every name).
pub fn layout_for_mapping(text: &[u8]) -> Result<Layout, InputError> {
    let layout = layout(text)?;
    if layout.names.len() > MAPPING_MAX_COLUMNS {
        return Err(csv_error(format!(
            "the header (line {}) has {} columns; at most {MAPPING_MAX_COLUMNS} are accepted",
            layout.header_line,
            layout.names.len()
        )));
    }
    if let Some((i, n)) = layout
        .names
        .iter()
        .enumerate()
        .find(|(_, n)| n.chars().count() > MAPPING_MAX_NAME_CHARS)
    {
        return Err(csv_error(format!(
            "the name of column {} in the header (line {}), \"{}\", is {} characters long; at most {MAPPING_MAX_NAME_CHARS} are accepted",
            i + 1,
            layout.header_line,
            echo(n),
            n.chars().count()
        )));
    }
    Ok(layout)
}

/// What the top of a file says: how it is written and its column names.
#[derive(Debug, Clone, PartialEq)]
pub struct Layout {
    pub delimiter: u8,
    /// Numbers are written with a decimal comma (semicolon- or tab-separated files only).
    pub decimal_comma: bool,
    /// The header's names, trimmed, in file order.
    pub names: Vec<String>,
    /// Line of the header.
    pub header_line: u64,
    /// Line of the units line, if one was skipped.
    pub units_line: Option<u64>,
    /// The units line's cells, trimmed, in file order (empty without one).
    pub unit_names: Vec<String>,
    /// Line of the first data row.
    pub first_data_line: u64,
}

/// The wanted columns of a file, blanks as NaN, one entry per data row.
#[derive(Debug, Clone, PartialEq)]
pub struct Columns {
    pub layout: Layout,
    /// In the order asked for.
    pub values: Vec<Vec<f64>>,
    /// File line of each data row.
    pub lines: RowLines,
}

/// One column asked for: the request field that names it (for errors) and its header name.
#[derive(Debug, Clone, Copy)]
pub struct Wanted<'a> {
    pub field: &'a str,
    pub name: &'a str,
}

fn reader(text: &[u8], delimiter: u8) -> csv::Reader<&[u8]> {
    csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .has_headers(false)
        .flexible(true)
        .from_reader(text)
}

/// Exact powers of ten as f64 (10^0 to 10^22 are all exactly representable).
const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// A plain decimal ("-12.345", "0,5" with a decimal comma) of at most 15 significant digits,
/// without an exponent: its digits as an integer m < 10^15 < 2^53 and the count of decimals k
/// give m / 10^k, a single division of two exact doubles, so correctly rounded: the same value
/// `str::parse` gives (Clinger's fast path, "How to read floating point numbers accurately",
/// 1990). Anything else is `None` and goes the general way. Logger files are nearly all
/// such cells, and this is where reading them spends its time.
fn plain_decimal(cell: &[u8], point: u8) -> Option<f64> {
    let (negative, digits) = match cell.first()? {
        b'-' => (true, &cell[1..]),
        b'+' => (false, &cell[1..]),
        _ => (false, cell),
    };
    let (mut mantissa, mut count, mut decimals, mut seen_point) = (0u64, 0usize, 0usize, false);
    for &b in digits {
        match b {
            b'0'..=b'9' => {
                mantissa = mantissa * 10 + u64::from(b - b'0');
                count += 1;
                decimals += usize::from(seen_point);
            }
            _ if b == point && !seen_point => seen_point = true,
            _ => return None,
        }
        if count > 15 {
            return None;
        }
    }
    if count == 0 {
        return None;
    }
    let v = mantissa as f64 / POW10[decimals];
    Some(if negative { -v } else { v })
}

/// A cell as a number: `Some(NaN)` for a blank, `None` when it is not a finite number.
fn number(cell: &[u8], decimal_comma: bool) -> Option<f64> {
    let cell = cell.trim_ascii();
    if cell.is_empty() {
        return Some(f64::NAN);
    }
    if let Some(v) = plain_decimal(cell, if decimal_comma { b',' } else { b'.' }) {
        return Some(v);
    }
    let text = std::str::from_utf8(cell).ok()?;
    let v: f64 = if decimal_comma && text.contains(',') {
        text.replace(',', ".").parse().ok()?
    } else {
        text.parse().ok()?
    };
    v.is_finite().then_some(v)
}

fn is_numeric(record: &csv::ByteRecord, decimal_comma: bool) -> bool {
    let mut any = false;
    for cell in record {
        match number(cell, decimal_comma) {
            None => return false,
            Some(v) if v.is_finite() => any = true,
            Some(_) => {}
        }
    }
    any
}

/// The first lines of `text` (at most [`SNIFF_LINES`]).
fn head(text: &[u8]) -> &[u8] {
    let mut end = text.len();
    let mut lines = 0;
    for (i, &b) in text.iter().enumerate() {
        if b == b'\n' {
            lines += 1;
            if lines == SNIFF_LINES {
                end = i + 1;
                break;
            }
        }
    }
    &text[..end]
}

/// The delimiter: tab, then semicolon, then comma, the first that splits most of the first
/// lines into the same number (≥ 2) of fields; with it, that number of fields.
fn sniff(text: &[u8]) -> Option<(u8, usize)> {
    let sample = head(text);
    for delimiter in [b'\t', b';', b','] {
        let counts: Vec<usize> = reader(sample, delimiter)
            .byte_records()
            .filter_map(Result::ok)
            .map(|r| r.len())
            .filter(|&n| n > 0)
            .collect();
        let mut best = (0, 0);
        for &n in &counts {
            let freq = counts.iter().filter(|&&m| m == n).count();
            if n >= 2 && (freq, n) > (best.1, best.0) {
                best = (n, freq);
            }
        }
        if best.0 >= 2 && best.1 * 2 >= counts.len() {
            return Some((delimiter, best.0));
        }
    }
    None
}

/// The file line a record just read started on. (The reader's own record position counts
/// from where it started reading, blank lines skipped before the record included.)
fn start_line(text: &[u8], rdr: &csv::Reader<&[u8]>, record: &csv::ByteRecord) -> u64 {
    let end = rdr.position();
    let after_newline = end.byte() > 0 && text.get(end.byte() as usize - 1) == Some(&b'\n');
    let last = if after_newline {
        end.line() - 1
    } else {
        end.line()
    };
    // Only a quoted cell holds a line break; most records have none (a fast scan says so).
    let cells = record.as_slice();
    let inside = if cells.contains(&b'\n') {
        cells.iter().filter(|&&b| b == b'\n').count() as u64
    } else {
        0
    };
    last.saturating_sub(inside).max(1)
}

fn csv_error(message: impl Into<String>) -> InputError {
    InputError::new("csv", message)
}

/// The layout of a file: its delimiter, header and where the data starts. The header is the
/// line with the data's number of fields right before the first all-numeric row; when two
/// such lines come before the data, the second is taken as a units line and skipped (unless the
/// first has empty cells, the mark of a padded metadata line, and the second does not).
pub fn layout(text: &[u8]) -> Result<Layout, InputError> {
    layout_and_start(text).map(|(layout, _)| layout)
}

/// [`layout`], with the byte offset where the reading of the first data row began (the end of
/// the record before it).
fn layout_and_start(text: &[u8]) -> Result<(Layout, usize), InputError> {
    let (delimiter, width) = sniff(text).ok_or_else(|| {
        csv_error("no delimiter found: the first lines are not split by commas, semicolons or tabs into the same columns")
    })?;
    let decimal_comma = delimiter != b',';
    let mut rdr = reader(text, delimiter);
    let mut record = csv::ByteRecord::new();
    // Lines with the data's width that are not data, nearest last.
    let mut block: Vec<(u64, csv::ByteRecord)> = Vec::new();
    loop {
        let line = rdr.position().line();
        let from = rdr.position().byte() as usize;
        match rdr.read_byte_record(&mut record) {
            Ok(true) => {}
            Ok(false) => {
                return Err(csv_error(
                    "no data found: no row of numbers under a header line",
                ));
            }
            Err(e) => return Err(csv_error(format!("line {line}: {e}"))),
        }
        let line = start_line(text, &rdr, &record);
        if record.len() != width {
            block.clear();
            continue;
        }
        if !is_numeric(&record, decimal_comma) {
            block.push((line, record.clone()));
            continue;
        }
        let names_of = |r: &csv::ByteRecord| -> Vec<String> {
            r.iter()
                .map(|c| String::from_utf8_lossy(c).trim().to_string())
                .collect()
        };
        let has_blank = |r: &csv::ByteRecord| r.iter().any(|c| c.trim_ascii().is_empty());
        let (header, units, unit_record) = match block.len() {
            0 => {
                return Err(csv_error(format!(
                    "line {line}: the data starts with no header line above it"
                )));
            }
            1 => (&block[0], None, None),
            n => {
                let (a, b) = (&block[n - 2], &block[n - 1]);
                if has_blank(&a.1) && !has_blank(&b.1) {
                    (b, None, None)
                } else {
                    (a, Some(b.0), Some(&b.1))
                }
            }
        };
        let layout = Layout {
            delimiter,
            decimal_comma,
            names: names_of(&header.1),
            header_line: header.0,
            units_line: units,
            unit_names: unit_record.map(names_of).unwrap_or_default(),
            first_data_line: line,
        };
        return Ok((layout, from));
    }
}

/// The first `rows` data rows of a file as text, each cell cut to 24 characters (the mapping
/// page shows them beside the choice); fewer when the file has fewer.
pub fn preview(text: &[u8], rows: usize) -> Result<Vec<Vec<String>>, InputError> {
    let (layout, start) = layout_and_start(text)?;
    let mut out = Vec::with_capacity(rows);
    for record in reader(&text[start..], layout.delimiter)
        .byte_records()
        .take(rows)
    {
        let Ok(record) = record else { break };
        out.push(
            record
                .iter()
                .map(|c| String::from_utf8_lossy(c).trim().chars().take(24).collect())
                .collect(),
        );
    }
    Ok(out)
}

/// Index of the column called `name` (exact after trimming, else ignoring case).
pub fn find(names: &[String], name: &str) -> Option<usize> {
    let name = name.trim();
    names
        .iter()
        .position(|n| n == name)
        .or_else(|| names.iter().position(|n| n.eq_ignore_ascii_case(name)))
}

/// Reads the `wanted` columns of every data row. A missing column is an error on its field; a
/// cell that is not a number, or a row the CSV rules cannot read, names its line and column.
/// Rows shorter than the header leave the missing cells blank; empty lines are skipped.
pub fn read(text: &[u8], wanted: &[Wanted]) -> Result<Columns, InputError> {
    read_on(text, wanted, &InTurn)
}

/// [`read`], a file of [`HALVES_FROM_BYTES`] or more read as two halves handed to `join`
/// (the caller decides whether they run at once; this crate starts no threads). The lower
/// half starts at the first line after the middle; it is kept only when the upper half's last
/// row ends exactly there, so a quoted line break across the middle, blank lines at it or an
/// error below it read as from the top down (the rest is then read again from the upper
/// half's end): the same numbers, lines and errors either way.
pub fn read_on(text: &[u8], wanted: &[Wanted], join: &impl Join) -> Result<Columns, InputError> {
    read_with(text, wanted, true, join, Cut::Middle(HALVES_FROM_BYTES))
}

/// Rows of fewer bytes are read in one go by [`read_on`]: a mebibyte reads in about 1.5 ms,
/// so below it there is little to gain against a second thread's start and the append of
/// the lower half.
pub const HALVES_FROM_BYTES: usize = 1 << 20;

/// Where [`read_with`] may split the rows in two.
#[derive(Debug, Clone, Copy)]
enum Cut {
    /// At the first line start after the middle of the rows, when they are at least this many
    /// bytes and the halves are read at once.
    Middle(usize),
    /// At this byte, when a line starts there below the header (the tests try every one).
    #[cfg(test)]
    At(usize),
}

/// The file column of each wanted one, or the message naming the one that is missing and the
/// columns there are.
fn column_index(layout: &Layout, wanted: &[Wanted]) -> Result<Vec<usize>, InputError> {
    wanted
        .iter()
        .map(|w| {
            find(&layout.names, w.name).ok_or_else(|| {
                InputError::new(
                    w.field,
                    format!(
                        "no column named \"{}\" in the header (line {}); the file has: {}",
                        echo(w.name),
                        layout.header_line,
                        echo_names(&layout.names)
                    ),
                )
            })
        })
        .collect()
}

/// The number in `cell` (file column `i`, read for `w`, on `line`), or the message naming
/// where it is and what it says.
fn cell_value(
    layout: &Layout,
    w: &Wanted,
    i: usize,
    cell: &[u8],
    line: u64,
) -> Result<f64, InputError> {
    number(cell, layout.decimal_comma).ok_or_else(|| {
        InputError::new(
            w.field,
            format!(
                "line {line}, column \"{}\": \"{}\" is not a number",
                echo(&layout.names[i]),
                echo(String::from_utf8_lossy(cell).trim())
            ),
        )
    })
}

/// [`read_on`], with the fast path for plain rows on or off (off: every row goes through the CSV
/// engine; the tests compare the two) and the place to split at.
fn read_with(
    text: &[u8],
    wanted: &[Wanted],
    fast: bool,
    join: &impl Join,
    cut: Cut,
) -> Result<Columns, InputError> {
    let (layout, start) = layout_and_start(text)?;
    let index = column_index(&layout, wanted)?;
    let rows = Rows::new(&layout, wanted, &index, fast, text, start);
    let line = 1 + text[..start].iter().filter(|&&b| b == b'\n').count() as u64;
    let line_start = |p: usize| p > start && p < text.len() && text[p - 1] == b'\n';
    let cut = match cut {
        Cut::Middle(from) if join.at_once() && text.len() - start >= from => {
            let middle = start + (text.len() - start) / 2;
            text[middle..]
                .iter()
                .position(|&b| b == b'\n')
                .map(|k| middle + k + 1)
                .filter(|&p| line_start(p))
        }
        Cut::Middle(_) => None,
        #[cfg(test)]
        Cut::At(p) => Some(p).filter(|&p| line_start(p)),
    };
    let part = match cut {
        None => rows.read(start, text.len(), line, rows.guess(text.len() - start))?,
        Some(cut) => {
            let (top, bottom) = join.join(
                // The upper half's columns hold room for every row, so the lower one's are
                // added without moving them.
                || rows.read(start, cut, line, rows.guess(text.len() - start)),
                || rows.read(cut, text.len(), 1, rows.guess(text.len() - cut)),
            );
            // An error above the cut is the file's first.
            let mut top = top?;
            match bottom {
                Ok(bottom) if top.end == cut => {
                    // The lower half counted its lines from 1 at the cut.
                    top.append(bottom, top.line - 1);
                    top
                }
                _ => {
                    let rest = rows.read(top.end, text.len(), top.line, 0)?;
                    top.append(rest, 0);
                    top
                }
            }
        }
    };
    Ok(Columns {
        layout,
        values: part.values,
        lines: part.lines,
    })
}

/// What every row of one file is read with.
struct Rows<'a> {
    text: &'a [u8],
    layout: &'a Layout,
    wanted: &'a [Wanted<'a>],
    index: &'a [usize],
    fast: bool,
    /// For each cell of a row, the wanted column it goes to (the first, when a file column is
    /// mapped twice; the others are copied from it).
    slot: Vec<usize>,
    copies: Vec<(usize, usize)>,
    point: u8,
    /// The first data line's length, line break included (at least 1).
    first_len: usize,
}

/// The rows of `text[from..]` read up to the first one starting at or past `to`: their
/// columns and lines, where reading stopped and the line it stopped on.
struct Part {
    values: Vec<Vec<f64>>,
    lines: RowLines,
    end: usize,
    line: u64,
}

impl Part {
    /// `other`'s rows after these, its lines moved on by `shift`.
    fn append(&mut self, other: Part, shift: u64) {
        for (column, more) in self.values.iter_mut().zip(&other.values) {
            column.extend_from_slice(more);
        }
        self.lines.append(&other.lines, shift);
        self.end = other.end;
        self.line = other.line + shift;
    }
}

impl<'a> Rows<'a> {
    fn new(
        layout: &'a Layout,
        wanted: &'a [Wanted<'a>],
        index: &'a [usize],
        fast: bool,
        text: &'a [u8],
        start: usize,
    ) -> Self {
        let width = layout.names.len();
        let mut slot = vec![NOT_WANTED; width];
        let mut copies = Vec::new();
        for (k, &i) in index.iter().enumerate() {
            if slot[i] == NOT_WANTED {
                slot[i] = k;
            } else {
                copies.push((slot[i], k));
            }
        }
        let rest = &text[start..];
        let body = rest
            .iter()
            .position(|&b| b != b'\n' && b != b'\r')
            .unwrap_or(rest.len());
        let first_len = rest[body..]
            .iter()
            .position(|&b| b == b'\n')
            .map_or(rest.len() - body, |p| p + 1)
            .max(1);
        Self {
            text,
            layout,
            wanted,
            index,
            fast,
            slot,
            copies,
            point: if layout.decimal_comma { b',' } else { b'.' },
            first_len,
        }
    }

    /// The row count of `bytes` of rows guessed from the first data line's length (half as
    /// much again, as later rows tend to be longer), never more than a row per `width` bytes:
    /// the columns are not re-grown, and capacity never written takes no memory.
    fn guess(&self, bytes: usize) -> usize {
        ((bytes / self.first_len) * 3 / 2 + 16).min(bytes / self.slot.len().max(1) + 1)
    }

    /// The rows from `text[from]` (on line `line`) up to the first that starts at or past
    /// `to`, their columns made with room for `rows` rows.
    fn read(&self, from: usize, to: usize, mut line: u64, rows: usize) -> Result<Part, InputError> {
        // Held in locals: the loop below keeps them in registers.
        let (text, fast, delim, point) = (self.text, self.fast, self.layout.delimiter, self.point);
        let (slot, copies) = (&self.slot[..], &self.copies[..]);
        let mut values: Vec<Vec<f64>> = self
            .wanted
            .iter()
            .map(|_| Vec::with_capacity(rows))
            .collect();
        let mut lines = RowLines::default();
        let mut engine = Engine::new(self.layout.delimiter);
        let mut pos = from;
        loop {
            // Empty lines (and the second half of a CR LF) between rows are skipped, as the CSV
            // engine skips them; only LF counts a line, as the engine counts them.
            while let Some(&b) = text.get(pos) {
                if b == b'\n' {
                    line += 1;
                } else if b != b'\r' {
                    break;
                }
                pos += 1;
            }
            if pos >= to {
                break;
            }
            if fast {
                let rows = lines.len();
                if let Some(used) = plain_row(&text[pos..], delim, point, slot, &mut values) {
                    for &(from, to) in copies {
                        let v = values[from][rows];
                        values[to].push(v);
                    }
                    lines.push(line);
                    pos += used;
                    continue;
                }
                // Whatever the row pushed before it was handed over is taken back.
                for column in &mut values {
                    column.truncate(rows);
                }
            }
            let used = engine.record(&text[pos..]);
            let here = line;
            line += text[pos..pos + used]
                .iter()
                .filter(|&&b| b == b'\n')
                .count() as u64;
            pos += used;
            let fields = engine.fields();
            if fields == 0 || (fields == 1 && engine.cell(0).trim_ascii().is_empty()) {
                continue;
            }
            for ((w, &i), column) in self.wanted.iter().zip(self.index).zip(&mut values) {
                let cell = if i < fields { engine.cell(i) } else { b"" };
                column.push(cell_value(self.layout, w, i, cell, here)?);
            }
            lines.push(here);
        }
        Ok(Part {
            values,
            lines,
            end: pos,
            line,
        })
    }
}

/// The file line of each data row, kept as runs of consecutive lines (one run for a file
/// without blank lines or quoted line breaks among its rows).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct RowLines {
    /// (first row, its line) of each run.
    runs: Vec<(usize, u64)>,
    rows: usize,
}

impl RowLines {
    fn push(&mut self, line: u64) {
        let continues = self
            .runs
            .last()
            .is_some_and(|&(row, first)| first + (self.rows - row) as u64 == line);
        if !continues {
            self.runs.push((self.rows, line));
        }
        self.rows += 1;
    }

    /// `other`'s rows after these, each of its lines moved on by `shift`.
    fn append(&mut self, other: &RowLines, shift: u64) {
        for &(first, line) in &other.runs {
            let (row, line) = (self.rows + first, line + shift);
            let continues = self
                .runs
                .last()
                .is_some_and(|&(r, l)| l + (row - r) as u64 == line);
            if !continues {
                self.runs.push((row, line));
            }
        }
        self.rows += other.rows;
    }

    /// The line of data row `row` (0-based; must be below [`Self::len`]).
    pub fn get(&self, row: usize) -> u64 {
        let k = self.runs.partition_point(|&(first, _)| first <= row) - 1;
        let (first, line) = self.runs[k];
        line + (row - first) as u64
    }

    pub fn len(&self) -> usize {
        self.rows
    }

    pub fn is_empty(&self) -> bool {
        self.rows == 0
    }

    /// Every row's line.
    pub fn to_vec(&self) -> Vec<u64> {
        (0..self.rows).map(|r| self.get(r)).collect()
    }
}

/// The CSV engine the `csv` crate is built on (`csv_core`), reading one record at a time from
/// wherever a record starts, into one reused buffer.
struct Engine {
    core: csv_core::Reader,
    out: Vec<u8>,
    ends: Vec<usize>,
    fields: usize,
}

impl Engine {
    fn new(delimiter: u8) -> Self {
        let mut core = csv_core::ReaderBuilder::new().delimiter(delimiter).build();
        // The engine drops a byte-order mark only before its first input; the data rows are
        // not the start of the file, so it is shown a line break first (skipped as a blank
        // line).
        let _ = core.read_record(b"\n", &mut [0; 1], &mut [0; 1]);
        Self {
            core,
            out: vec![0; 4096],
            ends: vec![0; 64],
            fields: 0,
        }
    }

    /// Reads the record `input` starts with; returns the bytes it took (its line break
    /// included).
    fn record(&mut self, input: &[u8]) -> usize {
        use csv_core::ReadRecordResult as R;
        let (mut nin, mut nout, mut nend) = (0, 0, 0);
        loop {
            let (res, i, o, e) =
                self.core
                    .read_record(&input[nin..], &mut self.out[nout..], &mut self.ends[nend..]);
            nin += i;
            nout += o;
            nend += e;
            match res {
                // All the input was given: the empty rest passed next tells the engine the
                // data has ended.
                R::InputEmpty => {}
                R::OutputFull => self.out.resize(self.out.len() * 2, 0),
                R::OutputEndsFull => self.ends.resize(self.ends.len() * 2, 0),
                R::Record | R::End => {
                    self.fields = nend;
                    return nin;
                }
            }
        }
    }

    fn fields(&self) -> usize {
        self.fields
    }

    fn cell(&self, k: usize) -> &[u8] {
        let from = if k == 0 { 0 } else { self.ends[k - 1] };
        &self.out[from..self.ends[k]]
    }
}

/// [`plain_row`]'s mark of a cell no column is read from.
const NOT_WANTED: usize = usize::MAX;

/// One data row on the fast path: a row without quotes, whose wanted cells are read straight
/// from the bytes as they are scanned (plain decimals as [`plain_decimal`] reads them, any
/// other cell by [`number`]) and pushed onto their columns (`slot[cell]`, NaN for a blank or
/// missing cell). Returns the bytes used, up to the row's line break (not included). `None`
/// hands the row to the CSV engine, which reads it as it reads any row: a row with a quote, a
/// row of one cell, a cell that is not a number (so that the engine's path reports it); the
/// caller then takes back what this row pushed.
#[inline]
fn plain_row(
    rest: &[u8],
    delim: u8,
    point: u8,
    slot: &[usize],
    columns: &mut [Vec<f64>],
) -> Option<usize> {
    let mut p = 0;
    let mut cell = 0;
    loop {
        match slot.get(cell) {
            Some(&k) if k != NOT_WANTED => {
                let (v, end) = plain_cell(rest, p, delim, point)?;
                columns[k].push(v);
                p = end;
            }
            _ => p = cell_end(rest, p, delim)?,
        }
        cell += 1;
        if rest.get(p) != Some(&delim) {
            break;
        }
        p += 1;
    }
    if cell < 2 {
        return None;
    }
    for &k in slot.iter().skip(cell) {
        if k != NOT_WANTED {
            columns[k].push(f64::NAN);
        }
    }
    Some(p)
}

/// Where the unquoted cell from `rest[p]` ends (its delimiter, a line break or the end of the
/// text), eight bytes looked at at once; `None` at a quote.
#[inline(always)]
fn cell_end(rest: &[u8], mut p: usize, delim: u8) -> Option<usize> {
    const ONES: u64 = 0x0101_0101_0101_0101;
    // High bit of each byte of `w` equal to `b`; exact up to the first such byte (above it a
    // borrow may mark others, which are never looked at).
    let marks = |w: u64, b: u8| {
        let x = w ^ (u64::from(b) * ONES);
        x.wrapping_sub(ONES) & !x & (0x80 * ONES)
    };
    while p + 8 <= rest.len() {
        let w = word(rest, p);
        let m = marks(w, delim) | marks(w, b'\n') | marks(w, b'\r') | marks(w, b'"');
        if m != 0 {
            p += (m.trailing_zeros() / 8) as usize;
            return (rest[p] != b'"').then_some(p);
        }
        p += 8;
    }
    while let Some(&b) = rest.get(p) {
        if b == delim || b == b'\n' || b == b'\r' {
            break;
        }
        if b == b'"' {
            return None;
        }
        p += 1;
    }
    Some(p)
}

/// 10^0 to 10^7 as integers.
const POW10_INT: [u64; 8] = [1, 10, 100, 1_000, 10_000, 100_000, 1_000_000, 10_000_000];

/// 2^52: the doubles from it to 2^53 are the integers, one apart.
const TWO_52: f64 = 4_503_599_627_370_496.0;

/// The 8 bytes at `rest[p..]` as one word, the first byte lowest.
#[inline(always)]
fn word(rest: &[u8], p: usize) -> u64 {
    let mut b = [0u8; 8];
    b.copy_from_slice(&rest[p..p + 8]);
    u64::from_le_bytes(b)
}

/// The value of the decimal digits held, one per byte, in the low `count` bytes of `t` (each
/// 0..=9, the first digit in the lowest byte; 1 ≤ `count` ≤ 8), all at once ("SIMD within a
/// register"; D. Lemire, "Quickly parsing eight digits", 2018).
#[inline(always)]
fn digits_value(t: u64, count: usize) -> u64 {
    // The digits moved to the top of the word, zeros (leading zero digits) below them.
    let mut v = t << (8 * (8 - count));
    v = v.wrapping_mul(10).wrapping_add(v >> 8);
    let mask = 0x0000_00FF_0000_00FF;
    ((v & mask)
        .wrapping_mul(100 + (1_000_000 << 32))
        .wrapping_add(((v >> 16) & mask).wrapping_mul(1 + (10_000 << 32))))
        >> 32
}

/// The cell starting at `rest[p]` as a number and where it ends (at its delimiter, line break
/// or the end of the text); `None` for a quote or a cell that is not a number.
#[inline(always)]
fn plain_cell(rest: &[u8], mut p: usize, delim: u8, point: u8) -> Option<(f64, usize)> {
    let start = p;
    let negative = match rest.get(p) {
        Some(b'-') => {
            p += 1;
            true
        }
        Some(b'+') => {
            p += 1;
            false
        }
        _ => false,
    };
    let ends_at = |q: usize| match rest.get(q) {
        None => true,
        Some(&b) => b == delim || b == b'\n' || b == b'\r',
    };
    // m < 10^15 < 2^52 is exact as a double: put in the mantissa of 2^52 and 2^52 taken off
    // (the same value as `m as f64`, without the conversion instruction that waits for the
    // previous cell's division); then one correctly rounded division.
    let signed = |m: u64, decimals: usize| {
        let whole = f64::from_bits(TWO_52.to_bits() | m) - TWO_52;
        let v = whole / POW10[decimals];
        if negative { -v } else { v }
    };
    // A cell of up to 7 characters after its sign, and the byte that ends it, in one 8-byte
    // word (first byte lowest; a longer one with its point in that word, in two): the same integer of all the digits and count of decimals as
    // the byte-wise loop below.
    if p + 8 <= rest.len() {
        const ONES: u64 = 0x0101_0101_0101_0101;
        let low_bytes = |n: usize| (1u64 << (8 * n)) - 1;
        let w = word(rest, p);
        // '0'..'9' become 0..9, every other byte something else.
        let t = w ^ (0x30 * ONES);
        // The high bit of a byte set when it is not 0..9: above 127, or its low 7 bits plus
        // 118 reach bit 7 (≥ 10); the sum stays within the byte (127 + 118 < 256).
        let not_digits = |t: u64| (t | ((t & (0x7F * ONES)) + 0x76 * ONES)) & (0x80 * ONES);
        let not_digit = not_digits(t);
        let whole = (not_digit.trailing_zeros() / 8) as usize;
        if whole < 8 {
            let (digits, count, frac, end) = if (w >> (8 * whole)) as u8 == point {
                // The first byte that is not a digit after the point ends the cell.
                let above = not_digit & (u64::MAX << (8 * whole) << 8);
                let end = (above.trailing_zeros() / 8) as usize;
                // The fraction's digits moved down a byte, over the point.
                let fraction = (t >> 8) & low_bytes(end.saturating_sub(1)) & !low_bytes(whole);
                (
                    t & low_bytes(whole) | fraction,
                    end - 1,
                    end - 1 - whole,
                    end,
                )
            } else {
                (t & low_bytes(whole), whole, 0, whole)
            };
            if end < 8 && count > 0 && ends_at(p + end) {
                return Some((signed(digits_value(digits, count), frac), p + end));
            }
            // Seven characters with the point among them and all digits after it ("100.0000",
            // "132514.2"): the rest of the digits, up to seven, and the byte that ends the
            // cell in the next word.
            if end == 8 && p + 16 <= rest.len() {
                let t = word(rest, p + 8) ^ (0x30 * ONES);
                let more = (not_digits(t).trailing_zeros() / 8) as usize;
                if more < 8 && ends_at(p + 8 + more) {
                    let head = digits_value(digits, 7);
                    let m = if more == 0 {
                        head
                    } else {
                        head * POW10_INT[more] + digits_value(t, more)
                    };
                    return Some((signed(m, frac + more), p + 8 + more));
                }
            }
        }
    }
    let (mut mantissa, mut count, mut decimals, mut seen_point) = (0u64, 0usize, 0usize, false);
    while let Some(&b) = rest.get(p) {
        let d = b.wrapping_sub(b'0');
        if d < 10 {
            mantissa = mantissa.wrapping_mul(10).wrapping_add(u64::from(d));
            count += 1;
            decimals += usize::from(seen_point);
        } else if b == point && !seen_point {
            seen_point = true;
        } else {
            break;
        }
        p += 1;
    }
    if ends_at(p) {
        if p == start {
            return Some((f64::NAN, p));
        }
        if count > 0 && count <= 15 {
            return Some((signed(mantissa, decimals), p));
        }
    }
    // Anything else: find the cell's end and read it the general way.
    let end = cell_end(rest, p, delim)?;
    Some((number(&rest[start..end], point == b',')?, end))
}

#[cfg(test)]
mod tests {
    use super::*;

    // RFC 4180 §2: a quoted cell may hold the delimiter (here a decimal comma under semicolons);
    // the preview starts under the units line.
    #[test]
    fn the_preview_is_the_first_data_rows_under_the_header() {
        let text = b"logger export\nTime;Engine RPM;Throttle\ns;rpm;%\n0,00;1200;\"3,5\"\n0,01;1210;4\n0,02;1225;6\n";
        let rows = preview(text, 2).unwrap();
        assert_eq!(
            rows,
            vec![vec!["0,00", "1200", "3,5"], vec!["0,01", "1210", "4"]]
        );
        assert_eq!(preview(text, 10).unwrap().len(), 3);
    }

    // The fast path for plain decimals gives exactly what the standard library's correctly
    // rounded parser gives (both IEEE 754 round-to-nearest), over many random cells.
    #[test]
    fn echoed_names_and_cells_are_cut_to_80_characters() {
        let long = "x".repeat(5_000);
        let names: Vec<String> = (0..30).map(|i| format!("c{i}")).collect();
        let mut text = format!("time,rpm,{}\n", names.join(","));
        text.push_str(&format!("0,1,{}\n", vec!["1"; 30].join(",")));
        text.push_str(&format!("1,{long},{}\n", vec!["1"; 30].join(",")));
        let wanted = TIME_AND_RPM;
        let err = read(text.as_bytes(), &wanted).unwrap_err();
        assert!(err.message.len() < 200, "{}", err.message);
        assert!(err.message.contains(&format!("{}…", "x".repeat(80))));
        let name = "y".repeat(300);
        let wanted = [Wanted {
            field: "columns.time",
            name: &name,
        }];
        let err = read(text.as_bytes(), &wanted).unwrap_err();
        assert!(err.message.len() < 600, "{}", err.message);
        assert!(err.message.ends_with("c17, and 12 more"), "{}", err.message);
    }

    #[test]
    fn a_file_past_the_mapping_limits_is_refused_naming_them() {
        let header = |n: usize, len: usize| {
            let names: Vec<String> = (0..n).map(|i| format!("c{i:0w$}", w = len - 1)).collect();
            format!("{}\n{}\n", names.join(","), vec!["1"; n].join(","))
        };
        assert!(layout_for_mapping(header(1_000, 100).as_bytes()).is_ok());
        let err = layout_for_mapping(header(1_001, 4).as_bytes()).unwrap_err();
        assert!(
            err.message.contains("1001 columns; at most 1000"),
            "{}",
            err.message
        );
        let err = layout_for_mapping(header(3, 101).as_bytes()).unwrap_err();
        assert!(
            err.message.contains("101 characters long; at most 100"),
            "{}",
            err.message
        );
        assert!(err.message.len() < 300, "{}", err.message);
    }

    #[test]
    fn plain_decimals_read_exactly_as_the_standard_parser_reads_them() {
        let mut x = 0x9E37_79B9_7F4A_7C15u64;
        for _ in 0..200_000 {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            let digits = 1 + (x % 15) as usize;
            let mantissa = x % 10u64.pow(digits as u32);
            let decimals = ((x >> 20) % (digits as u64 + 1)) as usize;
            let mut text = format!("{mantissa:0digits$}");
            if decimals > 0 {
                text.insert(digits - decimals, '.');
            }
            if x & (1 << 40) != 0 {
                text.insert(0, '-');
            }
            let expected: f64 = text.parse().unwrap();
            let got = number(text.as_bytes(), false).unwrap();
            assert_eq!(got.to_bits(), expected.to_bits(), "{text}");
            let comma = text.replace('.', ",");
            assert_eq!(
                number(comma.as_bytes(), true).unwrap().to_bits(),
                expected.to_bits()
            );
        }
        assert_eq!(number(b"1e3", false), Some(1000.0));
        assert_eq!(number(b"1.2.3", false), None);
        assert_eq!(number(b"-", false), None);
        assert_eq!(
            number(b"12345678901234567", false),
            Some(12345678901234567.0)
        );
    }

    /// A time column "time" and an engine speed column "rpm", as a request names them.
    const TIME_AND_RPM: [Wanted<'static>; 2] = [
        Wanted {
            field: "columns.time",
            name: "time",
        },
        Wanted {
            field: "columns.engine_rpm",
            name: "rpm",
        },
    ];

    fn want<'a>(names: &'a [&'a str]) -> Vec<Wanted<'a>> {
        names
            .iter()
            .map(|n| Wanted {
                field: "columns.x",
                name: n,
            })
            .collect()
    }

    #[test]
    fn a_plain_comma_file_reads_by_header_name() {
        let c = read(
            b"time,rpm,shaft\n0.00,6000,0\n0.01,6000,75\n",
            &want(&["shaft", "time"]),
        )
        .unwrap();
        assert_eq!(c.values, vec![vec![0.0, 75.0], vec![0.0, 0.01]]);
        assert_eq!(c.lines.to_vec(), vec![2, 3]);
        assert_eq!(c.layout.delimiter, b',');
    }

    #[test]
    fn semicolons_with_decimal_commas_metadata_and_a_units_line() {
        let text = "Logger export\nDate;2026-11-20\nTime;Engine;Input\ns;rpm;rpm\n0,00;6000,5;0\n0,01;5990;75,25\n";
        let c = read(text.as_bytes(), &want(&["Time", "Engine", "Input"])).unwrap();
        assert_eq!(c.layout.delimiter, b';');
        assert_eq!(c.layout.header_line, 3);
        assert_eq!(c.layout.units_line, Some(4));
        assert_eq!(c.values[1], vec![6000.5, 5990.0]);
        assert_eq!(c.values[2], vec![0.0, 75.25]);
        assert_eq!(c.lines.to_vec(), vec![5, 6]);
    }

    #[test]
    fn tabs_and_blank_cells_where_a_channel_logs_slower() {
        let text = "t\tengine\twheel\n0\t6000\t0\n10\t6010\t\n20\t6020\t1.5\n";
        let c = read(text.as_bytes(), &want(&["wheel"])).unwrap();
        assert_eq!(c.layout.delimiter, b'\t');
        assert_eq!(c.values[0][0], 0.0);
        assert!(c.values[0][1].is_nan());
        assert_eq!(c.values[0][2], 1.5);
    }

    // RFC 4180 §2: fields with the delimiter, quotes or line breaks are enclosed in double
    // quotes, and a quote inside is doubled.
    #[test]
    fn quoted_names_with_commas_quotes_and_line_breaks_are_read_per_rfc_4180() {
        let text =
            "\"time, s\",\"engine \"\"crank\"\"\",\"input\nshaft\"\n0,6000,0\n0.01,6000,75\n";
        let c = read(
            text.as_bytes(),
            &want(&["engine \"crank\"", "input\nshaft"]),
        )
        .unwrap();
        assert_eq!(c.layout.names[0], "time, s");
        assert_eq!(c.values[1], vec![0.0, 75.0]);
        // The header spans lines 1–2, so the data rows are lines 3 and 4.
        assert_eq!(c.lines.to_vec(), vec![3, 4]);
    }

    #[test]
    fn a_word_in_the_data_names_its_line_and_column() {
        let text = "time,rpm,shaft\n0,6000,0\n0.01,6000,75\n0.02,oops,150\n";
        let err = read(text.as_bytes(), &want(&["time", "rpm"])).unwrap_err();
        assert_eq!(err.field, "columns.x");
        assert_eq!(
            err.message,
            "line 4, column \"rpm\": \"oops\" is not a number"
        );
    }

    #[test]
    fn a_missing_column_lists_the_ones_there_are() {
        let err = read(b"time,rpm\n0,1\n1,2\n", &want(&["shaft"])).unwrap_err();
        assert!(
            err.message.contains("no column named \"shaft\""),
            "{}",
            err.message
        );
        assert!(err.message.contains("time, rpm"), "{}", err.message);
    }

    #[test]
    fn text_that_is_not_a_table_is_refused_on_the_csv_field() {
        let err = layout(b"hello world\nnothing here\n").unwrap_err();
        assert_eq!(err.field, "csv");
        let err = layout(b"a,b\nc,d\n").unwrap_err();
        assert!(err.message.contains("no data"), "{}", err.message);
    }

    #[test]
    fn blank_lines_do_not_shift_the_line_numbers() {
        let text = "Logger;x\n\nt;a;b\n\n0;1;2\n0,1;x;3\n";
        let l = layout(text.as_bytes()).unwrap();
        assert_eq!((l.header_line, l.first_data_line), (3, 5));
        let err = read(text.as_bytes(), &want(&["a"])).unwrap_err();
        assert!(err.message.starts_with("line 6,"), "{}", err.message);
    }

    #[test]
    fn padded_metadata_above_the_header_is_not_taken_for_it() {
        let text = "Session,7,,\ntime,rpm,shaft,wheel\n0,6000,0,0\n0.01,6000,75,1\n";
        let l = layout(text.as_bytes()).unwrap();
        assert_eq!(l.header_line, 2);
        assert_eq!(l.units_line, None);
    }

    /// Every wanted column of every row as the `csv` crate's own reader gives it: its byte
    /// records from the top of the file, the rows before the first data line left out, each
    /// cell through [`number`] (the way the data rows were read before the fast path).
    fn read_by_csv_reader(
        text: &[u8],
        wanted: &[Wanted],
    ) -> Result<(Vec<Vec<f64>>, Vec<u64>), InputError> {
        let layout = layout(text)?;
        let index = column_index(&layout, wanted)?;
        let mut values = vec![Vec::new(); wanted.len()];
        let mut lines = Vec::new();
        let mut rdr = reader(text, layout.delimiter);
        let mut record = csv::ByteRecord::new();
        while rdr
            .read_byte_record(&mut record)
            .expect("byte records always read")
        {
            let line = start_line(text, &rdr, &record);
            if line < layout.first_data_line
                || (record.len() == 1 && record[0].trim_ascii().is_empty())
            {
                continue;
            }
            for ((w, &i), column) in wanted.iter().zip(&index).zip(&mut values) {
                let cell = record.get(i).unwrap_or(b"");
                column.push(cell_value(&layout, w, i, cell, line)?);
            }
            lines.push(line);
        }
        Ok((values, lines))
    }

    fn same_bits(a: &[Vec<f64>], b: &[Vec<f64>]) -> bool {
        a.len() == b.len()
            && a.iter().zip(b).all(|(x, y)| {
                x.len() == y.len() && x.iter().zip(y).all(|(p, q)| p.to_bits() == q.to_bits())
            })
    }

    // The fast path for plain rows against the CSV engine reading every row, and both against
    // the csv crate's own reader (RFC 4180 quoting, CR LF and CR line ends, blank lines and
    // cells, short and long rows, cells with spaces, signs, exponents, too many digits, decimal
    // commas, words): the same numbers to the bit, the same lines, the same errors.
    #[test]
    fn the_fast_path_reads_every_file_as_the_csv_engine_does() {
        let mut x = 0x853C_49E6_748F_EA9Bu64;
        let mut next = move |n: u64| {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x % n
        };
        let (mut fast_rows, mut errors, mut split_reads) = (0, 0, 0);
        for case in 0..3000 {
            let (delim, comma) = match next(4) {
                0 => (',', false),
                1 => (';', true),
                2 => ('\t', true),
                _ => ('\t', false),
            };
            let point = if comma { ',' } else { '.' };
            let end = match next(8) {
                0 => "\r\n",
                1 if case % 3 == 0 => "\r",
                _ => "\n",
            };
            let width = 2 + next(5) as usize;
            let mut text = String::new();
            if next(3) == 0 {
                text.push_str(&format!("Logger export{end}Run{delim}12{end}"));
            }
            let names: Vec<String> = (0..width).map(|c| format!("ch{c}")).collect();
            let quoted_header = next(4) == 0;
            for (c, n) in names.iter().enumerate() {
                if c > 0 {
                    text.push(delim);
                }
                if quoted_header {
                    text.push_str(&format!("\"{n}\""));
                } else {
                    text.push_str(n);
                }
            }
            text.push_str(end);
            if next(3) == 0 {
                let units: Vec<&str> = (0..width).map(|_| "rpm").collect();
                text.push_str(&units.join(&delim.to_string()));
                text.push_str(end);
            }
            // A third of the files hold cells that are not numbers.
            let spoilt = next(3) == 0;
            let rows = 5 + next(40);
            for r in 0..rows {
                if r > 0 && next(25) == 0 {
                    text.push_str(if next(2) == 0 { "" } else { "  " });
                    text.push_str(end);
                }
                let cells = if next(15) == 0 {
                    1 + next(width as u64 + 2) as usize
                } else {
                    width
                };
                for c in 0..cells {
                    if c > 0 {
                        text.push(delim);
                    }
                    // The first row stays plain so the layout finds the data.
                    let kind = match next(40) {
                        _ if r == 0 => 0,
                        33 | 37 | 38 if !spoilt => 0,
                        k => k,
                    };
                    let digits = 1 + next(8) as usize;
                    let whole = next(10u64.pow(digits as u32));
                    let decimals = next(9) as usize;
                    let frac = next(10u64.pow(decimals as u32));
                    let plain = if decimals == 0 {
                        format!("{whole}")
                    } else {
                        format!("{whole}{point}{frac:0decimals$}")
                    };
                    let cell = match kind {
                        0..=27 => plain,
                        28 => format!("-{plain}"),
                        29 => format!("+{plain}"),
                        30 => String::new(),
                        31 => format!(" {plain} "),
                        32 => format!("\"{plain}\""),
                        33 => format!("\"a{delim}b\nc\""),
                        34 => format!("{whole}e{}", next(5)),
                        35 => format!("{whole}{frac}{frac}{frac}"),
                        36 => format!("{point}{frac}"),
                        37 if next(4) == 0 => "oops".into(),
                        37 => format!("{whole}{point}"),
                        38 => format!("{whole}{point}{frac}{point}1"),
                        _ => format!("0{plain}"),
                    };
                    text.push_str(&cell);
                }
                if r + 1 < rows || next(2) == 0 {
                    text.push_str(end);
                }
            }
            let mut wanted: Vec<Wanted> = names
                .iter()
                .filter(|_| next(3) != 0)
                .map(|n| Wanted {
                    field: "columns.x",
                    name: n,
                })
                .collect();
            // One file column mapped to two channels now and then.
            if let Some(&first) = wanted.first()
                && next(4) == 0
            {
                wanted.push(first);
            }
            let bytes = text.as_bytes();
            let fast = read_with(bytes, &wanted, true, &InTurn, Cut::Middle(usize::MAX));
            let engine = read_with(bytes, &wanted, false, &InTurn, Cut::Middle(usize::MAX));
            // Split at every line start (of every sixth file): the same as read in one go.
            for cut in 1..bytes.len() {
                if case % 6 != 0 || bytes[cut - 1] != b'\n' {
                    continue;
                }
                let split = read_with(bytes, &wanted, true, &InTurn, Cut::At(cut));
                match (&split, &fast) {
                    (Ok(s), Ok(f)) => {
                        assert!(same_bits(&s.values, &f.values), "cut {cut}: {text:?}");
                        assert_eq!(s.lines, f.lines, "cut {cut}: {text:?}");
                        split_reads += 1;
                    }
                    (Err(s), Err(f)) => {
                        assert_eq!(
                            (&s.field, &s.message),
                            (&f.field, &f.message),
                            "cut {cut}: {text:?}"
                        );
                    }
                    _ => panic!("cut {cut}: {text:?}: split {split:?}, whole {fast:?}"),
                }
            }
            // With CR alone ending lines every record is on line 1 by the reader's count, so the
            // row-by-line rule above cannot tell the header from the data: compared with the
            // engine only.
            let by_reader = if end == "\r" {
                engine.clone().map(|c| (c.values, c.lines.to_vec()))
            } else {
                read_by_csv_reader(bytes, &wanted)
            };
            match (&fast, &engine, &by_reader) {
                (Ok(f), Ok(e), Ok((values, lines))) => {
                    assert!(same_bits(&f.values, &e.values), "{text:?}");
                    assert!(same_bits(&f.values, values), "{text:?}");
                    assert_eq!(f.lines, e.lines, "{text:?}");
                    assert_eq!(&f.lines.to_vec(), lines, "{text:?}");
                    assert_eq!(f.layout, e.layout);
                    fast_rows += f.lines.len();
                }
                (Err(f), Err(e), Err(r)) => {
                    assert_eq!((&f.field, &f.message), (&e.field, &e.message), "{text:?}");
                    assert_eq!((&f.field, &f.message), (&r.field, &r.message), "{text:?}");
                    errors += 1;
                }
                _ => panic!(
                    "{text:?}: fast {:?}, engine {:?}, csv reader {:?}",
                    fast.map(|c| c.values),
                    engine.map(|c| c.values),
                    by_reader.map(|c| c.0)
                ),
            }
        }
        // Both outcomes were exercised, and many splits.
        assert!(
            fast_rows > 10_000 && errors > 100 && split_reads > 5_000,
            "{fast_rows} rows, {errors} errors, {split_reads} split reads"
        );
    }

    // A file past HALVES_FROM_BYTES read as two halves at once against the same file read in
    // turn: a plain file (the lower half kept), one with a quoted line break across the middle
    // and one with blank lines at it (the rest read again from the upper half's end), and one
    // with a word below the middle (the same error, named by its line).
    #[test]
    fn a_large_file_read_in_two_halves_at_once_reads_as_in_one_go() {
        // Rows of one length, so the middle of the bytes falls inside what is put at the
        // middle row.
        let rows = 80_000;
        let plain: Vec<String> = (0..rows)
            .map(|k| {
                format!(
                    "{:02}.{:03},{},{:02}.5\n",
                    k / 1000,
                    k % 1000,
                    3000 + k % 977,
                    k % 13
                )
            })
            .collect();
        let file = |middle: &str| {
            let mut text = String::from("time,rpm,shaft\n");
            for (k, row) in plain.iter().enumerate() {
                if k == rows / 2 {
                    text.push_str(middle);
                }
                text.push_str(row);
            }
            text
        };
        let wanted = TIME_AND_RPM;
        let quoted = format!("1.5,\"3000{}\",2\n", "\n".repeat(200));
        let blank = "\n".repeat(200);
        // (put at the middle, the rows it adds)
        let cases = [
            ("", 0),
            (quoted.as_str(), 1),
            (blank.as_str(), 0),
            ("7.0,oops,1\n", 1),
        ];
        for (middle, added) in cases {
            let text = file(middle);
            assert!(text.len() >= HALVES_FROM_BYTES, "{} bytes", text.len());
            let one_go = read(text.as_bytes(), &wanted);
            let halves = read_on(text.as_bytes(), &wanted, &crate::datalog::TwoThreads);
            match (&one_go, &halves) {
                (Ok(a), Ok(b)) => {
                    assert!(same_bits(&a.values, &b.values), "{middle:?}");
                    assert_eq!(a.lines, b.lines, "{middle:?}");
                    assert_eq!(a.values[0].len(), rows + added, "{middle:?}");
                }
                (Err(a), Err(b)) => assert_eq!((&a.field, &a.message), (&b.field, &b.message)),
                _ => panic!("{middle:?}: in one go {one_go:?}, halves {halves:?}"),
            }
        }
        // The word's error names its line below the middle.
        let err = read_on(
            file("7.0,oops,1\n").as_bytes(),
            &wanted,
            &crate::datalog::TwoThreads,
        )
        .unwrap_err();
        assert_eq!(err.field, "columns.engine_rpm");
        assert!(
            err.message.starts_with(&format!("line {}, ", rows / 2 + 2)),
            "{}",
            err.message
        );
    }

    // One cell read on the fast path against the general reading of the same bytes
    // ([`number`], whose plain decimals are checked against the standard parser above): cells
    // of up to 12 characters of digits, points, signs and other bytes, followed by each kind of
    // end, also right at the end of the text; the same bits, the same end, the same refusals.
    #[test]
    fn a_cell_on_the_fast_path_reads_as_the_general_reading_reads_it() {
        let mut x = 0x2545_F491_4F6C_DD1Du64;
        let mut next = move |n: u64| {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x % n
        };
        let alphabet = b"0123456789012345678901234567890123456789..,,-+e ";
        let mut read = 0;
        for _ in 0..300_000 {
            let (delim, point) = if next(2) == 0 {
                (b',', b'.')
            } else {
                (b';', b',')
            };
            let len = next(13) as usize;
            let mut cell: Vec<u8> = (0..len)
                .map(|_| alphabet[next(alphabet.len() as u64) as usize])
                .filter(|&b| b != delim)
                .collect();
            if next(20) == 0 {
                cell.insert(0, b'"');
            }
            let mut rest = cell.clone();
            match next(5) {
                0 => {}
                1 => rest.extend_from_slice(b"\n7,8\n"),
                2 => rest.extend_from_slice(b"\r\n"),
                _ => {
                    rest.push(delim);
                    rest.extend_from_slice(b"12345678");
                }
            }
            let got = plain_cell(&rest, 0, delim, point);
            let expected = if cell.contains(&b'"') {
                None
            } else {
                number(&cell, point == b',').map(|v| (v, cell.len()))
            };
            match (got, expected) {
                (Some((a, p)), Some((b, q))) => {
                    assert_eq!(
                        (a.to_bits(), p),
                        (b.to_bits(), q),
                        "{:?}",
                        String::from_utf8_lossy(&rest)
                    );
                    read += 1;
                }
                (None, None) => {}
                _ => panic!(
                    "{:?}: {got:?} against {expected:?}",
                    String::from_utf8_lossy(&rest)
                ),
            }
        }
        assert!(read > 50_000, "{read}");
    }
}
