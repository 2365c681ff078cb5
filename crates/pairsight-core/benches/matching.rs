//! Matching benchmarks: dense optimal n x n (n = 500, 1000, 2000; uniform
//! costs and Euclidean distances between 5-dimensional points) and greedy
//! 1:1 matching of 1,000,000 rows on the logit score with a 0.2 caliper.
//! `tests/bench/engine.py` writes the same problems for scipy and compares.

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion};
use pairsight_core::distance::{FnDistance, ScoreDistance};
use pairsight_core::matching::{match_units, Algorithm, MatchInput, MatchParams};

mod problems;

fn dense(c: &mut Criterion) {
    let mut g = c.benchmark_group("optimal_dense");
    g.sample_size(10);
    for n in [500usize, 1000, 2000] {
        for kind in ["uniform", "points"] {
            let cost = problems::load(&format!("lap_{kind}_{n}"), n * n).unwrap_or_else(|| {
                let mut r = pairsight_core::rng::Rng::new(n as u64);
                if kind == "uniform" {
                    (0..n * n).map(|_| r.uniform()).collect()
                } else {
                    let p: Vec<f64> = (0..2 * n * 5).map(|_| r.normal()).collect();
                    (0..n * n)
                        .map(|k| {
                            let (i, j) = (k / n, n + k % n);
                            (0..5)
                                .map(|d| (p[i * 5 + d] - p[j * 5 + d]).powi(2))
                                .sum::<f64>()
                                .sqrt()
                        })
                        .collect()
                }
            });
            // Rows 0..n treated, n..2n comparison; cost[t][c - n].
            let treated: Vec<bool> = (0..2 * n).map(|i| i < n).collect();
            let logit = vec![0.0; 2 * n];
            let dist = FnDistance::new(|t: usize, c: usize| cost[t * n + (c - n)]);
            let params = MatchParams {
                caliper: None,
                controls: 1,
                reuse: false,
                algorithm: Algorithm::Optimal,
            };
            g.bench_function(format!("{kind}_{n}"), |b| {
                b.iter(|| {
                    let input = MatchInput {
                        treated: &treated,
                        logit: &logit,
                        exact: None,
                        distance: &dist,
                    };
                    black_box(match_units(&input, &params).map(|m| m.total_distance))
                })
            });
        }
    }
    g.finish();
}

fn greedy(c: &mut Criterion) {
    let n = 1_000_000;
    let logit = problems::load_or("greedy_logit", n, 1, |r| r.normal());
    let flags = problems::load_or("greedy_treated", n, 2, |r| {
        if r.bernoulli(0.3) {
            1.0
        } else {
            0.0
        }
    });
    let treated: Vec<bool> = flags.iter().map(|&v| v == 1.0).collect();
    // Treated units sit higher on the score, as in a real cohort.
    let logit: Vec<f64> = logit
        .iter()
        .zip(&treated)
        .map(|(&v, &t)| if t { v + 0.5 } else { v })
        .collect();
    let dist = ScoreDistance::new(&logit);
    let params = MatchParams {
        caliper: Some(0.2),
        controls: 1,
        reuse: false,
        algorithm: Algorithm::Greedy,
    };
    let mut g = c.benchmark_group("greedy");
    g.sample_size(10);
    g.bench_function("score_1000000", |b| {
        b.iter(|| {
            let input = MatchInput {
                treated: &treated,
                logit: &logit,
                exact: None,
                distance: &dist,
            };
            black_box(match_units(&input, &params).map(|m| m.sets.len()))
        })
    });
    g.finish();
}

criterion_group!(benches, dense, greedy);
criterion_main!(benches);
