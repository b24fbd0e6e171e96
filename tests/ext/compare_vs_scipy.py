"""compare_vs_scipy.py -- the figures `vecsift compare --json` reports, checked
from outside (Debian's python3-scipy, python3-sklearn, python3-numpy).

On the invented demo inbox (datasets/inbox/labelled.csv), with the bag of
words and two small vector sets made by svdvec.py (PPMI-SVD of the
unlabelled tickets, and random numbers of the same size):

  * t and the one-sided p of every row against the best, recomputed from the
    JSON's per-fold macro-F1 ("fold_macro_f1") with the formula of Nadeau
    and Bengio (2003), "Inference for the Generalization Error", Machine
    Learning 52:239-281 (t = mean(d) / sqrt((1/J + n_test/n_train) var(d)),
    J - 1 degrees of freedom) and scipy.stats.t.sf: equal within 1e-10;
  * the verdict follows p >= 0.05; exactly one row is best and it has the
    highest mean; rows are in descending order of mean macro-F1;
  * macro_f1.mean and .sd are the mean and sample sd (ddof 1) of the per-fold
    scores (numpy), within 1e-12;
  * the folds are the ones evaluate uses: the bow row's per-fold macro-F1
    equals sklearn.metrics.f1_score(average="macro", zero_division=0) over
    each (repeat, fold) of `evaluate --predictions` run with the same seed,
    within 1e-12.

Ends with "N passed, N failed".
"""
import csv
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy import stats
from sklearn.metrics import f1_score

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import svdvec  # noqa: E402

VECSIFT = os.environ.get("VECSIFT", "build/vecsift")
DATA = "datasets/inbox/labelled.csv"
COMMON = ["--text-col", "subject", "--text-col", "body", "--label-col", "queue", "--folds", "4", "--repeats", "2",
          "--seed", "5", "-q"]
passed = failed = 0
worst = {"t": 0.0, "p": 0.0, "mean/sd": 0.0, "fold F1 vs sklearn": 0.0}


def check(kind, name, got, want, tol):
    global passed, failed
    d = abs(got - want)
    worst[kind] = max(worst[kind], d)
    if d <= tol:
        passed += 1
    else:
        failed += 1
        print(f"FAIL {name}: got {got!r} want {want!r} (diff {d:g})")


def truth(name, cond):
    global passed, failed
    if cond:
        passed += 1
    else:
        failed += 1
        print("FAIL", name)


with tempfile.TemporaryDirectory() as tmp:
    texts = svdvec.texts_from_csv("datasets/inbox/unlabelled.csv", ["subject", "body"])
    vocab, vecs = svdvec.ppmi_svd(texts, dim=20)
    vsets = []
    for name, v in [("svd", vecs), ("rand", svdvec.random_like(vocab, 20, 3))]:
        svdvec.write_text(os.path.join(tmp, name + ".txt"), vocab, v)
        vsets += ["--vectors", os.path.join(tmp, name + ".vecs")]
        subprocess.run([VECSIFT, "vectors", "pack", os.path.join(tmp, name + ".txt"), "-o",
                        os.path.join(tmp, name + ".vecs"), "-q"], check=True)
    js = os.path.join(tmp, "c.json")
    subprocess.run([VECSIFT, "compare", DATA, *vsets, "--pool", "mean,sif", "--json", js, *COMMON], check=True,
                   stdout=subprocess.DEVNULL)
    doc = json.load(open(js))
    res = doc["results"]
    te = doc["settings"]["test"]
    nte, ntr = te["n_test"], te["n_train"]
    truth("n_test is rows / folds", abs(nte - 404 / 4) < 1e-12 and abs(ntr - 404 * 3 / 4) < 1e-12)
    truth("five set-ups", len(res) == 5)
    truth("exactly one best, ranked first", [r["best"] for r in res] == [True] + [False] * (len(res) - 1))
    means = [r["macro_f1"]["mean"] for r in res]
    truth("descending macro F1", all(a >= b for a, b in zip(means, means[1:])))
    best = np.array(res[0]["fold_macro_f1"])
    J = len(best)
    truth("J = folds x repeats", J == 8)
    for r in res:
        f = np.array(r["fold_macro_f1"])
        tag = f"{r['vectors']} {r['pool']}"
        check("mean/sd", tag + " mean", r["macro_f1"]["mean"], f.mean(), 1e-12)
        check("mean/sd", tag + " sd", r["macro_f1"]["sd"], f.std(ddof=1), 1e-12)
        if r["best"]:
            truth("best has no p", r["p_vs_best"] is None)
            continue
        d = best - f
        t = d.mean() / np.sqrt((1 / J + nte / ntr) * d.var(ddof=1))
        p = stats.t.sf(t, J - 1)
        check("t", tag + " t", r["t_vs_best"], t, 1e-10)
        check("p", tag + " p", r["p_vs_best"], p, 1e-10)
        truth(tag + " verdict", r["not_significantly_worse"] == (p >= 0.05))

    # The same folds as evaluate: per-fold macro F1 of its out-of-fold rows.
    oof = os.path.join(tmp, "oof.csv")
    subprocess.run([VECSIFT, "evaluate", DATA, "--pool", "bow", "--predictions", oof, *COMMON], check=True,
                   stdout=subprocess.DEVNULL)
    groups = {}
    with open(oof, newline="", encoding="utf-8") as f:
        for row in csv.DictReader(f):
            groups.setdefault((int(row["repeat"]), int(row["fold"])), []).append((row["label"], row["predicted"]))
    ref = [f1_score([a for a, _ in g], [b for _, b in g], average="macro", zero_division=0)
           for _, g in sorted(groups.items())]
    bow = [r for r in res if r["pool"] == "bow"][0]["fold_macro_f1"]
    truth("bow row has one score per fold", len(bow) == len(ref))
    for j, (a, b) in enumerate(zip(bow, ref)):
        check("fold F1 vs sklearn", f"bow fold {j}", a, b, 1e-12)

for k, v in worst.items():
    print(f"largest difference, {k}: {v:.3g}")
print(f"{passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
