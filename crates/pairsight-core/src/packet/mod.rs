//! Rating packets: one self-contained HTML file per reviewer holding a
//! blinded review round's pairs, and the analyst's key file that maps the
//! pairs back to designs.
//!
//! [`build_packets`] draws a round across designs with
//! [`crate::review::draw_round`], gathers for each pair only the two notes
//! and the fields the analyst chose to show, and writes one packet per
//! reviewer plus a [`RoundKey`]. A packet carries no design name, no group,
//! no outcome, no identifier and no cohort row number (rows could reveal the
//! group when a file is sorted by it); the key carries all of them and stays
//! with the analyst. When ratings come back, [`review_results`] computes the
//! agreement between reviewers and the design comparison.
//!
//! The packet runs offline: its script and style are inline and allowed by
//! their SHA-256 hashes in a Content-Security-Policy that forbids every
//! network request (W3C, Content Security Policy Level 3). Notes travel as
//! JSON in a non-executable script block and reach the page only through
//! `textContent`.
//!
//! Ratings support the review of a study design; they are not clinical
//! judgments about individual patients. Packets hold protected health
//! information: share them only as local research-ethics and
//! data-governance rules allow.

mod html;
mod results;

pub use html::{packet_html, PACKET_SCRIPT, PACKET_STYLE};
pub use results::{
    rating_matrix, review_results, Agreement, ResultsParams, ReviewResults, ReviewerPair,
};

use crate::notes::{self, Highlight};
use crate::review::{draw_round, DesignSets, DistanceMeasure, RatingScale, ReviewParams, Round};
use crate::run::{Analysis, DesignRun};
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::collections::BTreeSet;

/// Format tag of a key file; a key file with another tag is refused.
pub const KEY_FORMAT: &str = "pairsight round key 1";

/// What the key file says about the people behind a pair, for the analyst.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PairIds {
    /// The pair's key.
    pub pair_key: String,
    /// Identifier of the treated unit.
    pub treated_id: String,
    /// Identifier of the comparison unit.
    pub comparison_id: String,
}

/// The analyst's key file (`round-key.json`): the round with its key, the
/// reviewers, the identifiers behind each pair and every design's distance
/// for every pair. Never put in a packet.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RoundKey {
    /// [`KEY_FORMAT`].
    pub format: String,
    /// Why this file must stay with the analyst.
    pub caution: String,
    /// The round, key included.
    pub round: Round,
    /// Reviewers a packet was written for.
    pub reviewers: Vec<String>,
    /// Identifiers behind each pair, in the round's order.
    pub pairs: Vec<PairIds>,
    /// For each design of the round, its own distance for every pair (also
    /// pairs other designs matched); with notes, the note-cosine distance
    /// of TF-IDF vectors too.
    pub measures: Vec<DistanceMeasure>,
}

impl RoundKey {
    /// The key file's text.
    pub fn to_json(&self) -> Result<String> {
        crate::output::json(self)
    }

    /// Read a key file; the error says what is wrong with it.
    pub fn from_json(text: &str) -> Result<RoundKey> {
        let key: RoundKey = serde_json::from_str(text).map_err(|e| {
            Error::data(
                Some(e.line()),
                None,
                format!(
                    "not a round key file: {e}; use the round-key.json written with the packets"
                ),
            )
        })?;
        if key.format != KEY_FORMAT {
            return Err(Error::data(
                None,
                Some("format"),
                format!(
                    "this key file says \"{}\"; this version of pairsight reads \"{KEY_FORMAT}\"",
                    key.format
                ),
            ));
        }
        Ok(key)
    }
}

/// What a packet shows of one unit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PacketSide {
    /// The note, as text.
    pub note: String,
    /// Values of the shown fields, in [`PacketContent::fields`] order.
    pub fields: Vec<String>,
    /// Concept mentions to mark, in UTF-16 offsets of `note`.
    pub marks: Vec<Highlight>,
}

/// One pair of a packet.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PacketPair {
    /// The pair key (reveals nothing).
    pub key: String,
    /// Shown on the left.
    pub left: PacketSide,
    /// Shown on the right.
    pub right: PacketSide,
}

/// Everything one packet holds.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PacketContent {
    /// Round identifier.
    pub round: String,
    /// The reviewer this packet is for.
    pub reviewer: String,
    /// Title shown at the top.
    pub title: String,
    /// The analyst's words to the reviewer (may be empty).
    pub instructions: String,
    /// The rating scale.
    pub scale: RatingScale,
    /// Names of the shown fields.
    pub fields: Vec<String>,
    /// Pairs in the round's order.
    pub pairs: Vec<PacketPair>,
    /// Whether concept marks are shown at first.
    pub marks_on: bool,
}

/// Settings of [`build_packets`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PacketOptions {
    /// Reviewer labels; each gets a packet. Letters, digits, `.`, `_`, `-`.
    pub reviewers: Vec<String>,
    /// The draw: seed, sets per design, stratification, scale, shown fields.
    pub review: ReviewParams,
    /// Include concept marks (the reviewer can switch them off).
    pub marks: bool,
    /// Title at the top of each packet.
    pub title: String,
    /// Extra words from the analyst, shown above the pairs.
    pub instructions: String,
}

impl Default for PacketOptions {
    fn default() -> Self {
        PacketOptions {
            reviewers: Vec::new(),
            review: ReviewParams::default(),
            marks: true,
            title: "Similarity of matched patients".to_string(),
            instructions: String::new(),
        }
    }
}

/// One packet file.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PacketFile {
    /// Its reviewer.
    pub reviewer: String,
    /// File name, `packet-<reviewer>.html`.
    pub name: String,
    /// The HTML.
    pub html: String,
}

/// The packets of a round and its key.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Packets {
    /// The analyst's key file.
    pub key: RoundKey,
    /// One packet per reviewer, in the order given.
    pub files: Vec<PacketFile>,
}

/// Name of the analyst's key file.
pub const KEY_FILE: &str = "round-key.json";

/// The matched sets of each run as a review round needs them: the treated
/// unit and its nearest comparison unit.
pub fn design_sets(runs: &[DesignRun]) -> Vec<DesignSets> {
    runs.iter()
        .map(|r| DesignSets {
            design: r.design.name.clone(),
            sets: r
                .matching
                .sets
                .iter()
                .enumerate()
                .filter_map(|(i, s)| {
                    s.controls.first().map(|&(c, d)| crate::review::SetRecord {
                        set: i + 1,
                        treated_row: s.treated,
                        comparison_row: c,
                        distance: d,
                    })
                })
                .collect(),
        })
        .collect()
}

fn check_reviewers(reviewers: &[String]) -> Result<()> {
    if reviewers.is_empty() {
        return Err(Error::param(
            "reviewers",
            "name at least one reviewer, e.g. --reviewers rev1,rev2",
        ));
    }
    let mut seen = BTreeSet::new();
    for (i, r) in reviewers.iter().enumerate() {
        let ok = !r.is_empty()
            && r.len() <= 40
            && r.chars()
                .all(|c| c.is_ascii_alphanumeric() || matches!(c, '.' | '_' | '-'))
            && !r.starts_with('.');
        if !ok {
            return Err(Error::param(
                format!("reviewers[{i}]"),
                format!("\"{r}\" is not a usable reviewer label (it becomes a file name); use 1 to 40 letters, digits, '.', '_' or '-', not starting with '.'"),
            ));
        }
        if !seen.insert(r.to_ascii_lowercase()) {
            return Err(Error::param(
                format!("reviewers[{i}]"),
                format!("reviewer \"{r}\" is listed twice; each reviewer once"),
            ));
        }
    }
    Ok(())
}

/// Refuse shown fields that would unblind the reviewer or identify the
/// patient: the group, the outcomes and the identifier; the note is always
/// shown anyway.
fn check_fields(analysis: &Analysis, fields: &[String]) -> Result<()> {
    let c = &analysis.study.columns;
    for (i, f) in fields.iter().enumerate() {
        analysis.cohort.table.column(f)?;
        let why = if *f == c.group {
            Some("it is the group column; reviewers must not know who was treated")
        } else if c.outcomes.contains(f) {
            Some("it is an outcome; reviewers must not see outcomes")
        } else if *f == c.id {
            Some("it is the identifier column; packets carry no identifiers")
        } else if c.notes.as_ref() == Some(f) {
            Some("the note is always shown; list only other columns")
        } else {
            None
        };
        if let Some(why) = why {
            return Err(Error::param(
                format!("show_fields[{i}]"),
                format!("\"{f}\" cannot be shown: {why}"),
            ));
        }
    }
    Ok(())
}

/// Draw a review round across `runs` and write a packet for every reviewer
/// and the analyst's key.
pub fn build_packets(
    analysis: &Analysis,
    runs: &[DesignRun],
    options: &PacketOptions,
) -> Result<Packets> {
    check_reviewers(&options.reviewers)?;
    check_fields(analysis, &options.review.show_fields)?;
    let note_col = analysis.study.columns.notes.as_deref().ok_or_else(|| {
        Error::study(
            "columns.notes",
            "a rating packet shows notes; name the notes column in the study file",
        )
    })?;
    let round = draw_round(&design_sets(runs), &options.review)?;
    let notes = analysis.cohort.cells(note_col)?;
    let field_cells: Vec<Vec<&str>> = options
        .review
        .show_fields
        .iter()
        .map(|f| analysis.cohort.cells(f))
        .collect::<Result<_>>()?;
    let matcher = if options.marks && !analysis.study.concepts.is_empty() {
        Some(notes::ConceptMatcher::new(&analysis.study.concepts)?)
    } else {
        None
    };
    let side = |row: usize| -> Result<PacketSide> {
        let note = notes
            .get(row)
            .ok_or_else(|| Error::param("round", format!("row {row} is not a row used")))?;
        let note = if crate::ingest::is_missing(note) {
            ""
        } else {
            note
        };
        Ok(PacketSide {
            note: note.to_string(),
            fields: field_cells
                .iter()
                .map(|c| c.get(row).map_or(String::new(), |v| v.to_string()))
                .collect(),
            marks: matcher
                .as_ref()
                .map_or_else(Vec::new, |m| m.highlights(note)),
        })
    };
    let pairs: Vec<PacketPair> = round
        .items
        .iter()
        .map(|it| {
            Ok(PacketPair {
                key: it.pair_key.clone(),
                left: side(it.left_row)?,
                right: side(it.right_row)?,
            })
        })
        .collect::<Result<_>>()?;

    let key = round_key(analysis, runs, round, &options.reviewers)?;
    let mut files = Vec::new();
    for r in &options.reviewers {
        let content = PacketContent {
            round: key.round.round_id.clone(),
            reviewer: r.clone(),
            title: options.title.clone(),
            instructions: options.instructions.clone(),
            scale: key.round.scale.clone(),
            fields: key.round.show_fields.clone(),
            pairs: pairs.clone(),
            marks_on: matcher.is_some(),
        };
        files.push(PacketFile {
            reviewer: r.clone(),
            name: format!("packet-{r}.html"),
            html: packet_html(&content)?,
        });
    }
    Ok(Packets { key, files })
}

fn round_key(
    analysis: &Analysis,
    runs: &[DesignRun],
    round: Round,
    reviewers: &[String],
) -> Result<RoundKey> {
    let ids = &analysis.cohort.ids;
    // Treated and comparison rows of each distinct pair, in round order.
    let rows: Vec<(usize, usize)> = round
        .items
        .iter()
        .map(|it| {
            round
                .key
                .iter()
                .find(|k| k.pair_key == it.pair_key)
                .map(|k| (k.treated_row, k.comparison_row))
                .ok_or_else(|| Error::compute(format!("pair {} has no key entry", it.pair_key)))
        })
        .collect::<Result<_>>()?;
    let id = |r: usize| ids.get(r).cloned().unwrap_or_default();
    let pairs = round
        .items
        .iter()
        .zip(&rows)
        .map(|(it, &(t, c))| PairIds {
            pair_key: it.pair_key.clone(),
            treated_id: id(t),
            comparison_id: id(c),
        })
        .collect();
    let keys: Vec<&String> = round.items.iter().map(|it| &it.pair_key).collect();
    let mut measures = Vec::new();
    for run in runs {
        let d = analysis.pair_distances(run, &rows)?;
        measures.push(DistanceMeasure {
            name: format!("distance of design \"{}\"", run.design.name),
            values: keys.iter().map(|k| (*k).clone()).zip(d).collect(),
        });
    }
    if let Some(f) = &analysis.notes {
        measures.push(DistanceMeasure {
            name: "note-cosine distance (TF-IDF)".to_string(),
            values: keys
                .iter()
                .zip(&rows)
                .map(|(k, &(t, c))| ((*k).clone(), notes::cosine_distance(&f.tfidf, t, c)))
                .collect(),
        });
    }
    Ok(RoundKey {
        format: KEY_FORMAT.to_string(),
        caution: "This key unblinds the review round: it maps every pair to its design, its patients and which one was treated. Keep it with the analyst; never send it to reviewers. It holds patient identifiers: store and delete it as local research-ethics and data-governance rules require.".to_string(),
        round,
        reviewers: reviewers.to_vec(),
        pairs,
        measures,
    })
}

#[cfg(test)]
mod tests;
