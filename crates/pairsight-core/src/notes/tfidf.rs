//! TF-IDF vectors in compressed sparse rows, and the note-cosine distance.
//!
//! Weights follow scikit-learn's defaults (Pedregosa et al. 2011): raw term
//! counts times the smoothed inverse document frequency
//! idf(t) = ln((1 + n) / (1 + df(t))) + 1, each row then scaled to unit
//! Euclidean length (Salton & Buckley 1988, "Term-weighting approaches in
//! automatic text retrieval", Inf Process Manag 24(5):513-523, for the scheme).

use serde::{Deserialize, Serialize};

/// A sparse matrix in compressed sparse rows: row `i` holds the columns
/// `indices[indptr[i]..indptr[i + 1]]` (increasing) with `values` alongside.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SparseRows {
    /// Number of columns.
    pub n_cols: usize,
    /// Row starts into `indices` and `values`; length rows + 1.
    pub indptr: Vec<usize>,
    /// Column of each stored value.
    pub indices: Vec<u32>,
    /// Stored values.
    pub values: Vec<f64>,
}

impl SparseRows {
    /// Number of rows.
    pub fn n_rows(&self) -> usize {
        self.indptr.len().saturating_sub(1)
    }

    /// Columns and values of row `i` (empty when `i` is out of range).
    pub fn row(&self, i: usize) -> (&[u32], &[f64]) {
        match (self.indptr.get(i), self.indptr.get(i + 1)) {
            (Some(&a), Some(&b)) => (&self.indices[a..b], &self.values[a..b]),
            _ => (&[], &[]),
        }
    }

    /// Dot product of rows `i` and `j` by merging their sorted columns.
    pub fn row_dot(&self, i: usize, j: usize) -> f64 {
        let (ci, vi) = self.row(i);
        let (cj, vj) = self.row(j);
        let (mut a, mut b, mut s) = (0, 0, 0.0);
        while a < ci.len() && b < cj.len() {
            match ci[a].cmp(&cj[b]) {
                std::cmp::Ordering::Less => a += 1,
                std::cmp::Ordering::Greater => b += 1,
                std::cmp::Ordering::Equal => {
                    s += vi[a] * vj[b];
                    a += 1;
                    b += 1;
                }
            }
        }
        s
    }

    /// The matrix as dense rows (for small matrices and tests).
    pub fn to_dense(&self) -> Vec<Vec<f64>> {
        (0..self.n_rows())
            .map(|i| {
                let mut r = vec![0.0; self.n_cols];
                let (c, v) = self.row(i);
                for (&k, &x) in c.iter().zip(v) {
                    r[k as usize] = x;
                }
                r
            })
            .collect()
    }
}

/// Smoothed inverse document frequency, ln((1 + n) / (1 + df)) + 1.
pub fn smooth_idf(n_docs: usize, df: usize) -> f64 {
    libm::log((1.0 + n_docs as f64) / (1.0 + df as f64)) + 1.0
}

/// TF-IDF rows from raw counts (columns already sorted per row). Returns the
/// matrix and the idf of each column. Rows without terms stay empty (a zero
/// vector), never NaN.
pub(crate) fn tfidf(counts: &SparseRows) -> (SparseRows, Vec<f64>) {
    let n = counts.n_rows();
    let mut df = vec![0usize; counts.n_cols];
    for &c in &counts.indices {
        df[c as usize] += 1;
    }
    let idf: Vec<f64> = df.iter().map(|&d| smooth_idf(n, d)).collect();
    let mut values = Vec::with_capacity(counts.values.len());
    for i in 0..n {
        let (c, v) = counts.row(i);
        let start = values.len();
        let mut ss = 0.0;
        for (&k, &x) in c.iter().zip(v) {
            let w = x * idf[k as usize];
            ss += w * w;
            values.push(w);
        }
        if ss > 0.0 {
            let inv = 1.0 / ss.sqrt();
            for w in &mut values[start..] {
                *w *= inv;
            }
        }
    }
    (
        SparseRows {
            n_cols: counts.n_cols,
            indptr: counts.indptr.clone(),
            indices: counts.indices.clone(),
            values,
        },
        idf,
    )
}

/// Note-cosine distance: 1 minus the cosine similarity of TF-IDF rows `i`
/// and `j`. Rows are unit length, so the similarity is their dot product.
/// A note is at distance 0 from itself; a note without terms (zero row) is
/// at distance 1 from every other note, as scikit-learn's `cosine_distances`
/// has it; out-of-range rows count as empty. The result is clamped to
/// [0, 2] against rounding.
pub fn cosine_distance(tfidf: &SparseRows, i: usize, j: usize) -> f64 {
    if i == j {
        return 0.0;
    }
    let (ci, _) = tfidf.row(i);
    let (cj, _) = tfidf.row(j);
    if ci.is_empty() || cj.is_empty() {
        return 1.0;
    }
    (1.0 - tfidf.row_dot(i, j)).clamp(0.0, 2.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tfidf_rows_are_unit_and_idf_smoothed() {
        // Two docs: "aa bb" and "aa"; df(aa) = 2, df(bb) = 1.
        let counts = SparseRows {
            n_cols: 2,
            indptr: vec![0, 2, 3, 3],
            indices: vec![0, 1, 0],
            values: vec![1.0, 1.0, 1.0],
        };
        let (t, idf) = tfidf(&counts);
        assert!((idf[0] - (libm::log(4.0f64 / 3.0) + 1.0)).abs() < 1e-15);
        assert!((idf[1] - (libm::log(4.0f64 / 2.0) + 1.0)).abs() < 1e-15);
        let r0: f64 = t.row(0).1.iter().map(|x| x * x).sum();
        assert!((r0 - 1.0).abs() < 1e-15);
        assert_eq!(t.row(1).1, &[1.0]);
        assert_eq!(t.row(2).1.len(), 0);
        assert_eq!(cosine_distance(&t, 1, 1), 0.0);
        assert_eq!(cosine_distance(&t, 2, 2), 0.0);
        assert_eq!(cosine_distance(&t, 1, 2), 1.0);
        let d = cosine_distance(&t, 0, 1);
        assert!((d - (1.0 - idf[0] / (idf[0].powi(2) + idf[1].powi(2)).sqrt())).abs() < 1e-15);
    }
}
