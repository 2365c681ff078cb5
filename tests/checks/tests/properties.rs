//! Properties of the whole pipeline under random and hostile input
//! (proptest): reading never panics, whatever the bytes; a study file never
//! panics, whatever the text; a ratings file never panics, whatever the
//! bytes; and on small random cohorts the pipeline either gives a clear error
//! or results that obey the matching rules (no pair across an exact column,
//! none outside the caliper, no unit twice without reuse, weights that add
//! up) and a balance table that does not depend on the order of the rows.
//!
//! The matching engine has its own properties in the core; these are the
//! ones that only the pipeline can show (the study's terms, missing values,
//! note features, the written files).
//!
//! Cases run from a fixed seed so a run is reproducible; set
//! `PROPTEST_RNG_SEED` (and `PROPTEST_CASES`) to explore further.

use pairsight_core::ingest::read_table;
use pairsight_core::output::restore_cell;
use pairsight_core::review::{
    draw_round, merge_ratings, write_ratings_csv, DesignSets, RatingRow, RatingsFile, ReviewParams,
    Round, SetRecord,
};
use pairsight_core::run::{Analysis, DesignRun};
use pairsight_core::study::Study;
use proptest::prelude::*;
use proptest::test_runner::{Config as ProptestConfig, FileFailurePersistence, RngSeed};

/// Seed of the case generator when `PROPTEST_RNG_SEED` is not set.
const SEED: u64 = 20_260_301;

fn config(cases: u32) -> ProptestConfig {
    let env = ProptestConfig::default();
    ProptestConfig {
        cases: if std::env::var_os("PROPTEST_CASES").is_some() {
            env.cases
        } else {
            cases
        },
        rng_seed: if std::env::var_os("PROPTEST_RNG_SEED").is_some() {
            env.rng_seed
        } else {
            RngSeed::Fixed(SEED)
        },
        // Failing cases are kept beside this file, in
        // properties.proptest-regressions, and re-run first.
        failure_persistence: Some(Box::new(FileFailurePersistence::WithSource(
            "proptest-regressions",
        ))),
        ..env
    }
}

// ------------------------------------------------------------------ reading

/// Pieces that CSV readers trip over; random sequences of them make
/// CSV-like text far more often than random bytes do.
const PIECES: &[&[u8]] = &[
    b"a",
    b"id",
    b"1",
    b"0",
    b"-2.5",
    b"1,5",
    b"1.234,5",
    b"\"1,234.5\"",
    b"NA",
    b"",
    b" ",
    b",",
    b",",
    b",",
    b";",
    b"\t",
    b"|",
    b"\n",
    b"\n",
    b"\r",
    b"\r\n",
    b"\"",
    b"\"\"",
    b"\"x,y\"",
    b"\"open",
    b"sep=;\n",
    b"\xEF\xBB\xBF",
    b"\xFF\xFE",
    b"\xFE\xFF",
    b"\x00",
    b"\xE9",
    b"\x93",
    b"\xC3\xA9",
    b"\xE2\x80\xAE",
    b"inf",
    b"1e400",
    b"=1+1",
    b"<script>",
];

fn csv_like() -> impl Strategy<Value = Vec<u8>> {
    prop::collection::vec(prop::sample::select(PIECES), 0..80).prop_map(|ps| ps.concat())
}

/// What every table read must satisfy.
fn table_is_sound(bytes: &[u8]) -> Result<(), TestCaseError> {
    if let Ok(t) = read_table(bytes) {
        prop_assert!(t.n_cols() >= 2, "a table has at least two columns");
        prop_assert!(t.n_rows() >= 1, "a table has at least one row");
        let mut names = std::collections::BTreeSet::new();
        for c in &t.columns {
            prop_assert_eq!(c.cells.len(), t.n_rows());
            prop_assert!(!c.name.is_empty());
            prop_assert!(names.insert(c.name.clone()), "duplicate name {}", c.name);
            for r in 0..t.n_rows() {
                if let Some(x) = c.number(r) {
                    prop_assert!(x.is_finite());
                }
            }
        }
        let s = t.summary();
        prop_assert_eq!(s.rows, t.n_rows());
    }
    Ok(())
}

proptest! {
    #![proptest_config(config(2000))]

    #[test]
    fn reading_any_bytes_never_panics(bytes in prop::collection::vec(any::<u8>(), 0..600)) {
        table_is_sound(&bytes)?;
    }

    #[test]
    fn reading_csv_like_bytes_never_panics(bytes in csv_like()) {
        table_is_sound(&bytes)?;
    }
}

// ------------------------------------------------------------------ study

const GOOD_STUDY: &str = r#"[columns]
id = "id"
group = "g"
treated = "1"
outcomes = ["y"]
covariates = ["x", "c"]
notes = "note"
kinds = { c = "categorical" }

[note_options]
latent_dims = 2

[[concepts]]
name = "fall"
terms = ["fall", "falls"]

[[designs]]
name = "d1"
score_terms = ["x", "c", "square(x)", "product(x, b)"]
distance = "blend"
caliper = 0.2
exact = ["c"]
controls = 2
reuse = false
algorithm = "optimal"
blend = { score = 1.0, mahalanobis = 0.5, note = 0.0 }
"#;

const KEYS: &[&str] = &[
    "id",
    "group",
    "treated",
    "outcomes",
    "covariates",
    "notes",
    "kinds",
    "latent_dims",
    "seed",
    "name",
    "terms",
    "negation",
    "score_terms",
    "distance",
    "caliper",
    "exact",
    "controls",
    "reuse",
    "algorithm",
    "blend",
    "note_vectors",
    "mahalanobis_terms",
    "[columns]",
    "[[designs]]",
    "[[concepts]]",
    "[note_options]",
];
const VALUES: &[&str] = &[
    "\"x\"",
    "1",
    "-1",
    "0",
    "1e308",
    "nan",
    "inf",
    "true",
    "[]",
    "[\"x\"]",
    "[1, 2]",
    "{}",
    "\"\"",
    "\"../x\"",
    "\"square(\"",
    "\"product(x)\"",
    "\"blend\"",
    "\"note-cosine\"",
    "\"latent\"",
    "18446744073709551616",
    "\"\u{202e}\"",
    "{ x = \"text\" }",
    "\"",
];

/// A valid study with a few lines replaced by random `key = value` lines.
fn mutated_study() -> impl Strategy<Value = String> {
    let edits = prop::collection::vec(
        (
            0usize..40,
            prop::sample::select(KEYS),
            prop::sample::select(VALUES),
        ),
        1..4,
    );
    edits.prop_map(|edits| {
        let mut lines: Vec<String> = GOOD_STUDY.lines().map(str::to_string).collect();
        for (at, k, v) in edits {
            let line = if k.starts_with('[') {
                k.to_string()
            } else {
                format!("{k} = {v}")
            };
            let at = at % (lines.len() + 1);
            if at < lines.len() && at % 2 == 0 {
                lines[at] = line;
            } else {
                lines.insert(at.min(lines.len()), line);
            }
        }
        lines.join("\n")
    })
}

fn study_is_sound(text: &str) -> Result<(), TestCaseError> {
    if let Ok(s) = Study::from_toml(text) {
        // What the browser exports reads back as the same study.
        let again = s
            .to_toml()
            .map_err(|e| TestCaseError::fail(e.to_string()))?;
        let back = Study::from_toml(&again);
        prop_assert_eq!(back.as_ref(), Ok(&s), "{}", again);
    }
    Ok(())
}

proptest! {
    #![proptest_config(config(1500))]

    #[test]
    fn any_study_text_never_panics(text in ".{0,400}") {
        study_is_sound(&text)?;
    }

    #[test]
    fn mutated_study_files_never_panic(text in mutated_study()) {
        study_is_sound(&text)?;
    }
}

#[test]
fn the_valid_study_of_these_properties_is_valid() {
    Study::from_toml(GOOD_STUDY).expect("the base study reads");
}

// ------------------------------------------------------------------ ratings

fn a_round() -> Round {
    let designs: Vec<DesignSets> = ["a", "b"]
        .iter()
        .enumerate()
        .map(|(k, d)| DesignSets {
            design: d.to_string(),
            sets: (0..8)
                .map(|i| SetRecord {
                    set: i,
                    treated_row: 2 * i,
                    comparison_row: 2 * i + 1 + 16 * k,
                    distance: 0.1 * i as f64,
                })
                .collect(),
        })
        .collect();
    draw_round(
        &designs,
        &ReviewParams {
            sets_per_design: 5,
            ..ReviewParams::default()
        },
    )
    .expect("a round")
}

/// A valid ratings file of the round, then random byte edits.
fn mutated_ratings() -> impl Strategy<Value = Vec<u8>> {
    let edits = prop::collection::vec((any::<usize>(), any::<u8>(), 0u8..3), 0..6);
    edits.prop_map(|edits| {
        let round = a_round();
        let rows: Vec<RatingRow> = round
            .items
            .iter()
            .enumerate()
            .map(|(i, it)| RatingRow {
                round_id: round.round_id.clone(),
                pair_key: it.pair_key.clone(),
                reviewer: "r1".to_string(),
                rating: 1 + i as i64 % 5,
                comment: "=1+1, \"quoted\"".to_string(),
                time: "2026-03-01T10:00:00Z".to_string(),
            })
            .collect();
        let mut bytes = write_ratings_csv(&rows).expect("ratings").into_bytes();
        for (at, b, op) in edits {
            let at = at % (bytes.len() + 1);
            match op {
                0 if at < bytes.len() => bytes[at] = b,
                1 => bytes.insert(at, b),
                _ if at < bytes.len() => {
                    bytes.remove(at);
                }
                _ => {}
            }
        }
        bytes
    })
}

fn ratings_are_sound(round: &Round, bytes: Vec<u8>) -> Result<(), TestCaseError> {
    let merged = merge_ratings(
        round,
        &[RatingsFile {
            name: "r.csv".to_string(),
            bytes,
        }],
    );
    for r in &merged.ratings {
        prop_assert!(
            round.scale.contains(r.rating),
            "rating {} off the scale",
            r.rating
        );
        prop_assert!(round.items.iter().any(|it| it.pair_key == r.pair_key));
    }
    Ok(())
}

proptest! {
    #![proptest_config(config(1000))]

    #[test]
    fn any_ratings_bytes_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..400)) {
        ratings_are_sound(&a_round(), bytes)?;
    }

    #[test]
    fn mutated_ratings_files_never_panic(bytes in mutated_ratings()) {
        ratings_are_sound(&a_round(), bytes)?;
    }
}

// ------------------------------------------------------------------ pipeline

/// A small random cohort and study, with the awkward cases turned up: few
/// rows, tiny or missing groups, constant or missing covariates, duplicate
/// ids, empty notes.
#[derive(Debug, Clone)]
struct Spec {
    rows: Vec<RowSpec>,
    unique_ids: bool,
    /// Whether some group cells are missing or hold a third value.
    group_noise: bool,
    /// Whether designs may name note features without a notes column.
    anything_goes: bool,
    /// 0: values, 1: constant, 2: all missing, 3: some missing.
    x_mode: u8,
    c_levels: u8,
    notes: bool,
    concept: bool,
    latent_dims: usize,
    covariates: Vec<bool>,
    designs: Vec<DesignSpec>,
}

#[derive(Debug, Clone)]
struct RowSpec {
    id: u8,
    group: u8,
    x: i16,
    x_missing: bool,
    b: bool,
    c: u8,
    c_missing: bool,
    y: u8,
    words: Vec<u8>,
}

#[derive(Debug, Clone)]
struct DesignSpec {
    terms: Vec<bool>,
    distance: u8,
    caliper: u8,
    exact: u8,
    controls: usize,
    reuse: bool,
    greedy: bool,
}

const WORDS: &[&str] = &[
    "lives", "alone", "fall", "falls", "denies", "no", "frail", "frame", "<b>", "=1+1", "daughter",
    "home", "confused", "meds", "missed", ".", ",",
];
const TERMS: &[&str] = &["x", "b", "c", "square(x)", "concept.fall", "note.tokens"];

fn row_spec() -> impl Strategy<Value = RowSpec> {
    (
        any::<u8>(),
        0u8..20,
        -50i16..50,
        prop::bool::weighted(0.15),
        any::<bool>(),
        0u8..4,
        prop::bool::weighted(0.1),
        0u8..2,
        prop::collection::vec(0u8..WORDS.len() as u8, 0..12),
    )
        .prop_map(
            |(id, group, x, x_missing, b, c, c_missing, y, words)| RowSpec {
                id,
                group,
                x,
                x_missing,
                b,
                c,
                c_missing,
                y,
                words,
            },
        )
}

fn design_spec() -> impl Strategy<Value = DesignSpec> {
    (
        prop::collection::vec(any::<bool>(), TERMS.len()),
        0u8..4,
        0u8..4,
        0u8..3,
        1usize..4,
        any::<bool>(),
        any::<bool>(),
    )
        .prop_map(
            |(terms, distance, caliper, exact, controls, reuse, greedy)| DesignSpec {
                terms,
                distance,
                caliper,
                exact,
                controls,
                reuse,
                greedy,
            },
        )
}

fn spec() -> impl Strategy<Value = Spec> {
    (
        prop::collection::vec(row_spec(), 0..28),
        prop::bool::weighted(0.9),
        (prop::bool::weighted(0.1), prop::bool::weighted(0.1)),
        prop::sample::select(vec![0u8, 0, 0, 0, 0, 0, 1, 2, 3, 3]),
        1u8..5,
        any::<bool>(),
        any::<bool>(),
        0usize..3,
        prop::collection::vec(any::<bool>(), 3),
        prop::collection::vec(design_spec(), 1..3),
    )
        .prop_map(
            |(
                rows,
                unique_ids,
                (group_noise, anything_goes),
                x_mode,
                c_levels,
                notes,
                concept,
                latent_dims,
                covariates,
                designs,
            )| {
                Spec {
                    rows,
                    unique_ids,
                    group_noise,
                    anything_goes,
                    x_mode,
                    c_levels,
                    notes,
                    concept,
                    latent_dims,
                    covariates,
                    designs,
                }
            },
        )
}

impl Spec {
    fn csv(&self) -> String {
        let mut s = String::from("id,g,x,b,c,y,note\n");
        for (i, r) in self.rows.iter().enumerate() {
            let id = if self.unique_ids {
                format!("p{i}")
            } else {
                format!("p{}", r.id % 6)
            };
            // Mostly two groups; now and then a missing or a third value.
            let g = match r.group {
                0..=6 => "1",
                7..=17 => "0",
                18 if self.group_noise => "",
                19 if self.group_noise => "2",
                _ => "0",
            };
            let x = match self.x_mode {
                1 => "7".to_string(),
                2 => "NA".to_string(),
                3 if r.x_missing => String::new(),
                _ => format!("{}.{}", r.x, r.id % 10),
            };
            let c = if r.c_missing {
                String::new()
            } else {
                ["A", "B", "C", "D"][(r.c % self.c_levels) as usize].to_string()
            };
            let note: Vec<&str> = r.words.iter().map(|&w| WORDS[w as usize]).collect();
            s.push_str(&format!(
                "{id},{g},{x},{},{c},{},\"{}\"\n",
                u8::from(r.b),
                r.y,
                note.join(" ")
            ));
        }
        s
    }

    fn study(&self) -> String {
        let covs: Vec<String> = ["x", "b", "c"]
            .iter()
            .zip(&self.covariates)
            .filter(|(_, &on)| on)
            .map(|(n, _)| format!("\"{n}\""))
            .collect();
        let mut s = format!(
            "[columns]\nid = \"id\"\ngroup = \"g\"\ntreated = \"1\"\noutcomes = [\"y\"]\ncovariates = [{}]\nkinds = {{ c = \"categorical\" }}\n",
            covs.join(", ")
        );
        if self.notes {
            s.push_str("notes = \"note\"\n");
        }
        s.push_str(&format!(
            "\n[note_options]\nlatent_dims = {}\n",
            self.latent_dims
        ));
        if self.concept && (self.notes || self.anything_goes) {
            s.push_str("\n[[concepts]]\nname = \"fall\"\nterms = [\"fall\", \"falls\"]\n");
        }
        for (k, d) in self.designs.iter().enumerate() {
            let allowed = |t: &str| {
                self.anything_goes
                    || match t {
                        "concept.fall" => self.notes && self.concept,
                        "note.tokens" => self.notes,
                        _ => true,
                    }
            };
            let mut terms: Vec<String> = TERMS
                .iter()
                .zip(&d.terms)
                .filter(|(t, &on)| on && allowed(t))
                .map(|(t, _)| format!("\"{t}\""))
                .collect();
            let distance = match d.distance {
                2 if !self.notes && !self.anything_goes => 0,
                k => k,
            };
            if terms.is_empty() {
                terms.push("\"x\"".to_string());
            }
            s.push_str(&format!(
                "\n[[designs]]\nname = \"d{k}\"\nscore_terms = [{}]\ndistance = \"{}\"\ncontrols = {}\nreuse = {}\nalgorithm = \"{}\"\n",
                terms.join(", "),
                ["score", "mahalanobis", "note-cosine", "blend"][distance as usize],
                d.controls,
                d.reuse,
                if d.greedy { "greedy" } else { "optimal" },
            ));
            if let Some(c) = [None, Some("0.05"), Some("0.2"), Some("1.5")][d.caliper as usize] {
                s.push_str(&format!("caliper = {c}\n"));
            }
            match d.exact {
                1 => s.push_str("exact = [\"c\"]\n"),
                2 => s.push_str("exact = [\"b\", \"c\"]\n"),
                _ => {}
            }
        }
        s
    }
}

/// Every matching rule and every written file of one design's run.
fn run_is_sound(a: &Analysis, run: &DesignRun) -> Result<(), TestCaseError> {
    let d = &run.design;
    let m = &run.matching;
    let treated = &a.cohort.treated;
    let n = treated.len();
    let logit = &run.fit.logit;
    let exact = if d.exact.is_empty() {
        vec![0; n]
    } else {
        a.cohort
            .exact_keys(&d.exact)
            .map_err(|e| TestCaseError::fail(e.to_string()))?
    };
    let mut treated_seen = vec![0usize; n];
    let mut comparison_seen = vec![0usize; n];
    let mut weight = vec![0.0f64; n];
    for s in &m.sets {
        prop_assert!(treated[s.treated], "a set led by a comparison unit");
        prop_assert!(!s.controls.is_empty() && s.controls.len() <= d.controls);
        treated_seen[s.treated] += 1;
        weight[s.treated] += 1.0;
        let share = 1.0 / s.controls.len() as f64;
        for &(c, dist) in &s.controls {
            prop_assert!(!treated[c], "a treated unit used as a comparison");
            prop_assert!(dist.is_finite() && dist >= 0.0);
            prop_assert_eq!(
                exact[s.treated],
                exact[c],
                "a pair across the exact columns"
            );
            if let Some(w) = m.caliper_width {
                prop_assert!(
                    (logit[s.treated] - logit[c]).abs() <= w,
                    "a pair outside the caliper"
                );
            }
            comparison_seen[c] += 1;
            weight[c] += share;
        }
    }
    prop_assert!(treated_seen.iter().all(|&k| k <= 1), "a treated unit twice");
    if !d.reuse {
        prop_assert!(
            comparison_seen.iter().all(|&k| k <= 1),
            "a comparison unit twice without reuse"
        );
    }
    for (i, (w, want)) in m.weights.iter().zip(&weight).enumerate() {
        prop_assert!((w - want).abs() < 1e-12, "weight of row {}", i);
    }
    let comparison_weight: f64 = (0..n).filter(|&i| !treated[i]).map(|i| m.weights[i]).sum();
    prop_assert!((comparison_weight - m.sets.len() as f64).abs() < 1e-9);
    prop_assert_eq!(
        m.sets.len() + m.unmatched_treated.len(),
        treated.iter().filter(|&&t| t).count()
    );

    // The written files: the same bytes twice; matched.csv with its weights
    // summing to one per set; no number but NA where a value is undefined.
    let files = run
        .files(a)
        .map_err(|e| TestCaseError::fail(e.to_string()))?;
    let again = run
        .files(a)
        .map_err(|e| TestCaseError::fail(e.to_string()))?;
    prop_assert_eq!(&files, &again);
    for f in &files {
        if !f.name.ends_with(".csv") {
            continue;
        }
        let mut r = csv_rows(&f.contents);
        let header = r.remove(0);
        for row in &r {
            prop_assert_eq!(row.len(), header.len());
            for cell in row {
                prop_assert!(
                    !matches!(cell.chars().next(), Some('=' | '+' | '@' | '\t' | '\r'))
                        && (!cell.starts_with('-') || cell.parse::<f64>().is_ok()),
                    "formula-like cell {:?} in {}",
                    cell,
                    f.name
                );
                prop_assert!(
                    !["NaN", "inf", "-inf", "Infinity"].contains(&cell.as_str()),
                    "{:?} in {}",
                    cell,
                    f.name
                );
            }
        }
        if f.name == "matched.csv" {
            let mut per_set = std::collections::BTreeMap::<String, f64>::new();
            for row in &r {
                prop_assert!(a.cohort.ids.contains(&restore_cell(&row[1])));
                if row[2] == "0" {
                    let w: f64 = row[3].parse().map_err(|_| TestCaseError::fail("weight"))?;
                    *per_set.entry(row[0].clone()).or_default() += w;
                }
            }
            prop_assert_eq!(per_set.len(), m.sets.len());
            for (set, w) in per_set {
                prop_assert!((w - 1.0).abs() < 1e-9, "set {} weights sum to {}", set, w);
            }
        }
    }
    for b in &run.balance {
        for v in [
            b.smd_before,
            b.smd_after,
            b.variance_ratio_before,
            b.ks_after,
        ]
        .into_iter()
        .flatten()
        {
            prop_assert!(v.is_finite());
        }
        prop_assert_eq!(
            b.smd_before.is_none(),
            run.summary.undefined_smd.contains(&b.term)
        );
    }
    Ok(())
}

fn csv_rows(text: &str) -> Vec<Vec<String>> {
    text.lines()
        .map(|l| {
            // Output cells hold no line breaks here (notes are never written
            // to these files), so a light split with quote handling will do.
            let mut cells = Vec::new();
            let mut cur = String::new();
            let mut quoted = false;
            let mut chars = l.chars().peekable();
            while let Some(ch) = chars.next() {
                match ch {
                    '"' if quoted && chars.peek() == Some(&'"') => {
                        cur.push('"');
                        chars.next();
                    }
                    '"' => quoted = !quoted,
                    ',' if !quoted => cells.push(std::mem::take(&mut cur)),
                    other => cur.push(other),
                }
            }
            cells.push(cur);
            cells
        })
        .collect()
}

/// Small random cohorts through the whole pipeline: a panic fails, an
/// error is fine, and a run must keep every matching rule. The count of
/// checked runs guards against a generator whose every case is an error.
#[test]
fn the_pipeline_never_panics_and_keeps_the_matching_rules() {
    use std::sync::atomic::{AtomicUsize, Ordering};
    let designs = AtomicUsize::new(0);
    let checked = AtomicUsize::new(0);
    let mut runner = proptest::test_runner::TestRunner::new(ProptestConfig {
        source_file: Some(file!()),
        ..config(300)
    });
    let result = runner.run(&spec(), |spec| {
        let Ok(study) = Study::from_toml(&spec.study()) else {
            return Ok(());
        };
        let Ok(a) = Analysis::new(spec.csv().as_bytes(), study) else {
            return Ok(());
        };
        for d in &a.study.designs {
            designs.fetch_add(1, Ordering::Relaxed);
            if let Ok(run) = a.run(d) {
                checked.fetch_add(1, Ordering::Relaxed);
                run_is_sound(&a, &run)?;
            }
        }
        Ok(())
    });
    if let Err(e) = result {
        panic!("{e}");
    }
    let (designs, checked) = (designs.into_inner(), checked.into_inner());
    eprintln!("{checked} of {designs} designs ran and were checked");
    assert!(
        checked * 3 >= designs && checked >= 60,
        "only {checked} of {designs} designs ran: the generator is too hostile to test the rules"
    );
}

// ------------------------------------------------------------------ balance

/// A cohort with no ties in its covariates: 6 to 24 treated and comparison
/// units each; and an order of its rows.
/// One row of a clean cohort: treated, x, z, category.
type CleanRow = (bool, f64, f64, u8);

fn clean_cohort() -> impl Strategy<Value = (Vec<CleanRow>, Vec<usize>)> {
    (6usize..24, 6usize..24)
        .prop_flat_map(|(nt, nc)| {
            let n = nt + nc;
            (
                prop::collection::vec((-3.0f64..3.0, -1.0f64..1.0, 0u8..3), n),
                Just(nt),
                Just((0..n).collect::<Vec<usize>>()).prop_shuffle(),
            )
        })
        .prop_map(|(xs, nt, order)| {
            let rows = xs
                .into_iter()
                .enumerate()
                .map(|(i, (x, z, c))| (i < nt, x + if i < nt { 0.5 } else { 0.0 }, z, c))
                .collect();
            (rows, order)
        })
}

fn clean_csv(rows: &[CleanRow], order: &[usize]) -> String {
    let mut s = String::from("id,g,x,z,c,y\n");
    for &i in order {
        let (t, x, z, c) = rows[i];
        s.push_str(&format!(
            "p{i},{},{x:.12},{z:.12},{},{}\n",
            u8::from(t),
            ["A", "B", "C"][c as usize],
            i % 2
        ));
    }
    s
}

const CLEAN_STUDY: &str = r#"[columns]
id = "id"
group = "g"
treated = "1"
outcomes = ["y"]
covariates = ["x", "z", "c"]

[[designs]]
name = "greedy"
score_terms = ["x", "z", "c"]
algorithm = "greedy"
caliper = 0.5

[[designs]]
name = "optimal"
score_terms = ["x", "z"]
algorithm = "optimal"
controls = 2
"#;

fn close(a: Option<f64>, b: Option<f64>) -> bool {
    match (a, b) {
        (None, None) => true,
        (Some(x), Some(y)) => (x - y).abs() <= 1e-9 * (1.0 + x.abs().max(y.abs())),
        _ => false,
    }
}

/// Matched pairs as (treated id, comparison id), sorted.
fn pairs(a: &Analysis, run: &DesignRun) -> Vec<(String, String)> {
    let ids = &a.cohort.ids;
    let mut p: Vec<(String, String)> = run
        .matching
        .sets
        .iter()
        .flat_map(|s| {
            s.controls
                .iter()
                .map(move |&(c, _)| (ids[s.treated].clone(), ids[c].clone()))
        })
        .collect();
    p.sort();
    p
}

proptest! {
    #![proptest_config(config(60))]

    /// The standardized mean difference (Austin 2009), the variance ratio and
    /// the Kolmogorov-Smirnov distance are functions of the two groups'
    /// values, not of the order of the rows: shuffling the rows of the file
    /// leaves the balance table unchanged before matching, and after matching
    /// whenever the same pairs are matched (ties may be broken differently
    /// by row order, by design).
    #[test]
    fn balance_does_not_depend_on_the_order_of_rows((rows, order) in clean_cohort()) {
        let identity: Vec<usize> = (0..rows.len()).collect();
        let study = Study::from_toml(CLEAN_STUDY).expect("study");
        let a1 = Analysis::new(clean_csv(&rows, &identity).as_bytes(), study.clone())
            .map_err(|e| TestCaseError::fail(e.to_string()))?;
        let a2 = Analysis::new(clean_csv(&rows, &order).as_bytes(), study)
            .map_err(|e| TestCaseError::fail(e.to_string()))?;
        for d in &a1.study.designs {
            let (r1, r2) = match (a1.run(d), a2.run(d)) {
                (Ok(r1), Ok(r2)) => (r1, r2),
                (Err(e1), Err(e2)) => {
                    prop_assert_eq!(e1.to_string(), e2.to_string());
                    continue;
                }
                (x, y) => {
                    return Err(TestCaseError::fail(format!(
                        "one order runs, the other does not: {:?} / {:?}",
                        x.err(),
                        y.err()
                    )))
                }
            };
            prop_assert_eq!(r1.balance.len(), r2.balance.len());
            let same_pairs = pairs(&a1, &r1) == pairs(&a2, &r2);
            for (b1, b2) in r1.balance.iter().zip(&r2.balance) {
                prop_assert_eq!(&b1.term, &b2.term);
                prop_assert!(close(b1.smd_before, b2.smd_before), "{} smd {:?} {:?}", b1.term, b1.smd_before, b2.smd_before);
                prop_assert!(close(b1.variance_ratio_before, b2.variance_ratio_before));
                prop_assert!(close(b1.ks_before, b2.ks_before));
                if same_pairs {
                    prop_assert!(close(b1.smd_after, b2.smd_after), "{} after {:?} {:?}", b1.term, b1.smd_after, b2.smd_after);
                    prop_assert!(close(b1.variance_ratio_after, b2.variance_ratio_after));
                    prop_assert!(close(b1.ks_after, b2.ks_after));
                }
            }
        }
    }
}
