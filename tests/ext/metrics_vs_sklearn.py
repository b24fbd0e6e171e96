"""metrics_vs_sklearn.py -- vecsift's pooled scores against scikit-learn.

Generates seeded, invented out-of-fold style predictions for 5 labels with
probabilities (numpy), writes them as CSV, runs tests/tools/metrics_dump
($BUILDDIR/tests/metrics_dump) and compares with scikit-learn (Debian's
python3-sklearn): precision_recall_fscore_support, f1_score (macro,
weighted), confusion_matrix, accuracy_score, log_loss (eps=1e-15 passed
explicitly, see metrics.h) and the multiclass Brier score computed from its
formula with numpy.  Per-fold mean and sample sd (ddof=1) of the same scores
are checked against scikit-learn's per-fold values.  The confidence cut-off table is checked against a plain
numpy computation of the same definition.  Every value must agree within 1e-12.
Ends with "N passed, N failed".
"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from sklearn.metrics import (accuracy_score, confusion_matrix, f1_score,
                             log_loss, precision_recall_fscore_support)

TOL = 1e-12
K = 5
passed = failed = 0
maxdiff = 0.0


def check(name, got, want):
    global passed, failed, maxdiff
    got = np.asarray(got, dtype=float)
    want = np.asarray(want, dtype=float)
    d = float(np.max(np.abs(got - want))) if got.size else 0.0
    ok = got.shape == want.shape and d <= TOL
    maxdiff = max(maxdiff, d if got.shape == want.shape else np.inf)
    if ok:
        passed += 1
    else:
        failed += 1
        print(f"FAIL {name}: got {got.tolist()} want {want.tolist()} (diff {d:g})")


def make_case(seed, n, never_predicted=None, hard_zero=False):
    """Invented predictions: gold labels skewed, probabilities from a noisy
    softmax that favours the gold label; 'predicted' is the argmax except that
    a label in never_predicted is replaced by the runner-up."""
    rng = np.random.default_rng(seed)
    gold = rng.choice(K, size=n, p=[0.35, 0.25, 0.2, 0.15, 0.05])
    logits = rng.normal(0, 1.2, size=(n, K))
    logits[np.arange(n), gold] += 1.5
    p = np.exp(logits)
    p /= p.sum(axis=1, keepdims=True)
    if never_predicted is not None:
        # Move the never-predicted label's mass below the best other label.
        j = never_predicted
        other = np.delete(np.arange(K), j)
        best_other = p[:, other].max(axis=1)
        p[:, j] = np.minimum(p[:, j], 0.5 * best_other)
        p /= p.sum(axis=1, keepdims=True)
    if hard_zero:
        p[:3, :] = 0.0
        p[0, (gold[0] + 1) % K] = 1.0    # gold gets probability 0: clipping matters
        p[1, gold[1]] = 1.0              # a certain, right row
        p[2, :] = 1.0 / K
    pred = p.argmax(axis=1)
    return gold, pred, p


def run_case(name, gold, pred, p):
    with tempfile.NamedTemporaryFile("w", suffix=".csv", delete=False) as f:
        for g, q, row in zip(gold, pred, p):
            f.write(f"{g},{q}," + ",".join(repr(float(x)) for x in row) + "\n")
        path = f.name
    tool = os.path.join(os.environ.get("BUILDDIR", "build"), "tests", "metrics_dump")
    out = subprocess.run([tool, str(K), path], check=True, capture_output=True, text=True).stdout
    os.unlink(path)
    got = json.loads(out)
    labels = list(range(K))
    pr, rc, f1, sup = precision_recall_fscore_support(
        gold, pred, labels=labels, zero_division=0)
    lab = got["labels"]
    check(f"{name} precision", [x["precision"] for x in lab], pr)
    check(f"{name} recall", [x["recall"] for x in lab], rc)
    check(f"{name} f1", [x["f1"] for x in lab], f1)
    check(f"{name} support", [x["support"] for x in lab], sup)
    check(f"{name} macro_f1", got["macro_f1"],
          f1_score(gold, pred, labels=labels, average="macro", zero_division=0))
    check(f"{name} weighted_f1", got["weighted_f1"],
          f1_score(gold, pred, labels=labels, average="weighted", zero_division=0))
    check(f"{name} accuracy", got["accuracy"], accuracy_score(gold, pred))
    check(f"{name} confusion", np.reshape(got["confusion"], (K, K)),
          confusion_matrix(gold, pred, labels=labels))
    check(f"{name} log_loss", got["log_loss"], log_loss(gold, p, labels=labels, eps=1e-15))
    onehot = np.eye(K)[gold]
    check(f"{name} brier", got["brier"], np.mean(np.sum((p - onehot) ** 2, axis=1)))
    # Cut-off table: definition in metrics.h, computed independently here.
    conf = p.max(axis=1)
    right = gold == pred
    ts = np.unique(conf)[::-1]
    want = [[t, right[conf >= t].mean(), (conf >= t).mean()] for t in ts]
    check(f"{name} cutoffs", got["cutoffs"], want)
    reach = [i for i, w in enumerate(want) if w[1] >= 0.9]
    check(f"{name} cutoff_for_0.9", got["cutoff_for_0.9"], reach[-1] if reach else -1)
    return lab


run_case("random-400", *make_case(1, 400))
g, q, p = make_case(2, 300, never_predicted=3)
assert not np.any(q == 3)
lab = run_case("never-predicted", g, q, p)
check("never-predicted label has precision 0 (zero_division=0)", lab[3]["precision"], 0.0)
run_case("zero-probabilities", *make_case(3, 120, hard_zero=True))



def run_folds(name, gold, pred, p, k):
    """Rows dealt to k folds at random; compare mean and sd over folds."""
    fold = np.random.default_rng(99).integers(0, k, len(gold))
    with tempfile.NamedTemporaryFile("w", suffix=".csv", delete=False) as f:
        for q, g, r, row in zip(fold, gold, pred, p):
            f.write(f"{q},{g},{r}," + ",".join(repr(float(x)) for x in row) + "\n")
        path = f.name
    tool = os.path.join(os.environ.get("BUILDDIR", "build"), "tests", "metrics_dump")
    out = subprocess.run([tool, str(K), path, "folds"], check=True, capture_output=True, text=True).stdout
    os.unlink(path)
    got = json.loads(out)["per_fold"]
    labels = list(range(K))
    per = {"accuracy": [], "macro_f1": [], "weighted_f1": [], "log_loss": [], "brier": []}
    f1s = []
    for q in range(k):
        s = fold == q
        g, r, pp = gold[s], pred[s], p[s]
        per["accuracy"].append(accuracy_score(g, r))
        per["macro_f1"].append(f1_score(g, r, labels=labels, average="macro", zero_division=0))
        per["weighted_f1"].append(f1_score(g, r, labels=labels, average="weighted", zero_division=0))
        per["log_loss"].append(log_loss(g, pp, labels=labels, eps=1e-15))
        per["brier"].append(np.mean(np.sum((pp - np.eye(K)[g]) ** 2, axis=1)))
        f1s.append(precision_recall_fscore_support(g, r, labels=labels, zero_division=0)[2])
    for key, vals in per.items():
        check(f"{name} per-fold {key}", got[key], [np.mean(vals), np.std(vals, ddof=1)])
    f1s = np.array(f1s)
    check(f"{name} per-fold label f1", got["f1"],
          np.stack([f1s.mean(axis=0), f1s.std(axis=0, ddof=1)], axis=1))


run_folds("folds-5", *make_case(4, 250, never_predicted=4), 5)

print(f"max abs difference against scikit-learn/numpy: {maxdiff:.3g}")
print(f"{passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
