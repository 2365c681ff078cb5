//! Negation of concept mentions, in the manner of NegEx (Chapman, Bridewell,
//! Hanbury, Cooper & Buchanan 2001, "A simple algorithm for identifying
//! negated findings and diseases in discharge summaries", J Biomed Inform
//! 34(5):301-310): a mention is negated when a negation cue stands before it
//! within a short window of words and no clause boundary lies between them,
//! or when a trailing cue follows it closely in the same clause. The cue lists
//! below are our own.

use super::concepts::{select_leftmost_longest, Normalized};

/// What a cue does.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum CueKind {
    /// Negates mentions that follow it ("denies falls").
    Before,
    /// Negates mentions just before it ("falls: denied").
    After,
    /// Looks like a cue but negates nothing ("not only", "no change"); it
    /// takes its words out of play so the shorter cue inside it is not used.
    Pseudo,
    /// Negates both ways ("ruled out falls", "falls ruled out").
    Both,
    /// Ends a negation scope, like a clause boundary ("but", "reports").
    Stop,
}

/// Words that may sit between a leading cue and the mention it negates, so
/// that a list such as "denies fever, chills, nausea, vomiting or falls" is
/// covered; common practice in NegEx-style tools is a window of about five to
/// six words.
pub const WORDS_AFTER_CUE: usize = 6;
/// Words that may sit between a mention and a trailing cue ("falls were
/// ruled out").
pub const WORDS_BEFORE_CUE: usize = 3;

const CUES: &[(&str, CueKind)] = &[
    // Leading cues.
    ("no", CueKind::Before),
    ("not", CueKind::Before),
    ("non", CueKind::Before),
    ("nil", CueKind::Before),
    ("never", CueKind::Before),
    ("neither", CueKind::Before),
    ("nor", CueKind::Before),
    ("none", CueKind::Both),
    ("without", CueKind::Before),
    ("denies", CueKind::Before),
    ("denied", CueKind::Both),
    ("deny", CueKind::Before),
    ("denying", CueKind::Before),
    ("negative for", CueKind::Before),
    ("ruled out", CueKind::Both),
    ("rules out", CueKind::Before),
    ("free of", CueKind::Before),
    ("absence of", CueKind::Before),
    ("absent", CueKind::Both),
    ("no evidence of", CueKind::Before),
    ("no sign of", CueKind::Before),
    ("no signs of", CueKind::Before),
    ("no history of", CueKind::Before),
    ("no known", CueKind::Before),
    ("does not", CueKind::Before),
    ("doesn't", CueKind::Before),
    ("did not", CueKind::Before),
    ("didn't", CueKind::Before),
    ("is not", CueKind::Before),
    ("isn't", CueKind::Before),
    ("has not", CueKind::Before),
    ("hasn't", CueKind::Before),
    ("fails to reveal", CueKind::Before),
    // Trailing cues.
    ("negative", CueKind::After),
    ("is negative", CueKind::After),
    ("was negative", CueKind::After),
    ("was ruled out", CueKind::After),
    ("were ruled out", CueKind::After),
    ("has been ruled out", CueKind::After),
    ("not present", CueKind::After),
    ("not seen", CueKind::After),
    ("not observed", CueKind::After),
    // Look-alikes that negate nothing.
    ("not only", CueKind::Pseudo),
    ("no increase", CueKind::Pseudo),
    ("no change", CueKind::Pseudo),
    ("no significant change", CueKind::Pseudo),
    ("no further", CueKind::Pseudo),
    ("not necessarily", CueKind::Pseudo),
    ("not ruled out", CueKind::Pseudo),
    ("not been ruled out", CueKind::Pseudo),
    ("not certain", CueKind::Pseudo),
    ("not sure", CueKind::Pseudo),
    ("not clear", CueKind::Pseudo),
    ("without fail", CueKind::Pseudo),
    ("gram negative", CueKind::Pseudo),
    // Clause and scope ends.
    ("but", CueKind::Stop),
    ("however", CueKind::Stop),
    ("although", CueKind::Stop),
    ("though", CueKind::Stop),
    ("except", CueKind::Stop),
    ("apart from", CueKind::Stop),
    ("aside from", CueKind::Stop),
    ("yet", CueKind::Stop),
    ("whereas", CueKind::Stop),
    ("reports", CueKind::Stop),
    ("reported", CueKind::Stop),
    ("endorses", CueKind::Stop),
    ("complains of", CueKind::Stop),
    ("admits", CueKind::Stop),
    ("presents with", CueKind::Stop),
    ("states", CueKind::Stop),
    ("has", CueKind::Stop),
    ("uses", CueKind::Stop),
];

/// A cue found in a note (normalized byte offsets).
#[derive(Debug, Clone, Copy)]
pub(crate) struct Cue {
    pub start: usize,
    pub end: usize,
    pub kind: CueKind,
}

/// The cue phrases, in the order [`cues_from_matches`] expects their ids.
pub(crate) fn cue_phrases() -> impl Iterator<Item = &'static str> {
    CUES.iter().map(|c| c.0)
}

/// The cues of a note from the raw boundary matches of [`cue_phrases`]
/// (`id` = index into that list): leftmost-longest and not overlapping, so
/// that "not ruled out" wins over "ruled out" and "no evidence of" over "no".
pub(crate) fn cues_from_matches(raw: &mut [(usize, usize, usize)]) -> Vec<Cue> {
    select_leftmost_longest(raw)
        .into_iter()
        .filter_map(|(start, end, id)| {
            CUES.get(id).map(|c| Cue {
                start,
                end,
                kind: c.1,
            })
        })
        .collect()
}

/// Marks each mention `(start, end)` negated or not. Cues that overlap any
/// concept mention (`all_mentions`, of every concept) are part of a concept's
/// own wording ("no fixed abode") and are ignored.
pub(crate) fn negated(
    norm: &Normalized<'_>,
    cues: &[Cue],
    all_mentions: &[(usize, usize)],
    mentions: &[(usize, usize)],
) -> Vec<bool> {
    let live: Vec<&Cue> = cues
        .iter()
        .filter(|c| !all_mentions.iter().any(|&(s, e)| c.start < e && s < c.end))
        .collect();
    let blocked = |a: usize, b: usize| -> bool {
        // A sentence or line end, or a stop cue, between byte offsets a..b.
        norm.breaks.iter().any(|&p| p >= a && p < b)
            || live
                .iter()
                .any(|c| c.kind == CueKind::Stop && c.start >= a && c.end <= b)
    };
    mentions
        .iter()
        .map(|&(ms, me)| {
            live.iter().any(|c| match c.kind {
                CueKind::Before | CueKind::Both if c.end <= ms => {
                    norm.words_between_at_most(c.end, ms, WORDS_AFTER_CUE) && !blocked(c.end, ms)
                }
                CueKind::After | CueKind::Both if me <= c.start => {
                    norm.words_between_at_most(me, c.start, WORDS_BEFORE_CUE)
                        && !blocked(me, c.start)
                }
                _ => false,
            })
        })
        .collect()
}
