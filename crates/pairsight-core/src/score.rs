//! The score model: logistic regression of group membership on the score
//! terms, whose fitted probability is the propensity score (Rosenbaum & Rubin
//! 1983, "The central role of the propensity score in observational studies
//! for causal effects", Biometrika 70(1)).
//!
//! The fit is Newton-Raphson, which for the logistic model with its canonical
//! link is the same as iteratively reweighted least squares (McCullagh &
//! Nelder 1989, *Generalized Linear Models*, 2nd ed., section 4.4). It runs on
//! an internally standardized design (each term centred and divided by its
//! standard deviation, an intercept column added), which keeps the Hessian
//! well conditioned; coefficients are mapped back to the original scale.
//!
//! When the maximum-likelihood estimate does not exist (complete or
//! quasi-complete separation, Albert & Anderson 1984, Biometrika 71(1)) or
//! Newton does not converge, the fit falls back to Firth's bias-reduced
//! logistic regression (Firth 1993, Biometrika 80(1); for separation, Heinze &
//! Schemper 2002, Statistics in Medicine 21(16)), which always has a finite
//! estimate, and says so in [`LogitFit::warnings`]. Should that also fail, a
//! ridge-penalized fit (le Cessie & van Houwelingen 1992, Applied Statistics
//! 41(1)) is the last resort.

// Index loops mirror the matrix formulas they implement.
#![allow(clippy::needless_range_loop)]

use ndarray::ArrayView2;
use serde::{Deserialize, Serialize};

use crate::{Error, Result};

/// What the fit does when the plain maximum-likelihood fit fails.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Fallback {
    /// Firth's penalized likelihood, then ridge if Firth fails as well.
    Firth,
    /// Ridge penalty `lambda / 2 * |beta|^2` on the standardized slopes
    /// (intercept not penalized).
    Ridge {
        /// Penalty weight on the standardized scale; must be positive.
        lambda: f64,
    },
    /// No fallback: a failed fit is an error.
    Fail,
}

/// Settings of the logistic fit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LogitParams {
    /// Most Newton steps per fit (each fallback gets the same budget).
    pub max_iter: usize,
    /// Convergence: the largest absolute Newton step on the standardized
    /// scale is below this.
    pub tol: f64,
    /// What to do on separation or non-convergence.
    pub fallback: Fallback,
}

impl Default for LogitParams {
    fn default() -> Self {
        LogitParams {
            max_iter: 50,
            tol: 1e-10,
            fallback: Fallback::Firth,
        }
    }
}

/// Which estimator produced the fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FitMethod {
    /// Plain maximum likelihood by Newton-Raphson.
    MaximumLikelihood,
    /// Firth's bias-reduced (Jeffreys-penalized) likelihood.
    Firth,
    /// Ridge-penalized likelihood.
    Ridge,
}

/// A fitted score model with its convergence record.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LogitFit {
    /// Coefficients on the original scale of the terms, intercept first
    /// (length = number of columns + 1). A dropped column has coefficient 0.
    pub coefficients: Vec<f64>,
    /// Coefficients on the internal standardized scale, intercept first.
    pub standardized_coefficients: Vec<f64>,
    /// Estimated propensity score per row.
    pub scores: Vec<f64>,
    /// Logit score (log-odds) per row.
    pub logit: Vec<f64>,
    /// Estimator used for the reported fit.
    pub method: FitMethod,
    /// Newton steps taken by the reported fit.
    pub iterations: usize,
    /// Whether the reported fit met the tolerance.
    pub converged: bool,
    /// Largest absolute step (standardized scale) of the last iteration.
    pub final_max_step: f64,
    /// Log-likelihood (unpenalized) at the reported coefficients.
    pub log_likelihood: f64,
    /// Zero-based indices of columns left out of the fit (constant, or a
    /// linear combination of earlier columns such as an exact duplicate).
    pub dropped_columns: Vec<usize>,
    /// Everything the user should know about the fit, in plain words.
    pub warnings: Vec<String>,
}

/// Fit the score model: the probability of being treated given the columns of
/// `x` (one row per unit, one column per score term; no intercept column, it
/// is added here).
///
/// Invalid input (shape mismatch, non-finite values, a single group) is an
/// error. Constant columns and columns that are linear combinations of earlier
/// ones are dropped with a warning naming the column index.
pub fn fit_logistic(
    x: ArrayView2<f64>,
    treated: &[bool],
    params: &LogitParams,
) -> Result<LogitFit> {
    validate(x, treated, params)?;
    let n = x.nrows();
    let p = x.ncols();
    let mut warnings = Vec::new();

    // Standardize the columns; constant columns are dropped.
    let mut means = vec![0.0; p];
    let mut sds = vec![0.0; p];
    for j in 0..p {
        let col = x.column(j);
        let m = col.iter().sum::<f64>() / n as f64;
        let ss = col.iter().map(|v| (v - m) * (v - m)).sum::<f64>();
        means[j] = m;
        sds[j] = (ss / (n as f64 - 1.0)).sqrt();
    }
    let mut kept: Vec<usize> = Vec::with_capacity(p);
    let mut dropped: Vec<usize> = Vec::new();
    for j in 0..p {
        let scale = means[j].abs().max(1.0);
        if sds[j] <= 1e-12 * scale {
            dropped.push(j);
            warnings.push(format!(
                "score term column {j} is constant; it was left out of the score model"
            ));
        } else {
            kept.push(j);
        }
    }
    let mut design = Design::build(x, &means, &sds, &kept);

    // Columns that are linear combinations of earlier ones (an exact duplicate
    // is the common case) make X'X singular: find them with a Cholesky
    // factorization of the cross-product, pivoting in column order.
    let collinear = design.collinear_columns();
    if !collinear.is_empty() {
        let mut still = Vec::with_capacity(kept.len());
        for (pos, &j) in kept.iter().enumerate() {
            if collinear.contains(&(pos + 1)) {
                dropped.push(j);
                warnings.push(format!(
                    "score term column {j} is a linear combination of earlier columns (for example an exact duplicate); it was left out of the score model"
                ));
            } else {
                still.push(j);
            }
        }
        kept = still;
        design = Design::build(x, &means, &sds, &kept);
    }
    dropped.sort_unstable();

    let y: Vec<f64> = treated.iter().map(|&t| if t { 1.0 } else { 0.0 }).collect();

    let ml = newton(&design, &y, params, Penalty::None);
    let (fit, method) = match ml {
        Ok(f) if f.converged && !f.separated => (f, FitMethod::MaximumLikelihood),
        other => {
            let why = match &other {
                Ok(f) if f.separated => "the groups are separated (or nearly so) by the score terms, so the maximum-likelihood estimate does not exist".to_string(),
                Ok(f) => format!("Newton-Raphson did not converge in {} steps", f.iterations),
                Err(e) => format!("the maximum-likelihood fit failed ({e})"),
            };
            match params.fallback {
                Fallback::Fail => {
                    return Err(Error::compute(format!(
                        "score model: {why}; remove or merge the terms that predict the group perfectly, or allow a penalized fallback"
                    )))
                }
                Fallback::Ridge { lambda } => {
                    let f = newton(&design, &y, params, Penalty::Ridge(lambda))?;
                    warnings.push(format!(
                        "score model: {why}; fitted with a ridge penalty (lambda = {lambda} on standardized terms) instead"
                    ));
                    (f, FitMethod::Ridge)
                }
                Fallback::Firth => match newton(&design, &y, params, Penalty::Firth) {
                    Ok(f) if f.converged => {
                        warnings.push(format!(
                            "score model: {why}; fitted with Firth's bias-reduced logistic regression (Firth 1993) instead"
                        ));
                        (f, FitMethod::Firth)
                    }
                    _ => {
                        let f = newton(&design, &y, params, Penalty::Ridge(1.0))?;
                        warnings.push(format!(
                            "score model: {why}, and Firth's bias-reduced fit did not converge either; fitted with a ridge penalty (lambda = 1 on standardized terms) instead"
                        ));
                        (f, FitMethod::Ridge)
                    }
                },
            }
        }
    };
    if !fit.converged {
        warnings.push(format!(
            "score model: the fit stopped after {} steps without meeting the tolerance (last step {:.3e}); treat the scores with care",
            fit.iterations, fit.max_step
        ));
    }

    // Back to the original scale: eta = b0 + sum b_j (x_j - m_j) / s_j.
    let mut coefficients = vec![0.0; p + 1];
    let mut standardized = vec![0.0; p + 1];
    let mut intercept = fit.beta[0];
    standardized[0] = fit.beta[0];
    for (pos, &j) in kept.iter().enumerate() {
        let b = fit.beta[pos + 1];
        standardized[j + 1] = b;
        coefficients[j + 1] = b / sds[j];
        intercept -= b * means[j] / sds[j];
    }
    coefficients[0] = intercept;
    let scores = fit.eta.iter().map(|&e| sigmoid(e)).collect();
    Ok(LogitFit {
        coefficients,
        standardized_coefficients: standardized,
        scores,
        logit: fit.eta,
        method,
        iterations: fit.iterations,
        converged: fit.converged,
        final_max_step: fit.max_step,
        log_likelihood: fit.loglik,
        dropped_columns: dropped,
        warnings,
    })
}

fn validate(x: ArrayView2<f64>, treated: &[bool], params: &LogitParams) -> Result<()> {
    if x.nrows() != treated.len() {
        return Err(Error::param(
            "treated",
            format!(
                "has {} entries but the score terms have {} rows; give one group flag per row",
                treated.len(),
                x.nrows()
            ),
        ));
    }
    let nt = treated.iter().filter(|&&t| t).count();
    if nt == 0 || nt == treated.len() {
        return Err(Error::data(
            None,
            None,
            "the score model needs both treated and comparison units; only one group is present",
        ));
    }
    if x.nrows() < 3 {
        return Err(Error::data(
            None,
            None,
            "the score model needs at least 3 rows",
        ));
    }
    for ((i, j), v) in x.indexed_iter() {
        if !v.is_finite() {
            return Err(Error::param(
                "x",
                format!("score term column {j} has a missing or non-finite value at row index {i}; fill or remove it before fitting"),
            ));
        }
    }
    if params.max_iter == 0 {
        return Err(Error::param("max_iter", "must be at least 1"));
    }
    if !(params.tol.is_finite() && params.tol > 0.0) {
        return Err(Error::param("tol", "must be a positive number"));
    }
    if let Fallback::Ridge { lambda } = params.fallback {
        if !(lambda.is_finite() && lambda > 0.0) {
            return Err(Error::param("fallback.lambda", "must be a positive number"));
        }
    }
    Ok(())
}

/// The logistic function, written to stay finite for large |eta|.
pub fn sigmoid(eta: f64) -> f64 {
    if eta >= 0.0 {
        1.0 / (1.0 + libm::exp(-eta))
    } else {
        let e = libm::exp(eta);
        e / (1.0 + e)
    }
}

/// log(1 + exp(eta)) without overflow.
fn softplus(eta: f64) -> f64 {
    if eta > 0.0 {
        eta + libm::log1p(libm::exp(-eta))
    } else {
        libm::log1p(libm::exp(eta))
    }
}

/// Standardized design, row-major, intercept in column 0.
struct Design {
    z: Vec<f64>,
    n: usize,
    q: usize,
}

impl Design {
    fn build(x: ArrayView2<f64>, means: &[f64], sds: &[f64], kept: &[usize]) -> Design {
        let n = x.nrows();
        let q = kept.len() + 1;
        let mut z = vec![0.0; n * q];
        for (i, row) in z.chunks_exact_mut(q).enumerate() {
            row[0] = 1.0;
            for (pos, &j) in kept.iter().enumerate() {
                row[pos + 1] = (x[[i, j]] - means[j]) / sds[j];
            }
        }
        Design { z, n, q }
    }

    /// Positions (in design columns) that are linear combinations of earlier
    /// design columns, found by an in-order Cholesky of Z'Z.
    fn collinear_columns(&self) -> Vec<usize> {
        let q = self.q;
        let mut g = vec![0.0; q * q];
        let ones = vec![1.0; self.n];
        accumulate_xtwx(&self.z, q, &ones, &mut g);
        let mut l = vec![0.0; q * q];
        let mut bad = Vec::new();
        for j in 0..q {
            let mut d = g[j * q + j];
            for k in 0..j {
                d -= l[j * q + k] * l[j * q + k];
            }
            if d <= 1e-9 * g[j * q + j] {
                bad.push(j);
                continue;
            }
            let djs = d.sqrt();
            l[j * q + j] = djs;
            for i in j + 1..q {
                let mut s = g[j * q + i];
                for k in 0..j {
                    s -= l[i * q + k] * l[j * q + k];
                }
                l[i * q + j] = s / djs;
            }
        }
        bad
    }
}

/// H += sum_i w_i z_i z_i' (upper triangle, row-major q x q). Rows are taken
/// four at a time so each element of H is loaded and stored once per four
/// rows, which matters more than the arithmetic here.
fn accumulate_xtwx(z: &[f64], q: usize, w: &[f64], h: &mut [f64]) {
    let mut blocks = z.chunks_exact(4 * q);
    let mut wi = w.chunks_exact(4);
    for (blk, ww) in (&mut blocks).zip(&mut wi) {
        let (r0, rest) = blk.split_at(q);
        let (r1, rest) = rest.split_at(q);
        let (r2, r3) = rest.split_at(q);
        for a in 0..q {
            let a0 = ww[0] * r0[a];
            let a1 = ww[1] * r1[a];
            let a2 = ww[2] * r2[a];
            let a3 = ww[3] * r3[a];
            let hrow = &mut h[a * q + a..a * q + q];
            let (b0, b1, b2, b3) = (&r0[a..], &r1[a..], &r2[a..], &r3[a..]);
            for (k, hv) in hrow.iter_mut().enumerate() {
                *hv += a0 * b0[k] + a1 * b1[k] + a2 * b2[k] + a3 * b3[k];
            }
        }
    }
    let rest_rows = blocks.remainder();
    let rest_w = wi.remainder();
    for (row, &wv) in rest_rows.chunks_exact(q).zip(rest_w) {
        for a in 0..q {
            let av = wv * row[a];
            let hrow = &mut h[a * q + a..a * q + q];
            for (hv, &b) in hrow.iter_mut().zip(&row[a..]) {
                *hv += av * b;
            }
        }
    }
}

/// In-place Cholesky of the upper triangle of a symmetric positive definite
/// q x q row-major matrix into a lower factor `l`; false if not positive
/// definite.
fn cholesky(h: &[f64], q: usize, l: &mut [f64]) -> bool {
    l.iter_mut().for_each(|v| *v = 0.0);
    for j in 0..q {
        let mut d = h[j * q + j];
        for k in 0..j {
            d -= l[j * q + k] * l[j * q + k];
        }
        if d.is_nan() || d <= 0.0 || !d.is_finite() {
            return false;
        }
        let djs = d.sqrt();
        l[j * q + j] = djs;
        for i in j + 1..q {
            // upper triangle holds (j, i) for j < i
            let mut s = h[j * q + i];
            for k in 0..j {
                s -= l[i * q + k] * l[j * q + k];
            }
            l[i * q + j] = s / djs;
        }
    }
    true
}

/// Solve L L' x = b in place.
fn cholesky_solve(l: &[f64], q: usize, b: &mut [f64]) {
    for i in 0..q {
        let mut s = b[i];
        for k in 0..i {
            s -= l[i * q + k] * b[k];
        }
        b[i] = s / l[i * q + i];
    }
    for i in (0..q).rev() {
        let mut s = b[i];
        for k in i + 1..q {
            s -= l[k * q + i] * b[k];
        }
        b[i] = s / l[i * q + i];
    }
}

#[derive(Clone, Copy)]
enum Penalty {
    None,
    Firth,
    Ridge(f64),
}

struct RawFit {
    beta: Vec<f64>,
    eta: Vec<f64>,
    loglik: f64,
    iterations: usize,
    converged: bool,
    separated: bool,
    max_step: f64,
}

/// One pass over the data: linear predictor, log-likelihood, score vector
/// and information matrix at `beta` (upper triangle).
struct Pass {
    eta: Vec<f64>,
    w: Vec<f64>,
    loglik: f64,
    grad: Vec<f64>,
    info: Vec<f64>,
}

fn evaluate(d: &Design, y: &[f64], beta: &[f64], want_info: bool) -> Pass {
    let q = d.q;
    let mut eta = vec![0.0; d.n];
    let mut w = vec![0.0; d.n];
    let mut grad = vec![0.0; q];
    let mut loglik = 0.0;
    for (i, row) in d.z.chunks_exact(q).enumerate() {
        let e: f64 = row.iter().zip(beta).map(|(a, b)| a * b).sum();
        let p = sigmoid(e);
        eta[i] = e;
        w[i] = p * (1.0 - p);
        loglik += y[i] * e - softplus(e);
        let r = y[i] - p;
        for (g, &zv) in grad.iter_mut().zip(row) {
            *g += r * zv;
        }
    }
    let mut info = vec![0.0; q * q];
    if want_info {
        accumulate_xtwx(&d.z, q, &w, &mut info);
    }
    Pass {
        eta,
        w,
        loglik,
        grad,
        info,
    }
}

/// Penalized objective and modified score for the chosen penalty; returns
/// (objective, gradient, information, factor) or None if the information is
/// not positive definite.
fn penalized(d: &Design, y: &[f64], beta: &[f64], pen: Penalty) -> Option<(Pass, f64, Vec<f64>)> {
    let q = d.q;
    let mut pass = evaluate(d, y, beta, true);
    let mut obj = pass.loglik;
    if let Penalty::Ridge(lambda) = pen {
        for a in 1..q {
            obj -= 0.5 * lambda * beta[a] * beta[a];
            pass.grad[a] -= lambda * beta[a];
            pass.info[a * q + a] += lambda;
        }
    }
    let mut l = vec![0.0; q * q];
    if !cholesky(&pass.info, q, &mut l) {
        return None;
    }
    if let Penalty::Firth = pen {
        // Firth (1993): maximize l(beta) + 1/2 log|I(beta)|; the modified
        // score is X'(y - p + h (1/2 - p)) with h the diagonal of the hat
        // matrix W^1/2 X (X'WX)^-1 X' W^1/2 (Heinze & Schemper 2002, eq. 2).
        let logdet: f64 = (0..q).map(|j| libm::log(l[j * q + j])).sum::<f64>() * 2.0;
        obj += 0.5 * logdet;
        let mut v = vec![0.0; q];
        let mut g = vec![0.0; q];
        for (i, row) in d.z.chunks_exact(q).enumerate() {
            // h_i = w_i |L^-1 z_i|^2
            for a in 0..q {
                let mut s = row[a];
                for k in 0..a {
                    s -= l[a * q + k] * v[k];
                }
                v[a] = s / l[a * q + a];
            }
            let h = pass.w[i] * v.iter().map(|t| t * t).sum::<f64>();
            let p = sigmoid(pass.eta[i]);
            let r = y[i] - p + h * (0.5 - p);
            for (gv, &zv) in g.iter_mut().zip(row) {
                *gv += r * zv;
            }
        }
        pass.grad = g;
    }
    Some((pass, obj, l))
}

/// Newton-Raphson with step halving on the (penalized) objective.
fn newton(d: &Design, y: &[f64], params: &LogitParams, pen: Penalty) -> Result<RawFit> {
    let q = d.q;
    let mut beta = vec![0.0; q];
    let (mut cur, mut obj, mut l) = penalized(d, y, &beta, pen).ok_or_else(|| {
        Error::compute("score model: the information matrix is singular at the start")
    })?;
    let mut iterations = 0;
    let mut converged = false;
    let mut max_step = f64::INFINITY;
    while iterations < params.max_iter {
        iterations += 1;
        let mut step = cur.grad.clone();
        cholesky_solve(&l, q, &mut step);
        max_step = step.iter().fold(0.0f64, |m, s| m.max(s.abs()));
        if !max_step.is_finite() {
            break;
        }
        // Step halving keeps the objective from decreasing (a safeguard
        // that plain Newton lacks when started far from the optimum).
        let mut t = 1.0;
        let mut accepted = None;
        for _ in 0..30 {
            let trial: Vec<f64> = beta.iter().zip(&step).map(|(b, s)| b + t * s).collect();
            if let Some((p2, o2, l2)) = penalized(d, y, &trial, pen) {
                if o2 >= obj - 1e-12 * obj.abs().max(1.0) {
                    accepted = Some((trial, p2, o2, l2));
                    break;
                }
            }
            t *= 0.5;
        }
        let Some((nb, p2, o2, l2)) = accepted else {
            break;
        };
        beta = nb;
        cur = p2;
        obj = o2;
        l = l2;
        max_step *= t;
        if max_step < params.tol {
            converged = true;
            break;
        }
        // Under separation the coefficients grow without bound; once fitted
        // probabilities sit at 0 or 1 more steps only waste passes.
        if matches!(pen, Penalty::None) && iterations >= 8 && cur.eta.iter().any(|e| e.abs() > 30.0)
        {
            break;
        }
    }
    // Separation shows as fitted probabilities numerically at 0 or 1: an
    // |eta| of 30 is a probability within 1e-13 of the boundary, which a
    // finite-sample estimate with a finite MLE essentially never reaches.
    let separated = matches!(pen, Penalty::None) && cur.eta.iter().any(|e| e.abs() > 30.0);
    Ok(RawFit {
        beta,
        loglik: cur.loglik,
        eta: cur.eta,
        iterations,
        converged,
        separated,
        max_step,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rng::Rng;
    use ndarray::Array2;

    fn data(n: usize, p: usize, seed: u64) -> (Array2<f64>, Vec<bool>) {
        let mut r = Rng::new(seed);
        let x = Array2::from_shape_fn((n, p), |_| r.normal());
        let t = (0..n)
            .map(|i| {
                let e: f64 = -0.3
                    + (0..p)
                        .map(|j| 0.4 * x[[i, j]] / (j + 1) as f64)
                        .sum::<f64>();
                r.bernoulli(sigmoid(e))
            })
            .collect();
        (x, t)
    }

    #[test]
    fn score_equations_hold_at_the_fit() {
        let (x, t) = data(500, 4, 1);
        let f = fit_logistic(x.view(), &t, &LogitParams::default()).unwrap();
        assert_eq!(f.method, FitMethod::MaximumLikelihood);
        assert!(f.converged);
        // At the MLE, X'(y - p) = 0 (including the intercept: sum y = sum p).
        let sy: f64 = t.iter().filter(|&&v| v).count() as f64;
        let sp: f64 = f.scores.iter().sum();
        assert!((sy - sp).abs() < 1e-8);
        for j in 0..4 {
            let g: f64 = (0..500)
                .map(|i| x[[i, j]] * ((t[i] as u8 as f64) - f.scores[i]))
                .sum();
            assert!(g.abs() < 1e-7, "{g}");
        }
        // coefficients reproduce the logit
        for i in 0..500 {
            let e = f.coefficients[0]
                + (0..4)
                    .map(|j| f.coefficients[j + 1] * x[[i, j]])
                    .sum::<f64>();
            assert!((e - f.logit[i]).abs() < 1e-9);
        }
    }

    #[test]
    fn constant_and_duplicate_columns_are_dropped_with_warning() {
        let (x0, t) = data(300, 2, 2);
        let mut x = Array2::zeros((300, 4));
        for i in 0..300 {
            x[[i, 0]] = x0[[i, 0]];
            x[[i, 1]] = 5.0;
            x[[i, 2]] = x0[[i, 1]];
            x[[i, 3]] = x0[[i, 0]];
        }
        let f = fit_logistic(x.view(), &t, &LogitParams::default()).unwrap();
        assert_eq!(f.dropped_columns, vec![1, 3]);
        assert!(f.warnings.iter().any(|w| w.contains("column 1")));
        assert!(f.warnings.iter().any(|w| w.contains("column 3")));
        assert_eq!(f.coefficients[2], 0.0);
        assert_eq!(f.coefficients[4], 0.0);
        let g = fit_logistic(x0.view(), &t, &LogitParams::default()).unwrap();
        for (a, b) in f.logit.iter().zip(&g.logit) {
            assert!((a - b).abs() < 1e-9);
        }
    }

    #[test]
    fn a_full_set_of_level_indicators_drops_the_last_one() {
        let mut r = Rng::new(3);
        let n = 400;
        let level: Vec<usize> = (0..n).map(|_| r.below(3)).collect();
        let x = Array2::from_shape_fn((n, 3), |(i, j)| (level[i] == j) as u8 as f64);
        let t: Vec<bool> = (0..n)
            .map(|i| r.bernoulli(0.3 + 0.2 * level[i] as f64))
            .collect();
        let f = fit_logistic(x.view(), &t, &LogitParams::default()).unwrap();
        assert_eq!(f.dropped_columns, vec![2]);
        assert!(f.converged);
    }

    #[test]
    fn separation_falls_back_to_firth_with_a_warning() {
        let n = 40;
        let x = Array2::from_shape_fn((n, 1), |(i, _)| i as f64);
        let t: Vec<bool> = (0..n).map(|i| i >= 20).collect();
        let f = fit_logistic(x.view(), &t, &LogitParams::default()).unwrap();
        assert_eq!(f.method, FitMethod::Firth);
        assert!(f.converged);
        assert!(f.warnings.iter().any(|w| w.contains("Firth")));
        assert!(f.coefficients.iter().all(|c| c.is_finite()));
        let strict = LogitParams {
            fallback: Fallback::Fail,
            ..LogitParams::default()
        };
        assert!(fit_logistic(x.view(), &t, &strict).is_err());
    }

    #[test]
    fn firth_matches_its_score_equation() {
        let (x, t) = data(60, 2, 5);
        let p = LogitParams::default();
        let y: Vec<f64> = t.iter().map(|&b| b as u8 as f64).collect();
        let mean: Vec<f64> = (0..2).map(|j| x.column(j).mean().unwrap()).collect();
        let sd: Vec<f64> = (0..2).map(|j| x.column(j).std(1.0)).collect();
        let d = Design::build(x.view(), &mean, &sd, &[0, 1]);
        let f = newton(&d, &y, &p, Penalty::Firth).unwrap();
        assert!(f.converged);
        let (pass, _, _) = penalized(&d, &y, &f.beta, Penalty::Firth).unwrap();
        assert!(pass.grad.iter().all(|g| g.abs() < 1e-8));
    }

    #[test]
    fn bad_input_is_an_error_not_a_panic() {
        let x = Array2::from_shape_fn((4, 1), |(i, _)| i as f64);
        assert!(fit_logistic(x.view(), &[true; 4], &LogitParams::default()).is_err());
        assert!(fit_logistic(x.view(), &[true, false], &LogitParams::default()).is_err());
        let mut y = x.clone();
        y[[2, 0]] = f64::NAN;
        let e = fit_logistic(
            y.view(),
            &[true, false, true, false],
            &LogitParams::default(),
        )
        .unwrap_err();
        assert!(e.to_string().contains("row index 2"));
    }
}
