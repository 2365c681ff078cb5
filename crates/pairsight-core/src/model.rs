//! From a table and its roles to numbers: which rows are used, who is treated,
//! and named numeric terms for the score model, the distances and the balance
//! table.
//!
//! Missing values are never dropped silently. A numeric or binary column with
//! missing cells is filled with the mean of its observed cells (among the rows
//! used) and gets a `<name>.missing` indicator term; a categorical column gets
//! an explicit `(missing)` level. Rows with a missing group are left out and
//! counted. Every fill and every row left out is recorded.

use crate::balance::TermInfo;
pub use crate::balance::TermKind;
use crate::ingest::{is_missing, number_problem, parse_number, Kind, Table};
use crate::study::{parse_term, Columns, TermSpec};
use crate::{Error, Result};
use ndarray::Array2;
use serde::Serialize;
use std::collections::BTreeMap;

/// Named numeric columns over the rows used.
#[derive(Debug, Clone, Default)]
pub struct Terms {
    /// Term names, e.g. `age`, `ward=B`, `creatinine.missing`.
    pub names: Vec<String>,
    /// Kind of each term.
    pub kinds: Vec<TermKind>,
    /// Values: one row per unit used, one column per term.
    pub values: Array2<f64>,
}

impl Terms {
    /// Name and kind of each term, as the balance table takes them.
    pub fn infos(&self) -> Vec<TermInfo> {
        self.names
            .iter()
            .zip(&self.kinds)
            .map(|(name, kind)| TermInfo {
                name: name.clone(),
                kind: *kind,
            })
            .collect()
    }

    fn from_columns(cols: Vec<(String, TermKind, Vec<f64>)>, n: usize) -> Terms {
        let mut values = Array2::zeros((n, cols.len()));
        let mut names = Vec::with_capacity(cols.len());
        let mut kinds = Vec::with_capacity(cols.len());
        for (j, (name, kind, v)) in cols.into_iter().enumerate() {
            values
                .column_mut(j)
                .assign(&ndarray::ArrayView1::from(&v[..]));
            names.push(name);
            kinds.push(kind);
        }
        Terms {
            names,
            kinds,
            values,
        }
    }
}

/// Extra named columns computed from the notes, aligned with the rows used.
#[derive(Debug, Clone, Default)]
pub struct Extras {
    /// Feature names (`note.tokens`, `concept.lives_alone`, ...).
    pub names: Vec<String>,
    /// Kind of each (note or concept).
    pub kinds: Vec<TermKind>,
    /// Values: rows used x features.
    pub values: Array2<f64>,
}

/// A row left out of the analysis, and why.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct LeftOut {
    /// Row as a spreadsheet numbers it (header = 1).
    pub row: usize,
    /// Why it was left out.
    pub reason: String,
}

/// A column whose missing cells were filled.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Fill {
    /// Column name.
    pub column: String,
    /// Number of cells filled.
    pub cells: usize,
    /// How: `mean 63.2 + indicator` or `level (missing)`.
    pub method: String,
}

/// The cohort ready for designs.
#[derive(Debug, Clone)]
pub struct Cohort {
    /// The table as read.
    pub table: Table,
    /// Table rows used (0-based), in file order.
    pub rows: Vec<usize>,
    /// Identifier of each row used.
    pub ids: Vec<String>,
    /// Whether each row used is treated.
    pub treated: Vec<bool>,
    /// Group values: (treated, comparison).
    pub group_values: (String, String),
    /// Rows left out, with reasons.
    pub left_out: Vec<LeftOut>,
    /// Note features for the rows used (empty without a notes column).
    pub extras: Extras,
}

fn same_value(a: &str, b: &str) -> bool {
    let (a, b) = (a.trim(), b.trim());
    match (parse_number(a), parse_number(b)) {
        (Some(x), Some(y)) => x == y,
        _ => a == b,
    }
}

impl Cohort {
    /// Check the roles against the table and pick the rows used.
    pub fn new(mut table: Table, columns: &Columns) -> Result<Cohort> {
        for (name, kind) in &columns.kinds {
            let pos = table.position(name).ok_or_else(|| {
                let names: Vec<&str> = table.columns.iter().map(|c| c.name.as_str()).collect();
                let hint = crate::ingest::nearest(name, &names)
                    .map(|n| format!("; did you mean \"{n}\"?"))
                    .unwrap_or_default();
                Error::study(
                    "columns.kinds",
                    format!("names \"{name}\", which is not a column of the cohort file{hint}"),
                )
            })?;
            table.columns[pos].kind = *kind;
        }
        let keyed = [
            ("columns.outcomes", &columns.outcomes),
            ("columns.covariates", &columns.covariates),
        ];
        for (key, names) in keyed {
            for name in names {
                named_column(&table, key, name)?;
            }
        }
        if let Some(n) = &columns.notes {
            named_column(&table, "columns.notes", n)?;
        }
        let id_col = named_column(&table, "columns.id", &columns.id)?;
        let group_col = named_column(&table, "columns.group", &columns.group)?;
        // "1" and "1.0" (or " 1 ") are one group value, written two ways.
        let mut levels: Vec<String> = Vec::new();
        for l in group_col.levels() {
            if !levels.iter().any(|k| same_value(k, &l)) {
                levels.push(l);
            }
        }
        if levels.len() != 2 {
            let shown: Vec<String> = levels.iter().take(6).map(|l| format!("\"{l}\"")).collect();
            return Err(Error::data(
                None,
                Some(&columns.group),
                format!(
                    "the group column must hold exactly two values, but it holds {}{}{}",
                    levels.len(),
                    if levels.is_empty() { "" } else { ": " },
                    shown.join(", ")
                ),
            ));
        }
        let treated_value = levels
            .iter()
            .find(|l| same_value(l, &columns.treated))
            .cloned()
            .ok_or_else(|| {
                Error::data(
                    None,
                    Some(&columns.group),
                    format!(
                        "the treated value \"{}\" does not occur; the column holds \"{}\" and \"{}\"",
                        columns.treated, levels[0], levels[1]
                    ),
                )
            })?;
        let comparison_value = levels
            .iter()
            .find(|l| **l != treated_value)
            .cloned()
            .unwrap_or_default();
        let mut rows = Vec::new();
        let mut ids = Vec::new();
        let mut treated = Vec::new();
        let mut left_out = Vec::new();
        let mut seen: Vec<(&str, usize)> = Vec::with_capacity(table.n_rows());
        for r in 0..table.n_rows() {
            let sheet_row = r + 2;
            let g = &group_col.cells[r];
            if is_missing(g) {
                left_out.push(LeftOut {
                    row: sheet_row,
                    reason: format!("missing value in the group column \"{}\"", columns.group),
                });
                continue;
            }
            let id = id_col.cells[r].trim();
            if is_missing(id) {
                return Err(Error::data(
                    Some(sheet_row),
                    Some(&columns.id),
                    "missing identifier; every row needs an id",
                ));
            }
            seen.push((id, sheet_row));
            rows.push(r);
            ids.push(id.to_string());
            treated.push(same_value(g, &treated_value));
        }
        // Sorting the ids finds duplicates without a map of millions of
        // entries; the one reported is the first repeat in file order.
        seen.sort_unstable();
        if let Some((id, first, again)) = seen
            .windows(2)
            .filter(|w| w[0].0 == w[1].0)
            .map(|w| (w[0].0, w[0].1, w[1].1))
            .min_by_key(|&(_, _, again)| again)
        {
            return Err(Error::data(
                Some(again),
                Some(&columns.id),
                format!(
                    "duplicate id \"{id}\": rows {first} and {again} share it; ids must be unique"
                ),
            ));
        }
        drop(seen);
        let n_t = treated.iter().filter(|&&t| t).count();
        if n_t == 0 || n_t == treated.len() {
            return Err(Error::data(
                None,
                Some(&columns.group),
                "after leaving out rows with a missing group, only one group remains",
            ));
        }
        Ok(Cohort {
            table,
            rows,
            ids,
            treated,
            group_values: (treated_value, comparison_value),
            left_out,
            extras: Extras::default(),
        })
    }

    /// Number of rows used.
    pub fn len(&self) -> usize {
        self.rows.len()
    }

    /// Whether no rows are used (never true for a validated cohort).
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }

    /// Cells of a column over the rows used, trimmed.
    pub fn cells(&self, column: &str) -> Result<Vec<&str>> {
        let col = self.table.column(column)?;
        Ok(self.rows.iter().map(|&r| col.cells[r].trim()).collect())
    }

    /// Numeric values of an outcome column over the rows used; `None` where
    /// missing. A non-numeric cell is an error naming row and column.
    pub fn outcome(&self, column: &str) -> Result<Vec<Option<f64>>> {
        let col = self.table.column(column)?;
        self.rows
            .iter()
            .map(|&r| {
                let c = &col.cells[r];
                if is_missing(c) {
                    Ok(None)
                } else {
                    col.parse(c).map(Some).ok_or_else(|| {
                        Error::data(Some(r + 2), Some(column), {
                            let (what, advice) = number_problem(c);
                            match advice {
                                Some(a) => format!("outcome value {what}; {a}"),
                                None => format!(
                                    "outcome value {what}; fix the cell or mark it missing (NA)"
                                ),
                            }
                        })
                    })
                }
            })
            .collect()
    }

    fn extra(&self, name: &str) -> Option<(TermKind, Vec<f64>)> {
        let j = self.extras.names.iter().position(|n| n == name)?;
        Some((self.extras.kinds[j], self.extras.values.column(j).to_vec()))
    }

    /// Expand one named column or feature into terms.
    /// `all_levels` keeps every level of a categorical column (balance table);
    /// otherwise the first level in sorted order is the reference (score model).
    fn expand(
        &self,
        name: &str,
        all_levels: bool,
        fills: &mut Vec<Fill>,
    ) -> Result<Vec<(String, TermKind, Vec<f64>)>> {
        if let Some((kind, v)) = self.extra(name) {
            return Ok(vec![(name.to_string(), kind, v)]);
        }
        if name.starts_with("note.") || name.starts_with("concept.") {
            let hint = if self.extras.names.is_empty() {
                "the study has no notes column, so no note features exist".to_string()
            } else {
                let names: Vec<&str> = self.extras.names.iter().map(String::as_str).collect();
                match crate::ingest::nearest(name, &names) {
                    Some(n) => format!("did you mean \"{n}\"?"),
                    None => "see `pairsight features` for the names".to_string(),
                }
            };
            return Err(Error::study(
                "score_terms",
                format!("\"{name}\" is not a note feature of this study; {hint}"),
            ));
        }
        let col = named_column(&self.table, "score_terms", name)?;
        let cells: Vec<&str> = self.rows.iter().map(|&r| col.cells[r].trim()).collect();
        match col.kind {
            Kind::Numeric | Kind::Binary => {
                let mut v = Vec::with_capacity(cells.len());
                let mut missing = vec![0.0; cells.len()];
                let (mut sum, mut n) = (0.0, 0usize);
                for (i, c) in cells.iter().enumerate() {
                    if is_missing(c) {
                        missing[i] = 1.0;
                        v.push(f64::NAN);
                    } else {
                        let x = col.parse(c).ok_or_else(|| {
                            Error::data(
                                Some(self.rows[i] + 2),
                                Some(name),
                                {
                                    let (what, advice) = number_problem(c);
                                    let advice = advice.unwrap_or_else(|| format!(
                                        "fix the cell, or set columns.kinds.{name} = \"categorical\" if the column holds categories"
                                    ));
                                    format!("{what} in a numeric column; {advice}")
                                },
                            )
                        })?;
                        sum += x;
                        n += 1;
                        v.push(x);
                    }
                }
                if n == 0 {
                    return Err(Error::data(
                        None,
                        Some(name),
                        "every value of this covariate is missing; remove it from the study",
                    ));
                }
                let kind = if col.kind == Kind::Binary {
                    TermKind::Binary
                } else {
                    TermKind::Numeric
                };
                let n_missing = cells.len() - n;
                let mut out = Vec::new();
                if n_missing > 0 {
                    let mean = sum / n as f64;
                    for x in v.iter_mut().filter(|x| x.is_nan()) {
                        *x = mean;
                    }
                    fills.push(Fill {
                        column: name.to_string(),
                        cells: n_missing,
                        method: format!("mean of observed values ({mean:.6}) plus indicator {name}.missing"),
                    });
                    out.push((name.to_string(), kind, v));
                    out.push((format!("{name}.missing"), TermKind::Missing, missing));
                } else {
                    out.push((name.to_string(), kind, v));
                }
                Ok(out)
            }
            Kind::Categorical => {
                let mut levels: Vec<String> = col.levels();
                let n_missing = cells.iter().filter(|c| is_missing(c)).count();
                if n_missing > 0 {
                    levels.push("(missing)".to_string());
                    fills.push(Fill {
                        column: name.to_string(),
                        cells: n_missing,
                        method: "explicit level (missing)".to_string(),
                    });
                }
                let skip = usize::from(!all_levels);
                Ok(levels
                    .iter()
                    .skip(skip)
                    .map(|level| {
                        let v = cells
                            .iter()
                            .map(|c| {
                                let hit = if is_missing(c) {
                                    level == "(missing)"
                                } else {
                                    *c == level
                                };
                                f64::from(u8::from(hit))
                            })
                            .collect();
                        (format!("{name}={level}"), TermKind::Level, v)
                    })
                    .collect())
            }
            Kind::Text => Err(Error::data(
                None,
                Some(name),
                format!(
                    "this column holds free text, which cannot be a covariate; make it the notes column, or set columns.kinds.{name} = \"categorical\""
                ),
            )),
        }
    }

    fn numeric_for_derived(&self, name: &str, fills: &mut Vec<Fill>) -> Result<Vec<f64>> {
        let mut cols = self.expand(name, false, fills)?;
        if cols.len() != 1 && !(cols.len() == 2 && cols[1].1 == TermKind::Missing) {
            return Err(Error::study(
                "score_terms",
                format!("square() and product() need numeric columns; \"{name}\" is categorical"),
            ));
        }
        Ok(cols.swap_remove(0).2)
    }

    /// Terms of a score model (or Mahalanobis distance) from the study's term
    /// syntax: categorical columns become indicators against their first level.
    pub fn model_terms(&self, specs: &[String]) -> Result<(Terms, Vec<Fill>)> {
        let mut fills = Vec::new();
        let mut cols = Vec::new();
        for spec in specs {
            match parse_term(spec).map_err(|m| Error::study("score_terms", m))? {
                TermSpec::Plain(name) => cols.extend(self.expand(&name, false, &mut fills)?),
                TermSpec::Square(a) => {
                    let v = self.numeric_for_derived(&a, &mut fills)?;
                    cols.push((
                        format!("square({a})"),
                        TermKind::Derived,
                        v.iter().map(|x| x * x).collect(),
                    ));
                }
                TermSpec::Product(a, b) => {
                    let va = self.numeric_for_derived(&a, &mut fills)?;
                    let vb = self.numeric_for_derived(&b, &mut fills)?;
                    cols.push((
                        format!("product({a}, {b})"),
                        TermKind::Derived,
                        va.iter().zip(&vb).map(|(x, y)| x * y).collect(),
                    ));
                }
            }
        }
        dedup_fills(&mut fills);
        let mut seen = std::collections::BTreeSet::new();
        cols.retain(|(n, _, _)| seen.insert(n.clone()));
        Ok((Terms::from_columns(cols, self.len()), fills))
    }

    /// Terms of the balance table: every level of categorical columns.
    pub fn balance_terms(&self, names: &[String]) -> Result<(Terms, Vec<Fill>)> {
        let mut fills = Vec::new();
        let mut cols = Vec::new();
        let mut seen = std::collections::BTreeSet::new();
        for name in names {
            for col in self.expand(name, true, &mut fills)? {
                if seen.insert(col.0.clone()) {
                    cols.push(col);
                }
            }
        }
        dedup_fills(&mut fills);
        Ok((Terms::from_columns(cols, self.len()), fills))
    }

    /// A key per row for exact agreement on the given columns: rows with the
    /// same key agree on every one of them (missing counts as its own value).
    pub fn exact_keys(&self, columns: &[String]) -> Result<Vec<u32>> {
        let cells: Vec<Vec<&str>> = columns
            .iter()
            .map(|c| {
                named_column(&self.table, "exact", c)?;
                self.cells(c)
            })
            .collect::<Result<_>>()?;
        let mut keys: BTreeMap<Vec<&str>, u32> = BTreeMap::new();
        let mut out = Vec::with_capacity(self.len());
        for i in 0..self.len() {
            let tuple: Vec<&str> = cells
                .iter()
                .map(|col| if is_missing(col[i]) { "" } else { col[i] })
                .collect();
            let next = keys.len() as u32;
            out.push(*keys.entry(tuple).or_insert(next));
        }
        Ok(out)
    }
}

/// A column a study file names under `key`; a missing one is an error about
/// that column which also says where the study file names it, and suggests
/// the nearest column.
fn named_column<'a>(table: &'a Table, key: &str, name: &str) -> Result<&'a crate::ingest::Column> {
    table.column(name).map_err(|e| match e {
        Error::Data {
            row,
            column,
            message,
        } => Error::Data {
            row,
            column,
            message: format!("the study file names it in {key}, but there is {}", message),
        },
        other => other,
    })
}

fn dedup_fills(fills: &mut Vec<Fill>) {
    let mut seen = std::collections::BTreeSet::new();
    fills.retain(|f| seen.insert(f.column.clone()));
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::read_table;

    fn cols() -> Columns {
        Columns {
            id: "id".into(),
            group: "g".into(),
            treated: "1".into(),
            outcomes: vec!["y".into()],
            covariates: vec!["age".into(), "ward".into()],
            notes: None,
            kinds: Default::default(),
        }
    }

    const CSV: &[u8] =
        b"id,g,age,ward,y\na,1,70,B,1\nb,0,NA,A,0\nc,,50,A,0\nd,0,60,,1\ne,1,80,C,0\n";

    #[test]
    fn rows_with_missing_group_are_left_out() {
        let c = Cohort::new(read_table(CSV).unwrap(), &cols()).unwrap();
        assert_eq!(c.ids, ["a", "b", "d", "e"]);
        assert_eq!(c.treated, [true, false, false, true]);
        assert_eq!(
            c.left_out,
            [LeftOut {
                row: 4,
                reason: "missing value in the group column \"g\"".into()
            }]
        );
    }

    #[test]
    fn numeric_fill_and_indicator() {
        let c = Cohort::new(read_table(CSV).unwrap(), &cols()).unwrap();
        let (t, fills) = c.model_terms(&["age".into()]).unwrap();
        assert_eq!(t.names, ["age", "age.missing"]);
        assert_eq!(t.values.column(0).to_vec(), [70.0, 70.0, 60.0, 80.0]);
        assert_eq!(t.values.column(1).to_vec(), [0.0, 1.0, 0.0, 0.0]);
        assert_eq!(fills.len(), 1);
    }

    #[test]
    fn categorical_levels_and_missing_level() {
        let c = Cohort::new(read_table(CSV).unwrap(), &cols()).unwrap();
        let (m, _) = c.model_terms(&["ward".into()]).unwrap();
        assert_eq!(m.names, ["ward=B", "ward=C", "ward=(missing)"]);
        let (b, _) = c.balance_terms(&["ward".into()]).unwrap();
        assert_eq!(b.names, ["ward=A", "ward=B", "ward=C", "ward=(missing)"]);
        assert_eq!(b.values.column(3).to_vec(), [0.0, 0.0, 1.0, 0.0]);
    }

    #[test]
    fn derived_terms() {
        let c = Cohort::new(read_table(CSV).unwrap(), &cols()).unwrap();
        let (t, _) = c
            .model_terms(&["square(age)".into(), "product(age, y)".into()])
            .unwrap();
        assert_eq!(
            t.values.column(0).to_vec(),
            [4900.0, 4900.0, 3600.0, 6400.0]
        );
        assert_eq!(t.values.column(1).to_vec(), [70.0, 0.0, 60.0, 0.0]);
        assert!(c.model_terms(&["square(ward)".into()]).is_err());
    }

    #[test]
    fn group_problems_are_named() {
        let bare = Columns {
            outcomes: vec![],
            covariates: vec![],
            ..cols()
        };
        let e = Cohort::new(read_table(b"id,g\n1,a\n2,b\n3,c\n").unwrap(), &bare).unwrap_err();
        assert!(e.to_string().contains("exactly two values"), "{e}");
        let mut c2 = bare.clone();
        c2.treated = "yes".into();
        let e = Cohort::new(read_table(b"id,g\n1,0\n2,1\n").unwrap(), &c2).unwrap_err();
        assert!(e.to_string().contains("\"yes\" does not occur"), "{e}");
        let e = Cohort::new(read_table(b"id,g\n1,0\n1,1\n").unwrap(), &bare).unwrap_err();
        assert!(e.to_string().contains("rows 2 and 3"), "{e}");
        // The first repeat in file order is the one named.
        let e = Cohort::new(
            read_table(b"id,g\nb,0\na,1\nc,0\nb,1\na,0\nb,1\n").unwrap(),
            &bare,
        )
        .unwrap_err();
        assert!(e.to_string().contains("\"b\": rows 2 and 5"), "{e}");
    }

    #[test]
    fn group_values_written_two_ways_are_one_value() {
        let bare = Columns {
            outcomes: vec![],
            covariates: vec![],
            ..cols()
        };
        let c = Cohort::new(
            read_table(b"id,g\n1,1\n2,1.0\n3,0\n4, 0.0 \n").unwrap(),
            &bare,
        )
        .unwrap();
        assert_eq!(c.treated, [true, true, false, false]);
    }

    #[test]
    fn columns_a_study_names_but_the_file_lacks_say_where() {
        let mut c = cols();
        c.covariates = vec!["agee".into()];
        let e = Cohort::new(read_table(CSV).unwrap(), &c).unwrap_err();
        let text = e.to_string();
        assert!(
            matches!(&e, Error::Data { column: Some(c), .. } if c == "agee")
                && text.contains("names it in columns.covariates")
                && text.contains("did you mean \"age\""),
            "{text}"
        );
        let ok = Cohort::new(read_table(CSV).unwrap(), &cols()).unwrap();
        let e = ok.model_terms(&["wrd".into()]).unwrap_err().to_string();
        assert!(e.contains("names it in score_terms"), "{e}");
        let e = ok.exact_keys(&["wrad".into()]).unwrap_err().to_string();
        assert!(e.contains("names it in exact"), "{e}");
    }

    #[test]
    fn cells_that_are_not_numbers_are_named_with_a_reason() {
        let csv = b"id,g,age,y\na,1,70,1\nb,0,N/A,0\nc,0,60,1\nd,1,80,0\ne,0,65,1\n";
        let c = Cohort::new(read_table(csv).unwrap(), &cols_age_only()).unwrap();
        let e = c.model_terms(&["age".into()]).unwrap_err().to_string();
        assert!(
            e.contains("row 3") && e.contains("\"N/A\"") && e.contains("write NA"),
            "{e}"
        );
        let csv = b"id,g,age,y\na,1,70,1\nb,0,60,\"0,5\"\nc,0,60,1\nd,1,80,0\ne,0,65,1\n";
        let c = Cohort::new(read_table(csv).unwrap(), &cols_age_only()).unwrap();
        let e = c.outcome("y").unwrap_err().to_string();
        assert!(e.contains("row 3") && e.contains("\"0,5\""), "{e}");
    }

    fn cols_age_only() -> Columns {
        Columns {
            covariates: vec!["age".into()],
            ..cols()
        }
    }

    #[test]
    fn exact_keys_group_rows() {
        let c = Cohort::new(read_table(CSV).unwrap(), &cols()).unwrap();
        let k = c.exact_keys(&["ward".into()]).unwrap();
        assert_eq!(k, [0, 1, 2, 3]);
        let k = c.exact_keys(&["y".into()]).unwrap();
        assert_eq!(k, [0, 1, 0, 1]);
    }
}
