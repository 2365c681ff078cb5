//! The design comparison of a review round against values computed by
//! `tests/reference/review.py`: scipy's `ttest_1samp(...).confidence_interval`
//! (t interval of a design's mean), statsmodels' `proportion_confint(method=
//! "wilson")` (share rated alike), scipy's `spearmanr` (distance against
//! rating, with ties), scipy's `ttest_ind(equal_var=False)` (Welch contrast:
//! statistic, df, p-value, interval) and statsmodels' `multipletests(method=
//! "holm")`, on an invented rated round generated there with a fixed seed.

use pairsight_checks::reference;
use pairsight_core::review::{
    design_comparison, ComparisonParams, DistanceMeasure, KeyEntry, MergedRatings, Rating,
    RatingScale, Round, RoundItem, Side,
};
use serde_json::Value;

fn f(v: &Value, key: &str) -> f64 {
    v[key]
        .as_f64()
        .unwrap_or_else(|| panic!("{key} missing in {v}"))
}

fn s<'a>(v: &'a Value, key: &str) -> &'a str {
    v[key]
        .as_str()
        .unwrap_or_else(|| panic!("{key} missing in {v}"))
}

fn near(a: f64, b: f64, tol: f64, what: &str) {
    assert!(
        (a - b).abs() <= tol * a.abs().max(b.abs()).max(1e-300) || (a - b).abs() < 1e-14,
        "{what}: pairsight {a:e} vs reference {b:e}"
    );
}

/// The round and ratings of the reference file, in pairsight's types.
fn round_and_ratings(r: &Value) -> (Round, MergedRatings, Vec<DistanceMeasure>) {
    let mut items: Vec<RoundItem> = Vec::new();
    let mut key = Vec::new();
    for (i, e) in r["key"].as_array().unwrap().iter().enumerate() {
        let k = s(e, "pair_key").to_string();
        if !items.iter().any(|it| it.pair_key == k) {
            items.push(RoundItem {
                pair_key: k.clone(),
                left_row: 2 * i,
                right_row: 2 * i + 1,
            });
        }
        key.push(KeyEntry {
            pair_key: k,
            design: s(e, "design").to_string(),
            set: i,
            treated_row: 2 * i,
            comparison_row: 2 * i + 1,
            treated_side: Side::Left,
            distance: f(e, "distance"),
        });
    }
    let round = Round {
        round_id: "R-REFERENCE0".into(),
        scale: RatingScale::default(),
        show_fields: Vec::new(),
        items,
        key,
    };
    let ratings = r["ratings"]
        .as_array()
        .unwrap()
        .iter()
        .enumerate()
        .map(|(i, x)| Rating {
            pair_key: s(x, "pair_key").to_string(),
            reviewer: s(x, "reviewer").to_string(),
            rating: x["rating"].as_i64().unwrap(),
            comment: String::new(),
            time: "2025-03-04T10:00:00Z".into(),
            time_ms: 0,
            file: "reference".into(),
            row: i + 2,
        })
        .collect();
    let merged = MergedRatings {
        round_id: round.round_id.clone(),
        ratings,
        issues: Vec::new(),
    };
    let measures = r["measures"]
        .as_array()
        .unwrap()
        .iter()
        .map(|m| DistanceMeasure {
            name: s(m, "name").to_string(),
            values: m["values"]
                .as_array()
                .unwrap()
                .iter()
                .map(|kv| (kv[0].as_str().unwrap().to_string(), kv[1].as_f64().unwrap()))
                .collect(),
        })
        .collect();
    (round, merged, measures)
}

#[test]
fn design_comparison_matches_scipy_and_statsmodels() {
    let r = reference("review");
    let (round, merged, measures) = round_and_ratings(&r);
    let level = r["level"].as_i64().unwrap();
    for (conf_text, exp) in r["expected"].as_object().unwrap() {
        let confidence: f64 = conf_text.parse().unwrap();
        let c = design_comparison(
            &round,
            &merged,
            &measures,
            &ComparisonParams { confidence, level },
        )
        .unwrap();
        let designs = exp["designs"].as_array().unwrap();
        assert_eq!(c.designs.len(), designs.len());
        for (got, want) in c.designs.iter().zip(designs) {
            let w = |k| f(want, k);
            let tag = |k: &str| format!("{} {k} at {confidence}", got.design);
            assert_eq!(got.design, s(want, "design"));
            assert_eq!(got.pairs_drawn as f64, w("pairs_drawn"));
            assert_eq!(got.pairs_rated as f64, w("n"));
            // numpy mean and std(ddof=1) of the pair means.
            near(got.mean.unwrap(), w("mean"), 1e-12, &tag("mean"));
            near(got.sd.unwrap(), w("sd"), 1e-12, &tag("sd"));
            // scipy.stats.ttest_1samp(...).confidence_interval.
            near(got.ci_low.unwrap(), w("ci_low"), 1e-10, &tag("ci_low"));
            near(got.ci_high.unwrap(), w("ci_high"), 1e-10, &tag("ci_high"));
            // statsmodels proportion_confint(method="wilson").
            near(got.share_alike.unwrap(), w("share"), 1e-12, &tag("share"));
            near(
                got.share_ci_low.unwrap(),
                w("share_low"),
                1e-9,
                &tag("share_low"),
            );
            near(
                got.share_ci_high.unwrap(),
                w("share_high"),
                1e-9,
                &tag("share_high"),
            );
            // scipy.stats.spearmanr: rho and its two-sided p-value.
            let rho = got.distance_vs_rating.as_ref().unwrap();
            near(rho.rho, w("rho"), 1e-12, &tag("rho"));
            near(rho.p_value, w("rho_p"), 1e-8, &tag("rho_p"));
        }
        let contrasts = exp["contrasts"].as_array().unwrap();
        assert_eq!(c.contrasts.len(), contrasts.len());
        for (got, want) in c.contrasts.iter().zip(contrasts) {
            let tag = |k: &str| format!("{} vs {} {k} at {confidence}", got.first, got.second);
            assert_eq!(
                (got.first.as_str(), got.second.as_str()),
                (s(want, "first"), s(want, "second"))
            );
            // scipy.stats.ttest_ind(equal_var=False): statistic, df, p-value, interval.
            near(got.t.unwrap(), f(want, "t"), 1e-12, &tag("t"));
            near(got.df.unwrap(), f(want, "df"), 1e-12, &tag("df"));
            near(got.p_value.unwrap(), f(want, "p"), 1e-8, &tag("p"));
            near(
                got.ci_low.unwrap(),
                f(want, "ci_low"),
                1e-10,
                &tag("ci_low"),
            );
            near(
                got.ci_high.unwrap(),
                f(want, "ci_high"),
                1e-10,
                &tag("ci_high"),
            );
            // statsmodels multipletests(method="holm").
            near(got.p_holm.unwrap(), f(want, "p_holm"), 1e-8, &tag("p_holm"));
        }
        // The two pairs that "notes" shares with "tight" are counted.
        let shared = c
            .contrasts
            .iter()
            .find(|k| k.first == "tight" && k.second == "notes")
            .unwrap();
        assert_eq!(shared.shared_pairs, 2);
        for (got, want) in c.measures.iter().zip(exp["measures"].as_array().unwrap()) {
            // scipy.stats.spearmanr with many ties in the distance.
            let corr = got.correlation.as_ref().unwrap();
            assert_eq!(corr.n as f64, f(want, "n"));
            near(corr.rho, f(want, "rho"), 1e-12, "measure rho");
            near(corr.p_value, f(want, "p"), 1e-8, "measure p");
        }
    }
}
