//! Reading a cohort file: bytes in, a table of named columns out.
//!
//! Accepts UTF-8 with or without a byte-order mark and falls back to
//! Windows-1252 (a superset of Latin-1's printable characters) when the bytes
//! are not UTF-8. The delimiter (comma, semicolon or tab) is detected from the
//! header line. Quoted fields may span lines. Every problem is an
//! [`Error::Data`] naming the row (as a spreadsheet would number it: the header
//! is row 1) and the column.

use crate::{Error, Result};
use serde::Serialize;
use std::collections::BTreeSet;

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

/// One column: its header and its cells as text, with the inferred kind.
#[derive(Debug, Clone)]
pub struct Column {
    /// Header text, trimmed.
    pub name: String,
    /// Cells in row order, as read.
    pub cells: Vec<String>,
    /// Inferred kind; callers may override it.
    pub kind: Kind,
}

impl Column {
    /// Number of missing cells.
    pub fn missing_count(&self) -> usize {
        self.cells.iter().filter(|c| is_missing(c)).count()
    }
    /// The cell as a number, `None` when missing or not numeric.
    pub fn number(&self, row: usize) -> Option<f64> {
        self.cells.get(row).and_then(|c| parse_number(c))
    }
    /// Whether the cell at `row` is missing.
    pub fn is_missing(&self, row: usize) -> bool {
        self.cells.get(row).is_none_or(|c| is_missing(c))
    }
    /// Distinct non-missing values, trimmed, in sorted order (numeric order
    /// when all are numbers, else text order).
    pub fn levels(&self) -> Vec<String> {
        let set: BTreeSet<&str> = self
            .cells
            .iter()
            .map(|c| c.trim())
            .filter(|c| !is_missing(c))
            .collect();
        let mut v: Vec<String> = set.into_iter().map(str::to_string).collect();
        if v.iter().all(|s| parse_number(s).is_some()) {
            v.sort_by(|a, b| {
                let (x, y) = (parse_number(a), parse_number(b));
                x.partial_cmp(&y)
                    .unwrap_or(std::cmp::Ordering::Equal)
                    .then_with(|| a.cmp(b))
            });
        }
        v
    }
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
            delimiter: match self.delimiter {
                ';' => "semicolon",
                '\t' => "tab",
                _ => "comma",
            }
            .to_string(),
            column_summaries: self
                .columns
                .iter()
                .map(|c| ColumnSummary {
                    name: c.name.clone(),
                    kind: c.kind,
                    missing: c.missing_count(),
                    distinct: c.levels().len(),
                })
                .collect(),
        }
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

/// Decode bytes: UTF-8 (byte-order mark dropped) or, failing that, Windows-1252.
pub fn decode(bytes: &[u8]) -> (String, &'static str) {
    let body = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    match std::str::from_utf8(body) {
        Ok(s) => (s.to_string(), "UTF-8"),
        Err(_) => {
            let (text, _, _) = encoding_rs::WINDOWS_1252.decode(body);
            (text.into_owned(), "Windows-1252")
        }
    }
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

/// Find a quote left open at the end of the text; returns the row (header = 1)
/// where the open quoted field started.
fn unterminated_quote(text: &str) -> Option<usize> {
    let mut in_quote = false;
    let mut row = 1;
    let mut opened_at = 1;
    let mut prev_cr = false;
    for b in text.bytes() {
        match b {
            b'"' => {
                in_quote = !in_quote;
                if in_quote {
                    opened_at = row;
                }
            }
            b'\n' if !in_quote && !prev_cr => row += 1,
            b'\r' if !in_quote => row += 1,
            _ => {}
        }
        prev_cr = b == b'\r';
    }
    in_quote.then_some(opened_at)
}

/// Read a cohort file from its bytes.
pub fn read_table(bytes: &[u8]) -> Result<Table> {
    let (text, encoding) = decode(bytes);
    if text.trim().is_empty() {
        return Err(Error::data(
            None,
            None,
            "the file is empty; expected a header line naming the columns, then one row per patient",
        ));
    }
    if let Some(row) = unterminated_quote(&text) {
        return Err(Error::data(
            Some(row),
            None,
            "a quoted field opened here is never closed; add the closing double quote (\") or remove the opening one",
        ));
    }
    let delimiter = detect_delimiter(&text);
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .flexible(true)
        .has_headers(false)
        .from_reader(text.as_bytes());
    let mut records = reader.records();
    let header = match records.next() {
        Some(Ok(h)) => h,
        Some(Err(e)) => {
            return Err(Error::data(
                Some(1),
                None,
                format!("unreadable header: {e}"),
            ))
        }
        None => return Err(Error::data(None, None, "the file has no header line")),
    };
    let names: Vec<String> = header.iter().map(|h| h.trim().to_string()).collect();
    for (i, n) in names.iter().enumerate() {
        if n.is_empty() {
            return Err(Error::data(
                Some(1),
                None,
                format!(
                    "column {} has an empty header; give every column a name",
                    i + 1
                ),
            ));
        }
        if let Some(j) = names[..i].iter().position(|m| m == n) {
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
    let mut cells: Vec<Vec<String>> = vec![Vec::new(); names.len()];
    for (k, rec) in records.enumerate() {
        let row = k + 2;
        let rec = rec.map_err(|e| Error::data(Some(row), None, format!("unreadable row: {e}")))?;
        // A blank line (one empty field) is skipped, as spreadsheets write them.
        if rec.len() == 1 && rec[0].trim().is_empty() && names.len() > 1 {
            continue;
        }
        if rec.len() != names.len() {
            return Err(Error::data(
                Some(row),
                None,
                format!(
                    "this row has {} fields but the header has {}; check for a stray delimiter or a missing quote",
                    rec.len(),
                    names.len()
                ),
            ));
        }
        for (col, field) in cells.iter_mut().zip(rec.iter()) {
            col.push(field.to_string());
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
            let kind = infer_kind(&cells);
            Column { name, cells, kind }
        })
        .collect();
    Ok(Table {
        columns,
        encoding,
        delimiter: delimiter as char,
    })
}

/// Infer a column's kind from its cells (common practice, stated in the user
/// guide): all numbers -> binary if only 0/1, else numeric; otherwise text when
/// values are long (mean over 40 characters) or mostly distinct with more than
/// 50 levels, else categorical.
pub fn infer_kind(cells: &[String]) -> Kind {
    let present: Vec<&str> = cells
        .iter()
        .map(|c| c.trim())
        .filter(|c| !is_missing(c))
        .collect();
    if present.is_empty() {
        return Kind::Numeric;
    }
    let numbers: Option<Vec<f64>> = present.iter().map(|c| parse_number(c)).collect();
    if let Some(xs) = numbers {
        return if xs.iter().all(|&x| x == 0.0 || x == 1.0) {
            Kind::Binary
        } else {
            Kind::Numeric
        };
    }
    let distinct: BTreeSet<&str> = present.iter().copied().collect();
    let mean_len =
        present.iter().map(|c| c.chars().count()).sum::<usize>() as f64 / present.len() as f64;
    if mean_len > 40.0 || (distinct.len() > 50 && distinct.len() * 2 > present.len()) {
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
        assert_eq!(t.columns[1].cells[0], "two\r\nlines");
        assert_eq!(t.n_rows(), 2);
    }

    #[test]
    fn tab_and_latin1() {
        let t = read_table(b"id\tname\n1\tJos\xe9\n").unwrap();
        assert_eq!(t.delimiter, '\t');
        assert_eq!(t.encoding, "Windows-1252");
        assert_eq!(t.columns[1].cells[0], "José");
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
