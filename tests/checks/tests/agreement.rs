//! Reviewer agreement against values computed by
//! `tests/reference/agreement.py` with scikit-learn, statsmodels, the PyPI
//! package krippendorff, pingouin and scipy, plus a published worked example.

use ndarray::Array2;
use pairsight_checks::{floats, reference, rows};
use pairsight_core::agreement::{self, AlphaMetric, AlphaParams, KappaParams, KappaWeights};
use serde_json::Value;

fn f(v: &Value, key: &str) -> f64 {
    v[key]
        .as_f64()
        .unwrap_or_else(|| panic!("{key} missing in {v}"))
}

fn near(a: f64, b: f64, tol: f64, what: &str) {
    assert!(
        (a - b).abs() <= tol,
        "{what}: pairsight {a} vs reference {b}"
    );
}

/// A units x reviewers matrix with JSON null as a missing rating (NaN).
fn matrix(v: &Value) -> Array2<f64> {
    let rows: Vec<Vec<f64>> = v
        .as_array()
        .unwrap()
        .iter()
        .map(|r| {
            r.as_array()
                .unwrap()
                .iter()
                .map(|x| x.as_f64().unwrap_or(f64::NAN))
                .collect()
        })
        .collect();
    let (n, k) = (rows.len(), rows[0].len());
    Array2::from_shape_vec((n, k), rows.into_iter().flatten().collect()).unwrap()
}

#[test]
fn kappa_matches_scikit_learn_and_statsmodels() {
    let r = reference("agreement");
    for c in r["kappa"].as_array().unwrap() {
        let weights = match c["weights"].as_str().unwrap() {
            "unweighted" => KappaWeights::Unweighted,
            "linear" => KappaWeights::Linear,
            _ => KappaWeights::Quadratic,
        };
        let p = KappaParams {
            weights,
            ..KappaParams::default()
        };
        let k = agreement::cohen_kappa(&floats(&c["a"]), &floats(&c["b"]), &p).unwrap();
        let w = format!("{weights:?}");
        // scikit-learn cohen_kappa_score(labels=[1..5], weights=None/'linear'/'quadratic').
        near(k.kappa, f(c, "kappa"), 1e-12, &w);
        // statsmodels cohens_kappa(wt=...) std_kappa and std_kappa0.
        near(k.se, f(c, "sm_se"), 1e-12, &w);
        near(k.se_null, f(c, "sm_se_null"), 1e-12, &w);
        // Fleiss, Cohen & Everitt (1969) variances written out in numpy.
        near(k.se, f(c, "se"), 1e-12, &w);
        near(k.se_null, f(c, "se_null"), 1e-12, &w);
        assert!(k.ci_low < k.kappa && k.kappa < k.ci_high);
    }
}

#[test]
fn alpha_matches_krippendorff_package_with_missing_ratings() {
    let r = reference("agreement");
    for (i, c) in r["alpha"].as_array().unwrap().iter().enumerate() {
        let m = matrix(&c["ratings"]);
        for (metric, key) in [
            (AlphaMetric::Ordinal, "ordinal"),
            (AlphaMetric::Interval, "interval"),
            (AlphaMetric::Nominal, "nominal"),
        ] {
            let p = AlphaParams {
                metric,
                bootstrap: 0,
                ..AlphaParams::default()
            };
            let a = agreement::krippendorff_alpha(m.view(), &p).unwrap();
            // PyPI krippendorff.alpha(level_of_measurement=key).
            near(a.alpha, f(c, key), 1e-12, &format!("case {i} {key}"));
        }
    }
}

#[test]
fn alpha_published_worked_example_from_memory() {
    // Krippendorff (2011), "Computing Krippendorff's alpha-reliability":
    // 4 observers x 12 units with missing values; the paper reports
    // nominal 0.743, ordinal 0.815, interval 0.849. Data and values recalled
    // from memory; the PyPI krippendorff package's values on the same matrix
    // (agreement.py) are checked to full precision.
    let nan = f64::NAN;
    let by_observer = [
        [1., 2., 3., 3., 2., 1., 4., 1., 2., nan, nan, nan],
        [1., 2., 3., 3., 2., 2., 4., 1., 2., 5., nan, 3.],
        [nan, 3., 3., 3., 2., 3., 4., 2., 2., 5., 1., nan],
        [1., 2., 3., 3., 2., 4., 4., 1., 2., 5., 1., nan],
    ];
    let m = Array2::from_shape_fn((12, 4), |(u, o)| by_observer[o][u]);
    let pkg = &reference("agreement")["alpha_krippendorff_2011"];
    for (metric, want, key) in [
        (AlphaMetric::Nominal, 0.743, "nominal"),
        (AlphaMetric::Ordinal, 0.815, "ordinal"),
        (AlphaMetric::Interval, 0.849, "interval"),
    ] {
        let p = AlphaParams {
            metric,
            bootstrap: 500,
            ..AlphaParams::default()
        };
        let a = agreement::krippendorff_alpha(m.view(), &p).unwrap();
        near(a.alpha, want, 0.0005, &format!("{metric:?}, published"));
        near(
            a.alpha,
            f(pkg, key),
            1e-12,
            &format!("{metric:?}, krippendorff package"),
        );
        assert_eq!(
            a.n_units, 11,
            "unit 12 has a single rating and is not pairable"
        );
        let (lo, hi) = (a.ci_low.unwrap(), a.ci_high.unwrap());
        assert!(
            lo < a.alpha && a.alpha <= hi + 1e-12,
            "{lo} {} {hi}",
            a.alpha
        );
    }
}

#[test]
fn icc_matches_pingouin() {
    let r = reference("agreement");
    for (i, c) in r["icc"].as_array().unwrap().iter().enumerate() {
        let m = Array2::from_shape_vec(
            (
                c["ratings"].as_array().unwrap().len(),
                c["ratings"][0].as_array().unwrap().len(),
            ),
            rows(&c["ratings"]).into_iter().flatten().collect(),
        )
        .unwrap();
        let t = agreement::intraclass(m.view(), 0.95).unwrap();
        let keys = ["ICC1", "ICC2", "ICC3", "ICC1k", "ICC2k", "ICC3k"];
        for (row, key) in t.rows.iter().zip(keys) {
            let want = &c["rows"][key];
            let w = format!("case {i} {}", row.label);
            // pingouin.intraclass_corr: ICC, F, df1, df2, pval.
            near(row.icc, f(want, "icc"), 1e-12, &w);
            near(row.f, f(want, "f"), 1e-10, &w);
            near(row.df1, f(want, "df1"), 0.0, &w);
            near(row.df2, f(want, "df2"), 0.0, &w);
            near(row.p_value, f(want, "p"), 1e-12, &w);
            // pingouin rounds its interval to 2 decimals.
            let ci = floats(&want["ci_pingouin"]);
            near(row.ci_low, ci[0], 0.005 + 1e-9, &w);
            near(row.ci_high, ci[1], 0.005 + 1e-9, &w);
            // Unrounded: Shrout & Fleiss (1979) / McGraw & Wong (1996)
            // formulas in numpy with scipy.stats.f quantiles.
            let ci = floats(&want["ci_numpy"]);
            near(row.ci_low, ci[0], 1e-9, &w);
            near(row.ci_high, ci[1], 1e-9, &w);
        }
    }
}

#[test]
fn spearman_matches_scipy() {
    let r = reference("agreement");
    for c in r["spearman"].as_array().unwrap() {
        let s = agreement::spearman(&floats(&c["x"]), &floats(&c["y"])).unwrap();
        // scipy.stats.spearmanr (average ranks, t-approximation p-value).
        near(s.rho, f(c, "rho"), 1e-12, "rho");
        near(s.p_value, f(c, "p"), 1e-12 + 1e-10 * f(c, "p"), "p");
    }
}

#[test]
fn rating_summary_matches_scipy_and_statsmodels() {
    let r = reference("agreement");
    let c = &r["summary"];
    let s = agreement::rating_summary(&floats(&c["ratings"]), 4.0, 0.95).unwrap();
    // scipy.stats.t.interval for the mean.
    near(s.mean, f(c, "mean"), 1e-12, "mean");
    let ci = floats(&c["ci"]);
    near(s.ci_low, ci[0], 1e-11, "mean low");
    near(s.ci_high, ci[1], 1e-11, "mean high");
    // statsmodels proportion_confint(method='wilson').
    near(s.share_at_or_above, f(c, "share"), 1e-15, "share");
    let ci = floats(&c["share_ci"]);
    near(s.share_ci_low, ci[0], 1e-12, "share low");
    near(s.share_ci_high, ci[1], 1e-12, "share high");
}
