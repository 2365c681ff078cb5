//! Reading a cohort file: bytes in, a table of named columns out.
//!
//! Accepts UTF-8 with or without a byte-order mark, UTF-16 with one, and
//! falls back to Windows-1252 (a superset of Latin-1's printable characters)
//! for bytes that are not UTF-8 (see [`decode`]). The delimiter (comma,
//! semicolon or tab) is detected from the header line, or named by a first
//! line `sep=;`. Quoted fields may span lines. Numbers with a decimal comma or
//! grouped thousands are read where the delimiter leaves no doubt (see
//! [`NumberFormat`]). Every problem is an [`Error::Data`] naming the row (as a
//! spreadsheet would number it: the header is row 1) and the column; every
//! automatic decision is listed in [`Table::notices`].

use crate::{Error, Result};
use serde::Serialize;
use std::borrow::Cow;

/// What a column holds, as inferred from its non-missing cells.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, serde::Deserialize, PartialOrd, Ord)]
#[serde(rename_all = "lowercase")]
pub enum Kind {
    /// Every non-missing cell is a finite number, and not only 0 and 1.
    Numeric,
    /// Every non-missing cell is 0 or 1.
    Binary,
    /// A modest number of distinct labels.
    Categorical,
    /// Free text (long or mostly distinct values), such as a note.
    Text,
}

/// Cells that count as missing, compared after trimming and ignoring case.
pub const MISSING_MARKERS: [&str; 5] = ["", "na", "nan", ".", "null"];

/// Whether a cell is one of the [`MISSING_MARKERS`].
pub fn is_missing(cell: &str) -> bool {
    let t = cell.trim();
    t.is_empty()
        || MISSING_MARKERS[1..]
            .iter()
            .any(|m| t.eq_ignore_ascii_case(m))
}

/// The number in a cell, if it holds a finite one.
pub fn parse_number(cell: &str) -> Option<f64> {
    let t = cell.trim();
    // Reject words that Rust parses as numbers ("inf", "infinity", "nan").
    if !t.bytes().any(|b| b.is_ascii_digit()) {
        return None;
    }
    t.parse::<f64>().ok().filter(|v| v.is_finite())
}

/// A column's cells, stored compactly: one text buffer and where each cell
/// ends. A table of millions of short cells then costs about its text plus
/// four bytes a cell, instead of a separate allocation per cell.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Cells {
    text: String,
    ends: Vec<u32>,
}

impl Cells {
    /// No cells.
    pub fn new() -> Cells {
        Cells::default()
    }
    /// No cells, with room for `cells` cells of `text` bytes in all.
    pub fn with_capacity(text: usize, cells: usize) -> Cells {
        Cells {
            text: String::with_capacity(text),
            ends: Vec::with_capacity(cells),
        }
    }
    /// Number of cells.
    pub fn len(&self) -> usize {
        self.ends.len()
    }
    /// Whether there are no cells.
    pub fn is_empty(&self) -> bool {
        self.ends.is_empty()
    }
    /// The cell at `i`, if there is one.
    pub fn get(&self, i: usize) -> Option<&str> {
        let end = *self.ends.get(i)? as usize;
        let start = if i == 0 { 0 } else { self.ends[i - 1] as usize };
        self.text.get(start..end)
    }
    /// Cells in order.
    pub fn iter(&self) -> impl ExactSizeIterator<Item = &str> + DoubleEndedIterator + '_ {
        (0..self.ends.len()).map(move |i| {
            let start = if i == 0 { 0 } else { self.ends[i - 1] as usize };
            &self.text[start..self.ends[i] as usize]
        })
    }
    /// Append a cell. A column's text is limited to 4 GiB (offsets are 32
    /// bits, which also keeps the store small in WebAssembly).
    pub fn push(&mut self, cell: &str) -> Result<()> {
        let end = u32::try_from(self.text.len() + cell.len()).map_err(|_| {
            Error::data(
                Some(self.ends.len() + 2),
                None,
                "a column holds more than 4 GiB of text; split the file",
            )
        })?;
        self.text.push_str(cell);
        self.ends.push(end);
        Ok(())
    }
    /// Total bytes of text held.
    pub fn text_len(&self) -> usize {
        self.text.len()
    }
}

impl std::ops::Index<usize> for Cells {
    type Output = str;
    fn index(&self, i: usize) -> &str {
        match self.get(i) {
            Some(c) => c,
            None => panic!("cell {i} of a column of {} cells", self.len()),
        }
    }
}

impl<S: AsRef<str>> FromIterator<S> for Cells {
    /// Collect cells; for tests and callers with small tables (a column
    /// beyond 4 GiB of text is cut short, which only [`Cells::push`] reports).
    fn from_iter<I: IntoIterator<Item = S>>(iter: I) -> Cells {
        let mut c = Cells::new();
        for s in iter {
            if c.push(s.as_ref()).is_err() {
                break;
            }
        }
        c
    }
}

/// One column: its header and its cells as text, with the inferred kind.
#[derive(Debug, Clone)]
pub struct Column {
    /// Header text, trimmed.
    pub name: String,
    /// Cells in row order, as read.
    pub cells: Cells,
    /// Inferred kind; callers may override it.
    pub kind: Kind,
    /// How the column writes numbers (decimal comma, grouped thousands).
    pub format: NumberFormat,
}

impl Column {
    /// Number of missing cells.
    pub fn missing_count(&self) -> usize {
        self.cells.iter().filter(|c| is_missing(c)).count()
    }
    /// The cell as a number, `None` when missing or not numeric.
    pub fn number(&self, row: usize) -> Option<f64> {
        self.cells.get(row).and_then(|c| self.format.parse(c))
    }
    /// A cell as a number in this column's format, `None` when missing or
    /// not numeric.
    pub fn parse(&self, cell: &str) -> Option<f64> {
        self.format.parse(cell)
    }
    /// Whether the cell at `row` is missing.
    pub fn is_missing(&self, row: usize) -> bool {
        self.cells.get(row).is_none_or(is_missing)
    }
    /// Distinct non-missing values, trimmed, in sorted order (numeric order
    /// when all are numbers, else text order).
    pub fn levels(&self) -> Vec<String> {
        self.first_levels(usize::MAX)
    }
    /// The first `limit` of [`Column::levels`], copying only those: a notes
    /// column's levels are its whole text.
    pub fn first_levels(&self, limit: usize) -> Vec<String> {
        let mut v = present(&self.cells);
        v.sort_unstable();
        v.dedup();
        if v.iter().all(|s| self.format.parse(s).is_some()) {
            v.sort_by(|a, b| {
                let (x, y) = (self.format.parse(a), self.format.parse(b));
                x.partial_cmp(&y)
                    .unwrap_or(std::cmp::Ordering::Equal)
                    .then_with(|| a.cmp(b))
            });
        }
        v.into_iter().take(limit).map(str::to_string).collect()
    }
    /// How many [`Column::levels`] there are, without copying them.
    pub fn distinct_count(&self) -> usize {
        let mut v = present(&self.cells);
        v.sort_unstable();
        v.dedup();
        v.len()
    }
}

/// The cells that are not missing, trimmed.
fn present(cells: &Cells) -> Vec<&str> {
    cells
        .iter()
        .map(|c| c.trim())
        .filter(|c| !is_missing(c))
        .collect()
}

/// A cohort table: named columns of equal length.
#[derive(Debug, Clone)]
pub struct Table {
    /// Columns in file order.
    pub columns: Vec<Column>,
    /// The text encoding the bytes were read as.
    pub encoding: &'static str,
    /// The detected delimiter.
    pub delimiter: char,
    /// What the user should know about how the file was read (encoding
    /// fallback, number formats, a dropped empty column), in plain words.
    pub notices: Vec<String>,
}

/// Summary of one column, for the data screen and `summary.json`.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ColumnSummary {
    /// Header text.
    pub name: String,
    /// Inferred kind.
    pub kind: Kind,
    /// Number of missing cells.
    pub missing: usize,
    /// Number of distinct non-missing values.
    pub distinct: usize,
}

/// Summary of a table: its shape, how it was read, and each column.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct TableSummary {
    /// Data rows (the header not counted).
    pub rows: usize,
    /// Columns.
    pub columns: usize,
    /// Encoding the file was read as.
    pub encoding: String,
    /// Delimiter, as a display name: "comma", "semicolon" or "tab".
    pub delimiter: String,
    /// One entry per column, in file order.
    pub column_summaries: Vec<ColumnSummary>,
    /// How the file was read, where it matters (see [`Table::notices`]).
    pub notices: Vec<String>,
}

impl Table {
    /// Number of data rows.
    pub fn n_rows(&self) -> usize {
        self.columns.first().map_or(0, |c| c.cells.len())
    }
    /// Number of columns.
    pub fn n_cols(&self) -> usize {
        self.columns.len()
    }
    /// Position of a column by exact name.
    pub fn position(&self, name: &str) -> Option<usize> {
        self.columns.iter().position(|c| c.name == name)
    }
    /// A column by name; the error names the nearest existing column.
    pub fn column(&self, name: &str) -> Result<&Column> {
        match self.position(name) {
            Some(i) => Ok(&self.columns[i]),
            None => {
                let names: Vec<&str> = self.columns.iter().map(|c| c.name.as_str()).collect();
                let hint = match nearest(name, &names) {
                    Some(n) => format!("; did you mean \"{n}\"?"),
                    None => String::new(),
                };
                Err(Error::data(
                    None,
                    Some(name),
                    format!("no column with this name in the cohort file{hint}"),
                ))
            }
        }
    }
    /// Shape, encoding, delimiter and per-column summaries.
    pub fn summary(&self) -> TableSummary {
        TableSummary {
            rows: self.n_rows(),
            columns: self.n_cols(),
            encoding: self.encoding.to_string(),
            delimiter: delimiter_name(self.delimiter),
            column_summaries: self
                .columns
                .iter()
                .map(|c| ColumnSummary {
                    name: c.name.clone(),
                    kind: c.kind,
                    missing: c.missing_count(),
                    distinct: c.distinct_count(),
                })
                .collect(),
            notices: self.notices.clone(),
        }
    }
}

/// A delimiter as a display name: "comma", "semicolon", "tab", or the
/// character in quotes (one named by a `sep=` line).
pub fn delimiter_name(d: char) -> String {
    match d {
        ',' => "comma".to_string(),
        ';' => "semicolon".to_string(),
        '\t' => "tab".to_string(),
        other => format!("\"{other}\""),
    }
}

/// The candidate closest to `name` by edit distance (case-insensitive), if
/// reasonably close.
pub fn nearest<'a>(name: &str, candidates: &[&'a str]) -> Option<&'a str> {
    let lower = name.to_lowercase();
    candidates
        .iter()
        .map(|c| (edit_distance(&lower, &c.to_lowercase()), *c))
        .filter(|(d, c)| *d <= (c.chars().count().max(name.chars().count()) / 2).max(2))
        .min_by_key(|(d, _)| *d)
        .map(|(_, c)| c)
}

fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut cur = vec![i + 1; b.len() + 1];
        for (j, cb) in b.iter().enumerate() {
            let sub = prev[j] + usize::from(ca != *cb);
            cur[j + 1] = sub.min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

/// Text decoded from a file's bytes, with how it was read.
#[derive(Debug, Clone, PartialEq)]
pub struct Decoded<'a> {
    /// The text, without a byte-order mark; borrowed from the bytes when
    /// they are UTF-8 already.
    pub text: Cow<'a, str>,
    /// Name of the encoding read: `UTF-8`, `UTF-16LE`, `UTF-16BE`,
    /// `Windows-1252`, or `UTF-8 with Windows-1252 bytes`.
    pub encoding: &'static str,
    /// What the user should know about the decoding, if anything.
    pub notice: Option<String>,
}

/// Decode a file's bytes.
///
/// * A UTF-8 byte-order mark is dropped; a UTF-16 one (little- or big-endian)
///   selects UTF-16.
/// * Text that looks like UTF-16 without a byte-order mark (every other byte
///   zero) is refused with a message, since guessing its byte order could
///   scramble every character.
/// * Valid UTF-8 is read as UTF-8.
/// * Otherwise the file is read as Windows-1252 (a superset of Latin-1's
///   printable characters) -- unless it also holds valid multi-byte UTF-8
///   sequences, as when rows from two exports are pasted together: then only
///   the bytes that are not UTF-8 are read as Windows-1252, so neither part
///   is garbled.
pub fn decode(bytes: &[u8]) -> Result<Decoded<'_>> {
    use encoding_rs::{UTF_16BE, UTF_16LE, WINDOWS_1252};
    let (body, utf16) = if let Some(b) = bytes.strip_prefix(b"\xEF\xBB\xBF") {
        (b, None)
    } else if let Some(b) = bytes.strip_prefix(b"\xFF\xFE") {
        (b, Some((UTF_16LE, "UTF-16LE")))
    } else if let Some(b) = bytes.strip_prefix(b"\xFE\xFF") {
        (b, Some((UTF_16BE, "UTF-16BE")))
    } else {
        (bytes, None)
    };
    if let Some((enc, name)) = utf16 {
        let (text, had_errors) = enc.decode_without_bom_handling(body);
        return Ok(Decoded {
            text: Cow::Owned(text.into_owned()),
            encoding: name,
            notice: had_errors
                .then(|| format!("some bytes were not valid {name} and were replaced by \u{FFFD}")),
        });
    }
    if looks_like_utf16(body) {
        return Err(Error::data(
            None,
            None,
            "the file looks like UTF-16 text without a byte-order mark; save it as UTF-8 (in a spreadsheet: \"CSV UTF-8\")",
        ));
    }
    if let Ok(s) = std::str::from_utf8(body) {
        return Ok(Decoded {
            text: Cow::Borrowed(s),
            encoding: "UTF-8",
            notice: None,
        });
    }
    let has_utf8_multibyte = body
        .utf8_chunks()
        .any(|c| c.valid().bytes().any(|b| b >= 0x80));
    let first_bad = body.utf8_chunks().next().map_or(0, |c| c.valid().len());
    let line = body[..first_bad].iter().filter(|&&b| b == b'\n').count() + 1;
    if !has_utf8_multibyte {
        let (text, _) = WINDOWS_1252.decode_without_bom_handling(body);
        return Ok(Decoded {
            text: Cow::Owned(text.into_owned()),
            encoding: "Windows-1252",
            notice: Some(format!(
                "the file is not UTF-8 (first at line {line}); it was read as Windows-1252 (Latin-1)"
            )),
        });
    }
    let mut text = String::with_capacity(body.len() + 16);
    let mut foreign = 0usize;
    for chunk in body.utf8_chunks() {
        text.push_str(chunk.valid());
        for &b in chunk.invalid() {
            foreign += 1;
            let (c, _) = WINDOWS_1252.decode_without_bom_handling(std::slice::from_ref(&b));
            text.push_str(&c);
        }
    }
    Ok(Decoded {
        text: Cow::Owned(text),
        encoding: "UTF-8 with Windows-1252 bytes",
        notice: Some(format!(
            "the file is UTF-8 except for {foreign} byte(s), the first at line {line}, which were read as Windows-1252 (Latin-1); check those cells"
        )),
    })
}

/// Whether bytes look like UTF-16 without a byte-order mark: within the first
/// 4 KiB, most even or most odd positions hold a zero byte. Ordinary text,
/// even with a stray null byte, does not.
fn looks_like_utf16(bytes: &[u8]) -> bool {
    let head = &bytes[..bytes.len().min(4096)];
    let pairs = head.len() / 2;
    if pairs < 2 {
        return false;
    }
    let zeros = |offset: usize| {
        head.iter()
            .skip(offset)
            .step_by(2)
            .filter(|&&b| b == 0)
            .count()
    };
    zeros(0).max(zeros(1)) * 10 >= pairs * 4
}

/// Count delimiter candidates in the first record (outside quotes) and pick
/// the most frequent; comma wins ties and is the default.
fn detect_delimiter(text: &str) -> u8 {
    let mut counts = [0usize; 3];
    let mut in_quote = false;
    for b in text.bytes() {
        match b {
            b'"' => in_quote = !in_quote,
            b'\n' | b'\r' if !in_quote => break,
            b',' if !in_quote => counts[0] += 1,
            b';' if !in_quote => counts[1] += 1,
            b'\t' if !in_quote => counts[2] += 1,
            _ => {}
        }
    }
    let best = (0..3).max_by_key(|&i| (counts[i], 3 - i)).unwrap_or(0);
    [b',', b';', b'\t'][best]
}

/// A first line `sep=X` (a spreadsheet convention naming the delimiter):
/// the delimiter and the text after that line.
fn separator_line(text: &str) -> Option<(u8, &str)> {
    let rest = text.strip_prefix("sep=")?;
    let mut chars = rest.char_indices();
    let (_, d) = chars.next()?;
    if !(d.is_ascii_punctuation() || d == '\t') || d == '"' {
        return None;
    }
    let after = &rest[d.len_utf8()..];
    let after = after
        .strip_prefix("\r\n")
        .or_else(|| after.strip_prefix('\n'))
        .or_else(|| after.strip_prefix('\r'))?;
    Some((d as u8, after))
}

/// Whether CSV text that starts at the beginning of a record ends inside a
/// quoted field: the quote that opened it was never closed. Mirrors the
/// reader's rule that a quote opens a quoted field only at the start of a
/// field (a quote inside an unquoted field is an ordinary character).
fn ends_inside_quotes(tail: &[u8], delimiter: u8) -> bool {
    #[derive(Clone, Copy, PartialEq)]
    enum S {
        FieldStart,
        Unquoted,
        Quoted,
        QuoteInQuoted,
    }
    let mut s = S::FieldStart;
    for &b in tail {
        s = match (s, b) {
            (S::Quoted, b'"') => S::QuoteInQuoted,
            (S::Quoted, _) => S::Quoted,
            (S::QuoteInQuoted, b'"') => S::Quoted,
            (S::FieldStart, b'"') => S::Quoted,
            (_, b'\n' | b'\r') => S::FieldStart,
            (_, d) if d == delimiter => S::FieldStart,
            _ => S::Unquoted,
        };
    }
    s == S::Quoted
}

/// How a column writes its numbers, decided per column from its cells and
/// the file's delimiter (see [`read_table`]).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum NumberFormat {
    /// `1234.5`: a point marks decimals, no grouping.
    #[default]
    Point,
    /// `1234,5` or `1.234,5`: a comma marks decimals; points may group thousands.
    DecimalComma,
    /// `1,234.5`: commas group thousands; a point marks decimals.
    ThousandsComma,
}

impl NumberFormat {
    /// The number in a cell written in this format, if it holds a finite one.
    pub fn parse(self, cell: &str) -> Option<f64> {
        match self {
            NumberFormat::Point => parse_number(cell),
            NumberFormat::DecimalComma => {
                let t = cell.trim();
                if !(decimal_comma_number(t) || plain_integer(t)) {
                    return parse_number(t);
                }
                parse_number(&t.replace('.', "").replace(',', "."))
            }
            NumberFormat::ThousandsComma => {
                let t = cell.trim();
                if thousands_comma_number(t) {
                    parse_number(&t.replace(',', ""))
                } else {
                    parse_number(t)
                }
            }
        }
    }
}

fn split_sign(t: &str) -> &str {
    t.strip_prefix(['+', '-']).unwrap_or(t)
}

fn all_digits(s: &str) -> bool {
    !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit())
}

fn plain_integer(t: &str) -> bool {
    all_digits(split_sign(t))
}

/// `d{1,3}(S ddd)+`: an integer with groups of three digits after `sep`.
fn grouped_integer(s: &str, sep: char) -> bool {
    let mut parts = s.split(sep);
    let first = parts.next().unwrap_or("");
    let mut groups = 0;
    for p in parts {
        if p.len() != 3 || !all_digits(p) {
            return false;
        }
        groups += 1;
    }
    groups > 0 && (1..=3).contains(&first.len()) && all_digits(first)
}

/// `1234,5`, `-0,25` or `1.234,5`: a decimal comma, with optional points
/// grouping thousands.
fn decimal_comma_number(t: &str) -> bool {
    let Some((whole, frac)) = split_sign(t).split_once(',') else {
        return false;
    };
    all_digits(frac) && (all_digits(whole) || grouped_integer(whole, '.'))
}

/// `1,234` or `-12,345.5`: commas grouping thousands, optional decimals.
fn thousands_comma_number(t: &str) -> bool {
    let s = split_sign(t);
    let (whole, frac) = match s.split_once('.') {
        Some((w, f)) => (w, Some(f)),
        None => (s, None),
    };
    frac.is_none_or(all_digits) && grouped_integer(whole, ',')
}

/// Whether a cell looks like a number written with a comma (either way).
fn comma_number(t: &str) -> bool {
    decimal_comma_number(t) || thousands_comma_number(t)
}

/// Decide how a column writes numbers. A comma inside a number is read only
/// where the file leaves no doubt (common practice of spreadsheet exports,
/// stated in the user guide):
/// * semicolon-delimited files come from locales whose decimal mark is the
///   comma: a column whose every cell is an integer or `1234,5` / `1.234,5`
///   (and at least one has a comma) uses decimal commas;
/// * comma-delimited files: a quoted `1,234.5` can only group thousands;
/// * tab-delimited files: decimal commas when some comma is followed by other
///   than three digits, thousands when some cell also has a decimal point or
///   two groups; a column of cells like `1,234` alone stays unread.
fn number_format(cells: &Cells, delimiter: u8) -> NumberFormat {
    let present = || cells.iter().map(|c| c.trim()).filter(|c| !is_missing(c));
    if !present().any(|c| c.contains(',')) {
        return NumberFormat::Point;
    }
    let decimal_ok = || present().all(|c| decimal_comma_number(c) || plain_integer(c));
    let thousands_ok = || {
        present()
            .all(|c| thousands_comma_number(c) || (!c.contains(',') && parse_number(c).is_some()))
    };
    match delimiter {
        b';' if decimal_ok() => NumberFormat::DecimalComma,
        b',' if thousands_ok() => NumberFormat::ThousandsComma,
        b'\t' => {
            let decimal_sure = present().any(|c| {
                decimal_comma_number(c)
                    && c.split_once(',')
                        .is_some_and(|(w, f)| f.len() != 3 || w.contains('.'))
            });
            let thousands_sure = present().any(|c| {
                thousands_comma_number(c) && (c.contains('.') || c.matches(',').count() > 1)
            });
            if decimal_sure && decimal_ok() && !thousands_sure {
                NumberFormat::DecimalComma
            } else if thousands_sure && thousands_ok() && !decimal_sure {
                NumberFormat::ThousandsComma
            } else {
                NumberFormat::Point
            }
        }
        _ => NumberFormat::Point,
    }
}

/// Why a cell is not a number: what is wrong, and advice when the cell
/// suggests a likely cause (a comma inside a number, an unknown missing-value
/// marker), for error messages.
pub fn number_problem(cell: &str) -> (String, Option<String>) {
    let t = cell.trim();
    let lower = t.to_ascii_lowercase();
    if comma_number(t) {
        (
            format!("\"{t}\" is a number written with a comma"),
            Some(
                "pairsight reads a decimal comma in files delimited by semicolons, and commas that group thousands in quoted cells of comma-delimited files; write the number with a decimal point and no grouping, or save the file with semicolons between columns"
                    .to_string(),
            ),
        )
    } else if [
        "n/a", "#n/a", "-", "--", "?", "missing", "unknown", "none", "nil", "n.a.", "#null!",
    ]
    .contains(&lower.as_str())
    {
        (
            format!("\"{t}\" is not a number"),
            Some(
                "the missing-value markers are an empty cell, NA, NaN, \".\" and null; if the value is missing, write NA or leave the cell empty"
                    .to_string(),
            ),
        )
    } else if t.parse::<f64>().is_ok() {
        (format!("\"{t}\" is not a finite number"), None)
    } else {
        (format!("\"{t}\" is not a number"), None)
    }
}

/// Read a cohort file from its bytes.
///
/// Rows are numbered as a spreadsheet shows a file without blank lines: the
/// header is row 1 and blank lines are not counted; where the line in the
/// file differs (multi-line notes, blank lines), messages give both.
pub fn read_table(bytes: &[u8]) -> Result<Table> {
    read_table_with(bytes, &mut |_, _| {})
}

/// How often [`read_table_with`] reports: after this many bytes of text.
const PROGRESS_STEP: usize = 1 << 20;

/// [`read_table`], calling `progress(done, total)` with the bytes of decoded
/// text read so far about every mebibyte, so that a page reading a large
/// file can show how far it is.
pub fn read_table_with(bytes: &[u8], progress: &mut dyn FnMut(usize, usize)) -> Result<Table> {
    let Decoded {
        text,
        encoding,
        notice,
    } = decode(bytes)?;
    let mut notices: Vec<String> = notice.into_iter().collect();
    let text = text.strip_prefix('\u{FEFF}').unwrap_or(&text);
    if text.trim().is_empty() {
        return Err(Error::data(
            None,
            None,
            "the file is empty; expected a header line naming the columns, then one row per patient",
        ));
    }
    let (delimiter, text) = match separator_line(text) {
        Some((d, rest)) => {
            notices.push(format!(
                "the first line \"sep={}\" names the delimiter; it was followed and skipped",
                d as char
            ));
            (d, rest)
        }
        None => (detect_delimiter(text), text),
    };
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .flexible(true)
        .has_headers(false)
        .from_reader(text.as_bytes());
    let mut rec = csv::StringRecord::new();
    let unreadable =
        |row: usize, e: csv::Error| Error::data(Some(row), None, format!("unreadable row: {e}"));
    let open_quote = |row: usize| {
        Error::data(
            Some(row),
            None,
            "a quoted field opened in this row is never closed; add the closing double quote (\") or remove the opening one",
        )
    };
    let start_of = |rec: &csv::StringRecord| rec.position().map_or(0, |p| p.byte() as usize);
    match reader.read_record(&mut rec) {
        Ok(true) => {}
        Ok(false) => return Err(Error::data(None, None, "the file has no header line")),
        Err(e) => return Err(unreadable(1, e)),
    }
    // A header that runs to the end of the file may hold an open quote.
    if reader.position().byte() as usize >= text.len()
        && ends_inside_quotes(&text.as_bytes()[start_of(&rec)..], delimiter)
    {
        return Err(open_quote(1));
    }
    let names: Vec<String> = rec.iter().map(|h| h.trim().to_string()).collect();
    if names.len() == 1 {
        return Err(single_column(&names[0]));
    }
    let mut first_of: std::collections::BTreeMap<&str, usize> = std::collections::BTreeMap::new();
    for (i, n) in names.iter().enumerate() {
        // An unnamed last column may be the empty field after a delimiter
        // that ends every line; decided once its cells are read.
        if n.is_empty() && i + 1 < names.len() {
            return Err(empty_header(i));
        }
        if n.is_empty() {
            continue;
        }
        if let Some(j) = first_of.insert(n, i) {
            return Err(Error::data(
                Some(1),
                Some(n),
                format!(
                    "duplicate header: columns {} and {} are both named \"{n}\"; rename one",
                    j + 1,
                    i + 1
                ),
            ));
        }
    }
    let mut cells: Vec<Cells> = if text.len() >= SIZE_FIRST {
        column_sizes(
            &text.as_bytes()[reader.position().byte() as usize..],
            delimiter,
            names.len(),
        )
        .into_iter()
        .map(|(text, cells)| Cells::with_capacity(text, cells))
        .collect()
    } else {
        vec![Cells::new(); names.len()]
    };
    let mut row = 1;
    let mut last = (text.len(), 1);
    let mut reported = 0;
    loop {
        let at = reader.position().byte() as usize;
        if at >= reported + PROGRESS_STEP {
            progress(at, text.len());
            reported = at;
        }
        match reader.read_record(&mut rec) {
            Ok(true) => {}
            Ok(false) => break,
            Err(e) => return Err(unreadable(row + 1, e)),
        }
        // A blank line (one empty field) is skipped, as spreadsheets write them.
        if rec.len() == 1 && rec[0].trim().is_empty() {
            continue;
        }
        row += 1;
        let start = start_of(&rec);
        if rec.len() != names.len() {
            if rec.len() < names.len() && ends_inside_quotes(&text.as_bytes()[start..], delimiter) {
                return Err(open_quote(row));
            }
            let line = rec.position().map_or(0, |p| p.line() as usize);
            let at_line = if line > row {
                format!(" (line {line} of the file)")
            } else {
                String::new()
            };
            let why = match rec.iter().find(|f| f.contains(['\n', '\r'])) {
                Some(f) => format!(
                    "; a quoted field in it spans {} lines, so a closing double quote (\") is probably missing",
                    f.lines().count().max(2)
                ),
                None => "; check for a stray delimiter or a missing quote".to_string(),
            };
            return Err(Error::data(
                Some(row),
                None,
                format!(
                    "this row{at_line} has {} fields but the header has {}{why}",
                    rec.len(),
                    names.len()
                ),
            ));
        }
        for (col, field) in cells.iter_mut().zip(rec.iter()) {
            col.push(field)?;
        }
        last = (start, row);
    }
    // A quote left open swallows the rest of the file into the last record.
    if ends_inside_quotes(&text.as_bytes()[last.0..], delimiter) {
        return Err(open_quote(last.1));
    }
    let mut names = names;
    if names.last().is_some_and(|n| n.is_empty()) {
        let last = names.len() - 1;
        if cells[last].iter().all(|c| c.trim().is_empty()) {
            names.pop();
            cells.pop();
            if names.len() == 1 {
                return Err(single_column(&names[0]));
            }
            notices.push(
                "every line ends with a delimiter; the resulting empty, unnamed last column was left out"
                    .to_string(),
            );
        } else {
            return Err(empty_header(last));
        }
    }
    if cells.first().is_none_or(|c| c.is_empty()) {
        return Err(Error::data(
            None,
            None,
            "the file has a header but no data rows",
        ));
    }
    let columns = names
        .into_iter()
        .zip(cells)
        .map(|(name, cells)| {
            let format = number_format(&cells, delimiter);
            match format {
                NumberFormat::Point => {}
                NumberFormat::DecimalComma => notices.push(format!(
                    "column \"{name}\": numbers use a decimal comma (\"1,5\" is read as 1.5)"
                )),
                NumberFormat::ThousandsComma => notices.push(format!(
                    "column \"{name}\": commas group thousands (\"1,250.5\" is read as 1250.5)"
                )),
            }
            let kind = infer_kind_in(&cells, format);
            Column {
                name,
                cells,
                kind,
                format,
            }
        })
        .collect();
    Ok(Table {
        columns,
        encoding,
        delimiter: delimiter as char,
        notices,
    })
}

/// From this size of text on, [`read_table_with`] first measures each
/// column: growing a column's buffer by doubling would need up to three
/// times its text at once (the old buffer, the new one twice as large),
/// which for a large file in a page's memory is the difference between
/// reading it and running out.
const SIZE_FIRST: usize = 8 << 20;

/// Bytes of text and number of cells in each of `n` columns of the rows in
/// `body` (the file after its header), counting only rows of `n` fields as
/// the reading proper keeps; a quick pass without decoding the cells.
fn column_sizes(body: &[u8], delimiter: u8, n: usize) -> Vec<(usize, usize)> {
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .flexible(true)
        .has_headers(false)
        .from_reader(body);
    let mut rec = csv::ByteRecord::new();
    let mut sizes = vec![(0, 0); n];
    // A row the reading proper refuses ends it too; stopping here is enough.
    while let Ok(true) = reader.read_byte_record(&mut rec) {
        if rec.len() != n {
            continue;
        }
        for (size, field) in sizes.iter_mut().zip(rec.iter()) {
            size.0 += field.len();
            size.1 += 1;
        }
    }
    sizes
}

fn single_column(name: &str) -> Error {
    let shown: String = name.chars().take(60).collect();
    Error::data(
        Some(1),
        None,
        format!(
            "the header holds a single column (\"{shown}\"); pairsight reads files whose columns are separated by commas, semicolons or tabs"
        ),
    )
}

fn empty_header(i: usize) -> Error {
    Error::data(
        Some(1),
        None,
        format!(
            "column {} has an empty header; give every column a name",
            i + 1
        ),
    )
}

/// Infer a column's kind from its cells, numbers written with a point.
pub fn infer_kind<S: AsRef<str>>(cells: &[S]) -> Kind {
    infer_kind_in(&cells.iter().collect(), NumberFormat::Point)
}

/// Infer a column's kind from its cells (common practice, stated in the user
/// guide): all numbers -> binary if only 0/1, else numeric; otherwise text when
/// values are long (mean over 40 characters) or mostly distinct with more than
/// 50 levels, else categorical.
///
/// A column in which at least four cells in five are numbers (or look like
/// numbers: a comma inside, out of range) is numeric too, so that the cells
/// that are not numbers are reported, by row, when the column is used, rather
/// than silently turning each number into a category of its own.
pub fn infer_kind_in(cells: &Cells, format: NumberFormat) -> Kind {
    let mut present = present(cells);
    if present.is_empty() {
        return Kind::Numeric;
    }
    let mut numbers = 0usize;
    let mut near = 0usize;
    let mut zero_one = true;
    for c in &present {
        match format.parse(c) {
            Some(x) => {
                numbers += 1;
                zero_one &= x == 0.0 || x == 1.0;
            }
            None if comma_number(c) || c.parse::<f64>().is_ok_and(|x| x.is_infinite()) => near += 1,
            None => {}
        }
    }
    if (numbers + near) * 5 >= present.len() * 4 {
        return if zero_one && numbers == present.len() {
            Kind::Binary
        } else {
            Kind::Numeric
        };
    }
    let n = present.len();
    let mean_len = present.iter().map(|c| c.chars().count()).sum::<usize>() as f64 / n as f64;
    // Sorting in place counts distinct values without a second collection,
    // which matters for an identifier column of millions of rows.
    present.sort_unstable();
    present.dedup();
    let distinct = present.len();
    if mean_len > 40.0 || (distinct > 50 && distinct * 2 > n) {
        Kind::Text
    } else {
        Kind::Categorical
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn err_of(bytes: &[u8]) -> Error {
        read_table(bytes).expect_err("should fail")
    }

    #[test]
    fn reads_kinds_and_missing() {
        let t = read_table(b"id,grp,age,ward,note\n1,1,70,A,\"lives alone, uses frame\"\n2,0,NA,B,x\n3,0,55.5,A,.\n").unwrap();
        let s = t.summary();
        assert_eq!((s.rows, s.columns), (3, 5));
        let kinds: Vec<Kind> = s.column_summaries.iter().map(|c| c.kind).collect();
        assert_eq!(
            kinds,
            [
                Kind::Numeric,
                Kind::Binary,
                Kind::Numeric,
                Kind::Categorical,
                Kind::Categorical
            ]
        );
        assert_eq!(s.column_summaries[2].missing, 1);
        assert_eq!(s.column_summaries[4].missing, 1);
    }

    #[test]
    fn bom_semicolon_crlf_and_multiline() {
        let t = read_table(b"\xEF\xBB\xBFid;note\r\n1;\"two\r\nlines\"\r\n2;b\r\n").unwrap();
        assert_eq!(t.delimiter, ';');
        assert_eq!(t.columns[0].name, "id");
        assert_eq!(&t.columns[1].cells[0], "two\r\nlines");
        assert_eq!(t.n_rows(), 2);
    }

    #[test]
    fn tab_and_latin1() {
        let t = read_table(b"id\tname\n1\tJos\xe9\n").unwrap();
        assert_eq!(t.delimiter, '\t');
        assert_eq!(t.encoding, "Windows-1252");
        assert_eq!(&t.columns[1].cells[0], "José");
    }

    #[test]
    fn ragged_row_names_row() {
        match err_of(b"a,b\n1,2\n3\n") {
            Error::Data { row: Some(3), .. } => {}
            e => panic!("{e:?}"),
        }
    }

    #[test]
    fn duplicate_header_names_column() {
        let e = err_of(b"a,b,a\n1,2,3\n");
        assert!(e.to_string().contains("columns 1 and 3"), "{e}");
    }

    #[test]
    fn unterminated_quote_names_row() {
        match err_of(b"a,b\n1,2\n3,\"open\n4,5\n") {
            Error::Data { row: Some(3), .. } => {}
            e => panic!("{e:?}"),
        }
    }

    #[test]
    fn empty_and_header_only() {
        assert!(err_of(b"").to_string().contains("empty"));
        assert!(err_of(b"a,b\n").to_string().contains("no data rows"));
    }

    #[test]
    fn missing_column_suggests_nearest() {
        let t = read_table(b"patient_id,age\n1,2\n").unwrap();
        let e = t.column("patient_ids").unwrap_err().to_string();
        assert!(e.contains("did you mean \"patient_id\""), "{e}");
    }

    fn cell(t: &Table, col: usize, row: usize) -> &str {
        &t.columns[col].cells[row]
    }

    #[test]
    fn quotes_inside_an_unquoted_field_are_ordinary_characters() {
        // The comma after "tall" splits the row: three fields, a ragged row.
        assert!(read_table(b"id,note\n1,5'11\" tall, said \"no\"\n2,x\n").is_err());
        let t = read_table(b"id,note\n1,5'11\" tall said \"no\"\n2,x\n").unwrap();
        assert_eq!(cell(&t, 1, 0), "5'11\" tall said \"no\"");
        let t = read_table(b"id,note\n1,\"say \"\"hi\"\", then go\"\n2,x\n").unwrap();
        assert_eq!(cell(&t, 1, 0), "say \"hi\", then go");
    }

    #[test]
    fn an_open_quote_is_found_in_the_last_row_and_the_header() {
        let e = err_of(b"a,b\n1,2\n3,\"open, never closed\n").to_string();
        assert!(e.contains("row 3") && e.contains("never closed"), "{e}");
        let e = err_of(b"a,\"b\n1,2\n").to_string();
        assert!(e.contains("row 1") && e.contains("never closed"), "{e}");
        // A quote that a later quote closes makes a long ragged row instead.
        let e = err_of(b"a,b\n1,\"open\n2,\"x\",y\n3,4\n").to_string();
        assert!(e.contains("row 2") && e.contains("probably missing"), "{e}");
    }

    #[test]
    fn rows_skip_blank_lines_and_messages_give_the_file_line() {
        let e = err_of(b"a,b\n\n1,2\n   \n\"x\ny\",3\n4\n").to_string();
        // Row 4 (header, "1,2", the two-line note, then the short row), line 7.
        assert!(
            e.contains("row 4") && e.contains("line 7 of the file"),
            "{e}"
        );
    }

    #[test]
    fn utf16_with_a_byte_order_mark_is_read_and_without_one_refused() {
        let text = "id,note\n1,caf\u{e9}\n";
        let le: Vec<u8> = [0xFF, 0xFE]
            .into_iter()
            .chain(text.encode_utf16().flat_map(|u| u.to_le_bytes()))
            .collect();
        let be: Vec<u8> = [0xFE, 0xFF]
            .into_iter()
            .chain(text.encode_utf16().flat_map(|u| u.to_be_bytes()))
            .collect();
        for (bytes, name) in [(le.clone(), "UTF-16LE"), (be, "UTF-16BE")] {
            let t = read_table(&bytes).unwrap();
            assert_eq!((t.encoding, cell(&t, 1, 0)), (name, "caf\u{e9}"));
        }
        let e = err_of(&le[2..]).to_string();
        assert!(
            e.contains("UTF-16") && e.contains("save it as UTF-8"),
            "{e}"
        );
        // A stray null byte in UTF-8 text is not UTF-16.
        assert!(read_table(b"id,note\n1,a\x00b\n2,c\n").is_ok());
    }

    #[test]
    fn utf8_with_a_few_latin1_bytes_keeps_its_utf8() {
        let t = read_table("id,ward\n1,M\u{e9}decine\n2,caf\u{e9}\n".as_bytes()).unwrap();
        assert_eq!(t.encoding, "UTF-8");
        let mut mixed = "id,ward\n1,M\u{e9}decine\n".as_bytes().to_vec();
        mixed.extend_from_slice(b"2,caf\xe9 \x93ok\x94\n");
        let t = read_table(&mixed).unwrap();
        assert_eq!(t.encoding, "UTF-8 with Windows-1252 bytes");
        assert_eq!(cell(&t, 1, 0), "M\u{e9}decine");
        assert_eq!(cell(&t, 1, 1), "caf\u{e9} \u{201c}ok\u{201d}");
        assert!(
            t.notices[0].contains("3 byte(s), the first at line 3"),
            "{:?}",
            t.notices
        );
        let t = read_table(b"id,ward\n1,M\xe9decine\n").unwrap();
        assert_eq!(
            (t.encoding, cell(&t, 1, 0)),
            ("Windows-1252", "M\u{e9}decine")
        );
    }

    #[test]
    fn a_sep_line_names_the_delimiter() {
        let t = read_table(b"sep=;\r\na;b\r\n1,5;2\r\n").unwrap();
        assert_eq!((t.delimiter, t.n_cols(), t.n_rows()), (';', 2, 1));
        assert!(t.notices[0].contains("sep=;"));
        // Not a sep line: an ordinary header that happens to start so.
        let t = read_table(b"sep=x,b\n1,2\n").unwrap();
        assert_eq!(t.columns[0].name, "sep=x");
    }

    #[test]
    fn a_trailing_delimiter_on_every_line_is_dropped() {
        let t = read_table(b"a,b,\n1,2,\n3,4,\n").unwrap();
        assert_eq!(t.n_cols(), 2);
        assert!(t.notices[0].contains("ends with a delimiter"));
        let e = err_of(b"a,b,\n1,2,x\n").to_string();
        assert!(e.contains("column 3 has an empty header"), "{e}");
    }

    #[test]
    fn a_single_column_is_refused_with_the_delimiters_read() {
        // Also when the second column was only a trailing delimiter
        // (found by the reading property).
        let e = err_of(b"\"\"sep=;\nasep=;\n").to_string();
        assert!(e.contains("single column"), "{e}");
        let e = err_of(b"a|b|c\n1|2|3\n").to_string();
        assert!(
            e.contains("single column") && e.contains("semicolons or tabs"),
            "{e}"
        );
    }

    #[test]
    fn duplicate_headers_among_thousands_of_columns() {
        let mut header: Vec<String> = (0..20_000).map(|i| format!("c{i}")).collect();
        header[19_999] = "c17".to_string();
        let text = format!("{}\n{}\n", header.join(","), vec!["1"; 20_000].join(","));
        let e = err_of(text.as_bytes()).to_string();
        assert!(e.contains("columns 18 and 20000"), "{e}");
    }

    #[test]
    fn decimal_commas_in_semicolon_files() {
        let t =
            read_table(b"id;crea;los;code\n1;97,5;7;1,2\n2;1.165,5;-0,25;x\n3;NA;3;4\n").unwrap();
        assert_eq!(t.columns[1].format, NumberFormat::DecimalComma);
        assert_eq!(t.columns[1].number(0), Some(97.5));
        assert_eq!(t.columns[1].number(1), Some(1165.5));
        assert_eq!(t.columns[1].kind, Kind::Numeric);
        assert_eq!(t.columns[2].number(1), Some(-0.25));
        // A column with text in it keeps its cells as text.
        assert_eq!(t.columns[3].format, NumberFormat::Point);
        // The cells themselves are never rewritten.
        assert_eq!(cell(&t, 1, 1), "1.165,5");
    }

    #[test]
    fn grouped_thousands_in_comma_files() {
        let t =
            read_table(b"id,crea,odd\n1,\"1,165.5\",\"7,5\"\n2,97.5,\"1,2\"\n3,\"-12,345\",3\n")
                .unwrap();
        assert_eq!(t.columns[1].format, NumberFormat::ThousandsComma);
        assert_eq!(
            (0..3).map(|r| t.columns[1].number(r)).collect::<Vec<_>>(),
            [Some(1165.5), Some(97.5), Some(-12345.0)]
        );
        // "7,5" cannot group thousands: not read, but the column is numeric
        // so that using it names the cell.
        assert_eq!(t.columns[2].format, NumberFormat::Point);
        assert_eq!(t.columns[2].kind, Kind::Numeric);
        assert_eq!(t.columns[2].number(0), None);
    }

    #[test]
    fn tab_files_read_commas_only_when_unambiguous() {
        let t = read_table(b"id\ta\tb\tc\n1\t7,5\t1,234.5\t1,234\n2\t3\t2,000\t5,678\n").unwrap();
        let f: Vec<NumberFormat> = t.columns.iter().map(|c| c.format).collect();
        assert_eq!(
            f,
            [
                NumberFormat::Point,
                NumberFormat::DecimalComma,
                NumberFormat::ThousandsComma,
                NumberFormat::Point
            ]
        );
    }

    #[test]
    fn mostly_numeric_columns_are_numeric() {
        let cells = |v: &[&str]| v.iter().map(|s| s.to_string()).collect::<Vec<_>>();
        assert_eq!(
            infer_kind(&cells(&["1", "2", "3", "4", "seventy"])),
            Kind::Numeric
        );
        assert_eq!(
            infer_kind(&cells(&["1", "2", "3", "x", "y"])),
            Kind::Categorical
        );
        assert_eq!(
            infer_kind(&cells(&["0", "1", "1", "0", "N/A"])),
            Kind::Numeric
        );
        assert_eq!(infer_kind(&cells(&["97,5", "12,25"])), Kind::Numeric);
        assert_eq!(infer_kind(&cells(&["1", "x"])), Kind::Categorical);
        assert_eq!(infer_kind(&cells(&["1", "2", "3", "1e400"])), Kind::Numeric);
    }

    #[test]
    fn number_problems_say_why() {
        assert!(number_problem("7,5").1.unwrap().contains("decimal point"));
        assert!(number_problem(" N/A ").1.unwrap().contains("write NA"));
        assert_eq!(
            number_problem("1e400").0,
            "\"1e400\" is not a finite number"
        );
        assert_eq!(
            number_problem("seventy"),
            ("\"seventy\" is not a number".to_string(), None)
        );
    }

    #[test]
    fn a_large_file_is_measured_first_so_each_column_takes_just_its_text() {
        let mut csv = String::from("id,group,note\n");
        let mut i = 0;
        while csv.len() <= SIZE_FIRST {
            i += 1;
            csv.push_str(&format!("p{i},{},\"note of \"\"{i}\"\", long\"\n", i % 2));
        }
        let t = read_table(csv.as_bytes()).unwrap();
        assert_eq!(t.n_rows(), i);
        assert_eq!(cell(&t, 2, i - 1), format!("note of \"{i}\", long"));
        for c in &t.columns {
            assert_eq!(c.cells.text.capacity(), c.cells.text.len(), "{}", c.name);
            assert_eq!(c.cells.ends.capacity(), i, "{}", c.name);
        }
    }

    #[test]
    fn levels_in_order_counted_and_cut_without_copying_the_rest() {
        let t = read_table(b"id,g,n\na, x ,10\nb,y,9\nc,x,NA\nd,,10\ne,z,100\n").unwrap();
        let g = t.column("g").unwrap();
        assert_eq!(g.levels(), ["x", "y", "z"]);
        assert_eq!(g.distinct_count(), 3);
        assert_eq!(g.first_levels(2), ["x", "y"]);
        let n = t.column("n").unwrap();
        assert_eq!(n.levels(), ["9", "10", "100"], "numeric order");
        assert_eq!(n.distinct_count(), 3);
        assert_eq!(n.first_levels(1), ["9"]);
    }

    #[test]
    fn progress_is_reported_as_the_text_is_read() {
        let mut csv = String::from("id,group\n");
        for i in 0..400_000 {
            csv.push_str(&format!("p{i},{}\n", i % 2));
        }
        let mut seen = Vec::new();
        read_table_with(csv.as_bytes(), &mut |done, total| seen.push((done, total))).unwrap();
        assert!(seen.len() >= 3, "{seen:?}");
        assert!(seen.windows(2).all(|w| w[0].0 < w[1].0), "{seen:?}");
        assert!(
            seen.iter().all(|&(d, t)| d <= t && t == csv.len()),
            "{seen:?}"
        );
    }

    #[test]
    fn cells_store_text_compactly_and_give_it_back() {
        let v = ["", "a", "", "\u{e9}t\u{e9}", "x,y"];
        let c: Cells = v.iter().collect();
        assert_eq!(c.len(), 5);
        assert_eq!(c.iter().collect::<Vec<_>>(), v);
        assert_eq!(c.iter().next_back(), Some("x,y"));
        assert_eq!((&c[3], c.get(5)), ("\u{e9}t\u{e9}", None));
        assert_eq!(c.text_len(), 9);
        assert!(Cells::new().is_empty());
    }

    #[test]
    fn missing_markers_any_case() {
        for m in ["", "NA", "na", "NaN", ".", "NULL", " null "] {
            assert!(is_missing(m), "{m:?}");
        }
        assert!(!is_missing("0"));
        assert_eq!(parse_number("inf"), None);
        assert_eq!(parse_number(" 3.5 "), Some(3.5));
    }
}
