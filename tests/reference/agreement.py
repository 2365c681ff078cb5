"""Reference values for pairsight's reviewer agreement (agreement.rs).

Inputs are simulated here with a fixed numpy seed (reviewers rating pair
similarity on a 1-to-5 scale); every expected value is computed by the
library or published formula named beside it. Writes <out>/agreement.json.
"""

import argparse
import json
import pathlib

import krippendorff
import numpy as np
import pandas as pd
import pingouin
import scipy
import scipy.stats as st
import sklearn
from sklearn.metrics import cohen_kappa_score
from statsmodels.stats.inter_rater import cohens_kappa
from statsmodels.stats.proportion import proportion_confint

rng = np.random.default_rng(20240612)
CATS = [1, 2, 3, 4, 5]


def simulate(n_units, n_raters, noise, missing=0.0):
    """Latent similarity per pair plus reviewer bias and noise, cut to 1..5."""
    latent = rng.normal(3.0, 1.1, size=n_units)
    bias = rng.normal(0, 0.3, size=n_raters)
    x = latent[:, None] + bias[None, :] + rng.normal(0, noise, size=(n_units, n_raters))
    r = np.clip(np.round(x), 1, 5)
    if missing > 0:
        r[rng.random(r.shape) < missing] = np.nan
    return r


def fce_se(a, b, weights, k=5):
    """Standard errors of (weighted) kappa by Fleiss, Cohen & Everitt (1969),
    written out here in numpy: non-null and null variance."""
    t = np.zeros((k, k))
    for x, y in zip(a, b):
        t[int(x) - 1, int(y) - 1] += 1
    n = t.sum()
    p = t / n
    i, j = np.indices((k, k))
    if weights is None:
        w = (i == j).astype(float)
    elif weights == "linear":
        w = 1 - np.abs(i - j) / (k - 1)
    else:
        w = 1 - (i - j) ** 2 / (k - 1) ** 2
    r, c = p.sum(1), p.sum(0)
    po = (w * p).sum()
    pe = (w * np.outer(r, c)).sum()
    kap = (po - pe) / (1 - pe)
    wi = w @ c
    wj = r @ w
    s1 = (p * (w - (wi[:, None] + wj[None, :]) * (1 - kap)) ** 2).sum()
    var = (s1 - (kap - pe * (1 - kap)) ** 2) / (n * (1 - pe) ** 2)
    s0 = (np.outer(r, c) * (w - (wi[:, None] + wj[None, :])) ** 2).sum()
    var0 = (s0 - pe ** 2) / (n * (1 - pe) ** 2)
    return float(np.sqrt(var)), float(np.sqrt(var0))


def kappas():
    out = []
    for noise in [0.5, 1.0]:
        r = simulate(120, 2, noise)
        a, b = r[:, 0], r[:, 1]
        for wname in [None, "linear", "quadratic"]:
            se, se0 = fce_se(a, b, wname)
            table = np.zeros((5, 5))
            for x, y in zip(a, b):
                table[int(x) - 1, int(y) - 1] += 1
            sm = cohens_kappa(table, wt=wname)  # statsmodels.stats.inter_rater.cohens_kappa
            out.append({
                "sm_kappa": float(sm.kappa), "sm_se": float(sm.std_kappa), "sm_se_null": float(sm.std_kappa0),
                "a": a.tolist(), "b": b.tolist(), "weights": wname or "unweighted",
                # scikit-learn cohen_kappa_score with the 1..5 labels given.
                "kappa": float(cohen_kappa_score(a, b, labels=CATS, weights=wname)),
                "se": se, "se_null": se0,
            })
    return out


def alphas():
    out = []
    for n_units, n_raters, missing in [(60, 3, 0.15), (150, 5, 0.3), (40, 2, 0.0)]:
        r = simulate(n_units, n_raters, 0.8, missing)
        # Every unit keeps at least one rating so the matrix is well formed.
        case = {"ratings": [[None if np.isnan(v) else v for v in row] for row in r]}
        for level in ["ordinal", "interval", "nominal"]:
            # The PyPI package krippendorff takes raters in rows, units in columns.
            case[level] = float(krippendorff.alpha(r.T, level_of_measurement=level))
        out.append(case)
    return out


def krippendorff_2011():
    """The worked example of Krippendorff (2011), "Computing Krippendorff's
    alpha-reliability" (4 observers x 12 units, missing values), recalled from
    memory; the paper's reported alphas are checked in the Rust test, and the
    PyPI krippendorff package's values on the same matrix are written here."""
    n = np.nan
    d = np.array([
        [1, 2, 3, 3, 2, 1, 4, 1, 2, n, n, n],
        [1, 2, 3, 3, 2, 2, 4, 1, 2, 5, n, 3],
        [n, 3, 3, 3, 2, 3, 4, 2, 2, 5, 1, n],
        [1, 2, 3, 3, 2, 4, 4, 1, 2, 5, 1, n],
    ])
    return {level: float(krippendorff.alpha(d, level_of_measurement=level))
            for level in ["nominal", "ordinal", "interval"]}


def icc_numpy(x, level=0.95):
    """Shrout & Fleiss (1979) ICCs and McGraw & Wong (1996) intervals written
    out in numpy with scipy.stats.f quantiles (unrounded)."""
    n, k = x.shape
    g = x.mean()
    ssr = k * ((x.mean(1) - g) ** 2).sum()
    ssc = n * ((x.mean(0) - g) ** 2).sum()
    sse = ((x - g) ** 2).sum() - ssr - ssc
    msr, msc = ssr / (n - 1), ssc / (k - 1)
    mse = sse / ((n - 1) * (k - 1))
    msw = (ssc + sse) / (n * (k - 1))
    q = 1 - (1 - level) / 2
    F = st.f.ppf
    f1, f3 = msr / msw, msr / mse
    d1, d21, d23 = n - 1, n * (k - 1), (n - 1) * (k - 1)
    f1l, f1u = f1 / F(q, d1, d21), f1 * F(q, d21, d1)
    f3l, f3u = f3 / F(q, d1, d23), f3 * F(q, d23, d1)
    icc2 = (msr - mse) / (msr + (k - 1) * mse + k * (msc - mse) / n)
    a = k * icc2 / (n * (1 - icc2))
    b = 1 + k * icc2 * (n - 1) / (n * (1 - icc2))
    v = (a * msc + b * mse) ** 2 / ((a * msc) ** 2 / (k - 1) + (b * mse) ** 2 / ((n - 1) * (k - 1)))
    fl, fu = F(q, n - 1, v), F(q, v, n - 1)
    l2 = n * (msr - fl * mse) / (fl * (k * msc + (k * n - k - n) * mse) + n * msr)
    u2 = n * (fu * msr - mse) / (k * msc + (k * n - k - n) * mse + n * fu * msr)
    su = lambda r: k * r / (1 + (k - 1) * r)
    return {
        "ICC1": [(f1l - 1) / (f1l + k - 1), (f1u - 1) / (f1u + k - 1)],
        "ICC2": [l2, u2],
        "ICC3": [(f3l - 1) / (f3l + k - 1), (f3u - 1) / (f3u + k - 1)],
        "ICC1k": [1 - 1 / f1l, 1 - 1 / f1u],
        "ICC2k": [su(l2), su(u2)],
        "ICC3k": [1 - 1 / f3l, 1 - 1 / f3u],
    }


def iccs():
    out = []
    for n_units, n_raters in [(30, 3), (80, 4), (12, 2)]:
        r = simulate(n_units, n_raters, 0.7)
        long = pd.DataFrame(
            [(u, j, r[u, j]) for u in range(n_units) for j in range(n_raters)],
            columns=["unit", "reviewer", "rating"],
        )
        # pingouin.intraclass_corr: ICC, F, df1, df2, pval and a 95% interval
        # rounded to 2 decimals by pingouin. Its rows come in Shrout & Fleiss
        # order, ICC(1,1), ICC(2,1), ICC(3,1), then the average-measure forms
        # (pingouin 0.7 labels the two-way ones A and C, McGraw & Wong's names).
        t = pingouin.intraclass_corr(data=long, targets="unit", raters="reviewer", ratings="rating")
        ci_col = "CI95" if "CI95" in t.columns else "CI95%"
        ref = icc_numpy(r)
        rows = {}
        keys = ["ICC1", "ICC2", "ICC3", "ICC1k", "ICC2k", "ICC3k"]
        for key, (_, row) in zip(keys, t.iterrows()):
            rows[key] = {
                "pingouin_type": str(row["Type"]),
                "icc": float(row["ICC"]), "f": float(row["F"]), "df1": float(row["df1"]),
                "df2": float(row["df2"]), "p": float(row["pval"]),
                "ci_pingouin": [float(v) for v in row[ci_col]],
                "ci_numpy": [float(v) for v in ref[key]],
            }
        out.append({"ratings": r.tolist(), "rows": rows})
    return out


def spearmans():
    out = []
    for n in [25, 200]:
        d = rng.gamma(2.0, 0.5, size=n)
        rating = np.clip(np.round(5 - 1.2 * d + rng.normal(0, 0.8, size=n)), 1, 5)
        res = st.spearmanr(d, rating)  # scipy.stats.spearmanr
        out.append({"x": d.tolist(), "y": rating.tolist(), "rho": float(res.statistic), "p": float(res.pvalue)})
    return out


def summaries():
    r = simulate(70, 1, 0.5)[:, 0]
    n = len(r)
    k = int((r >= 4).sum())
    lo, hi = proportion_confint(k, n, alpha=0.05, method="wilson")  # statsmodels Wilson interval
    tlo, thi = st.t.interval(0.95, n - 1, loc=r.mean(), scale=st.sem(r))  # scipy t interval
    return {"ratings": r.tolist(), "mean": float(r.mean()), "ci": [float(tlo), float(thi)],
            "share": k / n, "share_ci": [float(lo), float(hi)]}


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", default="target/reference")
    args = ap.parse_args()
    doc = {
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__, "scikit-learn": sklearn.__version__,
                     "krippendorff": getattr(krippendorff, "__version__", "unknown"),
                     "pingouin": pingouin.__version__},
        "kappa": kappas(),
        "alpha": alphas(),
        "alpha_krippendorff_2011": krippendorff_2011(),
        "icc": iccs(),
        "spearman": spearmans(),
        "summary": summaries(),
    }
    out = pathlib.Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    (out / "agreement.json").write_text(json.dumps(doc))
    print(f"wrote {out / 'agreement.json'}")


if __name__ == "__main__":
    main()
