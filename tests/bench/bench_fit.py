#!/usr/bin/python3
"""bench_fit.py -- on-demand benchmark (not part of meson test): time of our
logistic regression fit (linear.h through $BUILDDIR/tests/fit_linear) against
scikit-learn's LogisticRegression(multi_class='multinomial', solver='lbfgs')
on the same data, both measured in this run, printed as a ratio.

Data: invented, 400 rows x 300 dense features (standard normal) with 5
classes from a random linear rule plus noise, the size of a small labelled
ticket set pooled from 300-dimensional word vectors.  Prediction speed is
measured on 100,000 rows of the same kind.

usage: BUILDDIR=build /usr/bin/python3 tests/bench/bench_fit.py
"""
import os
import re
import subprocess
import sys
import tempfile
import time

import numpy as np
import sklearn
from sklearn.linear_model import LogisticRegression


def write_csv(path, X, y):
    with open(path, "w") as f:
        f.write("label," + ",".join("x%d" % (j + 1) for j in range(X.shape[1])) + "\n")
        for lab, row in zip(y, X):
            f.write("%d," % lab + ",".join("%.6g" % v for v in row) + "\n")


def ours(tool, path, C, max_iter=1000):
    out = subprocess.run([tool, "--C", repr(C), "--tol", "1e-6", "--max-iter", str(max_iter), path],
                         check=True, capture_output=True, text=True)
    head = dict(l.split(" ", 1) for l in out.stdout.splitlines()[:4])
    pred = float(re.search(r"predict_seconds (\S+)", out.stderr).group(1))
    return float(head["seconds"]), int(head["iterations"]), pred


def main():
    tool = os.path.join(os.environ.get("BUILDDIR", "build"), "tests", "fit_linear")
    rng = np.random.default_rng(1)
    n, d, k, C = 400, 300, 5, 1.0
    A = rng.normal(size=(d, k))
    X = rng.normal(size=(n, d))
    y = np.argmax(X @ A * 0.2 + rng.normal(size=(n, k)), axis=1)
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "fit.csv")
        write_csv(path, X, y)
        runs = [ours(tool, path, C) for _ in range(5)]
        t_ours = min(r[0] for r in runs)
        it_ours = runs[0][1]
        sk = []
        for _ in range(5):
            clf = LogisticRegression(multi_class="multinomial", solver="lbfgs", C=C, tol=1e-6,
                                     max_iter=1000)
            t0 = time.perf_counter()
            clf.fit(X, y)
            sk.append(time.perf_counter() - t0)
        t_sk = min(sk)
        print("fit %d x %d, %d classes, C=%g, tol=1e-6 (best of 5)" % (n, d, k, C))
        print("  ours            %8.2f ms  (%d iterations)" % (1e3 * t_ours, it_ours))
        print("  scikit-learn %s %8.2f ms  (%d iterations)" % (sklearn.__version__, 1e3 * t_sk, clf.n_iter_[0]))
        print("  ratio ours / scikit-learn: %.2f" % (t_ours / t_sk))

        m = 100000
        Xp = rng.normal(size=(m, d))
        yp = rng.integers(0, k, size=m)
        path = os.path.join(tmp, "predict.csv")
        write_csv(path, Xp, yp)
        _, _, t_pred = ours(tool, path, C, max_iter=1)   # model barely fitted: timing only
        t0 = time.perf_counter()
        clf.predict_proba(Xp)
        t_skp = time.perf_counter() - t0
        print("predict %d rows x %d: ours %.0f rows/s, scikit-learn %.0f rows/s, ratio of times %.2f"
              % (m, d, m / t_pred, m / t_skp, t_pred / t_skp))
    return 0


if __name__ == "__main__":
    sys.exit(main())
