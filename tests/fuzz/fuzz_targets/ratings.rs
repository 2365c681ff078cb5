//! Any bytes as a reviewer's ratings file, merged against a fixed review
//! round: rows read or reported, never a panic; every rating kept is on the
//! scale and names a pair of the round.
#![no_main]

use libfuzzer_sys::fuzz_target;
use pairsight_core::review::{
    draw_round, merge_ratings, DesignSets, RatingsFile, ReviewParams, Round, SetRecord,
};
use std::sync::OnceLock;

fn round() -> &'static Round {
    static ROUND: OnceLock<Round> = OnceLock::new();
    ROUND.get_or_init(|| {
        let designs: Vec<DesignSets> = ["a", "b"]
            .iter()
            .enumerate()
            .map(|(k, d)| DesignSets {
                design: d.to_string(),
                sets: (0..8)
                    .map(|i| SetRecord {
                        set: i,
                        treated_row: 2 * i,
                        comparison_row: 2 * i + 1 + 16 * k,
                        distance: 0.1 * i as f64,
                    })
                    .collect(),
            })
            .collect();
        draw_round(
            &designs,
            &ReviewParams {
                sets_per_design: 5,
                ..ReviewParams::default()
            },
        )
        .expect("a round")
    })
}

fuzz_target!(|data: &[u8]| {
    let round = round();
    let merged = merge_ratings(
        round,
        &[RatingsFile {
            name: "fuzz.csv".to_string(),
            bytes: data.to_vec(),
        }],
    );
    for r in &merged.ratings {
        assert!(round.scale.contains(r.rating));
        assert!(round.items.iter().any(|it| it.pair_key == r.pair_key));
    }
});
