#!/usr/bin/python3
"""tsne_vs_sklearn.py -- our t-SNE maps against scikit-learn's, and the SVG
drawing against Python's XML parser.

Reference: scikit-learn (Debian python3-sklearn) sklearn.manifold.TSNE, and
sklearn.manifold.trustworthiness (Venna and Kaski 2001, "Neighborhood
preservation in nonlinear projection methods: an experimental study") as the
measure of how well a map keeps each point's 10 nearest neighbours.
Data: sklearn.datasets.make_blobs (seeded) and load_digits (the UCI optical
recognition of handwritten digits set that python3-sklearn ships).

Rule (from the task): our trustworthiness is at least 0.9 and no more than
0.02 below scikit-learn's on the same data with the same perplexity (30) and
the same kind of initialisation (PCA).  The reference is scikit-learn's
default method, Barnes-Hut: its exact method took 15-80 s per case on the
shared test machine.  Our exact and our Barnes-Hut maps are both held to it.
The 3000-point case also takes over a minute with scikit-learn, so it lives
in tests/bench/tsne_bench.py; here Barnes-Hut is forced on 500 points.

Driven through $BUILDDIR/tests/tsne_run.  Ends with "N passed, N failed".
"""
import os

# One thread each for OpenMP and BLAS: the machine is shared, and
# oversubscribed threads made scikit-learn's runs many times slower.
for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import xml.etree.ElementTree as ET  # noqa: E402

import numpy as np  # noqa: E402
from sklearn.datasets import load_digits, make_blobs  # noqa: E402
from sklearn.manifold import TSNE, trustworthiness  # noqa: E402

BUILD = os.environ.get("BUILDDIR", "build")
TOOL = os.path.join(BUILD, "tests", "tsne_run")
SVG_NS = "{http://www.w3.org/2000/svg}"

passed = failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
        print(f"ok   {what}")
    else:
        failed += 1
        print(f"FAIL {what}")


def run_ours(X, tmp, name, *opts):
    src = os.path.join(tmp, name + ".csv")
    out = os.path.join(tmp, name + ".out")
    np.savetxt(src, X, delimiter=",", fmt="%.17g")
    t0 = time.perf_counter()
    r = subprocess.run([TOOL, *opts, src, out], capture_output=True, text=True)
    dt = time.perf_counter() - t0
    if r.returncode != 0:
        print(r.stderr, end="")
        return None, dt, out
    return np.loadtxt(out, delimiter=","), dt, out


def sklearn_reference(X):
    """Trustworthiness and seconds of scikit-learn's TSNE with its default
    method (Barnes-Hut), perplexity 30, PCA start, 1000 iterations."""
    t0 = time.perf_counter()
    Z = TSNE(n_components=2, perplexity=30.0, init="pca", learning_rate="auto",
             n_iter=1000, random_state=0, method="barnes_hut").fit_transform(X)
    return trustworthiness(X, Z, n_neighbors=10), time.perf_counter() - t0


def compare(tmp, name, X, method, ref):
    """Our map with 'method' ('exact' or 'bh') against the reference 'ref'
    (trustworthiness, seconds) from sklearn_reference on the same X."""
    Y, t_ours, _ = run_ours(X, tmp, name, "--perplexity", "30", "--iters", "1000",
                            "--seed", "1", "--init", "pca", "--method", method)
    if Y is None:
        check(False, f"{name}: tsne_run failed")
        return
    tw_ours = trustworthiness(X, Y, n_neighbors=10)
    tw_sk, t_sk = ref
    print(f"     {name}: n={X.shape[0]} d={X.shape[1]} ours={method} "
          f"trustworthiness ours={tw_ours:.4f} sklearn(barnes_hut)={tw_sk:.4f} "
          f"time ours={t_ours:.1f}s sklearn={t_sk:.1f}s")
    check(tw_ours >= 0.9, f"{name}: trustworthiness {tw_ours:.4f} >= 0.9")
    check(tw_ours >= tw_sk - 0.02,
          f"{name}: trustworthiness {tw_ours:.4f} >= sklearn {tw_sk:.4f} - 0.02")


def check_repeatable(tmp, X):
    # Same input and seed -> byte-identical output file (task contract).
    outs = []
    for k in range(2):
        Y, _, out = run_ours(X, tmp, f"rep{k}", "--iters", "300", "--seed", "5",
                             "--init", "random", "--method", "bh")
        outs.append(open(out, "rb").read() if Y is not None else None)
    check(outs[0] is not None and outs[0] == outs[1],
          "same seed gives byte-identical coordinates")


def check_svg(tmp, X, y):
    # Labels and tooltips with markup characters and a control character; the
    # drawing must parse as XML (xml.etree, Python standard library) and hold
    # one titled marker per point with the text minus the control character.
    lab = os.path.join(tmp, "labels.tsv")
    texts = [f"row {i} <b>&amp;\"q\" 'a'\x01 \u00e9" for i in range(len(y))]
    with open(lab, "w", encoding="utf-8") as f:
        for k, t in zip(y, texts):
            f.write(f"{k}\t{t}\n")
    svg = os.path.join(tmp, "map.svg")
    Y, _, _ = run_ours(X, tmp, "svg", "--iters", "250", "--svg", svg, "--labels", lab)
    if Y is None:
        check(False, "svg: tsne_run failed")
        return
    try:
        root = ET.parse(svg).getroot()
    except ET.ParseError as exc:
        check(False, f"svg parses as XML ({exc})")
        return
    check(root.tag == SVG_NS + "svg", "svg: root element is <svg> in the SVG namespace")
    points = root.find(SVG_NS + "g[@class='points']")
    marks = list(points) if points is not None else []
    titles = [m.find(SVG_NS + "title") for m in marks]
    got = [t.text if t is not None else None for t in titles]
    want = [f"group {k}\n" + t.replace("\x01", "") for k, t in zip(y, texts)]
    check(len(marks) == len(y) and got == want,
          f"svg: {len(marks)} markers, tooltips round-trip through XML escaping")
    legend = root.find(SVG_NS + "g[@class='legend']")
    rows = [t.text for t in legend.iter(SVG_NS + "text")] if legend is not None else []
    counts = np.bincount(y)
    check(rows == [f"group {k} ({counts[k]})" for k in range(len(counts))],
          "svg: legend lists every label with its count")
    bad = [el.tag for el in root.iter() if el.tag in (SVG_NS + "script", SVG_NS + "image",
                                                      SVG_NS + "foreignObject")]
    hrefs = [k for el in root.iter() for k in el.attrib if k.endswith("href")]
    check(not bad and not hrefs, "svg: no script, no image, no external reference")


def check_errors(tmp):
    small = os.path.join(tmp, "small.csv")
    with open(small, "w") as f:
        f.write("1,2\n3,4\n5,6\n")
    r = subprocess.run([TOOL, small, os.path.join(tmp, "small.out")],
                       capture_output=True, text=True)
    check(r.returncode == 2 and "at least 4 points" in r.stderr
          and not os.path.exists(os.path.join(tmp, "small.out")),
          "3 points: exit 2, one-line error, no output file")
    bad = os.path.join(tmp, "bad.csv")
    with open(bad, "w") as f:
        f.write("1,2\n3,4\n5,x\n7,8\n")
    r = subprocess.run([TOOL, bad, os.path.join(tmp, "bad.out")],
                       capture_output=True, text=True)
    check(r.returncode == 2 and f"{bad}:3:" in r.stderr, "non-number: error names file:line")


def main():
    if not os.access(TOOL, os.X_OK):
        print(f"FAIL {TOOL} not built")
        print("0 passed, 1 failed")
        return 1
    digits = load_digits()
    with tempfile.TemporaryDirectory() as tmp:
        Xb, _ = make_blobs(n_samples=400, n_features=30, centers=6, cluster_std=3.0,
                           random_state=0)
        compare(tmp, "blobs-400", Xb, "exact", sklearn_reference(Xb))
        Xd, yd = digits.data[:500], digits.target[:500]
        ref = sklearn_reference(Xd)
        compare(tmp, "digits-500", Xd, "exact", ref)
        compare(tmp, "digits-500-bh", Xd, "bh", ref)
        check_repeatable(tmp, Xd[:200])
        check_svg(tmp, Xd[:300], yd[:300])
        check_errors(tmp)
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
