"""Speed of pairsight's engine against the reference libraries, measured in
one run on the same problems.

Writes the problems (raw little-endian float64) to target/bench-problems,
times scipy.optimize.linear_sum_assignment (dense n x n, n = 500, 1000,
2000; uniform costs and Euclidean distances between 5-dimensional points)
and statsmodels Logit (100,000 x 30, Newton), runs the criterion benches of
pairsight-core on the same files, and prints each ratio (pairsight time /
reference time; at most 1.0 is the target) plus greedy matching of
1,000,000 rows against its 1 s target.

Usage: python tests/bench/engine.py [--skip-cargo] [--repeats 5]
"""

import argparse
import json
import os
import pathlib
import platform
import subprocess
import time

import numpy as np
import scipy
import statsmodels
import statsmodels.api as sm
from scipy.optimize import linear_sum_assignment

ROOT = pathlib.Path(__file__).resolve().parents[2]
PROBLEMS = ROOT / "target" / "bench-problems"
SIZES = (500, 1000, 2000)


def write(name, arr):
    np.ascontiguousarray(arr, dtype="<f8").tofile(PROBLEMS / f"{name}.f64")


def make_problems():
    rng = np.random.default_rng(424242)
    PROBLEMS.mkdir(parents=True, exist_ok=True)
    dense = {}
    for n in SIZES:
        dense[("uniform", n)] = rng.random((n, n))
        p = rng.normal(size=(n, 5))
        q = rng.normal(size=(n, 5))
        dense[("points", n)] = np.sqrt(((p[:, None, :] - q[None, :, :]) ** 2).sum(-1))
    for (kind, n), c in dense.items():
        write(f"lap_{kind}_{n}", c)
    n, p = 100_000, 30
    x = rng.normal(size=(n, p))
    beta = rng.normal(size=p) * 0.15
    y = (rng.random(n) < 1 / (1 + np.exp(-(x @ beta - 0.5)))).astype(float)
    write("logit_x", x)
    write("logit_y", y)
    m = 1_000_000
    write("greedy_logit", rng.normal(size=m))
    write("greedy_treated", (rng.random(m) < 0.3).astype(float))
    return dense, x, y


def median_time(fn, repeats):
    ts = []
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        ts.append(time.perf_counter() - t)
    return float(np.median(ts))


def criterion_median(group, bench):
    path = ROOT / "target" / "criterion" / group / bench / "new" / "estimates.json"
    est = json.loads(path.read_text())
    return est["median"]["point_estimate"] / 1e9


def main():
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--skip-cargo", action="store_true", help="use the last criterion results")
    ap.add_argument("--repeats", type=int, default=5)
    args = ap.parse_args()

    dense, x, y = make_problems()
    ref = {}
    for (kind, n), c in dense.items():
        ref[("optimal_dense", f"{kind}_{n}")] = median_time(lambda: linear_sum_assignment(c), args.repeats)
    xc = sm.add_constant(x)
    ref[("logistic", "100000x30")] = median_time(
        lambda: sm.Logit(y, xc).fit(method="newton", disp=0), max(2, args.repeats // 2)
    )

    if not args.skip_cargo:
        env = dict(os.environ, PAIRSIGHT_BENCH_PROBLEMS=str(PROBLEMS))
        subprocess.run(
            [
                "cargo", "bench", "-p", "pairsight-core", "--bench", "matching", "--bench", "score",
                "--", "--warm-up-time", "1", "--measurement-time", "4",
            ],
            cwd=ROOT, env=env, check=True,
        )

    print()
    print(f"machine: {platform.machine()} {platform.processor() or ''} {os.cpu_count()} logical cores, {platform.system()} {platform.release()}")
    print(f"numpy {np.__version__}, scipy {scipy.__version__}, statsmodels {statsmodels.__version__}")
    print(f"{'problem':<34}{'pairsight (s)':>14}{'reference (s)':>15}{'ratio':>8}")
    ok = True
    for (group, bench), r in ref.items():
        ours = criterion_median(group, bench)
        ratio = ours / r
        ok &= ratio <= 1.0
        print(f"{group + '/' + bench:<34}{ours:>14.4f}{r:>15.4f}{ratio:>8.2f}")
    g = criterion_median("greedy", "score_1000000")
    ok &= g < 1.0
    print(f"{'greedy/score_1000000':<34}{g:>14.4f}{'(target 1 s)':>15}")
    print("all targets met" if ok else "SOME TARGETS MISSED")


if __name__ == "__main__":
    main()
