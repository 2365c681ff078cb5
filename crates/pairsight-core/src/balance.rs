//! Balance diagnostics: how alike the treated and comparison groups are on
//! each term, before matching (every row) and after (rows weighted by their
//! matching weights).
//!
//! * Standardized mean difference (Austin 2009, Statistics in Medicine
//!   28(25)): `(mean_t - mean_c) / sqrt((s_t^2 + s_c^2) / 2)`, treated minus
//!   comparison. The denominator is always that of the *unmatched* sample, so
//!   before and after differ only in their numerators. `s^2` is the n-1
//!   sample variance; for a binary term (every value 0 or 1) it is
//!   `p (1 - p)`.
//! * Variance ratio, treated over comparison; after matching with weighted
//!   variances `sum w (x - m_w)^2 / (W - sum w^2 / W)`, `W = sum w` (the
//!   unbiased form for reliability weights; with unit weights it is the n-1
//!   variance, so before and after are comparable; common practice).
//! * Kolmogorov-Smirnov distance: the largest absolute difference between
//!   the (weighted) empirical distribution functions of the two groups
//!   (Kolmogorov 1933; Smirnov 1948).
//!
//! A value that is not defined (a zero denominator, a group with no weight)
//! is `None`, never a number.

use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

use crate::{Error, Result};

/// What a term is, as the caller knows it (shown beside the balance row).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum TermKind {
    /// A numeric covariate.
    Numeric,
    /// A two-valued covariate coded 0/1.
    Binary,
    /// One level of a categorical covariate, as a 0/1 indicator.
    Level,
    /// A feature computed from a note (length, readability, latent dimension).
    Note,
    /// A concept count or flag found in a note.
    Concept,
    /// The missingness indicator of a covariate (`name.missing`), 0/1.
    Missing,
    /// A derived term: `square(x)` or `product(x, y)`.
    Derived,
}

impl TermKind {
    /// Whether the term comes from the notes.
    pub fn is_note_derived(self) -> bool {
        matches!(self, TermKind::Note | TermKind::Concept)
    }
}

/// Name and kind of one term (one column of the balance matrix).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TermInfo {
    /// Term name, e.g. `age` or `ward=east`.
    pub name: String,
    /// Its kind.
    pub kind: TermKind,
}

/// Balance of one term before and after matching.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BalanceRow {
    /// Term name.
    pub term: String,
    /// Term kind.
    pub kind: TermKind,
    /// Standardized mean difference in the unmatched sample.
    pub smd_before: Option<f64>,
    /// Standardized mean difference after matching (same denominator).
    pub smd_after: Option<f64>,
    /// Variance ratio, treated / comparison, unmatched.
    pub variance_ratio_before: Option<f64>,
    /// Variance ratio with matching weights.
    pub variance_ratio_after: Option<f64>,
    /// Kolmogorov-Smirnov distance, unmatched.
    pub ks_before: Option<f64>,
    /// Kolmogorov-Smirnov distance of the weighted eCDFs.
    pub ks_after: Option<f64>,
}

/// Balance table: one row per column of `x` (described by `terms`), given the
/// group of each row and the matching weights (0 = not in the matched
/// sample). A term whose values are all 0 or 1 is treated as binary in the
/// SMD denominator.
pub fn balance_rows(
    x: ArrayView2<f64>,
    terms: &[TermInfo],
    treated: &[bool],
    weights: &[f64],
) -> Result<Vec<BalanceRow>> {
    let n = x.nrows();
    if terms.len() != x.ncols() {
        return Err(Error::param(
            "terms",
            format!(
                "{} term names for {} columns; give one per column",
                terms.len(),
                x.ncols()
            ),
        ));
    }
    if treated.len() != n || weights.len() != n {
        return Err(Error::param(
            "treated/weights",
            format!(
                "{} group flags and {} weights for {n} rows; give one of each per row",
                treated.len(),
                weights.len()
            ),
        ));
    }
    if let Some(i) = weights.iter().position(|w| !(w.is_finite() && *w >= 0.0)) {
        return Err(Error::param(
            "weights",
            format!(
                "the weight of row index {i} is {}; weights must be finite and non-negative",
                weights[i]
            ),
        ));
    }
    let ones = vec![1.0; n];
    let mut out = Vec::with_capacity(terms.len());
    for (j, term) in terms.iter().enumerate() {
        let col: Vec<f64> = x.column(j).to_vec();
        if let Some(i) = col.iter().position(|v| !v.is_finite()) {
            return Err(Error::param(
                "x",
                format!("term \"{}\" has a missing or non-finite value at row index {i}; fill it before computing balance", term.name),
            ));
        }
        let binary = col.iter().all(|&v| v == 0.0 || v == 1.0);
        let bt = Moments::of(&col, treated, true, &ones);
        let bc = Moments::of(&col, treated, false, &ones);
        let at = Moments::of(&col, treated, true, weights);
        let ac = Moments::of(&col, treated, false, weights);
        let spread = |m: &Moments| {
            if binary {
                m.mean.map(|p| p * (1.0 - p))
            } else {
                m.var
            }
        };
        let denom = match (spread(&bt), spread(&bc)) {
            (Some(a), Some(b)) => Some(((a + b) / 2.0).sqrt()),
            _ => None,
        };
        let smd = |t: &Moments, c: &Moments| match (t.mean, c.mean, denom) {
            (Some(a), Some(b), Some(d)) if d > 0.0 && d.is_finite() => Some((a - b) / d),
            _ => None,
        };
        let vr = |t: &Moments, c: &Moments| match (t.var, c.var) {
            (Some(a), Some(b)) if b > 0.0 => Some(a / b),
            _ => None,
        };
        out.push(BalanceRow {
            term: term.name.clone(),
            kind: term.kind,
            smd_before: smd(&bt, &bc),
            smd_after: smd(&at, &ac),
            variance_ratio_before: vr(&bt, &bc),
            variance_ratio_after: vr(&at, &ac),
            ks_before: ks_distance(&col, treated, &ones),
            ks_after: ks_distance(&col, treated, weights),
        });
    }
    Ok(out)
}

/// Weighted mean and variance of one group.
struct Moments {
    mean: Option<f64>,
    var: Option<f64>,
}

impl Moments {
    fn of(x: &[f64], treated: &[bool], group: bool, w: &[f64]) -> Moments {
        let mut sw = 0.0;
        let mut sw2 = 0.0;
        let mut sx = 0.0;
        for i in 0..x.len() {
            if treated[i] == group && w[i] > 0.0 {
                sw += w[i];
                sw2 += w[i] * w[i];
                sx += w[i] * x[i];
            }
        }
        if sw <= 0.0 {
            return Moments {
                mean: None,
                var: None,
            };
        }
        let m = sx / sw;
        let mut ss = 0.0;
        for i in 0..x.len() {
            if treated[i] == group && w[i] > 0.0 {
                ss += w[i] * (x[i] - m) * (x[i] - m);
            }
        }
        let denom = sw - sw2 / sw;
        // A group of one unit (or all weight on one unit) has no variance.
        let var = (denom > 1e-12 * sw).then(|| ss / denom);
        Moments { mean: Some(m), var }
    }
}

/// Largest gap between the weighted eCDFs of the two groups; None when a
/// group has no weight.
fn ks_distance(x: &[f64], treated: &[bool], w: &[f64]) -> Option<f64> {
    let mut idx: Vec<usize> = (0..x.len()).filter(|&i| w[i] > 0.0).collect();
    let (mut wt, mut wc) = (0.0, 0.0);
    for &i in &idx {
        if treated[i] {
            wt += w[i];
        } else {
            wc += w[i];
        }
    }
    if wt <= 0.0 || wc <= 0.0 {
        return None;
    }
    idx.sort_unstable_by(|&a, &b| {
        x[a].partial_cmp(&x[b])
            .unwrap_or(std::cmp::Ordering::Equal)
            .then(a.cmp(&b))
    });
    let (mut ft, mut fc, mut best) = (0.0f64, 0.0f64, 0.0f64);
    let mut k = 0;
    while k < idx.len() {
        let v = x[idx[k]];
        // All tied values move both functions before they are compared.
        while k < idx.len() && x[idx[k]] == v {
            let i = idx[k];
            if treated[i] {
                ft += w[i] / wt;
            } else {
                fc += w[i] / wc;
            }
            k += 1;
        }
        best = best.max((ft - fc).abs());
    }
    Some(best.min(1.0))
}

/// Kish's effective sample size `(sum w)^2 / sum w^2` (Kish 1965, *Survey
/// Sampling*) of the given weights (zero weights count for nothing). Pass the
/// weights of the comparison group to see how much reuse and 1:k sets shrink
/// it. 0 when no weight is positive.
pub fn kish_ess(weights: &[f64]) -> f64 {
    let (s, s2) = weights
        .iter()
        .filter(|w| w.is_finite() && **w > 0.0)
        .fold((0.0, 0.0), |(s, s2), &w| (s + w, s2 + w * w));
    if s2 > 0.0 {
        s * s / s2
    } else {
        0.0
    }
}

/// Kish's effective sample size of the comparison group's matching weights.
pub fn comparison_ess(weights: &[f64], treated: &[bool]) -> f64 {
    let w: Vec<f64> = weights
        .iter()
        .zip(treated)
        .filter(|(_, &t)| !t)
        .map(|(&w, _)| w)
        .collect();
    kish_ess(&w)
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;
    use proptest::prelude::*;

    fn term(name: &str, kind: TermKind) -> TermInfo {
        TermInfo {
            name: name.into(),
            kind,
        }
    }

    #[test]
    fn smd_by_hand() {
        // treated 1,2,3 (mean 2, var 1); comparison 2,4,6 (mean 4, var 4)
        let x = Array2::from_shape_vec((6, 1), vec![1.0, 2.0, 3.0, 2.0, 4.0, 6.0]).unwrap();
        let t = [true, true, true, false, false, false];
        let r = balance_rows(x.view(), &[term("a", TermKind::Numeric)], &t, &[1.0; 6]).unwrap();
        let e = (2.0 - 4.0) / (2.5f64).sqrt();
        assert!((r[0].smd_before.unwrap() - e).abs() < 1e-12);
        assert!((r[0].variance_ratio_before.unwrap() - 0.25).abs() < 1e-12);
        // eCDFs: treated reaches 1 at 3, comparison is 1/3 there
        assert!((r[0].ks_before.unwrap() - 2.0 / 3.0).abs() < 1e-12);
        // after: keep treated, comparison weight only on the unit at 2
        let w = [1.0, 1.0, 1.0, 3.0, 0.0, 0.0];
        let r = balance_rows(x.view(), &[term("a", TermKind::Numeric)], &t, &w).unwrap();
        assert!((r[0].smd_after.unwrap() - 0.0).abs() < 1e-12);
        assert_eq!(r[0].variance_ratio_after, None); // one comparison unit
    }

    #[test]
    fn binary_terms_use_p_times_one_minus_p() {
        let x =
            Array2::from_shape_vec((8, 1), vec![1.0, 1.0, 1.0, 0.0, 1.0, 0.0, 0.0, 0.0]).unwrap();
        let t = [true, true, true, true, false, false, false, false];
        let r = balance_rows(x.view(), &[term("sex", TermKind::Binary)], &t, &[1.0; 8]).unwrap();
        let (pt, pc) = (0.75, 0.25);
        let e = (pt - pc) / ((pt * (1.0 - pt) + pc * (1.0 - pc)) / 2.0f64).sqrt();
        assert!((r[0].smd_before.unwrap() - e).abs() < 1e-12);
        assert!((r[0].ks_before.unwrap() - 0.5).abs() < 1e-12);
    }

    #[test]
    fn undefined_values_are_none() {
        let x = Array2::from_shape_vec((4, 1), vec![5.0, 5.0, 5.0, 5.0]).unwrap();
        let t = [true, true, false, false];
        let r = balance_rows(
            x.view(),
            &[term("c", TermKind::Numeric)],
            &t,
            &[1.0, 1.0, 0.0, 0.0],
        )
        .unwrap();
        assert_eq!(r[0].smd_before, None);
        assert_eq!(r[0].smd_after, None);
        assert_eq!(r[0].variance_ratio_before, None);
        assert_eq!(r[0].ks_after, None);
        assert_eq!(r[0].ks_before, Some(0.0));
    }

    #[test]
    fn shape_and_value_errors() {
        let x = Array2::from_shape_vec((2, 1), vec![1.0, f64::NAN]).unwrap();
        let terms = [term("a", TermKind::Numeric)];
        assert!(balance_rows(x.view(), &terms, &[true, false], &[1.0, 1.0]).is_err());
        let x = Array2::from_shape_vec((2, 1), vec![1.0, 2.0]).unwrap();
        assert!(balance_rows(x.view(), &terms, &[true], &[1.0, 1.0]).is_err());
        assert!(balance_rows(x.view(), &terms, &[true, false], &[1.0, -1.0]).is_err());
        assert!(balance_rows(x.view(), &[], &[true, false], &[1.0, 1.0]).is_err());
    }

    #[test]
    fn kish_by_hand() {
        assert_eq!(kish_ess(&[1.0, 1.0, 1.0, 1.0]), 4.0);
        // (0.5 + 0.5 + 2)^2 / (0.25 + 0.25 + 4) = 9 / 4.5
        assert!((kish_ess(&[0.5, 0.5, 2.0, 0.0]) - 2.0).abs() < 1e-12);
        assert_eq!(kish_ess(&[0.0]), 0.0);
        assert_eq!(comparison_ess(&[1.0, 1.0, 1.0], &[true, false, false]), 2.0);
    }

    proptest! {
        #[test]
        fn balance_does_not_depend_on_row_order(
            rows in proptest::collection::vec((any::<bool>(), -50i32..50, 0u8..3, 0u8..2), 4..40),
            shift in 0usize..40,
        ) {
            let n = rows.len();
            let build = |order: &[usize]| {
                let x = Array2::from_shape_fn((n, 2), |(i, j)| {
                    let r = &rows[order[i]];
                    if j == 0 { r.1 as f64 / 7.0 } else { r.3 as f64 }
                });
                let t: Vec<bool> = order.iter().map(|&i| rows[i].0).collect();
                let w: Vec<f64> = order.iter().map(|&i| rows[i].2 as f64 / 2.0).collect();
                balance_rows(x.view(), &[term("a", TermKind::Numeric), term("b", TermKind::Binary)], &t, &w).unwrap()
            };
            let id: Vec<usize> = (0..n).collect();
            let mut rot: Vec<usize> = (0..n).collect();
            rot.rotate_left(shift % n);
            rot.reverse();
            let a = build(&id);
            let b = build(&rot);
            let close = |p: Option<f64>, q: Option<f64>| match (p, q) {
                (Some(p), Some(q)) => (p - q).abs() < 1e-9,
                (None, None) => true,
                _ => false,
            };
            for (ra, rb) in a.iter().zip(&b) {
                prop_assert!(close(ra.smd_before, rb.smd_before));
                prop_assert!(close(ra.smd_after, rb.smd_after));
                prop_assert!(close(ra.variance_ratio_after, rb.variance_ratio_after));
                prop_assert!(close(ra.ks_after, rb.ks_after));
            }
        }
    }
}
