//! Probability distributions and rank statistics that the effect, sensitivity
//! and agreement modules build on, written out here so that the browser and
//! the command line compute the same digits with no platform maths library
//! beyond `f64` elementary functions.
//!
//! Sources: log-gamma by Lanczos (1964) with the g = 7, n = 9 coefficients of
//! Godfrey (2001); regularized incomplete gamma by its power series and
//! Legendre continued fraction, and regularized incomplete beta by its
//! continued fraction, both evaluated with the modified Lentz method (Press,
//! Teukolsky, Vetterling & Flannery 2007, *Numerical Recipes*, 3rd ed.,
//! §§5.2, 6.2, 6.4); the normal quantile by Wichura (1988), algorithm AS 241,
//! *Applied Statistics* 37(3):477-484; binomial probabilities by the
//! saddle-point expansion of Loader (2000), "Fast and accurate computation of
//! binomial probabilities".
//!
//! ```
//! use pairsight_core::stats;
//! assert!((stats::norm_cdf(1.959963984540054) - 0.975).abs() < 1e-14);
//! ```

use crate::{Error, Result};

const LN_SQRT_2PI: f64 = 0.918_938_533_204_672_8;
const EPS: f64 = 1e-16;
const TINY: f64 = 1e-300;
const MAX_ITER: usize = 100_000;

/// Natural log of the gamma function for `x > 0` (Lanczos 1964; coefficients
/// g = 7, n = 9 from Godfrey 2001). Uses the reflection formula below 0.5.
pub fn ln_gamma(x: f64) -> f64 {
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
        // Reflection: Gamma(x) Gamma(1 - x) = pi / sin(pi x).
        let s = libm::sin(std::f64::consts::PI * x).abs();
        return libm::log(std::f64::consts::PI) - libm::log(s) - ln_gamma(1.0 - x);
    }
    let x = x - 1.0;
    let mut a = C[0];
    let t = x + G + 0.5;
    for (i, c) in C.iter().enumerate().skip(1) {
        a += c / (x + i as f64);
    }
    LN_SQRT_2PI + (x + 0.5) * libm::log(t) - t + libm::log(a)
}

/// Natural log of the beta function B(a, b). When one argument is large,
/// ln Gamma(A) - ln Gamma(A + s) is taken from Stirling's series with the
/// difference of logs written as log1p, which avoids subtracting two large,
/// nearly equal log-gamma values (the approach of Loader 2000).
pub fn ln_beta(a: f64, b: f64) -> f64 {
    let (s, big) = if a < b { (a, b) } else { (b, a) };
    if big < 10.0 {
        return ln_gamma(a) + ln_gamma(b) - ln_gamma(a + b);
    }
    let diff = -(big - 0.5) * libm::log1p(s / big) - s * libm::log(big + s) + s + stirlerr(big)
        - stirlerr(big + s);
    ln_gamma(s) + diff
}

/// Regularized lower incomplete gamma P(a, x) and upper Q(a, x) = 1 - P, each
/// computed directly on the side where it is the smaller so that small tails
/// keep their relative precision (Numerical Recipes §6.2: series for
/// x < a + 1, Legendre continued fraction otherwise).
pub fn gamma_pq(a: f64, x: f64) -> (f64, f64) {
    if x.is_nan() || a.is_nan() || a <= 0.0 {
        return (f64::NAN, f64::NAN);
    }
    if x <= 0.0 {
        return (0.0, 1.0);
    }
    if x.is_infinite() {
        return (1.0, 0.0);
    }
    let front = libm::exp(-x + a * libm::log(x) - ln_gamma(a));
    if x < a + 1.0 {
        let mut ap = a;
        let mut del = 1.0 / a;
        let mut sum = del;
        for _ in 0..MAX_ITER {
            ap += 1.0;
            del *= x / ap;
            sum += del;
            if del.abs() < sum.abs() * EPS {
                break;
            }
        }
        let p = (sum * front).min(1.0);
        (p, 1.0 - p)
    } else {
        // Modified Lentz evaluation of the continued fraction for Q.
        let mut b = x + 1.0 - a;
        let mut c = 1.0 / TINY;
        let mut d = 1.0 / b;
        let mut h = d;
        for i in 1..MAX_ITER {
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
            if (del - 1.0).abs() < EPS {
                break;
            }
        }
        let q = (front * h).min(1.0);
        (1.0 - q, q)
    }
}

/// Regularized lower incomplete gamma P(a, x).
pub fn gamma_p(a: f64, x: f64) -> f64 {
    gamma_pq(a, x).0
}

/// Regularized upper incomplete gamma Q(a, x).
pub fn gamma_q(a: f64, x: f64) -> f64 {
    gamma_pq(a, x).1
}

/// Continued fraction for the incomplete beta (Numerical Recipes §6.4),
/// modified Lentz method.
fn beta_cf(a: f64, b: f64, x: f64) -> f64 {
    let qab = a + b;
    let qap = a + 1.0;
    let qam = a - 1.0;
    let mut c = 1.0;
    let mut d = 1.0 - qab * x / qap;
    if d.abs() < TINY {
        d = TINY;
    }
    d = 1.0 / d;
    let mut h = d;
    for m in 1..MAX_ITER {
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
        if (del - 1.0).abs() < EPS {
            break;
        }
    }
    h
}

/// The factor x^a (1-x)^b / B(a, b). For a, b >= 1 it equals
/// a (1 - x) times a binomial density with real arguments, which Loader's
/// saddle-point form gives without the cancellation of large log-gamma terms.
fn beta_front(a: f64, b: f64, x: f64, y: f64) -> f64 {
    if a >= 1.0 && b >= 1.0 {
        a * y * dbinom_raw(a, a + b - 1.0, x, y)
    } else {
        // ln x from y when x is near 1, where y = 1 - x carries the precision.
        let lx = if x > 0.5 {
            libm::log1p(-y)
        } else {
            libm::log(x)
        };
        let ly = if y > 0.5 {
            libm::log1p(-x)
        } else {
            libm::log(y)
        };
        libm::exp(a * lx + b * ly - ln_beta(a, b))
    }
}

/// Regularized incomplete beta I_x(a, b) and its complement 1 - I_x(a, b),
/// given x and y = 1 - x separately (so that a y close to 0 keeps its
/// precision). The continued fraction is evaluated on the side where it
/// converges fast, which is also the side of the smaller tail.
pub fn beta_inc_pair(a: f64, b: f64, x: f64, y: f64) -> (f64, f64) {
    if a.is_nan() || b.is_nan() || x.is_nan() || a <= 0.0 || b <= 0.0 {
        return (f64::NAN, f64::NAN);
    }
    if x <= 0.0 {
        return (0.0, 1.0);
    }
    if y <= 0.0 {
        return (1.0, 0.0);
    }
    if x < (a + 1.0) / (a + b + 2.0) {
        let v = (beta_front(a, b, x, y) * beta_cf(a, b, x) / a).clamp(0.0, 1.0);
        (v, 1.0 - v)
    } else {
        let v = (beta_front(b, a, y, x) * beta_cf(b, a, y) / b).clamp(0.0, 1.0);
        (1.0 - v, v)
    }
}

/// Regularized incomplete beta I_x(a, b).
pub fn beta_inc(a: f64, b: f64, x: f64) -> f64 {
    beta_inc_pair(a, b, x, 1.0 - x).0
}

/// Standard normal cumulative distribution, via erfc(z) = Q(1/2, z^2).
pub fn norm_cdf(x: f64) -> f64 {
    if x.is_nan() {
        return f64::NAN;
    }
    let half_q = 0.5 * gamma_q(0.5, 0.5 * x * x);
    if x < 0.0 {
        half_q
    } else {
        1.0 - half_q
    }
}

/// Standard normal survival function 1 - Phi(x), precise in the upper tail.
pub fn norm_sf(x: f64) -> f64 {
    norm_cdf(-x)
}

/// Standard normal density.
pub fn norm_pdf(x: f64) -> f64 {
    libm::exp(-0.5 * x * x - LN_SQRT_2PI)
}

/// Standard normal quantile (Wichura 1988, AS 241, PPND16; about 16 digits).
/// Returns -inf at 0, +inf at 1 and NaN outside [0, 1].
pub fn norm_ppf(p: f64) -> f64 {
    if p.is_nan() || !(0.0..=1.0).contains(&p) {
        return f64::NAN;
    }
    if p == 0.0 {
        return f64::NEG_INFINITY;
    }
    if p == 1.0 {
        return f64::INFINITY;
    }
    let q = p - 0.5;
    if q.abs() <= 0.425 {
        let r = 0.180625 - q * q;
        return q
            * (((((((2.509_080_928_730_122_7e3 * r + 3.343_057_558_358_813e4) * r
                + 6.726_577_092_700_87e4)
                * r
                + 4.592_195_393_154_987e4)
                * r
                + 1.373_169_376_550_946e4)
                * r
                + 1.971_590_950_306_551_3e3)
                * r
                + 1.331_416_678_917_843_8e2)
                * r
                + 3.387_132_872_796_366_5)
            / (((((((5.226_495_278_852_545e3 * r + 2.872_908_573_572_194_3e4) * r
                + 3.930_789_580_009_271e4)
                * r
                + 2.121_379_430_158_659_7e4)
                * r
                + 5.394_196_021_424_751e3)
                * r
                + 6.871_870_074_920_579e2)
                * r
                + 4.231_333_070_160_091e1)
                * r
                + 1.0);
    }
    let mut r = if q < 0.0 { p } else { 1.0 - p };
    r = (-libm::log(r)).sqrt();
    let val = if r <= 5.0 {
        r -= 1.6;
        (((((((7.745_450_142_783_414e-4 * r + 2.272_384_498_926_918_4e-2) * r
            + 2.417_807_251_774_506e-1)
            * r
            + 1.270_458_252_452_368_4)
            * r
            + 3.647_848_324_763_204_5)
            * r
            + 5.769_497_221_460_691)
            * r
            + 4.630_337_846_156_546)
            * r
            + 1.423_437_110_749_683_5)
            / (((((((1.050_750_071_644_416_9e-9 * r + 5.475_938_084_995_345e-4) * r
                + 1.519_866_656_361_645_7e-2)
                * r
                + 1.481_039_764_274_800_8e-1)
                * r
                + 6.897_673_349_851e-1)
                * r
                + 1.676_384_830_183_803_8)
                * r
                + 2.053_191_626_637_759)
                * r
                + 1.0)
    } else {
        r -= 5.0;
        (((((((2.010_334_399_292_288e-7 * r + 2.711_555_568_743_487_6e-5) * r
            + 1.242_660_947_388_078_4e-3)
            * r
            + 2.653_218_952_657_612_4e-2)
            * r
            + 2.965_605_718_285_049e-1)
            * r
            + 1.784_826_539_917_291_3)
            * r
            + 5.463_784_911_164_114)
            * r
            + 6.657_904_643_501_103)
            / (((((((2.044_263_103_389_939_7e-15 * r + 1.421_511_758_316_446e-7) * r
                + 1.846_318_317_510_054_8e-5)
                * r
                + 7.868_691_311_456_133e-4)
                * r
                + 1.487_536_129_085_061_5e-2)
                * r
                + 1.369_298_809_227_358e-1)
                * r
                + 5.998_322_065_558_88e-1)
                * r
                + 1.0)
    };
    if q < 0.0 {
        -val
    } else {
        val
    }
}

/// Student t survival function P(T > t) with `df` > 0 degrees of freedom,
/// via P(|T| > t) = I_{df/(df+t^2)}(df/2, 1/2).
pub fn t_sf(t: f64, df: f64) -> f64 {
    if t.is_nan() || df.is_nan() || df <= 0.0 {
        return f64::NAN;
    }
    if t.is_infinite() {
        return if t > 0.0 { 0.0 } else { 1.0 };
    }
    let t2 = t * t;
    let x = df / (df + t2);
    let y = t2 / (df + t2);
    let two_tail = beta_inc_pair(0.5 * df, 0.5, x, y).0;
    if t > 0.0 {
        0.5 * two_tail
    } else {
        1.0 - 0.5 * two_tail
    }
}

/// Student t cumulative distribution.
pub fn t_cdf(t: f64, df: f64) -> f64 {
    t_sf(-t, df)
}

/// Two-sided p-value of a t-test of `estimate` with standard error `se` on
/// `df` degrees of freedom: 2 P(T >= |estimate / se|). With no spread
/// (se = 0) it is 1 for a zero estimate and 0 otherwise.
pub fn t_test_p(estimate: f64, se: f64, df: f64) -> f64 {
    if se == 0.0 {
        return if estimate == 0.0 { 1.0 } else { 0.0 };
    }
    (2.0 * t_sf((estimate / se).abs(), df)).min(1.0)
}

/// Student t density.
pub fn t_pdf(t: f64, df: f64) -> f64 {
    libm::exp(
        ln_gamma(0.5 * (df + 1.0))
            - ln_gamma(0.5 * df)
            - 0.5 * libm::log(df * std::f64::consts::PI)
            - 0.5 * (df + 1.0) * libm::log1p(t * t / df),
    )
}

/// Student t quantile: solves the upper tail t_sf(t) = min(p, 1 - p) by
/// Newton steps safeguarded with bisection, starting from the normal quantile.
pub fn t_ppf(p: f64, df: f64) -> f64 {
    if p.is_nan() || df.is_nan() || df <= 0.0 || !(0.0..=1.0).contains(&p) {
        return f64::NAN;
    }
    if p == 0.0 {
        return f64::NEG_INFINITY;
    }
    if p == 1.0 {
        return f64::INFINITY;
    }
    if p == 0.5 {
        return 0.0;
    }
    let tail = p.min(1.0 - p);
    let mut lo = 0.0;
    let mut hi = (-norm_ppf(tail)).max(1.0);
    while t_sf(hi, df) > tail {
        lo = hi;
        hi *= 2.0;
        if hi > 1e300 {
            break;
        }
    }
    let mut t = (-norm_ppf(tail)).clamp(lo, hi);
    for _ in 0..200 {
        let f = t_sf(t, df) - tail;
        if f > 0.0 {
            lo = t;
        } else {
            hi = t;
        }
        let step = f / t_pdf(t, df);
        let mut next = t + step;
        if next <= lo || next >= hi || !next.is_finite() {
            next = 0.5 * (lo + hi);
        }
        if (next - t).abs() <= 1e-15 * next.abs().max(1e-300) || hi - lo <= 1e-15 * hi {
            t = next;
            break;
        }
        t = next;
    }
    if p < 0.5 {
        -t
    } else {
        t
    }
}

/// Chi-square survival function with `df` > 0 degrees of freedom.
pub fn chi2_sf(x: f64, df: f64) -> f64 {
    gamma_q(0.5 * df, 0.5 * x)
}

/// F survival function with (d1, d2) degrees of freedom:
/// P(F > x) = I_{d2/(d2 + d1 x)}(d2/2, d1/2).
pub fn f_sf(x: f64, d1: f64, d2: f64) -> f64 {
    if x.is_nan() || d1 <= 0.0 || d2 <= 0.0 {
        return f64::NAN;
    }
    if x <= 0.0 {
        return 1.0;
    }
    if x.is_infinite() {
        return 0.0;
    }
    let den = d2 + d1 * x;
    beta_inc_pair(0.5 * d2, 0.5 * d1, d2 / den, d1 * x / den).0
}

/// F quantile by bisection on [`f_sf`]; used for interval bounds of the
/// intraclass correlation.
pub fn f_ppf(p: f64, d1: f64, d2: f64) -> f64 {
    if p.is_nan() || !(0.0..1.0).contains(&p) || d1 <= 0.0 || d2 <= 0.0 {
        return f64::NAN;
    }
    if p == 0.0 {
        return 0.0;
    }
    let target = 1.0 - p;
    let (mut lo, mut hi) = (0.0, 1.0);
    while f_sf(hi, d1, d2) > target {
        lo = hi;
        hi *= 2.0;
        if hi > 1e300 {
            return f64::INFINITY;
        }
    }
    for _ in 0..2000 {
        let mid = 0.5 * (lo + hi);
        if f_sf(mid, d1, d2) > target {
            lo = mid;
        } else {
            hi = mid;
        }
        if hi - lo <= 1e-15 * hi {
            break;
        }
    }
    0.5 * (lo + hi)
}

/// Stirling-series error term ln(n!) - [(n + 1/2) ln n - n + ln sqrt(2 pi)]
/// (Loader 2000). Small arguments use log-gamma directly, where no large
/// terms cancel.
fn stirlerr(n: f64) -> f64 {
    const S0: f64 = 1.0 / 12.0;
    const S1: f64 = 1.0 / 360.0;
    const S2: f64 = 1.0 / 1260.0;
    const S3: f64 = 1.0 / 1680.0;
    const S4: f64 = 1.0 / 1188.0;
    if n <= 15.0 {
        return ln_gamma(n + 1.0) - (n + 0.5) * libm::log(n) + n - LN_SQRT_2PI;
    }
    let nn = n * n;
    if n > 500.0 {
        (S0 - S1 / nn) / n
    } else if n > 80.0 {
        (S0 - (S1 - S2 / nn) / nn) / n
    } else if n > 35.0 {
        (S0 - (S1 - (S2 - S3 / nn) / nn) / nn) / n
    } else {
        (S0 - (S1 - (S2 - (S3 - S4 / nn) / nn) / nn) / nn) / n
    }
}

/// Deviance term x ln(x / np) + np - x, by a series when x is near np
/// (Loader 2000).
fn bd0(x: f64, np: f64) -> f64 {
    if (x - np).abs() < 0.1 * (x + np) {
        let mut v = (x - np) / (x + np);
        let mut s = (x - np) * v;
        let mut ej = 2.0 * x * v;
        v *= v;
        for j in 1..1000 {
            ej *= v;
            let s1 = s + ej / (2 * j + 1) as f64;
            if s1 == s {
                return s1;
            }
            s = s1;
        }
        s
    } else {
        x * libm::log(x / np) + np - x
    }
}

/// Binomial density with real arguments (Loader 2000), q = 1 - p given.
fn dbinom_raw(x: f64, n: f64, p: f64, q: f64) -> f64 {
    if p == 0.0 {
        return if x == 0.0 { 1.0 } else { 0.0 };
    }
    if q == 0.0 {
        return if x == n { 1.0 } else { 0.0 };
    }
    if x == 0.0 {
        if n == 0.0 {
            return 1.0;
        }
        let lc = if p < 0.1 {
            -bd0(n, n * q) - n * p
        } else {
            n * libm::log(q)
        };
        return libm::exp(lc);
    }
    if x == n {
        let lc = if q < 0.1 {
            -bd0(n, n * p) - n * q
        } else {
            n * libm::log(p)
        };
        return libm::exp(lc);
    }
    if x < 0.0 || x > n {
        return 0.0;
    }
    let lc = stirlerr(n) - stirlerr(x) - stirlerr(n - x) - bd0(x, n * p) - bd0(n - x, n * q);
    let lf = libm::log(std::f64::consts::TAU) + libm::log(x) + libm::log1p(-x / n);
    libm::exp(lc - 0.5 * lf)
}

/// Binomial probability P(X = k) for X ~ Bin(n, p).
pub fn binom_pmf(k: u64, n: u64, p: f64) -> f64 {
    if k > n || !(0.0..=1.0).contains(&p) {
        return if k > n { 0.0 } else { f64::NAN };
    }
    dbinom_raw(k as f64, n as f64, p, 1.0 - p)
}

/// Binomial P(X <= k) = I_{1-p}(n - k, k + 1).
pub fn binom_cdf(k: u64, n: u64, p: f64) -> f64 {
    if !(0.0..=1.0).contains(&p) {
        return f64::NAN;
    }
    if k >= n {
        return 1.0;
    }
    beta_inc_pair((n - k) as f64, (k + 1) as f64, 1.0 - p, p).0
}

/// Binomial P(X > k) = I_p(k + 1, n - k), computed directly (not as 1 - cdf)
/// so small upper tails keep their precision.
pub fn binom_sf(k: u64, n: u64, p: f64) -> f64 {
    if !(0.0..=1.0).contains(&p) {
        return f64::NAN;
    }
    if k >= n {
        return 0.0;
    }
    beta_inc_pair((k + 1) as f64, (n - k) as f64, p, 1.0 - p).0
}

/// Ranks 1..n with tied values sharing the average of their ranks; ties are
/// detected by exact equality. NaN is an error.
pub fn rank_average(x: &[f64]) -> Result<Vec<f64>> {
    if let Some(i) = x.iter().position(|v| v.is_nan()) {
        return Err(Error::param(
            "values",
            format!(
                "value {} is not a number; remove or fill missing values before ranking",
                i + 1
            ),
        ));
    }
    let mut idx: Vec<usize> = (0..x.len()).collect();
    // Stable sort keeps row order among ties, so the output is deterministic.
    idx.sort_by(|&a, &b| x[a].total_cmp(&x[b]));
    let mut ranks = vec![0.0; x.len()];
    let mut i = 0;
    while i < idx.len() {
        let mut j = i + 1;
        while j < idx.len() && x[idx[j]] == x[idx[i]] {
            j += 1;
        }
        let avg = 0.5 * ((i + 1) + j) as f64;
        for &k in &idx[i..j] {
            ranks[k] = avg;
        }
        i = j;
    }
    Ok(ranks)
}

/// Sizes of the groups of tied values (each group of size >= 2).
pub fn tie_groups(x: &[f64]) -> Vec<usize> {
    let mut v: Vec<f64> = x.iter().copied().filter(|v| !v.is_nan()).collect();
    v.sort_by(|a, b| a.total_cmp(b));
    let mut out = Vec::new();
    let mut i = 0;
    while i < v.len() {
        let mut j = i + 1;
        while j < v.len() && v[j] == v[i] {
            j += 1;
        }
        if j - i > 1 {
            out.push(j - i);
        }
        i = j;
    }
    out
}

/// Pearson correlation of two equally long slices; NaN when either is constant.
pub fn pearson(x: &[f64], y: &[f64]) -> f64 {
    let n = x.len().min(y.len());
    if n == 0 {
        return f64::NAN;
    }
    let mx = x[..n].iter().sum::<f64>() / n as f64;
    let my = y[..n].iter().sum::<f64>() / n as f64;
    let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
    for i in 0..n {
        let (dx, dy) = (x[i] - mx, y[i] - my);
        sxy += dx * dy;
        sxx += dx * dx;
        syy += dy * dy;
    }
    if sxx == 0.0 || syy == 0.0 {
        return f64::NAN;
    }
    (sxy / (sxx * syy).sqrt()).clamp(-1.0, 1.0)
}

/// A rank correlation with its two-sided p-value.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct RankCorrelation {
    /// Spearman's rho: the Pearson correlation of the average ranks.
    pub rho: f64,
    /// Two-sided p-value from t = rho sqrt((n-2)/(1-rho^2)) on n - 2 degrees
    /// of freedom (the usual large-sample approximation).
    pub p_value: f64,
    /// Number of pairs used.
    pub n: usize,
}

/// Spearman rank correlation (Spearman 1904) with average ranks for ties and
/// the t-approximation p-value. Needs at least 3 pairs with neither variable
/// constant.
pub fn spearman(x: &[f64], y: &[f64]) -> Result<RankCorrelation> {
    if x.len() != y.len() {
        return Err(Error::param(
            "y",
            format!("needs as many values as x ({} vs {})", y.len(), x.len()),
        ));
    }
    let n = x.len();
    if n < 3 {
        return Err(Error::compute(format!(
            "a rank correlation needs at least 3 pairs; got {n}"
        )));
    }
    let rx = rank_average(x)?;
    let ry = rank_average(y)?;
    let rho = pearson(&rx, &ry);
    if rho.is_nan() {
        return Err(Error::compute(
            "a rank correlation is undefined when one variable takes a single value",
        ));
    }
    let df = (n - 2) as f64;
    let p_value = if rho.abs() >= 1.0 {
        0.0
    } else {
        let t = rho * (df / ((1.0 - rho) * (1.0 + rho))).sqrt();
        t_test_p(t, 1.0, df)
    };
    Ok(RankCorrelation { rho, p_value, n })
}

/// Sample quantile by linear interpolation between order statistics
/// (definition 7 of Hyndman & Fan 1996). `sorted` must be sorted ascending
/// and non-empty.
pub fn quantile_sorted(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let h = (sorted.len() - 1) as f64 * q.clamp(0.0, 1.0);
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(sorted.len() - 1);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

/// Mean of a slice (NaN when empty).
pub fn mean(x: &[f64]) -> f64 {
    if x.is_empty() {
        return f64::NAN;
    }
    x.iter().sum::<f64>() / x.len() as f64
}

/// Sample variance with divisor n - 1 (NaN when fewer than 2 values).
pub fn variance(x: &[f64]) -> f64 {
    if x.len() < 2 {
        return f64::NAN;
    }
    let m = mean(x);
    x.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / (x.len() - 1) as f64
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ln_gamma_at_integers_is_log_factorial() {
        let mut f = 1.0f64;
        for n in 1..30 {
            assert!(
                (ln_gamma(n as f64) - libm::log(f)).abs() < 1e-12 * libm::log(f).max(1.0),
                "{n}"
            );
            f *= n as f64;
        }
        // Gamma(1/2) = sqrt(pi), a textbook identity.
        assert!((ln_gamma(0.5) - 0.5 * libm::log(std::f64::consts::PI)).abs() < 1e-14);
    }

    #[test]
    fn normal_quantile_inverts_cdf() {
        for &p in &[1e-300, 1e-20, 1e-5, 0.01, 0.2, 0.5, 0.7, 0.975, 1.0 - 1e-12] {
            let x = norm_ppf(p);
            let back = norm_cdf(x);
            assert!(
                (back - p).abs() <= 1e-13 * p.min(1.0 - p).max(1e-300) + 1e-16,
                "{p} {back}"
            );
        }
    }

    #[test]
    fn binomial_pieces_add_up() {
        for &(n, p) in &[(10u64, 0.3), (200, 0.5), (100_000, 0.01)] {
            for k in [0, 1, n / 3, n / 2, n - 1] {
                let s = binom_cdf(k, n, p) + binom_sf(k, n, p);
                assert!((s - 1.0).abs() < 1e-12, "{n} {k} {s}");
            }
        }
        let total: f64 = (0..=20).map(|k| binom_pmf(k, 20, 0.37)).sum();
        assert!((total - 1.0).abs() < 1e-13);
    }

    #[test]
    fn t_quantile_inverts() {
        for &df in &[1.0, 2.5, 10.0, 300.0] {
            for &p in &[0.001, 0.025, 0.3, 0.9, 0.995] {
                let t = t_ppf(p, df);
                assert!((t_cdf(t, df) - p).abs() < 1e-12, "{df} {p}");
            }
        }
        // t with 1 df is Cauchy: quantile tan(pi (p - 1/2)).
        let want = libm::tan(std::f64::consts::PI * (0.9 - 0.5));
        assert!((t_ppf(0.9, 1.0) - want).abs() < 1e-10);
    }

    #[test]
    fn average_ranks() {
        let r = rank_average(&[3.0, 1.0, 3.0, 2.0]).unwrap();
        assert_eq!(r, vec![3.5, 1.0, 3.5, 2.0]);
        assert!(rank_average(&[1.0, f64::NAN]).is_err());
    }
}
