//! Review rounds: a blinded sample of matched sets for clinician reviewers,
//! the ratings files they send back, and the comparison of designs by their
//! ratings.
//!
//! A round is drawn once by the analyst ([`draw_round`]). It has two halves:
//! the *items* a reviewer sees (a pair key and the two rows, sides shuffled)
//! and the *key* that maps each pair back to its design, matched set and
//! treated side. Only [`Round::packet_view`] goes into a rating packet; the
//! key stays with the analyst. Reviewers return ratings files
//! ([`write_ratings_csv`]); [`merge_ratings`] reads any number of them
//! strictly, and [`design_comparison`] summarises rated similarity per
//! design. Agreement between reviewers lives in [`crate::agreement`].
//!
//! Ratings support the review of a study design. They are not clinical
//! judgments about individual patients; follow local research-ethics and
//! data-governance rules and have results reviewed by qualified people.
//!
//! ```
//! use pairsight_core::review::{draw_round, DesignSets, ReviewParams, SetRecord};
//! let sets = (0..10)
//!     .map(|i| SetRecord { set: i, treated_row: i, comparison_row: 100 + i, distance: i as f64 / 10.0 })
//!     .collect();
//! let designs = [DesignSets { design: "score only".into(), sets }];
//! let params = ReviewParams { sets_per_design: 4, ..ReviewParams::default() };
//! let round = draw_round(&designs, &params).unwrap();
//! assert_eq!(round.items.len(), 4);
//! assert!(!serde_json::to_string(&round.packet_view()).unwrap().contains("score only"));
//! ```

mod compare;
mod dist;
mod ratings;

pub use compare::{
    design_comparison, ComparisonParams, DesignComparison, DesignContrast, DesignSummary,
    DistanceMeasure, RankCorrelation,
};
pub use ratings::{
    csv_restore_cell, csv_safe_cell, merge_ratings, parse_time, write_ratings_csv, MergedRatings,
    Rating, RatingIssue, RatingRow, RatingsFile, Severity, RATINGS_HEADER,
};

use crate::rng::Rng;
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::collections::{BTreeMap, BTreeSet};

/// One matched set as the review needs it: the treated unit and the first
/// comparison unit matched to it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SetRecord {
    /// The set's index within its design.
    pub set: usize,
    /// Row of the treated unit in the cohort (0-based).
    pub treated_row: usize,
    /// Row of the first comparison unit matched to it (0-based).
    pub comparison_row: usize,
    /// The design's distance between the two.
    pub distance: f64,
}

/// A design's name and its matched sets.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesignSets {
    /// Design name; unique within a round.
    pub design: String,
    /// Its matched sets.
    pub sets: Vec<SetRecord>,
}

/// The rating scale a reviewer uses.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RatingScale {
    /// Lowest rating.
    pub min: i64,
    /// Highest rating.
    pub max: i64,
    /// One written-out anchor per point, lowest first.
    pub anchors: Vec<String>,
    /// Whether the reviewer may add a free-text comment to a rating.
    pub allow_comment: bool,
}

impl Default for RatingScale {
    /// A 1-to-5 similarity scale with our own anchor wording.
    fn default() -> Self {
        RatingScale {
            min: 1,
            max: 5,
            anchors: vec![
                "Not alike: they differ in ways that matter for the outcome".into(),
                "Slightly alike: some shared features, but important differences".into(),
                "Partly alike: comparable in some important respects, not in others".into(),
                "Very alike: only minor differences that matter little".into(),
                "Interchangeable: as alike as two real patients could reasonably be".into(),
            ],
            allow_comment: true,
        }
    }
}

impl RatingScale {
    /// Checks the scale: at least two points, at most eleven, one non-empty
    /// anchor per point.
    pub fn validate(&self) -> Result<()> {
        let points = self.max - self.min + 1;
        if !(2..=11).contains(&points) {
            return Err(Error::param(
                "scale",
                format!(
                    "a rating scale needs from 2 to 11 points, got {} to {}",
                    self.min, self.max
                ),
            ));
        }
        if self.anchors.len() as i64 != points {
            return Err(Error::param(
                "scale.anchors",
                format!(
                    "give one anchor per point: the scale {} to {} has {points} points but {} anchors",
                    self.min,
                    self.max,
                    self.anchors.len()
                ),
            ));
        }
        if let Some(i) = self.anchors.iter().position(|a| a.trim().is_empty()) {
            return Err(Error::param(
                format!("scale.anchors[{i}]"),
                "every point of the scale needs written-out wording",
            ));
        }
        Ok(())
    }

    /// Whether `rating` is a point of the scale.
    pub fn contains(&self, rating: i64) -> bool {
        (self.min..=self.max).contains(&rating)
    }
}

/// Settings of a review round.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReviewParams {
    /// Seed of the random draw; the same seed and sets give the same round.
    pub seed: u64,
    /// Matched sets drawn from each design (all of them when a design has
    /// fewer).
    pub sets_per_design: usize,
    /// Draw evenly across the quartiles of each design's distance, so that
    /// close and distant pairs are both reviewed.
    pub stratify: bool,
    /// The rating scale.
    pub scale: RatingScale,
    /// Cohort columns shown to reviewers besides the notes. Empty by
    /// default: the group, the outcome and anything else a reviewer must not
    /// see stay hidden unless named here.
    pub show_fields: Vec<String>,
}

impl Default for ReviewParams {
    fn default() -> Self {
        ReviewParams {
            seed: 1,
            sets_per_design: 20,
            stratify: false,
            scale: RatingScale::default(),
            show_fields: Vec::new(),
        }
    }
}

/// Which side of the packet shows the treated unit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Side {
    /// The left (first) note.
    Left,
    /// The right (second) note.
    Right,
}

/// One pair as a reviewer sees it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RoundItem {
    /// Opaque key of the pair; says nothing about design or group.
    pub pair_key: String,
    /// Cohort row shown on the left.
    pub left_row: usize,
    /// Cohort row shown on the right.
    pub right_row: usize,
}

/// The analyst's record of where a pair came from. Never put in a packet.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct KeyEntry {
    /// The pair's key.
    pub pair_key: String,
    /// Design that matched the pair.
    pub design: String,
    /// Set index within that design.
    pub set: usize,
    /// Row of the treated unit.
    pub treated_row: usize,
    /// Row of the comparison unit.
    pub comparison_row: usize,
    /// Side on which the treated unit is shown.
    pub treated_side: Side,
    /// The design's distance between the two.
    pub distance: f64,
}

/// A drawn review round.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Round {
    /// Identifier derived from the seed and the content; printed in every
    /// packet and every ratings file.
    pub round_id: String,
    /// The rating scale.
    pub scale: RatingScale,
    /// Columns shown to reviewers besides the notes.
    pub show_fields: Vec<String>,
    /// Pairs in the order reviewers see them.
    pub items: Vec<RoundItem>,
    /// Where each pair came from, one entry per design and set. A pair that
    /// two designs both matched appears once in `items` and twice here.
    pub key: Vec<KeyEntry>,
}

/// The part of a round that a rating packet carries: no key.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PacketRound {
    /// Round identifier.
    pub round_id: String,
    /// The rating scale.
    pub scale: RatingScale,
    /// Columns shown besides the notes.
    pub show_fields: Vec<String>,
    /// Pairs in order.
    pub items: Vec<RoundItem>,
}

impl Round {
    /// What a rating packet may hold: everything but the key.
    pub fn packet_view(&self) -> PacketRound {
        PacketRound {
            round_id: self.round_id.clone(),
            scale: self.scale.clone(),
            show_fields: self.show_fields.clone(),
            items: self.items.clone(),
        }
    }
}

/// Crockford's base-32 alphabet (no I, L, O, U), so keys read aloud or
/// copied by hand are not mistaken.
const ALPHABET: &[u8; 32] = b"0123456789ABCDEFGHJKMNPQRSTVWXYZ";

/// FNV-1a, 64-bit (Fowler, Noll & Vo; public-domain hash), over the round's
/// content, so the round id changes whenever anything a reviewer would see
/// or the analyst would map changes.
struct Fnv(u64);

impl Fnv {
    fn new() -> Self {
        Fnv(0xcbf2_9ce4_8422_2325)
    }
    fn bytes(&mut self, b: &[u8]) {
        for &x in b {
            self.0 ^= u64::from(x);
            self.0 = self.0.wrapping_mul(0x0000_0100_0000_01b3);
        }
    }
    fn u64(&mut self, v: u64) {
        self.bytes(&v.to_le_bytes());
    }
    fn str(&mut self, s: &str) {
        self.u64(s.len() as u64);
        self.bytes(s.as_bytes());
    }
}

fn base32(mut v: u64, len: usize) -> String {
    let mut out = vec![b'0'; len];
    for c in out.iter_mut().rev() {
        *c = ALPHABET[(v & 31) as usize];
        v >>= 5;
    }
    String::from_utf8_lossy(&out).into_owned()
}

fn validate(designs: &[DesignSets], params: &ReviewParams) -> Result<()> {
    params.scale.validate()?;
    if params.sets_per_design == 0 {
        return Err(Error::param(
            "sets_per_design",
            "draw at least one matched set from each design",
        ));
    }
    if designs.is_empty() {
        return Err(Error::param(
            "designs",
            "choose at least one design to review",
        ));
    }
    let mut names = BTreeSet::new();
    for (d, ds) in designs.iter().enumerate() {
        if ds.design.trim().is_empty() {
            return Err(Error::param(
                format!("designs[{d}].design"),
                "a design needs a name",
            ));
        }
        if !names.insert(ds.design.as_str()) {
            return Err(Error::param(
                format!("designs[{d}].design"),
                format!("design \"{}\" is listed twice; each design once", ds.design),
            ));
        }
        if ds.sets.is_empty() {
            return Err(Error::param(
                format!("designs[{d}].sets"),
                format!(
                    "design \"{}\" has no matched sets; run it first or leave it out of the round",
                    ds.design
                ),
            ));
        }
        let mut seen = BTreeSet::new();
        for (i, s) in ds.sets.iter().enumerate() {
            if !seen.insert(s.set) {
                return Err(Error::param(
                    format!("designs[{d}].sets[{i}]"),
                    format!("design \"{}\" lists set {} twice", ds.design, s.set),
                ));
            }
            if s.treated_row == s.comparison_row {
                return Err(Error::param(
                    format!("designs[{d}].sets[{i}]"),
                    format!(
                        "set {} of design \"{}\" pairs row {} with itself",
                        s.set, ds.design, s.treated_row
                    ),
                ));
            }
            if !s.distance.is_finite() {
                return Err(Error::param(
                    format!("designs[{d}].sets[{i}].distance"),
                    format!(
                        "set {} of design \"{}\" has distance {}; distances must be finite",
                        s.set, ds.design, s.distance
                    ),
                ));
            }
        }
    }
    for (i, f) in params.show_fields.iter().enumerate() {
        if f.trim().is_empty() {
            return Err(Error::param(
                format!("show_fields[{i}]"),
                "a shown field needs a column name",
            ));
        }
    }
    Ok(())
}

/// `k` of `n` indices, uniformly without replacement (a partial
/// Fisher-Yates shuffle), returned in increasing order.
fn sample(rng: &mut Rng, n: usize, k: usize) -> Vec<usize> {
    let mut idx: Vec<usize> = (0..n).collect();
    let k = k.min(n);
    for i in 0..k {
        let j = i + rng.below(n - i);
        idx.swap(i, j);
    }
    let mut out = idx[..k].to_vec();
    out.sort_unstable();
    out
}

/// How many of `k` draws each stratum gets: proportional to its size, the
/// remainder to the largest fractional parts (lower stratum first on ties),
/// never more than a stratum holds.
fn allocate(sizes: &[usize], k: usize) -> Vec<usize> {
    let n: usize = sizes.iter().sum();
    let k = k.min(n);
    if n == 0 {
        return vec![0; sizes.len()];
    }
    let mut alloc: Vec<usize> = sizes.iter().map(|s| s * k / n).collect();
    let mut rest: Vec<(usize, usize)> = sizes
        .iter()
        .enumerate()
        .map(|(i, s)| ((s * k) % n, i))
        .collect();
    rest.sort_by(|a, b| b.0.cmp(&a.0).then(a.1.cmp(&b.1)));
    let mut left = k - alloc.iter().sum::<usize>();
    for &(_, i) in rest.iter().cycle().take(sizes.len() * 2) {
        if left == 0 {
            break;
        }
        if alloc[i] < sizes[i] {
            alloc[i] += 1;
            left -= 1;
        }
    }
    alloc
}

/// Draws a blinded review round from the matched sets of one or more
/// designs.
///
/// From each design, `sets_per_design` sets are drawn at random (all when it
/// has fewer); with `stratify`, the sets are first split into four strata by
/// the quartiles of the design's distance (ties by set index) and the draw is
/// spread over them in proportion. A pair matched by more than one design is
/// shown once. Pairs get random fixed-width keys, their order is shuffled
/// and which side shows the treated unit is a fair coin per pair.
pub fn draw_round(designs: &[DesignSets], params: &ReviewParams) -> Result<Round> {
    validate(designs, params)?;
    let mut h = Fnv::new();
    h.str("pairsight review round v1");
    h.u64(params.seed);
    h.u64(params.sets_per_design as u64);
    h.u64(u64::from(params.stratify));
    h.u64(params.scale.min as u64);
    h.u64(params.scale.max as u64);
    for a in &params.scale.anchors {
        h.str(a);
    }
    h.u64(u64::from(params.scale.allow_comment));
    for f in &params.show_fields {
        h.str(f);
    }
    for d in designs {
        h.str(&d.design);
        h.u64(d.sets.len() as u64);
        for s in &d.sets {
            h.u64(s.set as u64);
            h.u64(s.treated_row as u64);
            h.u64(s.comparison_row as u64);
            h.u64(s.distance.to_bits());
        }
    }
    let digest = h.0;
    let round_id = format!("R-{}", base32(digest, 10));
    let mut rng = Rng::new(params.seed ^ digest.rotate_left(29));

    // Draw the sets of each design.
    let mut chosen: Vec<(&str, &SetRecord)> = Vec::new();
    for d in designs {
        let n = d.sets.len();
        let picked: Vec<usize> = if params.stratify && n >= 4 {
            let mut by_distance: Vec<usize> = (0..n).collect();
            by_distance.sort_by(|&a, &b| {
                d.sets[a]
                    .distance
                    .total_cmp(&d.sets[b].distance)
                    .then(d.sets[a].set.cmp(&d.sets[b].set))
            });
            let bounds: Vec<usize> = (0..=4).map(|q| q * n / 4).collect();
            let sizes: Vec<usize> = (0..4).map(|q| bounds[q + 1] - bounds[q]).collect();
            let alloc = allocate(&sizes, params.sets_per_design);
            let mut out = Vec::new();
            for q in 0..4 {
                for i in sample(&mut rng, sizes[q], alloc[q]) {
                    out.push(by_distance[bounds[q] + i]);
                }
            }
            out.sort_unstable();
            out
        } else {
            sample(&mut rng, n, params.sets_per_design)
        };
        chosen.extend(picked.into_iter().map(|i| (d.design.as_str(), &d.sets[i])));
    }

    // One item per distinct pair of rows.
    let mut pair_index: BTreeMap<(usize, usize), usize> = BTreeMap::new();
    let mut pairs: Vec<(usize, usize)> = Vec::new();
    for (_, s) in &chosen {
        let rows = (s.treated_row, s.comparison_row);
        if let std::collections::btree_map::Entry::Vacant(e) = pair_index.entry(rows) {
            e.insert(pairs.len());
            pairs.push(rows);
        }
    }
    let mut used = BTreeSet::new();
    let mut keys = Vec::with_capacity(pairs.len());
    for _ in 0..pairs.len() {
        loop {
            let v = rng.next_u64();
            let k = base32(v, 6);
            let k = format!("{}-{}", &k[..3], &k[3..]);
            if used.insert(k.clone()) {
                keys.push(k);
                break;
            }
        }
    }
    let sides: Vec<Side> = (0..pairs.len())
        .map(|_| {
            if rng.bernoulli(0.5) {
                Side::Left
            } else {
                Side::Right
            }
        })
        .collect();
    let mut order: Vec<usize> = (0..pairs.len()).collect();
    rng.shuffle(&mut order);
    let items = order
        .iter()
        .map(|&p| {
            let (t, c) = pairs[p];
            let (left_row, right_row) = match sides[p] {
                Side::Left => (t, c),
                Side::Right => (c, t),
            };
            RoundItem {
                pair_key: keys[p].clone(),
                left_row,
                right_row,
            }
        })
        .collect();
    let key = chosen
        .iter()
        .map(|(design, s)| {
            let p = pair_index[&(s.treated_row, s.comparison_row)];
            KeyEntry {
                pair_key: keys[p].clone(),
                design: design.to_string(),
                set: s.set,
                treated_row: s.treated_row,
                comparison_row: s.comparison_row,
                treated_side: sides[p],
                distance: s.distance,
            }
        })
        .collect();
    Ok(Round {
        round_id,
        scale: params.scale.clone(),
        show_fields: params.show_fields.clone(),
        items,
        key,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    pub(crate) fn designs(n: usize) -> Vec<DesignSets> {
        (0..2)
            .map(|d| DesignSets {
                design: format!("design {d}"),
                sets: (0..n)
                    .map(|i| SetRecord {
                        set: i,
                        treated_row: i,
                        comparison_row: 1000 + d * 100 + i,
                        distance: ((i * 37 + d * 11) % 97) as f64 / 10.0,
                    })
                    .collect(),
            })
            .collect()
    }

    #[test]
    fn same_seed_same_round_and_seed_changes_it() {
        let p = ReviewParams {
            sets_per_design: 10,
            ..ReviewParams::default()
        };
        let a = draw_round(&designs(40), &p).unwrap();
        let b = draw_round(&designs(40), &p).unwrap();
        assert_eq!(a, b);
        let c = draw_round(
            &designs(40),
            &ReviewParams {
                seed: 2,
                ..p.clone()
            },
        )
        .unwrap();
        assert_ne!(a.round_id, c.round_id);
        assert_ne!(a.items, c.items);
        let mut other = designs(40);
        other[1].sets[0].distance += 1.0;
        assert_ne!(draw_round(&other, &p).unwrap().round_id, a.round_id);
    }

    #[test]
    fn round_has_the_right_sets_and_a_consistent_key() {
        let p = ReviewParams {
            sets_per_design: 10,
            ..ReviewParams::default()
        };
        let r = draw_round(&designs(40), &p).unwrap();
        assert_eq!(r.items.len(), 20);
        assert_eq!(r.key.len(), 20);
        for d in ["design 0", "design 1"] {
            assert_eq!(r.key.iter().filter(|k| k.design == d).count(), 10);
        }
        for k in &r.key {
            let item = r.items.iter().find(|i| i.pair_key == k.pair_key).unwrap();
            let (t, c) = match k.treated_side {
                Side::Left => (item.left_row, item.right_row),
                Side::Right => (item.right_row, item.left_row),
            };
            assert_eq!((t, c), (k.treated_row, k.comparison_row));
        }
        // Keys are fixed width, unique, and from the alphabet.
        let keys: BTreeSet<&str> = r.items.iter().map(|i| i.pair_key.as_str()).collect();
        assert_eq!(keys.len(), r.items.len());
        for k in keys {
            assert_eq!(k.len(), 7);
            assert!(k.chars().all(|c| c == '-' || ALPHABET.contains(&(c as u8))));
        }
        assert!(r.round_id.starts_with("R-") && r.round_id.len() == 12);
    }

    #[test]
    fn sides_and_order_are_shuffled() {
        let p = ReviewParams {
            sets_per_design: 60,
            ..ReviewParams::default()
        };
        let r = draw_round(&designs(60), &p).unwrap();
        let left = r
            .key
            .iter()
            .filter(|k| k.treated_side == Side::Left)
            .count();
        // 120 fair coins: 60 expected; 35..85 holds with overwhelming probability.
        assert!((35..=85).contains(&left), "{left}");
        let first_design: Vec<bool> = r
            .items
            .iter()
            .map(|i| {
                r.key
                    .iter()
                    .any(|k| k.pair_key == i.pair_key && k.design == "design 0")
            })
            .collect();
        assert!(
            first_design[..60].iter().any(|b| !b),
            "designs are interleaved"
        );
    }

    #[test]
    fn packet_view_holds_no_design_or_group() {
        let r = draw_round(&designs(30), &ReviewParams::default()).unwrap();
        let json = serde_json::to_string(&r.packet_view()).unwrap();
        assert!(
            !json.contains("design 0") && !json.contains("treated") && !json.contains("distance")
        );
    }

    #[test]
    fn stratified_draw_covers_every_distance_quartile() {
        let p = ReviewParams {
            sets_per_design: 8,
            stratify: true,
            ..ReviewParams::default()
        };
        let ds = designs(40);
        let r = draw_round(&ds, &p).unwrap();
        for d in &ds {
            let mut dist: Vec<f64> = d.sets.iter().map(|s| s.distance).collect();
            dist.sort_by(f64::total_cmp);
            let picked: Vec<f64> = r
                .key
                .iter()
                .filter(|k| k.design == d.design)
                .map(|k| k.distance)
                .collect();
            assert_eq!(picked.len(), 8);
            for q in 0..4 {
                let (lo, hi) = (dist[q * 10], dist[q * 10 + 9]);
                let inside = picked.iter().filter(|&&x| x >= lo && x <= hi).count();
                assert!(inside >= 2, "quartile {q} of {}: {inside}", d.design);
            }
        }
    }

    #[test]
    fn allocation_is_proportional_and_capped() {
        assert_eq!(allocate(&[10, 10, 10, 10], 8), vec![2, 2, 2, 2]);
        assert_eq!(allocate(&[10, 10, 10, 11], 5), vec![1, 1, 1, 2]);
        assert_eq!(allocate(&[1, 1, 1, 1], 9), vec![1, 1, 1, 1]);
        assert_eq!(allocate(&[3, 3, 3, 4], 13), vec![3, 3, 3, 4]);
    }

    #[test]
    fn small_designs_give_all_their_sets_and_shared_pairs_show_once() {
        let mut ds = designs(3);
        ds[1].sets = ds[0].sets.clone();
        let r = draw_round(&ds, &ReviewParams::default()).unwrap();
        assert_eq!(r.items.len(), 3);
        assert_eq!(r.key.len(), 6);
    }

    #[test]
    fn invalid_rounds_are_errors() {
        let p = ReviewParams::default();
        assert!(draw_round(&[], &p).is_err());
        let mut ds = designs(5);
        ds[1].design = "design 0".into();
        assert!(draw_round(&ds, &p).is_err());
        let mut ds = designs(5);
        ds[0].sets[2].distance = f64::NAN;
        assert!(draw_round(&ds, &p).is_err());
        let mut ds = designs(5);
        ds[0].sets[1].comparison_row = ds[0].sets[1].treated_row;
        assert!(draw_round(&ds, &p).is_err());
        let bad = ReviewParams {
            sets_per_design: 0,
            ..p.clone()
        };
        assert!(draw_round(&designs(5), &bad).is_err());
        let mut bad = p.clone();
        bad.scale.anchors.pop();
        assert!(draw_round(&designs(5), &bad).is_err());
        let mut bad = p;
        bad.scale.max = 1;
        assert!(draw_round(&designs(5), &bad).is_err());
    }
}
