//! The few distribution functions and rank statistics the design comparison
//! needs, kept private to this module (the crate's shared statistics live
//! elsewhere; this copy keeps the review self-contained).

/// ln Γ(x) for x > 0 by the Lanczos approximation with g = 7 and nine
/// coefficients (Lanczos 1964, SIAM J Numer Anal B 1:86-96; coefficient set
/// as published by Godfrey and widely reproduced, written here from memory
/// and checked in the tests against exact values of Γ).
pub(crate) fn ln_gamma(x: f64) -> f64 {
    const G: f64 = 7.0;
    const C: [f64; 9] = [
        0.999_999_999_999_809_9,
        676.520_368_121_885_1,
        -1_259.139_216_722_402_8,
        771.323_428_777_653_1,
        -176.615_029_162_140_6,
        12.507_343_278_686_905,
        -0.138_571_095_265_720_12,
        9.984_369_578_019_572e-6,
        1.505_632_735_149_311_6e-7,
    ];
    if x < 0.5 {
        // Reflection: Γ(x)Γ(1-x) = π / sin(πx).
        let pi = std::f64::consts::PI;
        return libm::log(pi / libm::sin(pi * x)) - ln_gamma(1.0 - x);
    }
    let x = x - 1.0;
    let mut a = C[0];
    let t = x + G + 0.5;
    for (i, c) in C.iter().enumerate().skip(1) {
        a += c / (x + i as f64);
    }
    0.5 * libm::log(2.0 * std::f64::consts::PI) + (x + 0.5) * libm::log(t) - t + libm::log(a)
}

/// Continued fraction for the incomplete beta function by the modified
/// Lentz method (Press et al. 2007, Numerical Recipes 3rd ed., §6.4).
fn beta_cf(a: f64, b: f64, x: f64) -> f64 {
    const TINY: f64 = 1e-300;
    let (qab, qap, qam) = (a + b, a + 1.0, a - 1.0);
    let mut c = 1.0;
    let mut d = 1.0 - qab * x / qap;
    if d.abs() < TINY {
        d = TINY;
    }
    d = 1.0 / d;
    let mut h = d;
    for m in 1..10_000 {
        let m = m as f64;
        let m2 = 2.0 * m;
        let aa = m * (b - m) * x / ((qam + m2) * (a + m2));
        d = 1.0 + aa * d;
        if d.abs() < TINY {
            d = TINY;
        }
        c = 1.0 + aa / c;
        if c.abs() < TINY {
            c = TINY;
        }
        d = 1.0 / d;
        h *= d * c;
        let aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2));
        d = 1.0 + aa * d;
        if d.abs() < TINY {
            d = TINY;
        }
        c = 1.0 + aa / c;
        if c.abs() < TINY {
            c = TINY;
        }
        d = 1.0 / d;
        let del = d * c;
        h *= del;
        if (del - 1.0).abs() < 1e-15 {
            break;
        }
    }
    h
}

/// The regularized incomplete beta function I_x(a, b).
pub(crate) fn inc_beta(a: f64, b: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    if x >= 1.0 {
        return 1.0;
    }
    let ln_front =
        ln_gamma(a + b) - ln_gamma(a) - ln_gamma(b) + a * libm::log(x) + b * libm::log(1.0 - x);
    let front = libm::exp(ln_front);
    // The fraction converges fast for x below the mean; use the symmetry
    // I_x(a, b) = 1 - I_{1-x}(b, a) above it.
    if x < (a + 1.0) / (a + b + 2.0) {
        front * beta_cf(a, b, x) / a
    } else {
        1.0 - front * beta_cf(b, a, 1.0 - x) / b
    }
}

/// Two-sided tail probability P(|T| >= |t|) of Student's t with `df`
/// degrees of freedom: I_{df/(df+t²)}(df/2, 1/2).
pub(crate) fn t_two_sided(t: f64, df: f64) -> f64 {
    if !t.is_finite() {
        return 0.0;
    }
    inc_beta(df / 2.0, 0.5, df / (df + t * t)).clamp(0.0, 1.0)
}

/// The distribution function of Student's t.
pub(crate) fn t_cdf(t: f64, df: f64) -> f64 {
    let tail = 0.5 * t_two_sided(t, df);
    if t >= 0.0 {
        1.0 - tail
    } else {
        tail
    }
}

/// The `p` quantile of Student's t (0 < p < 1), by bisection on the
/// distribution function to machine precision.
pub(crate) fn t_quantile(p: f64, df: f64) -> f64 {
    if p == 0.5 {
        return 0.0;
    }
    let (mut lo, mut hi) = (-1.0, 1.0);
    while t_cdf(lo, df) > p {
        lo *= 2.0;
    }
    while t_cdf(hi, df) < p {
        hi *= 2.0;
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if t_cdf(mid, df) < p {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo <= 1e-14 * mid.abs().max(1.0) {
            break;
        }
    }
    0.5 * (lo + hi)
}

/// The regularized upper incomplete gamma function Q(a, x), by its series
/// below x = a + 1 and its continued fraction above (Press et al. 2007,
/// Numerical Recipes 3rd ed., §6.2).
fn gamma_q(a: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 1.0;
    }
    let ln_front = -x + a * libm::log(x) - ln_gamma(a);
    if x < a + 1.0 {
        let (mut ap, mut sum) = (a, 1.0 / a);
        let mut del = sum;
        for _ in 0..10_000 {
            ap += 1.0;
            del *= x / ap;
            sum += del;
            if del.abs() < sum.abs() * 1e-16 {
                break;
            }
        }
        1.0 - sum * libm::exp(ln_front)
    } else {
        const TINY: f64 = 1e-300;
        let mut b = x + 1.0 - a;
        let mut c = 1.0 / TINY;
        let mut d = 1.0 / b;
        let mut h = d;
        for i in 1..10_000 {
            let an = -(i as f64) * (i as f64 - a);
            b += 2.0;
            d = an * d + b;
            if d.abs() < TINY {
                d = TINY;
            }
            c = b + an / c;
            if c.abs() < TINY {
                c = TINY;
            }
            d = 1.0 / d;
            let del = d * c;
            h *= del;
            if (del - 1.0).abs() < 1e-16 {
                break;
            }
        }
        libm::exp(ln_front) * h
    }
}

/// The standard normal distribution function: Φ(z) = erfc(-z/√2)/2 with
/// erfc(u) = Q(1/2, u²) for u >= 0.
pub(crate) fn normal_cdf(z: f64) -> f64 {
    let tail = 0.5 * gamma_q(0.5, z * z / 2.0);
    if z >= 0.0 {
        1.0 - tail
    } else {
        tail
    }
}

/// The `p` quantile of the standard normal distribution (0 < p < 1), by
/// bisection on [`normal_cdf`].
pub(crate) fn z_quantile(p: f64) -> f64 {
    let (mut lo, mut hi) = (-40.0f64, 40.0f64);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if normal_cdf(mid) < p {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo <= 1e-15 * mid.abs().max(1.0) {
            break;
        }
    }
    0.5 * (lo + hi)
}

/// Mean and sample variance (n - 1 denominator, two-pass).
pub(crate) fn mean_var(x: &[f64]) -> (f64, f64) {
    let n = x.len() as f64;
    let m = x.iter().sum::<f64>() / n;
    let v = if x.len() > 1 {
        x.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (n - 1.0)
    } else {
        f64::NAN
    };
    (m, v)
}

/// Ranks 1..n with tied values given the average of the ranks they span.
pub(crate) fn average_ranks(x: &[f64]) -> Vec<f64> {
    let mut idx: Vec<usize> = (0..x.len()).collect();
    idx.sort_by(|&a, &b| x[a].total_cmp(&x[b]).then(a.cmp(&b)));
    let mut ranks = vec![0.0; x.len()];
    let mut i = 0;
    while i < idx.len() {
        let mut j = i + 1;
        while j < idx.len() && x[idx[j]] == x[idx[i]] {
            j += 1;
        }
        let r = (i + j + 1) as f64 / 2.0; // mean of ranks i+1..=j
        for &k in &idx[i..j] {
            ranks[k] = r;
        }
        i = j;
    }
    ranks
}

/// Pearson correlation; `None` when either variable is constant.
fn pearson(x: &[f64], y: &[f64]) -> Option<f64> {
    let (mx, _) = mean_var(x);
    let (my, _) = mean_var(y);
    let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
    for (a, b) in x.iter().zip(y) {
        sxy += (a - mx) * (b - my);
        sxx += (a - mx).powi(2);
        syy += (b - my).powi(2);
    }
    if sxx <= 0.0 || syy <= 0.0 {
        return None;
    }
    Some((sxy / (sxx * syy).sqrt()).clamp(-1.0, 1.0))
}

/// Spearman's rank correlation (Spearman 1904): the Pearson correlation of
/// average ranks, with the two-sided p-value from t = r √((n-2)/(1-r²)) on
/// n - 2 degrees of freedom. `None` for fewer than 3 pairs or a constant
/// variable.
pub(crate) fn spearman(x: &[f64], y: &[f64]) -> Option<(f64, f64)> {
    if x.len() < 3 || x.len() != y.len() {
        return None;
    }
    let r = pearson(&average_ranks(x), &average_ranks(y))?;
    let df = x.len() as f64 - 2.0;
    let p = if r.abs() >= 1.0 {
        0.0
    } else {
        t_two_sided(r * (df / (1.0 - r * r)).sqrt(), df)
    };
    Some((r, p))
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
    let z = z_quantile(0.5 + confidence / 2.0);
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
    fn ln_gamma_matches_exact_values() {
        // Γ(n) = (n-1)!, Γ(1/2) = √π: exact facts.
        assert!((ln_gamma(5.0) - libm::log(24f64)).abs() < 1e-13);
        assert!((ln_gamma(10.0) - libm::log(362_880f64)).abs() < 1e-12);
        assert!((ln_gamma(0.5) - libm::log(std::f64::consts::PI.sqrt())).abs() < 1e-13);
        assert!((ln_gamma(1.0)).abs() < 1e-14);
    }

    #[test]
    fn t_with_one_df_is_cauchy() {
        // Student's t with 1 df is the Cauchy distribution:
        // F(t) = 1/2 + atan(t)/π (exact).
        for t in [-3.0, -0.5, 0.2, 1.0, 7.0] {
            let exact = 0.5 + libm::atan(t) / std::f64::consts::PI;
            assert!((t_cdf(t, 1.0) - exact).abs() < 1e-13, "{t}");
        }
        // And with 2 df, F(t) = 1/2 + t / (2 √(2 + t²)) (exact).
        for t in [-2.0f64, 0.7, 4.0] {
            let exact = 0.5 + t / (2.0 * (2.0 + t * t).sqrt());
            assert!((t_cdf(t, 2.0) - exact).abs() < 1e-13, "{t}");
        }
        assert!((t_quantile(0.975, 1.0) - libm::tan(std::f64::consts::PI * 0.475)).abs() < 1e-9);
    }

    #[test]
    fn normal_quantiles_are_the_familiar_ones() {
        // Φ(0) = 1/2 exactly; 1.959964 (97.5%) is the familiar table value,
        // quoted from memory; scipy's norm.ppf is checked in tests/checks.
        assert!((normal_cdf(0.0) - 0.5).abs() < 1e-15);
        assert!((z_quantile(0.975) - 1.959_964).abs() < 1e-6);
        assert!((z_quantile(0.025) + 1.959_964).abs() < 1e-6);
    }

    #[test]
    fn average_ranks_share_ties() {
        assert_eq!(
            average_ranks(&[3.0, 1.0, 3.0, 2.0]),
            vec![3.5, 1.0, 3.5, 2.0]
        );
    }

    #[test]
    fn holm_steps_down() {
        // Worked by hand: m = 3; sorted 0.01, 0.02, 0.04 -> 0.03, 0.04, 0.04.
        let h = holm(&[0.04, 0.01, 0.02]);
        for (a, b) in h.iter().zip([0.04, 0.03, 0.04]) {
            assert!((a - b).abs() < 1e-15, "{h:?}");
        }
    }
}
