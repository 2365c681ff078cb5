//! The effect of treatment on the treated, estimated on matched sets, with an
//! interval and a test that respect the matching, and the unmatched estimate
//! to show beside it.
//!
//! Which method is used follows the matched structure:
//!
//! | outcome | structure | estimate | interval | p-value |
//! | --- | --- | --- | --- | --- |
//! | binary | 1:1, no reuse | risk difference (b - c)/n | paired Wald | exact McNemar |
//! | continuous | 1:1, no reuse | mean of paired differences | paired t | Wilcoxon signed-rank |
//! | either | 1:k or reuse | mean of set differences | bootstrap over sets, percentile | signed-rank on set differences |
//!
//! Sources: McNemar (1947), *Psychometrika* 12:153-157; the paired Wald
//! interval and the risk ratio for matched pairs by the delta method for
//! correlated proportions (Agresti 2013, *Categorical Data Analysis*, 3rd
//! ed., ch. 11); Wilcoxon (1945), *Biometrics Bulletin* 1:80-83, with the
//! tie-corrected normal approximation of Lehmann (1975), *Nonparametrics*;
//! the percentile bootstrap of Efron & Tibshirani (1993), *An Introduction to
//! the Bootstrap*, ch. 13, resampling whole matched sets (Austin & Small 2014,
//! *Statistics in Medicine* 33:4306-4319, studied this for matched samples);
//! Welch (1947), *Biometrika* 34:28-35; the log risk ratio interval of Katz,
//! Baptista, Azen & Pike (1978), *Biometrics* 34:469-474.
//!
//! Every estimate here assumes no unmeasured confounding; see
//! [`crate::sensitivity`] for how much hidden bias would change the
//! conclusion. Results need review by qualified people and must follow local
//! research-ethics and data-governance rules before they inform any decision.
//!
//! ```
//! use pairsight_core::effect::{estimate, EffectParams, OutcomeKind, SetOutcomes};
//! let sets: Vec<SetOutcomes> = [(5.0, 3.0), (4.0, 4.5), (6.0, 2.0), (7.0, 5.0)]
//!     .iter()
//!     .map(|&(t, c)| SetOutcomes { treated: t, controls: vec![c] })
//!     .collect();
//! let e = estimate(&sets, OutcomeKind::Continuous, &EffectParams::default()).unwrap();
//! assert!((e.estimate - 1.875).abs() < 1e-12);
//! ```

use crate::rng::Rng;
use crate::stats;
use crate::{Error, Result};
use serde::{Deserialize, Serialize};

/// The kind of outcome.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum OutcomeKind {
    /// Coded 0/1; the effect is a risk difference (and a risk ratio).
    Binary,
    /// Any real value; the effect is a mean difference.
    Continuous,
}

/// Outcome values of one matched set: the treated unit and its 1..k
/// comparison units. With reuse, a comparison unit appears in several sets.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SetOutcomes {
    /// Outcome of the treated unit.
    pub treated: f64,
    /// Outcomes of its comparison units (at least one).
    pub controls: Vec<f64>,
}

/// Options for [`estimate`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EffectParams {
    /// Confidence level of intervals, in (0, 1); default 0.95.
    pub level: f64,
    /// Bootstrap resamples of matched sets (used for 1:k or reuse); at least
    /// 200 when used; default 2000.
    pub bootstrap: usize,
    /// Seed of the bootstrap.
    pub seed: u64,
    /// True when a comparison unit may appear in more than one set. Pairs
    /// are then not independent, so even 1:1 designs use the bootstrap.
    pub comparison_reused: bool,
}

impl Default for EffectParams {
    fn default() -> Self {
        EffectParams {
            level: 0.95,
            bootstrap: 2000,
            seed: 20_240_601,
            comparison_reused: false,
        }
    }
}

/// A ratio estimate with its interval.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RatioEstimate {
    /// Point estimate.
    pub estimate: f64,
    /// Lower confidence limit.
    pub ci_low: f64,
    /// Upper confidence limit.
    pub ci_high: f64,
}

/// Counts of a 1:1 binary design: both with the event, treated only,
/// comparison only, neither. McNemar's test uses the two discordant counts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct PairCounts {
    /// Pairs where both had the event.
    pub both: usize,
    /// Pairs where only the treated unit had the event.
    pub treated_only: usize,
    /// Pairs where only the comparison unit had the event.
    pub comparison_only: usize,
    /// Pairs where neither had the event.
    pub neither: usize,
}

/// One hypothesis test: its name, statistic and two-sided p-value.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TestResult {
    /// What the test is, in words.
    pub name: String,
    /// The test statistic as the named test defines it.
    pub statistic: f64,
    /// Two-sided p-value.
    pub p_value: f64,
}

/// An effect estimate with interval, test and the counts it used.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EffectEstimate {
    /// Binary or continuous.
    pub kind: OutcomeKind,
    /// "risk difference" or "mean difference" (treated minus comparison).
    pub measure: String,
    /// Point estimate.
    pub estimate: f64,
    /// Lower confidence limit.
    pub ci_low: f64,
    /// Upper confidence limit.
    pub ci_high: f64,
    /// Confidence level of the interval.
    pub level: f64,
    /// Two-sided p-value of [`Self::test`].
    pub p_value: f64,
    /// How the interval was computed.
    pub method: String,
    /// Which test gave [`Self::p_value`].
    pub test: String,
    /// Every test computed, the one in [`Self::test`] first.
    pub tests: Vec<TestResult>,
    /// Matched sets (or, unmatched, 0).
    pub n_sets: usize,
    /// Treated units used.
    pub n_treated: usize,
    /// Comparison entries used; with reuse a comparison unit is counted once
    /// per set it belongs to.
    pub n_comparison_units: usize,
    /// Mean outcome (risk) of the treated.
    pub mean_treated: f64,
    /// Mean outcome (risk) of the comparison side, each set weighted equally.
    pub mean_comparison: f64,
    /// Outcome standard deviation, sqrt of the mean of the two groups'
    /// variances; scales a mean difference to a standardized one.
    pub outcome_sd: f64,
    /// Risk ratio with its interval (binary only).
    pub risk_ratio: Option<RatioEstimate>,
    /// Pair counts (binary 1:1 only).
    pub pair_counts: Option<PairCounts>,
    /// Bootstrap resamples used, when the interval is a bootstrap one.
    pub bootstrap: Option<usize>,
    /// Bootstrap seed, when the interval is a bootstrap one.
    pub seed: Option<u64>,
}

impl EffectEstimate {
    /// An estimate of `kind` with its point value and level, before the
    /// interval, the tests and the counts are filled in.
    fn blank(kind: OutcomeKind, estimate: f64, level: f64) -> Self {
        EffectEstimate {
            kind,
            measure: match kind {
                OutcomeKind::Binary => "risk difference".into(),
                OutcomeKind::Continuous => "mean difference".into(),
            },
            estimate,
            ci_low: f64::NAN,
            ci_high: f64::NAN,
            level,
            p_value: f64::NAN,
            method: String::new(),
            test: String::new(),
            tests: Vec::new(),
            n_sets: 0,
            n_treated: 0,
            n_comparison_units: 0,
            mean_treated: f64::NAN,
            mean_comparison: f64::NAN,
            outcome_sd: f64::NAN,
            risk_ratio: None,
            pair_counts: None,
            bootstrap: None,
            seed: None,
        }
    }
}

fn check_level(level: f64) -> Result<()> {
    if !(level > 0.0 && level < 1.0) {
        return Err(Error::param(
            "level",
            format!("must lie strictly between 0 and 1 (e.g. 0.95); got {level}"),
        ));
    }
    Ok(())
}

fn check_value(v: f64, kind: OutcomeKind, what: impl Fn() -> String) -> Result<()> {
    match kind {
        OutcomeKind::Binary if v != 0.0 && v != 1.0 => Err(Error::data(
            None,
            None,
            format!(
                "{}: a binary outcome must be coded 0 or 1; got {v}",
                what()
            ),
        )),
        _ if !v.is_finite() => Err(Error::data(
            None,
            None,
            format!(
                "{}: the outcome is missing or not a finite number; fill or exclude it before estimating the effect",
                what()
            ),
        )),
        _ => Ok(()),
    }
}

fn validate_sets(sets: &[SetOutcomes], kind: OutcomeKind) -> Result<()> {
    if sets.len() < 2 {
        return Err(Error::compute(format!(
            "an effect needs at least 2 matched sets; got {}",
            sets.len()
        )));
    }
    for (i, s) in sets.iter().enumerate() {
        check_value(s.treated, kind, || {
            format!("matched set {} (treated unit)", i + 1)
        })?;
        if s.controls.is_empty() {
            return Err(Error::data(
                None,
                None,
                format!("matched set {} has no comparison unit", i + 1),
            ));
        }
        for (j, &c) in s.controls.iter().enumerate() {
            check_value(c, kind, || {
                format!("matched set {} (comparison unit {})", i + 1, j + 1)
            })?;
        }
    }
    Ok(())
}

/// Result of the Wilcoxon signed-rank test.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SignedRank {
    /// Nonzero differences used (zeros are dropped first).
    pub n_used: usize,
    /// Zero differences dropped.
    pub n_zero: usize,
    /// Sum of the ranks of |d| over positive differences.
    pub r_plus: f64,
    /// Sum of the ranks of |d| over negative differences.
    pub r_minus: f64,
    /// The smaller of the two rank sums.
    pub statistic: f64,
    /// True when the p-value is from the exact null distribution.
    pub exact: bool,
    /// Two-sided p-value.
    pub p_value: f64,
}

/// Largest number of nonzero differences for which the exact null
/// distribution is used (when there are no ties among |d|).
pub const SIGNED_RANK_EXACT_MAX: usize = 50;

/// Wilcoxon signed-rank test of "differences are symmetric about 0".
///
/// Zeros are dropped first (Wilcoxon's own handling). With at most
/// [`SIGNED_RANK_EXACT_MAX`] nonzero differences and no ties among their
/// absolute values, the two-sided p-value is exact: twice the smaller tail of
/// the null distribution of R+, counted over all 2^n sign patterns, capped at
/// one. Otherwise it is the normal approximation with average ranks and the
/// tie correction of the variance, n(n+1)(2n+1)/24 - sum(t^3 - t)/48,
/// without a continuity correction.
pub fn signed_rank_test(d: &[f64]) -> Result<SignedRank> {
    if let Some(i) = d.iter().position(|v| !v.is_finite()) {
        return Err(Error::data(
            None,
            None,
            format!("difference {} is not a finite number", i + 1),
        ));
    }
    let nz: Vec<f64> = d.iter().copied().filter(|&v| v != 0.0).collect();
    let n = nz.len();
    let n_zero = d.len() - n;
    if n == 0 {
        return Ok(SignedRank {
            n_used: 0,
            n_zero,
            r_plus: 0.0,
            r_minus: 0.0,
            statistic: 0.0,
            exact: true,
            p_value: 1.0,
        });
    }
    let abs: Vec<f64> = nz.iter().map(|v| v.abs()).collect();
    let ranks = stats::rank_average(&abs)?;
    let r_plus: f64 = nz
        .iter()
        .zip(&ranks)
        .filter(|(v, _)| **v > 0.0)
        .map(|(_, r)| r)
        .sum();
    let total = (n * (n + 1)) as f64 / 2.0;
    let r_minus = total - r_plus;
    let ties = stats::tie_groups(&abs);
    let statistic = r_plus.min(r_minus);
    if n <= SIGNED_RANK_EXACT_MAX && ties.is_empty() {
        let counts = signed_rank_null_counts(n);
        let denom = 2f64.powi(n as i32);
        let r = r_plus.round() as usize;
        let lower: f64 = counts[..=r].iter().sum::<f64>() / denom;
        let upper: f64 = counts[r..].iter().sum::<f64>() / denom;
        let p_value = (2.0 * lower.min(upper)).min(1.0);
        return Ok(SignedRank {
            n_used: n,
            n_zero,
            r_plus,
            r_minus,
            statistic,
            exact: true,
            p_value,
        });
    }
    let nf = n as f64;
    let tie_term: f64 = ties.iter().map(|&t| (t * t * t - t) as f64).sum::<f64>() / 48.0;
    let var = nf * (nf + 1.0) * (2.0 * nf + 1.0) / 24.0 - tie_term;
    let p_value = if var <= 0.0 {
        1.0
    } else {
        let z = (r_plus - total / 2.0) / var.sqrt();
        (2.0 * stats::norm_sf(z.abs())).min(1.0)
    };
    Ok(SignedRank {
        n_used: n,
        n_zero,
        r_plus,
        r_minus,
        statistic,
        exact: false,
        p_value,
    })
}

/// Number of sign patterns of ranks 1..n giving each value of R+ (0 to
/// n(n+1)/2), by adding one rank at a time. Exact in f64 up to n = 52.
fn signed_rank_null_counts(n: usize) -> Vec<f64> {
    let max = n * (n + 1) / 2;
    let mut c = vec![0.0; max + 1];
    c[0] = 1.0;
    let mut top = 0;
    for k in 1..=n {
        top += k;
        for s in (k..=top).rev() {
            c[s] += c[s - k];
        }
    }
    c
}

/// Paired t-test on differences: (t statistic, two-sided p, df).
fn paired_t(d: &[f64]) -> (f64, f64, f64) {
    let n = d.len() as f64;
    let m = stats::mean(d);
    let se = (stats::variance(d) / n).sqrt();
    let df = n - 1.0;
    (m / se, stats::t_test_p(m, se, df), df)
}

/// McNemar's test from the discordant counts: the exact two-sided binomial
/// p-value min(1, 2 P(X <= min(b, c))), X ~ Bin(b + c, 1/2), and the
/// continuity-corrected chi-square (|b - c| - 1)^2 / (b + c) on 1 df.
/// Returns (exact, corrected); with no discordant pairs both p-values are 1.
pub fn mcnemar(treated_only: usize, comparison_only: usize) -> (TestResult, TestResult) {
    let (b, c) = (treated_only as u64, comparison_only as u64);
    let n = b + c;
    let exact_p = if n == 0 {
        1.0
    } else {
        (2.0 * stats::binom_cdf(b.min(c), n, 0.5)).min(1.0)
    };
    let (chi, chi_p) = if n == 0 {
        (0.0, 1.0)
    } else {
        let diff = (b as f64 - c as f64).abs() - 1.0;
        let x = diff * diff / n as f64;
        (x, stats::chi2_sf(x, 1.0))
    };
    (
        TestResult {
            name: "McNemar exact (binomial)".into(),
            statistic: b.min(c) as f64,
            p_value: exact_p,
        },
        TestResult {
            name: "McNemar chi-square, continuity-corrected".into(),
            statistic: chi,
            p_value: chi_p,
        },
    )
}

fn pooled_sd(a: &[f64], b: &[f64]) -> f64 {
    (0.5 * (stats::variance(a) + stats::variance(b))).sqrt()
}

/// The effect on the treated over matched sets. See the module table for
/// the method used in each case.
pub fn estimate(
    sets: &[SetOutcomes],
    kind: OutcomeKind,
    params: &EffectParams,
) -> Result<EffectEstimate> {
    check_level(params.level)?;
    validate_sets(sets, kind)?;
    let one_to_one = sets.iter().all(|s| s.controls.len() == 1) && !params.comparison_reused;
    let treated_values: Vec<f64> = sets.iter().map(|s| s.treated).collect();
    let control_values: Vec<f64> = sets
        .iter()
        .flat_map(|s| s.controls.iter().copied())
        .collect();
    let control_means: Vec<f64> = sets.iter().map(|s| stats::mean(&s.controls)).collect();
    let diffs: Vec<f64> = treated_values
        .iter()
        .zip(&control_means)
        .map(|(t, c)| t - c)
        .collect();
    let n = sets.len();
    let mean_treated = stats::mean(&treated_values);
    let mean_comparison = stats::mean(&control_means);
    let outcome_sd = pooled_sd(&treated_values, &control_values);
    let alpha = 1.0 - params.level;
    let est = stats::mean(&diffs);
    let mut out = EffectEstimate {
        n_sets: n,
        n_treated: n,
        n_comparison_units: control_values.len(),
        mean_treated,
        mean_comparison,
        outcome_sd,
        ..EffectEstimate::blank(kind, est, params.level)
    };
    let z = stats::norm_ppf(1.0 - alpha / 2.0);
    match (kind, one_to_one) {
        (OutcomeKind::Binary, true) => {
            let mut pc = PairCounts {
                both: 0,
                treated_only: 0,
                comparison_only: 0,
                neither: 0,
            };
            for s in sets {
                match (s.treated == 1.0, s.controls[0] == 1.0) {
                    (true, true) => pc.both += 1,
                    (true, false) => pc.treated_only += 1,
                    (false, true) => pc.comparison_only += 1,
                    (false, false) => pc.neither += 1,
                }
            }
            let (b, c, a) = (
                pc.treated_only as f64,
                pc.comparison_only as f64,
                pc.both as f64,
            );
            let nf = n as f64;
            // Var of (b - c)/n for a multinomial sample of pairs.
            let se = ((b + c) - (b - c) * (b - c) / nf).max(0.0).sqrt() / nf;
            out.ci_low = est - z * se;
            out.ci_high = est + z * se;
            out.method = "paired Wald interval for the risk difference of matched pairs".into();
            let (exact, corrected) = mcnemar(pc.treated_only, pc.comparison_only);
            out.p_value = exact.p_value;
            out.test = exact.name.clone();
            out.tests = vec![exact, corrected];
            out.risk_ratio = paired_risk_ratio(a, b, c, z);
            out.pair_counts = Some(pc);
        }
        (OutcomeKind::Continuous, true) => {
            let (t, tp, df) = paired_t(&diffs);
            let se = (stats::variance(&diffs) / n as f64).sqrt();
            let tq = stats::t_ppf(1.0 - alpha / 2.0, df);
            out.ci_low = est - tq * se;
            out.ci_high = est + tq * se;
            out.method = "paired t interval on the pair differences".into();
            let sr = signed_rank_test(&diffs)?;
            let sr_test = TestResult {
                name: signed_rank_name(&sr),
                statistic: sr.statistic,
                p_value: sr.p_value,
            };
            out.p_value = sr.p_value;
            out.test = sr_test.name.clone();
            out.tests = vec![
                sr_test,
                TestResult {
                    name: "paired t-test".into(),
                    statistic: t,
                    p_value: tp,
                },
            ];
        }
        (_, false) => {
            if params.bootstrap < 200 {
                return Err(Error::param(
                    "bootstrap",
                    format!(
                        "1:k matching or reuse uses a bootstrap over matched sets; ask for at least 200 resamples (2000 is usual); got {}",
                        params.bootstrap
                    ),
                ));
            }
            let boot = bootstrap_sets(sets, &diffs, kind, params);
            out.ci_low = stats::quantile_sorted(&boot.diffs, alpha / 2.0);
            out.ci_high = stats::quantile_sorted(&boot.diffs, 1.0 - alpha / 2.0);
            out.method = format!(
                "percentile bootstrap over matched sets ({} resamples, seed {}), set difference = treated minus mean of its comparison units",
                params.bootstrap, params.seed
            );
            out.bootstrap = Some(params.bootstrap);
            out.seed = Some(params.seed);
            let sr = signed_rank_test(&diffs)?;
            let sr_test = TestResult {
                name: format!("{} on set differences", signed_rank_name(&sr)),
                statistic: sr.statistic,
                p_value: sr.p_value,
            };
            out.p_value = sr.p_value;
            out.test = sr_test.name.clone();
            out.tests = vec![sr_test];
            if kind == OutcomeKind::Binary && mean_comparison > 0.0 && mean_treated > 0.0 {
                out.risk_ratio = Some(RatioEstimate {
                    estimate: mean_treated / mean_comparison,
                    ci_low: stats::quantile_sorted(&boot.ratios, alpha / 2.0),
                    ci_high: stats::quantile_sorted(&boot.ratios, 1.0 - alpha / 2.0),
                });
            }
        }
    }
    Ok(out)
}

fn signed_rank_name(sr: &SignedRank) -> String {
    if sr.exact {
        "Wilcoxon signed-rank, exact".into()
    } else {
        "Wilcoxon signed-rank, normal approximation with tie correction".into()
    }
}

/// Risk ratio of matched pairs, (a + b)/(a + c), with the delta-method
/// variance of its log, (b + c)/((a + b)(a + c)). None when either risk is 0.
fn paired_risk_ratio(a: f64, b: f64, c: f64, z: f64) -> Option<RatioEstimate> {
    let (p1, p0) = (a + b, a + c);
    if p1 <= 0.0 || p0 <= 0.0 {
        return None;
    }
    let rr = p1 / p0;
    let se = ((b + c) / (p1 * p0)).sqrt();
    Some(RatioEstimate {
        estimate: rr,
        ci_low: rr * libm::exp(-z * se),
        ci_high: rr * libm::exp(z * se),
    })
}

struct Boot {
    diffs: Vec<f64>,
    ratios: Vec<f64>,
}

/// Resample whole matched sets with replacement; returns sorted replicate
/// statistics. Risk-ratio replicates with a zero comparison risk are left
/// out (their ratio is undefined).
fn bootstrap_sets(
    sets: &[SetOutcomes],
    diffs: &[f64],
    kind: OutcomeKind,
    params: &EffectParams,
) -> Boot {
    let n = sets.len();
    let mut rng = Rng::new(params.seed);
    let mut out = Boot {
        diffs: Vec::with_capacity(params.bootstrap),
        ratios: Vec::new(),
    };
    let control_means: Vec<f64> = sets.iter().map(|s| stats::mean(&s.controls)).collect();
    for _ in 0..params.bootstrap {
        let (mut sd, mut st, mut sc) = (0.0, 0.0, 0.0);
        for _ in 0..n {
            let i = rng.below(n);
            sd += diffs[i];
            st += sets[i].treated;
            sc += control_means[i];
        }
        out.diffs.push(sd / n as f64);
        if kind == OutcomeKind::Binary && sc > 0.0 {
            out.ratios.push(st / sc);
        }
    }
    out.diffs.sort_by(|a, b| a.total_cmp(b));
    out.ratios.sort_by(|a, b| a.total_cmp(b));
    out
}

/// The unmatched (crude) estimate on the whole cohort: Welch's interval and
/// t-test for a continuous outcome; for a binary one, the Wald interval for
/// the risk difference, the Pearson chi-square test without continuity
/// correction, and the risk ratio with the log interval of Katz et al. (1978).
pub fn unmatched(
    y: &[f64],
    treated: &[bool],
    kind: OutcomeKind,
    level: f64,
) -> Result<EffectEstimate> {
    check_level(level)?;
    if y.len() != treated.len() {
        return Err(Error::param(
            "treated",
            format!(
                "needs one group flag per outcome value ({} vs {})",
                treated.len(),
                y.len()
            ),
        ));
    }
    for (i, &v) in y.iter().enumerate() {
        check_value(v, kind, || format!("row {}", i + 1))?;
    }
    let yt: Vec<f64> = y
        .iter()
        .zip(treated)
        .filter(|(_, &t)| t)
        .map(|(v, _)| *v)
        .collect();
    let yc: Vec<f64> = y
        .iter()
        .zip(treated)
        .filter(|(_, &t)| !t)
        .map(|(v, _)| *v)
        .collect();
    if yt.len() < 2 || yc.len() < 2 {
        return Err(Error::compute(format!(
            "an unmatched estimate needs at least 2 units in each group; got {} treated and {} comparison",
            yt.len(),
            yc.len()
        )));
    }
    let (n1, n0) = (yt.len() as f64, yc.len() as f64);
    let (m1, m0) = (stats::mean(&yt), stats::mean(&yc));
    let est = m1 - m0;
    let alpha = 1.0 - level;
    let mut out = EffectEstimate {
        n_treated: yt.len(),
        n_comparison_units: yc.len(),
        mean_treated: m1,
        mean_comparison: m0,
        outcome_sd: pooled_sd(&yt, &yc),
        ..EffectEstimate::blank(kind, est, level)
    };
    match kind {
        OutcomeKind::Continuous => {
            let (v1, v0) = (stats::variance(&yt) / n1, stats::variance(&yc) / n0);
            let se = (v1 + v0).sqrt();
            let df = (v1 + v0).powi(2) / (v1 * v1 / (n1 - 1.0) + v0 * v0 / (n0 - 1.0));
            let tq = stats::t_ppf(1.0 - alpha / 2.0, df);
            out.ci_low = est - tq * se;
            out.ci_high = est + tq * se;
            let t = est / se;
            let p = stats::t_test_p(est, se, df);
            out.method = "Welch t interval (Welch-Satterthwaite degrees of freedom)".into();
            out.test = "Welch t-test".into();
            out.p_value = p;
            out.tests = vec![TestResult {
                name: out.test.clone(),
                statistic: t,
                p_value: p,
            }];
        }
        OutcomeKind::Binary => {
            let z = stats::norm_ppf(1.0 - alpha / 2.0);
            let se = (m1 * (1.0 - m1) / n1 + m0 * (1.0 - m0) / n0).sqrt();
            out.ci_low = est - z * se;
            out.ci_high = est + z * se;
            let pooled = (m1 * n1 + m0 * n0) / (n1 + n0);
            let se0 = (pooled * (1.0 - pooled) * (1.0 / n1 + 1.0 / n0)).sqrt();
            let (chi, p) = if se0 == 0.0 {
                (0.0, 1.0)
            } else {
                let zz = est / se0;
                (zz * zz, stats::chi2_sf(zz * zz, 1.0))
            };
            out.method = "Wald interval for a difference of two independent proportions".into();
            out.test = "Pearson chi-square, no continuity correction".into();
            out.p_value = p;
            out.tests = vec![TestResult {
                name: out.test.clone(),
                statistic: chi,
                p_value: p,
            }];
            let (a, c) = (m1 * n1, m0 * n0);
            if a > 0.0 && c > 0.0 {
                let rr = m1 / m0;
                let se = (1.0 / a - 1.0 / n1 + 1.0 / c - 1.0 / n0).sqrt();
                out.risk_ratio = Some(RatioEstimate {
                    estimate: rr,
                    ci_low: rr * libm::exp(-z * se),
                    ci_high: rr * libm::exp(z * se),
                });
            }
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pairs(v: &[(f64, f64)]) -> Vec<SetOutcomes> {
        v.iter()
            .map(|&(t, c)| SetOutcomes {
                treated: t,
                controls: vec![c],
            })
            .collect()
    }

    #[test]
    fn exact_signed_rank_null_is_symmetric_and_sums_to_two_to_the_n() {
        let c = signed_rank_null_counts(10);
        assert_eq!(c.iter().sum::<f64>(), 1024.0);
        for s in 0..c.len() {
            assert_eq!(c[s], c[c.len() - 1 - s]);
        }
    }

    #[test]
    fn exact_signed_rank_small_case_by_hand() {
        // All 4 differences positive: R+ = 10, only 1 of 16 sign patterns
        // reaches it, so two-sided p = 2/16 (counting by hand).
        let r = signed_rank_test(&[1.0, 2.0, 3.0, 4.0]).unwrap();
        assert!(r.exact);
        assert!((r.p_value - 0.125).abs() < 1e-15);
    }

    #[test]
    fn binary_pairs_count_and_risk_difference() {
        let s = pairs(&[(1.0, 0.0), (1.0, 0.0), (0.0, 1.0), (1.0, 1.0), (0.0, 0.0)]);
        let e = estimate(&s, OutcomeKind::Binary, &EffectParams::default()).unwrap();
        let pc = e.pair_counts.unwrap();
        assert_eq!(
            (pc.both, pc.treated_only, pc.comparison_only, pc.neither),
            (1, 2, 1, 1)
        );
        assert!((e.estimate - 0.2).abs() < 1e-15);
        assert!(e.ci_low < 0.2 && e.ci_high > 0.2);
    }

    #[test]
    fn binary_rejects_non_binary_values() {
        let s = pairs(&[(1.0, 0.0), (2.0, 0.0)]);
        assert!(estimate(&s, OutcomeKind::Binary, &EffectParams::default()).is_err());
    }

    proptest::proptest! {
        #[test]
        fn never_panics_and_interval_holds_estimate(
            t in proptest::collection::vec(0u8..2, 2..40),
            c in proptest::collection::vec(0u8..2, 2..40),
            y in proptest::collection::vec(-1e3f64..1e3, 2..40),
        ) {
            let n = t.len().min(c.len());
            let s: Vec<SetOutcomes> = (0..n)
                .map(|i| SetOutcomes { treated: t[i] as f64, controls: vec![c[i] as f64] })
                .collect();
            let e = estimate(&s, OutcomeKind::Binary, &EffectParams::default()).unwrap();
            proptest::prop_assert!(e.ci_low <= e.estimate && e.estimate <= e.ci_high);
            proptest::prop_assert!((0.0..=1.0).contains(&e.p_value));
            let s: Vec<SetOutcomes> = y
                .windows(2)
                .map(|w| SetOutcomes { treated: w[0], controls: vec![w[1]] })
                .collect();
            if s.len() >= 2 {
                let e = estimate(&s, OutcomeKind::Continuous, &EffectParams::default()).unwrap();
                proptest::prop_assert!((0.0..=1.0).contains(&e.p_value));
            }
        }
    }

    #[test]
    fn bootstrap_is_deterministic_and_covers_estimate() {
        let mut r = Rng::new(5);
        let sets: Vec<SetOutcomes> = (0..80)
            .map(|_| SetOutcomes {
                treated: r.normal() + 1.0,
                controls: vec![r.normal(), r.normal()],
            })
            .collect();
        let p = EffectParams::default();
        let a = estimate(&sets, OutcomeKind::Continuous, &p).unwrap();
        let b = estimate(&sets, OutcomeKind::Continuous, &p).unwrap();
        assert_eq!(a, b);
        assert!(a.ci_low < a.estimate && a.estimate < a.ci_high);
        assert_eq!(a.n_comparison_units, 160);
        let few = EffectParams { bootstrap: 10, ..p };
        assert!(estimate(&sets, OutcomeKind::Continuous, &few).is_err());
    }
}
