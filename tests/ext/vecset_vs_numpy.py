#!/usr/bin/python3
# tests/ext/vecset_vs_numpy.py -- 'vecsift vectors near' and 'vectors
# analogy' against numpy (Debian python3-numpy), the reference.
#
# Fixture: an invented vector set (words of a fictional support inbox plus
# numbered filler words, 16 dimensions, seeded normal values rounded to
# float32), written in the text form and packed with vecsift.  For each
# query numpy computes, in float64 from the same float32 values:
#   near W1..Wn : q = mean of unit(Wi); cos(x, q) = x.q / (|x| |q|); the
#                 query words left out; ranked by cosine, ties by row;
#   analogy A B C: q = unit(B) - unit(A) + unit(C), A, B, C left out
#                 (3CosAdd: Mikolov, Yih and Zweig 2013, "Linguistic
#                 Regularities in Continuous Space Word Representations").
# vecsift's table must list the same words in the same order, each cosine
# within 1e-6 of numpy's (a swap is allowed only between two words whose
# numpy cosines are within 1e-6: a tie at float precision).
# Prints each check; ends with "N passed, N failed"; exits 1 on any failure.

import os
import subprocess
import sys
import tempfile

import numpy as np

VECSIFT = os.environ["VECSIFT"]
passed = failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
        print("ok   " + what)
    else:
        failed += 1
        print("FAIL " + what)


WORDS = ("printer toner invoice refund password login wifi router laptop monitor "
         "keyboard mouse license renewal shipment delivery warranty repair screen "
         "battery charger account billing payment vpn email calendar meeting "
         "badge access").split()
WORDS += ["filler%03d" % i for i in range(300)]
DIM = 16

rng = np.random.default_rng(20261201)
X = rng.standard_normal((len(WORDS), DIM)).astype(np.float32)
X[WORDS.index("filler007")] = 0  # a zero vector never matches (no direction)
Xd = X.astype(np.float64)
norms = np.linalg.norm(Xd, axis=1)


def unit(i):
    return Xd[i] / norms[i]


def reference(q, exclude, k):
    qn = q / np.linalg.norm(q)
    with np.errstate(invalid="ignore", divide="ignore"):
        cos = (Xd @ qn) / norms
    rows = [i for i in range(len(WORDS)) if norms[i] > 0 and i not in exclude]
    rows.sort(key=lambda i: (-cos[i], i))
    return [(WORDS[i], cos[i]) for i in rows[:k]]


def run(*args):
    p = subprocess.run([VECSIFT, *args], capture_output=True, text=True)
    if p.returncode != 0:
        print(p.stderr)
    return p.returncode, p.stdout


def table(out):
    rows = []
    for line in out.splitlines()[1:]:
        rank, word, cos = line.split()
        rows.append((word, float(cos)))
    return rows


def compare(name, got, want):
    check(len(got) == len(want), "%s: %d rows (numpy %d)" % (name, len(got), len(want)))
    wcos = dict(want)
    worst = 0.0
    order_ok = True
    for (gw, gc), (ww, wc) in zip(got, want):
        if gw != ww and not (gw in wcos and abs(wcos[gw] - wc) < 1e-6):
            order_ok = False
        if gw in wcos:
            worst = max(worst, abs(gc - wcos[gw]))
        else:
            worst = float("inf")
    check(order_ok, "%s: same words in the same order as numpy" % name)
    # the table prints %.6f: allow its rounding (5e-7) on top of 1e-6
    check(worst <= 1e-6 + 5e-7, "%s: cosines within 1e-6 of numpy (worst %.2g)" % (name, worst))


with tempfile.TemporaryDirectory() as d:
    txt = os.path.join(d, "inbox.txt")
    with open(txt, "w") as f:
        f.write("%d %d\n" % X.shape)
        for w, row in zip(WORDS, X):
            f.write(w + " " + " ".join("%.9g" % v for v in row) + "\n")
    vecs = os.path.join(d, "inbox.vecs")
    rc, _ = run("vectors", "pack", txt, "-o", vecs, "--quiet")
    check(rc == 0, "pack the fixture")

    for w in ["printer", "refund", "wifi", "filler042"]:
        i = WORDS.index(w)
        rc, out = run("vectors", "near", vecs, w, "-k", "15")
        check(rc == 0, "near %s runs" % w)
        compare("near %s" % w, table(out), reference(unit(i), {i}, 15))

    ws = ["invoice", "payment", "billing"]
    idx = [WORDS.index(w) for w in ws]
    rc, out = run("vectors", "near", vecs, *ws, "-k", "12", "--threads", "2")
    check(rc == 0, "near %s runs" % " ".join(ws))
    q = sum(unit(i) for i in idx) / len(idx)
    compare("near %s" % "+".join(ws), table(out), reference(q, set(idx), 12))

    for a, b, c in [("printer", "toner", "laptop"), ("login", "password", "vpn"), ("refund", "invoice", "shipment")]:
        ia, ib, ic = (WORDS.index(w) for w in (a, b, c))
        rc, out = run("vectors", "analogy", vecs, a, b, c, "-k", "5")
        check(rc == 0, "analogy %s %s %s runs" % (a, b, c))
        q = unit(ib) - unit(ia) + unit(ic)
        compare("analogy %s:%s::%s:?" % (a, b, c), table(out), reference(q, {ia, ib, ic}, 5))

print("%d passed, %d failed" % (passed, failed))
sys.exit(1 if failed else 0)
