//! Reading a logger's CSV export: the delimiter (comma, semicolon or tab) found from the first
//! lines, a decimal comma accepted with semicolons or tabs, metadata lines before the header and
//! a units line after it skipped, RFC 4180 quoting (the `csv` crate), blank cells kept as blanks
//! (NaN) for the caller to interpolate. Errors name the line (counted from 1, as an editor
//! shows it) and the column.

use super::InputError;

/// Lines looked at to find the delimiter.
const SNIFF_LINES: usize = 50;

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
    pub lines: Vec<u64>,
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
        let (header, units) = match block.len() {
            0 => {
                return Err(csv_error(format!(
                    "line {line}: the data starts with no header line above it"
                )));
            }
            1 => (&block[0], None),
            n => {
                let (a, b) = (&block[n - 2], &block[n - 1]);
                if has_blank(&a.1) && !has_blank(&b.1) {
                    (b, None)
                } else {
                    (a, Some(b.0))
                }
            }
        };
        return Ok(Layout {
            delimiter,
            decimal_comma,
            names: names_of(&header.1),
            header_line: header.0,
            units_line: units,
            first_data_line: line,
        });
    }
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
    let layout = layout(text)?;
    let mut index = Vec::with_capacity(wanted.len());
    for w in wanted {
        let i = find(&layout.names, w.name).ok_or_else(|| {
            InputError::new(
                w.field,
                format!(
                    "no column named \"{}\" in the header (line {}); the file has: {}",
                    w.name,
                    layout.header_line,
                    layout.names.join(", ")
                ),
            )
        })?;
        index.push(i);
    }
    // A rough row count from the size keeps the columns from re-growing many times.
    let guess = text.len() / (layout.names.len().max(1) * 6).max(1);
    let mut values: Vec<Vec<f64>> = wanted.iter().map(|_| Vec::with_capacity(guess)).collect();
    let mut lines = Vec::with_capacity(guess);
    let mut rdr = reader(text, layout.delimiter);
    let mut record = csv::ByteRecord::new();
    loop {
        let at = rdr.position().line();
        match rdr.read_byte_record(&mut record) {
            Ok(true) => {}
            Ok(false) => break,
            Err(e) => return Err(csv_error(format!("line {at}: {e}"))),
        }
        let line = start_line(text, &rdr, &record);
        if line < layout.first_data_line {
            continue;
        }
        if record.len() == 1 && record[0].trim_ascii().is_empty() {
            continue;
        }
        for ((w, &i), column) in wanted.iter().zip(&index).zip(&mut values) {
            let cell = record.get(i).unwrap_or(b"");
            let v = number(cell, layout.decimal_comma).ok_or_else(|| {
                InputError::new(
                    w.field,
                    format!(
                        "line {line}, column \"{}\": \"{}\" is not a number",
                        layout.names[i],
                        String::from_utf8_lossy(cell).trim()
                    ),
                )
            })?;
            column.push(v);
        }
        lines.push(line);
    }
    Ok(Columns {
        layout,
        values,
        lines,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    // The fast path for plain decimals gives exactly what the standard library's correctly
    // rounded parser gives (both IEEE 754 round-to-nearest), over many random cells.
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
        assert_eq!(c.lines, vec![2, 3]);
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
        assert_eq!(c.lines, vec![5, 6]);
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
        assert_eq!(c.lines, vec![3, 4]);
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
}
