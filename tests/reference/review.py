"""Reference values for pairsight's design comparison of a review round
(crates/pairsight-core/src/review/compare.rs).

Generates an invented rated round with a fixed numpy seed: three designs,
their pairs (two pairs shared by two designs), each design's own distance,
integer ratings 1 to 5 from three reviewers with some ratings missing, and
one extra named distance with ties. Every expected value is computed by the
library named beside it. Writes <out>/review.json.
"""

import argparse
import json
import pathlib

import numpy as np
import scipy
import scipy.stats as st
import statsmodels
from statsmodels.stats.multitest import multipletests
from statsmodels.stats.proportion import proportion_confint

rng = np.random.default_rng(20240917)
LEVEL = 4
REVIEWERS = ["reviewer 1", "reviewer 2", "reviewer 3"]


def make_round():
    """Designs with different sizes and quality; ratings fall with distance."""
    designs = [("tight", 26, 4.0), ("loose", 31, 3.0), ("notes", 19, 3.6)]
    key = []  # pair_key, design, distance
    pair_quality = {}
    n = 0
    for name, size, quality in designs:
        for _ in range(size):
            n += 1
            k = f"P{n:03d}"
            d = float(rng.gamma(2.0, 0.4))
            key.append({"pair_key": k, "design": name, "distance": d})
            pair_quality[k] = quality - 0.8 * d
    # Two pairs matched by two designs: same pair key, each design's distance.
    for k in ["P003", "P010"]:
        key.append({"pair_key": k, "design": "notes", "distance": float(rng.gamma(2.0, 0.4))})
    ratings = []
    for k, q in sorted(pair_quality.items()):
        raters = [r for r in REVIEWERS if rng.random() < 0.8] or [REVIEWERS[0]]
        for r in raters:
            v = int(np.clip(np.rint(q + rng.normal(0, 0.7)), 1, 5))
            ratings.append({"pair_key": k, "reviewer": r, "rating": v})
    # A pair left unrated by everyone.
    ratings = [x for x in ratings if x["pair_key"] != "P005"]
    return key, ratings


def pair_means(ratings):
    by = {}
    for x in ratings:
        by.setdefault(x["pair_key"], []).append(x["rating"])
    return {k: float(np.mean(v)) for k, v in by.items()}  # numpy mean over reviewers


def expected(key, means, measures, confidence):
    names = []
    for e in key:
        if e["design"] not in names:
            names.append(e["design"])
    designs, samples = [], {}
    for name in names:
        entries = [e for e in key if e["design"] == name and e["pair_key"] in means]
        x = np.array([means[e["pair_key"]] for e in entries])
        d = np.array([e["distance"] for e in entries])
        samples[name] = x
        ci = st.ttest_1samp(x, 0.0).confidence_interval(confidence_level=confidence)  # scipy t interval
        alike = int(np.sum(x >= LEVEL))
        lo, hi = proportion_confint(alike, len(x), alpha=1 - confidence, method="wilson")  # statsmodels Wilson
        rho = st.spearmanr(d, x)  # scipy spearmanr (average ranks, t-based p)
        designs.append({
            "design": name,
            "pairs_drawn": sum(1 for e in key if e["design"] == name),
            "n": len(x),
            "mean": float(np.mean(x)),
            "sd": float(np.std(x, ddof=1)),
            "ci_low": float(ci.low),
            "ci_high": float(ci.high),
            "share": alike / len(x),
            "share_low": float(lo),
            "share_high": float(hi),
            "rho": float(rho.statistic),
            "rho_p": float(rho.pvalue),
        })
    contrasts = []
    for i in range(len(names)):
        for j in range(i + 1, len(names)):
            a, b = samples[names[i]], samples[names[j]]
            w = st.ttest_ind(a, b, equal_var=False)  # scipy Welch t test
            ci = w.confidence_interval(confidence_level=confidence)
            contrasts.append({
                "first": names[i], "second": names[j],
                "t": float(w.statistic), "df": float(w.df), "p": float(w.pvalue),
                "ci_low": float(ci.low), "ci_high": float(ci.high),
            })
    holm = multipletests([c["p"] for c in contrasts], method="holm")[1]  # statsmodels Holm
    for c, p in zip(contrasts, holm):
        c["p_holm"] = float(p)
    meas = []
    for m in measures:
        ks = [k for k, _ in m["values"] if k in means]
        v = [v for k, v in m["values"] if k in means]
        r = st.spearmanr(v, [means[k] for k in ks])  # scipy spearmanr
        meas.append({"name": m["name"], "n": len(ks), "rho": float(r.statistic), "p": float(r.pvalue)})
    return {"designs": designs, "contrasts": contrasts, "measures": meas}


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", default="target/reference")
    out = pathlib.Path(ap.parse_args().out)
    out.mkdir(parents=True, exist_ok=True)
    key, ratings = make_round()
    means = pair_means(ratings)
    all_keys = sorted({e["pair_key"] for e in key})
    # A coarse distance with many ties (rounded to one decimal), on every pair
    # but one.
    coarse = [[k, float(np.round(rng.gamma(2.0, 0.5), 1))] for k in all_keys if k != "P001"]
    measures = [{"name": "coarse distance", "values": coarse}]
    doc = {
        "sources": {
            "scipy": scipy.__version__,
            "statsmodels": statsmodels.__version__,
            "numpy": np.__version__,
        },
        "level": LEVEL,
        "key": key,
        "ratings": ratings,
        "measures": measures,
        "expected": {
            str(c): expected(key, means, measures, c) for c in (0.95, 0.9)
        },
    }
    (out / "review.json").write_text(json.dumps(doc, indent=1))


if __name__ == "__main__":
    main()
