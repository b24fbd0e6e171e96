#!/usr/bin/python3
"""bench_audit.py -- on-demand benchmark (not part of meson test): how many
planted wrong labels `vecsift audit` puts among its top 30 suspects, beside a
Python reference measured in the same run.

Set-up (issue 17): 300 labelled rows of an open dataset, 15 of them given
another label at random (a planting), averaged over 10 plantings (seeds
1..10).  Datasets (tools/fetch-data, npm; built by tests/ext/audit_cl.py):
  spam    SpamAssassin mail, 150 ham and 150 spam; the corpus's other
          messages are the unlabelled text
  brown   the Brown corpus, one 400-word passage from each of 300 samples,
          informative or imaginative prose; the rest of the corpus unlabelled
  brown4  the same with four labels (press, general prose, learned, fiction)
  sotu    State of the Union passages of 400 words, 75 from each of four
          eras; the other passages unlabelled
Routes for the probabilities (pool:repeats[:extra options joined by +]):
--pool bow (no vectors), and pooling of vectors learned by `vecsift vectors
learn` from the unlabelled text (its defaults, 1 thread so the vectors are the
same every run); 5 folds.  Every selection (noise-rate, off-diagonal) and
ranking (margin, confidence) is computed from the probabilities each run
exports (--probabilities) with the Python formulas of audit_cl.py, which
tests/ext/audit_formulas.py checks equal vecsift's own; the CLI's default
(noise-rate, confidence) is checked equal to them here too.

Python reference: scikit-learn TfidfVectorizer (its defaults) and
LogisticRegression(C=10, lbfgs), out-of-fold probabilities over
RepeatedStratifiedKFold(5 folds, 5 repeats, seeded), averaged over repeats,
then the same confident-learning formulas.

usage: BUILDDIR=build /usr/bin/python3 tests/bench/bench_audit.py [--plantings N]
       [--datasets spam,brown,sotu] [--routes bow:1,tfidf:1] [--no-reference]
"""
import argparse
import os
import subprocess
import sys
import tempfile

import numpy as np
import sklearn
from sklearn.feature_extraction.text import TfidfVectorizer
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import RepeatedStratifiedKFold

HERE = os.path.dirname(os.path.abspath(__file__))
SRCDIR = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, os.path.join(SRCDIR, "tests", "ext"))
import audit_cl  # noqa: E402

BUILD = os.environ.get("BUILDDIR", os.path.join(SRCDIR, "build"))
VECSIFT = os.path.join(BUILD, "vecsift")
N_WRONG, TOP = 15, 30


def run(*args):
    r = subprocess.run([VECSIFT, *args], capture_output=True, text=True)
    if r.returncode != 0:
        sys.exit(f"vecsift {' '.join(args)} exited {r.returncode}: {r.stderr.strip()}")
    return r


def sklearn_oof(texts, y, repeats, seed):
    K = int(y.max()) + 1
    P = np.zeros((len(texts), K))
    cv = RepeatedStratifiedKFold(n_splits=5, n_repeats=repeats, random_state=seed)
    texts = np.array(texts, dtype=object)
    for tr, te in cv.split(texts, y):
        vec = TfidfVectorizer()
        Xtr = vec.fit_transform(texts[tr])
        clf = LogisticRegression(C=10.0, max_iter=2000).fit(Xtr, y[tr])
        P[te] += clf.predict_proba(vec.transform(texts[te]))
    return P / repeats


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--plantings", type=int, default=10)
    ap.add_argument("--datasets", default="spam,brown")
    ap.add_argument("--no-reference", action="store_true", help="skip scikit-learn")
    ap.add_argument("--routes", default="bow:1,bow:5,tfidf:5,sif:5,mean:5")
    opt = ap.parse_args()
    # pool:repeats[:extra options joined by +], e.g. tfidf:1:--C+10
    routes = [(r.split(":")[0], int(r.split(":")[1]), r.split(":")[2].split("+") if r.count(":") > 1 else [])
              for r in opt.routes.split(",")]
    print(f"scikit-learn {sklearn.__version__}; {opt.plantings} plantings of {N_WRONG} wrong labels "
          f"in 300 rows; planted rows among the top {TOP} suspects (mean, min)")
    with tempfile.TemporaryDirectory() as tmp:
        for name in opt.datasets.split(","):
            if name == "spam":
                rows, rest = audit_cl.spam_data(SRCDIR)
            elif name == "sotu":
                rows, rest = audit_cl.sotu_rows(SRCDIR)
            else:
                rows, rest = audit_cl.brown_rows(SRCDIR, four=name == "brown4")
            names = sorted({r[1] for r in rows})
            texts = [r[0] for r in rows]
            unl = os.path.join(tmp, f"{name}-unlabelled.csv")
            audit_cl.write_csv(unl, ["text"], [[t] for t in rest])
            vecs = os.path.join(tmp, f"{name}.vecs")
            if any(p != "bow" for p, _, _ in routes):
                run("vectors", "learn", unl, "-o", vecs, "--threads", "1", "--quiet")
            got = {}
            for s in range(1, opt.plantings + 1):
                labels, planted = audit_cl.plant([r[1] for r in rows], N_WRONG, s, names)
                data = os.path.join(tmp, "data.csv")
                audit_cl.write_csv(data, ["text", "label"], list(zip(texts, labels)))
                for pool, rep, more in routes:
                    sus, prob = os.path.join(tmp, "sus.csv"), os.path.join(tmp, "prob.csv")
                    extra = [] if pool == "bow" else ["--vectors", vecs]
                    run("audit", data, "--pool", pool, *extra, *more, "--repeats", str(rep), "--seed", str(s),
                        "-o", sus, "--probabilities", prob, "--quiet")
                    P, given, _ = audit_cl.read_probabilities(prob)
                    cli = [x[0] for x in audit_cl.read_suspects(sus)]
                    for sel in audit_cl.SELECTS:
                        for rank in audit_cl.RANKS:
                            ranked = [x[0] for x in audit_cl.audit(P, given, rank, sel)[2]]
                            if rank == "confidence" and sel == "noise-rate" and ranked != cli:
                                sys.exit(f"{name} planting {s} {pool}: the CLI's ranking differs from the formulas'")
                            got.setdefault((f"vecsift {pool} R{rep} {' '.join(more)}".strip(), sel, rank),
                                           []).append(audit_cl.found_in_top(ranked, planted, TOP))
                if opt.no_reference:
                    continue
                y = np.array([names.index(l) for l in labels])
                P = sklearn_oof(texts, y, 5, s)
                for sel in audit_cl.SELECTS:
                    for rank in audit_cl.RANKS:
                        ranked = [x[0] for x in audit_cl.audit(P, y, rank, sel)[2]]
                        got.setdefault(("scikit-learn tfidf+logreg R5", sel, rank), []).append(
                            audit_cl.found_in_top(ranked, planted, TOP))
            print(f"\n{name}: {len(rows)} rows, labels {', '.join(names)}; {len(rest)} unlabelled texts")
            print(f"  {'probabilities':30s} {'selection':12s} {'ranking':11s} {'mean':>5s} {'min':>4s}  per planting")
            for (route, sel, rank), v in got.items():
                print(f"  {route:30s} {sel:12s} {rank:11s} {np.mean(v):5.1f} {min(v):4d}  {' '.join(map(str, v))}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
