"""Note features: pairsight against scikit-learn on the same corpus, in one run.

Runs the criterion bench `notes` of pairsight-core (which generates 20,000
invented notes of about 200 words with the core's seeded generator, writes
them to target/bench/notes-corpus.txt and times `analyze` with six concepts
and 50 latent dimensions), then times scikit-learn's TfidfVectorizer (default
settings) plus TruncatedSVD(n_components=50, algorithm="randomized",
random_state=0, its default 5 power iterations) on the very same file, and
reports the ratio. Writes target/bench/notes.json.

    /work/venv-ref/bin/python tests/bench/notes.py [--skip-cargo] [--repeat 3]
"""

import argparse
import json
import os
import subprocess
import sys
import time

from sklearn.decomposition import TruncatedSVD
from sklearn.feature_extraction.text import TfidfVectorizer

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), "..", ".."))


def run_cargo():
    cmd = ["cargo", "bench", "-p", "pairsight-core", "--bench", "notes"]
    print("$", " ".join(cmd), flush=True)
    subprocess.run(cmd, cwd=ROOT, check=True)


def criterion_seconds():
    path = os.path.join(ROOT, "target", "criterion", "notes", "analyze_50_latent", "new", "estimates.json")
    with open(path) as f:
        est = json.load(f)
    return est["mean"]["point_estimate"] / 1e9, est["median"]["point_estimate"] / 1e9


def sklearn_once(notes):
    t0 = time.perf_counter()
    x = TfidfVectorizer().fit_transform(notes)
    t1 = time.perf_counter()
    z = TruncatedSVD(n_components=50, algorithm="randomized", random_state=0).fit_transform(x)
    t2 = time.perf_counter()
    assert z.shape == (len(notes), 50)
    return t1 - t0, t2 - t1


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--skip-cargo", action="store_true", help="reuse the last criterion result and corpus")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    if not args.skip_cargo:
        run_cargo()
    corpus = os.path.join(ROOT, "target", "bench", "notes-corpus.txt")
    with open(corpus, encoding="utf-8") as f:
        notes = f.read().splitlines()
    runs = [sklearn_once(notes) for _ in range(args.repeat)]
    tfidf = min(r[0] for r in runs)
    svd = min(r[1] for r in runs)
    best = min(r[0] + r[1] for r in runs)
    mean, median = criterion_seconds()
    out = {
        "notes": len(notes),
        "words": sum(len(n.split()) for n in notes),
        "pairsight_seconds_mean": mean,
        "pairsight_seconds_median": median,
        "sklearn_tfidf_seconds_best": tfidf,
        "sklearn_svd_seconds_best": svd,
        "sklearn_total_seconds_best": best,
        "ratio_sklearn_over_pairsight": best / median,
        "load_average": os.getloadavg(),
    }
    os.makedirs(os.path.join(ROOT, "target", "bench"), exist_ok=True)
    with open(os.path.join(ROOT, "target", "bench", "notes.json"), "w") as f:
        json.dump(out, f, indent=2)
    print(json.dumps(out, indent=2))
    if out["ratio_sklearn_over_pairsight"] < 5:
        print("below the 5x target", file=sys.stderr)


if __name__ == "__main__":
    main()
