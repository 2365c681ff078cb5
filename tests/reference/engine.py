"""Reference values for pairsight's matching engine: the score model
(score.rs), optimal assignment (matching.rs) and balance diagnostics
(balance.rs), plus the NSW experimental sample for a published value.

Inputs are generated here with a fixed numpy seed (except the NSW sample,
which the PyPI package causaldata ships); every expected value is computed by
the library or published formula named beside it. Writes <out>/engine.json.
"""

import argparse
import json
import pathlib

import numpy as np
import scipy
import scipy.optimize as opt
import scipy.stats as st
import statsmodels
import statsmodels.api as sm
from scipy.optimize import linear_sum_assignment

rng = np.random.default_rng(20240907)


# --------------------------------------------------------------------------
# Score model: statsmodels Logit (Newton), and Firth's penalized likelihood
# maximized numerically with scipy.optimize.
# --------------------------------------------------------------------------


def logit_case(name, x, y):
    """statsmodels.discrete.discrete_model.Logit fitted by Newton-Raphson."""
    res = sm.Logit(y, sm.add_constant(x, has_constant="add")).fit(
        method="newton", maxiter=200, tol=1e-14, disp=0
    )
    return {
        "name": name,
        "x": x.tolist(),
        "treated": [bool(v) for v in y],
        "coefficients": res.params.tolist(),  # statsmodels Logit params
        "scores": res.predict().tolist(),  # statsmodels Logit fitted probabilities
        "log_likelihood": float(res.llf),  # statsmodels Logit llf
    }


def logit_cases(nsw):
    cases = []
    # 1. Plain numeric covariates.
    n, p = 600, 4
    x = rng.normal(size=(n, p))
    eta = -0.4 + x @ np.array([0.8, -0.5, 0.3, 0.0])
    y = rng.random(n) < 1 / (1 + np.exp(-eta))
    cases.append(logit_case("numeric", x, y))
    # 2. Numeric plus categorical indicators (4-level factor coded against
    #    its first level, and a binary), with a square and a product term.
    n = 1500
    age = rng.normal(70, 12, size=n)
    level = rng.integers(0, 4, size=n)
    sex = rng.integers(0, 2, size=n).astype(float)
    crea = rng.lognormal(0.0, 0.4, size=n)
    dummies = np.stack([(level == k).astype(float) for k in (1, 2, 3)], axis=1)
    x = np.column_stack([age, sex, dummies, crea, (age - 70) ** 2 / 100, age * sex / 10])
    eta = -3 + 0.03 * age + 0.4 * sex + dummies @ np.array([0.5, -0.3, 0.9]) + 0.6 * crea
    y = rng.random(n) < 1 / (1 + np.exp(-eta))
    cases.append(logit_case("categorical", x, y))
    # 3. Badly scaled columns (earnings in tens of thousands beside a rate).
    n = 400
    x = np.column_stack(
        [rng.normal(25000, 8000, size=n), rng.normal(0.002, 0.0005, size=n), rng.normal(size=n)]
    )
    eta = -1 + 0.00005 * (x[:, 0] - 25000) + 800 * (x[:, 1] - 0.002) + 0.5 * x[:, 2]
    y = rng.random(n) < 1 / (1 + np.exp(-eta))
    cases.append(logit_case("scaled", x, y))
    # 4. A rare outcome (8% treated).
    n = 2500
    x = rng.normal(size=(n, 6))
    eta = -2.8 + x @ np.array([0.7, 0.2, -0.4, 0.1, 0.0, 0.3])
    y = rng.random(n) < 1 / (1 + np.exp(-eta))
    cases.append(logit_case("rare", x, y))
    # 5. The NSW experimental sample (open data, causaldata).
    cols = ["age", "educ", "black", "hisp", "marr", "nodegree", "re74", "re75"]
    cases.append(logit_case("nsw", nsw[cols].to_numpy(dtype=float), nsw["treat"].to_numpy() == 1))
    return cases


def firth_case():
    """Firth (1993) estimate by direct numerical maximization of
    l(beta) + 1/2 log det(X'WX) with scipy.optimize.minimize (BFGS), on
    completely separated data where plain maximum likelihood has no
    finite estimate."""
    n = 30
    x = np.column_stack([np.linspace(-2, 2, n), rng.normal(size=n)])
    y = x[:, 0] > 0.1
    X = sm.add_constant(x)

    def negpen(b):
        eta = X @ b
        p = 1 / (1 + np.exp(-eta))
        ll = np.sum(y * eta - np.logaddexp(0, eta))
        w = p * (1 - p)
        sign, logdet = np.linalg.slogdet(X.T @ (X * w[:, None]))
        return -(ll + 0.5 * logdet)

    res = opt.minimize(negpen, np.zeros(X.shape[1]), method="BFGS", options={"gtol": 1e-10})
    return {
        "x": x.tolist(),
        "treated": [bool(v) for v in y],
        "coefficients": res.x.tolist(),  # scipy.optimize.minimize of Firth's penalized likelihood
    }


# --------------------------------------------------------------------------
# Optimal assignment: scipy.optimize.linear_sum_assignment.
# --------------------------------------------------------------------------


def caliper_width(logit, treated, caliper):
    """caliper * sqrt((var_t + var_c)/2), n-1 variances (numpy var ddof=1);
    Rosenbaum & Rubin 1985, Austin 2011."""
    vt = np.var(logit[treated], ddof=1) if treated.sum() > 1 else 0.0
    vc = np.var(logit[~treated], ddof=1) if (~treated).sum() > 1 else 0.0
    return caliper * np.sqrt((vt + vc) / 2)


def lexicographic_reference(cost, allowed, k):
    """Most treated matched, then most pairs, then least total distance, by
    one linear_sum_assignment call on a documented construction: each
    treated unit is repeated k times (its slots); every slot also has a
    private "stay unmatched" column costing M2 for the first slot and M1 for
    the others, with M1 larger than any total of real distances and M2
    larger than M1 times the number of slots plus that total, so leaving a
    treated unit out outranks leaving a slot out, which outranks distance.
    Forbidden pairs are +inf (which linear_sum_assignment never chooses)."""
    nt, nc = cost.shape
    slots = nt * k
    maxc = float(cost[allowed].max()) if allowed.any() else 1.0
    m1 = slots * maxc + 1.0
    m2 = (slots + 1) * m1 + 1.0
    big = np.full((slots, nc + slots), np.inf)
    for t in range(nt):
        for s in range(k):
            r = t * k + s
            big[r, :nc] = np.where(allowed[t], cost[t], np.inf)
            big[r, nc + r] = m2 if s == 0 else m1
    rows, cols = linear_sum_assignment(big)
    total = 0.0
    matched = set()
    pairs = 0
    for r, c in zip(rows, cols):
        if c < nc:
            total += cost[r // k, c]
            matched.add(r // k)
            pairs += 1
    return len(matched), pairs, total


def assignment_cases():
    cases = []

    def add(kind, nt, nc, k=1, caliper=None, strata=0, metric="points"):
        n = nt + nc
        treated = np.zeros(n, dtype=bool)
        treated[rng.choice(n, size=nt, replace=False)] = True
        logit = rng.normal(size=n) + 0.6 * treated
        if metric == "points":
            pts = rng.normal(size=(n, 3))
            full = np.sqrt(((pts[treated][:, None, :] - pts[~treated][None, :, :]) ** 2).sum(-1))
        elif metric == "uniform":
            full = rng.random((nt, nc))
        else:  # |logit difference|
            full = np.abs(logit[treated][:, None] - logit[~treated][None, :])
        allowed = np.ones((nt, nc), dtype=bool)
        width = None
        keys = np.zeros(n, dtype=int)
        if caliper is not None:
            width = caliper_width(logit, treated, caliper)
            allowed &= np.abs(logit[treated][:, None] - logit[~treated][None, :]) <= width
        if strata:
            keys = rng.integers(0, strata, size=n)
            allowed &= keys[treated][:, None] == keys[~treated][None, :]
        if not allowed.any():
            return
        if caliper is None and not strata and k == 1:
            # Plain rectangular problem: scipy directly (it matches
            # min(nt, nc) rows). scipy.optimize.linear_sum_assignment
            r, c = linear_sum_assignment(full)
            ref = (min(nt, nc), min(nt, nc), float(full[r, c].sum()))
        else:
            ref = lexicographic_reference(full, allowed, k)
        cases.append(
            {
                "kind": kind,
                "treated": treated.tolist(),
                "logit": logit.tolist(),
                "exact": keys.tolist() if strata else None,
                "caliper": caliper,
                "caliper_width": width,  # numpy var(ddof=1) formula
                "controls": k,
                "cost": full.tolist(),  # rows: treated in row order; columns: comparison in row order
                "matched_treated": ref[0],
                "pairs": ref[1],
                "total": ref[2],  # scipy.optimize.linear_sum_assignment
            }
        )

    for i in range(12):
        n = int(rng.integers(4, 90))
        add("square", n, n, metric=["points", "uniform", "score"][i % 3])
    for i in range(10):
        nt = int(rng.integers(3, 60))
        add("rectangular", nt, nt + int(rng.integers(1, 60)), metric=["points", "uniform"][i % 2])
    for i in range(4):
        nc = int(rng.integers(3, 40))
        add("more_treated", nc + int(rng.integers(1, 20)), nc, metric="points")
    for i in range(10):
        nt = int(rng.integers(5, 60))
        add("caliper", nt, nt + int(rng.integers(0, 60)), caliper=float(rng.choice([0.05, 0.1, 0.2, 0.5])), metric=["points", "score"][i % 2])
    for i in range(8):
        nt = int(rng.integers(5, 60))
        add("exact", nt, nt + int(rng.integers(-3, 50)), strata=int(rng.integers(2, 5)))
    for i in range(8):
        nt = int(rng.integers(5, 50))
        add("caliper_exact", nt, nt + int(rng.integers(0, 60)), caliper=0.2, strata=int(rng.integers(2, 4)), metric=["points", "score"][i % 2])
    for i in range(6):
        k = int(rng.integers(2, 4))
        nt = int(rng.integers(3, 25))
        add("one_to_k", nt, nt * k + int(rng.integers(0, 20)), k=k)
    for i in range(6):
        k = int(rng.integers(2, 4))
        nt = int(rng.integers(3, 25))
        add("one_to_k_constrained", nt, nt * k + int(rng.integers(-nt, 20)), k=k, caliper=0.3, strata=int(rng.integers(1, 3)))
    return cases


# --------------------------------------------------------------------------
# Balance: numpy means/variances, numpy.cov with aweights, scipy ks_2samp.
# --------------------------------------------------------------------------


def balance_case():
    n = 500
    treated = rng.random(n) < 0.4
    cols = {
        "age": np.round(rng.normal(68, 14, size=n) + 3 * treated, 0),
        "creatinine": rng.lognormal(0.1 * treated, 0.5, size=n),
        "female": (rng.random(n) < 0.5 + 0.1 * treated).astype(float),
        "ward=east": (rng.random(n) < 0.3).astype(float),
        "prior": rng.poisson(1.0 + 0.5 * treated, size=n).astype(float),
        "constant": np.full(n, 2.0),
    }
    # Matching-like weights: treated 1 or 0, comparison multiples of 1/6 so
    # that 6 * w is an integer frequency.
    w = np.where(treated, (rng.random(n) < 0.9).astype(float), rng.choice([0, 1 / 3, 1 / 2, 1, 2, 3 / 2], size=n))
    freq = np.round(6 * w).astype(int)
    out_rows = []
    for name, x in cols.items():
        binary = bool(np.all((x == 0) | (x == 1)))
        xt, xc = x[treated], x[~treated]
        wt, wc = w[treated], w[~treated]
        if binary:
            # Austin 2009: p(1-p) for binary terms
            st2, sc2 = xt.mean() * (1 - xt.mean()), xc.mean() * (1 - xc.mean())
        else:
            st2, sc2 = np.var(xt, ddof=1), np.var(xc, ddof=1)  # numpy var, n-1
        denom = np.sqrt((st2 + sc2) / 2)
        mt_after = np.average(xt, weights=wt)  # numpy.average
        mc_after = np.average(xc, weights=wc)
        vt_b, vc_b = np.var(xt, ddof=1), np.var(xc, ddof=1)
        # numpy.cov with aweights and ddof=1: sum w (x-m)^2 / (W - sum w^2 / W)
        vt_a = float(np.cov(xt[wt > 0], aweights=wt[wt > 0], ddof=1))
        vc_a = float(np.cov(xc[wc > 0], aweights=wc[wc > 0], ddof=1))
        # scipy.stats.ks_2samp statistic; after matching on the samples
        # expanded by their integer frequencies 6 w.
        ks_b = st.ks_2samp(xt, xc).statistic
        ks_a = st.ks_2samp(np.repeat(xt, freq[treated]), np.repeat(xc, freq[~treated])).statistic
        ok = denom > 0
        out_rows.append(
            {
                "term": name,
                "values": x.tolist(),
                "smd_before": float((xt.mean() - xc.mean()) / denom) if ok else None,
                "smd_after": float((mt_after - mc_after) / denom) if ok else None,
                "variance_ratio_before": float(vt_b / vc_b) if vc_b > 0 else None,
                "variance_ratio_after": float(vt_a / vc_a) if vc_a > 0 else None,
                "ks_before": float(ks_b),
                "ks_after": float(ks_a),
            }
        )
    wc = w[~treated]
    return {
        "treated": treated.tolist(),
        "weights": w.tolist(),
        "terms": out_rows,
        "kish_comparison": float(wc.sum() ** 2 / (wc**2).sum()),  # Kish 1965 formula in numpy
    }


def main():
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--out", default="target/reference")
    args = ap.parse_args()
    out = pathlib.Path(args.out)
    out.mkdir(parents=True, exist_ok=True)

    from causaldata import nsw_mixtape

    nsw = nsw_mixtape.load_pandas().data
    result = {
        "sources": {
            "numpy": np.__version__,
            "scipy": scipy.__version__,
            "statsmodels": statsmodels.__version__,
        },
        "logit": logit_cases(nsw),
        "firth": firth_case(),
        "assignment": assignment_cases(),
        "balance": balance_case(),
        # NSW experimental sample, Dehejia & Wahba (1999) subsample of
        # Lalonde (1986), as shipped by causaldata (nsw_mixtape). Published
        # unmatched difference in mean 1978 earnings: $1,794 (Dehejia &
        # Wahba 1999, JASA 94(448); value recalled from the publication).
        "nsw": {
            "treat": [int(v) for v in nsw["treat"]],
            "re78": [float(v) for v in nsw["re78"]],
            "published_difference": 1794,
        },
    }
    path = out / "engine.json"
    path.write_text(json.dumps(result))
    print(f"wrote {path} ({len(result['assignment'])} assignment instances)")


if __name__ == "__main__":
    main()
