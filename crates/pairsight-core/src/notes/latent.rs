//! Latent dimensions: a truncated singular value decomposition of the TF-IDF
//! matrix (latent semantic analysis, Deerwester, Dumais, Furnas, Landauer &
//! Harshman 1990, JASIS 41(6):391-407), computed by randomized subspace
//! iteration (Halko, Martinsson & Tropp 2011, "Finding structure with
//! randomness", SIAM Review 53(2):217-288, Algorithm 4.4 with the final steps
//! of Algorithm 5.1, the final small SVD taken through the Gram matrix of the
//! projected block). Small dense QR and eigen steps use nalgebra.

use nalgebra::DMatrix;
use ndarray::Array2;

use super::tfidf::SparseRows;
use crate::rng::Rng;
use crate::{Error, Result};

/// Extra random directions beyond the k wanted (Halko et al. 2011, section
/// 4.2, suggest p = 5 or 10).
pub const OVERSAMPLE: usize = 10;
/// Power iterations q (Halko et al. 2011, section 4.5): each applies A and
/// its transpose once more, sharpening the decay of the spectrum. Our rounds
/// apply A'A q + 1 times, as many products as Algorithm 4.4 with q.
pub const POWER_ITERATIONS: usize = 4;

/// The latent step's result.
#[derive(Debug, Clone, PartialEq)]
pub struct Latent {
    /// Scores of each row on each dimension, U times Sigma (rows x k), the
    /// same quantity as projecting each TF-IDF row on the right singular
    /// vectors.
    pub scores: Array2<f64>,
    /// Singular values, largest first.
    pub singular_values: Vec<f64>,
}

/// Dense row-major products with a sparse matrix, in the element type of
/// the block: single precision during the power iterations (half the memory
/// traffic, twice the SIMD width), double precision for the final step.
trait Elem: Copy + Default + std::ops::Mul<Output = Self> + std::ops::AddAssign {
    fn of(x: f64) -> Self;
}
impl Elem for f32 {
    fn of(x: f64) -> Self {
        x as f32
    }
}
impl Elem for f64 {
    fn of(x: f64) -> Self {
        x
    }
}

/// Columns of y summed at once in registers by [`mul`].
const STRIP: usize = 20;

/// y = A z, with z (cols x l) and y (rows x l) dense row-major; rows of y
/// are computed independently, so blocks of them go to separate threads.
///
/// Each row of y is summed in strips of [`STRIP`] columns held in a local
/// array (registers) across the row's nonzeros, rather than loading and
/// storing the whole row of y for every nonzero. Every element is still the
/// sum of the same products in the same order, so the result is the same to
/// the bit.
fn mul<T: Elem + Send + Sync>(
    indptr: &[usize],
    indices: &[u32],
    values: &[T],
    z: &[T],
    l: usize,
    y: &mut [T],
) {
    super::parallel::for_row_blocks(y, l, 512, |first, block| {
        for (k, yi) in block.chunks_exact_mut(l).enumerate() {
            let i = first + k;
            let (a, b) = (indptr[i], indptr[i + 1]);
            let (cols, xs) = (&indices[a..b], &values[a..b]);
            let mut c0 = 0;
            while c0 + STRIP <= l {
                let mut acc = [T::default(); STRIP];
                for (&j, &x) in cols.iter().zip(xs) {
                    let at = j as usize * l + c0;
                    for (t, &s) in acc.iter_mut().zip(&z[at..at + STRIP]) {
                        *t += x * s;
                    }
                }
                yi[c0..c0 + STRIP].copy_from_slice(&acc);
                c0 += STRIP;
            }
            if c0 < l {
                let tail = &mut yi[c0..];
                tail.fill(T::default());
                for (&j, &x) in cols.iter().zip(xs) {
                    let at = j as usize * l + c0;
                    for (t, &s) in tail.iter_mut().zip(&z[at..at + (l - c0)]) {
                        *t += x * s;
                    }
                }
            }
        }
    });
}

/// Orthonormal basis of the columns of a row-major r x l block, in place:
/// Cholesky QR (Q = Z R^-1 with R'R = Z'Z, Gram matrix accumulated in double
/// precision; Stathopoulos & Wu 2002, SIAM J Sci Comput 23(6):2165-2182),
/// falling back to Householder QR when the Gram matrix is too ill-conditioned
/// for a safe Cholesky factor (for example a rank-deficient block).
fn orthonormalize<T: Elem + Into<f64> + Send + Sync>(buf: &mut [T], r: usize, l: usize) {
    let g = gram(buf, l);
    let max_diag = (0..l).map(|a| g[(a, a)]).fold(0.0, f64::max);
    let chol = nalgebra::Cholesky::new(g).map(|c| c.l());
    let ok = chol.as_ref().is_some_and(|lower| {
        max_diag > 0.0 && (0..l).all(|a| lower[(a, a)] * lower[(a, a)] > 1e-10 * max_diag)
    });
    match chol {
        Some(lower) if ok => {
            // Rows of L as plain slices for the inner loop.
            let lrows: Vec<f64> = (0..l)
                .flat_map(|j| (0..l).map(move |i| (j, i)))
                .map(|(j, i)| lower[(j, i)])
                .collect();
            // Each row q solves L q' = z' (forward substitution); rows are
            // independent, so blocks of them go to separate threads.
            super::parallel::for_row_blocks(buf, l, 512, |_, block| {
                let mut row = vec![0.0f64; l];
                for chunk in block.chunks_exact_mut(l) {
                    for (d, &x) in row.iter_mut().zip(chunk.iter()) {
                        *d = x.into();
                    }
                    for j in 0..l {
                        let lj = &lrows[j * l..j * l + j];
                        let dot: f64 = lj.iter().zip(&row[..j]).map(|(a, b)| a * b).sum();
                        row[j] = (row[j] - dot) / lrows[j * l + j];
                    }
                    for (d, &x) in chunk.iter_mut().zip(&row) {
                        *d = T::of(x);
                    }
                }
            });
        }
        _ => {
            let m = DMatrix::from_fn(r, l, |i, j| buf[i * l + j].into());
            let q = m.qr().q();
            for i in 0..r {
                for j in 0..l {
                    buf[i * l + j] = T::of(q[(i, j)]);
                }
            }
        }
    }
}

/// The Gram matrix B'B (l x l, double precision) of a row-major r x l block,
/// summed row by row in a fixed order (so the result never depends on
/// threads).
fn gram<T: Elem + Into<f64>>(buf: &[T], l: usize) -> DMatrix<f64> {
    let mut upper = vec![0.0f64; l * l];
    let mut row = vec![0.0f64; l];
    for chunk in buf.chunks_exact(l) {
        for (d, &x) in row.iter_mut().zip(chunk) {
            *d = x.into();
        }
        for a in 0..l {
            let ra = row[a];
            if ra != 0.0 {
                for (g, &rb) in upper[a * l + a..a * l + l].iter_mut().zip(&row[a..]) {
                    *g += ra * rb;
                }
            }
        }
    }
    DMatrix::from_fn(l, l, |a, b| {
        if a <= b {
            upper[a * l + b]
        } else {
            upper[b * l + a]
        }
    })
}

/// The transpose of `a` with values `values` (those of `a`, possibly in
/// another precision), so that products with A' read rows too.
struct Transposed<T> {
    indptr: Vec<usize>,
    indices: Vec<u32>,
    values: Vec<T>,
}

fn transpose<T: Elem>(a: &SparseRows, values: &[T]) -> Transposed<T> {
    let mut indptr = vec![0usize; a.n_cols + 1];
    for &c in &a.indices {
        indptr[c as usize + 1] += 1;
    }
    for k in 0..a.n_cols {
        indptr[k + 1] += indptr[k];
    }
    let mut next = indptr.clone();
    let mut indices = vec![0u32; a.indices.len()];
    let mut out = vec![T::default(); values.len()];
    for i in 0..a.n_rows() {
        let (lo, hi) = (a.indptr[i], a.indptr[i + 1]);
        for (&k, &x) in a.indices[lo..hi].iter().zip(&values[lo..hi]) {
            let p = next[k as usize];
            indices[p] = i as u32;
            out[p] = x;
            next[k as usize] += 1;
        }
    }
    Transposed {
        indptr,
        indices,
        values: out,
    }
}

/// Eigen-decomposition of the l x l Gram matrix B'B of a tall row-major
/// r x l buffer B: singular values of B (largest first) and its right
/// singular vectors as columns. Squaring costs relative accuracy of about
/// machine epsilon times (s_1 / s_j)^2, far below what latent features need.
fn gram_svd(buf: &[f64], l: usize) -> Result<(Vec<f64>, DMatrix<f64>)> {
    let g = gram(buf, l);
    let eig = nalgebra::SymmetricEigen::try_new(g, f64::EPSILON, 0).ok_or_else(|| {
        Error::compute(
            "the latent step's eigen-decomposition did not converge; try fewer latent dimensions",
        )
    })?;
    let mut order: Vec<usize> = (0..l).collect();
    order.sort_by(|&a, &b| {
        eig.eigenvalues[b]
            .total_cmp(&eig.eigenvalues[a])
            .then(a.cmp(&b))
    });
    let s = order
        .iter()
        .map(|&k| eig.eigenvalues[k].max(0.0).sqrt())
        .collect();
    let v = DMatrix::from_fn(l, l, |i, j| eig.eigenvectors[(i, order[j])]);
    Ok((s, v))
}

/// Truncated SVD of `a` to `k` dimensions (fewer when the matrix has fewer
/// rows or columns). Deterministic for a given seed.
///
/// A row without terms scores 0 on every dimension.
///
/// Sign convention: singular vectors have arbitrary signs, so each latent
/// column is flipped to make its entry of largest absolute value positive
/// (the first such row on ties).
pub fn truncated_svd(a: &SparseRows, k: usize, seed: u64) -> Result<Latent> {
    let (n, m) = (a.n_rows(), a.n_cols);
    let k = k.min(n).min(m);
    if k == 0 || a.values.iter().all(|&x| x == 0.0) {
        return Ok(Latent {
            scores: Array2::zeros((n, k)),
            singular_values: vec![0.0; k],
        });
    }
    let small = n.min(m);
    let l = (k + OVERSAMPLE).min(small);
    let mut rng = Rng::new(seed);
    let mut scores = Array2::<f64>::zeros((n, k));
    let sv: Vec<f64>;
    let a32: Vec<f32> = a.values.iter().map(|&x| x as f32).collect();
    let at = transpose(a, &a32);
    // Power iterations in single precision on the smaller side; the result
    // is re-orthonormalized in double precision before the final step.
    let (side, other) = if m <= n { (m, n) } else { (n, m) };
    let (first, second) = if m <= n {
        (
            (&a.indptr, &a.indices, &a32),
            (&at.indptr, &at.indices, &at.values),
        )
    } else {
        (
            (&at.indptr, &at.indices, &at.values),
            (&a.indptr, &a.indices, &a32),
        )
    };
    let mut q: Vec<f32> = (0..side * l).map(|_| rng.normal() as f32).collect();
    let mut tmp = vec![0.0f32; other * l];
    for _ in 0..=POWER_ITERATIONS {
        mul(first.0, first.1, first.2, &q, l, &mut tmp);
        mul(second.0, second.1, second.2, &tmp, l, &mut q);
        orthonormalize(&mut q, side, l);
    }
    let mut q: Vec<f64> = q.into_iter().map(f64::from).collect();
    orthonormalize(&mut q, side, l);
    let mut y = vec![0.0f64; other * l];
    if m <= n {
        // Q spans the top right singular vectors: A Q = U S W', so
        // U S = A Q W (Rayleigh-Ritz on the subspace).
        mul(&a.indptr, &a.indices, &a.values, &q, l, &mut y);
        let (s, w) = gram_svd(&y, l)?;
        let wc: Vec<f64> = w.as_slice().to_vec(); // column-major: column c at c * l
        for (i, yi) in y.chunks_exact(l).enumerate() {
            for c in 0..k {
                let t: f64 = yi
                    .iter()
                    .zip(&wc[c * l..c * l + l])
                    .map(|(a, b)| a * b)
                    .sum();
                scores[[i, c]] = t;
            }
        }
        sv = s;
    } else {
        // Q spans the top left singular vectors: A' Q = V S W', so
        // A ~ Q Q' A = (Q W) S V', and U S = Q W S.
        let at64 = transpose(a, &a.values);
        mul(&at64.indptr, &at64.indices, &at64.values, &q, l, &mut y);
        let (s, w) = gram_svd(&y, l)?;
        let wc: Vec<f64> = w.as_slice().to_vec(); // column-major: column c at c * l
        for (i, qi) in q.chunks_exact(l).enumerate() {
            for c in 0..k {
                let t: f64 = qi
                    .iter()
                    .zip(&wc[c * l..c * l + l])
                    .map(|(a, b)| a * b)
                    .sum();
                scores[[i, c]] = t * s[c];
            }
        }
        sv = s;
    }
    // U S and A V agree in exact arithmetic; make a note without terms score
    // exactly 0 rather than rounding noise.
    for i in 0..n {
        if a.row(i).0.is_empty() {
            scores.row_mut(i).fill(0.0);
        }
    }
    for c in 0..k {
        let mut best = 0usize;
        for i in 1..n {
            if scores[[i, c]].abs() > scores[[best, c]].abs() {
                best = i;
            }
        }
        if scores[[best, c]] < 0.0 {
            scores.column_mut(c).mapv_inplace(|x| -x);
        }
    }
    if scores.iter().any(|x| !x.is_finite()) || sv.iter().any(|x| !x.is_finite()) {
        return Err(Error::compute(
            "the latent step produced non-finite values; try fewer latent dimensions",
        ));
    }
    Ok(Latent {
        scores,
        singular_values: sv[..k].to_vec(),
    })
}

/// 1 minus the cosine similarity of latent rows `i` and `j`: 0 when
/// `i == j`, 1 when either row is zero or out of range. Clamped to [0, 2]
/// against rounding.
pub fn latent_cosine_distance(latent: &Array2<f64>, i: usize, j: usize) -> f64 {
    if i == j {
        return 0.0;
    }
    if i >= latent.nrows() || j >= latent.nrows() {
        return 1.0;
    }
    let (a, b) = (latent.row(i), latent.row(j));
    let (na, nb) = (a.dot(&a).sqrt(), b.dot(&b).sqrt());
    if na == 0.0 || nb == 0.0 {
        return 1.0;
    }
    (1.0 - a.dot(&b) / (na * nb)).clamp(0.0, 2.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn dense_to_sparse(rows: &[Vec<f64>]) -> SparseRows {
        let mut s = SparseRows {
            n_cols: rows[0].len(),
            indptr: vec![0],
            indices: vec![],
            values: vec![],
        };
        for r in rows {
            for (j, &x) in r.iter().enumerate() {
                if x != 0.0 {
                    s.indices.push(j as u32);
                    s.values.push(x);
                }
            }
            s.indptr.push(s.indices.len());
        }
        s
    }

    fn exact_singular_values(rows: &[Vec<f64>]) -> Vec<f64> {
        let m = DMatrix::from_fn(rows.len(), rows[0].len(), |i, j| rows[i][j]);
        let mut s: Vec<f64> = m.singular_values().iter().copied().collect();
        s.sort_by(|a, b| b.total_cmp(a));
        s
    }

    #[test]
    fn matches_exact_svd_on_both_sides() {
        let mut rng = Rng::new(11);
        for (n, m) in [(40, 15), (15, 40), (30, 30)] {
            let rows: Vec<Vec<f64>> = (0..n)
                .map(|_| {
                    (0..m)
                        .map(|_| {
                            if rng.uniform() < 0.3 {
                                rng.uniform()
                            } else {
                                0.0
                            }
                        })
                        .collect()
                })
                .collect();
            let a = dense_to_sparse(&rows);
            let lat = truncated_svd(&a, 4, 3).unwrap();
            let exact = exact_singular_values(&rows);
            for (x, e) in lat.singular_values.iter().zip(&exact) {
                assert!((x - e).abs() <= 1e-6 * e, "{n}x{m}: {x} vs {e}");
            }
            // Scores are U S: their column norms are the singular values.
            for c in 0..4 {
                let norm = lat.scores.column(c).dot(&lat.scores.column(c)).sqrt();
                assert!((norm - lat.singular_values[c]).abs() < 1e-8 * norm);
            }
        }
    }

    #[test]
    fn same_seed_same_result_and_rank_deficient_is_finite() {
        let rows = vec![vec![1.0, 0.0, 0.0], vec![2.0, 0.0, 0.0], vec![0.0; 3]];
        let a = dense_to_sparse(&rows);
        let x = truncated_svd(&a, 3, 1).unwrap();
        let y = truncated_svd(&a, 3, 1).unwrap();
        assert_eq!(x, y);
        assert!((x.singular_values[0] - 5f64.sqrt()).abs() < 1e-12);
        assert!(x.singular_values[1].abs() < 1e-12);
        assert!(x.scores[[1, 0]] > 0.0);
        assert_eq!(latent_cosine_distance(&x.scores, 0, 1), 0.0);
        assert_eq!(latent_cosine_distance(&x.scores, 0, 2), 1.0);
    }
}
