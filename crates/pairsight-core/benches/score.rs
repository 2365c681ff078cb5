//! Score-model benchmark: logistic regression on 100,000 rows x 30 terms.
//! `tests/bench/engine.py` writes the same problem for statsmodels and
//! compares.

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion};
use ndarray::Array2;
use pairsight_core::score::{fit_logistic, sigmoid, LogitParams};

mod problems;

fn logistic(c: &mut Criterion) {
    let (n, p) = (100_000usize, 30usize);
    let x = problems::load_or("logit_x", n * p, 3, |r| r.normal());
    let y = problems::load("logit_y", n).unwrap_or_else(|| {
        let mut r = pairsight_core::rng::Rng::new(4);
        (0..n)
            .map(|i| {
                let e: f64 = -0.5 + (0..p).map(|j| 0.1 * x[i * p + j]).sum::<f64>();
                if r.bernoulli(sigmoid(e)) {
                    1.0
                } else {
                    0.0
                }
            })
            .collect()
    });
    let x = Array2::from_shape_vec((n, p), x).expect("shape");
    let treated: Vec<bool> = y.iter().map(|&v| v == 1.0).collect();
    let params = LogitParams::default();
    let mut g = c.benchmark_group("logistic");
    g.sample_size(10);
    g.bench_function("100000x30", |b| {
        b.iter(|| black_box(fit_logistic(x.view(), &treated, &params).map(|f| f.iterations)))
    });
    g.finish();
}

criterion_group!(benches, logistic);
criterion_main!(benches);
