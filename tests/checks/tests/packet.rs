//! The results of a rated review round (`packet::review_results`): the
//! merged ratings files of three reviewers, some pairs skipped, become
//! kappa, alpha and ICC computed by outside libraries in
//! `tests/reference/packet.py` (scikit-learn, the PyPI package
//! krippendorff, pingouin). This checks the arrangement of the ratings
//! (which pairs each statistic uses, reviewer order, missing ratings); the
//! statistics themselves are checked in `agreement.rs`.

use pairsight_checks::{close, reference};
use pairsight_core::packet::{review_results, ResultsParams, RoundKey, KEY_FORMAT};
use pairsight_core::review::{
    merge_ratings, write_ratings_csv, KeyEntry, RatingRow, RatingScale, RatingsFile, Round,
    RoundItem, Side,
};

fn near(got: f64, want: f64, tol: f64, what: &str) {
    assert!(
        (got - want).abs() <= tol,
        "{what}: pairsight {got}, reference {want}"
    );
}

#[test]
fn round_results_match_scikit_learn_krippendorff_and_pingouin() {
    let r = reference("packet");
    let pairs = r["pairs"].as_array().unwrap();
    let items: Vec<RoundItem> = pairs
        .iter()
        .enumerate()
        .map(|(i, p)| RoundItem {
            pair_key: p["pair_key"].as_str().unwrap().to_string(),
            left_row: i,
            right_row: 1000 + i,
        })
        .collect();
    let key: Vec<KeyEntry> = pairs
        .iter()
        .enumerate()
        .map(|(i, p)| KeyEntry {
            pair_key: p["pair_key"].as_str().unwrap().to_string(),
            design: p["design"].as_str().unwrap().to_string(),
            set: i,
            treated_row: i,
            comparison_row: 1000 + i,
            treated_side: Side::Left,
            distance: p["distance"].as_f64().unwrap(),
        })
        .collect();
    let round = Round {
        round_id: "R-REFERENCE0".into(),
        scale: RatingScale::default(),
        show_fields: vec![],
        items,
        key,
    };
    // One ratings file per reviewer, written and read back as a packet's export would be.
    let files: Vec<RatingsFile> = r["reviewers"]
        .as_array()
        .unwrap()
        .iter()
        .map(|who| {
            let who = who.as_str().unwrap();
            let rows: Vec<RatingRow> = r["ratings"]
                .as_array()
                .unwrap()
                .iter()
                .filter(|x| x["reviewer"] == who)
                .map(|x| RatingRow {
                    round_id: round.round_id.clone(),
                    pair_key: x["pair_key"].as_str().unwrap().into(),
                    reviewer: who.into(),
                    rating: x["rating"].as_i64().unwrap(),
                    comment: String::new(),
                    time: "2025-01-07T12:00:00.000Z".into(),
                })
                .collect();
            RatingsFile {
                name: format!("ratings-{who}.csv"),
                bytes: write_ratings_csv(&rows).unwrap().into_bytes(),
            }
        })
        .collect();
    let merged = merge_ratings(&round, &files).strict().unwrap();
    let key = RoundKey {
        format: KEY_FORMAT.into(),
        caution: String::new(),
        round,
        reviewers: vec![],
        pairs: vec![],
        measures: vec![],
    };
    let res = review_results(&key, &merged, &ResultsParams::default()).unwrap();
    let ag = &res.agreement;
    assert_eq!(ag.pairs_rated as u64, r["pairs_rated"].as_u64().unwrap());
    assert_eq!(
        ag.pairs_complete as u64,
        r["pairs_complete"].as_u64().unwrap()
    );

    // scikit-learn cohen_kappa_score on the pairs both reviewers rated.
    let kappas = r["kappa"].as_array().unwrap();
    assert_eq!(ag.kappas.len(), kappas.len());
    for (got, want) in ag.kappas.iter().zip(kappas) {
        assert_eq!(got.first, want["first"].as_str().unwrap());
        assert_eq!(got.second, want["second"].as_str().unwrap());
        assert_eq!(got.pairs as u64, want["n"].as_u64().unwrap());
        let what = format!("{} and {}", got.first, got.second);
        near(
            got.linear.as_ref().unwrap().kappa,
            want["linear"].as_f64().unwrap(),
            1e-10,
            &what,
        );
        near(
            got.quadratic.as_ref().unwrap().kappa,
            want["quadratic"].as_f64().unwrap(),
            1e-10,
            &what,
        );
    }

    // krippendorff.alpha with missing ratings (reviewers x units, NaN missing).
    let a = ag.alpha_ordinal.as_ref().unwrap();
    near(
        a.alpha,
        r["alpha"]["ordinal"].as_f64().unwrap(),
        1e-10,
        "ordinal alpha",
    );
    assert_eq!(a.n_units as u64, r["alpha_units"].as_u64().unwrap());
    let a = ag.alpha_interval.as_ref().unwrap();
    near(
        a.alpha,
        r["alpha"]["interval"].as_f64().unwrap(),
        1e-10,
        "interval alpha",
    );

    // pingouin.intraclass_corr on the complete pairs (its interval rounded to 2 decimals).
    let icc = ag.icc.as_ref().unwrap();
    for (got, want) in icc.rows.iter().zip(r["icc"].as_array().unwrap()) {
        assert!(
            close(got.icc, want["icc"].as_f64().unwrap(), 1e-9),
            "{}",
            got.label
        );
        let ci = want["ci"].as_array().unwrap();
        near(
            got.ci_low,
            ci[0].as_f64().unwrap(),
            0.005 + 1e-9,
            &got.label,
        );
        near(
            got.ci_high,
            ci[1].as_f64().unwrap(),
            0.005 + 1e-9,
            &got.label,
        );
    }
    assert_eq!(res.comparison.designs.len(), 2);
}
