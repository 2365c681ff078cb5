//! Ratings files: writing them, and reading any number of them strictly.
//!
//! A ratings file is CSV (RFC 4180, UTF-8, CRLF line ends) with the header
//! `round_id,pair_key,reviewer,rating,comment,time`; `time` is an RFC 3339
//! timestamp such as `2025-03-04T10:15:00.000Z`.
//!
//! Text cells are neutralised against formula injection when written: a cell
//! that a spreadsheet would read as a formula (starting with `=`, `+`, `-`,
//! `@`, a tab or a carriage return) gets a leading apostrophe, as the OWASP
//! guidance on CSV injection recommends. A cell that already starts with an
//! apostrophe followed by one of those characters, or by another apostrophe,
//! gets one too, so that the reader can undo the prefix exactly
//! ([`csv_restore_cell`]).

use super::Round;
use crate::Result;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::fmt;

/// The header of a ratings file, in order.
pub const RATINGS_HEADER: [&str; 6] = [
    "round_id", "pair_key", "reviewer", "rating", "comment", "time",
];

pub use crate::output::{restore_cell as csv_restore_cell, safe_cell as csv_safe_cell};

/// One rating as written to a ratings file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RatingRow {
    /// The round the packet belongs to.
    pub round_id: String,
    /// The rated pair.
    pub pair_key: String,
    /// The reviewer's chosen label.
    pub reviewer: String,
    /// The rating, a point of the round's scale.
    pub rating: i64,
    /// Optional free text.
    pub comment: String,
    /// When the rating was given, RFC 3339.
    pub time: String,
}

/// Writes ratings as a ratings file, text cells neutralised.
pub fn write_ratings_csv(rows: &[RatingRow]) -> Result<String> {
    let mut w = csv::WriterBuilder::new()
        .terminator(csv::Terminator::CRLF)
        .from_writer(Vec::new());
    let io =
        |e: csv::Error| crate::Error::compute(format!("could not write the ratings file: {e}"));
    w.write_record(RATINGS_HEADER).map_err(io)?;
    for r in rows {
        w.write_record([
            csv_safe_cell(&r.round_id),
            csv_safe_cell(&r.pair_key),
            csv_safe_cell(&r.reviewer),
            r.rating.to_string(),
            csv_safe_cell(&r.comment),
            csv_safe_cell(&r.time),
        ])
        .map_err(io)?;
    }
    let bytes = w
        .into_inner()
        .map_err(|e| crate::Error::compute(format!("could not write the ratings file: {e}")))?;
    String::from_utf8(bytes)
        .map_err(|e| crate::Error::compute(format!("ratings file is not UTF-8: {e}")))
}

/// Milliseconds since 1970-01-01T00:00:00Z of an RFC 3339 timestamp
/// (`YYYY-MM-DDTHH:MM:SS[.fraction](Z|±HH:MM)`), or `None` when it is not
/// one. Leap seconds are not accepted.
pub fn parse_time(s: &str) -> Option<i64> {
    let b = s.as_bytes();
    let num = |from: usize, len: usize| -> Option<i64> {
        let part = b.get(from..from + len)?;
        if !part.iter().all(u8::is_ascii_digit) {
            return None;
        }
        std::str::from_utf8(part).ok()?.parse().ok()
    };
    let sep = |i: usize, c: &[u8]| b.get(i).is_some_and(|x| c.contains(x));
    if !(sep(4, b"-") && sep(7, b"-") && sep(10, b"Tt") && sep(13, b":") && sep(16, b":")) {
        return None;
    }
    let (y, mo, d, h, mi, se) = (
        num(0, 4)?,
        num(5, 2)?,
        num(8, 2)?,
        num(11, 2)?,
        num(14, 2)?,
        num(17, 2)?,
    );
    let leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
    let days_in = [
        31,
        if leap { 29 } else { 28 },
        31,
        30,
        31,
        30,
        31,
        31,
        30,
        31,
        30,
        31,
    ];
    if !(1..=12).contains(&mo)
        || d < 1
        || d > days_in[(mo - 1) as usize]
        || h > 23
        || mi > 59
        || se > 59
    {
        return None;
    }
    let mut i = 19;
    let mut ms = 0i64;
    if sep(i, b".") {
        i += 1;
        let start = i;
        while b.get(i).is_some_and(u8::is_ascii_digit) {
            i += 1;
        }
        if i == start {
            return None;
        }
        let frac = &s[start..i];
        let first3: String = frac.chars().chain("000".chars()).take(3).collect();
        ms = first3.parse().ok()?;
    }
    let offset_min = match b.get(i) {
        Some(b'Z') | Some(b'z') if i + 1 == b.len() => 0,
        Some(&c) if (c == b'+' || c == b'-') && i + 6 == b.len() && sep(i + 3, b":") => {
            let (oh, om) = (num(i + 1, 2)?, num(i + 4, 2)?);
            if oh > 23 || om > 59 {
                return None;
            }
            let m = oh * 60 + om;
            if c == b'+' {
                m
            } else {
                -m
            }
        }
        _ => return None,
    };
    // Days from the civil date (Hinnant 2013, "chrono-Compatible Low-Level
    // Date Algorithms").
    let yy = if mo <= 2 { y - 1 } else { y };
    let era = yy.div_euclid(400);
    let yoe = yy - era * 400;
    let mp = (mo + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    let days = era * 146_097 + doe - 719_468;
    Some(((days * 24 + h) * 60 + mi - offset_min) * 60_000 + se * 1000 + ms)
}

/// A ratings file to read: its name (for messages) and its bytes.
#[derive(Debug, Clone, PartialEq)]
pub struct RatingsFile {
    /// File name as the analyst knows it.
    pub name: String,
    /// Raw bytes.
    pub bytes: Vec<u8>,
}

/// How serious a problem found while reading ratings is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Severity {
    /// The row (or file) was left out.
    Error,
    /// The row was read; something deserves a look.
    Warning,
}

/// A problem found while reading ratings, with where it is.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RatingIssue {
    /// Error or warning.
    pub severity: Severity,
    /// File name.
    pub file: String,
    /// 1-based record number (the header is row 1), when it concerns a row.
    pub row: Option<usize>,
    /// Column name, when it concerns a cell.
    pub column: Option<String>,
    /// What is wrong and what to do.
    pub message: String,
}

impl fmt::Display for RatingIssue {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let kind = match self.severity {
            Severity::Error => "error",
            Severity::Warning => "warning",
        };
        write!(f, "{kind}: {}", self.file)?;
        if let Some(r) = self.row {
            write!(f, ", row {r}")?;
        }
        if let Some(c) = &self.column {
            write!(f, ", column \"{c}\"")?;
        }
        write!(f, ": {}", self.message)
    }
}

/// One accepted rating, with where it was read.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Rating {
    /// The rated pair.
    pub pair_key: String,
    /// The reviewer's label.
    pub reviewer: String,
    /// The rating.
    pub rating: i64,
    /// Free-text comment, as the reviewer wrote it.
    pub comment: String,
    /// Time as written.
    pub time: String,
    /// Time in milliseconds since 1970 (UTC).
    pub time_ms: i64,
    /// File it came from.
    pub file: String,
    /// Its row in that file (header = 1).
    pub row: usize,
}

/// The ratings of a round, merged from any number of files.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MergedRatings {
    /// The round they belong to.
    pub round_id: String,
    /// One rating per reviewer and pair, in the round's pair order, then by
    /// reviewer.
    pub ratings: Vec<Rating>,
    /// Every problem found, in reading order.
    pub issues: Vec<RatingIssue>,
}

impl MergedRatings {
    /// Whether any row or file was left out.
    pub fn has_errors(&self) -> bool {
        self.issues.iter().any(|i| i.severity == Severity::Error)
    }

    /// The merged ratings if nothing was left out; otherwise an error that
    /// lists every problem.
    pub fn strict(self) -> Result<Self> {
        let errors: Vec<String> = self
            .issues
            .iter()
            .filter(|i| i.severity == Severity::Error)
            .map(ToString::to_string)
            .collect();
        if errors.is_empty() {
            return Ok(self);
        }
        Err(crate::Error::data(
            None,
            None,
            format!(
                "{} problem(s) in the ratings files; fix or remove those rows and read them again:\n{}",
                errors.len(),
                errors.join("\n")
            ),
        ))
    }

    /// Reviewer labels, sorted.
    pub fn reviewers(&self) -> Vec<String> {
        let mut r: Vec<String> = self.ratings.iter().map(|r| r.reviewer.clone()).collect();
        r.sort();
        r.dedup();
        r
    }
}

/// Reads ratings files against a round: every row is checked, problems are
/// reported with file, row and column, bad rows are left out.
///
/// Checked: the header; that each row belongs to this round (a file from
/// another round is reported once, with its round id); that the pair key is
/// one of the round's; a non-empty reviewer; a whole-number rating on the
/// round's scale; an RFC 3339 time. When a reviewer rated the same pair more
/// than once, the rating with the later time is kept (on equal times, the
/// one read later) and a warning names both; identical repeats, as when a
/// reviewer exports twice, are summarised in one warning per file.
pub fn merge_ratings(round: &Round, files: &[RatingsFile]) -> MergedRatings {
    let pair_order: BTreeMap<&str, usize> = round
        .items
        .iter()
        .enumerate()
        .map(|(i, it)| (it.pair_key.as_str(), i))
        .collect();
    let mut issues = Vec::new();
    let mut kept: BTreeMap<(String, String), Rating> = BTreeMap::new();
    // Identical repeats per (file read now, file read before).
    let mut repeats: BTreeMap<(String, String), usize> = BTreeMap::new();

    for file in files {
        let issue =
            |row: Option<usize>, column: Option<&str>, severity, message: String| RatingIssue {
                severity,
                file: file.name.clone(),
                row,
                column: column.map(str::to_string),
                message,
            };
        let bytes = file
            .bytes
            .strip_prefix(b"\xEF\xBB\xBF")
            .unwrap_or(&file.bytes);
        if std::str::from_utf8(bytes).is_err() {
            issues.push(issue(
                None,
                None,
                Severity::Error,
                "the file is not UTF-8 text; export the ratings again from the packet".into(),
            ));
            continue;
        }
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .from_reader(bytes);
        let mut records = reader.records();
        match records.next() {
            None => {
                issues.push(issue(Some(1), None, Severity::Error, "the file is empty; it should start with the header round_id,pair_key,reviewer,rating,comment,time".into()));
                continue;
            }
            Some(Err(e)) => {
                issues.push(issue(
                    Some(1),
                    None,
                    Severity::Error,
                    format!("the header cannot be read: {e}"),
                ));
                continue;
            }
            Some(Ok(h)) => {
                let got: Vec<String> = h.iter().map(|c| c.trim().to_ascii_lowercase()).collect();
                if got != RATINGS_HEADER {
                    issues.push(issue(
                        Some(1),
                        None,
                        Severity::Error,
                        format!(
                            "this is not a ratings file: expected the header {}, found {}",
                            RATINGS_HEADER.join(","),
                            got.join(",")
                        ),
                    ));
                    continue;
                }
            }
        }
        let mut foreign: BTreeMap<String, (usize, usize)> = BTreeMap::new();
        let mut rows_read = 0;
        for (i, rec) in records.enumerate() {
            let row = i + 2;
            rows_read += 1;
            let rec = match rec {
                Ok(r) => r,
                Err(e) => {
                    issues.push(issue(
                        Some(row),
                        None,
                        Severity::Error,
                        format!("the row cannot be read as CSV: {e}"),
                    ));
                    continue;
                }
            };
            if rec.len() != RATINGS_HEADER.len() {
                issues.push(issue(
                    Some(row),
                    None,
                    Severity::Error,
                    format!(
                        "the row has {} cells; a ratings row has {}",
                        rec.len(),
                        RATINGS_HEADER.len()
                    ),
                ));
                continue;
            }
            let cell = |k: usize| csv_restore_cell(rec.get(k).unwrap_or(""));
            let round_id = cell(0).trim().to_string();
            if round_id != round.round_id {
                let e = foreign.entry(round_id).or_insert((row, 0));
                e.1 += 1;
                continue;
            }
            let mut ok = true;
            let pair_key = cell(1).trim().to_string();
            if !pair_order.contains_key(pair_key.as_str()) {
                issues.push(issue(
                    Some(row),
                    Some("pair_key"),
                    Severity::Error,
                    format!(
                        "pair key \"{pair_key}\" is not part of round {}",
                        round.round_id
                    ),
                ));
                ok = false;
            }
            let reviewer = cell(2).trim().to_string();
            if reviewer.is_empty() {
                issues.push(issue(
                    Some(row),
                    Some("reviewer"),
                    Severity::Error,
                    "the reviewer is empty; every rating needs the reviewer's label".into(),
                ));
                ok = false;
            }
            let raw = cell(3);
            let raw = raw.trim();
            let rating = if !raw.is_empty()
                && raw
                    .trim_start_matches(['-', '+'])
                    .bytes()
                    .all(|b| b.is_ascii_digit())
                && raw.len() < 12
            {
                raw.parse::<i64>().ok()
            } else {
                None
            };
            match rating {
                None => {
                    issues.push(issue(
                        Some(row),
                        Some("rating"),
                        Severity::Error,
                        format!(
                            "rating \"{raw}\" is not a whole number from {} to {}",
                            round.scale.min, round.scale.max
                        ),
                    ));
                    ok = false;
                }
                Some(r) if !round.scale.contains(r) => {
                    issues.push(issue(
                        Some(row),
                        Some("rating"),
                        Severity::Error,
                        format!(
                            "rating {r} is outside the scale {} to {}",
                            round.scale.min, round.scale.max
                        ),
                    ));
                    ok = false;
                }
                _ => {}
            }
            let time = cell(5).trim().to_string();
            let time_ms = parse_time(&time);
            if time_ms.is_none() {
                issues.push(issue(
                    Some(row),
                    Some("time"),
                    Severity::Error,
                    format!(
                        "time \"{time}\" is not an RFC 3339 timestamp such as 2025-03-04T10:15:00Z"
                    ),
                ));
                ok = false;
            }
            let (Some(rating), Some(time_ms), true) = (rating, time_ms, ok) else {
                continue;
            };
            let new = Rating {
                pair_key,
                reviewer,
                rating,
                comment: cell(4),
                time,
                time_ms,
                file: file.name.clone(),
                row,
            };
            let k = (new.reviewer.clone(), new.pair_key.clone());
            match kept.get(&k) {
                None => {
                    kept.insert(k, new);
                }
                Some(old)
                    if old.rating == new.rating
                        && old.comment == new.comment
                        && old.time_ms == new.time_ms =>
                {
                    *repeats
                        .entry((file.name.clone(), old.file.clone()))
                        .or_insert(0) += 1;
                }
                Some(old) => {
                    let later_is_new = new.time_ms >= old.time_ms;
                    let keep = if later_is_new { &new } else { old };
                    issues.push(issue(
                        Some(row),
                        Some("pair_key"),
                        Severity::Warning,
                        format!(
                            "reviewer \"{}\" rated pair {} more than once ({} row {}: {} at {}; {} row {}: {} at {}); kept the later rating, {} from {} row {}",
                            new.reviewer, new.pair_key,
                            old.file, old.row, old.rating, old.time,
                            new.file, new.row, new.rating, new.time,
                            keep.rating, keep.file, keep.row,
                        ),
                    ));
                    if later_is_new {
                        kept.insert(k, new);
                    }
                }
            }
        }
        if rows_read == 0 {
            issues.push(issue(
                None,
                None,
                Severity::Warning,
                "the file holds no ratings, only the header; it was probably exported before any pair was rated: ask the reviewer to export again".into(),
            ));
        }
        for (id, (first_row, n)) in foreign {
            issues.push(issue(
                Some(first_row),
                Some("round_id"),
                Severity::Error,
                format!(
                    "{n} row(s) belong to round \"{id}\", not to this round {}; this file was made from another round's packet; ask the reviewer for the ratings file of this round's packet",
                    round.round_id
                ),
            ));
        }
    }
    for ((now, before), n) in repeats {
        let source = if now == before {
            "earlier in the same file".to_string()
        } else {
            format!("from {before}")
        };
        issues.push(RatingIssue {
            severity: Severity::Warning,
            file: now,
            row: None,
            column: None,
            message: format!("{n} rating(s) repeat ratings already read {source}, identically; each is counted once"),
        });
    }
    let mut ratings: Vec<Rating> = kept.into_values().collect();
    ratings.sort_by(|a, b| {
        pair_order[a.pair_key.as_str()]
            .cmp(&pair_order[b.pair_key.as_str()])
            .then(a.reviewer.cmp(&b.reviewer))
    });
    MergedRatings {
        round_id: round.round_id.clone(),
        ratings,
        issues,
    }
}

#[cfg(test)]
mod tests {
    use super::super::tests::designs;
    use super::super::{draw_round, ReviewParams};
    use super::*;

    fn round() -> Round {
        draw_round(
            &designs(10),
            &ReviewParams {
                sets_per_design: 5,
                ..ReviewParams::default()
            },
        )
        .unwrap()
    }

    fn rows(round: &Round, reviewer: &str, minute: u32) -> Vec<RatingRow> {
        round
            .items
            .iter()
            .enumerate()
            .map(|(i, it)| RatingRow {
                round_id: round.round_id.clone(),
                pair_key: it.pair_key.clone(),
                reviewer: reviewer.into(),
                rating: 1 + (i as i64 % 5),
                comment: if i == 0 {
                    "=HYPERLINK(\"x\")".into()
                } else {
                    String::new()
                },
                time: format!("2025-03-04T10:{minute:02}:{:02}.000Z", i),
            })
            .collect()
    }

    fn file(name: &str, text: &str) -> RatingsFile {
        RatingsFile {
            name: name.into(),
            bytes: text.as_bytes().to_vec(),
        }
    }

    #[test]
    fn safe_cells_round_trip_exactly() {
        for s in [
            "=1+2", "+x", "-3", "@SUM(A1)", "\tx", "'=x", "''", "'a", "plain", "", "a=b", "'",
        ] {
            assert_eq!(csv_restore_cell(&csv_safe_cell(s)), s, "{s:?}");
        }
        assert_eq!(csv_safe_cell("=1+2"), "'=1+2");
        assert_eq!(csv_safe_cell("'a"), "'a");
        assert_eq!(csv_safe_cell("-3"), "'-3");
    }

    #[test]
    fn written_files_read_back() {
        let r = round();
        let a = write_ratings_csv(&rows(&r, "reviewer A", 1)).unwrap();
        assert!(a.starts_with("round_id,pair_key,reviewer,rating,comment,time\r\n"));
        assert!(a.contains("'=HYPERLINK"), "formula neutralised on writing");
        let b = write_ratings_csv(&rows(&r, "reviewer B", 2)).unwrap();
        let m = merge_ratings(&r, &[file("a.csv", &a), file("b.csv", &b)]);
        assert!(m.issues.is_empty(), "{:?}", m.issues);
        assert_eq!(m.ratings.len(), 2 * r.items.len());
        assert_eq!(m.reviewers(), vec!["reviewer A", "reviewer B"]);
        assert_eq!(m.ratings[0].pair_key, r.items[0].pair_key);
        let first = m
            .ratings
            .iter()
            .find(|x| x.pair_key == r.items[0].pair_key)
            .unwrap();
        assert_eq!(
            first.comment, "=HYPERLINK(\"x\")",
            "apostrophe removed on reading"
        );
        assert!(m.strict().is_ok());
    }

    #[test]
    fn duplicates_keep_the_later_rating_and_warn() {
        let r = round();
        let early = rows(&r, "A", 1);
        let mut late = rows(&r, "A", 5);
        late[2].rating = if late[2].rating == 5 { 4 } else { 5 };
        let want = late[2].rating;
        // The later file is read first: the later time must still win.
        let m = merge_ratings(
            &r,
            &[
                file("late.csv", &write_ratings_csv(&late[2..3]).unwrap()),
                file("early.csv", &write_ratings_csv(&early).unwrap()),
            ],
        );
        let kept = m
            .ratings
            .iter()
            .find(|x| x.pair_key == late[2].pair_key)
            .unwrap();
        assert_eq!(kept.rating, want);
        assert_eq!(kept.file, "late.csv");
        let w: Vec<_> = m
            .issues
            .iter()
            .filter(|i| i.severity == Severity::Warning)
            .collect();
        assert_eq!(w.len(), 1, "{:?}", m.issues);
        assert!(
            w[0].to_string().contains("more than once") && w[0].to_string().contains("early.csv")
        );
        assert!(!m.has_errors());
    }

    #[test]
    fn a_file_of_only_the_header_is_named() {
        let r = round();
        let a = write_ratings_csv(&rows(&r, "A", 1)).unwrap();
        let empty = write_ratings_csv(&[]).unwrap();
        let m = merge_ratings(&r, &[file("a.csv", &a), file("empty.csv", &empty)]);
        assert_eq!(m.ratings.len(), r.items.len());
        assert_eq!(m.issues.len(), 1, "{:?}", m.issues);
        let i = &m.issues[0];
        assert_eq!(
            (i.severity, i.file.as_str()),
            (Severity::Warning, "empty.csv")
        );
        assert!(i.message.contains("no ratings"), "{}", i.message);
        assert!(!m.has_errors());
    }

    #[test]
    fn identical_repeats_are_summarised() {
        let r = round();
        let a = write_ratings_csv(&rows(&r, "A", 1)).unwrap();
        let m = merge_ratings(&r, &[file("a.csv", &a), file("a-again.csv", &a)]);
        assert_eq!(m.ratings.len(), r.items.len());
        assert_eq!(m.issues.len(), 1);
        assert!(m.issues[0]
            .message
            .contains(&format!("{} rating(s) repeat", r.items.len())));
    }

    #[test]
    fn bad_rows_are_named_by_file_row_and_column() {
        let r = round();
        let k = &r.items[0].pair_key;
        let id = &r.round_id;
        let text = format!(
            "round_id,pair_key,reviewer,rating,comment,time\n\
             {id},{k},A,3,,2025-03-04T10:00:00Z\n\
             {id},ZZZ-ZZZ,A,3,,2025-03-04T10:00:00Z\n\
             {id},{k},B,9,,2025-03-04T10:00:00Z\n\
             {id},{k},C,x,,2025-03-04T10:00:00Z\n\
             {id},{k},,3,,2025-03-04T10:00:00Z\n\
             {id},{k},D,3,,yesterday\n\
             {id},{k},E,3\n"
        );
        let m = merge_ratings(&r, &[file("mixed.csv", &text)]);
        assert_eq!(m.ratings.len(), 1);
        let got: Vec<(Option<usize>, Option<&str>)> = m
            .issues
            .iter()
            .map(|i| (i.row, i.column.as_deref()))
            .collect();
        assert_eq!(
            got,
            vec![
                (Some(3), Some("pair_key")),
                (Some(4), Some("rating")),
                (Some(5), Some("rating")),
                (Some(6), Some("reviewer")),
                (Some(7), Some("time")),
                (Some(8), None),
            ]
        );
        assert!(m.issues[1].to_string().starts_with(
            "error: mixed.csv, row 4, column \"rating\": rating 9 is outside the scale 1 to 5"
        ));
        let err = m.strict().unwrap_err().to_string();
        assert!(err.contains("6 problem(s)"), "{err}");
    }

    #[test]
    fn a_file_from_another_round_is_reported_once() {
        let r = round();
        let mut other = rows(&r, "A", 1);
        for o in &mut other {
            o.round_id = "R-0000000000".into();
        }
        let m = merge_ratings(&r, &[file("old.csv", &write_ratings_csv(&other).unwrap())]);
        assert!(m.ratings.is_empty());
        assert_eq!(m.issues.len(), 1);
        let s = m.issues[0].to_string();
        assert!(
            s.contains("R-0000000000") && s.contains("another round") && s.contains("row 2"),
            "{s}"
        );
    }

    #[test]
    fn wrong_header_empty_and_binary_files_are_errors() {
        let r = round();
        let m = merge_ratings(
            &r,
            &[
                file("x.csv", "id,group\n1,2\n"),
                file("empty.csv", ""),
                RatingsFile {
                    name: "bin".into(),
                    bytes: vec![0xff, 0xfe, 0x00],
                },
            ],
        );
        assert_eq!(m.issues.len(), 3);
        assert!(m.issues.iter().all(|i| i.severity == Severity::Error));
        assert!(m.issues[0].message.contains("not a ratings file"));
    }

    #[test]
    fn a_byte_order_mark_is_accepted() {
        let r = round();
        let text = format!("\u{feff}{}", write_ratings_csv(&rows(&r, "A", 1)).unwrap());
        assert!(merge_ratings(&r, &[file("bom.csv", &text)])
            .issues
            .is_empty());
    }

    #[test]
    fn times_parse_to_epoch_milliseconds() {
        // 2000-01-01T00:00:00Z is 946684800 s after 1970 (a well-known
        // constant, from memory; cross-checked by the offset case below).
        assert_eq!(parse_time("2000-01-01T00:00:00Z"), Some(946_684_800_000));
        assert_eq!(parse_time("1970-01-01T00:00:00.5Z"), Some(500));
        assert_eq!(
            parse_time("2000-01-01T01:30:00+01:30"),
            Some(946_684_800_000)
        );
        assert_eq!(
            parse_time("2024-02-29T12:00:00.123z"),
            Some(parse_time("2024-02-29T12:00:00Z").unwrap() + 123)
        );
        for bad in [
            "2023-02-29T00:00:00Z",
            "2025-13-01T00:00:00Z",
            "2025-01-01 00:00:00Z",
            "2025-01-01T00:00:00",
            "2025-01-01T00:00:00.Z",
            "yesterday",
            "",
        ] {
            assert_eq!(parse_time(bad), None, "{bad}");
        }
    }
}
