//! What the analyst learns from a round's ratings: agreement between
//! reviewers and the comparison of designs, computed from the key file and
//! the merged ratings files. The command line (`pairsight agree`), the
//! report and the browser all call [`review_results`].

use super::RoundKey;
use crate::agreement::{
    cohen_kappa, intraclass, krippendorff_alpha, Alpha, AlphaMetric, AlphaParams, IccTable, Kappa,
    KappaParams, KappaWeights,
};
use crate::review::{design_comparison, ComparisonParams, DesignComparison, MergedRatings};
use crate::{Error, Result};
use ndarray::Array2;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// Weighted kappa of two reviewers over the pairs both rated.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReviewerPair {
    /// First reviewer (in sorted order).
    pub first: String,
    /// Second reviewer.
    pub second: String,
    /// Pairs rated by both.
    pub pairs: usize,
    /// Cohen's kappa with linear weights (Cohen 1968).
    pub linear: Option<Kappa>,
    /// Cohen's kappa with quadratic weights (Fleiss & Cohen 1973).
    pub quadratic: Option<Kappa>,
    /// Why a kappa is missing, if one is.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub notes: Vec<String>,
}

/// Agreement between the reviewers of a round.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Agreement {
    /// Reviewers, sorted.
    pub reviewers: Vec<String>,
    /// Pairs with at least one rating.
    pub pairs_rated: usize,
    /// Pairs rated by every reviewer (the ones the ICC uses).
    pub pairs_complete: usize,
    /// Kappa for each two reviewers.
    pub kappas: Vec<ReviewerPair>,
    /// Krippendorff's alpha, ordinal metric, all reviewers, missing ratings allowed.
    pub alpha_ordinal: Option<Alpha>,
    /// Krippendorff's alpha, interval metric.
    pub alpha_interval: Option<Alpha>,
    /// Intraclass correlations (Shrout & Fleiss 1979) on the complete pairs.
    pub icc: Option<IccTable>,
    /// Why a statistic is missing, in plain words.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub notes: Vec<String>,
}

/// Everything a round's ratings say.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReviewResults {
    /// The round.
    pub round_id: String,
    /// Pairs in the round.
    pub pairs_in_round: usize,
    /// Ratings accepted.
    pub ratings: usize,
    /// Warnings met while reading the ratings files (errors stop earlier).
    pub warnings: Vec<String>,
    /// Agreement between reviewers.
    pub agreement: Agreement,
    /// Rated similarity per design.
    pub comparison: DesignComparison,
}

/// Settings of [`review_results`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ResultsParams {
    /// Design comparison settings (confidence level, "alike" level).
    pub comparison: ComparisonParams,
    /// Bootstrap resamples for Krippendorff's alpha intervals.
    pub alpha_bootstrap: usize,
    /// Seed of that bootstrap.
    pub seed: u64,
}

impl Default for ResultsParams {
    fn default() -> Self {
        ResultsParams {
            comparison: ComparisonParams::default(),
            alpha_bootstrap: AlphaParams::default().bootstrap,
            seed: AlphaParams::default().seed,
        }
    }
}

fn weights_name(w: KappaWeights) -> &'static str {
    match w {
        KappaWeights::Unweighted => "unweighted",
        KappaWeights::Linear => "linear",
        KappaWeights::Quadratic => "quadratic",
    }
}

/// The ratings as a pairs x reviewers matrix (NaN = not rated), pairs in the
/// round's order, reviewers sorted.
pub fn rating_matrix(key: &RoundKey, merged: &MergedRatings) -> (Vec<String>, Array2<f64>) {
    let reviewers = merged.reviewers();
    let col: BTreeMap<&str, usize> = reviewers
        .iter()
        .enumerate()
        .map(|(j, r)| (r.as_str(), j))
        .collect();
    let row: BTreeMap<&str, usize> = key
        .round
        .items
        .iter()
        .enumerate()
        .map(|(i, it)| (it.pair_key.as_str(), i))
        .collect();
    let mut m = Array2::from_elem((key.round.items.len(), reviewers.len()), f64::NAN);
    for r in &merged.ratings {
        if let (Some(&i), Some(&j)) = (row.get(r.pair_key.as_str()), col.get(r.reviewer.as_str())) {
            m[[i, j]] = r.rating as f64;
        }
    }
    (reviewers, m)
}

/// Agreement and the design comparison of a round's merged ratings.
///
/// Kappa uses the pairs both reviewers rated, with the round's scale as the
/// ordered categories; alpha uses every pair with at least two ratings;
/// the ICC uses only pairs every reviewer rated. A statistic that cannot be
/// computed (too few pairs, no variation) is left out with a note saying
/// why, rather than failing the whole analysis.
pub fn review_results(
    key: &RoundKey,
    merged: &MergedRatings,
    params: &ResultsParams,
) -> Result<ReviewResults> {
    if merged.round_id != key.round.round_id {
        return Err(Error::param(
            "ratings",
            format!(
                "the ratings belong to round {}, but the key file is for round {}",
                merged.round_id, key.round.round_id
            ),
        ));
    }
    let level = params.comparison.confidence;
    let (reviewers, m) = rating_matrix(key, merged);
    let mut notes = Vec::new();
    let scale = &key.round.scale;
    let categories: Vec<f64> = (scale.min..=scale.max).map(|v| v as f64).collect();
    let mut kappas = Vec::new();
    for i in 0..reviewers.len() {
        for j in i + 1..reviewers.len() {
            let a = m.column(i).to_vec();
            let b = m.column(j).to_vec();
            let pairs = a
                .iter()
                .zip(&b)
                .filter(|(x, y)| !x.is_nan() && !y.is_nan())
                .count();
            let mut pair_notes = Vec::new();
            let mut kappa = |weights| {
                let p = KappaParams {
                    categories: categories.clone(),
                    weights,
                    level,
                };
                cohen_kappa(&a, &b, &p)
                    .map_err(|e| pair_notes.push(format!("{} kappa: {e}", weights_name(weights))))
                    .ok()
            };
            let linear = kappa(KappaWeights::Linear);
            let quadratic = kappa(KappaWeights::Quadratic);
            kappas.push(ReviewerPair {
                first: reviewers[i].clone(),
                second: reviewers[j].clone(),
                pairs,
                linear,
                quadratic,
                notes: pair_notes,
            });
        }
    }
    if reviewers.len() < 2 {
        notes.push(format!(
            "agreement needs at least two reviewers; the ratings come from {}",
            reviewers.len()
        ));
    }
    let mut alpha = |metric| {
        let p = AlphaParams {
            metric,
            level,
            bootstrap: params.alpha_bootstrap,
            seed: params.seed,
        };
        match krippendorff_alpha(m.view(), &p) {
            Ok(a) => Some(a),
            Err(e) => {
                let name = match metric {
                    AlphaMetric::Nominal => "nominal",
                    AlphaMetric::Ordinal => "ordinal",
                    AlphaMetric::Interval => "interval",
                };
                notes.push(format!("Krippendorff's alpha ({name}): {e}"));
                None
            }
        }
    };
    let (alpha_ordinal, alpha_interval) = if reviewers.len() >= 2 {
        (alpha(AlphaMetric::Ordinal), alpha(AlphaMetric::Interval))
    } else {
        (None, None)
    };
    let complete: Vec<usize> = (0..m.nrows())
        .filter(|&i| m.row(i).iter().all(|v| !v.is_nan()))
        .collect();
    let icc = if reviewers.len() >= 2 {
        let sub = m.select(ndarray::Axis(0), &complete);
        match intraclass(sub.view(), level) {
            Ok(t) => Some(t),
            Err(e) => {
                notes.push(format!(
                    "intraclass correlation on the {} pairs every reviewer rated: {e}",
                    complete.len()
                ));
                None
            }
        }
    } else {
        None
    };
    let pairs_rated = (0..m.nrows())
        .filter(|&i| m.row(i).iter().any(|v| !v.is_nan()))
        .count();
    let comparison = design_comparison(&key.round, merged, &key.measures, &params.comparison)?;
    Ok(ReviewResults {
        round_id: key.round.round_id.clone(),
        pairs_in_round: key.round.items.len(),
        ratings: merged.ratings.len(),
        warnings: merged.issues.iter().map(ToString::to_string).collect(),
        agreement: Agreement {
            reviewers,
            pairs_rated,
            pairs_complete: complete.len(),
            kappas,
            alpha_ordinal,
            alpha_interval,
            icc,
            notes,
        },
        comparison,
    })
}
