//! Lexical diversity: the type-token ratio and MTLD, the measure of textual
//! lexical diversity (McCarthy & Jarvis 2010, "MTLD, vocd-D, and HD-D: a
//! validation study of sophisticated approaches to lexical diversity
//! assessment", Behavior Research Methods 42(2):381-392).

/// The factor threshold McCarthy & Jarvis (2010) recommend for MTLD.
pub const MTLD_THRESHOLD: f64 = 0.72;

use super::tokens::FastMap;

/// Each word as a small integer (first-seen order) and the number of
/// distinct words, so the passes below compare integers, not strings.
fn word_ids<S: AsRef<str>>(words: &[S]) -> (Vec<u32>, usize) {
    let mut map: FastMap<&str, u32> = FastMap::default();
    let ids = words
        .iter()
        .map(|w| {
            let next = map.len() as u32;
            *map.entry(w.as_ref()).or_insert(next)
        })
        .collect();
    (ids, map.len())
}

/// Distinct words over words; 0 for no words.
pub fn type_token_ratio<S: AsRef<str>>(words: &[S]) -> f64 {
    if words.is_empty() {
        return 0.0;
    }
    let (_, types) = word_ids(words);
    types as f64 / words.len() as f64
}

/// Factors of one pass of MTLD over `ids` in the given order: walk the
/// words, and each time the running type-token ratio of the current stretch
/// falls to `threshold` or below, count one factor and start a new stretch;
/// a leftover stretch counts as the partial factor (1 - ttr) / (1 - threshold).
fn mtld_factors(ids: impl Iterator<Item = u32>, types: usize, threshold: f64) -> f64 {
    // seen[id] == stretch number when the word already occurred in this stretch.
    let mut seen = vec![0u32; types];
    let mut stretch = 1u32;
    let mut distinct = 0usize;
    let mut tokens = 0usize;
    let mut factors = 0.0;
    let mut ttr = 1.0;
    for id in ids {
        tokens += 1;
        let s = &mut seen[id as usize];
        if *s != stretch {
            *s = stretch;
            distinct += 1;
        }
        ttr = distinct as f64 / tokens as f64;
        if ttr <= threshold {
            factors += 1.0;
            stretch += 1;
            distinct = 0;
            tokens = 0;
        }
    }
    if tokens > 0 {
        factors += (1.0 - ttr) / (1.0 - threshold);
    }
    factors
}

/// MTLD with the given factor threshold: the mean of the forward and the
/// backward pass, each the number of words over its factor count
/// (McCarthy & Jarvis 2010). A pass with no factor at all (every word
/// distinct) counts one factor, so the value is the number of words. 0 for no
/// words. `threshold` must lie in (0, 1).
pub fn mtld_with<S: AsRef<str>>(words: &[S], threshold: f64) -> f64 {
    let (ids, types) = word_ids(words);
    mtld_of_ids(&ids, types, threshold)
}

fn mtld_of_ids(ids: &[u32], types: usize, threshold: f64) -> f64 {
    if ids.is_empty() {
        return 0.0;
    }
    let n = ids.len() as f64;
    let pass = |f: f64| n / if f > 0.0 { f } else { 1.0 };
    let fwd = mtld_factors(ids.iter().copied(), types, threshold);
    let bwd = mtld_factors(ids.iter().rev().copied(), types, threshold);
    (pass(fwd) + pass(bwd)) / 2.0
}

/// MTLD at the recommended threshold 0.72.
pub fn mtld<S: AsRef<str>>(words: &[S]) -> f64 {
    mtld_with(words, MTLD_THRESHOLD)
}

/// Type-token ratio, MTLD (threshold 0.72) and syllable count of many
/// notes, one after another: one word-to-number map for the whole corpus
/// saves building a map per note, words that are also terms reuse the term
/// counter's number, and each distinct word's syllables are counted once.
#[derive(Default)]
pub(crate) struct Diversity {
    /// Slot of each word that is not a term.
    ids: FastMap<Box<str>, u32>,
    /// Slot of each term id (`NO_SLOT` until seen).
    term_slots: Vec<u32>,
    syllables: Vec<u32>,
    local: Vec<u32>,
    stamp: Vec<u32>,
    note_ids: Vec<u32>,
    note: u32,
}

const NO_SLOT: u32 = u32::MAX;

impl Diversity {
    fn new_slot(&mut self, word: &str) -> u32 {
        let slot = self.syllables.len() as u32;
        self.syllables
            .push(super::readability::syllables(word) as u32);
        self.stamp.push(0);
        self.local.push(0);
        slot
    }

    fn slot(&mut self, word: &str, term: u32) -> usize {
        if term != super::tokens::NO_TERM {
            let t = term as usize;
            if self.term_slots.len() <= t {
                self.term_slots.resize(t + 1, NO_SLOT);
            }
            if self.term_slots[t] == NO_SLOT {
                self.term_slots[t] = self.new_slot(word);
            }
            return self.term_slots[t] as usize;
        }
        if let Some(&g) = self.ids.get(word) {
            return g as usize;
        }
        let g = self.new_slot(word);
        self.ids.insert(word.into(), g);
        g as usize
    }

    /// (type-token ratio, MTLD, syllables) of one note's words; `terms[k]`
    /// is the term id of word k when the word is exactly one term, else
    /// `NO_TERM`.
    pub(crate) fn measure(&mut self, words: &[&str], terms: &[u32]) -> (f64, f64, usize) {
        if words.is_empty() {
            return (0.0, 0.0, 0);
        }
        let mut syllables = 0usize;
        // Renumber this note's words 0.. in first-seen order.
        self.note = self.note.wrapping_add(1);
        if self.note == 0 {
            self.stamp.fill(0);
            self.note = 1;
        }
        self.note_ids.clear();
        let mut types = 0u32;
        for (k, w) in words.iter().enumerate() {
            let slot = self.slot(w, terms.get(k).copied().unwrap_or(super::tokens::NO_TERM));
            syllables += self.syllables[slot] as usize;
            if self.stamp[slot] != self.note {
                self.stamp[slot] = self.note;
                self.local[slot] = types;
                types += 1;
            }
            self.note_ids.push(self.local[slot]);
        }
        let types = types as usize;
        (
            types as f64 / words.len() as f64,
            mtld_of_ids(&self.note_ids, types, MTLD_THRESHOLD),
            syllables,
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hand_worked_mtld() {
        // "a b a b": forward ttr 1, 1, 0.667 -> factor at word 3 (0.667 <= 0.72),
        // leftover "b" has ttr 1, partial 0; 4 words / 1 factor = 4. Backward the same.
        assert_eq!(mtld(&["a", "b", "a", "b"]), 4.0);
        // "a a a a": ttr 0.5 at word 2 -> factor; again at word 4 -> 2 factors; 4 / 2 = 2.
        assert_eq!(mtld(&["a", "a", "a", "a"]), 2.0);
        // "a b c a": forward ttr 1, 1, 1, 0.75 -> no full factor, partial
        // (1 - 0.75) / 0.28; backward "a c b a" the same.
        let p = 0.25 / 0.28;
        assert!((mtld(&["a", "b", "c", "a"]) - 4.0 / p).abs() < 1e-12);
        assert_eq!(mtld(&["x", "y", "z"]), 3.0);
        assert_eq!(mtld::<&str>(&[]), 0.0);
    }

    #[test]
    fn ttr_counts_distinct_words() {
        assert_eq!(type_token_ratio(&["a", "b", "a", "c"]), 0.75);
        assert_eq!(type_token_ratio::<&str>(&[]), 0.0);
    }
}
