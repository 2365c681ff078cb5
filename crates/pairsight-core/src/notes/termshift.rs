//! Term shift: which words are over-represented in one group, before and
//! after matching, by the log-odds ratio with an informative Dirichlet prior
//! (Monroe, Colaresi & Quinn 2008, "Fightin' words: lexical feature selection
//! and evaluation for identifying the content of political conflict",
//! Political Analysis 16(4):372-403, section 3.5).

use serde::{Deserialize, Serialize};

use super::tfidf::SparseRows;
use crate::{Error, Result};

/// Options of the term shift.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct TermShiftOptions {
    /// How many terms to keep on each side (treated, comparison), before and
    /// after matching (default 20).
    pub top: usize,
    /// Weight of the prior as a share of the corpus: alpha_0 = share times
    /// the corpus token count, and the prior for term w is
    /// alpha_w = alpha_0 * (corpus count of w) / (corpus tokens), from the
    /// unweighted counts of all notes. Our default, 0.01, makes the prior
    /// worth 1% of the notes, so it tempers rare terms and leaves common ones
    /// to the data.
    pub prior_share: f64,
}

impl Default for TermShiftOptions {
    fn default() -> Self {
        TermShiftOptions {
            top: 20,
            prior_share: 0.01,
        }
    }
}

/// One term of the term shift. Positive values lean to the treated group.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TermShiftRow {
    /// The term.
    pub term: String,
    /// Its count in all notes (unweighted).
    pub count: f64,
    /// Log-odds ratio, treated versus comparison, before matching.
    pub delta_before: f64,
    /// Its z-score before matching.
    pub z_before: f64,
    /// Log-odds ratio after matching (matched-set weights).
    pub delta_after: f64,
    /// Its z-score after matching.
    pub z_after: f64,
}

/// The term shift of a cohort's notes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TermShift {
    /// The prior weight alpha_0 used, in tokens.
    pub alpha0: f64,
    /// Weighted tokens of the treated group before and after matching.
    pub treated_tokens: [f64; 2],
    /// Weighted tokens of the comparison group before and after matching.
    pub comparison_tokens: [f64; 2],
    /// The top terms each way before and the top terms each way after
    /// matching (each term once), by z before matching, largest first.
    pub rows: Vec<TermShiftRow>,
}

/// Log-odds ratio with an informative Dirichlet prior and its z-score for
/// every term (Monroe et al. 2008, eqs. 16 and 18-20):
/// delta_w = ln[(y_wt + a_w) / (n_t + a_0 - y_wt - a_w)]
///         - ln[(y_wc + a_w) / (n_c + a_0 - y_wc - a_w)],
/// var(delta_w) ~ 1 / (y_wt + a_w) + 1 / (y_wc + a_w), z_w = delta_w / sd.
pub fn log_odds_dirichlet(
    treated: &[f64],
    comparison: &[f64],
    prior: &[f64],
) -> (Vec<f64>, Vec<f64>) {
    let nt: f64 = treated.iter().sum();
    let nc: f64 = comparison.iter().sum();
    let a0: f64 = prior.iter().sum();
    let mut delta = Vec::with_capacity(prior.len());
    let mut z = Vec::with_capacity(prior.len());
    for ((&yt, &yc), &a) in treated.iter().zip(comparison).zip(prior) {
        let d = libm::log((yt + a) / (nt + a0 - yt - a)) - libm::log((yc + a) / (nc + a0 - yc - a));
        let var = 1.0 / (yt + a) + 1.0 / (yc + a);
        delta.push(d);
        z.push(d / var.sqrt());
    }
    (delta, z)
}

fn check_weights(name: &str, w: &[f64], n: usize) -> Result<()> {
    if w.len() != n {
        return Err(Error::param(
            name,
            format!(
                "has {} values for {n} notes; give one weight per note",
                w.len()
            ),
        ));
    }
    if let Some(i) = w.iter().position(|x| !x.is_finite() || *x < 0.0) {
        return Err(Error::param(
            name,
            format!(
                "weight {} of note {} is not a finite number >= 0",
                w[i],
                i + 1
            ),
        ));
    }
    Ok(())
}

fn group_counts(counts: &SparseRows, treated: &[bool], weights: &[f64]) -> (Vec<f64>, Vec<f64>) {
    let mut t = vec![0.0; counts.n_cols];
    let mut c = vec![0.0; counts.n_cols];
    for i in 0..counts.n_rows() {
        let w = weights[i];
        if w == 0.0 {
            continue;
        }
        let target = if treated[i] { &mut t } else { &mut c };
        let (cols, vals) = counts.row(i);
        for (&k, &x) in cols.iter().zip(vals) {
            target[k as usize] += w * x;
        }
    }
    (t, c)
}

/// Term shift from raw term counts (`NoteFeatures::counts`), treated versus
/// comparison, with per-note weights before matching (usually all 1) and
/// after matching (matched-set weights, 0 for unmatched notes).
pub fn term_shift(
    counts: &SparseRows,
    vocabulary: &[String],
    treated: &[bool],
    weights_before: &[f64],
    weights_after: &[f64],
    options: &TermShiftOptions,
) -> Result<TermShift> {
    let n = counts.n_rows();
    if vocabulary.len() != counts.n_cols {
        return Err(Error::param(
            "vocabulary",
            format!(
                "has {} terms but the counts have {} columns",
                vocabulary.len(),
                counts.n_cols
            ),
        ));
    }
    if treated.len() != n {
        return Err(Error::param(
            "treated",
            format!("has {} values for {n} notes", treated.len()),
        ));
    }
    check_weights("weights_before", weights_before, n)?;
    check_weights("weights_after", weights_after, n)?;
    if !(options.prior_share.is_finite() && options.prior_share > 0.0) {
        return Err(Error::param(
            "prior_share",
            "must be a finite number > 0 (default 0.01)",
        ));
    }
    let mut corpus = vec![0.0; counts.n_cols];
    for (&k, &x) in counts.indices.iter().zip(&counts.values) {
        corpus[k as usize] += x;
    }
    let total: f64 = corpus.iter().sum();
    if total <= 0.0 {
        return Err(Error::compute(
            "the notes hold no terms, so there is no term shift to show",
        ));
    }
    let alpha0 = options.prior_share * total;
    let prior: Vec<f64> = corpus.iter().map(|&y| alpha0 * y / total).collect();
    let (tb, cb) = group_counts(counts, treated, weights_before);
    let (ta, ca) = group_counts(counts, treated, weights_after);
    let sums = |v: &[f64]| v.iter().sum::<f64>();
    let tokens = [sums(&tb), sums(&cb), sums(&ta), sums(&ca)];
    for (k, what) in [
        "treated notes before matching",
        "comparison notes before matching",
        "treated notes after matching",
        "comparison notes after matching",
    ]
    .iter()
    .enumerate()
    {
        if tokens[k] <= 0.0 {
            return Err(Error::compute(format!(
                "the {what} hold no terms (or all have weight 0), so the term shift cannot compare the groups"
            )));
        }
    }
    let (db, zb) = log_odds_dirichlet(&tb, &cb, &prior);
    let (da, za) = log_odds_dirichlet(&ta, &ca, &prior);
    let mut keep = vec![false; counts.n_cols];
    for z in [&zb, &za] {
        let mut order: Vec<usize> = (0..counts.n_cols).collect();
        order.sort_by(|&a, &b| z[b].total_cmp(&z[a]).then(a.cmp(&b)));
        for &k in order.iter().take(options.top) {
            keep[k] = true;
        }
        order.sort_by(|&a, &b| z[a].total_cmp(&z[b]).then(a.cmp(&b)));
        for &k in order.iter().take(options.top) {
            keep[k] = true;
        }
    }
    let mut picked: Vec<usize> = (0..counts.n_cols).filter(|&k| keep[k]).collect();
    picked.sort_by(|&a, &b| zb[b].total_cmp(&zb[a]).then(a.cmp(&b)));
    Ok(TermShift {
        alpha0,
        treated_tokens: [tokens[0], tokens[2]],
        comparison_tokens: [tokens[1], tokens[3]],
        rows: picked
            .into_iter()
            .map(|k| TermShiftRow {
                term: vocabulary[k].clone(),
                count: corpus[k],
                delta_before: db[k],
                z_before: zb[k],
                delta_after: da[k],
                z_after: za[k],
            })
            .collect(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn counts(rows: &[&[(u32, f64)]], n_cols: usize) -> SparseRows {
        let mut s = SparseRows {
            n_cols,
            indptr: vec![0],
            indices: vec![],
            values: vec![],
        };
        for r in rows {
            for &(k, x) in *r {
                s.indices.push(k);
                s.values.push(x);
            }
            s.indptr.push(s.indices.len());
        }
        s
    }

    #[test]
    fn formula_by_hand() {
        // y_t = (3, 1), y_c = (1, 3), prior (1, 1): n_t = n_c = 4, a0 = 2.
        // delta_0 = ln(4 / 2) - ln(2 / 4) = 2 ln 2; var = 1/4 + 1/2.
        let (d, z) = log_odds_dirichlet(&[3.0, 1.0], &[1.0, 3.0], &[1.0, 1.0]);
        assert!((d[0] - 2.0 * libm::log(2f64)).abs() < 1e-15);
        assert!((z[0] - 2.0 * libm::log(2f64) / 0.75f64.sqrt()).abs() < 1e-15);
        assert!((d[1] + d[0]).abs() < 1e-15);
    }

    #[test]
    fn matching_weights_can_remove_the_shift() {
        // Term 0 is common in treated notes and in one comparison note.
        let c = counts(
            &[
                &[(0, 5.0), (1, 1.0)],
                &[(0, 5.0), (1, 1.0)],
                &[(0, 5.0), (1, 1.0)],
                &[(1, 6.0)],
                &[(1, 6.0)],
            ],
            2,
        );
        let vocab = vec!["frail".to_string(), "well".to_string()];
        let treated = [true, true, false, false, false];
        let before = [1.0; 5];
        let after = [1.0, 0.0, 1.0, 0.0, 0.0];
        let s = term_shift(
            &c,
            &vocab,
            &treated,
            &before,
            &after,
            &TermShiftOptions::default(),
        )
        .unwrap();
        assert_eq!(s.rows[0].term, "frail");
        assert!(s.rows[0].z_before > 2.0);
        assert!(s.rows[0].z_after.abs() < 1e-12);
        assert_eq!(s.treated_tokens, [12.0, 6.0]);
        assert!(term_shift(
            &c,
            &vocab,
            &treated,
            &before[..4],
            &after,
            &TermShiftOptions::default()
        )
        .is_err());
        let none = [0.0, 0.0, 1.0, 1.0, 1.0];
        assert!(term_shift(
            &c,
            &vocab,
            &treated,
            &before,
            &none,
            &TermShiftOptions::default()
        )
        .is_err());
    }
}
