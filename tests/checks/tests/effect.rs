//! Distributions, effect estimates and sensitivity bounds against values
//! computed by `tests/reference/effect.py` with scipy, statsmodels and
//! formulas written out independently in numpy; plus published worked
//! examples (each marked where it comes from memory).

use pairsight_checks::{floats, reference, rows};
use pairsight_core::effect::{self, EffectParams, OutcomeKind, SetOutcomes};
use pairsight_core::sensitivity::{self, SensitivityParams};
use pairsight_core::stats;
use serde_json::Value;

fn f(v: &Value, key: &str) -> f64 {
    v[key]
        .as_f64()
        .unwrap_or_else(|| panic!("{key} missing in {v}"))
}

/// |a - b| <= rel * max(|a|, |b|), with a tiny absolute floor for values that
/// underflow towards 0.
fn near(a: f64, b: f64, rel: f64, what: &str) {
    let ok = (a - b).abs() <= rel * a.abs().max(b.abs()) || (a - b).abs() < 1e-300;
    assert!(ok, "{what}: pairsight {a:e} vs reference {b:e}");
}

fn pairs(t: &[f64], c: &[f64]) -> Vec<SetOutcomes> {
    t.iter()
        .zip(c)
        .map(|(&t, &c)| SetOutcomes {
            treated: t,
            controls: vec![c],
        })
        .collect()
}

#[test]
fn distributions_match_scipy() {
    let r = reference("effect");
    let d = &r["distributions"];
    // scipy.stats.norm cdf and sf.
    for c in d["norm"].as_array().unwrap() {
        let x = f(c, "x");
        near(
            stats::norm_cdf(x),
            f(c, "cdf"),
            1e-13,
            &format!("norm cdf {x}"),
        );
        near(
            stats::norm_sf(x),
            f(c, "sf"),
            1e-13,
            &format!("norm sf {x}"),
        );
    }
    // scipy.stats.norm.ppf (AS 241 claims about 16 digits).
    for c in d["norm_ppf"].as_array().unwrap() {
        let p = f(c, "p");
        near(
            stats::norm_ppf(p),
            f(c, "x"),
            1e-14,
            &format!("norm ppf {p}"),
        );
    }
    // scipy.stats.t cdf, sf and ppf. At df = 1e5 the two implementations
    // differ by about 2e-12 relative, so the tolerance is 1e-11.
    for c in d["t"].as_array().unwrap() {
        let (x, df) = (f(c, "x"), f(c, "df"));
        near(
            stats::t_cdf(x, df),
            f(c, "cdf"),
            1e-11,
            &format!("t cdf {x} {df}"),
        );
        near(
            stats::t_sf(x, df),
            f(c, "sf"),
            1e-11,
            &format!("t sf {x} {df}"),
        );
    }
    for c in d["t_ppf"].as_array().unwrap() {
        let (p, df) = (f(c, "p"), f(c, "df"));
        near(
            stats::t_ppf(p, df),
            f(c, "x"),
            1e-11,
            &format!("t ppf {p} {df}"),
        );
    }
    // scipy.stats.chi2.sf and scipy.stats.f.sf / ppf.
    for c in d["chi2"].as_array().unwrap() {
        let (x, df) = (f(c, "x"), f(c, "df"));
        near(
            stats::chi2_sf(x, df),
            f(c, "sf"),
            1e-12,
            &format!("chi2 sf {x} {df}"),
        );
    }
    for c in d["f"].as_array().unwrap() {
        let (x, d1, d2) = (f(c, "x"), f(c, "d1"), f(c, "d2"));
        near(
            stats::f_sf(x, d1, d2),
            f(c, "sf"),
            1e-12,
            &format!("f sf {x} {d1} {d2}"),
        );
    }
    for c in d["f_ppf"].as_array().unwrap() {
        let (p, d1, d2) = (f(c, "p"), f(c, "d1"), f(c, "d2"));
        near(
            stats::f_ppf(p, d1, d2),
            f(c, "x"),
            1e-10,
            &format!("f ppf {p} {d1} {d2}"),
        );
    }
    // scipy.stats.binom pmf, cdf, sf, up to n = 100,000.
    for c in d["binom"].as_array().unwrap() {
        let (k, n, p) = (f(c, "k") as u64, f(c, "n") as u64, f(c, "p"));
        let w = format!("binom k={k} n={n} p={p}");
        near(stats::binom_pmf(k, n, p), f(c, "pmf"), 1e-11, &w);
        near(stats::binom_cdf(k, n, p), f(c, "cdf"), 1e-11, &w);
        near(stats::binom_sf(k, n, p), f(c, "sf"), 1e-11, &w);
    }
    // scipy.special.betainc, gammainc, gammaincc, gammaln.
    for c in d["betainc"].as_array().unwrap() {
        let (a, b, x) = (f(c, "a"), f(c, "b"), f(c, "x"));
        near(
            stats::beta_inc(a, b, x),
            f(c, "value"),
            1e-12,
            &format!("betainc {a} {b} {x}"),
        );
    }
    for c in d["gammainc"].as_array().unwrap() {
        let (a, x) = (f(c, "a"), f(c, "x"));
        near(
            stats::gamma_p(a, x),
            f(c, "p"),
            1e-12,
            &format!("gammainc {a} {x}"),
        );
        near(
            stats::gamma_q(a, x),
            f(c, "q"),
            1e-12,
            &format!("gammaincc {a} {x}"),
        );
    }
    for c in d["gammaln"].as_array().unwrap() {
        let x = f(c, "x");
        near(
            stats::ln_gamma(x),
            f(c, "value"),
            1e-13,
            &format!("gammaln {x}"),
        );
    }
    // scipy.stats.rankdata(method='average').
    let x = floats(&d["rank"]["x"]);
    assert_eq!(
        stats::rank_average(&x).unwrap(),
        floats(&d["rank"]["ranks"])
    );
}

fn check_binary(case: &Value) {
    let t = floats(&case["treated"]);
    let c = floats(&case["control"]);
    let p = EffectParams {
        level: f(case, "level"),
        ..EffectParams::default()
    };
    let e = effect::estimate(&pairs(&t, &c), OutcomeKind::Binary, &p).unwrap();
    let counts = floats(&case["counts"]);
    let pc = e.pair_counts.unwrap();
    assert_eq!(
        [pc.both, pc.treated_only, pc.comparison_only, pc.neither].map(|v| v as f64),
        [counts[0], counts[1], counts[2], counts[3]]
    );
    // Paired Wald interval, Agresti (2013) ch. 11, formula written in numpy.
    near(e.estimate, f(case, "estimate"), 1e-12, "risk difference");
    near(e.ci_low, f(case, "ci_low"), 1e-12, "RD ci_low");
    near(e.ci_high, f(case, "ci_high"), 1e-12, "RD ci_high");
    // statsmodels.stats.contingency_tables.mcnemar(exact=True).
    assert_eq!(e.tests[0].name, e.test);
    near(
        e.p_value,
        f(case, "mcnemar_exact_p"),
        1e-12,
        "McNemar exact p",
    );
    near(
        e.tests[0].statistic,
        f(case, "mcnemar_exact_stat"),
        0.0,
        "McNemar exact stat",
    );
    // statsmodels mcnemar(exact=False, correction=True).
    near(
        e.tests[1].statistic,
        f(case, "mcnemar_corrected_stat"),
        1e-12,
        "McNemar chi2",
    );
    near(
        e.tests[1].p_value,
        f(case, "mcnemar_corrected_p"),
        1e-12,
        "McNemar chi2 p",
    );
    // Matched-pairs risk ratio, delta-method log interval (Agresti 2013 ch. 11).
    let rr = e.risk_ratio.unwrap();
    near(rr.estimate, f(case, "rr"), 1e-12, "RR");
    near(rr.ci_low, f(case, "rr_low"), 1e-12, "RR low");
    near(rr.ci_high, f(case, "rr_high"), 1e-12, "RR high");
}

#[test]
fn binary_pairs_match_statsmodels_mcnemar() {
    let r = reference("effect");
    check_binary(&r["effect"]["binary_pairs"]);
    check_binary(&r["effect"]["binary_pairs_small"]);
}

fn check_continuous(case: &Value, exact: bool) {
    let t = floats(&case["treated"]);
    let c = floats(&case["control"]);
    let p = EffectParams {
        level: f(case, "level"),
        ..EffectParams::default()
    };
    let e = effect::estimate(&pairs(&t, &c), OutcomeKind::Continuous, &p).unwrap();
    // scipy.stats.ttest_rel and its confidence_interval.
    near(e.estimate, f(case, "estimate"), 1e-12, "mean difference");
    near(e.ci_low, f(case, "ci_low"), 1e-11, "paired t ci_low");
    near(e.ci_high, f(case, "ci_high"), 1e-11, "paired t ci_high");
    let tt = e.tests.iter().find(|t| t.name == "paired t-test").unwrap();
    near(tt.statistic, f(case, "t_stat"), 1e-12, "paired t");
    near(tt.p_value, f(case, "t_p"), 1e-11, "paired t p");
    // scipy.stats.wilcoxon(zero_method='wilcox', correction=False,
    // method='exact' for the untied sample, 'asymptotic' for the tied one).
    assert_eq!(e.test.contains("exact"), exact, "{}", e.test);
    near(
        e.tests[0].statistic,
        f(case, "wilcoxon_stat"),
        1e-12,
        "signed-rank stat",
    );
    near(e.p_value, f(case, "wilcoxon_p"), 1e-11, "signed-rank p");
    near(e.outcome_sd, f(case, "outcome_sd"), 1e-12, "outcome SD");
}

#[test]
fn continuous_pairs_match_scipy_wilcoxon_and_ttest_rel() {
    let r = reference("effect");
    check_continuous(&r["effect"]["continuous_exact"], true);
    check_continuous(&r["effect"]["continuous_zeros_exact"], true);
    check_continuous(&r["effect"]["continuous_ties"], false);
}

#[test]
fn matched_sets_bootstrap_agrees_with_scipy_bootstrap() {
    let r = reference("effect");
    let case = &r["effect"]["sets_continuous"];
    let t = floats(&case["treated"]);
    let ctl = rows(&case["controls"]);
    let sets: Vec<SetOutcomes> = t
        .iter()
        .zip(ctl)
        .map(|(&t, c)| SetOutcomes {
            treated: t,
            controls: c,
        })
        .collect();
    let p = EffectParams {
        bootstrap: 4000,
        ..EffectParams::default()
    };
    let e = effect::estimate(&sets, OutcomeKind::Continuous, &p).unwrap();
    near(
        e.estimate,
        f(case, "estimate"),
        1e-12,
        "mean of set differences",
    );
    // scipy.stats.bootstrap (percentile) uses its own generator, so the
    // limits can only agree to Monte Carlo error: within 0.15 bootstrap SE.
    let se = f(case, "boot_se");
    assert!(
        (e.ci_low - f(case, "boot_low")).abs() < 0.15 * se,
        "{} {}",
        e.ci_low,
        f(case, "boot_low")
    );
    assert!(
        (e.ci_high - f(case, "boot_high")).abs() < 0.15 * se,
        "{} {}",
        e.ci_high,
        f(case, "boot_high")
    );
    // scipy.stats.wilcoxon on the set differences (asymptotic, no correction).
    near(
        e.p_value,
        f(case, "wilcoxon_p"),
        1e-11,
        "signed-rank on set differences",
    );
    assert_eq!(e.n_comparison_units, 360);
}

#[test]
fn unmatched_estimates_match_scipy_and_statsmodels() {
    let r = reference("effect");
    let case = &r["effect"]["unmatched_continuous"];
    let (y1, y0) = (floats(&case["treated"]), floats(&case["control"]));
    let y: Vec<f64> = y1.iter().chain(&y0).copied().collect();
    let g: Vec<bool> = (0..y.len()).map(|i| i < y1.len()).collect();
    let e = effect::unmatched(&y, &g, OutcomeKind::Continuous, 0.95).unwrap();
    // scipy.stats.ttest_ind(equal_var=False) and its confidence_interval.
    near(e.estimate, f(case, "estimate"), 1e-12, "Welch estimate");
    near(e.ci_low, f(case, "ci_low"), 1e-11, "Welch ci_low");
    near(e.ci_high, f(case, "ci_high"), 1e-11, "Welch ci_high");
    near(e.tests[0].statistic, f(case, "t"), 1e-12, "Welch t");
    near(e.p_value, f(case, "p"), 1e-11, "Welch p");

    let case = &r["effect"]["unmatched_binary"];
    let (y1, y0) = (floats(&case["treated"]), floats(&case["control"]));
    let y: Vec<f64> = y1.iter().chain(&y0).copied().collect();
    let g: Vec<bool> = (0..y.len()).map(|i| i < y1.len()).collect();
    let e = effect::unmatched(&y, &g, OutcomeKind::Binary, 0.95).unwrap();
    // statsmodels confint_proportions_2indep(method='wald', compare='diff').
    near(e.estimate, f(case, "estimate"), 1e-12, "RD");
    near(e.ci_low, f(case, "ci_low"), 1e-12, "RD ci_low");
    near(e.ci_high, f(case, "ci_high"), 1e-12, "RD ci_high");
    // scipy.stats.chi2_contingency(correction=False).
    near(e.tests[0].statistic, f(case, "chi2"), 1e-12, "chi-square");
    near(e.p_value, f(case, "p"), 1e-12, "chi-square p");
    // statsmodels Table2x2.riskratio and riskratio_confint.
    let rr = e.risk_ratio.unwrap();
    near(rr.estimate, f(case, "rr"), 1e-12, "RR");
    near(rr.ci_low, f(case, "rr_low"), 1e-12, "RR low");
    near(rr.ci_high, f(case, "rr_high"), 1e-12, "RR high");
}

fn grid_params(max: f64) -> SensitivityParams {
    SensitivityParams {
        gamma_max: max,
        gamma_step: 0.25,
        alpha: 0.05,
    }
}

fn at_gamma(b: &sensitivity::RosenbaumBounds, g: f64) -> f64 {
    b.points
        .iter()
        .find(|p| (p.gamma - g).abs() < 1e-12)
        .unwrap_or_else(|| panic!("Gamma {g} not on the grid"))
        .p_upper
}

#[test]
fn mcnemar_bounds_match_scipy_binomial_tails() {
    let r = reference("effect");
    let s = &r["sensitivity"];
    let gammas = floats(&s["gammas"]);
    for (key, max) in [("mcnemar", 4.0), ("mcnemar_strong", 6.0)] {
        let m = &s[key];
        let (b, c) = (f(m, "b") as usize, f(m, "c") as usize);
        let bounds = sensitivity::mcnemar_bounds(b, c, &grid_params(max)).unwrap();
        let want = floats(&m["p_upper"]);
        let mut gs = gammas.clone();
        if key == "mcnemar_strong" {
            gs.extend([5.0, 6.0]);
        }
        // scipy.stats.binom.sf(T - 1, D, Gamma/(1+Gamma)).
        for (g, w) in gs.iter().zip(&want) {
            near(
                at_gamma(&bounds, *g),
                *w,
                1e-11,
                &format!("{key} Gamma {g}"),
            );
        }
    }
    // Critical Gamma: scipy.optimize.brentq on the same tail; ours is rounded
    // up to 0.01.
    let m = &s["mcnemar"];
    let bounds =
        sensitivity::mcnemar_bounds(f(m, "b") as usize, f(m, "c") as usize, &grid_params(4.0))
            .unwrap();
    let g = bounds.gamma_critical.unwrap();
    let want = f(m, "gamma_critical");
    assert!(g >= want && g - want <= 0.0101, "{g} vs {want}");
}

#[test]
fn mcnemar_bounds_published_example_from_memory() {
    // From memory: Rosenbaum (2002, Observational Studies, ch. 4) discusses
    // Hammond's (1964) matched smokers and non-smokers, with 122 discordant
    // pairs for lung-cancer death, 110 of them the smoker; the conclusion
    // holds at Gamma = 5 and no longer at Gamma = 6 (alpha 0.05).
    let p = SensitivityParams {
        gamma_max: 8.0,
        gamma_step: 1.0,
        alpha: 0.05,
    };
    let b = sensitivity::mcnemar_bounds(110, 12, &p).unwrap();
    assert!(at_gamma(&b, 5.0) < 0.05 && at_gamma(&b, 6.0) > 0.05);
    let g = b.gamma_critical.unwrap();
    assert!(g > 5.0 && g < 6.0, "{g}");
}

#[test]
fn signed_rank_bounds_match_independent_numpy_formula() {
    let r = reference("effect");
    let s = &r["sensitivity"];
    let gammas = floats(&s["gammas"]);
    for key in ["signed_rank_no_ties", "signed_rank_ties"] {
        let d = floats(&s[key]["d"]);
        let b = sensitivity::signed_rank_bounds(&d, &grid_params(4.0)).unwrap();
        // numpy, Rosenbaum (2002) ch. 4 normal approximation (closed forms
        // for the untied sample, sums of average ranks for the tied one).
        for (g, w) in gammas.iter().zip(floats(&s[key]["p_upper"])) {
            near(at_gamma(&b, *g), w, 1e-11, &format!("{key} Gamma {g}"));
        }
        // At Gamma = 1 the bound is the one-sided signed-rank p-value of
        // scipy.stats.wilcoxon(method='asymptotic', correction=False).
        near(
            b.points[0].p_upper,
            f(&s[key], "scipy_one_sided"),
            1e-11,
            key,
        );
    }
}

#[test]
fn e_value_formula_and_published_example() {
    let r = reference("effect");
    // The formula RR + sqrt(RR (RR - 1)) of VanderWeele & Ding (2017),
    // evaluated in numpy.
    for c in r["sensitivity"]["evalue"].as_array().unwrap() {
        near(
            sensitivity::e_value_rr(f(c, "rr")),
            f(c, "e"),
            1e-14,
            "E-value",
        );
    }
    // From memory: VanderWeele & Ding (2017, Ann Intern Med 167:268) work an
    // example with RR 3.9 (95% CI 1.8 to 8.7) and report E-values of 7.2 for
    // the estimate and 3.0 for the lower limit.
    let e = sensitivity::e_value(3.9, 1.8, 8.7).unwrap();
    assert!((e.e_point - 7.2).abs() < 0.1, "{}", e.e_point);
    assert!((e.e_limit - 3.0).abs() < 1e-12, "{}", e.e_limit);
}
