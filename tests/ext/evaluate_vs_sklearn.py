"""evaluate_vs_sklearn.py -- `vecsift evaluate` checked from outside.

Runs the command on the invented demo inbox (datasets/inbox/labelled.csv)
and checks what it wrote:

1. Metrics: from the out-of-fold predictions file (--predictions), scikit-learn
   1.2 (Debian's python3-sklearn) precision_recall_fscore_support
   (zero_division=0, the rule metrics.h states), f1_score (macro, weighted),
   confusion_matrix, accuracy_score, log_loss (eps=1e-15 as metrics.h
   documents) and the multiclass Brier score (Brier 1950: mean over rows of
   the sum over labels of (p - onehot)^2, computed with numpy) must equal the
   pooled figures of --json within 1e-12; the per-fold mean and sample sd
   (ddof=1) of the same scores, computed fold by fold with scikit-learn, must
   equal the JSON's per_fold figures.  The cut-off is recomputed from the
   file with numpy (definition in metrics.h).
2. Stratification: in every repeat each row is held out exactly once, and
   every fold's count of each label is within one row of the whole set's
   proportion times the fold size (the promise of stratified k-fold, as
   scikit-learn's StratifiedKFold documents: "preserving the percentage of
   samples for each class").
3. Threads: --threads 1 and --threads 2 give byte-identical --json and
   --predictions (DESIGN.md, Conventions), for bow + logreg and for SIF-pooled
   random vectors + linear SVM with the nested search; for bow also the
   --report page and the terminal summary.
4. JSON shape: the keys DESIGN.md ("Evaluate JSON") names.
5. Leaks would be caught: (a) every row written twice: without --group-col
   the copies land in different folds and the out-of-fold macro F1 rises
   well above the figure for the data as it is; with --group-col on the
   ticket id the copies share a fold (checked in the predictions file) and
   the figure stays near the original; (b) a model trained on all rows and
   scored on those same rows (`train` then `predict`) scores higher than the
   out-of-fold figure, so the out-of-fold figure is not a resubstitution
   score.  Both are common practice for showing leakage.

Ends with "N passed, N failed".
"""
import csv
import io
import json
import os
import re
import subprocess
import sys
import tempfile

import numpy as np
from sklearn.metrics import (accuracy_score, confusion_matrix, f1_score,
                             log_loss, precision_recall_fscore_support)

TOL = 1e-12
VECSIFT = os.environ.get("VECSIFT", "build/vecsift")
DATA = "datasets/inbox/labelled.csv"
COLS = ["--text-col", "subject", "--text-col", "body", "--label-col", "queue"]
passed = failed = 0
maxdiff = 0.0


def ok(cond, name, detail=""):
    global passed, failed
    if cond:
        passed += 1
    else:
        failed += 1
        print(f"FAIL {name} {detail}")


def close(name, got, want):
    global maxdiff
    got = np.asarray(got, dtype=float)
    want = np.asarray(want, dtype=float)
    same_shape = got.shape == want.shape
    d = float(np.max(np.abs(got - want))) if same_shape and got.size else (0.0 if same_shape else np.inf)
    maxdiff = max(maxdiff, d)
    ok(same_shape and d <= TOL, name, f"got {got.tolist()} want {want.tolist()} (diff {d:g})")


def run(args, expect=0):
    p = subprocess.run([VECSIFT] + args, capture_output=True, text=True)
    if p.returncode != expect:
        print(f"FAIL running {args}: status {p.returncode}\n{p.stderr}")
        sys.exit(1)
    return p


def read_oof(path):
    with open(path, newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))
    head, body = rows[0], rows[1:]
    labels = [h[len("prob:"):] for h in head[6:]]
    ix = {lab: i for i, lab in enumerate(labels)}
    row = np.array([int(r[0]) for r in body])
    rep = np.array([int(r[1]) for r in body])
    fold = np.array([int(r[2]) for r in body])
    gold = np.array([ix[r[3]] for r in body])
    pred = np.array([ix[r[4]] for r in body])
    conf = np.array([float(r[5]) for r in body])
    prob = np.array([[float(x) for x in r[6:]] for r in body])
    return head, labels, row, rep, fold, gold, pred, conf, prob


def brier(gold, prob):
    onehot = np.eye(prob.shape[1])[gold]
    return float(np.mean(np.sum((prob - onehot) ** 2, axis=1)))


def scores(gold, pred, prob, K):
    lab = list(range(K))
    p, r, f, s = precision_recall_fscore_support(gold, pred, labels=lab, zero_division=0)
    return {
        "accuracy": accuracy_score(gold, pred),
        "macro_f1": f1_score(gold, pred, labels=lab, average="macro", zero_division=0),
        "weighted_f1": f1_score(gold, pred, labels=lab, average="weighted", zero_division=0),
        "log_loss": log_loss(gold, prob, labels=lab, eps=1e-15),
        "brier": brier(gold, prob),
        "precision": p, "recall": r, "f1": f, "support": s,
    }


tmp = tempfile.mkdtemp(prefix="vecsift-eval-")


def out(name):
    return os.path.join(tmp, name)


# ---- 1. metrics against scikit-learn ----
base = COLS + ["--pool", "bow", "--seed", "7", "--quiet"]
term1 = run(["evaluate", DATA] + base + ["--threads", "1", "--json", out("t1.json"), "--predictions", out("t1.csv"),
                                         "--report", out("t1.html")]).stdout
js = json.load(open(out("t1.json")))
head, labels, row, rep, fold, gold, pred, conf, prob = read_oof(out("t1.csv"))
K = len(labels)
ok(labels == js["labels"], "labels of predictions file and JSON agree")
ok(head[:6] == ["row", "repeat", "fold", "label", "predicted", "confidence"], "predictions header", str(head[:6]))
R = js["settings"]["repeats"]
F = js["settings"]["folds"]
ok(R == 3 and F == 5, "defaults are 5 folds x 3 repeats", f"{F} x {R}")
N = len(row) // R
ok(len(row) == N * R, "one line per row per repeat")
close("confidence = max probability", conf, prob.max(axis=1))
# predicted = most probable label, lowest index on ties (cv.h)
close("predicted = argmax", pred, prob.argmax(axis=1))

sk = scores(gold, pred, prob, K)
pooled = js["pooled"]
for key in ("accuracy", "macro_f1", "weighted_f1", "log_loss", "brier"):
    close(f"pooled {key}", pooled[key], sk[key])
for k, lab in enumerate(labels):
    L = pooled["per_label"][lab]
    close(f"pooled precision {lab}", L["precision"], sk["precision"][k])
    close(f"pooled recall {lab}", L["recall"], sk["recall"][k])
    close(f"pooled f1 {lab}", L["f1"], sk["f1"][k])
    close(f"pooled support {lab}", L["support"], sk["support"][k])
cm = confusion_matrix(gold, pred, labels=list(range(K)))
close("confusion", js["confusion"], cm)
# most mistaken for: the largest off-diagonal cell of the row, lowest index on ties (metrics.h)
for k, lab in enumerate(labels):
    off = cm[k].copy()
    off[k] = -1
    want = labels[int(np.argmax(off))] if off.max() > 0 else None
    ok(pooled["per_label"][lab]["most_mistaken_for"] == want, f"most mistaken for {lab}",
       f"{pooled['per_label'][lab]['most_mistaken_for']} vs {want}")
ok("0/0" in pooled["zero_division"], "0/0 rule stated in the JSON")

# per fold mean and sample sd
per = {key: [] for key in ("accuracy", "macro_f1", "weighted_f1", "log_loss", "brier")}
perlab = {key: [] for key in ("precision", "recall", "f1")}
for r in range(1, R + 1):
    for f in range(1, F + 1):
        m = (rep == r) & (fold == f)
        s = scores(gold[m], pred[m], prob[m], K)
        for key in per:
            per[key].append(s[key])
        for key in perlab:
            perlab[key].append(s[key])
pf = js["per_fold"]
ok(pf["folds"] == R * F, "per_fold counts every fold of every repeat")
for key in per:
    close(f"per_fold {key} mean", pf[key]["mean"], np.mean(per[key]))
    close(f"per_fold {key} sd", pf[key]["sd"], np.std(per[key], ddof=1))
for k, lab in enumerate(labels):
    for key in perlab:
        v = np.array(perlab[key])[:, k]
        close(f"per_fold {key} {lab} mean", pf["per_label"][lab][key]["mean"], v.mean())
        close(f"per_fold {key} {lab} sd", pf["per_label"][lab][key]["sd"], v.std(ddof=1))

# cut-off: smallest confidence whose kept rows reach the target precision
target = js["threshold"]["target_precision"]
correct = gold == pred
best = None
for t in np.unique(conf):
    kept = conf >= t
    if correct[kept].mean() >= target and (best is None or t < best):
        best = t
if best is None:
    ok(js["threshold"]["cutoff"] is None, "cut-off unreachable")
else:
    close("cut-off", js["threshold"]["cutoff"], best)
    close("cut-off coverage", js["threshold"]["coverage"], np.mean(conf >= best))
    close("cut-off precision", js["threshold"]["precision"], correct[conf >= best].mean())

# ---- 2. stratification ----
ytrue = gold[rep == 1][np.argsort(row[rep == 1])]
counts = np.bincount(ytrue, minlength=K)
worst = 0.0
for r in range(1, R + 1):
    m = rep == r
    ok(sorted(row[m].tolist()) == list(range(1, N + 1)), f"repeat {r}: every row held out exactly once")
    for f in range(1, F + 1):
        mf = m & (fold == f)
        size = mf.sum()
        c = np.bincount(gold[mf], minlength=K)
        dev = np.abs(c - size * counts / N).max()
        worst = max(worst, dev)
        ok(dev <= 1.0, f"repeat {r} fold {f} within one row of the set's proportions", f"{c} vs {size * counts / N}")
print(f"stratification: largest deviation {worst:.3f} rows")
ok(any((fold[rep == 1] != fold[rep == 2])), "repeats use different shuffles")

# ---- 3. thread independence ----
term2 = run(["evaluate", DATA] + base + ["--threads", "2", "--json", out("t2.json"), "--predictions", out("t2.csv"),
                                         "--report", out("t2.html")]).stdout
ok(term1 == term2, "terminal summary identical for 1 and 2 threads")
ok(open(out("t1.html"), "rb").read() == open(out("t2.html"), "rb").read(), "bow report identical for 1 and 2 threads")
ok(open(out("t1.json"), "rb").read() == open(out("t2.json"), "rb").read(), "bow JSON identical for 1 and 2 threads")
ok(open(out("t1.csv"), "rb").read() == open(out("t2.csv"), "rb").read(), "bow predictions identical for 1 and 2 threads")
# seeded random 300-d vectors covering the demo vocabulary (invented)
rng = np.random.default_rng(11)
words = set()
with open(DATA, newline="", encoding="utf-8") as f:
    for r in csv.DictReader(f):
        for w in (r["subject"] + " " + r["body"]).lower().replace(",", " ").replace(".", " ").split():
            words.add(w.strip("?!:;\"'()"))
words.discard("")
with open(out("vec.txt"), "w", encoding="utf-8") as f:
    for w in sorted(words):
        f.write(w + " " + " ".join(f"{x:.5f}" for x in rng.normal(0, 1, 50)) + "\n")
run(["vectors", "pack", out("vec.txt"), "-o", out("vec.vecs"), "--quiet"])
sif = COLS + ["--vectors", out("vec.vecs"), "--pool", "sif", "--classifier", "svm-linear", "--search",
              "--folds", "3", "--repeats", "1", "--quiet"]
run(["evaluate", DATA] + sif + ["--threads", "1", "--json", out("s1.json"), "--predictions", out("s1.csv")])
run(["evaluate", DATA] + sif + ["--threads", "2", "--json", out("s2.json"), "--predictions", out("s2.csv")])
ok(open(out("s1.json"), "rb").read() == open(out("s2.json"), "rb").read(), "sif+search JSON identical for 1 and 2 threads")
ok(open(out("s1.csv"), "rb").read() == open(out("s2.csv"), "rb").read(), "sif+search predictions identical for 1 and 2 threads")
sj = json.load(open(out("s1.json")))
ok(len(sj.get("chosen_C", [])) == 3 and all(c in (0.01, 0.1, 1.0, 10.0, 100.0) for c in sj["chosen_C"]),
   "search reports one C per fold, from the grid", str(sj.get("chosen_C")))

# ---- 4. JSON shape (DESIGN.md, "Evaluate JSON") ----
for key in ("labels", "confusion", "pooled", "per_fold", "threshold", "settings"):
    ok(key in js, f"JSON has '{key}'")
for key in ("accuracy", "macro_f1", "weighted_f1", "log_loss", "per_label"):
    ok(key in js["pooled"], f"pooled has '{key}'")
for lab in labels:
    ok(set(("precision", "recall", "f1", "support")) <= set(js["pooled"]["per_label"][lab]), f"per_label {lab} keys")
    ok(set(js["per_fold"]["per_label"][lab]) == {"precision", "recall", "f1"}, f"per_fold per_label {lab} keys")
for key in ("accuracy", "macro_f1", "weighted_f1", "log_loss"):
    ok(set(js["per_fold"][key]) == {"mean", "sd"}, f"per_fold {key} is mean and sd")
ok({"target_precision", "cutoff", "curve"} <= set(js["threshold"]), "threshold keys")
for key in ("data", "text_columns", "label_column", "group_column", "pool", "classifier", "C", "folds",
            "repeats", "seed", "search"):
    ok(key in js["settings"], f"settings has '{key}'")


def rerun_args(j):
    """The command line the JSON's settings describe (DESIGN.md: 'settings'
    holds everything needed to rerun)."""
    s = j["settings"]
    a = ["evaluate", s["data"], "--label-col", s["label_column"], "--pool", s["pool"],
         "--classifier", s["classifier"], "--C", repr(s["C"]), "--class-weight", s["class_weight"],
         "--folds", str(s["folds"]), "--repeats", str(s["repeats"]), "--seed", str(s["seed"]),
         "--encoding", s["encoding"], "--target-precision", repr(j["threshold"]["target_precision"])]
    for c in s["text_columns"]:
        a += ["--text-col", c]
    if s["group_column"]:
        a += ["--group-col", s["group_column"]]
    if s["vectors"]:
        a += ["--vectors", s["vectors"]]
    if "max_iter" in s:
        a += ["--max-iter", str(s["max_iter"])]
    if "gamma" in s and s["gamma"] != "default":
        a += ["--gamma", repr(s["gamma"])]
    for key, opt in (("search", "--search"), ("sublinear_tf", "--sublinear-tf"), ("replace_invalid", "--replace-invalid"),
                     ("keep_accents", "--keep-accents"), ("mask_number", "--mask-numbers")):
        if s[key]:
            a.append(opt)
    if not s["mask_email"]:
        a.append("--keep-emails")
    return a


for name in ("t1", "s1"):
    j = json.load(open(out(name + ".json")))
    run(rerun_args(j) + ["--quiet", "--json", out(name + ".again.json")])
    ok(open(out(name + ".json"), "rb").read() == open(out(name + ".again.json"), "rb").read(),
       f"{name}: rerunning from the JSON's settings gives the same JSON")
text = open(out("t1.json")).read()
ok(not any(w in text for w in ("seconds", "elapsed", "time")), "no timing fields in the JSON")

# ---- 5. leaks would be caught ----
with open(DATA, newline="", encoding="utf-8") as f:
    reader = csv.reader(f)
    hdr = next(reader)
    body = list(reader)
with open(out("twice.csv"), "w", newline="", encoding="utf-8") as f:
    w = csv.writer(f)
    w.writerow(hdr)
    for r in body:
        w.writerow(r)
    for r in body:
        w.writerow(r)
lean = COLS + ["--pool", "bow", "--C", "1", "--quiet", "--repeats", "2"]
# Writing every row twice doubles the data term of the logistic loss, which is
# the same as doubling C (linear.h: J = 0.5 |W|^2 + C sum loss); the fair
# reference for the doubled data (fitted with an explicit --C 1, not bow's
# default) is therefore the data as is with --C 2.
p = run(["evaluate", DATA] + COLS + ["--pool", "bow", "--repeats", "2", "--C", "2", "--json", out("orig.json")])
m = re.search(r"(\d+) rows? repeats? another row", p.stderr)
dup0 = int(m.group(1)) if m else 0
p = run(["evaluate", out("twice.csv")] + COLS + ["--pool", "bow", "--C", "1", "--repeats", "2",
                                                 "--json", out("twice.json"), "--predictions", out("twice.csv.oof")])
ok(f"{len(body) + dup0} rows repeat another row" in p.stderr, "duplicates are reported", p.stderr[-300:])
run(["evaluate", out("twice.csv")] + lean + ["--group-col", "ticket_id", "--json", out("grouped.json"),
                                             "--predictions", out("grouped.oof")])
f_orig = json.load(open(out("orig.json")))["pooled"]["macro_f1"]
f_twice = json.load(open(out("twice.json")))["pooled"]["macro_f1"]
f_group = json.load(open(out("grouped.json")))["pooled"]["macro_f1"]
print(f"macro F1: data as is (C 2) {f_orig:.4f}; every row twice {f_twice:.4f}; twice with --group-col {f_group:.4f}")
ok(f_twice > f_orig + 0.05, "copies split across folds flatter the score", f"{f_twice} vs {f_orig}")
ok(abs(f_group - f_orig) < 0.02, "with --group-col the copies do not flatter it", f"{f_group} vs {f_orig}")
_, _, grow, grep_, gfold, *_ = read_oof(out("grouped.oof"))
n0 = len(body)
same = all(gfold[(grep_ == r) & (grow == i)][0] == gfold[(grep_ == r) & (grow == i + n0)][0]
           for r in (1, 2) for i in range(1, n0 + 1))
ok(same, "--group-col keeps both copies of a ticket in one fold")
_, _, trow, trep, tfold, *_ = read_oof(out("twice.csv.oof"))
split = np.mean([tfold[(trep == 1) & (trow == i)][0] != tfold[(trep == 1) & (trow == i + n0)][0]
                 for i in range(1, n0 + 1)])
ok(split > 0.5, "without groups most copies are split", f"{split}")

run(["train", DATA] + COLS + ["--pool", "bow", "-o", out("all.json"), "--quiet"])
run(["predict", out("all.json"), DATA, "-o", out("self.csv"), "--quiet"] + COLS[:4])
with open(out("self.csv"), newline="", encoding="utf-8") as f:
    rs = list(csv.DictReader(f))
labs = js["labels"]
yt = [labs.index(r["queue"]) for r in rs]
yp = [labs.index(r["predicted"]) for r in rs]
f_self = f1_score(yt, yp, labels=list(range(K)), average="macro", zero_division=0)
print(f"macro F1 of the model trained on all rows, on its own rows: {f_self:.4f}; out of fold: {pooled['macro_f1']:.4f}")
ok(f_self > pooled["macro_f1"] + 0.05, "resubstitution scores higher than out of fold")

print(f"largest difference from scikit-learn: {maxdiff:.3g}")
print(f"{passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
