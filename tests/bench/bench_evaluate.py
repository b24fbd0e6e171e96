#!/usr/bin/python3
"""bench_evaluate.py -- on-demand benchmark (not part of meson test): the
wall time of `vecsift evaluate` (5 folds x 3 repeats, logistic regression,
mean-pooled 300-dimensional vectors, standardised) on the invented demo inbox,
against scikit-learn's cross_validate of the same pipeline
(StandardScaler then LogisticRegression(C=1, lbfgs, multinomial, tol 1e-6)) on
the same features with the same 15 folds, both measured in this run and
printed as a ratio.

Vectors: seeded random 300-d vectors (standard normal, invented) for every
word of the demo inbox's vocabulary as vecsift tokenises it (the unigram
columns of `vecsift features --pool bow --term-names`).
Features for scikit-learn: `vecsift features --pool mean --no-scale` (mean
pooling has no fitted state, so exporting it once is the same as pooling in
each fold; the scaler is fitted per fold inside scikit-learn's pipeline).
Folds: read from the --predictions file's repeat and fold columns.
scikit-learn is timed without the feature export and without reading text,
which favours it; vecsift is timed as a whole command (reading the CSV,
tokenising, pooling and writing nothing but the terminal summary).

usage: BUILDDIR=build /usr/bin/python3 tests/bench/bench_evaluate.py
"""
import csv
import os
import re
import resource
import subprocess
import sys
import tempfile
import time

import numpy as np
import sklearn
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import cross_validate
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

BUILD = os.environ.get("BUILDDIR", "build")
VECSIFT = os.path.join(BUILD, "vecsift")
DATA = "datasets/inbox/labelled.csv"
COLS = ["--text-col", "subject", "--text-col", "body", "--label-col", "queue"]
REPS = int(os.environ.get("BENCH_REPS", "3"))
tmp = tempfile.mkdtemp(prefix="vecsift-bench-")


def out(name):
    return os.path.join(tmp, name)


def run(args):
    return subprocess.run([VECSIFT] + args, check=True, capture_output=True, text=True)


# vocabulary and vectors
run(["features", DATA] + COLS + ["--pool", "bow", "--term-names", "-o", out("terms.csv"), "--quiet"])
with open(out("terms.csv"), newline="", encoding="utf-8") as f:
    head = next(csv.reader(f))
words = [w for w in head[2:] if " " not in w]
rng = np.random.default_rng(2026)
with open(out("v.txt"), "w", encoding="utf-8") as f:
    f.write(f"{len(words)} 300\n")
    for w in words:
        f.write(w + " " + " ".join("%.6f" % x for x in rng.normal(0, 1, 300)) + "\n")
run(["vectors", "pack", out("v.txt"), "-o", out("v.vecs"), "--quiet"])

ev = COLS + ["--vectors", out("v.vecs"), "--pool", "mean", "--classifier", "logreg", "--folds", "5",
             "--repeats", "3", "--seed", "1"]
run(["evaluate", DATA] + ev + ["--quiet", "--json", out("ev.json"), "--predictions", out("oof.csv")])
run(["features", DATA] + COLS + ["--vectors", out("v.vecs"), "--pool", "mean", "--no-scale",
                                 "-o", out("feat.csv"), "--quiet"])
X = np.loadtxt(out("feat.csv"), delimiter=",", skiprows=1, usecols=range(2, 302))
with open(out("feat.csv"), newline="", encoding="utf-8") as f:
    r = csv.reader(f)
    next(r)
    y_names = [row[1] for row in r]
labels = sorted(set(y_names))
y = np.array([labels.index(s) for s in y_names])
N = len(y)
with open(out("oof.csv"), newline="", encoding="utf-8") as f:
    rows = list(csv.DictReader(f))
splits = []
for rep in (1, 2, 3):
    fold = np.zeros(N, dtype=int)
    for row in rows:
        if int(row["repeat"]) == rep:
            fold[int(row["row"]) - 1] = int(row["fold"])
    for k in range(1, 6):
        splits.append((np.where(fold != k)[0], np.where(fold == k)[0]))


def child_cpu():
    u = resource.getrusage(resource.RUSAGE_CHILDREN)
    return u.ru_utime + u.ru_stime


def time_vecsift(threads):
    """Best wall time of the whole command, of its cross-validation, and the
    best CPU time (user + system) over REPS runs."""
    best = cv_sec = cpu = np.inf
    for _ in range(REPS):
        c0 = child_cpu()
        t0 = time.perf_counter()
        p = run(["evaluate", DATA] + ev + ["--threads", str(threads)])
        best = min(best, time.perf_counter() - t0)
        cpu = min(cpu, child_cpu() - c0)
        m = re.search(r"cross-validation took ([0-9.]+) s", p.stderr)
        cv_sec = min(cv_sec, float(m.group(1)))
    return best, cv_sec, cpu


def time_sklearn(jobs):
    """Best wall time and best CPU time (this process; with one job) over REPS runs."""
    best = cpu = np.inf
    res = None
    for _ in range(REPS):
        pipe = make_pipeline(StandardScaler(),
                             LogisticRegression(C=1.0, solver="lbfgs", tol=1e-6, max_iter=1000))
        c0 = time.process_time()
        t0 = time.perf_counter()
        res = cross_validate(pipe, X, y, cv=splits, n_jobs=jobs, scoring="accuracy")
        best = min(best, time.perf_counter() - t0)
        cpu = min(cpu, time.process_time() - c0)
    return best, cpu, res


ours1, cv1, ocpu = time_vecsift(1)
ours2, cv2, _ = time_vecsift(2)
sk1, skcpu, res = time_sklearn(1)
sk2, _, _ = time_sklearn(2)

# sanity: both fit the same model on the same folds, so fold accuracies agree closely
ours_acc = []
js_rows = {(int(r["repeat"]), int(r["fold"])): [] for r in rows}
for r in rows:
    js_rows[(int(r["repeat"]), int(r["fold"]))].append(r["label"] == r["predicted"])
ours_acc = [np.mean(js_rows[(rep, k)]) for rep in (1, 2, 3) for k in range(1, 6)]
diff = np.max(np.abs(np.array(ours_acc) - res["test_score"]))

print(f"vecsift evaluate vs scikit-learn {sklearn.__version__} cross_validate: {N} rows, 300-d mean-pooled "
      f"random vectors, logreg C=1, 5 folds x 3 repeats (best of {REPS})")
print(f"{'':28s} {'1 core':>10s} {'2 cores':>10s}")
print(f"{'vecsift (whole command) s':28s} {ours1:10.3f} {ours2:10.3f}")
print(f"{'vecsift (cross-validation) s':28s} {cv1:10.3f} {cv2:10.3f}")
print(f"{'scikit-learn s':28s} {sk1:10.3f} {sk2:10.3f}")
print(f"{'ratio sklearn / vecsift':28s} {sk1 / ours1:10.1f} {sk2 / ours2:10.1f}")
print(f"CPU seconds, one core: vecsift {ocpu:.3f}, scikit-learn {skcpu:.3f}, ratio {skcpu / ocpu:.1f} "
      f"(load average now {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores)")
print(f"largest fold accuracy difference: {diff:.4f} (mean accuracy vecsift {np.mean(ours_acc):.4f}, "
      f"scikit-learn {np.mean(res['test_score']):.4f})")
# Two cores as a user has them: each side at its best setting there
# (scikit-learn's n_jobs=2 pays for starting worker processes, so its
# n_jobs=1 run is often the faster one on two cores).
ours_best, sk_best = min(ours1, ours2), min(sk1, sk2)
goal = sk_best / ours_best >= 10 and ours2 < 1.0
print("goal (>= 10x and under 1 s on two cores):", "met" if goal else "NOT met",
      f"on wall time (best of each side's 1- and 2-job runs: {sk_best / ours_best:.1f}x; "
      f"vecsift on 2 threads {ours2:.3f} s)")
# On a shared machine wall times swing with the other jobs, and
# scikit-learn's n_jobs=2 pays for starting worker processes; the one-core
# CPU-second ratio is the steadier figure, so say where it stands too.
print(f"one-core CPU-second ratio {skcpu / ocpu:.1f}x:", ">= 10x" if skcpu / ocpu >= 10 else "below 10x")
