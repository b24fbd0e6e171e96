#!/usr/bin/python3
"""tsne_bench.py -- Barnes-Hut t-SNE on a few thousand points: map quality and
time against scikit-learn, measured in the same run.  Run on demand (it takes
minutes on a shared machine), not part of `meson test`:

    BUILDDIR=build /usr/bin/python3 tests/bench/tsne_bench.py

Reference: scikit-learn (Debian python3-sklearn) sklearn.manifold.TSNE with
method='barnes_hut', perplexity 30, init='pca', 1000 iterations, and
sklearn.manifold.trustworthiness with 10 neighbours (Venna and Kaski 2001).
Data: sklearn.datasets.make_blobs, 3000 points in 50 dimensions (seeded), and
the whole load_digits set (1797 points, 64 dimensions) with Barnes-Hut forced.

Quality rule (from the task): our trustworthiness >= 0.9 and >= scikit-learn's
minus 0.02.  Speed is only printed, as the ratio of our wall time to
scikit-learn's (both single-threaded here); it is not a pass/fail check.
Ends with "N passed, N failed".
"""
import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402
from sklearn.datasets import load_digits, make_blobs  # noqa: E402
from sklearn.manifold import TSNE, trustworthiness  # noqa: E402

TOOL = os.path.join(os.environ.get("BUILDDIR", "build"), "tests", "tsne_run")


def main():
    passed = failed = 0
    blobs, _ = make_blobs(n_samples=3000, n_features=50, centers=10, cluster_std=6.0,
                          random_state=1)
    cases = [("blobs-3000", blobs), ("digits-1797", load_digits().data)]
    with tempfile.TemporaryDirectory() as tmp:
        for name, X in cases:
            src, out = os.path.join(tmp, "in.csv"), os.path.join(tmp, "out.csv")
            np.savetxt(src, X, delimiter=",", fmt="%.17g")
            t0 = time.perf_counter()
            r = subprocess.run([TOOL, "--method", "bh", "--perplexity", "30", "--seed", "1",
                                "--init", "pca", src, out], capture_output=True, text=True)
            t_ours = time.perf_counter() - t0
            if r.returncode != 0:
                print(f"FAIL {name}: tsne_run: {r.stderr.strip()}")
                failed += 1
                continue
            tw_ours = trustworthiness(X, np.loadtxt(out, delimiter=","), n_neighbors=10)
            t0 = time.perf_counter()
            Z = TSNE(n_components=2, perplexity=30.0, init="pca", learning_rate="auto",
                     n_iter=1000, random_state=0, method="barnes_hut").fit_transform(X)
            t_sk = time.perf_counter() - t0
            tw_sk = trustworthiness(X, Z, n_neighbors=10)
            print(f"{name}: n={X.shape[0]} d={X.shape[1]} trustworthiness ours={tw_ours:.4f} "
                  f"sklearn={tw_sk:.4f}; seconds ours={t_ours:.1f} sklearn={t_sk:.1f} "
                  f"ratio ours/sklearn={t_ours / t_sk:.2f}")
            ok = tw_ours >= 0.9 and tw_ours >= tw_sk - 0.02
            print(f"{'ok  ' if ok else 'FAIL'} {name}: quality rule")
            passed += ok
            failed += not ok
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
