//! Matching treated units to comparison units: greedy nearest-available and
//! optimal (least total distance), with a caliper on the logit score, exact
//! agreement on a key, 1:k sets, with or without reuse.
//!
//! Rules (see `docs/methods.md` for the formulas and references):
//!
//! * A pair `(t, c)` is *allowed* when both rows have the same exact key (if
//!   keys are given) and, with a caliper, `|logit_t - logit_c| <= width`,
//!   where `width = caliper * sqrt((var_t + var_c) / 2)` with the n-1
//!   variances of the logit score in each group (Rosenbaum & Rubin 1985,
//!   The American Statistician 39(1); Austin 2011, Pharmaceutical Statistics
//!   10(2)). The caliper always applies to the logit score, whatever distance
//!   orders the candidates.
//! * Greedy: treated units in descending logit score (ties: lower row
//!   first); each takes its `k` nearest allowed, still available comparison
//!   units (ties: lower row first). A unit with fewer than `k` allowed
//!   candidates keeps those it found.
//! * Optimal without reuse (Rosenbaum 1989, JASA 84(408)): among all
//!   assignments of allowed pairs in which each comparison unit serves at
//!   most one treated unit and each treated unit at most `k`, choose first the
//!   one with the most treated units matched, then the most pairs, then the
//!   least total distance. Solved as a rectangular assignment problem with
//!   each treated unit repeated `k` times, by shortest augmenting paths
//!   (Jonker & Volgenant 1987, Computing 38(4)); see [`match_units`].
//! * With reuse, greedy and optimal coincide: each treated unit takes its `k`
//!   nearest allowed units, which is the least total distance.

// Index loops mirror the algorithms as published.
#![allow(clippy::needless_range_loop)]

use std::cmp::Ordering;
use std::collections::BinaryHeap;

use serde::{Deserialize, Serialize};

use crate::distance::PairDistance;
use crate::{Error, Result};

/// Which matcher to run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Algorithm {
    /// Nearest available, largest score first.
    Greedy,
    /// Least total distance.
    Optimal,
}

/// Settings of a matching run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MatchParams {
    /// Caliper in pooled standard deviations of the logit score, or none.
    pub caliper: Option<f64>,
    /// Comparison units per treated unit (k >= 1).
    pub controls: usize,
    /// May a comparison unit serve several treated units?
    pub reuse: bool,
    /// Greedy or optimal.
    pub algorithm: Algorithm,
}

impl Default for MatchParams {
    /// 1:1 optimal matching without reuse, caliper 0.2 (Austin 2011).
    fn default() -> Self {
        MatchParams {
            caliper: Some(0.2),
            controls: 1,
            reuse: false,
            algorithm: Algorithm::Optimal,
        }
    }
}

/// What the matchers read, one entry per cohort row.
pub struct MatchInput<'a> {
    /// Group of each row.
    pub treated: &'a [bool],
    /// Logit score of each row (caliper and greedy order).
    pub logit: &'a [f64],
    /// Exact-agreement key per row: a pair is allowed only within a key.
    pub exact: Option<&'a [u32]>,
    /// The distance that orders candidates and is minimized.
    pub distance: &'a dyn PairDistance,
}

/// One treated unit and its matched comparison units.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MatchedSet {
    /// Row of the treated unit.
    pub treated: usize,
    /// Rows of the comparison units with their distance to the treated unit,
    /// nearest first (ties: lower row first).
    pub controls: Vec<(usize, f64)>,
}

/// The result of a matching run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Matching {
    /// Matched sets, ordered by treated row.
    pub sets: Vec<MatchedSet>,
    /// Treated rows left without any comparison unit, in row order.
    pub unmatched_treated: Vec<usize>,
    /// Unmatched treated units whose exact-key stratum holds comparison
    /// units, none of them within the caliper (availability ignored): the
    /// caliper alone ruled them out.
    pub dropped_by_caliper: usize,
    /// Unmatched treated units with no comparison unit of the same exact key.
    pub dropped_by_exact: usize,
    /// Matched sets with fewer than the asked-for `k` comparison units.
    pub short_sets: usize,
    /// Caliper width on the logit scale, when a caliper was asked for.
    pub caliper_width: Option<f64>,
    /// Sum of the distances of all matched pairs.
    pub total_distance: f64,
    /// Matching weight per row: 1 for a matched treated unit; a comparison
    /// unit gets 1/m for each matched set of m comparison units it is in;
    /// 0 for unmatched rows.
    pub weights: Vec<f64>,
}

/// Largest dense cost matrix (rows x columns) the optimal matcher builds.
pub const DENSE_LIMIT: usize = 50_000_000;
/// Largest number of allowed pairs the sparse optimal matcher stores.
pub const EDGE_LIMIT: usize = 50_000_000;

/// Caliper width `caliper * sqrt((var_t + var_c) / 2)` on the logit score,
/// with n-1 variances in each group (Austin 2011). A group with a single unit
/// contributes a variance of 0.
pub fn caliper_width(caliper: f64, logit: &[f64], treated: &[bool]) -> f64 {
    let var = |g: bool| {
        let xs: Vec<f64> = logit
            .iter()
            .zip(treated)
            .filter(|(_, &t)| t == g)
            .map(|(&v, _)| v)
            .collect();
        if xs.len() < 2 {
            return 0.0;
        }
        let m = xs.iter().sum::<f64>() / xs.len() as f64;
        xs.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / (xs.len() - 1) as f64
    };
    caliper * ((var(true) + var(false)) / 2.0).sqrt()
}

/// Match treated to comparison units. See the module doc for the rules.
///
/// The optimal matcher splits the problem by exact key (pairs never cross
/// keys, so the parts are independent). A part in which every pair is allowed
/// is solved on a dense cost matrix with the Jonker-Volgenant algorithm
/// (column reduction, reduction transfer, augmenting row reduction, then
/// shortest augmenting paths); the other parts, and the 1:k parts that cannot
/// give every treated unit k units, are solved on the sparse graph of allowed
/// pairs by successive shortest augmenting paths (Dijkstra with potentials)
/// in which every treated slot may also stay unmatched at a cost that ranks
/// above any distance; costs are compared lexicographically (unmatched treated
/// units, unmatched slots, distance), so no large number is ever added to a
/// distance.
pub fn match_units(input: &MatchInput, params: &MatchParams) -> Result<Matching> {
    let prep = Prepared::new(input, params)?;
    let k = params.controls;
    let assigned = if params.reuse {
        greedy(&prep, input, k, true)?
    } else {
        match params.algorithm {
            Algorithm::Greedy => greedy(&prep, input, k, false)?,
            Algorithm::Optimal => optimal(&prep, input, k)?,
        }
    };
    Ok(assemble(&prep, input, k, assigned))
}

/// Everything the matchers share: groups, strata, sorted comparison units.
struct Prepared {
    n: usize,
    /// Treated rows in row order.
    treated_rows: Vec<usize>,
    width: Option<f64>,
    /// Stratum of each row.
    stratum: Vec<usize>,
    /// Comparison rows sorted by (stratum, logit, row).
    comp: Vec<usize>,
    /// Their logit scores.
    comp_logit: Vec<f64>,
    /// Range of `comp` per stratum.
    range: Vec<(usize, usize)>,
}

impl Prepared {
    fn new(input: &MatchInput, params: &MatchParams) -> Result<Prepared> {
        let n = input.treated.len();
        if input.logit.len() != n {
            return Err(Error::param(
                "logit",
                format!("has {} entries but there are {n} rows", input.logit.len()),
            ));
        }
        if let Some(e) = input.exact {
            if e.len() != n {
                return Err(Error::param(
                    "exact",
                    format!("has {} entries but there are {n} rows", e.len()),
                ));
            }
        }
        if let Some(i) = input.logit.iter().position(|v| !v.is_finite()) {
            return Err(Error::param(
                "logit",
                format!("the logit score of row index {i} is not a finite number"),
            ));
        }
        if params.controls == 0 {
            return Err(Error::param("controls", "must be at least 1"));
        }
        let width = match params.caliper {
            None => None,
            Some(c) => {
                if !(c.is_finite() && c > 0.0) {
                    return Err(Error::param(
                        "caliper",
                        format!("{c} is not allowed; give a positive number of standard deviations (0.2 is common)"),
                    ));
                }
                let w = caliper_width(c, input.logit, input.treated);
                if !w.is_finite() {
                    return Err(Error::compute("the caliper width is not a finite number"));
                }
                Some(w)
            }
        };
        let (stratum, n_strata) = match input.exact {
            None => (vec![0; n], 1),
            Some(keys) => {
                let mut distinct: Vec<u32> = keys.to_vec();
                distinct.sort_unstable();
                distinct.dedup();
                let s = keys
                    .iter()
                    .map(|k| distinct.partition_point(|d| d < k))
                    .collect();
                (s, distinct.len())
            }
        };
        let treated_rows: Vec<usize> = (0..n).filter(|&i| input.treated[i]).collect();
        let comp = sorted_rows((0..n).filter(|&i| !input.treated[i]), &stratum, input.logit);
        let comp_logit: Vec<f64> = comp.iter().map(|&c| input.logit[c]).collect();
        let mut range = vec![(0, 0); n_strata];
        let mut start = 0;
        for s in 0..n_strata {
            let end = start + comp[start..].partition_point(|&c| stratum[c] == s);
            range[s] = (start, end);
            start = end;
        }
        Ok(Prepared {
            n,
            treated_rows,
            width,
            stratum,
            comp,
            comp_logit,
            range,
        })
    }

    /// Positions in `comp` of the stratum of `t` allowed by the caliper.
    fn window(&self, t: usize, logit: &[f64]) -> (usize, usize) {
        let (a, b) = self.range[self.stratum[t]];
        match self.width {
            None => (a, b),
            Some(w) => {
                let x = logit[t];
                let s = &self.comp_logit[a..b];
                let lo = s.partition_point(|&v| v < x - w);
                let hi = s.partition_point(|&v| v <= x + w);
                // Floating subtraction above may widen or narrow the window
                // by an ulp; the exact test is applied to each candidate.
                (a + lo, a + hi)
            }
        }
    }

    fn allowed(&self, t: usize, c: usize, logit: &[f64]) -> bool {
        self.stratum[t] == self.stratum[c]
            && self.width.is_none_or(|w| (logit[t] - logit[c]).abs() <= w)
    }
}

/// An unsigned integer with the same order as the finite number `v`, with
/// -0 and +0 equal (so equal scores tie and fall to row order).
fn order_bits(v: f64) -> u64 {
    let b = (v + 0.0).to_bits();
    if b >> 63 == 1 {
        !b
    } else {
        b | (1 << 63)
    }
}

/// Rows sorted by (stratum, key, row). Sorting packed integer triples avoids
/// chasing row indices during the sort, which dominates for a million rows.
fn sorted_rows(rows: impl Iterator<Item = usize>, stratum: &[usize], key: &[f64]) -> Vec<usize> {
    let mut packed: Vec<(usize, u64, usize)> =
        rows.map(|r| (stratum[r], order_bits(key[r]), r)).collect();
    packed.sort_unstable();
    packed.into_iter().map(|p| p.2).collect()
}

/// Order of finite numbers in which -0 equals +0 (so equal scores tie and
/// fall to row order).
fn cmp_finite(a: f64, b: f64) -> Ordering {
    a.partial_cmp(&b).unwrap_or(Ordering::Equal)
}

fn checked_distance(d: &dyn PairDistance, t: usize, c: usize) -> Result<f64> {
    let v = d.distance(t, c);
    if v.is_finite() && v >= 0.0 {
        Ok(v)
    } else {
        Err(Error::compute(format!(
            "the distance between rows {t} and {c} is {v}; distances must be finite and non-negative"
        )))
    }
}

/// Union-find "next alive index at or after i" with path halving; index
/// `len` is an always-alive sentinel.
struct NextAlive {
    next: Vec<u32>,
}

impl NextAlive {
    fn new(len: usize) -> Self {
        NextAlive {
            next: (0..=len as u32).collect(),
        }
    }
    fn find(&mut self, mut i: usize) -> usize {
        while self.next[i] as usize != i {
            let p = self.next[i] as usize;
            self.next[i] = self.next[p];
            i = self.next[i] as usize;
        }
        i
    }
    fn kill(&mut self, i: usize) {
        self.next[i] = i as u32 + 1;
    }
}

/// Same, towards lower indices: `find(i)` is the largest alive index <= i,
/// stored shifted by one so that 0 is the sentinel ("none").
struct PrevAlive {
    prev: Vec<u32>,
}

impl PrevAlive {
    fn new(len: usize) -> Self {
        PrevAlive {
            prev: (0..=len as u32).collect(),
        }
    }
    /// Largest alive index <= i, or None.
    fn find(&mut self, i: usize) -> Option<usize> {
        let mut s = i + 1;
        while self.prev[s] as usize != s {
            let p = self.prev[s] as usize;
            self.prev[s] = self.prev[p];
            s = self.prev[s] as usize;
        }
        s.checked_sub(1)
    }
    fn kill(&mut self, i: usize) {
        self.prev[i + 1] = i as u32;
    }
}

type Assigned = Vec<Vec<(usize, f64)>>;

/// Greedy nearest available (or, with reuse, each treated unit's k nearest).
fn greedy(prep: &Prepared, input: &MatchInput, k: usize, reuse: bool) -> Result<Assigned> {
    // Descending score, ties by row: sort (!key, position) ascending.
    let mut packed: Vec<(u64, usize)> = prep
        .treated_rows
        .iter()
        .enumerate()
        .map(|(ti, &t)| (!order_bits(input.logit[t]), ti))
        .collect();
    packed.sort_unstable();
    let order: Vec<usize> = packed.into_iter().map(|p| p.1).collect();
    if let Some(key) = input.distance.line_key() {
        let same_as_logit = key.len() == input.logit.len()
            && key
                .iter()
                .zip(input.logit)
                .all(|(a, b)| a.to_bits() == b.to_bits());
        if key.len() == prep.n
            && key.iter().all(|v| v.is_finite())
            && (prep.width.is_none() || same_as_logit)
        {
            return Ok(greedy_line(
                prep,
                input,
                key,
                same_as_logit,
                &order,
                k,
                reuse,
            ));
        }
    }
    greedy_general(prep, input, &order, k, reuse)
}

/// Greedy for a distance `|key_t - key_c|`: comparison units of each stratum
/// sorted by key and grouped into runs of equal key ("buckets", each used
/// from its lowest row up); nearest candidates are found by walking outward
/// from the treated unit's key, skipping used-up buckets through union-find,
/// so the whole match is O(n log n).
fn greedy_line(
    prep: &Prepared,
    input: &MatchInput,
    key: &[f64],
    same_as_logit: bool,
    order: &[usize],
    k: usize,
    reuse: bool,
) -> Assigned {
    // comparison rows sorted by (stratum, key, row)
    let rows: std::borrow::Cow<[usize]> = if same_as_logit {
        std::borrow::Cow::Borrowed(&prep.comp)
    } else {
        std::borrow::Cow::Owned(sorted_rows(prep.comp.iter().copied(), &prep.stratum, key))
    };
    let mut b_val: Vec<f64> = Vec::new();
    let mut b_start: Vec<usize> = Vec::new();
    let mut b_stratum: Vec<usize> = Vec::new();
    for (pos, &c) in rows.iter().enumerate() {
        let s = prep.stratum[c];
        let new_bucket = match (b_val.last(), b_stratum.last()) {
            (Some(&v), Some(&bs)) => bs != s || v != key[c],
            _ => true,
        };
        if new_bucket {
            b_val.push(key[c]);
            b_start.push(pos);
            b_stratum.push(s);
        }
    }
    let nb = b_val.len();
    if nb == 0 {
        return vec![Vec::new(); prep.treated_rows.len()];
    }
    // First bucket of each stratum (and one past the last stratum).
    let s_first: Vec<usize> = (0..=prep.range.len())
        .map(|s| b_stratum.partition_point(|&b| b < s))
        .collect();
    let mut b_end: Vec<usize> = b_start[1..].to_vec();
    b_end.push(rows.len());
    let mut head = b_start.clone();
    let mut right = NextAlive::new(nb);
    let mut left = PrevAlive::new(nb);
    let mut cursor: Vec<usize> = s_first[1..].to_vec();

    let mut out: Assigned = vec![Vec::new(); prep.treated_rows.len()];
    let mut picked: Vec<(usize, usize, f64)> = Vec::with_capacity(k);
    for &ti in order {
        let t = prep.treated_rows[ti];
        let s = prep.stratum[t];
        let (bs, be) = (s_first[s], s_first[s + 1]);
        if bs == be {
            continue;
        }
        let x = key[t];
        // Treated units come in descending score; when the key is the score
        // the search position only moves down, so a cursor per stratum
        // replaces a binary search.
        let pos = if same_as_logit {
            let c = &mut cursor[s];
            while *c > bs && b_val[*c - 1] >= x {
                *c -= 1;
            }
            *c
        } else {
            bs + b_val[bs..be].partition_point(|&v| v < x)
        };
        let mut rb = right.find(pos);
        let mut r_ok = rb < be;
        let mut roff = if r_ok { head[rb] } else { 0 };
        let mut lb = if pos > bs {
            left.find(pos - 1).unwrap_or(usize::MAX)
        } else {
            usize::MAX
        };
        let mut l_ok = lb != usize::MAX && lb >= bs;
        let mut loff = if l_ok { head[lb] } else { 0 };
        picked.clear();
        while picked.len() < k {
            let within = |d: f64| prep.width.is_none_or(|w| d <= w);
            let cand_r = if r_ok {
                let d = b_val[rb] - x;
                within(d).then(|| (d, rows[roff]))
            } else {
                None
            };
            let cand_l = if l_ok {
                let d = x - b_val[lb];
                within(d).then(|| (d, rows[loff]))
            } else {
                None
            };
            let take_right = match (cand_r, cand_l) {
                (None, None) => break,
                (Some(_), None) => true,
                (None, Some(_)) => false,
                (Some((dr, cr)), Some((dl, cl))) => (dr, cr) < (dl, cl),
            };
            if take_right {
                picked.push((rows[roff], rb, 0.0));
                roff += 1;
                if roff == b_end[rb] {
                    rb = right.find(rb + 1);
                    r_ok = rb < be;
                    if r_ok {
                        roff = head[rb];
                    }
                }
            } else {
                picked.push((rows[loff], lb, 0.0));
                loff += 1;
                if loff == b_end[lb] {
                    match if lb > bs { left.find(lb - 1) } else { None } {
                        Some(b) if b >= bs => {
                            lb = b;
                            loff = head[lb];
                        }
                        _ => l_ok = false,
                    }
                }
            }
        }
        for p in picked.iter_mut() {
            p.2 = input.distance.distance(t, p.0);
            if !reuse {
                head[p.1] += 1;
                if head[p.1] == b_end[p.1] {
                    right.kill(p.1);
                    left.kill(p.1);
                }
            }
        }
        out[ti] = picked.iter().map(|&(c, _, d)| (c, d)).collect();
    }
    out
}

/// Greedy for any distance: scan the allowed window of each treated unit.
fn greedy_general(
    prep: &Prepared,
    input: &MatchInput,
    order: &[usize],
    k: usize,
    reuse: bool,
) -> Result<Assigned> {
    let mut alive = NextAlive::new(prep.comp.len());
    let mut out: Assigned = vec![Vec::new(); prep.treated_rows.len()];
    let mut best: Vec<(f64, usize, usize)> = Vec::with_capacity(k + 1);
    for &ti in order {
        let t = prep.treated_rows[ti];
        let (lo, hi) = prep.window(t, input.logit);
        best.clear();
        let mut p = alive.find(lo);
        while p < hi {
            let c = prep.comp[p];
            if prep.allowed(t, c, input.logit) {
                let d = checked_distance(input.distance, t, c)?;
                let cand = (d, c, p);
                if best.len() < k || (d, c) < (best[best.len() - 1].0, best[best.len() - 1].1) {
                    let at = best.partition_point(|b| (b.0, b.1) < (d, c));
                    best.insert(at, cand);
                    best.truncate(k);
                }
            }
            p = alive.find(p + 1);
        }
        if !reuse {
            for b in &best {
                alive.kill(b.2);
            }
        }
        out[ti] = best.iter().map(|&(d, c, _)| (c, d)).collect();
    }
    Ok(out)
}

/// Optimal matching without reuse, one exact-key stratum at a time.
fn optimal(prep: &Prepared, input: &MatchInput, k: usize) -> Result<Assigned> {
    let mut out: Assigned = vec![Vec::new(); prep.treated_rows.len()];
    let n_strata = prep.range.len();
    let mut by_stratum: Vec<Vec<usize>> = vec![Vec::new(); n_strata];
    for (ti, &t) in prep.treated_rows.iter().enumerate() {
        by_stratum[prep.stratum[t]].push(ti);
    }
    for s in 0..n_strata {
        let tis = &by_stratum[s];
        let (a, b) = prep.range[s];
        if tis.is_empty() || a == b {
            continue;
        }
        let comps = &prep.comp[a..b];
        let nt = tis.len();
        let nc = comps.len();
        // Is every pair of this stratum inside the caliper?
        let all_allowed = prep.width.is_none_or(|w| {
            let (tmin, tmax) =
                tis.iter()
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &ti| {
                        let v = input.logit[prep.treated_rows[ti]];
                        (lo.min(v), hi.max(v))
                    });
            let (cmin, cmax) = (prep.comp_logit[a], prep.comp_logit[b - 1]);
            (tmax - cmin).max(cmax - tmin) <= w
        });
        let dense_ok = all_allowed && nt.saturating_mul(k).saturating_mul(nc) <= DENSE_LIMIT;
        if dense_ok && nt * k <= nc {
            let nr = nt * k;
            let mut cost = vec![0.0; nr * nc];
            for (r, &ti) in tis.iter().enumerate() {
                let t = prep.treated_rows[ti];
                let row = &mut cost[r * k * nc..(r * k + 1) * nc];
                for (j, &c) in comps.iter().enumerate() {
                    row[j] = checked_distance(input.distance, t, c)?;
                }
                for s2 in 1..k {
                    cost.copy_within(r * k * nc..(r * k + 1) * nc, (r * k + s2) * nc);
                }
            }
            let sol = lap_dense(&cost, nr, nc);
            for (r, &j) in sol.iter().enumerate() {
                let ti = tis[r / k];
                out[ti].push((comps[j], cost[r * nc + j]));
            }
        } else if dense_ok && k == 1 {
            // More treated than comparison units: every comparison unit is
            // used, so solve with comparison units as rows.
            let mut cost = vec![0.0; nc * nt];
            for (r, &ti) in tis.iter().enumerate() {
                let t = prep.treated_rows[ti];
                for (j, &c) in comps.iter().enumerate() {
                    cost[j * nt + r] = checked_distance(input.distance, t, c)?;
                }
            }
            let sol = lap_dense(&cost, nc, nt);
            for (j, &r) in sol.iter().enumerate() {
                out[tis[r]].push((comps[j], cost[j * nt + r]));
            }
        } else {
            // Sparse graph of allowed pairs; rows are treated slots.
            let mut row_start = vec![0usize];
            let mut cols: Vec<u32> = Vec::new();
            let mut costs: Vec<f64> = Vec::new();
            let mut prio: Vec<i64> = Vec::with_capacity(nt * k);
            for &ti in tis {
                let t = prep.treated_rows[ti];
                let (lo, hi) = prep.window(t, input.logit);
                let begin = cols.len();
                for p in lo..hi {
                    let c = prep.comp[p];
                    if prep.allowed(t, c, input.logit) {
                        cols.push((p - a) as u32);
                        costs.push(checked_distance(input.distance, t, c)?);
                    }
                }
                let end = cols.len();
                if cols.len() + (end - begin) * (k - 1) > EDGE_LIMIT {
                    return Err(Error::compute(format!(
                        "optimal matching would need more than {EDGE_LIMIT} allowed pairs; narrow the caliper, add exact columns, or use greedy matching"
                    )));
                }
                row_start.push(end);
                for slot in 0..k {
                    if slot > 0 {
                        cols.extend_from_within(begin..end);
                        costs.extend_from_within(begin..end);
                        row_start.push(cols.len());
                    }
                    prio.push(if slot == 0 { PRIMARY } else { 1 });
                }
            }
            let sol = lap_sparse(nt * k, nc, &row_start, &cols, &costs, &prio);
            for (r, j) in sol.iter().enumerate() {
                if let Some((j, d)) = j {
                    out[tis[r / k]].push((comps[*j], *d));
                }
            }
        }
    }
    Ok(out)
}

/// Cost of leaving a treated unit's first slot empty, in the high part of
/// the lexicographic cost: it outranks any number of empty further slots.
const PRIMARY: i64 = 1 << 32;

fn assemble(prep: &Prepared, input: &MatchInput, k: usize, assigned: Assigned) -> Matching {
    let mut sets = Vec::new();
    let mut unmatched = Vec::new();
    let mut weights = vec![0.0; prep.n];
    let mut total = 0.0;
    let mut short = 0;
    let (mut by_cal, mut by_exact) = (0, 0);
    for (ti, mut controls) in assigned.into_iter().enumerate() {
        let t = prep.treated_rows[ti];
        if controls.is_empty() {
            unmatched.push(t);
            let (a, b) = prep.range[prep.stratum[t]];
            if a == b {
                by_exact += 1;
            } else if let Some(w) = prep.width {
                let x = input.logit[t];
                let s = &prep.comp_logit[a..b];
                let i = s.partition_point(|&v| v < x);
                let near = [i.checked_sub(1), (i < s.len()).then_some(i)]
                    .into_iter()
                    .flatten()
                    .any(|j| (s[j] - x).abs() <= w);
                if !near {
                    by_cal += 1;
                }
            }
            continue;
        }
        controls.sort_by(|a, b| cmp_finite(a.1, b.1).then(a.0.cmp(&b.0)));
        if controls.len() < k {
            short += 1;
        }
        weights[t] = 1.0;
        let m = controls.len() as f64;
        for &(c, d) in &controls {
            weights[c] += 1.0 / m;
            total += d;
        }
        sets.push(MatchedSet {
            treated: t,
            controls,
        });
    }
    Matching {
        sets,
        unmatched_treated: unmatched,
        dropped_by_caliper: by_cal,
        dropped_by_exact: by_exact,
        short_sets: short,
        caliper_width: prep.width,
        total_distance: total,
        weights,
    }
}

const NONE: usize = usize::MAX;

/// Dense rectangular assignment, `nr <= nc`, every row assigned: returns the
/// column of each row. Jonker & Volgenant (1987): for square problems the
/// initialization (column reduction, reduction transfer, two rounds of
/// augmenting row reduction) assigns most rows cheaply; the rest, and every
/// row of a rectangular problem, get shortest augmenting paths.
// The scan loops start at the current `up` and move `up` forward as columns
// join the todo list; the loop range is meant to stay fixed, as published.
#[allow(clippy::mut_range_bound)]
fn lap_dense(cost: &[f64], nr: usize, nc: usize) -> Vec<usize> {
    debug_assert!(nr <= nc && cost.len() == nr * nc);
    let mut x = vec![NONE; nr];
    let mut y = vec![NONE; nc];
    let mut v = vec![0.0f64; nc];
    if nr == 0 {
        return x;
    }
    let mut free: Vec<usize>;
    if nr == nc && nr > 1 {
        let n = nr;
        // Column reduction, last column first as in the original.
        let mut colmin = cost[..n].to_vec();
        let mut argmin = vec![0usize; n];
        for i in 1..n {
            let row = &cost[i * n..(i + 1) * n];
            for j in 0..n {
                if row[j] < colmin[j] {
                    colmin[j] = row[j];
                    argmin[j] = i;
                }
            }
        }
        let mut matches = vec![0u32; n];
        for j in (0..n).rev() {
            v[j] = colmin[j];
            let i = argmin[j];
            matches[i] += 1;
            if matches[i] == 1 {
                x[i] = j;
                y[j] = i;
            } else if v[j] < v[x[i]] {
                let j1 = x[i];
                x[i] = j;
                y[j] = i;
                y[j1] = NONE;
            } else {
                y[j] = NONE;
            }
        }
        // Reduction transfer.
        free = Vec::new();
        for i in 0..n {
            if matches[i] == 0 {
                free.push(i);
            } else if matches[i] == 1 {
                let j1 = x[i];
                let row = &cost[i * n..(i + 1) * n];
                let mut m = f64::INFINITY;
                for j in 0..n {
                    if j != j1 {
                        let h = row[j] - v[j];
                        if h < m {
                            m = h;
                        }
                    }
                }
                v[j1] -= m;
            }
        }
        // Augmenting row reduction, twice; capped so that floating-point ties
        // can never make it cycle for long (left-over rows are augmented).
        let mut budget = 16 * n + 64;
        for _ in 0..2 {
            let mut list = std::mem::take(&mut free);
            let mut next = Vec::new();
            let mut kk = 0;
            while kk < list.len() {
                if budget == 0 {
                    next.extend_from_slice(&list[kk..]);
                    break;
                }
                budget -= 1;
                let i = list[kk];
                kk += 1;
                let row = &cost[i * n..(i + 1) * n];
                let mut umin = row[0] - v[0];
                let mut j1 = 0;
                let mut usub = f64::INFINITY;
                let mut j2 = 0;
                for j in 1..n {
                    let h = row[j] - v[j];
                    if h < usub {
                        if h >= umin {
                            usub = h;
                            j2 = j;
                        } else {
                            usub = umin;
                            umin = h;
                            j2 = j1;
                            j1 = j;
                        }
                    }
                }
                let mut i0 = y[j1];
                if umin < usub {
                    v[j1] -= usub - umin;
                } else if i0 != NONE {
                    j1 = j2;
                    i0 = y[j2];
                }
                if x[i] != NONE && y[x[i]] == i {
                    y[x[i]] = NONE;
                }
                x[i] = j1;
                y[j1] = i;
                if i0 != NONE {
                    x[i0] = NONE;
                    if umin < usub {
                        kk -= 1;
                        list[kk] = i0;
                    } else {
                        next.push(i0);
                    }
                }
            }
            free = next;
        }
    } else {
        free = (0..nr).collect();
    }

    // Shortest augmenting paths for the remaining free rows.
    let mut d = vec![0.0f64; nc];
    let mut pred = vec![0usize; nc];
    let mut col: Vec<usize> = (0..nc).collect();
    for &f in &free {
        let rowf = &cost[f * nc..(f + 1) * nc];
        for j in 0..nc {
            d[j] = rowf[j] - v[j];
            pred[j] = f;
            col[j] = j;
        }
        let (mut low, mut up) = (0usize, 0usize);
        let mut last = 0usize;
        let mut min = 0.0f64;
        let end: usize;
        'search: loop {
            if up == low {
                last = low;
                min = d[col[up]];
                up += 1;
                for kk in up..nc {
                    let j = col[kk];
                    let h = d[j];
                    if h <= min {
                        if h < min {
                            up = low;
                            min = h;
                        }
                        col[kk] = col[up];
                        col[up] = j;
                        up += 1;
                    }
                }
                for kk in low..up {
                    if y[col[kk]] == NONE {
                        end = col[kk];
                        break 'search;
                    }
                }
            }
            let j1 = col[low];
            low += 1;
            let i = y[j1];
            let row = &cost[i * nc..(i + 1) * nc];
            let h = row[j1] - v[j1] - min;
            for kk in up..nc {
                let j = col[kk];
                let v2 = row[j] - v[j] - h;
                if v2 < d[j] {
                    pred[j] = i;
                    if v2 == min {
                        if y[j] == NONE {
                            end = j;
                            break 'search;
                        }
                        col[kk] = col[up];
                        col[up] = j;
                        up += 1;
                    }
                    d[j] = v2;
                }
            }
        }
        for kk in 0..last {
            let j = col[kk];
            v[j] += d[j] - min;
        }
        let mut j = end;
        loop {
            let i = pred[j];
            y[j] = i;
            let prev = x[i];
            x[i] = j;
            if i == f {
                break;
            }
            j = prev;
        }
    }
    x
}

/// A cost compared lexicographically: the integer part counts (weighted)
/// unmatched slots exactly, the real part is distance.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Lex {
    hi: i64,
    lo: f64,
}

impl Lex {
    const ZERO: Lex = Lex { hi: 0, lo: 0.0 };
    const INF: Lex = Lex {
        hi: i64::MAX / 4,
        lo: 0.0,
    };
    fn add(self, o: Lex) -> Lex {
        Lex {
            hi: self.hi + o.hi,
            lo: self.lo + o.lo,
        }
    }
    fn sub(self, o: Lex) -> Lex {
        Lex {
            hi: self.hi - o.hi,
            lo: self.lo - o.lo,
        }
    }
    fn cmp(&self, o: &Lex) -> Ordering {
        self.hi.cmp(&o.hi).then(cmp_finite(self.lo, o.lo))
    }
    fn lt(self, o: Lex) -> bool {
        self.cmp(&o) == Ordering::Less
    }
}

struct HeapItem {
    key: Lex,
    col: usize,
}

impl PartialEq for HeapItem {
    fn eq(&self, o: &Self) -> bool {
        self.cmp(o) == Ordering::Equal
    }
}
impl Eq for HeapItem {}
impl PartialOrd for HeapItem {
    fn partial_cmp(&self, o: &Self) -> Option<Ordering> {
        Some(self.cmp(o))
    }
}
impl Ord for HeapItem {
    // Reversed: BinaryHeap is a max-heap and we want the least key (ties:
    // lower column) first.
    fn cmp(&self, o: &Self) -> Ordering {
        o.key.cmp(&self.key).then(o.col.cmp(&self.col))
    }
}

/// Sparse assignment with an optional "stay unmatched" column per row: row
/// `r` may take any of its listed columns (cost = distance) or its own
/// dummy column (cost `prio[r]` in the integer part). Successive shortest
/// augmenting paths with Dijkstra on reduced costs (Jonker & Volgenant 1987,
/// augmentation step; Ahuja, Magnanti & Orlin 1993, *Network Flows*, ch. 9).
/// Returns for each row its real column and distance, or None.
fn lap_sparse(
    nr: usize,
    nc: usize,
    row_start: &[usize],
    cols: &[u32],
    costs: &[f64],
    prio: &[i64],
) -> Vec<Option<(usize, f64)>> {
    let ncol = nc + nr;
    let mut v = vec![Lex::ZERO; ncol];
    let mut y = vec![NONE; ncol];
    let mut x = vec![NONE; nr];
    let mut xcost = vec![Lex::ZERO; nr];
    let mut d = vec![Lex::INF; ncol];
    let mut pred = vec![NONE; ncol];
    let mut predc = vec![Lex::ZERO; ncol];
    let mut done = vec![false; ncol];
    let mut touched: Vec<usize> = Vec::new();
    let mut scanned: Vec<usize> = Vec::new();
    let mut heap: BinaryHeap<HeapItem> = BinaryHeap::new();
    let edges = |r: usize| {
        let (a, b) = (row_start[r], row_start[r + 1]);
        cols[a..b]
            .iter()
            .zip(&costs[a..b])
            .map(|(&j, &c)| (j as usize, Lex { hi: 0, lo: c }))
            .chain(std::iter::once((
                nc + r,
                Lex {
                    hi: prio[r],
                    lo: 0.0,
                },
            )))
    };
    for f in 0..nr {
        heap.clear();
        for (j, c) in edges(f) {
            let nd = c.sub(v[j]);
            if nd.lt(d[j]) {
                if d[j].hi == Lex::INF.hi {
                    touched.push(j);
                }
                d[j] = nd;
                pred[j] = f;
                predc[j] = c;
                heap.push(HeapItem { key: nd, col: j });
            }
        }
        let mut sink = NONE;
        while let Some(HeapItem { col: j, .. }) = heap.pop() {
            if done[j] {
                continue;
            }
            done[j] = true;
            if y[j] == NONE {
                sink = j;
                break;
            }
            scanned.push(j);
            let i = y[j];
            let h = xcost[i].sub(v[j]);
            let dj = d[j];
            for (j2, c) in edges(i) {
                if done[j2] {
                    continue;
                }
                let nd = dj.add(c).sub(v[j2]).sub(h);
                if nd.lt(d[j2]) {
                    if d[j2].hi == Lex::INF.hi {
                        touched.push(j2);
                    }
                    d[j2] = nd;
                    pred[j2] = i;
                    predc[j2] = c;
                    heap.push(HeapItem { key: nd, col: j2 });
                }
            }
        }
        // The row's own dummy column is free until the row is placed, so a
        // sink always exists.
        debug_assert!(sink != NONE);
        let dmin = d[sink];
        for &j in &scanned {
            v[j] = v[j].add(d[j]).sub(dmin);
        }
        let mut j = sink;
        loop {
            let i = pred[j];
            y[j] = i;
            let prev = x[i];
            x[i] = j;
            xcost[i] = predc[j];
            if i == f {
                break;
            }
            j = prev;
        }
        for &j in &touched {
            d[j] = Lex::INF;
            done[j] = false;
            pred[j] = NONE;
        }
        touched.clear();
        scanned.clear();
    }
    (0..nr)
        .map(|r| (x[r] < nc).then(|| (x[r], xcost[r].lo)))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::distance::{FnDistance, ScoreDistance};
    use crate::rng::Rng;
    use proptest::prelude::*;

    fn run(
        treated: &[bool],
        logit: &[f64],
        exact: Option<&[u32]>,
        dist: &dyn PairDistance,
        p: &MatchParams,
    ) -> Matching {
        match_units(
            &MatchInput {
                treated,
                logit,
                exact,
                distance: dist,
            },
            p,
        )
        .unwrap()
    }

    fn params(alg: Algorithm, caliper: Option<f64>, k: usize, reuse: bool) -> MatchParams {
        MatchParams {
            caliper,
            controls: k,
            reuse,
            algorithm: alg,
        }
    }

    #[test]
    fn greedy_takes_largest_score_first() {
        // treated at 1.0 and 0.9; comparison at 0.95 and 0.0.
        let logit = [1.0, 0.9, 0.95, 0.0];
        let t = [true, true, false, false];
        let d = ScoreDistance::new(&logit);
        let g = run(
            &t,
            &logit,
            None,
            &d,
            &params(Algorithm::Greedy, None, 1, false),
        );
        assert_eq!(g.sets[0].controls[0].0, 2); // row 0 (largest) took 0.95
        assert_eq!(g.sets[1].controls[0].0, 3);
        let o = run(
            &t,
            &logit,
            None,
            &d,
            &params(Algorithm::Optimal, None, 1, false),
        );
        // optimal: 0.05 + 0.9 = 0.95 either way here, total no larger
        assert!(o.total_distance <= g.total_distance + 1e-12);
    }

    #[test]
    fn optimal_beats_greedy_on_the_textbook_case() {
        // Greedy gives t0 its nearest (c2), leaving t1 far away.
        let logit = [0.0, 0.3, 0.1, 1.0];
        let t = [true, true, false, false];
        let d = ScoreDistance::new(&logit);
        let g = run(
            &t,
            &logit,
            None,
            &d,
            &params(Algorithm::Greedy, None, 1, false),
        );
        let o = run(
            &t,
            &logit,
            None,
            &d,
            &params(Algorithm::Optimal, None, 1, false),
        );
        // greedy: t1 (0.3) first takes c2 (0.1): 0.2; t0 takes c3: 1.0 -> 1.2
        assert!((g.total_distance - 1.2).abs() < 1e-12);
        // optimal: t0-c2 0.1 + t1-c3 0.7 = 0.8
        assert!((o.total_distance - 0.8).abs() < 1e-12);
    }

    #[test]
    fn ties_go_to_the_lower_row() {
        let logit = [0.5, 0.0, 1.0, 0.0, 1.0];
        let t = [true, false, false, false, false];
        let d = ScoreDistance::new(&logit);
        for alg in [Algorithm::Greedy, Algorithm::Optimal] {
            let m = run(&t, &logit, None, &d, &params(alg, None, 1, false));
            assert_eq!(m.sets[0].controls[0].0, 1, "{alg:?}");
            let m = run(&t, &logit, None, &d, &params(alg, None, 3, false));
            let rows: Vec<usize> = m.sets[0].controls.iter().map(|c| c.0).collect();
            assert_eq!(rows, vec![1, 2, 3], "{alg:?}");
        }
    }

    #[test]
    fn optimal_matches_the_most_treated_first() {
        // t0 can use c2 or c3; t1 only c2 (caliper). Max matching uses both.
        let logit = [0.0, -1.0, -0.9, 0.05];
        let t = [true, true, false, false];
        let d = ScoreDistance::new(&logit);
        let mut p = params(Algorithm::Optimal, Some(1.0), 1, false);
        let w = caliper_width(1.0, &logit, &t);
        assert!(w > 0.1 && w < 0.95, "{w}");
        let m = run(&t, &logit, None, &d, &p);
        assert_eq!(m.sets.len(), 2);
        p.algorithm = Algorithm::Greedy;
        let g = run(&t, &logit, None, &d, &p);
        assert!(g.sets.len() <= m.sets.len());
    }

    #[test]
    fn optimal_prefers_spreading_controls_over_distance() {
        // k = 2, two controls, two treated: one each beats two for one.
        let logit = [0.0, 0.0, 0.0, 0.1];
        let t = [true, true, false, false];
        let d = FnDistance::new(|a: usize, c: usize| if a == 0 { 0.0 } else { 5.0 + c as f64 });
        let m = run(
            &t,
            &logit,
            None,
            &d,
            &params(Algorithm::Optimal, None, 2, false),
        );
        assert_eq!(m.sets.len(), 2);
        assert_eq!(m.short_sets, 2);
    }

    #[test]
    fn dropped_counts_follow_their_definitions() {
        // t0 has a partner within the caliper; t4 only far ones; t5 is alone
        // in its exact stratum.
        let logit = [0.0, 0.01, 5.0, 5.1, 100.0, 0.0];
        let t = [true, false, false, false, true, true];
        let exact = [1, 1, 1, 1, 1, 2];
        let d = ScoreDistance::new(&logit);
        for alg in [Algorithm::Greedy, Algorithm::Optimal] {
            let m = run(
                &t,
                &logit,
                Some(&exact),
                &d,
                &params(alg, Some(0.2), 1, false),
            );
            assert_eq!(m.sets.len(), 1);
            assert_eq!(m.unmatched_treated, vec![4, 5]);
            assert_eq!(m.dropped_by_caliper, 1);
            assert_eq!(m.dropped_by_exact, 1);
        }
    }

    #[test]
    fn weights_for_one_to_k_with_reuse() {
        let logit = [0.0, 0.1, 0.0, 0.05, 0.2];
        let t = [true, true, false, false, false];
        let d = ScoreDistance::new(&logit);
        let m = run(
            &t,
            &logit,
            None,
            &d,
            &params(Algorithm::Greedy, None, 2, true),
        );
        // t0 takes c2 (0) and c3 (0.05); t1 takes c3 (0.05) and c2/c4 (0.1; c2 lower row)
        assert_eq!(m.weights[0], 1.0);
        assert_eq!(m.weights[1], 1.0);
        assert!((m.weights[2] - 1.0).abs() < 1e-12);
        assert!((m.weights[3] - 1.0).abs() < 1e-12);
        assert_eq!(m.weights[4], 0.0);
    }

    #[test]
    fn bad_parameters_are_errors() {
        let logit = [0.0, 1.0];
        let t = [true, false];
        let d = ScoreDistance::new(&logit);
        let input = MatchInput {
            treated: &t,
            logit: &logit,
            exact: None,
            distance: &d,
        };
        assert!(match_units(&input, &params(Algorithm::Greedy, Some(-1.0), 1, false)).is_err());
        assert!(match_units(&input, &params(Algorithm::Greedy, None, 0, false)).is_err());
        let bad = FnDistance::new(|_, _| f64::NAN);
        let input = MatchInput {
            distance: &bad,
            ..input
        };
        assert!(match_units(&input, &params(Algorithm::Optimal, None, 1, false)).is_err());
    }

    /// Exhaustive search of the lexicographic optimum (treated matched, pairs,
    /// distance) for tiny problems.
    fn brute(
        t_rows: &[usize],
        c_rows: &[usize],
        k: usize,
        ok: &dyn Fn(usize, usize) -> Option<f64>,
    ) -> (usize, usize, f64) {
        #[allow(clippy::too_many_arguments)]
        fn rec(
            i: usize,
            t_rows: &[usize],
            c_rows: &[usize],
            used: &mut Vec<bool>,
            k: usize,
            ok: &dyn Fn(usize, usize) -> Option<f64>,
            acc: (usize, usize, f64),
            best: &mut (usize, usize, f64),
        ) {
            if i == t_rows.len() {
                let better = acc.0 > best.0
                    || (acc.0 == best.0 && (acc.1 > best.1 || (acc.1 == best.1 && acc.2 < best.2)));
                if better {
                    *best = acc;
                }
                return;
            }
            // choose a subset of up to k unused allowed controls for t_rows[i]
            let cand: Vec<usize> = (0..c_rows.len())
                .filter(|&j| !used[j] && ok(t_rows[i], c_rows[j]).is_some())
                .collect();
            let m = cand.len();
            for mask in 0u32..(1 << m) {
                let cnt = mask.count_ones() as usize;
                if cnt > k {
                    continue;
                }
                let mut dsum = 0.0;
                for b in 0..m {
                    if mask >> b & 1 == 1 {
                        used[cand[b]] = true;
                        dsum += ok(t_rows[i], c_rows[cand[b]]).unwrap_or(0.0);
                    }
                }
                rec(
                    i + 1,
                    t_rows,
                    c_rows,
                    used,
                    k,
                    ok,
                    (acc.0 + (cnt > 0) as usize, acc.1 + cnt, acc.2 + dsum),
                    best,
                );
                for b in 0..m {
                    if mask >> b & 1 == 1 {
                        used[cand[b]] = false;
                    }
                }
            }
        }
        let mut best = (0, 0, f64::INFINITY);
        let mut used = vec![false; c_rows.len()];
        rec(0, t_rows, c_rows, &mut used, k, ok, (0, 0, 0.0), &mut best);
        best
    }

    #[test]
    fn optimal_equals_exhaustive_search_on_small_problems() {
        let mut r = Rng::new(11);
        for case in 0..300 {
            let n = 3 + r.below(6);
            let treated: Vec<bool> = (0..n).map(|_| r.bernoulli(0.45)).collect();
            if treated.iter().all(|&t| t) || treated.iter().all(|&t| !t) {
                continue;
            }
            let logit: Vec<f64> = (0..n).map(|_| (r.normal() * 4.0).round() / 4.0).collect();
            let exact: Vec<u32> = (0..n).map(|_| r.below(2) as u32).collect();
            let pts: Vec<(f64, f64)> = (0..n).map(|_| (r.normal(), r.normal())).collect();
            let dist = FnDistance::new(|a: usize, b: usize| {
                ((pts[a].0 - pts[b].0).powi(2) + (pts[a].1 - pts[b].1).powi(2)).sqrt()
            });
            let k = 1 + r.below(2);
            let caliper = if r.bernoulli(0.5) { Some(0.5) } else { None };
            let use_exact = r.bernoulli(0.5);
            let ex = use_exact.then_some(exact.as_slice());
            let m = run(
                &treated,
                &logit,
                ex,
                &dist,
                &params(Algorithm::Optimal, caliper, k, false),
            );
            let w = m.caliper_width;
            let t_rows: Vec<usize> = (0..n).filter(|&i| treated[i]).collect();
            let c_rows: Vec<usize> = (0..n).filter(|&i| !treated[i]).collect();
            let ok = |a: usize, b: usize| {
                let same = !use_exact || exact[a] == exact[b];
                let inside = w.is_none_or(|w| (logit[a] - logit[b]).abs() <= w);
                (same && inside).then(|| dist.distance(a, b))
            };
            let b = brute(&t_rows, &c_rows, k, &ok);
            let pairs: usize = m.sets.iter().map(|s| s.controls.len()).sum();
            assert_eq!((m.sets.len(), pairs), (b.0, b.1), "case {case}");
            assert!(
                (m.total_distance - b.2).abs() < 1e-9,
                "case {case}: {} vs {}",
                m.total_distance,
                b.2
            );
        }
    }

    #[test]
    fn dense_and_sparse_solvers_agree() {
        let mut r = Rng::new(5);
        for _ in 0..20 {
            let nr = 1 + r.below(30);
            let nc = nr + r.below(10);
            let cost: Vec<f64> = (0..nr * nc).map(|_| r.uniform()).collect();
            let dense = lap_dense(&cost, nr, nc);
            let cols: Vec<u32> = (0..nr).flat_map(|_| 0..nc as u32).collect();
            let starts: Vec<usize> = (0..=nr).map(|i| i * nc).collect();
            let sparse = lap_sparse(nr, nc, &starts, &cols, &cost, &vec![PRIMARY; nr]);
            let a: f64 = dense
                .iter()
                .enumerate()
                .map(|(i, &j)| cost[i * nc + j])
                .sum();
            let b: f64 = sparse.iter().map(|s| s.map_or(f64::NAN, |p| p.1)).sum();
            assert!((a - b).abs() < 1e-9, "{a} {b}");
            let mut seen = vec![false; nc];
            for &j in &dense {
                assert!(!seen[j]);
                seen[j] = true;
            }
        }
    }

    #[test]
    fn square_dense_solver_with_many_ties_agrees_with_sparse() {
        // Small integer costs make many ties, the hard case for the
        // augmenting row reduction of the initialization.
        let mut r = Rng::new(9);
        for case in 0..40 {
            let n = 2 + r.below(120);
            let levels = 1 + r.below(6);
            let cost: Vec<f64> = (0..n * n).map(|_| r.below(levels) as f64).collect();
            let dense = lap_dense(&cost, n, n);
            let cols: Vec<u32> = (0..n).flat_map(|_| 0..n as u32).collect();
            let starts: Vec<usize> = (0..=n).map(|i| i * n).collect();
            let sparse = lap_sparse(n, n, &starts, &cols, &cost, &vec![PRIMARY; n]);
            let a: f64 = dense
                .iter()
                .enumerate()
                .map(|(i, &j)| cost[i * n + j])
                .sum();
            let b: f64 = sparse.iter().map(|s| s.map_or(f64::NAN, |p| p.1)).sum();
            assert_eq!(a, b, "case {case}");
            let mut seen = vec![false; n];
            for &j in &dense {
                assert!(!seen[j], "case {case}");
                seen[j] = true;
            }
        }
    }

    #[test]
    fn greedy_line_agrees_with_the_general_scan() {
        let mut r = Rng::new(8);
        for _ in 0..100 {
            let n = 2 + r.below(60);
            let treated: Vec<bool> = (0..n).map(|_| r.bernoulli(0.4)).collect();
            let logit: Vec<f64> = (0..n).map(|_| (r.normal() * 3.0).round() / 3.0).collect();
            let exact: Vec<u32> = (0..n).map(|_| r.below(3) as u32).collect();
            let k = 1 + r.below(3);
            let reuse = r.bernoulli(0.3);
            let cal = if r.bernoulli(0.5) { Some(0.3) } else { None };
            let line = ScoreDistance::new(&logit);
            let plain = FnDistance::new(|a: usize, b: usize| (logit[a] - logit[b]).abs());
            let p = params(Algorithm::Greedy, cal, k, reuse);
            let a = run(&treated, &logit, Some(&exact), &line, &p);
            let b = run(&treated, &logit, Some(&exact), &plain, &p);
            assert_eq!(a, b);
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(200))]
        #[test]
        fn matching_respects_every_rule(
            rows in proptest::collection::vec((any::<bool>(), -30i32..30, 0u32..3), 2..40),
            k in 1usize..3,
            reuse in any::<bool>(),
            caliper in proptest::option::of(0.05f64..1.0),
        ) {
            let treated: Vec<bool> = rows.iter().map(|r| r.0).collect();
            let logit: Vec<f64> = rows.iter().map(|r| r.1 as f64 / 10.0).collect();
            let exact: Vec<u32> = rows.iter().map(|r| r.2).collect();
            let d = ScoreDistance::new(&logit);
            let mut results = Vec::new();
            for alg in [Algorithm::Greedy, Algorithm::Optimal] {
                let m = run(&treated, &logit, Some(&exact), &d, &params(alg, caliper, k, reuse));
                let mut uses = vec![0usize; treated.len()];
                for s in &m.sets {
                    prop_assert!(treated[s.treated]);
                    prop_assert!(!s.controls.is_empty() && s.controls.len() <= k);
                    for &(c, dist) in &s.controls {
                        prop_assert!(!treated[c]);
                        prop_assert_eq!(exact[c], exact[s.treated]);
                        if let Some(w) = m.caliper_width {
                            prop_assert!((logit[c] - logit[s.treated]).abs() <= w);
                        }
                        prop_assert!((dist - (logit[c] - logit[s.treated]).abs()).abs() < 1e-12);
                        uses[c] += 1;
                    }
                }
                if !reuse {
                    prop_assert!(uses.iter().all(|&u| u <= 1));
                }
                // weights: treated total = matched sets = comparison total
                let wt: f64 = (0..treated.len()).filter(|&i| treated[i]).map(|i| m.weights[i]).sum();
                let wc: f64 = (0..treated.len()).filter(|&i| !treated[i]).map(|i| m.weights[i]).sum();
                prop_assert!((wt - m.sets.len() as f64).abs() < 1e-9);
                prop_assert!((wc - m.sets.len() as f64).abs() < 1e-9);
                prop_assert_eq!(m.sets.len() + m.unmatched_treated.len(), treated.iter().filter(|&&t| t).count());
                results.push(m);
            }
            let (g, o) = (&results[0], &results[1]);
            prop_assert!(o.sets.len() >= g.sets.len());
            let gp: usize = g.sets.iter().map(|s| s.controls.len()).sum();
            let op: usize = o.sets.iter().map(|s| s.controls.len()).sum();
            if o.sets.len() == g.sets.len() && op == gp {
                prop_assert!(o.total_distance <= g.total_distance + 1e-9);
            }
        }
    }
}
