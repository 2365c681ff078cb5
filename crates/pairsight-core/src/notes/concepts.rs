//! Concepts: named lists of terms and phrases found in notes on token
//! boundaries with one multi-pattern automaton (Aho & Corasick 1975,
//! "Efficient string matching", CACM 18(6):333-340), each mention read as
//! affirmed or negated (see the negation module).

use std::borrow::Cow;

use aho_corasick::{AhoCorasick, AhoCorasickKind, MatchKind};
use serde::{Deserialize, Serialize};

use super::negation::{cue_phrases, cues_from_matches, negated};
use super::tokens::is_word_char;
use crate::{Error, Result};

fn yes() -> bool {
    true
}

/// A named list of terms and multi-word phrases looked for in notes.
///
/// In a study file:
/// `[[concepts]] name = "lives_alone" terms = ["lives alone", "lives by herself"]`.
/// Matching ignores case and treats any run of whitespace (line breaks too)
/// as one space, on token boundaries: "fall" does not match inside "fallen".
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Concept {
    /// Name, used in feature names `concept.<name>` and `concept.<name>.negated`:
    /// letters, digits, `_` and `-` only.
    pub name: String,
    /// Terms and phrases; any one of them is a mention.
    pub terms: Vec<String>,
    /// Whether negation cues apply (default true). When false every mention
    /// counts as affirmed.
    #[serde(default = "yes")]
    pub negation: bool,
}

impl Concept {
    /// A concept with negation on.
    pub fn new(name: &str, terms: &[&str]) -> Self {
        Concept {
            name: name.to_string(),
            terms: terms.iter().map(|t| t.to_string()).collect(),
            negation: true,
        }
    }
}

/// One concept mention in a note, for highlighting.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Highlight {
    /// Start in UTF-16 code units (what a browser's string offsets count).
    pub start: usize,
    /// End (exclusive) in UTF-16 code units.
    pub end: usize,
    /// Start in bytes of the UTF-8 note.
    pub byte_start: usize,
    /// End (exclusive) in bytes of the UTF-8 note.
    pub byte_end: usize,
    /// Name of the concept.
    pub concept: String,
    /// Whether the mention is negated.
    pub negated: bool,
}

/// A note lowercased with whitespace runs collapsed to one space, with the
/// map back to the original bytes and the places where a clause ends.
///
/// An ASCII note whose only whitespace is single spaces is already in that
/// form up to case; it is used as it is (the automata ignore ASCII case), so
/// the common note is not copied.
pub(crate) struct Normalized<'a> {
    pub text: Cow<'a, str>,
    /// `orig[b]`: byte offset in the original of normalized byte `b`; empty
    /// when the map is the identity or was not asked for.
    orig: Vec<usize>,
    identity: bool,
    orig_len: usize,
    /// Normalized offsets of sentence ends (`.` `!` `?` before a space or
    /// the end, `;`) and of line breaks.
    pub breaks: Vec<usize>,
}

impl<'a> Normalized<'a> {
    pub(crate) fn new(text: &'a str) -> Self {
        Self::build(text, true)
    }

    /// Without the map back to the original (enough for counting).
    pub(crate) fn for_counting(text: &'a str) -> Self {
        Self::build(text, false)
    }

    fn build(text: &'a str, keep_map: bool) -> Self {
        let bytes = text.as_bytes();
        let plain = text.is_ascii()
            && !bytes
                .iter()
                .any(|&b| b.is_ascii_whitespace() && b != b' ' || b == 0x0b)
            && !bytes.windows(2).any(|w| w == b"  ");
        let (out, orig, breaks) = if plain {
            (Cow::Borrowed(text), Vec::new(), Vec::new())
        } else {
            let (o, m, b) = Self::collapse(text, keep_map);
            (Cow::Owned(o), m, b)
        };
        let mut breaks = breaks;
        let ob = out.as_bytes();
        for (k, &b) in ob.iter().enumerate() {
            let ends = match b {
                b';' | b'!' | b'?' => true,
                b'.' => k + 1 == ob.len() || ob[k + 1] == b' ',
                _ => false,
            };
            if ends {
                breaks.push(k);
            }
        }
        breaks.sort_unstable();
        breaks.dedup();
        Normalized {
            text: out,
            orig,
            identity: plain,
            orig_len: text.len(),
            breaks,
        }
    }

    /// Lowercases and collapses whitespace; returns the text, the byte map
    /// (when asked for) and the line breaks.
    fn collapse(text: &str, keep_map: bool) -> (String, Vec<usize>, Vec<usize>) {
        let mut out = String::with_capacity(text.len());
        let mut orig = Vec::with_capacity(if keep_map { text.len() + 1 } else { 0 });
        let mut breaks = Vec::new();
        let mut in_space = false;
        for (i, c) in text.char_indices() {
            if c.is_whitespace() {
                if !in_space {
                    out.push(' ');
                    if keep_map {
                        orig.push(i);
                    }
                    in_space = true;
                }
                if matches!(c, '\n' | '\r' | '\u{2028}' | '\u{2029}')
                    && breaks.last() != Some(&(out.len() - 1))
                {
                    breaks.push(out.len() - 1);
                }
                continue;
            }
            in_space = false;
            let before = out.len();
            if c.is_ascii() {
                out.push(c.to_ascii_lowercase());
            } else if matches!(c, '\u{2018}' | '\u{2019}') {
                // Typographic apostrophes read as the plain one ("isn’t").
                out.push('\'');
            } else {
                out.extend(c.to_lowercase());
            }
            if keep_map {
                orig.extend(std::iter::repeat_n(i, out.len() - before));
            }
        }
        (out, orig, breaks)
    }

    /// Original byte offset of normalized offset `k` (`k` may be the end).
    pub(crate) fn original(&self, k: usize) -> usize {
        if self.identity {
            k.min(self.orig_len)
        } else {
            self.orig.get(k).copied().unwrap_or(self.orig_len)
        }
    }

    /// Whether at most `limit` words start in `a..b`; stops reading after
    /// `limit + 1` words, so a far-away cue costs little.
    pub(crate) fn words_between_at_most(&self, a: usize, b: usize, limit: usize) -> bool {
        let Some(slice) = self.text.get(a..b.min(self.text.len())) else {
            return false;
        };
        let mut count = 0usize;
        let mut in_word = a > 0 && self.text[..a].chars().next_back().is_some_and(is_word_char);
        for c in slice.chars() {
            let w = is_word_char(c);
            if w && !in_word {
                count += 1;
                if count > limit {
                    return false;
                }
            }
            in_word = w;
        }
        true
    }
}

/// Lowercase and collapse whitespace in a pattern the way notes are.
fn normalize_pattern(term: &str) -> String {
    Normalized::collapse(term.trim(), false).0
}

fn starts_with_word_char(s: &str) -> bool {
    s.chars().next().is_some_and(is_word_char)
}

fn ends_with_word_char(s: &str) -> bool {
    s.chars().next_back().is_some_and(is_word_char)
}

/// All matches of `ac` in `text` (overlapping ones included) that sit on
/// token boundaries: a pattern that begins (ends) with a word character
/// must not have a word character just before (after) it.
pub(crate) fn boundary_matches(
    ac: &AhoCorasick,
    text: &str,
    lens: &[usize],
) -> Vec<(usize, usize, usize)> {
    let mut out = Vec::new();
    for m in ac.find_overlapping_iter(text) {
        let (s, e, pid) = (m.start(), m.end(), m.pattern().as_usize());
        debug_assert_eq!(e - s, lens[pid]);
        let pat = &text[s..e];
        if starts_with_word_char(pat) && ends_with_word_char(&text[..s]) {
            continue;
        }
        if ends_with_word_char(pat) && starts_with_word_char(&text[e..]) {
            continue;
        }
        out.push((s, e, pid));
    }
    out
}

/// Keeps the leftmost, then longest, then first-listed match at each place,
/// dropping any that overlap one already kept.
pub(crate) fn select_leftmost_longest(
    matches: &mut [(usize, usize, usize)],
) -> Vec<(usize, usize, usize)> {
    matches.sort_unstable_by(|a, b| a.0.cmp(&b.0).then(b.1.cmp(&a.1)).then(a.2.cmp(&b.2)));
    let mut kept: Vec<(usize, usize, usize)> = Vec::new();
    let mut reach = 0usize;
    for &m in matches.iter() {
        if kept.is_empty() || m.0 >= reach {
            reach = m.1;
            kept.push(m);
        }
    }
    kept
}

/// One mention of one concept in normalized offsets.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Mention {
    pub concept: usize,
    pub start: usize,
    pub end: usize,
    pub negated: bool,
}

/// A compiled set of concepts: build once, apply to every note.
pub struct ConceptMatcher {
    names: Vec<String>,
    negation: Vec<bool>,
    /// Concept patterns first, then (when any concept uses negation) the
    /// negation cues, so one scan of a note finds both.
    ac: Option<AhoCorasick>,
    lens: Vec<usize>,
    n_patterns: usize,
    /// For each distinct pattern, the concepts that list it.
    owners: Vec<Vec<usize>>,
}

impl ConceptMatcher {
    /// Validates and compiles `concepts`. Names must be unique, non-empty and
    /// made of letters, digits, `_` or `-`; every term must have a word
    /// character.
    pub fn new(concepts: &[Concept]) -> Result<Self> {
        let mut patterns: Vec<String> = Vec::new();
        let mut owners: Vec<Vec<usize>> = Vec::new();
        for (ci, c) in concepts.iter().enumerate() {
            if c.name.is_empty()
                || !c
                    .name
                    .chars()
                    .all(|ch| ch.is_alphanumeric() || ch == '_' || ch == '-')
            {
                return Err(Error::param(
                    format!("concepts[{ci}].name"),
                    format!(
                        "\"{}\" is not a usable concept name; use letters, digits, '_' or '-' (e.g. \"lives_alone\")",
                        c.name
                    ),
                ));
            }
            if concepts[..ci].iter().any(|o| o.name == c.name) {
                return Err(Error::param(
                    format!("concepts[{ci}].name"),
                    format!(
                        "concept \"{}\" is defined twice; give each concept its own name",
                        c.name
                    ),
                ));
            }
            if c.terms.is_empty() {
                return Err(Error::param(
                    format!("concepts[{ci}].terms"),
                    format!("concept \"{}\" has no terms; list at least one", c.name),
                ));
            }
            for (ti, t) in c.terms.iter().enumerate() {
                let p = normalize_pattern(t);
                if !p.chars().any(is_word_char) {
                    return Err(Error::param(
                        format!("concepts[{ci}].terms[{ti}]"),
                        format!(
                            "term \"{t}\" of concept \"{}\" has no letter or digit; remove it",
                            c.name
                        ),
                    ));
                }
                match patterns.iter().position(|q| *q == p) {
                    Some(k) => {
                        if !owners[k].contains(&ci) {
                            owners[k].push(ci);
                        }
                    }
                    None => {
                        patterns.push(p);
                        owners.push(vec![ci]);
                    }
                }
            }
        }
        let n_patterns = patterns.len();
        if concepts.iter().any(|c| c.negation) {
            patterns.extend(cue_phrases().map(str::to_string));
        }
        let ac = if n_patterns == 0 {
            None
        } else {
            Some(
                AhoCorasick::builder()
                    .match_kind(MatchKind::Standard)
                    .ascii_case_insensitive(true)
                    .kind(Some(AhoCorasickKind::DFA))
                    .build(&patterns)
                    .map_err(|e| {
                        Error::compute(format!(
                            "the concept terms could not be compiled ({e}); use fewer or shorter terms"
                        ))
                    })?,
            )
        };
        Ok(ConceptMatcher {
            names: concepts.iter().map(|c| c.name.clone()).collect(),
            negation: concepts.iter().map(|c| c.negation).collect(),
            ac,
            lens: patterns.iter().map(String::len).collect(),
            n_patterns,
            owners,
        })
    }

    /// Concept names in order.
    pub fn names(&self) -> &[String] {
        &self.names
    }

    /// Mentions in a normalized note, per concept leftmost-longest and not
    /// overlapping; ordered by start, then concept.
    pub(crate) fn mentions(&self, norm: &Normalized<'_>) -> Vec<Mention> {
        let Some(ac) = &self.ac else {
            return Vec::new();
        };
        let all = boundary_matches(ac, &norm.text, &self.lens);
        let (raw, mut cue_raw): (Vec<_>, Vec<_>) =
            all.into_iter().partition(|m| m.2 < self.n_patterns);
        if raw.is_empty() {
            return Vec::new();
        }
        let mut out: Vec<Mention> = Vec::new();
        let mut mine: Vec<(usize, usize, usize)> = Vec::new();
        for ci in 0..self.names.len() {
            mine.clear();
            mine.extend(
                raw.iter()
                    .copied()
                    .filter(|&(_, _, pid)| self.owners[pid].contains(&ci)),
            );
            for (s, e, _) in select_leftmost_longest(&mut mine) {
                out.push(Mention {
                    concept: ci,
                    start: s,
                    end: e,
                    negated: false,
                });
            }
        }
        if out.iter().any(|m| self.negation[m.concept]) {
            for m in cue_raw.iter_mut() {
                m.2 -= self.n_patterns;
            }
            let cues = cues_from_matches(&mut cue_raw);
            if !cues.is_empty() {
                let spans: Vec<(usize, usize)> = out.iter().map(|m| (m.start, m.end)).collect();
                let flags = negated(norm, &cues, &spans, &spans);
                for (m, f) in out.iter_mut().zip(flags) {
                    m.negated = f && self.negation[m.concept];
                }
            }
        }
        out.sort_by_key(|m| (m.start, m.end, m.concept));
        out
    }

    /// Affirmed and negated mention counts of each concept in `note`.
    pub fn count(&self, note: &str) -> Vec<(usize, usize)> {
        let mut counts = vec![(0usize, 0usize); self.names.len()];
        if self.ac.is_none() || note.is_empty() {
            return counts;
        }
        let norm = Normalized::for_counting(note);
        for m in self.mentions(&norm) {
            if m.negated {
                counts[m.concept].1 += 1;
            } else {
                counts[m.concept].0 += 1;
            }
        }
        counts
    }

    /// Highlight spans of every mention in `note`, ordered by start, end,
    /// concept. Spans of different concepts may overlap.
    pub fn highlights(&self, note: &str) -> Vec<Highlight> {
        if self.ac.is_none() || note.is_empty() {
            return Vec::new();
        }
        let norm = Normalized::new(note);
        let mentions = self.mentions(&norm);
        let ascii = note.is_ascii();
        let utf16 = |b: usize| -> usize {
            if ascii {
                b
            } else {
                note.get(..b)
                    .map(|s| s.chars().map(char::len_utf16).sum())
                    .unwrap_or(0)
            }
        };
        mentions
            .into_iter()
            .map(|m| {
                let bs = norm.original(m.start);
                let be = norm.original(m.end).max(bs);
                Highlight {
                    start: utf16(bs),
                    end: utf16(be),
                    byte_start: bs,
                    byte_end: be,
                    concept: self.names[m.concept].clone(),
                    negated: m.negated,
                }
            })
            .collect()
    }
}

/// Highlight spans of the concept mentions in one note (see
/// [`ConceptMatcher::highlights`]); errors only on invalid concepts.
pub fn highlights(note: &str, concepts: &[Concept]) -> Result<Vec<Highlight>> {
    Ok(ConceptMatcher::new(concepts)?.highlights(note))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn phrases_match_across_whitespace_and_case_on_boundaries() {
        let m = ConceptMatcher::new(&[
            Concept::new("lives_alone", &["lives alone", "lives by herself"]),
            Concept::new("fall", &["fall", "falls", "fell"]),
        ])
        .unwrap();
        let note = "Pt LIVES\n  alone. Fallen twice; falls x2, fell.";
        assert_eq!(m.count(note), vec![(1, 0), (2, 0)]);
        let h = m.highlights(note);
        assert_eq!(&note[h[0].byte_start..h[0].byte_end], "LIVES\n  alone");
        assert_eq!(&note[h[1].byte_start..h[1].byte_end], "falls");
    }

    #[test]
    fn utf16_offsets_count_surrogate_pairs() {
        let note = "😀 café: recent fall";
        let h = highlights(note, &[Concept::new("fall", &["fall"])]).unwrap();
        // 😀 is 2 UTF-16 units and 4 bytes; é is 1 unit and 2 bytes.
        assert_eq!((h[0].start, h[0].end), (16, 20));
        assert_eq!((h[0].byte_start, h[0].byte_end), (19, 23));
        let units: Vec<u16> = note.encode_utf16().collect();
        assert_eq!(
            String::from_utf16(&units[h[0].start..h[0].end]).unwrap(),
            "fall"
        );
    }

    #[test]
    fn invalid_concepts_are_errors() {
        assert!(ConceptMatcher::new(&[Concept::new("a.b", &["x"])]).is_err());
        assert!(ConceptMatcher::new(&[Concept::new("a", &[" -- "])]).is_err());
        assert!(ConceptMatcher::new(&[Concept::new("a", &[])]).is_err());
        assert!(
            ConceptMatcher::new(&[Concept::new("a", &["x"]), Concept::new("a", &["y"])]).is_err()
        );
    }

    #[test]
    fn negation_off_counts_everything_affirmed() {
        let mut c = Concept::new("fall", &["falls"]);
        c.negation = false;
        let m = ConceptMatcher::new(&[c]).unwrap();
        assert_eq!(m.count("Denies falls."), vec![(1, 0)]);
    }

    #[test]
    fn cue_inside_a_concept_phrase_does_not_negate_it() {
        let m = ConceptMatcher::new(&[Concept::new("housing", &["no fixed abode"])]).unwrap();
        assert_eq!(m.count("Homeless, no fixed abode."), vec![(1, 0)]);
    }
}
