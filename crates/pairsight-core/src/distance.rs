//! Distances between a treated unit and a comparison unit, by row index.
//!
//! The matchers only ask "how far apart are rows `t` and `c`?", through
//! [`PairDistance`]. Implementations here: the logit-score distance, the
//! Mahalanobis distance with the pooled within-group covariance, a blend of
//! several distances each divided by its own scale, and a wrapper around any
//! closure (so a distance between note vectors plugs in from elsewhere).

// Index loops mirror the matrix formulas they implement.
#![allow(clippy::needless_range_loop)]

use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

use crate::rng::Rng;
use crate::{Error, Result};

/// A distance between rows of the cohort: `t` a treated row, `c` a
/// comparison row. Must be finite and non-negative for valid rows.
pub trait PairDistance {
    /// Distance between treated row `t` and comparison row `c`.
    fn distance(&self, t: usize, c: usize) -> f64;

    /// When the distance is `|key[t] - key[c]|` for one number per row, that
    /// key; the matchers then search in sorted order instead of comparing
    /// every pair. `None` for every other distance.
    fn line_key(&self) -> Option<&[f64]> {
        None
    }
}

/// Absolute difference of the logit score: `|logit_t - logit_c|`
/// (Rosenbaum & Rubin 1985, The American Statistician 39(1), recommend the
/// logit of the score rather than the score itself).
#[derive(Debug, Clone)]
pub struct ScoreDistance<'a> {
    logit: &'a [f64],
}

impl<'a> ScoreDistance<'a> {
    /// A score distance over the logit score of every row.
    pub fn new(logit: &'a [f64]) -> Self {
        ScoreDistance { logit }
    }
}

impl PairDistance for ScoreDistance<'_> {
    fn distance(&self, t: usize, c: usize) -> f64 {
        (self.logit[t] - self.logit[c]).abs()
    }
    fn line_key(&self) -> Option<&[f64]> {
        Some(self.logit)
    }
}

/// Mahalanobis distance (Mahalanobis 1936; for matching, Rubin 1980,
/// Biometrics 36(2)): `sqrt((x_t - x_c)' S^-1 (x_t - x_c))` with `S` the
/// pooled within-group covariance
/// `S = ((n_t - 1) S_t + (n_c - 1) S_c) / (n_t + n_c - 2)`.
///
/// `S = L L'` by Cholesky; each row is stored as `u_i = L^-1 x_i`, so a
/// distance is the Euclidean distance between two `u`. A singular `S` (a
/// constant column, or a column that is a linear combination of others within
/// the groups) is an error naming the column; no pseudo-inverse is used,
/// because silently ignoring a direction would hide a problem in the design.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Mahalanobis {
    u: Vec<f64>,
    dim: usize,
}

impl Mahalanobis {
    /// Prepare the distance from covariate columns `x` (one row per unit) and
    /// the group of each row.
    pub fn new(x: ArrayView2<f64>, treated: &[bool]) -> Result<Self> {
        let n = x.nrows();
        let p = x.ncols();
        if treated.len() != n {
            return Err(Error::param(
                "treated",
                format!(
                    "has {} entries but the covariates have {n} rows",
                    treated.len()
                ),
            ));
        }
        if p == 0 {
            return Err(Error::param(
                "x",
                "the Mahalanobis distance needs at least one covariate",
            ));
        }
        let nt = treated.iter().filter(|&&t| t).count();
        let nc = n - nt;
        if nt < 2 || nc < 2 {
            return Err(Error::data(
                None,
                None,
                "the Mahalanobis distance needs at least two treated and two comparison units",
            ));
        }
        for ((i, j), v) in x.indexed_iter() {
            if !v.is_finite() {
                return Err(Error::param(
                    "x",
                    format!(
                        "covariate column {j} has a missing or non-finite value at row index {i}"
                    ),
                ));
            }
        }
        let mut mt = vec![0.0; p];
        let mut mc = vec![0.0; p];
        for i in 0..n {
            let m = if treated[i] { &mut mt } else { &mut mc };
            for j in 0..p {
                m[j] += x[[i, j]];
            }
        }
        mt.iter_mut().for_each(|v| *v /= nt as f64);
        mc.iter_mut().for_each(|v| *v /= nc as f64);
        let mut s = vec![0.0; p * p];
        let mut d = vec![0.0; p];
        for i in 0..n {
            let m = if treated[i] { &mt } else { &mc };
            for j in 0..p {
                d[j] = x[[i, j]] - m[j];
            }
            for a in 0..p {
                for b in a..p {
                    s[a * p + b] += d[a] * d[b];
                }
            }
        }
        let denom = (n - 2) as f64;
        for a in 0..p {
            for b in a..p {
                s[a * p + b] /= denom;
                s[b * p + a] = s[a * p + b];
            }
        }
        let mut l = vec![0.0; p * p];
        for j in 0..p {
            let mut dd = s[j * p + j];
            for k in 0..j {
                dd -= l[j * p + k] * l[j * p + k];
            }
            if dd.is_nan() || dd <= 1e-10 * s[j * p + j].max(f64::MIN_POSITIVE) {
                return Err(Error::compute(format!(
                    "Mahalanobis distance: covariate column {j} is constant within the groups or a linear combination of earlier columns, so the pooled covariance is singular; remove that column from the distance"
                )));
            }
            let r = dd.sqrt();
            l[j * p + j] = r;
            for i in j + 1..p {
                let mut v = s[j * p + i];
                for k in 0..j {
                    v -= l[i * p + k] * l[j * p + k];
                }
                l[i * p + j] = v / r;
            }
        }
        let mut u = vec![0.0; n * p];
        for i in 0..n {
            let ui = &mut u[i * p..(i + 1) * p];
            for a in 0..p {
                let mut v = x[[i, a]];
                for k in 0..a {
                    v -= l[a * p + k] * ui[k];
                }
                ui[a] = v / l[a * p + a];
            }
        }
        Ok(Mahalanobis { u, dim: p })
    }
}

impl PairDistance for Mahalanobis {
    fn distance(&self, t: usize, c: usize) -> f64 {
        let p = self.dim;
        let a = &self.u[t * p..(t + 1) * p];
        let b = &self.u[c * p..(c + 1) * p];
        a.iter()
            .zip(b)
            .map(|(x, y)| (x - y) * (x - y))
            .sum::<f64>()
            .sqrt()
    }
}

/// Any closure `(t, c) -> distance` as a [`PairDistance`].
pub struct FnDistance<F: Fn(usize, usize) -> f64> {
    f: F,
}

impl<F: Fn(usize, usize) -> f64> FnDistance<F> {
    /// Wrap a closure.
    pub fn new(f: F) -> Self {
        FnDistance { f }
    }
}

impl<F: Fn(usize, usize) -> f64> PairDistance for FnDistance<F> {
    fn distance(&self, t: usize, c: usize) -> f64 {
        (self.f)(t, c)
    }
}

/// One part of a [`Blend`].
pub struct BlendPart<'a> {
    /// Relative weight (non-negative).
    pub weight: f64,
    /// The distance.
    pub distance: Box<dyn PairDistance + 'a>,
}

/// A weighted sum of distances, each divided by its own scale:
/// `d(t, c) = sum_k w_k d_k(t, c) / s_k`.
///
/// The scale `s_k` is the mean of `d_k` over treated-comparison pairs: all
/// pairs when there are at most [`Blend::SAMPLE_PAIRS`] of them, otherwise
/// that many pairs drawn with the seeded generator. After division every part
/// has mean 1 over such pairs, so the weights say how much each part counts
/// (a scaling of our own choosing; any fixed positive scale gives a valid
/// distance, this one makes the weights comparable).
pub struct Blend<'a> {
    parts: Vec<BlendPart<'a>>,
    scales: Vec<f64>,
}

impl<'a> Blend<'a> {
    /// Most pairs used to estimate each part's scale.
    pub const SAMPLE_PAIRS: usize = 20_000;

    /// A blend with scales estimated from the cohort (see the type's doc).
    pub fn new(parts: Vec<BlendPart<'a>>, treated: &[bool], seed: u64) -> Result<Self> {
        if parts.is_empty() {
            return Err(Error::param("blend", "needs at least one distance"));
        }
        for (k, p) in parts.iter().enumerate() {
            if !(p.weight.is_finite() && p.weight >= 0.0) {
                return Err(Error::param(
                    "blend.weight",
                    format!("weight {k} must be a non-negative number"),
                ));
            }
        }
        if parts.iter().all(|p| p.weight == 0.0) {
            return Err(Error::param(
                "blend.weight",
                "at least one weight must be positive",
            ));
        }
        let ts: Vec<usize> = (0..treated.len()).filter(|&i| treated[i]).collect();
        let cs: Vec<usize> = (0..treated.len()).filter(|&i| !treated[i]).collect();
        if ts.is_empty() || cs.is_empty() {
            return Err(Error::data(
                None,
                None,
                "a blend needs both treated and comparison units",
            ));
        }
        let total = ts.len() as u128 * cs.len() as u128;
        let pairs: Vec<(usize, usize)> = if total <= Self::SAMPLE_PAIRS as u128 {
            ts.iter()
                .flat_map(|&t| cs.iter().map(move |&c| (t, c)))
                .collect()
        } else {
            let mut r = Rng::new(seed);
            (0..Self::SAMPLE_PAIRS)
                .map(|_| (ts[r.below(ts.len())], cs[r.below(cs.len())]))
                .collect()
        };
        let mut scales = Vec::with_capacity(parts.len());
        for (k, p) in parts.iter().enumerate() {
            let s = pairs
                .iter()
                .map(|&(t, c)| p.distance.distance(t, c))
                .sum::<f64>()
                / pairs.len() as f64;
            if !(s.is_finite() && s > 0.0) {
                return Err(Error::compute(format!(
                    "blend: distance {k} is zero (or not finite) for every sampled pair, so it cannot be scaled; leave it out"
                )));
            }
            scales.push(s);
        }
        Ok(Blend { parts, scales })
    }

    /// A blend with scales given by the caller (each positive).
    pub fn with_scales(parts: Vec<BlendPart<'a>>, scales: Vec<f64>) -> Result<Self> {
        if parts.len() != scales.len() || parts.is_empty() {
            return Err(Error::param(
                "blend",
                "give one positive scale per distance",
            ));
        }
        if scales.iter().any(|s| !(s.is_finite() && *s > 0.0)) {
            return Err(Error::param(
                "blend.scale",
                "every scale must be a positive number",
            ));
        }
        Ok(Blend { parts, scales })
    }

    /// The scale each part is divided by.
    pub fn scales(&self) -> &[f64] {
        &self.scales
    }
}

impl PairDistance for Blend<'_> {
    fn distance(&self, t: usize, c: usize) -> f64 {
        self.parts
            .iter()
            .zip(&self.scales)
            .map(|(p, s)| p.weight * p.distance.distance(t, c) / s)
            .sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::{array, Array2};

    #[test]
    fn mahalanobis_with_identity_pooled_covariance_is_euclidean() {
        // Within-group deviations chosen so the pooled covariance is exactly
        // the identity (2 x 2): each group has deviations (+-1, 0), (0, +-1).
        let x = array![
            [1.0, 0.0],
            [-1.0, 0.0],
            [0.0, 1.0],
            [0.0, -1.0],
            [11.0, 5.0],
            [9.0, 5.0],
            [10.0, 6.0],
            [10.0, 4.0]
        ];
        let t = [true, true, true, true, false, false, false, false];
        // pooled S = (2 I + 2 I) / 6 = (2/3) I
        let m = Mahalanobis::new(x.view(), &t).unwrap();
        let d = m.distance(0, 4);
        let e = ((10.0f64).powi(2) + 25.0).sqrt() / (2.0f64 / 3.0).sqrt();
        assert!((d - e).abs() < 1e-12, "{d} {e}");
    }

    #[test]
    fn mahalanobis_matches_explicit_inverse() {
        let mut r = Rng::new(4);
        let n = 60;
        let x = Array2::from_shape_fn((n, 3), |(i, j)| {
            r.normal()
                + if j == 1 {
                    0.5 * i as f64 / n as f64
                } else {
                    0.0
                }
        });
        let t: Vec<bool> = (0..n).map(|i| i % 3 == 0).collect();
        let m = Mahalanobis::new(x.view(), &t).unwrap();
        // explicit pooled covariance and inverse through nalgebra
        let mut s = nalgebra::DMatrix::<f64>::zeros(3, 3);
        for g in [true, false] {
            let rows: Vec<usize> = (0..n).filter(|&i| t[i] == g).collect();
            let mean: Vec<f64> = (0..3)
                .map(|j| rows.iter().map(|&i| x[[i, j]]).sum::<f64>() / rows.len() as f64)
                .collect();
            for &i in &rows {
                for a in 0..3 {
                    for b in 0..3 {
                        s[(a, b)] += (x[[i, a]] - mean[a]) * (x[[i, b]] - mean[b]);
                    }
                }
            }
        }
        s /= (n - 2) as f64;
        let inv = s.try_inverse().unwrap();
        let dv = nalgebra::DVector::from_iterator(3, (0..3).map(|j| x[[0, j]] - x[[1, j]]));
        let e = (dv.transpose() * inv * &dv)[(0, 0)].sqrt();
        assert!((m.distance(0, 1) - e).abs() < 1e-10);
    }

    #[test]
    fn singular_covariance_names_the_column() {
        let x = array![[1.0, 2.0], [2.0, 4.0], [3.0, 6.0], [4.0, 8.0], [5.0, 10.0]];
        let e = Mahalanobis::new(x.view(), &[true, true, false, false, false]).unwrap_err();
        assert!(e.to_string().contains("column 1"), "{e}");
    }

    #[test]
    fn blend_parts_have_unit_mean_over_pairs() {
        let logit = [0.0, 1.0, 3.0, 4.0];
        let t = [true, true, false, false];
        let b = Blend::new(
            vec![
                BlendPart {
                    weight: 1.0,
                    distance: Box::new(ScoreDistance::new(&logit)),
                },
                BlendPart {
                    weight: 2.0,
                    distance: Box::new(FnDistance::new(|a, c| (a + c) as f64)),
                },
            ],
            &t,
            1,
        )
        .unwrap();
        // score distances over the 4 pairs: 3, 4, 2, 3 -> mean 3
        assert!((b.scales()[0] - 3.0).abs() < 1e-12);
        // fn distances: 2, 3, 3, 4 -> mean 3
        assert!((b.scales()[1] - 3.0).abs() < 1e-12);
        assert!((b.distance(0, 2) - (3.0 / 3.0 + 2.0 * 2.0 / 3.0)).abs() < 1e-12);
    }
}
