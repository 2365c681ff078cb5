//! Agreement between reviewers who rated the same matched pairs: Cohen's
//! kappa (unweighted, linear, quadratic) for two reviewers, Krippendorff's
//! alpha for any number of reviewers with missing ratings, and the
//! intraclass correlations of Shrout & Fleiss; plus a rating summary per
//! design and the rank correlation between a pair's distance and its rating.
//!
//! Sources: Cohen (1960), *Educ. Psychol. Meas.* 20:37-46; Cohen (1968),
//! "Weighted kappa", *Psychological Bulletin* 70:213-220; the large-sample
//! standard errors of Fleiss, Cohen & Everitt (1969), *Psychological
//! Bulletin* 72:323-327; Krippendorff (2011), "Computing Krippendorff's
//! alpha-reliability", Annenberg School for Communication, University of
//! Pennsylvania; Shrout & Fleiss (1979), "Intraclass correlations: uses in
//! assessing rater reliability", *Psychological Bulletin* 86:420-428, with
//! the interval formulas of McGraw & Wong (1996), *Psychological Methods*
//! 1:30-46.
//!
//! Rating matrices are units (rated pairs) in rows and reviewers in
//! columns; a missing rating is NaN.
//!
//! ```
//! use pairsight_core::agreement::{cohen_kappa, KappaParams, KappaWeights};
//! let a = [1.0, 2.0, 3.0, 4.0, 5.0, 3.0];
//! let b = [1.0, 2.0, 3.0, 4.0, 5.0, 2.0];
//! let p = KappaParams { weights: KappaWeights::Quadratic, ..KappaParams::default() };
//! let k = cohen_kappa(&a, &b, &p).unwrap();
//! assert!(k.kappa > 0.9);
//! ```

use crate::rng::Rng;
use crate::stats;
use crate::{Error, Result};
use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

pub use crate::stats::{spearman, RankCorrelation};

fn check_level(level: f64) -> Result<()> {
    if !(level > 0.0 && level < 1.0) {
        return Err(Error::param(
            "level",
            format!("must lie strictly between 0 and 1 (e.g. 0.95); got {level}"),
        ));
    }
    Ok(())
}

/// Weights of Cohen's kappa.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum KappaWeights {
    /// Only exact agreement counts (Cohen 1960).
    Unweighted,
    /// Agreement weight 1 - |i - j| / (k - 1) (Cohen 1968).
    Linear,
    /// Agreement weight 1 - (i - j)^2 / (k - 1)^2 (Fleiss & Cohen 1973).
    Quadratic,
}

/// Options for [`cohen_kappa`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct KappaParams {
    /// The rating categories in their order (default 1, 2, 3, 4, 5). Weights
    /// use the position in this list, not the value.
    pub categories: Vec<f64>,
    /// Weighting scheme.
    pub weights: KappaWeights,
    /// Confidence level; default 0.95.
    pub level: f64,
}

impl Default for KappaParams {
    fn default() -> Self {
        KappaParams {
            categories: vec![1.0, 2.0, 3.0, 4.0, 5.0],
            weights: KappaWeights::Unweighted,
            level: 0.95,
        }
    }
}

/// Cohen's kappa with its large-sample standard errors.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Kappa {
    /// Weighting used.
    pub weights: KappaWeights,
    /// Kappa.
    pub kappa: f64,
    /// Standard error (non-null, Fleiss, Cohen & Everitt 1969); gives the
    /// interval.
    pub se: f64,
    /// Standard error under kappa = 0; gives the test.
    pub se_null: f64,
    /// Lower confidence limit, kappa - z se, kept within [-1, 1].
    pub ci_low: f64,
    /// Upper confidence limit, kappa + z se, kept within [-1, 1] (kappa
    /// cannot exceed 1; the Wald interval can, near perfect agreement, so it
    /// is truncated there, as is common practice).
    pub ci_high: f64,
    /// Confidence level.
    pub level: f64,
    /// z = kappa / se_null.
    pub z: f64,
    /// Two-sided p-value of kappa = 0.
    pub p_value: f64,
    /// Weighted observed agreement.
    pub observed: f64,
    /// Weighted agreement expected by chance from the margins.
    pub expected: f64,
    /// Units rated by both reviewers (units with a missing rating are left out).
    pub n: usize,
}

/// Cohen's kappa for two reviewers over the same units. Units where either
/// rating is NaN are left out; any other value must be one of the categories.
pub fn cohen_kappa(a: &[f64], b: &[f64], params: &KappaParams) -> Result<Kappa> {
    check_level(params.level)?;
    let k = params.categories.len();
    if k < 2 {
        return Err(Error::param(
            "categories",
            "needs at least 2 rating categories (e.g. 1 to 5)",
        ));
    }
    for (i, c) in params.categories.iter().enumerate() {
        if !c.is_finite() || params.categories[..i].contains(c) {
            return Err(Error::param(
                "categories",
                format!("category {} ({c}) is repeated or not a number", i + 1),
            ));
        }
    }
    if a.len() != b.len() {
        return Err(Error::param(
            "b",
            format!(
                "both reviewers need a rating slot for every unit ({} vs {})",
                a.len(),
                b.len()
            ),
        ));
    }
    let index = |v: f64, who: &str, unit: usize| -> Result<usize> {
        params
            .categories
            .iter()
            .position(|&c| c == v)
            .ok_or_else(|| {
                Error::data(
                    None,
                    Some(who),
                    format!(
                        "unit {}: rating {v} is not one of the categories {:?}",
                        unit + 1,
                        params.categories
                    ),
                )
            })
    };
    let mut table = vec![vec![0.0; k]; k];
    let mut n = 0usize;
    for (u, (&x, &y)) in a.iter().zip(b).enumerate() {
        if x.is_nan() || y.is_nan() {
            continue;
        }
        table[index(x, "reviewer 1", u)?][index(y, "reviewer 2", u)?] += 1.0;
        n += 1;
    }
    if n < 2 {
        return Err(Error::compute(format!(
            "kappa needs at least 2 units rated by both reviewers; got {n}"
        )));
    }
    let nf = n as f64;
    let km1 = (k - 1) as f64;
    let w = |i: usize, j: usize| -> f64 {
        let d = (i as f64 - j as f64).abs();
        match params.weights {
            KappaWeights::Unweighted => {
                if i == j {
                    1.0
                } else {
                    0.0
                }
            }
            KappaWeights::Linear => 1.0 - d / km1,
            KappaWeights::Quadratic => 1.0 - d * d / (km1 * km1),
        }
    };
    let p: Vec<Vec<f64>> = table
        .iter()
        .map(|r| r.iter().map(|v| v / nf).collect())
        .collect();
    let row: Vec<f64> = p.iter().map(|r| r.iter().sum()).collect();
    let col: Vec<f64> = (0..k).map(|j| p.iter().map(|r| r[j]).sum()).collect();
    let (mut po, mut pe) = (0.0, 0.0);
    for i in 0..k {
        for j in 0..k {
            po += w(i, j) * p[i][j];
            pe += w(i, j) * row[i] * col[j];
        }
    }
    if (1.0 - pe).abs() < 1e-15 {
        return Err(Error::compute(
            "kappa is undefined: both reviewers used a single category, so chance agreement is complete",
        ));
    }
    let kappa = (po - pe) / (1.0 - pe);
    // Weighted margins of Fleiss, Cohen & Everitt (1969).
    let wbar_i: Vec<f64> = (0..k)
        .map(|i| (0..k).map(|j| col[j] * w(i, j)).sum())
        .collect();
    let wbar_j: Vec<f64> = (0..k)
        .map(|j| (0..k).map(|i| row[i] * w(i, j)).sum())
        .collect();
    let (mut s1, mut s0) = (0.0, 0.0);
    for i in 0..k {
        for j in 0..k {
            let t = w(i, j) - (wbar_i[i] + wbar_j[j]) * (1.0 - kappa);
            s1 += p[i][j] * t * t;
            let t0 = w(i, j) - (wbar_i[i] + wbar_j[j]);
            s0 += row[i] * col[j] * t0 * t0;
        }
    }
    let denom = nf * (1.0 - pe) * (1.0 - pe);
    let var = (s1 - (kappa - pe * (1.0 - kappa)).powi(2)) / denom;
    let var0 = (s0 - pe * pe) / denom;
    let se = var.max(0.0).sqrt();
    let se_null = var0.max(0.0).sqrt();
    let z = if se_null > 0.0 {
        kappa / se_null
    } else {
        f64::NAN
    };
    let zq = stats::norm_ppf(0.5 + params.level / 2.0);
    Ok(Kappa {
        weights: params.weights,
        kappa,
        se,
        se_null,
        ci_low: (kappa - zq * se).clamp(-1.0, 1.0),
        ci_high: (kappa + zq * se).clamp(-1.0, 1.0),
        level: params.level,
        z,
        p_value: if z.is_nan() {
            f64::NAN
        } else {
            (2.0 * stats::norm_sf(z.abs())).min(1.0)
        },
        observed: po,
        expected: pe,
        n,
    })
}

/// Level of measurement for Krippendorff's alpha.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum AlphaMetric {
    /// Any difference counts the same.
    Nominal,
    /// Ranks matter; distances from the counts of values between two ratings.
    Ordinal,
    /// Squared differences of the values.
    Interval,
}

/// Options for [`krippendorff_alpha`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AlphaParams {
    /// Level of measurement.
    pub metric: AlphaMetric,
    /// Confidence level of the bootstrap interval; default 0.95.
    pub level: f64,
    /// Bootstrap resamples of units; 0 skips the interval; default 2000.
    pub bootstrap: usize,
    /// Seed of the bootstrap.
    pub seed: u64,
}

impl Default for AlphaParams {
    fn default() -> Self {
        AlphaParams {
            metric: AlphaMetric::Ordinal,
            level: 0.95,
            bootstrap: 2000,
            seed: 20_240_601,
        }
    }
}

/// Krippendorff's alpha with a bootstrap interval.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Alpha {
    /// Level of measurement.
    pub metric: AlphaMetric,
    /// Alpha = 1 - D_o / D_e.
    pub alpha: f64,
    /// Observed disagreement D_o.
    pub observed_disagreement: f64,
    /// Expected disagreement D_e.
    pub expected_disagreement: f64,
    /// Units with at least two ratings (the pairable units).
    pub n_units: usize,
    /// Pairable ratings (n in Krippendorff 2011).
    pub n_values: usize,
    /// Percentile bootstrap limits over units (None when not asked for).
    pub ci_low: Option<f64>,
    /// Upper bootstrap limit.
    pub ci_high: Option<f64>,
    /// Confidence level.
    pub level: f64,
    /// Resamples that gave a defined alpha.
    pub bootstrap_used: usize,
    /// Bootstrap seed.
    pub seed: u64,
}

/// One unit's ratings as indices into the sorted distinct values.
type Units = Vec<Vec<usize>>;

fn alpha_of(
    units: &[&Vec<usize>],
    values: &[f64],
    metric: AlphaMetric,
) -> Option<(f64, f64, f64, usize)> {
    let v = values.len();
    // Coincidence matrix (Krippendorff 2011): each ordered pair of ratings
    // from different reviewers within a unit adds 1 / (m_u - 1).
    let mut o = vec![vec![0.0; v]; v];
    let mut count = vec![0usize; v];
    for u in units {
        let m = u.len();
        if m < 2 {
            continue;
        }
        count.iter_mut().for_each(|c| *c = 0);
        for &i in u.iter() {
            count[i] += 1;
        }
        let f = 1.0 / (m - 1) as f64;
        for c in 0..v {
            if count[c] == 0 {
                continue;
            }
            for k in 0..v {
                if count[k] == 0 {
                    continue;
                }
                let pairs = if c == k {
                    count[c] * (count[c] - 1)
                } else {
                    count[c] * count[k]
                };
                o[c][k] += pairs as f64 * f;
            }
        }
    }
    let nc: Vec<f64> = o.iter().map(|r| r.iter().sum()).collect();
    let n: f64 = nc.iter().sum();
    if n < 2.0 {
        return None;
    }
    let delta2 = |c: usize, k: usize| -> f64 {
        match metric {
            AlphaMetric::Nominal => {
                if c == k {
                    0.0
                } else {
                    1.0
                }
            }
            AlphaMetric::Interval => (values[c] - values[k]).powi(2),
            AlphaMetric::Ordinal => {
                let (lo, hi) = if c <= k { (c, k) } else { (k, c) };
                let s: f64 = nc[lo..=hi].iter().sum::<f64>() - 0.5 * (nc[c] + nc[k]);
                s * s
            }
        }
    };
    let (mut dobs, mut dexp) = (0.0, 0.0);
    for c in 0..v {
        for k in 0..v {
            if c == k {
                continue;
            }
            let d = delta2(c, k);
            dobs += o[c][k] * d;
            dexp += nc[c] * nc[k] * d;
        }
    }
    let d_o = dobs / n;
    let d_e = dexp / (n * (n - 1.0));
    if d_e <= 0.0 {
        return None;
    }
    Some((1.0 - d_o / d_e, d_o, d_e, n.round() as usize))
}

/// Krippendorff's alpha (Krippendorff 2011) for a units x reviewers matrix
/// with NaN for a missing rating. Units with fewer than two ratings are not
/// pairable and are left out. The interval resamples units with replacement
/// and takes percentiles of alpha (a unit-level bootstrap as used by Zapf,
/// Castell, Morawietz & Karch 2016, *BMC Medical Research Methodology*
/// 16:93); resamples with no variation in the ratings are skipped.
pub fn krippendorff_alpha(ratings: ArrayView2<f64>, params: &AlphaParams) -> Result<Alpha> {
    check_level(params.level)?;
    if let Some(v) = ratings.iter().find(|v| v.is_infinite()) {
        return Err(Error::data(
            None,
            None,
            format!("rating {v} is not a finite number"),
        ));
    }
    let mut values: Vec<f64> = ratings.iter().copied().filter(|v| !v.is_nan()).collect();
    values.sort_by(|a, b| a.total_cmp(b));
    values.dedup();
    let units: Units = ratings
        .rows()
        .into_iter()
        .map(|r| {
            r.iter()
                .filter(|v| !v.is_nan())
                .filter_map(|v| values.binary_search_by(|x| x.total_cmp(v)).ok())
                .collect::<Vec<usize>>()
        })
        .filter(|u| u.len() >= 2)
        .collect();
    let refs: Vec<&Vec<usize>> = units.iter().collect();
    let (alpha, d_o, d_e, n_values) = alpha_of(&refs, &values, params.metric).ok_or_else(|| {
        Error::compute(
            "alpha is undefined: fewer than two pairable ratings, or every rating has the same value",
        )
    })?;
    let mut out = Alpha {
        metric: params.metric,
        alpha,
        observed_disagreement: d_o,
        expected_disagreement: d_e,
        n_units: units.len(),
        n_values,
        ci_low: None,
        ci_high: None,
        level: params.level,
        bootstrap_used: 0,
        seed: params.seed,
    };
    if params.bootstrap > 0 {
        let mut rng = Rng::new(params.seed);
        let m = units.len();
        let mut reps = Vec::with_capacity(params.bootstrap);
        let mut sample: Vec<&Vec<usize>> = Vec::with_capacity(m);
        for _ in 0..params.bootstrap {
            sample.clear();
            for _ in 0..m {
                sample.push(&units[rng.below(m)]);
            }
            if let Some((a, ..)) = alpha_of(&sample, &values, params.metric) {
                reps.push(a);
            }
        }
        reps.sort_by(|a, b| a.total_cmp(b));
        if !reps.is_empty() {
            let tail = (1.0 - params.level) / 2.0;
            out.ci_low = Some(stats::quantile_sorted(&reps, tail));
            out.ci_high = Some(stats::quantile_sorted(&reps, 1.0 - tail));
        }
        out.bootstrap_used = reps.len();
    }
    Ok(out)
}

/// Which intraclass correlation (Shrout & Fleiss 1979).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum IccForm {
    /// ICC(1,1): one-way random effects, one reviewer.
    OneWaySingle,
    /// ICC(2,1): two-way random effects, absolute agreement, one reviewer.
    TwoWayRandomSingle,
    /// ICC(3,1): two-way mixed effects, consistency, one reviewer.
    TwoWayMixedSingle,
    /// ICC(1,k): one-way random, mean of k reviewers.
    OneWayAverage,
    /// ICC(2,k): two-way random, absolute agreement, mean of k reviewers.
    TwoWayRandomAverage,
    /// ICC(3,k): two-way mixed, consistency, mean of k reviewers.
    TwoWayMixedAverage,
}

/// One intraclass correlation with its F-test and interval.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Icc {
    /// Which form.
    pub form: IccForm,
    /// Shrout & Fleiss's label, e.g. "ICC(2,1)".
    pub label: String,
    /// The correlation.
    pub icc: f64,
    /// F statistic of "ICC = 0".
    pub f: f64,
    /// Numerator degrees of freedom.
    pub df1: f64,
    /// Denominator degrees of freedom.
    pub df2: f64,
    /// One-sided p-value of the F-test.
    pub p_value: f64,
    /// Lower confidence limit.
    pub ci_low: f64,
    /// Upper confidence limit.
    pub ci_high: f64,
}

/// All six intraclass correlations of a complete matrix.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct IccTable {
    /// Units (rows).
    pub n_units: usize,
    /// Reviewers (columns).
    pub n_raters: usize,
    /// Confidence level.
    pub level: f64,
    /// ICC(1,1), ICC(2,1), ICC(3,1), ICC(1,k), ICC(2,k), ICC(3,k), in that order.
    pub rows: Vec<Icc>,
}

/// Intraclass correlations of Shrout & Fleiss (1979) from the two-way
/// analysis of variance of a complete units x reviewers matrix, with the
/// F-tests and confidence intervals of Shrout & Fleiss (1979) and McGraw &
/// Wong (1996); for ICC(2,1) the interval uses Satterthwaite's approximate
/// degrees of freedom, and ICC(2,k)'s limits are the Spearman-Brown step-up
/// of ICC(2,1)'s.
pub fn intraclass(ratings: ArrayView2<f64>, level: f64) -> Result<IccTable> {
    check_level(level)?;
    let (n, k) = ratings.dim();
    if n < 2 || k < 2 {
        return Err(Error::compute(format!(
            "intraclass correlation needs at least 2 units and 2 reviewers; got {n} x {k}"
        )));
    }
    if let Some(((i, j), v)) = ratings.indexed_iter().find(|(_, v)| !v.is_finite()) {
        return Err(Error::data(
            None,
            None,
            format!(
                "unit {}, reviewer {}: rating {v} is missing or not a number; intraclass correlation needs every unit rated by every reviewer (use Krippendorff's alpha with missing ratings)",
                i + 1,
                j + 1
            ),
        ));
    }
    let (nf, kf) = (n as f64, k as f64);
    let grand = ratings.iter().sum::<f64>() / (nf * kf);
    let row_means: Vec<f64> = ratings.rows().into_iter().map(|r| r.sum() / kf).collect();
    let col_means: Vec<f64> = ratings
        .columns()
        .into_iter()
        .map(|c| c.sum() / nf)
        .collect();
    let ssr: f64 = kf * row_means.iter().map(|m| (m - grand).powi(2)).sum::<f64>();
    let ssc: f64 = nf * col_means.iter().map(|m| (m - grand).powi(2)).sum::<f64>();
    let sst: f64 = ratings.iter().map(|v| (v - grand).powi(2)).sum();
    let sse = (sst - ssr - ssc).max(0.0);
    let msr = ssr / (nf - 1.0);
    let msc = ssc / (kf - 1.0);
    let mse = sse / ((nf - 1.0) * (kf - 1.0));
    let msw = (ssc + sse) / (nf * (kf - 1.0));
    let tail = (1.0 - level) / 2.0;
    let fq = |d1: f64, d2: f64| stats::f_ppf(1.0 - tail, d1, d2);

    // One-way (ICC1).
    let f1 = msr / msw;
    let (d1, d2_1) = (nf - 1.0, nf * (kf - 1.0));
    let f1_l = f1 / fq(d1, d2_1);
    let f1_u = f1 * fq(d2_1, d1);
    // Two-way, consistency (ICC3).
    let f3 = msr / mse;
    let d2_3 = (nf - 1.0) * (kf - 1.0);
    let f3_l = f3 / fq(d1, d2_3);
    let f3_u = f3 * fq(d2_3, d1);
    // Two-way, absolute agreement (ICC2).
    let icc2 = (msr - mse) / (msr + (kf - 1.0) * mse + kf * (msc - mse) / nf);
    let a = kf * icc2 / (nf * (1.0 - icc2));
    let b = 1.0 + kf * icc2 * (nf - 1.0) / (nf * (1.0 - icc2));
    let v = (a * msc + b * mse).powi(2)
        / ((a * msc).powi(2) / (kf - 1.0) + (b * mse).powi(2) / ((nf - 1.0) * (kf - 1.0)));
    let fs_l = fq(nf - 1.0, v);
    let fs_u = fq(v, nf - 1.0);
    let l2 = nf * (msr - fs_l * mse) / (fs_l * (kf * msc + (kf * nf - kf - nf) * mse) + nf * msr);
    let u2 = nf * (fs_u * msr - mse) / (kf * msc + (kf * nf - kf - nf) * mse + nf * fs_u * msr);
    let step_up = |r: f64| kf * r / (1.0 + (kf - 1.0) * r);

    let single = |fl: f64| (fl - 1.0) / (fl + kf - 1.0);
    let average = |fl: f64| 1.0 - 1.0 / fl;
    let p = |f: f64, df2: f64| stats::f_sf(f, d1, df2);
    let mk = |form, label: &str, icc, f, df2, lo, hi| Icc {
        form,
        label: label.into(),
        icc,
        f,
        df1: d1,
        df2,
        p_value: p(f, df2),
        ci_low: lo,
        ci_high: hi,
    };
    let rows = vec![
        mk(
            IccForm::OneWaySingle,
            "ICC(1,1)",
            (msr - msw) / (msr + (kf - 1.0) * msw),
            f1,
            d2_1,
            single(f1_l),
            single(f1_u),
        ),
        mk(
            IccForm::TwoWayRandomSingle,
            "ICC(2,1)",
            icc2,
            f3,
            d2_3,
            l2,
            u2,
        ),
        mk(
            IccForm::TwoWayMixedSingle,
            "ICC(3,1)",
            (msr - mse) / (msr + (kf - 1.0) * mse),
            f3,
            d2_3,
            single(f3_l),
            single(f3_u),
        ),
        mk(
            IccForm::OneWayAverage,
            "ICC(1,k)",
            (msr - msw) / msr,
            f1,
            d2_1,
            average(f1_l),
            average(f1_u),
        ),
        mk(
            IccForm::TwoWayRandomAverage,
            "ICC(2,k)",
            (msr - mse) / (msr + (msc - mse) / nf),
            f3,
            d2_3,
            step_up(l2),
            step_up(u2),
        ),
        mk(
            IccForm::TwoWayMixedAverage,
            "ICC(3,k)",
            (msr - mse) / msr,
            f3,
            d2_3,
            average(f3_l),
            average(f3_u),
        ),
    ];
    Ok(IccTable {
        n_units: n,
        n_raters: k,
        level,
        rows,
    })
}

/// Summary of the similarity ratings given to one design's pairs.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RatingSummary {
    /// Ratings used (NaN left out).
    pub n: usize,
    /// Mean rating.
    pub mean: f64,
    /// Lower limit of the t interval for the mean.
    pub ci_low: f64,
    /// Upper limit of the t interval for the mean.
    pub ci_high: f64,
    /// The "similar enough" threshold.
    pub threshold: f64,
    /// Share of ratings at or above the threshold.
    pub share_at_or_above: f64,
    /// Wilson score interval of that share (Wilson 1927, *JASA* 22:209-212).
    pub share_ci_low: f64,
    /// Upper Wilson limit.
    pub share_ci_high: f64,
    /// Confidence level.
    pub level: f64,
}

/// Mean rating with a t interval and the share at or above `threshold` with
/// a Wilson interval. The ratings are treated as independent; when each pair
/// was rated by several reviewers, pass one value per pair (e.g. the
/// reviewers' mean) so pairs, not ratings, are the units.
pub fn rating_summary(ratings: &[f64], threshold: f64, level: f64) -> Result<RatingSummary> {
    check_level(level)?;
    let r: Vec<f64> = ratings.iter().copied().filter(|v| !v.is_nan()).collect();
    if r.len() < 2 {
        return Err(Error::compute(format!(
            "a rating summary needs at least 2 ratings; got {}",
            r.len()
        )));
    }
    let n = r.len() as f64;
    let mean = stats::mean(&r);
    let se = (stats::variance(&r) / n).sqrt();
    let tq = stats::t_ppf(0.5 + level / 2.0, n - 1.0);
    let share = r.iter().filter(|&&v| v >= threshold).count() as f64 / n;
    let z = stats::norm_ppf(0.5 + level / 2.0);
    let z2 = z * z;
    let centre = (share + z2 / (2.0 * n)) / (1.0 + z2 / n);
    let half = z / (1.0 + z2 / n) * (share * (1.0 - share) / n + z2 / (4.0 * n * n)).sqrt();
    Ok(RatingSummary {
        n: r.len(),
        mean,
        ci_low: mean - tq * se,
        ci_high: mean + tq * se,
        threshold,
        share_at_or_above: share,
        share_ci_low: (centre - half).max(0.0),
        share_ci_high: (centre + half).min(1.0),
        level,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn perfect_agreement_gives_kappa_one() {
        let a = [1.0, 2.0, 3.0, 4.0, 5.0, 5.0];
        for w in [
            KappaWeights::Unweighted,
            KappaWeights::Linear,
            KappaWeights::Quadratic,
        ] {
            let p = KappaParams {
                weights: w,
                ..KappaParams::default()
            };
            let k = cohen_kappa(&a, &a, &p).unwrap();
            assert!((k.kappa - 1.0).abs() < 1e-12);
        }
    }

    #[test]
    fn kappa_interval_stays_within_its_range() {
        // Near-perfect agreement on few pairs: the Wald interval would pass 1.
        let a = [1.0, 2.0, 3.0, 4.0, 5.0, 5.0, 4.0, 2.0];
        let b = [1.0, 2.0, 3.0, 4.0, 5.0, 4.0, 4.0, 2.0];
        let p = KappaParams {
            weights: KappaWeights::Quadratic,
            ..KappaParams::default()
        };
        let k = cohen_kappa(&a, &b, &p).unwrap();
        assert!(k.kappa < 1.0 && k.kappa + 1.96 * k.se > 1.0, "{k:?}");
        assert!(k.ci_low >= -1.0 && k.ci_high <= 1.0, "{k:?}");
        assert!(k.ci_low <= k.kappa && k.kappa <= k.ci_high);
    }

    #[test]
    fn kappa_rejects_unknown_category() {
        let r = cohen_kappa(&[1.0, 6.0], &[1.0, 2.0], &KappaParams::default());
        assert!(r.is_err());
    }

    #[test]
    fn alpha_is_one_when_reviewers_agree() {
        let m = array![[1.0, 1.0, f64::NAN], [2.0, 2.0, 2.0], [5.0, f64::NAN, 5.0]];
        let a = krippendorff_alpha(m.view(), &AlphaParams::default()).unwrap();
        assert!((a.alpha - 1.0).abs() < 1e-12);
        assert_eq!(a.n_units, 3);
    }

    proptest::proptest! {
        #[test]
        fn statistics_stay_in_range(
            cells in proptest::collection::vec(proptest::option::of(1u8..6), 12..90),
        ) {
            let k = 3;
            let n = cells.len() / k;
            let m = ndarray::Array2::from_shape_fn((n, k), |(i, j)| {
                cells[i * k + j].map_or(f64::NAN, f64::from)
            });
            let p = AlphaParams { bootstrap: 50, ..AlphaParams::default() };
            if let Ok(a) = krippendorff_alpha(m.view(), &p) {
                proptest::prop_assert!(a.alpha <= 1.0 + 1e-12);
            }
            let a: Vec<f64> = m.column(0).to_vec();
            let b: Vec<f64> = m.column(1).to_vec();
            for w in [KappaWeights::Unweighted, KappaWeights::Linear, KappaWeights::Quadratic] {
                let p = KappaParams { weights: w, ..KappaParams::default() };
                if let Ok(kp) = cohen_kappa(&a, &b, &p) {
                    proptest::prop_assert!((-1.0 - 1e-12..=1.0 + 1e-12).contains(&kp.kappa));
                }
            }
        }
    }

    #[test]
    fn icc_rejects_missing() {
        let m = array![[1.0, 2.0], [f64::NAN, 3.0], [4.0, 4.0]];
        assert!(intraclass(m.view(), 0.95).is_err());
    }

    #[test]
    fn wilson_interval_stays_in_unit_range() {
        let s = rating_summary(&[5.0, 5.0, 4.0, 5.0], 4.0, 0.95).unwrap();
        assert_eq!(s.share_at_or_above, 1.0);
        assert!(s.share_ci_high <= 1.0 && s.share_ci_low > 0.4);
    }
}
