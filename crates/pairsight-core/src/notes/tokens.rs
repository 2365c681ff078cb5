//! Tokens: how a note becomes a bag of terms, and the words that readability
//! and diversity are measured on.
//!
//! The default token is a lowercased maximal run of two or more word
//! characters, the same rule as the regular expression `(?u)\b\w\w+\b`
//! applied to the lowercased text, which is scikit-learn's default token
//! pattern (Pedregosa et al. 2011). A *word character* is a Unicode letter or
//! number (Rust's `char::is_alphanumeric`) or the underscore. This agrees with
//! Python's `\w` except for the few combining marks that Unicode also calls
//! alphabetic (for example Indic vowel signs), which Python does not count as
//! word characters.

use std::borrow::Cow;
use std::collections::HashMap;
use std::hash::{BuildHasherDefault, Hasher};

use rust_stemmers::{Algorithm, Stemmer};

use super::NoteOptions;

/// Whether `c` is a word character (letter, number or underscore).
#[inline]
pub(crate) fn is_word_char(c: char) -> bool {
    if c.is_ascii() {
        c.is_ascii_alphanumeric() || c == '_'
    } else {
        c.is_alphanumeric()
    }
}

/// The text lowercased the way Python's `str.lower` does it (full Unicode
/// lowercase mapping, final sigma included), borrowing when nothing changes.
pub(crate) fn lowercase(text: &str) -> Cow<'_, str> {
    if text.is_ascii() {
        if text.bytes().any(|b| b.is_ascii_uppercase()) {
            Cow::Owned(text.to_ascii_lowercase())
        } else {
            Cow::Borrowed(text)
        }
    } else {
        Cow::Owned(text.to_lowercase())
    }
}

/// Calls `f(start, end)` for each maximal run of word characters (byte
/// offsets into `text`).
#[inline]
pub(crate) fn for_each_word_run(text: &str, mut f: impl FnMut(usize, usize)) {
    let bytes = text.as_bytes();
    let mut start: Option<usize> = None;
    let mut i = 0;
    while i < bytes.len() {
        let b = bytes[i];
        let (is_word, width) = if b < 0x80 {
            (b.is_ascii_alphanumeric() || b == b'_', 1)
        } else {
            // Safe to decode: `i` always sits on a char boundary of a `str`.
            match text[i..].chars().next() {
                Some(c) => (c.is_alphanumeric(), c.len_utf8()),
                None => (false, 1),
            }
        };
        match (is_word, start) {
            (true, None) => start = Some(i),
            (false, Some(s)) => {
                f(s, i);
                start = None;
            }
            _ => {}
        }
        i += width;
    }
    if let Some(s) = start {
        f(s, bytes.len());
    }
}

/// Our own English stop-word list: function words (articles, pronouns,
/// auxiliaries, prepositions, conjunctions) that carry little about the
/// patient. Clinical negation words (`no`, `not`, `without`, ...) are kept on
/// purpose: they matter in notes. Sorted, so lookup is a binary search.
pub const STOP_WORDS: &[&str] = &[
    "a",
    "about",
    "above",
    "after",
    "again",
    "all",
    "also",
    "am",
    "an",
    "and",
    "any",
    "are",
    "as",
    "at",
    "be",
    "been",
    "before",
    "being",
    "below",
    "between",
    "both",
    "but",
    "by",
    "can",
    "could",
    "did",
    "do",
    "does",
    "doing",
    "down",
    "during",
    "each",
    "either",
    "for",
    "from",
    "further",
    "had",
    "has",
    "have",
    "having",
    "he",
    "her",
    "here",
    "hers",
    "herself",
    "him",
    "himself",
    "his",
    "how",
    "i",
    "if",
    "in",
    "into",
    "is",
    "it",
    "its",
    "itself",
    "just",
    "may",
    "me",
    "might",
    "mine",
    "more",
    "most",
    "must",
    "my",
    "myself",
    "of",
    "off",
    "on",
    "once",
    "only",
    "onto",
    "or",
    "other",
    "our",
    "ours",
    "ourselves",
    "out",
    "over",
    "own",
    "same",
    "shall",
    "she",
    "should",
    "so",
    "some",
    "such",
    "than",
    "that",
    "the",
    "their",
    "theirs",
    "them",
    "themselves",
    "then",
    "there",
    "these",
    "they",
    "this",
    "those",
    "through",
    "to",
    "too",
    "under",
    "until",
    "up",
    "upon",
    "us",
    "very",
    "was",
    "we",
    "were",
    "what",
    "when",
    "where",
    "which",
    "while",
    "who",
    "whom",
    "whose",
    "why",
    "will",
    "with",
    "would",
    "you",
    "your",
    "yours",
    "yourself",
    "yourselves",
];

/// Whether `token` (already lowercased) is on [`STOP_WORDS`].
pub fn is_stop_word(token: &str) -> bool {
    STOP_WORDS.binary_search(&token).is_ok()
}

/// Turns lowercased text into vector terms under the token options.
pub(crate) struct TermMaker {
    min_len: usize,
    stop_words: bool,
    stemmer: Option<Stemmer>,
    bigrams: bool,
}

impl TermMaker {
    pub(crate) fn new(options: &NoteOptions) -> Self {
        TermMaker {
            min_len: if options.single_char_tokens { 1 } else { 2 },
            stop_words: options.stop_words,
            stemmer: options.stem.then(|| Stemmer::create(Algorithm::English)),
            bigrams: options.bigrams,
        }
    }

    /// Calls `f(term)` for each term of `lower` (already lowercased) in text
    /// order; with bigrams on, each pair of adjacent kept unigrams (joined by one
    /// space, after stop-word removal as is usual for n-grams) follows its
    /// second word. Returns the number of unigrams.
    #[cfg(test)]
    pub(crate) fn terms(&self, lower: &str, mut f: impl FnMut(&str)) -> usize {
        self.terms_and_runs(lower, |t, _| f(t), None)
    }

    /// [`TermMaker::terms`], also collecting every run of word characters
    /// (any length) into `runs` for the word measures; `f` also gets, for a
    /// unigram, the index of the run it came from.
    pub(crate) fn terms_and_runs(
        &self,
        lower: &str,
        mut f: impl FnMut(&str, Option<usize>),
        mut runs: Option<&mut Vec<(usize, usize)>>,
    ) -> usize {
        let mut unigrams = 0usize;
        let mut run_index = 0usize;
        let mut prev = String::new();
        let mut pair = String::new();
        let mut have_prev = false;
        for_each_word_run(lower, |s, e| {
            if let Some(r) = runs.as_deref_mut() {
                r.push((s, e));
            }
            let this_run = run_index;
            run_index += 1;
            let tok = &lower[s..e];
            // Character count, not bytes: "é" is one character.
            if self.min_len > 1 && (tok.len() < 2 || tok.chars().nth(1).is_none()) {
                return;
            }
            if self.stop_words && is_stop_word(tok) {
                return;
            }
            let term: Cow<'_, str> = match &self.stemmer {
                Some(st) => st.stem(tok),
                None => Cow::Borrowed(tok),
            };
            unigrams += 1;
            f(&term, Some(this_run));
            if self.bigrams {
                if have_prev {
                    pair.clear();
                    pair.push_str(&prev);
                    pair.push(' ');
                    pair.push_str(&term);
                    f(&pair, None);
                }
                prev.clear();
                prev.push_str(&term);
                have_prev = true;
            }
        });
        unigrams
    }
}

/// FxHash-style multiply-rotate hasher (as used in the Rust compiler): much
/// faster than SipHash for short keys, and the vocabulary is never exposed to
/// untrusted hash-flooding in a local analysis.
#[derive(Default, Clone, Copy)]
pub(crate) struct FastHasher(u64);

impl Hasher for FastHasher {
    #[inline]
    fn write(&mut self, bytes: &[u8]) {
        const K: u64 = 0x51_7c_c1_b7_27_22_0a_95;
        let mut h = self.0;
        let mut chunks = bytes.chunks_exact(8);
        for c in &mut chunks {
            let mut w = [0u8; 8];
            w.copy_from_slice(c);
            h = (h.rotate_left(5) ^ u64::from_le_bytes(w)).wrapping_mul(K);
        }
        for &b in chunks.remainder() {
            h = (h.rotate_left(5) ^ b as u64).wrapping_mul(K);
        }
        self.0 = h;
    }
    #[inline]
    fn write_u8(&mut self, i: u8) {
        self.0 = (self.0.rotate_left(5) ^ i as u64).wrapping_mul(0x51_7c_c1_b7_27_22_0a_95);
    }
    #[inline]
    fn finish(&self) -> u64 {
        self.0
    }
}

pub(crate) type FastMap<K, V> = HashMap<K, V, BuildHasherDefault<FastHasher>>;

/// Where [`TermCounter::add_with_runs`] puts the runs of word characters
/// and the term id of each run.
pub(crate) type WordRuns<'a> = (&'a mut Vec<(usize, usize)>, &'a mut Vec<u32>);

/// Marks a run of word characters that is not itself a term.
pub(crate) const NO_TERM: u32 = u32::MAX;

/// Term counts of a corpus: the sorted vocabulary and, per note, sorted
/// `(column, count)` pairs.
pub(crate) struct Counted {
    pub vocabulary: Vec<String>,
    pub indptr: Vec<usize>,
    pub indices: Vec<u32>,
    pub counts: Vec<u32>,
}

/// Counts the terms of notes one at a time, then sorts the vocabulary by
/// code point (UTF-8 byte order), which is the order Python sorts strings in.
pub(crate) struct TermCounter {
    maker: TermMaker,
    ids: FastMap<Box<str>, u32>,
    order: Vec<Box<str>>,
    row_ids: Vec<u32>,
    indptr: Vec<usize>,
    indices: Vec<u32>,
    counts: Vec<u32>,
}

impl TermCounter {
    pub(crate) fn new(options: &NoteOptions) -> Self {
        TermCounter {
            maker: TermMaker::new(options),
            ids: FastMap::default(),
            order: Vec::new(),
            row_ids: Vec::new(),
            indptr: vec![0],
            indices: Vec::new(),
            counts: Vec::new(),
        }
    }

    /// Adds one note, already lowercased; returns its number of unigrams.
    #[cfg(test)]
    pub(crate) fn add(&mut self, lower: &str) -> usize {
        self.add_with_runs(lower, None)
    }

    /// [`TermCounter::add`], also collecting the runs of word characters
    /// and, for each run, the id of the unigram term that is exactly that
    /// run's text ([`NO_TERM`] when there is none, or when stemming changes
    /// terms), so the word measures can reuse the lookup.
    pub(crate) fn add_with_runs(&mut self, lower: &str, words: Option<WordRuns<'_>>) -> usize {
        let pure = self.maker.stemmer.is_none();
        let (runs, mut run_terms) = match words {
            Some((r, t)) => {
                t.clear();
                (Some(r), Some(t))
            }
            None => (None, None),
        };
        let TermCounter {
            maker,
            ids,
            order,
            row_ids,
            ..
        } = self;
        row_ids.clear();
        let n = maker.terms_and_runs(
            lower,
            |term, run| {
                let id = match ids.get(term) {
                    Some(&id) => id,
                    None => {
                        let id = order.len() as u32;
                        let key: Box<str> = term.into();
                        ids.insert(key.clone(), id);
                        order.push(key);
                        id
                    }
                };
                row_ids.push(id);
                if let (Some(k), Some(rt), true) = (run, run_terms.as_deref_mut(), pure) {
                    if rt.len() <= k {
                        rt.resize(k + 1, NO_TERM);
                    }
                    rt[k] = id;
                }
            },
            runs,
        );
        self.row_ids.sort_unstable();
        let r = &self.row_ids;
        let mut k = 0;
        while k < r.len() {
            let id = r[k];
            let mut m = k + 1;
            while m < r.len() && r[m] == id {
                m += 1;
            }
            self.indices.push(id);
            self.counts.push((m - k) as u32);
            k = m;
        }
        self.indptr.push(self.indices.len());
        n
    }

    /// Renumbers columns into sorted-vocabulary order.
    pub(crate) fn finish(self) -> Counted {
        let TermCounter {
            order,
            indptr,
            mut indices,
            mut counts,
            ..
        } = self;
        let mut by_name: Vec<u32> = (0..order.len() as u32).collect();
        by_name.sort_unstable_by(|&a, &b| order[a as usize].cmp(&order[b as usize]));
        let mut new_id = vec![0u32; order.len()];
        for (rank, &old) in by_name.iter().enumerate() {
            new_id[old as usize] = rank as u32;
        }
        let vocabulary: Vec<String> = by_name
            .iter()
            .map(|&old| order[old as usize].to_string())
            .collect();
        let mut pairs: Vec<(u32, u32)> = Vec::new();
        for r in 0..indptr.len() - 1 {
            let (a, b) = (indptr[r], indptr[r + 1]);
            pairs.clear();
            pairs.extend(
                indices[a..b]
                    .iter()
                    .zip(&counts[a..b])
                    .map(|(&i, &c)| (new_id[i as usize], c)),
            );
            pairs.sort_unstable_by_key(|p| p.0);
            for (k, &(i, c)) in pairs.iter().enumerate() {
                indices[a + k] = i;
                counts[a + k] = c;
            }
        }
        Counted {
            vocabulary,
            indptr,
            indices,
            counts,
        }
    }
}

/// Joins the counts of consecutive runs of notes into one, with one sorted
/// vocabulary. Each part's vocabulary is sorted already, so each row's
/// columns stay in increasing order after renumbering.
pub(crate) fn merge(mut parts: Vec<Counted>) -> Counted {
    if parts.len() == 1 {
        if let Some(p) = parts.pop() {
            return p;
        }
    }
    let mut all: Vec<(&str, usize, usize)> = Vec::new();
    for (pi, p) in parts.iter().enumerate() {
        all.extend(
            p.vocabulary
                .iter()
                .enumerate()
                .map(|(k, t)| (t.as_str(), pi, k)),
        );
    }
    all.sort_unstable();
    let mut vocabulary: Vec<String> = Vec::new();
    let mut maps: Vec<Vec<u32>> = parts.iter().map(|p| vec![0; p.vocabulary.len()]).collect();
    for &(t, pi, k) in &all {
        if vocabulary.last().map(String::as_str) != Some(t) {
            vocabulary.push(t.to_string());
        }
        maps[pi][k] = (vocabulary.len() - 1) as u32;
    }
    let mut indptr = vec![0usize];
    let mut indices = Vec::new();
    let mut counts = Vec::new();
    for (p, map) in parts.iter().zip(&maps) {
        for r in 0..p.indptr.len() - 1 {
            let (a, b) = (p.indptr[r], p.indptr[r + 1]);
            indices.extend(p.indices[a..b].iter().map(|&i| map[i as usize]));
            counts.extend_from_slice(&p.counts[a..b]);
            indptr.push(indices.len());
        }
    }
    Counted {
        vocabulary,
        indptr,
        indices,
        counts,
    }
}

/// Counts the terms of every note.
#[cfg(test)]
pub(crate) fn count_terms<S: AsRef<str>>(notes: &[S], options: &NoteOptions) -> Counted {
    let mut c = TermCounter::new(options);
    for note in notes {
        c.add(&lowercase(note.as_ref()));
    }
    c.finish()
}

/// The words of a note for readability and diversity: maximal runs of word
/// characters, where an apostrophe or hyphen between two word characters
/// joins them ("doesn't", "87-year-old" are one word each, as a reader
/// counts them). Byte offsets into `text`.
pub(crate) fn words(text: &str) -> Vec<(usize, usize)> {
    let mut runs: Vec<(usize, usize)> = Vec::new();
    for_each_word_run(text, |s, e| runs.push((s, e)));
    words_from_runs(text, &runs)
}

/// [`words`] from the runs of word characters of `text`.
pub(crate) fn words_from_runs(text: &str, runs: &[(usize, usize)]) -> Vec<(usize, usize)> {
    let mut out: Vec<(usize, usize)> = Vec::with_capacity(runs.len());
    for &(s, e) in runs {
        if let Some(last) = out.last_mut() {
            let gap = &text[last.1..s];
            if matches!(gap, "'" | "\u{2019}" | "-" | "\u{2010}") {
                last.1 = e;
                continue;
            }
        }
        out.push((s, e));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn terms(text: &str, options: &NoteOptions) -> Vec<String> {
        let lower = lowercase(text);
        let mut out = Vec::new();
        TermMaker::new(options).terms(&lower, |t| out.push(t.to_string()));
        out
    }

    #[test]
    fn stop_words_are_sorted_and_unique() {
        for w in STOP_WORDS.windows(2) {
            assert!(w[0] < w[1], "{} >= {}", w[0], w[1]);
        }
        assert!(!is_stop_word("no") && !is_stop_word("not") && !is_stop_word("without"));
    }

    #[test]
    fn default_tokens_drop_single_characters_and_punctuation() {
        let t = terms(
            "Pt is a 78 y/o F, lives_alone; café-au-lait ½ x",
            &NoteOptions::default(),
        );
        assert_eq!(t, ["pt", "is", "78", "lives_alone", "café", "au", "lait"]);
    }

    #[test]
    fn options_change_tokens() {
        let o = NoteOptions {
            single_char_tokens: true,
            stop_words: true,
            stem: true,
            bigrams: true,
            ..NoteOptions::default()
        };
        let t = terms("The patient was walking with a frame", &o);
        assert_eq!(
            t,
            ["patient", "walk", "patient walk", "frame", "walk frame"]
        );
    }

    #[test]
    fn words_join_apostrophes_and_hyphens() {
        let text = "She doesn't use an 87-year-old's cane.";
        let w: Vec<&str> = words(text).into_iter().map(|(s, e)| &text[s..e]).collect();
        assert_eq!(w, ["She", "doesn't", "use", "an", "87-year-old's", "cane"]);
    }

    #[test]
    fn counts_are_sorted_by_vocabulary() {
        let c = count_terms(&["b a b cc", "", "zz b"], &NoteOptions::default());
        assert_eq!(c.vocabulary, ["cc", "zz"]);
        assert_eq!(c.indptr, [0, 1, 1, 2]);
        assert_eq!(c.indices, [0, 1]);
        assert_eq!(c.counts, [1, 1]);
    }

    #[test]
    fn merged_parts_equal_one_pass() {
        let notes = ["zz yy xx", "", "aa zz zz", "bb", "yy aa cc dd", "xx"];
        let whole = count_terms(&notes, &NoteOptions::default());
        for cut in [1, 2, 3, 5] {
            let m = merge(vec![
                count_terms(&notes[..cut], &NoteOptions::default()),
                count_terms(&notes[cut..], &NoteOptions::default()),
            ]);
            assert_eq!(m.vocabulary, whole.vocabulary);
            assert_eq!(m.indptr, whole.indptr);
            assert_eq!(m.indices, whole.indices);
            assert_eq!(m.counts, whole.counts);
        }
    }
}
