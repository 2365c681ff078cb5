//! How much hidden bias would change the conclusion: Rosenbaum bounds over a
//! grid of Gamma, and the E-value.
//!
//! **Rosenbaum bounds** (Rosenbaum 2002, *Observational Studies*, 2nd ed.,
//! Springer, ch. 4). Within a matched pair, an unmeasured covariate may make
//! the odds of treatment differ by at most a factor Gamma. Under that model
//! the null distribution of a signed-rank type statistic is bounded by
//! statistics in which each pair "points the observed way" independently
//! with probability p+ = Gamma/(1+Gamma) (upper bound) or p- = 1/(1+Gamma)
//! (lower bound).
//!
//! * McNemar's test (binary, 1:1): with D discordant pairs and T of them in
//!   the direction of the observed effect, the upper bound on the one-sided
//!   p-value is P(X >= T) for X ~ Bin(D, p+), computed exactly.
//! * Wilcoxon signed-rank (continuous 1:1, or the set-level differences of
//!   1:k and reuse designs): zeros dropped, q_i the average ranks of |d_i|,
//!   T the sum of q_i over differences in the observed direction. The bounding
//!   statistic is sum q_i B_i with independent B_i ~ Bernoulli(p+), so its mean
//!   is p+ sum q_i and its variance p+(1-p+) sum q_i^2; without ties these are
//!   p+ S(S+1)/2 and p+(1-p+) S(S+1)(2S+1)/6 (Rosenbaum 2002, ch. 4), and
//!   the bound is the normal tail 1 - Phi((T - mean)/sd), with no continuity
//!   correction. Using the sums of the actual average ranks handles ties. For
//!   sets with several comparison units this treats each set difference as a
//!   pair difference, an approximation; Rosenbaum (2002, ch. 4) also treats
//!   matched sets with several controls directly.
//!
//! The bound rises with Gamma; the smallest Gamma at which it exceeds alpha
//! is found by bisection to within 0.01.
//!
//! **E-value** (VanderWeele & Ding 2017, "Sensitivity analysis in
//! observational research: introducing the E-value", *Annals of Internal
//! Medicine* 167:268-274): for a risk ratio RR >= 1, E = RR + sqrt(RR (RR-1));
//! RR < 1 is inverted first. The E-value of the confidence limit nearer the
//! null is 1 when the interval contains 1. A mean difference is converted to
//! an approximate risk ratio by RR = exp(0.91 d), d the standardized mean
//! difference (the conversion the same paper gives for continuous outcomes,
//! after Hasselblad & Hedges 1995).
//!
//! These numbers bound, but do not remove, the doubt that unmeasured
//! confounding leaves; interpretation needs qualified review under local
//! research-ethics and data-governance rules.

use crate::effect::{EffectEstimate, OutcomeKind, SetOutcomes};
use crate::stats;
use crate::{Error, Result};
use serde::{Deserialize, Serialize};

/// Options for the Gamma grid.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SensitivityParams {
    /// Largest Gamma of the grid (>= 1); default 3.
    pub gamma_max: f64,
    /// Spacing of the grid (> 0); default 0.25.
    pub gamma_step: f64,
    /// One-sided significance level; default 0.05.
    pub alpha: f64,
}

impl Default for SensitivityParams {
    fn default() -> Self {
        SensitivityParams {
            gamma_max: 3.0,
            gamma_step: 0.25,
            alpha: 0.05,
        }
    }
}

impl SensitivityParams {
    fn validate(&self) -> Result<()> {
        if !(self.gamma_max >= 1.0 && self.gamma_max.is_finite()) {
            return Err(Error::param(
                "gamma_max",
                format!("must be a number of at least 1; got {}", self.gamma_max),
            ));
        }
        if !(self.gamma_step > 0.0 && self.gamma_step.is_finite()) {
            return Err(Error::param(
                "gamma_step",
                format!("must be positive (e.g. 0.1); got {}", self.gamma_step),
            ));
        }
        if (self.gamma_max - 1.0) / self.gamma_step > 10_000.0 {
            return Err(Error::param(
                "gamma_step",
                "gives more than 10,000 grid points; choose a larger step",
            ));
        }
        if !(self.alpha > 0.0 && self.alpha < 1.0) {
            return Err(Error::param(
                "alpha",
                format!(
                    "must lie strictly between 0 and 1 (e.g. 0.05); got {}",
                    self.alpha
                ),
            ));
        }
        Ok(())
    }
}

/// The bounds at one Gamma.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BoundPoint {
    /// Gamma.
    pub gamma: f64,
    /// Upper bound on the one-sided p-value.
    pub p_upper: f64,
    /// Lower bound on the one-sided p-value.
    pub p_lower: f64,
}

/// Rosenbaum bounds over a grid of Gamma.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RosenbaumBounds {
    /// Which test is bounded.
    pub test: String,
    /// Direction of the one-sided test: "treated higher" or "treated lower".
    pub direction: String,
    /// Discordant pairs (McNemar) or nonzero differences (signed-rank).
    pub n_used: usize,
    /// The observed statistic T in the tested direction.
    pub statistic: f64,
    /// One-sided level.
    pub alpha: f64,
    /// The grid, Gamma ascending from 1.
    pub points: Vec<BoundPoint>,
    /// True when the upper bound at Gamma = 1 (no hidden bias) is at most alpha.
    pub significant_without_bias: bool,
    /// Smallest Gamma (to within 0.01, rounded up) at which the upper bound
    /// exceeds alpha: 1 when not significant even at Gamma = 1; None when
    /// still significant at `gamma_max`.
    pub gamma_critical: Option<f64>,
}

fn grid(params: &SensitivityParams) -> Vec<f64> {
    let steps = ((params.gamma_max - 1.0) / params.gamma_step + 1e-9).floor() as usize;
    let mut g: Vec<f64> = (0..=steps)
        .map(|i| 1.0 + i as f64 * params.gamma_step)
        .collect();
    if let Some(&last) = g.last() {
        if params.gamma_max - last > 1e-9 {
            g.push(params.gamma_max);
        }
    }
    g
}

fn build(
    test: &str,
    direction: &str,
    n_used: usize,
    statistic: f64,
    params: &SensitivityParams,
    bound: impl Fn(f64) -> (f64, f64),
) -> RosenbaumBounds {
    let points: Vec<BoundPoint> = grid(params)
        .into_iter()
        .map(|gamma| {
            let (p_upper, p_lower) = bound(gamma);
            BoundPoint {
                gamma,
                p_upper,
                p_lower,
            }
        })
        .collect();
    let up = |g: f64| bound(g).0;
    let significant_without_bias = up(1.0) <= params.alpha;
    let gamma_critical = if !significant_without_bias {
        Some(1.0)
    } else if up(params.gamma_max) <= params.alpha {
        None
    } else {
        let (mut lo, mut hi) = (1.0, params.gamma_max);
        while hi - lo > 0.002 {
            let mid = 0.5 * (lo + hi);
            if up(mid) > params.alpha {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        // Round up to the 0.01 grid, staying at a Gamma where the bound
        // already exceeds alpha.
        let r = ((hi * 100.0).ceil() / 100.0).min(params.gamma_max);
        Some(if up(r) > params.alpha { r } else { hi })
    };
    RosenbaumBounds {
        test: test.into(),
        direction: direction.into(),
        n_used,
        statistic,
        alpha: params.alpha,
        points,
        significant_without_bias,
        gamma_critical,
    }
}

/// Rosenbaum bounds for McNemar's test from the discordant counts of 1:1
/// pairs (treated-only events and comparison-only events). The test runs in
/// the direction of the observed difference (ties: treated higher).
pub fn mcnemar_bounds(
    treated_only: usize,
    comparison_only: usize,
    params: &SensitivityParams,
) -> Result<RosenbaumBounds> {
    params.validate()?;
    let d = (treated_only + comparison_only) as u64;
    let (t, direction) = if treated_only >= comparison_only {
        (treated_only as u64, "treated higher")
    } else {
        (comparison_only as u64, "treated lower")
    };
    let tail = |p: f64| -> f64 {
        if t == 0 {
            1.0
        } else {
            stats::binom_sf(t - 1, d, p)
        }
    };
    Ok(build(
        "McNemar (exact binomial bound)",
        direction,
        d as usize,
        t as f64,
        params,
        |g| (tail(g / (1.0 + g)), tail(1.0 / (1.0 + g))),
    ))
}

/// Rosenbaum bounds for the Wilcoxon signed-rank test on pair (or set)
/// differences, treated minus comparison, by the normal approximation.
pub fn signed_rank_bounds(
    differences: &[f64],
    params: &SensitivityParams,
) -> Result<RosenbaumBounds> {
    params.validate()?;
    if let Some(i) = differences.iter().position(|v| !v.is_finite()) {
        return Err(Error::data(
            None,
            None,
            format!("difference {} is not a finite number", i + 1),
        ));
    }
    let nz: Vec<f64> = differences.iter().copied().filter(|&v| v != 0.0).collect();
    if nz.is_empty() {
        return Err(Error::compute(
            "every difference is zero; there is no effect to bound",
        ));
    }
    let abs: Vec<f64> = nz.iter().map(|v| v.abs()).collect();
    let q = stats::rank_average(&abs)?;
    let sum_q: f64 = q.iter().sum();
    let sum_q2: f64 = q.iter().map(|r| r * r).sum();
    let r_plus: f64 = nz
        .iter()
        .zip(&q)
        .filter(|(v, _)| **v > 0.0)
        .map(|(_, r)| r)
        .sum();
    let r_minus = sum_q - r_plus;
    let (t, direction) = if r_plus >= r_minus {
        (r_plus, "treated higher")
    } else {
        (r_minus, "treated lower")
    };
    let tail = |p: f64| -> f64 {
        let mean = p * sum_q;
        let sd = (p * (1.0 - p) * sum_q2).sqrt();
        stats::norm_sf((t - mean) / sd)
    };
    Ok(build(
        "Wilcoxon signed-rank (normal approximation bound)",
        direction,
        nz.len(),
        t,
        params,
        |g| (tail(g / (1.0 + g)), tail(1.0 / (1.0 + g))),
    ))
}

/// Bounds for an outcome over matched sets: McNemar for binary 1:1 pairs,
/// the signed-rank bound on set differences (treated minus the mean of its
/// comparison units) otherwise. `comparison_reused` as in
/// [`crate::effect::EffectParams`].
pub fn bounds_for_sets(
    sets: &[SetOutcomes],
    kind: OutcomeKind,
    comparison_reused: bool,
    params: &SensitivityParams,
) -> Result<RosenbaumBounds> {
    if sets.iter().any(|s| s.controls.is_empty()) {
        return Err(Error::data(
            None,
            None,
            "a matched set has no comparison unit",
        ));
    }
    let one_to_one = sets.iter().all(|s| s.controls.len() == 1) && !comparison_reused;
    if kind == OutcomeKind::Binary && one_to_one {
        let (mut b, mut c) = (0, 0);
        for (i, s) in sets.iter().enumerate() {
            for v in [s.treated, s.controls[0]] {
                if v != 0.0 && v != 1.0 {
                    return Err(Error::data(
                        None,
                        None,
                        format!(
                            "matched set {}: a binary outcome must be coded 0 or 1; got {v}",
                            i + 1
                        ),
                    ));
                }
            }
            match (s.treated == 1.0, s.controls[0] == 1.0) {
                (true, false) => b += 1,
                (false, true) => c += 1,
                _ => {}
            }
        }
        return mcnemar_bounds(b, c, params);
    }
    let d: Vec<f64> = sets
        .iter()
        .map(|s| s.treated - stats::mean(&s.controls))
        .collect();
    signed_rank_bounds(&d, params)
}

/// An E-value for an estimate and its interval.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EValue {
    /// "risk ratio", or "approximate risk ratio exp(0.91 d)" for a mean
    /// difference.
    pub scale: String,
    /// Risk ratio (or its approximation) the E-value is computed from.
    pub risk_ratio: f64,
    /// Lower limit on the same scale.
    pub ci_low: f64,
    /// Upper limit on the same scale.
    pub ci_high: f64,
    /// E-value of the point estimate.
    pub e_point: f64,
    /// E-value of the confidence limit nearer 1 (1 when the interval
    /// contains 1).
    pub e_limit: f64,
}

/// E-value of a risk ratio: RR + sqrt(RR (RR - 1)) after inverting RR < 1.
pub fn e_value_rr(rr: f64) -> f64 {
    let r = if rr < 1.0 { 1.0 / rr } else { rr };
    r + (r * (r - 1.0)).sqrt()
}

/// E-values of a risk ratio and the limit of its interval nearer the null.
pub fn e_value(rr: f64, ci_low: f64, ci_high: f64) -> Result<EValue> {
    for (name, v) in [("risk_ratio", rr), ("ci_low", ci_low), ("ci_high", ci_high)] {
        if !(v > 0.0 && v.is_finite()) {
            return Err(Error::param(
                name,
                format!("a risk ratio must be a positive finite number; got {v}"),
            ));
        }
    }
    if ci_low > ci_high {
        return Err(Error::param(
            "ci_low",
            format!("lower limit {ci_low} exceeds upper limit {ci_high}"),
        ));
    }
    let e_limit = if ci_low <= 1.0 && ci_high >= 1.0 {
        1.0
    } else if ci_low > 1.0 {
        e_value_rr(ci_low)
    } else {
        e_value_rr(ci_high)
    };
    Ok(EValue {
        scale: "risk ratio".into(),
        risk_ratio: rr,
        ci_low,
        ci_high,
        e_point: e_value_rr(rr),
        e_limit,
    })
}

/// E-values of a standardized mean difference d with interval, through the
/// approximation RR = exp(0.91 d).
pub fn e_value_smd(d: f64, ci_low: f64, ci_high: f64) -> Result<EValue> {
    let f = |x: f64| libm::exp(0.91 * x);
    let mut e = e_value(f(d), f(ci_low), f(ci_high))?;
    e.scale = "approximate risk ratio exp(0.91 d)".into();
    Ok(e)
}

/// E-values for an effect estimate: from its risk ratio (binary) or from the
/// mean difference standardized by the outcome SD (continuous).
pub fn e_value_for(est: &EffectEstimate) -> Result<EValue> {
    match est.kind {
        OutcomeKind::Binary => match &est.risk_ratio {
            Some(r) => e_value(r.estimate, r.ci_low, r.ci_high),
            None => Err(Error::compute(
                "no risk ratio is available (a group has no events), so no E-value",
            )),
        },
        OutcomeKind::Continuous => {
            let sd = est.outcome_sd;
            if !(sd > 0.0 && sd.is_finite()) {
                return Err(Error::compute(
                    "the outcome does not vary, so it cannot be standardized for an E-value",
                ));
            }
            e_value_smd(est.estimate / sd, est.ci_low / sd, est.ci_high / sd)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn e_value_by_direct_formula() {
        // E = RR + sqrt(RR (RR - 1)) (VanderWeele & Ding 2017): RR 2 gives 2 + sqrt 2.
        assert!((e_value_rr(2.0) - (2.0 + 2f64.sqrt())).abs() < 1e-15);
        assert!((e_value_rr(0.5) - e_value_rr(2.0)).abs() < 1e-15);
        let e = e_value(0.8, 0.6, 1.1).unwrap();
        assert_eq!(e.e_limit, 1.0);
        let e = e_value(0.5, 0.3, 0.8).unwrap();
        assert!((e.e_limit - e_value_rr(1.0 / 0.8)).abs() < 1e-15);
    }

    #[test]
    fn mcnemar_bound_at_gamma_one_is_one_sided_exact_test() {
        let b = mcnemar_bounds(15, 5, &SensitivityParams::default()).unwrap();
        let want = stats::binom_sf(14, 20, 0.5);
        assert!((b.points[0].p_upper - want).abs() < 1e-15);
        assert_eq!(b.points[0].p_upper, b.points[0].p_lower);
        // Bounds widen as Gamma grows.
        for w in b.points.windows(2) {
            assert!(w[1].p_upper >= w[0].p_upper && w[1].p_lower <= w[0].p_lower);
        }
    }

    #[test]
    fn critical_gamma_brackets_alpha() {
        let p = SensitivityParams {
            gamma_max: 10.0,
            gamma_step: 0.5,
            alpha: 0.05,
        };
        let b = mcnemar_bounds(40, 10, &p).unwrap();
        let g = b.gamma_critical.unwrap();
        let at = |g: f64| stats::binom_sf(39, 50, g / (1.0 + g));
        assert!(at(g) > 0.05 && at(g - 0.011) <= 0.05, "{g}");
        assert_eq!(mcnemar_bounds(3, 2, &p).unwrap().gamma_critical, Some(1.0));
    }

    #[test]
    fn grid_ends_at_gamma_max() {
        let g = grid(&SensitivityParams {
            gamma_max: 2.0,
            gamma_step: 0.3,
            alpha: 0.05,
        });
        assert_eq!(g.len(), 5);
        assert_eq!(*g.last().unwrap(), 2.0);
    }
}
