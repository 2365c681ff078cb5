//! The few statistics the design comparison needs beyond [`crate::stats`]:
//! Welch's two-sample t, Wilson's interval and Holm's adjustment. The
//! distributions themselves come from [`crate::stats`].

use crate::stats;

/// Two-sided tail probability P(|T| >= |t|) of Student's t.
pub(crate) fn t_two_sided(t: f64, df: f64) -> f64 {
    if !t.is_finite() {
        return 0.0;
    }
    stats::t_test_p(t, 1.0, df)
}

/// The `p` quantile of Student's t (0 < p < 1).
pub(crate) fn t_quantile(p: f64, df: f64) -> f64 {
    stats::t_ppf(p, df)
}

/// Mean and sample variance (n - 1 denominator).
pub(crate) fn mean_var(x: &[f64]) -> (f64, f64) {
    (stats::mean(x), stats::variance(x))
}

/// Spearman's rank correlation and its two-sided p-value; `None` when it is
/// undefined (fewer than 3 pairs or a constant variable).
pub(crate) fn spearman(x: &[f64], y: &[f64]) -> Option<(f64, f64)> {
    stats::spearman(x, y).ok().map(|r| (r.rho, r.p_value))
}

/// Welch's two-sample t statistic for mean(a) - mean(b), its
/// Welch-Satterthwaite degrees of freedom (Welch 1947, Biometrika 34:28-35;
/// Satterthwaite 1946) and its standard error.
pub(crate) fn welch(a: &[f64], b: &[f64]) -> Option<(f64, f64, f64, f64)> {
    if a.len() < 2 || b.len() < 2 {
        return None;
    }
    let (ma, va) = mean_var(a);
    let (mb, vb) = mean_var(b);
    let (qa, qb) = (va / a.len() as f64, vb / b.len() as f64);
    let se = (qa + qb).sqrt();
    if se <= 0.0 {
        return None;
    }
    let df =
        (qa + qb).powi(2) / (qa * qa / (a.len() as f64 - 1.0) + qb * qb / (b.len() as f64 - 1.0));
    Some((ma - mb, (ma - mb) / se, df, se))
}

/// Wilson's score interval for a proportion (Wilson 1927, JASA 22:209-212).
pub(crate) fn wilson(successes: usize, n: usize, confidence: f64) -> (f64, f64) {
    let z = stats::norm_ppf(0.5 + confidence / 2.0);
    let n = n as f64;
    let p = successes as f64 / n;
    let z2 = z * z;
    let centre = (p + z2 / (2.0 * n)) / (1.0 + z2 / n);
    let half = z / (1.0 + z2 / n) * (p * (1.0 - p) / n + z2 / (4.0 * n * n)).sqrt();
    ((centre - half).max(0.0), (centre + half).min(1.0))
}

/// Holm's step-down adjustment of p-values (Holm 1979, Scand J Stat
/// 6:65-70), returned in the input order.
pub(crate) fn holm(p: &[f64]) -> Vec<f64> {
    let m = p.len();
    let mut idx: Vec<usize> = (0..m).collect();
    idx.sort_by(|&a, &b| p[a].total_cmp(&p[b]).then(a.cmp(&b)));
    let mut out = vec![0.0; m];
    let mut running: f64 = 0.0;
    for (rank, &i) in idx.iter().enumerate() {
        running = running.max(((m - rank) as f64 * p[i]).min(1.0));
        out[i] = running;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn holm_adjusts_in_input_order() {
        // Holm (1979): sorted p (0.01, 0.02, 0.04) times (3, 2, 1), running max.
        let adj = holm(&[0.04, 0.01, 0.02]);
        let want = [0.04, 0.03, 0.04];
        for (a, w) in adj.iter().zip(want) {
            assert!((a - w).abs() < 1e-15, "{adj:?}");
        }
    }

    #[test]
    fn wilson_interval_is_inside_unit_range() {
        let (lo, hi) = wilson(0, 10, 0.95);
        assert!(lo.abs() < 1e-15, "{lo}");
        assert!(hi > 0.2 && hi < 0.35, "{hi}");
        let (lo, hi) = wilson(10, 10, 0.95);
        assert!(lo > 0.65 && hi == 1.0);
    }

    #[test]
    fn welch_needs_spread() {
        assert!(welch(&[1.0, 1.0], &[2.0, 2.0]).is_none());
        let (diff, _, df, _) = welch(&[1.0, 2.0, 3.0], &[2.0, 4.0, 6.0, 8.0]).unwrap();
        assert_eq!(diff, -3.0);
        assert!(df > 3.0 && df < 5.0, "{df}");
    }
}
