//! The worker's session: the cohort it read, the prepared analysis (note
//! features included) and the runs of each design, kept between calls so
//! that editing a design never re-reads the file or recomputes the notes.
//!
//! One session per worker. The page's worker is single-threaded, so the
//! state lives in a thread-local cell; a cancelled call ends the worker and
//! with it the session, and the page sends the file and study again.

use pairsight_core::balance::{BalanceRow, TermKind};
use pairsight_core::ingest::{read_table_with, Kind, Table, TableSummary};
use pairsight_core::model::{Fill, LeftOut};
use pairsight_core::notes::{self, Highlight, TermShift};
use pairsight_core::run::{Analysis, DesignRun, OutcomeEffect, OutputFile, Summary};
use pairsight_core::study::{Design, Study};
use pairsight_core::{stats, Error, Result};
use serde::Serialize;
use std::cell::RefCell;
use std::collections::BTreeMap;

#[derive(Default)]
struct State {
    table: Option<Table>,
    analysis: Option<Analysis>,
    runs: BTreeMap<String, DesignRun>,
}

thread_local! {
    static STATE: RefCell<State> = RefCell::new(State::default());
}

fn no_file() -> Error {
    Error::param("session", "no cohort is open: open a file first")
}

fn not_prepared() -> Error {
    Error::param(
        "session",
        "the study is not set: assign the roles (id and group) first",
    )
}

/// Read a cohort file and make it the session's table; forgets any study.
fn open_with(bytes: &[u8], progress: &mut dyn FnMut(usize, usize)) -> Result<TableSummary> {
    // The old session's memory is free for the new file before it is read.
    STATE.with(|s| *s.borrow_mut() = State::default());
    let table = read_table_with(bytes, progress)?;
    let summary = table.summary();
    STATE.with(|s| {
        *s.borrow_mut() = State {
            table: Some(table),
            ..State::default()
        }
    });
    Ok(summary)
}

/// The largest cohort file the page reads. Reading needs the file's bytes
/// and its cells at once (about two to three times the file in memory, see
/// `docs/validation.md`), and a page's WebAssembly memory ends at 4 GiB.
pub const MAX_FILE_BYTES: usize = 1_000_000_000;

thread_local! {
    /// A file on its way in, chunk by chunk ([`begin`], [`push`], [`finish`]).
    static INCOMING: RefCell<Option<Incoming>> = const { RefCell::new(None) };
}

struct Incoming {
    bytes: Vec<u8>,
    size: usize,
}

fn megabytes(n: usize) -> String {
    format!("{:.1} MB", n as f64 / 1e6)
}

/// Start taking in a file of `size` bytes: refused up front when it is too
/// large for the page, and its memory reserved at once so that a file the
/// browser cannot hold fails here, with a message, rather than half-way.
/// Forgets the previous session.
pub fn begin(size: usize) -> Result<()> {
    INCOMING.with(|i| *i.borrow_mut() = None);
    STATE.with(|s| *s.borrow_mut() = State::default());
    if size > MAX_FILE_BYTES {
        return Err(Error::data(
            None,
            None,
            format!(
                "the file is {}; this page reads cohort files up to {} (reading needs two to three times the file's size in the browser's memory); use the command-line tool, `pairsight match`, for larger files, or save only the columns the study uses",
                megabytes(size),
                megabytes(MAX_FILE_BYTES)
            ),
        ));
    }
    let mut bytes = Vec::new();
    bytes.try_reserve_exact(size).map_err(|_| {
        Error::data(
            None,
            None,
            format!(
                "the browser could not set aside {} of memory for this file; close other tabs and try again, or use the command-line tool, `pairsight match`",
                megabytes(size)
            ),
        )
    })?;
    INCOMING.with(|i| *i.borrow_mut() = Some(Incoming { bytes, size }));
    Ok(())
}

/// Append the next chunk of the file announced by [`begin`].
pub fn push(chunk: &[u8]) -> Result<()> {
    INCOMING.with(|i| {
        let mut i = i.borrow_mut();
        let incoming = i.as_mut().ok_or_else(|| {
            Error::param(
                "session",
                "no file is being read: the page must begin one first",
            )
        })?;
        if incoming.bytes.len() + chunk.len() > incoming.size {
            *i = None;
            return Err(Error::data(
                None,
                None,
                "the file grew while it was being read; save it again and reopen it",
            ));
        }
        incoming.bytes.extend_from_slice(chunk);
        Ok(())
    })
}

/// Read the file taken in by [`begin`] and [`push`] as the session's table,
/// reporting progress as [`read_table_with`] does; its bytes are freed
/// before the summary is made.
pub fn finish(progress: &mut dyn FnMut(usize, usize)) -> Result<TableSummary> {
    let incoming = INCOMING.with(|i| i.borrow_mut().take()).ok_or_else(|| {
        Error::param(
            "session",
            "no file is being read: the page must begin one first",
        )
    })?;
    if incoming.bytes.len() != incoming.size {
        return Err(Error::data(
            None,
            None,
            format!(
                "only {} of the file's {} arrived; reopen it",
                megabytes(incoming.bytes.len()),
                megabytes(incoming.size)
            ),
        ));
    }
    open_with(&incoming.bytes, progress)
}

/// Summary statistics of one variable in one group (descriptive, for the
/// note-feature screen; balance itself comes from the core's balance table).
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct GroupSpread {
    /// Units in the group.
    pub n: usize,
    /// Mean.
    pub mean: f64,
    /// Share of units with a value other than zero.
    pub nonzero: f64,
    /// Minimum, lower quartile, median, upper quartile, maximum (type-7
    /// quantiles, the default of R and numpy).
    pub five: [f64; 5],
}

/// One note feature's distribution in the two groups.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct FeatureSpread {
    /// Feature name, e.g. `concept.fall` or `note.flesch`.
    pub name: String,
    /// `note` or `concept`.
    pub kind: String,
    /// Treated units.
    pub treated: GroupSpread,
    /// Comparison units.
    pub comparison: GroupSpread,
}

/// What preparing a study gives the page.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Prepared {
    /// Whether the note features were computed by this call (false when an
    /// edit touched only designs and the cached ones were kept).
    pub notes_recomputed: bool,
    /// Rows used.
    pub rows_used: usize,
    /// Treated units.
    pub treated: usize,
    /// Comparison units.
    pub comparison: usize,
    /// Group values (treated, comparison).
    pub group_values: (String, String),
    /// Rows left out, with reasons.
    pub left_out: Vec<LeftOut>,
    /// Missing values filled among the balance terms.
    pub fills: Vec<Fill>,
    /// Terms of the balance table with whether each comes from the notes.
    pub balance_terms: Vec<(String, bool)>,
    /// Every note feature's distribution by group.
    pub note_features: Vec<FeatureSpread>,
    /// Names of designs whose cached run is still valid.
    pub cached_runs: Vec<String>,
}

fn spread(values: &[f64]) -> GroupSpread {
    let mut sorted: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    sorted.sort_by(|a, b| a.total_cmp(b));
    let q = |p: f64| {
        if sorted.is_empty() {
            f64::NAN
        } else {
            stats::quantile_sorted(&sorted, p)
        }
    };
    GroupSpread {
        n: sorted.len(),
        mean: if sorted.is_empty() {
            f64::NAN
        } else {
            stats::mean(&sorted)
        },
        nonzero: if sorted.is_empty() {
            f64::NAN
        } else {
            sorted.iter().filter(|&&v| v != 0.0).count() as f64 / sorted.len() as f64
        },
        five: [q(0.0), q(0.25), q(0.5), q(0.75), q(1.0)],
    }
}

fn prepared(a: &Analysis, notes_recomputed: bool, cached_runs: Vec<String>) -> Prepared {
    let treated = &a.cohort.treated;
    let x = &a.cohort.extras;
    let note_features = x
        .names
        .iter()
        .enumerate()
        .map(|(j, name)| {
            let col = x.values.column(j);
            let (mut t, mut c) = (Vec::new(), Vec::new());
            for (v, &tr) in col.iter().zip(treated) {
                if tr {
                    t.push(*v)
                } else {
                    c.push(*v)
                }
            }
            FeatureSpread {
                name: name.clone(),
                kind: if x.kinds[j] == TermKind::Concept {
                    "concept".into()
                } else {
                    "note".into()
                },
                treated: spread(&t),
                comparison: spread(&c),
            }
        })
        .collect();
    let n_t = treated.iter().filter(|&&t| t).count();
    Prepared {
        notes_recomputed,
        rows_used: a.cohort.len(),
        treated: n_t,
        comparison: treated.len() - n_t,
        group_values: a.cohort.group_values.clone(),
        left_out: a.cohort.left_out.clone(),
        fills: a.fills.clone(),
        balance_terms: a
            .balance_terms
            .names
            .iter()
            .zip(&a.balance_terms.kinds)
            .map(|(n, k)| (n.clone(), k.is_note_derived()))
            .collect(),
        note_features,
        cached_runs,
    }
}

/// Set the session's study: roles, concepts, note options and designs. The
/// note features are recomputed only when roles, concepts or note options
/// changed; runs of unchanged designs are kept when the balance terms are
/// unchanged too.
pub fn prepare(study: Study) -> Result<Prepared> {
    STATE.with(|s| {
        let mut s = s.borrow_mut();
        let table = s.table.as_ref().ok_or_else(no_file)?;
        let (analysis, recomputed) = match &s.analysis {
            Some(old) => {
                let same_notes = old.study.columns == study.columns
                    && old.study.concepts == study.concepts
                    && old.study.note_options == study.note_options;
                (old.with_study(study)?, !same_notes)
            }
            None => (Analysis::from_table(table.clone(), study)?, true),
        };
        let keep_runs = !recomputed
            && s.analysis.as_ref().map(|o| &o.balance_terms.names)
                == Some(&analysis.balance_terms.names);
        let old_runs = std::mem::take(&mut s.runs);
        if keep_runs {
            for (name, run) in old_runs {
                if analysis.study.designs.contains(&run.design) {
                    s.runs.insert(name, run);
                }
            }
        }
        let cached = s.runs.keys().cloned().collect();
        let out = prepared(&analysis, recomputed, cached);
        s.analysis = Some(analysis);
        Ok(out)
    })
}

/// A matched set as the pair view lists it.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct SetView {
    /// Row (among rows used) of the treated unit.
    pub treated: usize,
    /// Its id.
    pub treated_id: String,
    /// Comparison units: row among rows used, id, distance.
    pub controls: Vec<(usize, String, f64)>,
    /// Largest distance within the set.
    pub distance: f64,
}

/// One design's results for the screens.
#[derive(Debug, Clone, Serialize)]
pub struct RunView {
    /// The design as run.
    pub design: Design,
    /// Whether the result came from the session's cache.
    pub cached: bool,
    /// Counts and diagnostics (`summary.json`).
    pub summary: Summary,
    /// Balance table.
    pub balance: Vec<BalanceRow>,
    /// Effects per outcome.
    pub effects: Vec<OutcomeEffect>,
    /// Term shift, when there are notes.
    pub term_shift: Option<TermShift>,
    /// Matched sets.
    pub sets: Vec<SetView>,
}

fn with_run<T>(name: &str, f: impl FnOnce(&Analysis, &DesignRun) -> Result<T>) -> Result<T> {
    STATE.with(|s| {
        let s = s.borrow();
        let a = s.analysis.as_ref().ok_or_else(not_prepared)?;
        let run = s.runs.get(name).ok_or_else(|| {
            Error::param("design", format!("design \"{name}\" has not been run yet"))
        })?;
        f(a, run)
    })
}

/// Run one design of the session's study (or return its cached run).
pub fn run(name: &str) -> Result<RunView> {
    let cached = STATE.with(|s| -> Result<bool> {
        let mut s = s.borrow_mut();
        if s.runs.contains_key(name) {
            return Ok(true);
        }
        let a = s.analysis.as_ref().ok_or_else(not_prepared)?;
        let design = a.study.design(name)?.clone();
        let run = a.run(&design)?;
        s.runs.insert(name.to_string(), run);
        Ok(false)
    })?;
    with_run(name, |a, r| {
        let ids = &a.cohort.ids;
        let sets = r
            .matching
            .sets
            .iter()
            .map(|set| SetView {
                treated: set.treated,
                treated_id: ids[set.treated].clone(),
                controls: set
                    .controls
                    .iter()
                    .map(|&(c, d)| (c, ids[c].clone(), d))
                    .collect(),
                distance: set.controls.iter().map(|c| c.1).fold(0.0, f64::max),
            })
            .collect();
        Ok(RunView {
            design: r.design.clone(),
            cached,
            summary: r.summary.clone(),
            balance: r.balance.clone(),
            effects: r.effects.clone(),
            term_shift: r.term_shift.clone(),
            sets,
        })
    })
}

/// One unit of a pair, as the side-by-side view shows it.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct PairUnit {
    /// Id.
    pub id: String,
    /// Whether treated.
    pub treated: bool,
    /// Note text (empty without a notes column or when missing).
    pub note: String,
    /// Concept mentions in the note (UTF-16 offsets).
    pub highlights: Vec<Highlight>,
    /// Distance to the set's treated unit (0 for the treated unit).
    pub distance: f64,
}

/// One structured field of a pair.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct FieldDifference {
    /// Column.
    pub column: String,
    /// Kind of the column.
    pub kind: Kind,
    /// Cell of each unit, treated first (as written in the file).
    pub values: Vec<String>,
    /// Whether any comparison unit's value differs from the treated one.
    pub differs: bool,
    /// For numeric columns: largest absolute difference from the treated
    /// value in SDs of the column over the rows used; `None` otherwise.
    pub sd_units: Option<f64>,
}

/// A matched set opened side by side.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct PairView {
    /// Index of the set (0-based, in the design's order).
    pub set: usize,
    /// The treated unit, then its comparison units.
    pub units: Vec<PairUnit>,
    /// Structured fields: the covariates (outcomes are left out).
    pub fields: Vec<FieldDifference>,
}

fn column_sd(a: &Analysis, column: &str) -> Result<Option<f64>> {
    let col = a.cohort.table.column(column)?;
    let v: Vec<f64> = a
        .cohort
        .rows
        .iter()
        .filter_map(|&r| col.number(r))
        .collect();
    if v.len() < 2 {
        return Ok(None);
    }
    let sd = stats::variance(&v).sqrt();
    Ok((sd > 0.0 && sd.is_finite()).then_some(sd))
}

fn field(a: &Analysis, column: &str, rows: &[usize]) -> Result<FieldDifference> {
    let col = a.cohort.table.column(column)?;
    let table_rows: Vec<usize> = rows.iter().map(|&r| a.cohort.rows[r]).collect();
    let values: Vec<String> = table_rows
        .iter()
        .map(|&r| col.cells[r].trim().to_string())
        .collect();
    let numeric = matches!(col.kind, Kind::Numeric);
    let (differs, sd_units) = if numeric {
        let t = col.number(table_rows[0]);
        let diffs: Vec<f64> = table_rows[1..]
            .iter()
            .filter_map(|&r| Some((col.number(r)? - t?).abs()))
            .collect();
        let any_missing_mismatch = table_rows[1..]
            .iter()
            .any(|&r| col.number(r).is_some() != t.is_some());
        let largest = diffs.iter().copied().fold(0.0, f64::max);
        let sd = column_sd(a, column)?;
        (
            any_missing_mismatch || largest > 0.0,
            sd.map(|sd| largest / sd),
        )
    } else {
        (values[1..].iter().any(|v| *v != values[0]), None)
    };
    Ok(FieldDifference {
        column: column.to_string(),
        kind: col.kind,
        values,
        differs,
        sd_units,
    })
}

/// Open matched set `set` of design `name` side by side.
pub fn pair(name: &str, set: usize) -> Result<PairView> {
    with_run(name, |a, r| {
        let s = r.matching.sets.get(set).ok_or_else(|| {
            Error::param(
                "set",
                format!(
                    "design \"{name}\" has {} matched sets; there is no set {}",
                    r.matching.sets.len(),
                    set + 1
                ),
            )
        })?;
        let mut rows = vec![(s.treated, 0.0)];
        rows.extend(s.controls.iter().copied());
        let note_cells = match &a.study.columns.notes {
            Some(col) => Some(a.cohort.cells(col)?),
            None => None,
        };
        let units = rows
            .iter()
            .map(|&(row, distance)| {
                let note = note_cells
                    .as_ref()
                    .map(|c| c[row])
                    .filter(|c| !pairsight_core::ingest::is_missing(c))
                    .unwrap_or("")
                    .to_string();
                let highlights = notes::highlights(&note, &a.study.concepts)?;
                Ok(PairUnit {
                    id: a.cohort.ids[row].clone(),
                    treated: a.cohort.treated[row],
                    note,
                    highlights,
                    distance,
                })
            })
            .collect::<Result<Vec<_>>>()?;
        let only_rows: Vec<usize> = rows.iter().map(|r| r.0).collect();
        // Outcomes stay hidden while designs are compared, so the choice of
        // design cannot lean on them (Rubin 2008, "For objective causal
        // inference, design trumps analysis").
        let fields = a
            .study
            .columns
            .covariates
            .iter()
            .map(|col| field(a, col, &only_rows))
            .collect::<Result<Vec<_>>>()?;
        Ok(PairView { set, units, fields })
    })
}

/// For each matched set of design `name`, how much its units disagree on
/// `column`: for numeric columns the largest absolute difference from the
/// treated unit in SDs of the column, otherwise 1 when any comparison unit
/// has another value and 0 when all agree.
pub fn disagreement(name: &str, column: &str) -> Result<Vec<f64>> {
    with_run(name, |a, r| {
        r.matching
            .sets
            .iter()
            .map(|s| {
                let mut rows = vec![s.treated];
                rows.extend(s.controls.iter().map(|c| c.0));
                let f = field(a, column, &rows)?;
                Ok(match (f.sd_units, f.differs) {
                    (Some(v), _) => v,
                    (None, true) => 1.0,
                    (None, false) => 0.0,
                })
            })
            .collect()
    })
}

/// Notes of the first `count` rows used from `offset`, with their
/// highlights under the session's concepts, for the concept editor's
/// preview.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct NotePreview {
    /// Row among rows used.
    pub row: usize,
    /// Id.
    pub id: String,
    /// Whether treated.
    pub treated: bool,
    /// Note.
    pub note: String,
    /// Highlights.
    pub highlights: Vec<Highlight>,
}

/// Preview notes `offset .. offset + count` among those with at least one
/// mention when `mentions_only`, else among all rows used.
pub fn preview(offset: usize, count: usize, mentions_only: bool) -> Result<Vec<NotePreview>> {
    STATE.with(|s| {
        let s = s.borrow();
        let a = s.analysis.as_ref().ok_or_else(not_prepared)?;
        let Some(col) = &a.study.columns.notes else {
            return Ok(Vec::new());
        };
        let cells = a.cohort.cells(col)?;
        let matcher = notes::ConceptMatcher::new(&a.study.concepts)?;
        let mut out = Vec::new();
        let mut seen = 0;
        for (row, cell) in cells.iter().enumerate() {
            if out.len() >= count {
                break;
            }
            let note = if pairsight_core::ingest::is_missing(cell) {
                ""
            } else {
                cell
            };
            let highlights = matcher.highlights(note);
            if mentions_only && highlights.is_empty() {
                continue;
            }
            seen += 1;
            if seen <= offset {
                continue;
            }
            out.push(NotePreview {
                row,
                id: a.cohort.ids[row].clone(),
                treated: a.cohort.treated[row],
                note: note.to_string(),
                highlights,
            });
        }
        Ok(out)
    })
}

/// Every output file of design `name`, the same bytes the command line writes.
pub fn files(name: &str) -> Result<Vec<OutputFile>> {
    with_run(name, |a, r| r.files(a))
}

/// Call `f` with the analysis and the runs of `names`, in that order.
pub fn with_runs<T>(
    names: &[String],
    f: impl FnOnce(&Analysis, Vec<&DesignRun>) -> Result<T>,
) -> Result<T> {
    STATE.with(|s| {
        let s = s.borrow();
        let a = s.analysis.as_ref().ok_or_else(not_prepared)?;
        let runs = names
            .iter()
            .map(|n| {
                s.runs.get(n).ok_or_else(|| {
                    Error::param("design", format!("design \"{n}\" has not been run yet"))
                })
            })
            .collect::<Result<Vec<_>>>()?;
        f(a, runs)
    })
}

/// Distinct values of `column` (at most `limit`, sorted as the core sorts
/// levels), for choosing the treated value of the group column.
pub fn levels(column: &str, limit: usize) -> Result<Vec<String>> {
    STATE.with(|s| {
        let s = s.borrow();
        let table = s.table.as_ref().ok_or_else(no_file)?;
        Ok(table.column(column)?.first_levels(limit))
    })
}
