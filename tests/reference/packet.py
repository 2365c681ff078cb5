"""Reference values for the results of a rated review round
(crates/pairsight-core/src/packet/results.rs): how the merged ratings of
several reviewers become the agreement statistics.

Generates an invented round with a fixed numpy seed: 40 pairs from two
designs, three reviewers who each skip some pairs, integer ratings 1 to 5.
Every expected value is computed by the library named beside it, on the
ratings arranged as the statistic requires (jointly rated pairs for kappa,
all pairs with missing values for alpha, complete pairs for the ICC).
Writes <out>/packet.json.
"""

import argparse
import itertools
import json
import pathlib

import krippendorff
import numpy as np
import pandas as pd
import pingouin
import sklearn
from sklearn.metrics import cohen_kappa_score

rng = np.random.default_rng(20250107)
REVIEWERS = ["ana", "ben", "cleo"]  # invented labels, sorted as pairsight sorts them


def make_round():
    pairs = []
    for i in range(40):
        design = "near" if i < 22 else "far"
        quality = 4.0 if design == "near" else 2.8
        d = float(rng.gamma(2.0, 0.4))
        pairs.append({"pair_key": f"K{i:02d}-X", "design": design, "distance": d, "quality": quality - 0.7 * d})
    ratings = []
    for p in pairs:
        for r in REVIEWERS:
            if rng.random() < 0.15:
                continue  # this reviewer skipped the pair
            v = int(np.clip(np.rint(p["quality"] + rng.normal(0, 0.8)), 1, 5))
            ratings.append({"pair_key": p["pair_key"], "reviewer": r, "rating": v})
    return pairs, ratings


def matrix(pairs, ratings):
    """Units x reviewers, NaN where not rated."""
    idx = {p["pair_key"]: i for i, p in enumerate(pairs)}
    m = np.full((len(pairs), len(REVIEWERS)), np.nan)
    for x in ratings:
        m[idx[x["pair_key"]], REVIEWERS.index(x["reviewer"])] = x["rating"]
    return m


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", default="target/reference")
    args = ap.parse_args()
    pairs, ratings = make_round()
    m = matrix(pairs, ratings)

    kappas = []
    for i, j in itertools.combinations(range(len(REVIEWERS)), 2):
        both = ~np.isnan(m[:, i]) & ~np.isnan(m[:, j])
        a, b = m[both, i].astype(int), m[both, j].astype(int)
        kappas.append({
            "first": REVIEWERS[i], "second": REVIEWERS[j], "n": int(both.sum()),
            # scikit-learn cohen_kappa_score with the scale's five categories.
            "linear": float(cohen_kappa_score(a, b, labels=[1, 2, 3, 4, 5], weights="linear")),
            "quadratic": float(cohen_kappa_score(a, b, labels=[1, 2, 3, 4, 5], weights="quadratic")),
        })

    # krippendorff.alpha: reliability data is reviewers x units, NaN missing.
    alpha = {level: float(krippendorff.alpha(reliability_data=m.T, level_of_measurement=level))
             for level in ["ordinal", "interval"]}
    pairable = int((np.sum(~np.isnan(m), axis=1) >= 2).sum())

    complete = ~np.isnan(m).any(axis=1)
    c = m[complete]
    long = pd.DataFrame(
        [(u, REVIEWERS[j], c[u, j]) for u in range(c.shape[0]) for j in range(c.shape[1])],
        columns=["unit", "reviewer", "rating"],
    )
    # pingouin.intraclass_corr on the pairs every reviewer rated; rows in
    # Shrout & Fleiss order ICC1, ICC2, ICC3, ICC1k, ICC2k, ICC3k; its
    # interval is rounded to 2 decimals by pingouin.
    t = pingouin.intraclass_corr(data=long, targets="unit", raters="reviewer", ratings="rating")
    ci_col = "CI95" if "CI95" in t.columns else "CI95%"
    icc = [{"icc": float(row["ICC"]), "ci": [float(v) for v in row[ci_col]]} for _, row in t.iterrows()]

    doc = {
        "versions": {"numpy": np.__version__, "scikit-learn": sklearn.__version__,
                     "krippendorff": getattr(krippendorff, "__version__", "unknown"),
                     "pingouin": pingouin.__version__},
        "reviewers": REVIEWERS,
        "pairs": [{k: p[k] for k in ["pair_key", "design", "distance"]} for p in pairs],
        "ratings": ratings,
        "pairs_rated": int((~np.isnan(m)).any(axis=1).sum()),  # numpy count
        "pairs_complete": int(complete.sum()),
        "kappa": kappas,
        "alpha": alpha,
        "alpha_units": pairable,
        "icc": icc,
    }
    out = pathlib.Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    (out / "packet.json").write_text(json.dumps(doc, indent=1))


if __name__ == "__main__":
    main()
