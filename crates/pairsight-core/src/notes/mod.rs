//! Note features: free-text notes turned into covariates that the score
//! model, the distances and the balance table use like any other column.
//!
//! [`analyze`] reads every note once and returns, per note, the automatic
//! features (length, sentences, readability, diversity, latent dimensions)
//! and the affirmed and negated mention counts of each [`Concept`], along
//! with the term counts and TF-IDF rows that [`cosine_distance`] and
//! [`term_shift`] work on.
//!
//! ```
//! use pairsight_core::notes::{analyze, Concept, NoteOptions};
//! let notes = ["Lives alone. Denies falls.", "Recent fall at home; lives with daughter."];
//! let fall = Concept::new("recent_fall", &["fall", "falls"]);
//! let f = analyze(&notes, &[fall], &NoteOptions::default()).unwrap();
//! let col = f.names.iter().position(|n| n == "concept.recent_fall.negated").unwrap();
//! assert_eq!(f.values[[0, col]], 1.0);
//! ```
//!
//! Note features describe text; they are not diagnoses. A missed negation or
//! an unusual abbreviation changes a count, so check concept hits on real
//! notes (the side-by-side view highlights them) before a design relies on
//! them, and follow local research-ethics and data-governance rules for notes.

mod concepts;
mod diversity;
mod latent;
mod negation;
mod parallel;
mod readability;
mod termshift;
mod tfidf;
mod tokens;

use ndarray::Array2;
use serde::{Deserialize, Serialize, Serializer};

pub use concepts::{highlights, Concept, ConceptMatcher, Highlight};
pub use diversity::{mtld, mtld_with, type_token_ratio, MTLD_THRESHOLD};
pub use latent::{latent_cosine_distance, truncated_svd, Latent, OVERSAMPLE, POWER_ITERATIONS};
pub use negation::{WORDS_AFTER_CUE, WORDS_BEFORE_CUE};
pub use readability::{
    flesch_kincaid_grade, flesch_reading_ease, sentences, syllables, text_counts, TextCounts,
};
pub use termshift::{log_odds_dirichlet, term_shift, TermShift, TermShiftOptions, TermShiftRow};
pub use tfidf::{cosine_distance, smooth_idf, SparseRows};
pub use tokens::{is_stop_word, STOP_WORDS};

use crate::{Error, Result};

/// Largest number of latent dimensions accepted.
pub const MAX_LATENT_DIMS: usize = 500;

/// How notes become tokens and vectors. Every field has a default, so a
/// study file may give none of them.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct NoteOptions {
    /// Keep one-character tokens ("x", "f") too (default false: tokens are
    /// runs of two or more word characters).
    pub single_char_tokens: bool,
    /// Drop the words on our stop-word list [`STOP_WORDS`] (default false).
    pub stop_words: bool,
    /// Reduce tokens to their Snowball English stem (Porter 2001,
    /// "Snowball: a language for stemming algorithms") (default false).
    pub stem: bool,
    /// Add pairs of adjacent tokens as terms (default false).
    pub bigrams: bool,
    /// Latent dimensions k (default 10; 0 = none).
    pub latent_dims: usize,
    /// Seed of the randomized SVD (default 1).
    pub seed: u64,
}

impl Default for NoteOptions {
    fn default() -> Self {
        NoteOptions {
            single_char_tokens: false,
            stop_words: false,
            stem: false,
            bigrams: false,
            latent_dims: 10,
            seed: 1,
        }
    }
}

/// Where a feature comes from: an automatic note measure or a concept.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum FeatureKind {
    /// Length, readability, diversity or a latent dimension.
    Note,
    /// A concept's affirmed or negated count.
    Concept,
}

fn rows_of<S: Serializer>(a: &Array2<f64>, s: S) -> std::result::Result<S::Ok, S::Error> {
    let rows: Vec<Vec<f64>> = a.rows().into_iter().map(|r| r.to_vec()).collect();
    rows.serialize(s)
}

/// The note features of a cohort, one row per note in input order.
///
/// Columns of `values`, in order: `note.tokens` (unigram terms under the
/// token options), `note.sentences`, `note.flesch`, `note.fk_grade`,
/// `note.ttr`, `note.mtld`, `note.lsa1` .. `note.lsaK`, then for each
/// concept `concept.<name>` (affirmed mentions) and `concept.<name>.negated`.
/// K is the requested number of latent dimensions, or fewer when the corpus
/// has fewer notes or distinct terms. A missing (empty) note gets 0 in every
/// column, never NaN.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoteFeatures {
    /// Feature names, one per column of `values`.
    pub names: Vec<String>,
    /// Kind of each feature.
    pub kinds: Vec<FeatureKind>,
    /// Feature values: rows are notes.
    #[serde(serialize_with = "rows_of")]
    pub values: Array2<f64>,
    /// Terms, sorted by code point; columns of `counts` and `tfidf`.
    pub vocabulary: Vec<String>,
    /// Raw term counts per note (what [`term_shift`] reads).
    pub counts: SparseRows,
    /// Smoothed inverse document frequency of each term.
    pub idf: Vec<f64>,
    /// TF-IDF rows, unit length (empty for notes without terms).
    pub tfidf: SparseRows,
    /// Latent scores (notes x K), also in `values` as `note.lsa*`.
    #[serde(serialize_with = "rows_of")]
    pub latent: Array2<f64>,
    /// Singular values of the latent step, largest first.
    pub singular_values: Vec<f64>,
}

impl NoteFeatures {
    /// Column of a feature by name.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.names.iter().position(|n| n == name)
    }

    /// Term shift with these notes' counts (see [`term_shift`]).
    pub fn term_shift(
        &self,
        treated: &[bool],
        weights_before: &[f64],
        weights_after: &[f64],
        options: &TermShiftOptions,
    ) -> Result<TermShift> {
        term_shift(
            &self.counts,
            &self.vocabulary,
            treated,
            weights_before,
            weights_after,
            options,
        )
    }
}

/// Names of the automatic features before the latent dimensions.
pub const BASE_FEATURES: [&str; 6] = [
    "note.tokens",
    "note.sentences",
    "note.flesch",
    "note.fk_grade",
    "note.ttr",
    "note.mtld",
];

/// The vector side of the notes alone: term counts, TF-IDF and latent
/// dimensions, without readability, diversity or concepts (for a distance
/// on notes that needs nothing else).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoteVectors {
    /// Terms, sorted by code point; columns of `counts` and `tfidf`.
    pub vocabulary: Vec<String>,
    /// Raw term counts per note.
    pub counts: SparseRows,
    /// Smoothed inverse document frequency of each term.
    pub idf: Vec<f64>,
    /// TF-IDF rows, unit length (empty for notes without terms).
    pub tfidf: SparseRows,
    /// Latent scores (notes x K).
    #[serde(serialize_with = "rows_of")]
    pub latent: Array2<f64>,
    /// Singular values of the latent step, largest first.
    pub singular_values: Vec<f64>,
}

fn check_options(options: &NoteOptions) -> Result<()> {
    if options.latent_dims > MAX_LATENT_DIMS {
        return Err(Error::param(
            "latent_dims",
            format!(
                "{} is more than the {MAX_LATENT_DIMS} allowed; 10 to 100 is usual",
                options.latent_dims
            ),
        ));
    }
    Ok(())
}

fn vectors_from_counts(counted: tokens::Counted, options: &NoteOptions) -> Result<NoteVectors> {
    let counts = SparseRows {
        n_cols: counted.vocabulary.len(),
        indptr: counted.indptr,
        indices: counted.indices,
        values: counted.counts.into_iter().map(f64::from).collect(),
    };
    let (tfidf, idf) = tfidf::tfidf(&counts);
    let lat = truncated_svd(&tfidf, options.latent_dims, options.seed)?;
    Ok(NoteVectors {
        vocabulary: counted.vocabulary,
        counts,
        idf,
        tfidf,
        latent: lat.scores,
        singular_values: lat.singular_values,
    })
}

/// Tokens, counts, TF-IDF and latent dimensions of `notes` (the same values
/// [`analyze`] returns in these fields), skipping everything else.
pub fn vectorize<S: AsRef<str> + Sync>(notes: &[S], options: &NoteOptions) -> Result<NoteVectors> {
    check_options(options)?;
    let parts = parallel::map_ranges(notes.len(), 1000, |r| {
        let mut counter = tokens::TermCounter::new(options);
        for note in &notes[r] {
            counter.add_with_runs(&tokens::lowercase(note.as_ref()), None);
        }
        counter.finish()
    });
    vectors_from_counts(tokens::merge(parts), options)
}

/// What one pass over a run of notes yields.
struct Part {
    counted: tokens::Counted,
    base: Vec<[f64; 6]>,
    /// Affirmed and negated counts, 2 per concept, notes one after another.
    concepts: Vec<f64>,
}

/// Tokens, counts, readability, diversity and concept counts of `notes`.
fn note_pass<S: AsRef<str>>(notes: &[S], matcher: &ConceptMatcher, options: &NoteOptions) -> Part {
    let mut counter = tokens::TermCounter::new(options);
    let mut diversity = diversity::Diversity::default();
    let mut base = Vec::with_capacity(notes.len());
    let nc = matcher.names().len();
    let mut concepts = Vec::with_capacity(notes.len() * 2 * nc);
    let mut runs = Vec::new();
    let mut run_terms = Vec::new();
    let mut word_terms = Vec::new();
    for note in notes {
        let note = note.as_ref();
        let lower = tokens::lowercase(note);
        runs.clear();
        let unigrams = counter.add_with_runs(&lower, Some((&mut runs, &mut run_terms)));
        let spans = tokens::words_from_runs(&lower, &runs);
        let word_list: Vec<&str> = spans.iter().map(|&(s, e)| &lower[s..e]).collect();
        // A word made of one run that is itself a term reuses the term's id.
        word_terms.clear();
        let mut r = 0;
        for &(s, e) in &spans {
            while r < runs.len() && runs[r].0 < s {
                r += 1;
            }
            let single = r < runs.len() && runs[r] == (s, e);
            word_terms.push(if single {
                run_terms.get(r).copied().unwrap_or(tokens::NO_TERM)
            } else {
                tokens::NO_TERM
            });
        }
        let (ttr, mtld, syllables) = diversity.measure(&word_list, &word_terms);
        let tc = TextCounts {
            words: spans.len(),
            sentences: sentences(&lower),
            syllables,
        };
        base.push([
            unigrams as f64,
            tc.sentences as f64,
            flesch_reading_ease(&tc),
            flesch_kincaid_grade(&tc),
            ttr,
            mtld,
        ]);
        if nc > 0 {
            for (aff, neg) in matcher.count(note) {
                concepts.push(aff as f64);
                concepts.push(neg as f64);
            }
        }
    }
    Part {
        counted: counter.finish(),
        base,
        concepts,
    }
}

/// Computes every note feature of `notes` (see [`NoteFeatures`]).
///
/// Natively the notes are split over the machine's threads; the result is
/// bit-identical to a single-threaded run (and to the WebAssembly build).
pub fn analyze<S: AsRef<str> + Sync>(
    notes: &[S],
    concepts: &[Concept],
    options: &NoteOptions,
) -> Result<NoteFeatures> {
    check_options(options)?;
    let matcher = ConceptMatcher::new(concepts)?;
    let n = notes.len();
    let nc = concepts.len();
    let parts = parallel::map_ranges(n, 1000, |r| note_pass(&notes[r], &matcher, options));
    let mut base = Array2::<f64>::zeros((n, BASE_FEATURES.len()));
    let mut concept_counts = Array2::<f64>::zeros((n, 2 * nc));
    let mut row = 0;
    for p in &parts {
        for (k, b) in p.base.iter().enumerate() {
            for (j, &x) in b.iter().enumerate() {
                base[[row + k, j]] = x;
            }
            for j in 0..2 * nc {
                concept_counts[[row + k, j]] = p.concepts[k * 2 * nc + j];
            }
        }
        row += p.base.len();
    }
    let counted = tokens::merge(parts.into_iter().map(|p| p.counted).collect());
    let v = vectors_from_counts(counted, options)?;
    let k = v.singular_values.len();

    let mut names: Vec<String> = BASE_FEATURES.iter().map(|s| s.to_string()).collect();
    names.extend((1..=k).map(|j| format!("note.lsa{j}")));
    let mut kinds = vec![FeatureKind::Note; names.len()];
    for c in concepts {
        names.push(format!("concept.{}", c.name));
        names.push(format!("concept.{}.negated", c.name));
        kinds.push(FeatureKind::Concept);
        kinds.push(FeatureKind::Concept);
    }
    let width = names.len();
    let mut values = Array2::<f64>::zeros((n, width));
    let b = BASE_FEATURES.len();
    for i in 0..n {
        for j in 0..b {
            values[[i, j]] = base[[i, j]];
        }
        for j in 0..k {
            values[[i, b + j]] = v.latent[[i, j]];
        }
        for j in 0..2 * concepts.len() {
            values[[i, b + k + j]] = concept_counts[[i, j]];
        }
    }
    Ok(NoteFeatures {
        names,
        kinds,
        values,
        vocabulary: v.vocabulary,
        counts: v.counts,
        idf: v.idf,
        tfidf: v.tfidf,
        latent: v.latent,
        singular_values: v.singular_values,
    })
}

#[cfg(test)]
mod tests;
