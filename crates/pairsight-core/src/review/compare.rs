//! Comparing designs by their rated similarity.
//!
//! The unit of analysis is the *pair*: each reviewed pair's ratings are
//! averaged over the reviewers who rated it, and everything below is computed
//! on those pair means. Per design: the mean with a Student t confidence
//! interval, the share of pairs whose mean is at or above a chosen level
//! (with Wilson's interval), and Spearman's rank correlation between the
//! design's distance and the pair mean. Between each two designs: Welch's
//! two-sample t test on the pair means, with Holm's adjustment over all
//! contrasts. Different designs' pairs are mostly different pairs, so a
//! paired comparison is not available; a pair that two designs share enters
//! both samples, which makes the test conservative (the shared count is
//! reported). Reviewer differences are not modelled here; see the agreement
//! statistics for them.

use super::dist::{holm, mean_var, spearman, t_quantile, t_two_sided, welch, wilson};
use super::{MergedRatings, Round};
use crate::{Error, Result};
use serde::{Deserialize, Serialize};
use std::collections::{BTreeMap, BTreeSet};

/// Settings of the design comparison.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ComparisonParams {
    /// Confidence level of every interval, in (0, 1); 0.95 by default.
    pub confidence: f64,
    /// A pair counts as "alike" when its mean rating is at or above this
    /// point of the scale; 4 by default.
    pub level: i64,
}

impl Default for ComparisonParams {
    fn default() -> Self {
        ComparisonParams {
            confidence: 0.95,
            level: 4,
        }
    }
}

/// A distance measured on the reviewed pairs, to see whether it tracks the
/// reviewers' judgment (e.g. the logit-score distance, Mahalanobis distance
/// or note-cosine distance of each pair, whatever design matched it).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DistanceMeasure {
    /// Name shown in the results.
    pub name: String,
    /// Distance per pair key; pairs without a value are left out.
    pub values: Vec<(String, f64)>,
}

/// Spearman's rank correlation with its two-sided p-value.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RankCorrelation {
    /// Pairs used.
    pub n: usize,
    /// Spearman's rho (average ranks for ties).
    pub rho: f64,
    /// Two-sided p-value from the t approximation on n - 2 degrees of
    /// freedom.
    pub p_value: f64,
}

/// Rated similarity of one design's pairs.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesignSummary {
    /// Design name.
    pub design: String,
    /// Pairs of this design in the round.
    pub pairs_drawn: usize,
    /// Of those, pairs with at least one rating.
    pub pairs_rated: usize,
    /// Ratings behind them.
    pub ratings: usize,
    /// Mean of the pair means.
    pub mean: Option<f64>,
    /// Standard deviation of the pair means.
    pub sd: Option<f64>,
    /// Lower confidence limit of the mean (t interval, n - 1 df).
    pub ci_low: Option<f64>,
    /// Upper confidence limit of the mean.
    pub ci_high: Option<f64>,
    /// Share of rated pairs whose mean is at or above the level.
    pub share_alike: Option<f64>,
    /// Lower Wilson limit of that share.
    pub share_ci_low: Option<f64>,
    /// Upper Wilson limit of that share.
    pub share_ci_high: Option<f64>,
    /// Rank correlation of the design's own distance with the pair mean; a
    /// negative rho means closer pairs were rated more alike.
    pub distance_vs_rating: Option<RankCorrelation>,
}

/// Welch's comparison of two designs' pair means.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesignContrast {
    /// First design.
    pub first: String,
    /// Second design.
    pub second: String,
    /// Pairs that both designs matched (counted in both samples).
    pub shared_pairs: usize,
    /// Mean of the first minus mean of the second.
    pub difference: Option<f64>,
    /// Lower confidence limit of the difference.
    pub ci_low: Option<f64>,
    /// Upper confidence limit of the difference.
    pub ci_high: Option<f64>,
    /// Welch's t statistic.
    pub t: Option<f64>,
    /// Welch-Satterthwaite degrees of freedom.
    pub df: Option<f64>,
    /// Two-sided p-value.
    pub p_value: Option<f64>,
    /// p-value adjusted by Holm's method over all contrasts.
    pub p_holm: Option<f64>,
}

/// A named distance's rank correlation with the pair means.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MeasureCorrelation {
    /// The distance's name.
    pub name: String,
    /// Its correlation; `None` with fewer than 3 pairs or no variation.
    pub correlation: Option<RankCorrelation>,
}

/// The design comparison of a review round.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesignComparison {
    /// Round compared.
    pub round_id: String,
    /// Confidence level used.
    pub confidence: f64,
    /// Level for "alike".
    pub level: i64,
    /// One summary per design, in the round's order.
    pub designs: Vec<DesignSummary>,
    /// One contrast per two designs.
    pub contrasts: Vec<DesignContrast>,
    /// Named distances against the ratings.
    pub measures: Vec<MeasureCorrelation>,
    /// How to read these numbers, and their limits.
    pub cautions: Vec<String>,
}

fn rank(x: &[f64], y: &[f64]) -> Option<RankCorrelation> {
    spearman(x, y).map(|(rho, p_value)| RankCorrelation {
        n: x.len(),
        rho,
        p_value,
    })
}

/// Compares the designs of a round by the merged ratings.
pub fn design_comparison(
    round: &Round,
    ratings: &MergedRatings,
    distances: &[DistanceMeasure],
    params: &ComparisonParams,
) -> Result<DesignComparison> {
    if !(params.confidence > 0.0 && params.confidence < 1.0) {
        return Err(Error::param(
            "confidence",
            format!(
                "the confidence level must lie between 0 and 1, got {}",
                params.confidence
            ),
        ));
    }
    if !round.scale.contains(params.level) {
        return Err(Error::param(
            "level",
            format!(
                "the level must be a point of the scale {} to {}, got {}",
                round.scale.min, round.scale.max, params.level
            ),
        ));
    }
    if ratings.round_id != round.round_id {
        return Err(Error::param(
            "ratings",
            format!(
                "the ratings belong to round {}, not to round {}",
                ratings.round_id, round.round_id
            ),
        ));
    }
    let known: BTreeSet<&str> = round.items.iter().map(|i| i.pair_key.as_str()).collect();
    // Sum and count of ratings per pair.
    let mut per_pair: BTreeMap<&str, (f64, usize)> = BTreeMap::new();
    for r in &ratings.ratings {
        if !known.contains(r.pair_key.as_str()) {
            return Err(Error::param(
                "ratings",
                format!(
                    "pair key \"{}\" is not part of round {}",
                    r.pair_key, round.round_id
                ),
            ));
        }
        let e = per_pair.entry(r.pair_key.as_str()).or_insert((0.0, 0));
        e.0 += r.rating as f64;
        e.1 += 1;
    }
    let pair_mean = |k: &str| per_pair.get(k).map(|(s, n)| s / *n as f64);

    let mut names: Vec<&str> = Vec::new();
    for k in &round.key {
        if !names.contains(&k.design.as_str()) {
            names.push(&k.design);
        }
    }
    let alpha_half = 0.5 + params.confidence / 2.0;
    let mut samples: Vec<Vec<f64>> = Vec::new();
    let mut members: Vec<BTreeSet<&str>> = Vec::new();
    let mut designs = Vec::new();
    for name in &names {
        let entries: Vec<_> = round.key.iter().filter(|k| k.design == *name).collect();
        let mut means = Vec::new();
        let mut dist = Vec::new();
        let mut n_ratings = 0;
        for e in &entries {
            if let Some(m) = pair_mean(&e.pair_key) {
                means.push(m);
                dist.push(e.distance);
                n_ratings += per_pair[e.pair_key.as_str()].1;
            }
        }
        let n = means.len();
        let (mean, var) = if n > 0 {
            mean_var(&means)
        } else {
            (f64::NAN, f64::NAN)
        };
        let sd = var.sqrt();
        let (ci_low, ci_high) = if n >= 2 {
            let half = t_quantile(alpha_half, n as f64 - 1.0) * sd / (n as f64).sqrt();
            (Some(mean - half), Some(mean + half))
        } else {
            (None, None)
        };
        let alike = means
            .iter()
            .filter(|&&m| m >= params.level as f64 - 1e-9)
            .count();
        let (share, share_ci) = if n > 0 {
            (
                Some(alike as f64 / n as f64),
                Some(wilson(alike, n, params.confidence)),
            )
        } else {
            (None, None)
        };
        designs.push(DesignSummary {
            design: name.to_string(),
            pairs_drawn: entries.len(),
            pairs_rated: n,
            ratings: n_ratings,
            mean: (n > 0).then_some(mean),
            sd: (n > 1).then_some(sd),
            ci_low,
            ci_high,
            share_alike: share,
            share_ci_low: share_ci.map(|c| c.0),
            share_ci_high: share_ci.map(|c| c.1),
            distance_vs_rating: rank(&dist, &means),
        });
        members.push(
            entries
                .iter()
                .filter(|e| pair_mean(&e.pair_key).is_some())
                .map(|e| e.pair_key.as_str())
                .collect(),
        );
        samples.push(means);
    }

    let mut contrasts = Vec::new();
    for i in 0..names.len() {
        for j in i + 1..names.len() {
            let w = welch(&samples[i], &samples[j]);
            let difference = match (designs[i].mean, designs[j].mean) {
                (Some(a), Some(b)) => Some(a - b),
                _ => None,
            };
            let (ci, t, df, p) = match w {
                Some((d, t, df, se)) => {
                    let half = t_quantile(alpha_half, df) * se;
                    (
                        Some((d - half, d + half)),
                        Some(t),
                        Some(df),
                        Some(t_two_sided(t, df)),
                    )
                }
                None => (None, None, None, None),
            };
            contrasts.push(DesignContrast {
                first: names[i].to_string(),
                second: names[j].to_string(),
                shared_pairs: members[i].intersection(&members[j]).count(),
                difference,
                ci_low: ci.map(|c| c.0),
                ci_high: ci.map(|c| c.1),
                t,
                df,
                p_value: p,
                p_holm: None,
            });
        }
    }
    let defined: Vec<usize> = (0..contrasts.len())
        .filter(|&i| contrasts[i].p_value.is_some())
        .collect();
    let adjusted = holm(
        &defined
            .iter()
            .filter_map(|&i| contrasts[i].p_value)
            .collect::<Vec<_>>(),
    );
    for (&i, p) in defined.iter().zip(adjusted) {
        contrasts[i].p_holm = Some(p);
    }

    let mut measures = Vec::new();
    for (m, d) in distances.iter().enumerate() {
        let mut seen = BTreeSet::new();
        let (mut x, mut y) = (Vec::new(), Vec::new());
        for (k, v) in &d.values {
            if !known.contains(k.as_str()) {
                return Err(Error::param(
                    format!("distances[{m}]"),
                    format!("distance \"{}\" has a value for pair \"{k}\", which is not part of round {}", d.name, round.round_id),
                ));
            }
            if !seen.insert(k.as_str()) {
                return Err(Error::param(
                    format!("distances[{m}]"),
                    format!(
                        "distance \"{}\" gives pair \"{k}\" more than one value",
                        d.name
                    ),
                ));
            }
            if let (Some(r), true) = (pair_mean(k), v.is_finite()) {
                x.push(*v);
                y.push(r);
            }
        }
        measures.push(MeasureCorrelation {
            name: d.name.clone(),
            correlation: rank(&x, &y),
        });
    }

    let cautions = vec![
        "Each pair counts once: its ratings are averaged over reviewers before designs are compared; differences between reviewers are not modelled here (see the agreement statistics).".to_string(),
        "Designs are compared with Welch's two-sample t test on pair means, treating their pairs as independent samples; pairs shared by two designs enter both, which makes that comparison conservative. p-values are also given adjusted by Holm's method.".to_string(),
        format!("A pair counts as alike when its mean rating is {} or more on the {} to {} scale.", params.level, round.scale.min, round.scale.max),
        "Rank correlation of distance with rating: a negative value means the distance ranks pairs the way reviewers did (closer pairs rated more alike).".to_string(),
        "Ratings support the review of a study design; they say nothing about any patient's care. Follow local research-ethics and data-governance rules and have conclusions reviewed by qualified people.".to_string(),
    ];
    Ok(DesignComparison {
        round_id: round.round_id.clone(),
        confidence: params.confidence,
        level: params.level,
        designs,
        contrasts,
        measures,
        cautions,
    })
}

#[cfg(test)]
mod tests {
    use super::super::tests::designs;
    use super::super::{
        draw_round, merge_ratings, write_ratings_csv, RatingRow, RatingsFile, ReviewParams,
    };
    use super::*;

    /// Two reviewers; design 0's pairs get high ratings, design 1's low, and
    /// ratings fall with the distance.
    fn rated() -> (Round, MergedRatings) {
        let round = draw_round(
            &designs(30),
            &ReviewParams {
                sets_per_design: 12,
                ..ReviewParams::default()
            },
        )
        .unwrap();
        let mut files = Vec::new();
        for (r, name) in ["A", "B"].iter().enumerate() {
            let rows: Vec<RatingRow> = round
                .key
                .iter()
                .map(|k| {
                    let base = if k.design == "design 0" { 4.5 } else { 2.5 };
                    let rating = (base - k.distance / 10.0 + r as f64 * 0.5)
                        .round()
                        .clamp(1.0, 5.0) as i64;
                    RatingRow {
                        round_id: round.round_id.clone(),
                        pair_key: k.pair_key.clone(),
                        reviewer: name.to_string(),
                        rating,
                        comment: String::new(),
                        time: "2025-03-04T10:00:00Z".into(),
                    }
                })
                .collect();
            files.push(RatingsFile {
                name: format!("{name}.csv"),
                bytes: write_ratings_csv(&rows).unwrap().into_bytes(),
            });
        }
        let merged = merge_ratings(&round, &files).strict().unwrap();
        (round, merged)
    }

    #[test]
    fn better_design_scores_higher_and_distance_tracks_rating() {
        let (round, merged) = rated();
        let c = design_comparison(&round, &merged, &[], &ComparisonParams::default()).unwrap();
        assert_eq!(c.designs.len(), 2);
        let (a, b) = (&c.designs[0], &c.designs[1]);
        assert_eq!((a.pairs_drawn, a.pairs_rated, a.ratings), (12, 12, 24));
        assert!(a.mean.unwrap() > b.mean.unwrap() + 1.0);
        assert!(a.ci_low.unwrap() < a.mean.unwrap() && a.mean.unwrap() < a.ci_high.unwrap());
        assert!(a.share_alike.unwrap() > b.share_alike.unwrap());
        assert!(a.distance_vs_rating.as_ref().unwrap().rho < 0.0);
        let k = &c.contrasts[0];
        assert!(k.difference.unwrap() > 1.0 && k.p_value.unwrap() < 0.001);
        assert_eq!(k.p_holm, k.p_value, "one contrast: Holm leaves it alone");
        assert_eq!(k.shared_pairs, 0);
    }

    #[test]
    fn named_distances_are_correlated_and_checked() {
        let (round, merged) = rated();
        let values: Vec<(String, f64)> = round
            .key
            .iter()
            .map(|k| (k.pair_key.clone(), k.distance))
            .collect();
        let m = DistanceMeasure {
            name: "design distance".into(),
            values: values.clone(),
        };
        let c = design_comparison(&round, &merged, &[m], &ComparisonParams::default()).unwrap();
        assert_eq!(c.measures[0].correlation.as_ref().unwrap().n, 24);
        let bad = DistanceMeasure {
            name: "x".into(),
            values: vec![("NOT-AKEY".into(), 1.0)],
        };
        assert!(design_comparison(&round, &merged, &[bad], &ComparisonParams::default()).is_err());
        let dup = DistanceMeasure {
            name: "x".into(),
            values: vec![values[0].clone(), values[0].clone()],
        };
        assert!(design_comparison(&round, &merged, &[dup], &ComparisonParams::default()).is_err());
    }

    #[test]
    fn invalid_settings_and_foreign_ratings_are_errors() {
        let (round, mut merged) = rated();
        let p = ComparisonParams {
            confidence: 1.0,
            ..ComparisonParams::default()
        };
        assert!(design_comparison(&round, &merged, &[], &p).is_err());
        let p = ComparisonParams {
            level: 9,
            ..ComparisonParams::default()
        };
        assert!(design_comparison(&round, &merged, &[], &p).is_err());
        merged.round_id = "R-OTHER".into();
        assert!(design_comparison(&round, &merged, &[], &ComparisonParams::default()).is_err());
    }

    #[test]
    fn unrated_designs_give_empty_summaries_not_errors() {
        let (round, mut merged) = rated();
        let keep: BTreeSet<String> = round
            .key
            .iter()
            .filter(|k| k.design == "design 0")
            .map(|k| k.pair_key.clone())
            .collect();
        merged.ratings.retain(|r| keep.contains(&r.pair_key));
        let c = design_comparison(&round, &merged, &[], &ComparisonParams::default()).unwrap();
        assert_eq!(c.designs[1].pairs_rated, 0);
        assert!(c.designs[1].mean.is_none() && c.contrasts[0].p_value.is_none());
        assert!(c.cautions.iter().any(|s| s.contains("research-ethics")));
    }
}
