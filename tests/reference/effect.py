"""Reference values for pairsight's distributions (stats.rs), effect
estimates (effect.rs) and sensitivity bounds (sensitivity.rs).

Inputs are generated here with a fixed numpy seed; every expected value is
computed by the library or published formula named beside it. Writes
<out>/effect.json.
"""

import argparse
import json
import pathlib

import numpy as np
import scipy
import scipy.special as sp
import scipy.stats as st
import statsmodels
from statsmodels.stats.contingency_tables import mcnemar, Table2x2
from statsmodels.stats.proportion import confint_proportions_2indep

rng = np.random.default_rng(20240611)


def distributions():
    """scipy.stats / scipy.special values for stats.rs."""
    out = {}
    xs = [-38.0, -12.0, -5.0, -1.96, -0.3, 0.0, 0.7, 1.5, 3.0, 8.0, 30.0]
    out["norm"] = [
        {"x": x, "cdf": st.norm.cdf(x), "sf": st.norm.sf(x)} for x in xs
    ]  # scipy.stats.norm
    ps = [1e-300, 1e-30, 1e-10, 1e-4, 0.01, 0.025, 0.2, 0.5, 0.6, 0.975, 0.999, 1 - 1e-12]
    out["norm_ppf"] = [{"p": p, "x": st.norm.ppf(p)} for p in ps]  # scipy.stats.norm.ppf
    t_cases = []
    for df in [1.0, 2.0, 3.5, 10.0, 29.0, 250.0, 1e5]:
        for x in [-40.0, -3.0, -1.0, 0.0, 0.25, 2.0, 6.0]:
            t_cases.append({"x": x, "df": df, "cdf": st.t.cdf(x, df), "sf": st.t.sf(x, df)})
    out["t"] = t_cases  # scipy.stats.t
    out["t_ppf"] = [
        {"p": p, "df": df, "x": st.t.ppf(p, df)}
        for df in [1.0, 2.0, 7.0, 49.0, 1000.0]
        for p in [1e-8, 0.005, 0.025, 0.3, 0.975, 0.9999]
    ]  # scipy.stats.t.ppf
    out["chi2"] = [
        {"x": x, "df": df, "sf": st.chi2.sf(x, df)}
        for df in [1, 2, 5, 30, 400]
        for x in [0.001, 0.5, 3.84, 20.0, 150.0, 900.0]
    ]  # scipy.stats.chi2.sf
    out["f"] = [
        {"x": x, "d1": d1, "d2": d2, "sf": st.f.sf(x, d1, d2)}
        for (d1, d2) in [(1, 1), (2, 10), (5, 3.5), (29, 58), (200, 400)]
        for x in [0.01, 0.8, 1.0, 2.5, 12.0]
    ]  # scipy.stats.f.sf
    out["f_ppf"] = [
        {"p": p, "d1": d1, "d2": d2, "x": st.f.ppf(p, d1, d2)}
        for (d1, d2) in [(2, 10), (29, 58), (9, 18)]
        for p in [0.025, 0.5, 0.975]
    ]  # scipy.stats.f.ppf
    binom = []
    for n, p in [(10, 0.5), (37, 0.2), (122, 6 / 7), (1000, 0.01), (100_000, 0.3), (100_000, 0.5)]:
        ks = sorted({0, 1, n // 10, n // 3, n // 2, int(n * p), n - 1, n})
        for k in ks:
            binom.append(
                {
                    "k": k, "n": n, "p": p,
                    "pmf": st.binom.pmf(k, n, p),
                    "cdf": st.binom.cdf(k, n, p),
                    "sf": st.binom.sf(k, n, p),
                }
            )
    out["binom"] = binom  # scipy.stats.binom
    out["betainc"] = [
        {"a": a, "b": b, "x": x, "value": sp.betainc(a, b, x)}
        for (a, b) in [(0.5, 0.5), (1, 1), (2, 3), (0.5, 14.5), (50, 70), (3000, 7000)]
        for x in [1e-6, 0.1, 0.3, 0.5, 0.9, 0.999999]
    ]  # scipy.special.betainc
    out["gammainc"] = [
        {"a": a, "x": x, "p": sp.gammainc(a, x), "q": sp.gammaincc(a, x)}
        for a in [0.5, 1.0, 2.5, 10.0, 150.0]
        for x in [1e-5, 0.5, 2.0, 9.0, 160.0, 600.0]
    ]  # scipy.special.gammainc / gammaincc
    out["gammaln"] = [
        {"x": x, "value": sp.gammaln(x)} for x in [1e-8, 0.1, 0.5, 1.5, 3.0, 7.25, 100.5, 1e5, 1e7]
    ]  # scipy.special.gammaln
    x = np.round(rng.normal(size=40), 1)
    out["rank"] = {"x": x.tolist(), "ranks": st.rankdata(x, method="average").tolist()}  # scipy.stats.rankdata
    return out


def pairs_binary(n, p_t, p_c, rho_seed):
    """1:1 binary pairs sharing a pair-level frailty."""
    u = rng.normal(size=n)
    t = (rng.random(n) < 1 / (1 + np.exp(-(np.log(p_t / (1 - p_t)) + u)))).astype(float)
    c = (rng.random(n) < 1 / (1 + np.exp(-(np.log(p_c / (1 - p_c)) + u)))).astype(float)
    return t, c


def binary_case(t, c, level):
    a = int(np.sum((t == 1) & (c == 1)))
    b = int(np.sum((t == 1) & (c == 0)))
    cc = int(np.sum((t == 0) & (c == 1)))
    d = int(np.sum((t == 0) & (c == 0)))
    n = len(t)
    table = [[a, b], [cc, d]]
    ex = mcnemar(table, exact=True)  # statsmodels mcnemar, exact binomial
    co = mcnemar(table, exact=False, correction=True)  # statsmodels mcnemar, corrected chi-square
    z = st.norm.ppf(1 - (1 - level) / 2)
    rd = (b - cc) / n
    # Paired Wald interval, Agresti (2013) Categorical Data Analysis ch. 11:
    # SE = sqrt((b + c) - (b - c)^2 / n) / n; written out here, not from a library.
    se = np.sqrt((b + cc) - (b - cc) ** 2 / n) / n
    rr = (a + b) / (a + cc)
    se_log = np.sqrt((b + cc) / ((a + b) * (a + cc)))  # delta method, same source
    return {
        "treated": t.tolist(), "control": c.tolist(), "level": level,
        "counts": [a, b, cc, d],
        "estimate": rd, "ci_low": rd - z * se, "ci_high": rd + z * se,
        "mcnemar_exact_p": float(ex.pvalue), "mcnemar_exact_stat": float(ex.statistic),
        "mcnemar_corrected_p": float(co.pvalue), "mcnemar_corrected_stat": float(co.statistic),
        "rr": rr, "rr_low": rr * np.exp(-z * se_log), "rr_high": rr * np.exp(z * se_log),
    }


def continuous_case(t, c, level, method):
    d = t - c
    w = st.wilcoxon(t, c, zero_method="wilcox", correction=False, method=method)  # scipy.stats.wilcoxon
    tt = st.ttest_rel(t, c)  # scipy.stats.ttest_rel
    ci = tt.confidence_interval(confidence_level=level)
    a = np.var(t, ddof=1)
    b = np.var(c, ddof=1)
    return {
        "treated": t.tolist(), "control": c.tolist(), "level": level, "wilcoxon_method": method,
        "estimate": float(np.mean(d)), "ci_low": float(ci.low), "ci_high": float(ci.high),
        "t_stat": float(tt.statistic), "t_p": float(tt.pvalue),
        "wilcoxon_stat": float(w.statistic), "wilcoxon_p": float(w.pvalue),
        "outcome_sd": float(np.sqrt((a + b) / 2)),
    }


def effects():
    out = {}
    t, c = pairs_binary(300, 0.25, 0.35, 1)
    out["binary_pairs"] = binary_case(t, c, 0.95)
    t, c = pairs_binary(40, 0.3, 0.3, 2)
    out["binary_pairs_small"] = binary_case(t, c, 0.90)

    # Continuous pairs, no ties or zeros: scipy wilcoxon method='exact'.
    base = rng.normal(5, 2, size=30)
    t = base + rng.normal(0.8, 1.5, size=30)
    c = base + rng.normal(0, 1.5, size=30)
    out["continuous_exact"] = continuous_case(t, c, 0.95, "exact")
    # Small sample with zero differences (dropped first) and no ties among
    # the rest: scipy drops the zeros and uses the exact distribution.
    t = rng.normal(4, 2, size=24)
    c = t - rng.normal(0.6, 1.2, size=24)
    c[[3, 11, 17]] = t[[3, 11, 17]]
    out["continuous_zeros_exact"] = continuous_case(t, c, 0.90, "exact")
    # Larger sample rounded to whole days: ties and zeros, method='asymptotic'.
    base = rng.gamma(3, 2, size=150)
    t = np.round(base + rng.normal(-0.5, 2.0, size=150))
    c = np.round(base + rng.normal(0, 2.0, size=150))
    out["continuous_ties"] = continuous_case(t, c, 0.95, "asymptotic")

    # 1:3 matched sets: estimate and signed-rank by numpy/scipy; the interval
    # against scipy.stats.bootstrap (percentile) with its own generator, so
    # only agreement to Monte Carlo error is expected.
    k = 3
    base = rng.normal(7, 3, size=120)
    tr = base + 1.0 + rng.normal(0, 2, size=120)
    ctl = base[:, None] + rng.normal(0, 2, size=(120, k))
    sd = tr - ctl.mean(axis=1)
    bs = st.bootstrap((sd,), np.mean, confidence_level=0.95, n_resamples=20000,
                      method="percentile", rng=np.random.default_rng(7))
    w = st.wilcoxon(sd, zero_method="wilcox", correction=False, method="asymptotic")
    out["sets_continuous"] = {
        "treated": tr.tolist(), "controls": ctl.tolist(),
        "estimate": float(sd.mean()),
        "boot_low": float(bs.confidence_interval.low), "boot_high": float(bs.confidence_interval.high),
        "boot_se": float(bs.standard_error),
        "wilcoxon_p": float(w.pvalue),
    }

    # Unmatched continuous: scipy.stats.ttest_ind(equal_var=False) (Welch).
    y1 = rng.normal(6, 3, size=90)
    y0 = rng.normal(7, 2, size=160)
    w = st.ttest_ind(y1, y0, equal_var=False)
    ci = w.confidence_interval(confidence_level=0.95)
    out["unmatched_continuous"] = {
        "treated": y1.tolist(), "control": y0.tolist(),
        "estimate": float(y1.mean() - y0.mean()), "ci_low": float(ci.low), "ci_high": float(ci.high),
        "p": float(w.pvalue), "t": float(w.statistic),
    }
    # Unmatched binary: statsmodels confint_proportions_2indep (method='wald',
    # compare='diff'); scipy.stats.chi2_contingency(correction=False);
    # statsmodels Table2x2 risk ratio and its log-scale interval.
    b1 = (rng.random(180) < 0.22).astype(float)
    b0 = (rng.random(420) < 0.31).astype(float)
    e1, e0 = int(b1.sum()), int(b0.sum())
    lo, hi = confint_proportions_2indep(e1, 180, e0, 420, method="wald", compare="diff", alpha=0.05)
    chi = st.chi2_contingency([[e1, 180 - e1], [e0, 420 - e0]], correction=False)
    t22 = Table2x2(np.array([[e1, 180 - e1], [e0, 420 - e0]]))
    rlo, rhi = t22.riskratio_confint(alpha=0.05)
    out["unmatched_binary"] = {
        "treated": b1.tolist(), "control": b0.tolist(),
        "estimate": e1 / 180 - e0 / 420, "ci_low": float(lo), "ci_high": float(hi),
        "chi2": float(chi.statistic), "p": float(chi.pvalue),
        "rr": float(t22.riskratio), "rr_low": float(rlo), "rr_high": float(rhi),
    }
    return out


def mcnemar_bound(b, c, gammas):
    """Upper bound of Rosenbaum (2002, ch. 4) for McNemar: scipy.stats.binom.sf."""
    t, d = max(b, c), b + c
    return [float(st.binom.sf(t - 1, d, g / (1 + g))) for g in gammas]


def signed_rank_bound(d, gammas):
    """Normal approximation of Rosenbaum (2002, ch. 4) for the signed-rank
    statistic, written here in numpy independently of the Rust code: drop
    zeros, average ranks of |d| (scipy.stats.rankdata), T = rank sum in the
    observed direction, mean p+ sum q, variance p+(1-p+) sum q^2."""
    d = np.asarray(d, dtype=float)
    d = d[d != 0]
    q = st.rankdata(np.abs(d), method="average")
    rp = q[d > 0].sum()
    rm = q[d < 0].sum()
    t = max(rp, rm)
    out = []
    for g in gammas:
        p = g / (1 + g)
        mu = p * q.sum()
        sd = np.sqrt(p * (1 - p) * np.sum(q ** 2))
        out.append(float(st.norm.sf((t - mu) / sd)))
    return out


def signed_rank_bound_no_ties(d, gammas):
    """Same bound using Rosenbaum's closed forms for untied ranks:
    mean p+ S(S+1)/2, variance p+(1-p+) S(S+1)(2S+1)/6."""
    d = np.asarray(d, dtype=float)
    d = d[d != 0]
    s = len(d)
    q = st.rankdata(np.abs(d))
    t = max(q[d > 0].sum(), q[d < 0].sum())
    res = []
    for g in gammas:
        p = g / (1 + g)
        mu = p * s * (s + 1) / 2
        var = p * (1 - p) * s * (s + 1) * (2 * s + 1) / 6
        res.append(float(st.norm.sf((t - mu) / np.sqrt(var))))
    return res


def sensitivity(eff):
    gammas = [1.0, 1.25, 1.5, 2.0, 3.0, 4.0]
    out = {"gammas": gammas}
    a, b, c, d = eff["binary_pairs"]["counts"]
    out["mcnemar"] = {"b": b, "c": c, "p_upper": mcnemar_bound(b, c, gammas)}
    # Critical Gamma by scipy.optimize.brentq on the binomial bound.
    f = lambda g: st.binom.sf(max(b, c) - 1, b + c, g / (1 + g)) - 0.05
    out["mcnemar"]["gamma_critical"] = (
        float(scipy.optimize.brentq(f, 1.0, 50.0)) if f(1.0) < 0 else 1.0
    )
    # Larger binary example with a clear effect, several Gamma (scipy binom tails).
    out["mcnemar_strong"] = {"b": 110, "c": 12, "p_upper": mcnemar_bound(110, 12, gammas + [5.0, 6.0])}
    ce = eff["continuous_exact"]
    dd = np.array(ce["treated"]) - np.array(ce["control"])
    out["signed_rank_no_ties"] = {
        "d": dd.tolist(), "p_upper": signed_rank_bound_no_ties(dd, gammas),
        # At Gamma = 1 the bound equals scipy's one-sided asymptotic signed-rank p.
        "scipy_one_sided": float(st.wilcoxon(dd, alternative="greater" if dd.sum() > 0 else "less",
                                             zero_method="wilcox", correction=False,
                                             method="asymptotic").pvalue),
    }
    ct = eff["continuous_ties"]
    dd = np.array(ct["treated"]) - np.array(ct["control"])
    alt = "greater" if np.sum(np.sign(dd) * st.rankdata(np.abs(dd))) > 0 else "less"
    out["signed_rank_ties"] = {
        "d": dd.tolist(), "p_upper": signed_rank_bound(dd, gammas),
        "scipy_one_sided": float(st.wilcoxon(dd, alternative=alt, zero_method="wilcox",
                                             correction=False, method="asymptotic").pvalue),
    }
    # E-value by the formula of VanderWeele & Ding (2017): RR + sqrt(RR(RR-1)).
    ev = lambda r: (1 / r if r < 1 else r) + np.sqrt((1 / r if r < 1 else r) * ((1 / r if r < 1 else r) - 1))
    out["evalue"] = [{"rr": r, "e": float(ev(r))} for r in [1.0, 1.1, 1.5, 2.0, 3.9, 0.8, 0.25]]
    return out


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", default="target/reference")
    args = ap.parse_args()
    eff = effects()
    doc = {
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__, "statsmodels": statsmodels.__version__},
        "distributions": distributions(),
        "effect": eff,
        "sensitivity": sensitivity(eff),
    }
    out = pathlib.Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    (out / "effect.json").write_text(json.dumps(doc, default=float))
    print(f"wrote {out / 'effect.json'}")


if __name__ == "__main__":
    main()
