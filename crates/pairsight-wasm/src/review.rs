//! The Review step's doorway: draw a blinded review round and write its
//! rating packets and key; merge ratings files against a key and compute
//! agreement and the design comparison. Glue only: the draw, the packets,
//! the merge and every statistic are the core's. Stateless on purpose: the
//! page keeps the key text and the ratings files in its own memory and
//! sends them with each call, so a restarted worker loses nothing.

use crate::session;
use pairsight_core::packet::{
    build_packets, review_results, PacketOptions, ResultsParams, ReviewResults, RoundKey,
};
use pairsight_core::review::{merge_ratings, RatingIssue, RatingsFile, Severity};
use pairsight_core::run::DesignRun;
use pairsight_core::Result;
use serde::{Deserialize, Serialize};

/// What the page asks of a new round.
#[derive(Debug, Clone, Deserialize)]
pub struct RoundRequest {
    /// Designs to draw matched sets from (each run already).
    pub designs: Vec<String>,
    /// Packet options: reviewers, draw settings, scale, shown fields, title.
    pub options: PacketOptions,
}

/// One packet, for the page to offer as a download.
#[derive(Debug, Clone, Serialize)]
pub struct PacketDownload {
    /// Reviewer label.
    pub reviewer: String,
    /// File name.
    pub name: String,
    /// The packet (self-contained HTML).
    pub html: String,
}

/// A new round: the key file's text, its packets and a few counts.
#[derive(Debug, Clone, Serialize)]
pub struct RoundMade {
    /// Round identifier.
    pub round_id: String,
    /// Pairs in the round (a pair two designs share counts once).
    pub pairs: usize,
    /// Matched sets drawn per design, in the request's order.
    pub drawn: Vec<(String, usize)>,
    /// The key file (`round-key.json`) text; it unblinds the round.
    pub key_json: String,
    /// One packet per reviewer.
    pub packets: Vec<PacketDownload>,
}

/// Draw a round across the named designs and write its packets and key.
pub fn make_round(req: &RoundRequest) -> Result<RoundMade> {
    session::with_runs(&req.designs, |a, runs| {
        let owned: Vec<DesignRun> = runs.into_iter().cloned().collect();
        let p = build_packets(a, &owned, &req.options)?;
        let drawn = req
            .designs
            .iter()
            .map(|d| {
                let n = p.key.round.key.iter().filter(|k| &k.design == d).count();
                (d.clone(), n)
            })
            .collect();
        Ok(RoundMade {
            round_id: p.key.round.round_id.clone(),
            pairs: p.key.round.items.len(),
            drawn,
            key_json: p.key.to_json()?,
            packets: p
                .files
                .into_iter()
                .map(|f| PacketDownload {
                    reviewer: f.reviewer,
                    name: f.name,
                    html: f.html,
                })
                .collect(),
        })
    })
}

/// A ratings file as the page read it.
#[derive(Debug, Clone, Deserialize)]
pub struct UploadedFile {
    /// File name.
    pub name: String,
    /// Its bytes (the page sends a plain array of numbers; files of
    /// ratings are small).
    pub bytes: Vec<u8>,
}

/// A key file and the ratings files to merge against it.
#[derive(Debug, Clone, Deserialize)]
pub struct RatingsUpload {
    /// The key file's text.
    pub key_json: String,
    /// Ratings files, in the order the user added them.
    pub files: Vec<UploadedFile>,
    /// Agreement and comparison settings (defaults when absent).
    #[serde(default)]
    pub params: Option<ResultsParams>,
}

/// What merging gives the page: every problem found (with file, row and
/// column) and, when some ratings were accepted, the results on those.
#[derive(Debug, Clone, Serialize)]
pub struct MergeView {
    /// Round identifier of the key.
    pub round_id: String,
    /// Pairs in the round.
    pub pairs_in_round: usize,
    /// Reviewers the packets were written for.
    pub reviewers: Vec<String>,
    /// Ratings accepted.
    pub accepted: usize,
    /// Problems, in reading order.
    pub issues: Vec<RatingIssue>,
    /// Whether any row or file was left out.
    pub has_errors: bool,
    /// Agreement and design comparison on the accepted ratings.
    pub results: Option<ReviewResults>,
}

/// Merge the ratings files against the key and compute the results.
pub fn results_of(up: &RatingsUpload) -> Result<MergeView> {
    let key = RoundKey::from_json(&up.key_json)?;
    let files: Vec<RatingsFile> = up
        .files
        .iter()
        .map(|f| RatingsFile {
            name: f.name.clone(),
            bytes: f.bytes.clone(),
        })
        .collect();
    let merged = merge_ratings(&key.round, &files);
    let has_errors = merged.issues.iter().any(|i| i.severity == Severity::Error);
    let results = if merged.ratings.is_empty() {
        None
    } else {
        Some(review_results(
            &key,
            &merged,
            &up.params.clone().unwrap_or_default(),
        )?)
    };
    Ok(MergeView {
        round_id: key.round.round_id.clone(),
        pairs_in_round: key.round.items.len(),
        reviewers: key.reviewers.clone(),
        accepted: merged.ratings.len(),
        issues: merged.issues,
        has_errors,
        results,
    })
}
