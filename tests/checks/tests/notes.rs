//! Note features against outside references computed by
//! `tests/reference/notes.py` (sources named beside each check).

use pairsight_checks::{floats, reference, rows};
use pairsight_core::notes::{
    analyze, cosine_distance, flesch_kincaid_grade, flesch_reading_ease, mtld, sentences,
    syllables, text_counts, type_token_ratio, NoteOptions, SparseRows, TextCounts, OVERSAMPLE,
    POWER_ITERATIONS,
};
use serde_json::Value;

fn strings(v: &Value) -> Vec<String> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_str().expect("string").to_string())
        .collect()
}

fn triplets(m: &SparseRows) -> Vec<(usize, usize, f64)> {
    let mut out = Vec::new();
    for i in 0..m.n_rows() {
        let (c, v) = m.row(i);
        for (&k, &x) in c.iter().zip(v) {
            out.push((i, k as usize, x));
        }
    }
    out
}

fn ref_triplets(v: &Value) -> Vec<(usize, usize, f64)> {
    rows(v)
        .into_iter()
        .map(|r| (r[0] as usize, r[1] as usize, r[2]))
        .collect()
}

fn no_latent() -> NoteOptions {
    NoteOptions {
        latent_dims: 0,
        ..NoteOptions::default()
    }
}

/// scikit-learn CountVectorizer (default settings): same vocabulary, same
/// counts, exactly; note.tokens is the row sum.
#[test]
fn counts_match_sklearn_count_vectorizer() {
    let r = reference("notes");
    let notes = strings(&r["notes"]);
    let f = analyze(&notes, &[], &no_latent()).unwrap();
    assert_eq!(f.vocabulary, strings(&r["vocabulary"]));
    assert_eq!(triplets(&f.counts), ref_triplets(&r["counts"]));
    let col = f.column("note.tokens").unwrap();
    for i in 0..notes.len() {
        let sum: f64 = f.counts.row(i).1.iter().sum();
        assert_eq!(f.values[[i, col]], sum, "note {i}");
    }
}

/// scikit-learn CountVectorizer(ngram_range=(1, 2)) and
/// CountVectorizer(token_pattern=r"(?u)\b\w+\b"): our bigram and
/// one-character-token options, exactly.
#[test]
fn options_match_sklearn_bigrams_and_single_characters() {
    let r = reference("notes");
    let notes = strings(&r["notes"]);
    let bi = analyze(
        &notes,
        &[],
        &NoteOptions {
            bigrams: true,
            ..no_latent()
        },
    )
    .unwrap();
    assert_eq!(bi.vocabulary, strings(&r["bigram_vocabulary"]));
    assert_eq!(triplets(&bi.counts), ref_triplets(&r["bigram_counts"]));
    let one = analyze(
        &notes,
        &[],
        &NoteOptions {
            single_char_tokens: true,
            ..no_latent()
        },
    )
    .unwrap();
    assert_eq!(one.vocabulary, strings(&r["single_vocabulary"]));
    assert_eq!(triplets(&one.counts), ref_triplets(&r["single_counts"]));
}

/// scikit-learn TfidfVectorizer (default settings): idf and TF-IDF values
/// within 1e-12.
#[test]
fn tfidf_matches_sklearn_tfidf_vectorizer() {
    let r = reference("notes");
    let notes = strings(&r["notes"]);
    let f = analyze(&notes, &[], &no_latent()).unwrap();
    for (a, b) in f.idf.iter().zip(floats(&r["idf"])) {
        assert!((a - b).abs() <= 1e-12, "idf {a} vs {b}");
    }
    let ours = triplets(&f.tfidf);
    let theirs = ref_triplets(&r["tfidf"]);
    assert_eq!(ours.len(), theirs.len());
    for (a, b) in ours.iter().zip(&theirs) {
        assert_eq!((a.0, a.1), (b.0, b.1));
        assert!((a.2 - b.2).abs() <= 1e-12, "{a:?} vs {b:?}");
    }
}

/// scikit-learn metrics.pairwise.cosine_distances on the TF-IDF rows: every
/// pair within 1e-12 (empty notes included). The optimal-matching total on
/// these distances against scipy's linear_sum_assignment belongs to the
/// matching checks, which use this distance.
#[test]
fn cosine_distance_matches_sklearn() {
    let r = reference("notes");
    let notes = strings(&r["notes"]);
    let f = analyze(&notes, &[], &no_latent()).unwrap();
    let d = rows(&r["cosine"]);
    for (i, row) in d.iter().enumerate() {
        for (j, &want) in row.iter().enumerate() {
            let got = cosine_distance(&f.tfidf, i, j);
            assert!((got - want).abs() <= 1e-12, "({i}, {j}): {got} vs {want}");
        }
    }
}

/// Note-cosine optimal 1:1 matching (no caliper, no exact columns): the
/// least total distance equals scipy.optimize.linear_sum_assignment's on
/// scikit-learn's cosine distances of the same TF-IDF rows, within 1e-9
/// relative.
#[test]
fn note_cosine_optimal_total_matches_scipy_assignment() {
    use pairsight_core::distance::FnDistance;
    use pairsight_core::matching::{match_units, Algorithm, MatchInput, MatchParams};
    let r = reference("notes");
    let notes = strings(&r["notes"]);
    let treated: Vec<bool> = r["assignment_treated"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_bool().unwrap())
        .collect();
    let f = analyze(&notes, &[], &no_latent()).unwrap();
    let distance = FnDistance::new(|t, c| cosine_distance(&f.tfidf, t, c));
    let logit = vec![0.0; notes.len()];
    let m = match_units(
        &MatchInput {
            treated: &treated,
            logit: &logit,
            exact: None,
            distance: &distance,
        },
        &MatchParams {
            caliper: None,
            controls: 1,
            reuse: false,
            algorithm: Algorithm::Optimal,
        },
    )
    .unwrap();
    let want = r["assignment_total"].as_f64().unwrap();
    assert_eq!(m.sets.len(), treated.iter().filter(|&&t| t).count());
    assert!(
        (m.total_distance - want).abs() <= 1e-9 * want.abs().max(1.0),
        "{} vs {want}",
        m.total_distance
    );
}

/// numpy.linalg.svd of the dense TF-IDF matrix of a small corpus: the
/// randomized SVD's singular values within 1e-6 relative. Single singular
/// vectors are ill-conditioned when neighbouring singular values are close
/// (Wedin's sin-theta theorem), so the scores (U times S) are compared column
/// by column only where the relative gap to both neighbours is at least 0.1
/// (within 1e-6 of the largest singular value, up to sign), and the whole
/// k-dimensional latent subspace, which depends only on the gap after s_k,
/// through the projector U_k U_k': randomized subspace iteration with l =
/// k + p columns and q power iterations converges like
/// (s_{l+1} / s_k)^(2q + 1) (Halko, Martinsson & Tropp 2011, section 4.5;
/// rate from memory), so the Frobenius difference must stay within 10 times
/// that rate, computed from numpy's singular values.
#[test]
fn latent_step_matches_numpy_svd() {
    let r = reference("notes");
    let notes = strings(&r["small_notes"]);
    let k = r["svd_k"].as_u64().unwrap() as usize;
    let f = analyze(
        &notes,
        &[],
        &NoteOptions {
            latent_dims: k,
            ..NoteOptions::default()
        },
    )
    .unwrap();
    let s = floats(&r["svd_singular_values"]);
    assert_eq!(f.singular_values.len(), k);
    for (a, b) in f.singular_values.iter().zip(&s) {
        assert!((a - b).abs() <= 1e-6 * b, "{a} vs {b}");
    }
    assert!(s[k] < 0.95 * s[k - 1], "the corpus needs a gap after s_k");
    let us = rows(&r["svd_scores"]);
    let n = notes.len();
    let mut separated = 0;
    for c in 0..k {
        let gap_prev = if c == 0 { 1.0 } else { 1.0 - s[c] / s[c - 1] };
        let gap_next = 1.0 - s[c + 1] / s[c];
        if gap_prev.min(gap_next) < 0.1 {
            continue;
        }
        separated += 1;
        let dot: f64 = (0..n).map(|i| f.latent[[i, c]] * us[i][c]).sum();
        let sign = if dot < 0.0 { -1.0 } else { 1.0 };
        for (i, u) in us.iter().enumerate() {
            let (a, b) = (f.latent[[i, c]], sign * u[c]);
            assert!((a - b).abs() <= 1e-6 * s[0], "score ({i}, {c}): {a} vs {b}");
        }
    }
    assert!(separated >= 1);
    let mut diff2 = 0.0;
    for i in 0..n {
        for j in 0..n {
            let ours: f64 = (0..k)
                .map(|c| {
                    f.latent[[i, c]] * f.latent[[j, c]]
                        / (f.singular_values[c] * f.singular_values[c])
                })
                .sum();
            let theirs: f64 = (0..k).map(|c| us[i][c] * us[j][c] / (s[c] * s[c])).sum();
            diff2 += (ours - theirs).powi(2);
        }
    }
    let l = k + OVERSAMPLE;
    let rate = (s[l] / s[k - 1]).powi(2 * POWER_ITERATIONS as i32 + 1);
    assert!(
        diff2.sqrt() <= 10.0 * rate,
        "latent subspaces differ by {} > 10 x {rate}",
        diff2.sqrt()
    );
    for c in 0..k {
        let col = f.column(&format!("note.lsa{}", c + 1)).unwrap();
        assert_eq!(f.values[[0, col]], f.latent[[0, c]]);
    }
}

/// Published formulas on sentences whose counts we made by hand:
/// Flesch (1948) reading ease 206.835 - 1.015 ASL - 84.6 ASW and the
/// Flesch-Kincaid grade 0.39 ASL + 11.8 ASW - 15.59 (Kincaid et al. 1975).
#[test]
fn readability_on_hand_counted_sentences() {
    // "The cat sat on the mat." 6 words, 1 sentence, 6 syllables (one each).
    let c = text_counts("The cat sat on the mat.");
    assert_eq!(
        c,
        TextCounts {
            words: 6,
            sentences: 1,
            syllables: 6
        }
    );
    assert!((flesch_reading_ease(&c) - 116.145).abs() < 1e-9);
    assert!((flesch_kincaid_grade(&c) - (-1.45)).abs() < 1e-9);
    // "Patient lives alone. She uses a walking frame." 8 words, 2 sentences;
    // pa-tient 2, lives 1, a-lone 2, she 1, us-es 2, a 1, walk-ing 2,
    // frame 1 = 12 syllables. ASL 4, ASW 1.5: 206.835 - 4.06 - 126.9 = 75.875;
    // 1.56 + 17.7 - 15.59 = 3.67.
    let c = text_counts("Patient lives alone. She uses a walking frame.");
    assert_eq!(
        c,
        TextCounts {
            words: 8,
            sentences: 2,
            syllables: 12
        }
    );
    assert!((flesch_reading_ease(&c) - 75.875).abs() < 1e-9);
    assert!((flesch_kincaid_grade(&c) - 3.67).abs() < 1e-9);
}

/// textstat (PyPI): the same formulas on textstat's own counts within
/// 1e-9; our word and sentence counts equal textstat's on these texts
/// (every sentence longer than two words). Syllables differ: textstat looks
/// words up in the CMU Pronouncing Dictionary and falls back to Pyphen
/// hyphenation for words it lacks, while we use a rule-based heuristic. On
/// these texts at least 90% of distinct words agree exactly; most
/// disagreements are drug names missing from the dictionary, where the
/// hyphenation fallback undercounts (paracetamol: 5 by hand and by us, 3 by
/// textstat; ramipril: 3 by hand and by us, 1 by textstat). So text totals
/// may differ by up to 10%, and, words and sentences being equal, reading
/// ease by up to 84.6 x 10% x textstat's syllables per word (about 12
/// points on these texts).
#[test]
fn readability_against_textstat() {
    let r = reference("notes");
    let rd = &r["readability"];
    let texts = strings(&rd["texts"]);
    let tw = floats(&rd["words"]);
    let ts = floats(&rd["sentences"]);
    let ty = floats(&rd["syllables"]);
    let tf = floats(&rd["flesch"]);
    let tg = floats(&rd["fk_grade"]);
    for (i, t) in texts.iter().enumerate() {
        let theirs = TextCounts {
            words: tw[i] as usize,
            sentences: ts[i] as usize,
            syllables: ty[i] as usize,
        };
        assert!(
            (flesch_reading_ease(&theirs) - tf[i]).abs() < 1e-9,
            "text {i}"
        );
        assert!(
            (flesch_kincaid_grade(&theirs) - tg[i]).abs() < 1e-9,
            "text {i}"
        );
        let ours = text_counts(t);
        assert_eq!(ours.words, theirs.words, "words of {t:?}");
        assert_eq!(ours.sentences, theirs.sentences, "sentences of {t:?}");
        assert_eq!(sentences(t), ours.sentences);
        let rel = (ours.syllables as f64 - ty[i]).abs() / ty[i];
        assert!(
            rel <= 0.10,
            "syllables of {t:?}: {} vs {}",
            ours.syllables,
            ty[i]
        );
        let bound = 84.6 * 0.10 * ty[i] / tw[i];
        let off = (flesch_reading_ease(&ours) - tf[i]).abs();
        assert!(off <= bound, "reading ease of {t:?} off by {off} > {bound}");
    }
    let vocab = strings(&rd["vocab"]);
    let vs = floats(&rd["vocab_syllables"]);
    let agree = vocab
        .iter()
        .zip(&vs)
        .filter(|(w, &n)| syllables(w) == n as usize)
        .count();
    let share = agree as f64 / vocab.len() as f64;
    assert!(share >= 0.90, "syllables agree on {share:.3} of words");
}

/// lexicalrichness (PyPI) 0.5.1: TTR and MTLD (McCarthy & Jarvis 2010,
/// threshold 0.72, mean of forward and backward passes) within 1e-12.
#[test]
fn mtld_matches_lexicalrichness() {
    let r = reference("notes");
    for case in r["mtld"].as_array().unwrap() {
        let words = strings(&case["words"]);
        let m = mtld(&words);
        let want = case["mtld"].as_f64().unwrap();
        assert!(
            (m - want).abs() <= 1e-12 * want.max(1.0),
            "{words:?}: {m} vs {want}"
        );
        let t = type_token_ratio(&words);
        assert!((t - case["ttr"].as_f64().unwrap()).abs() <= 1e-12);
    }
}
