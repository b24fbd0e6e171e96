#!/usr/bin/python3
"""map_vs_sklearn.py -- `vecsift map` and `vecsift vectors map` end to end,
against scikit-learn's t-SNE and Python's XML parser.

Reference: scikit-learn (Debian python3-sklearn): sklearn.manifold.TSNE
(default Barnes-Hut method, perplexity 30, PCA initialisation, like ours) and
sklearn.manifold.trustworthiness (Venna and Kaski 2001, "Neighborhood
preservation in nonlinear projection methods: an experimental study"), with
10 neighbours, as the measure of how well a map keeps each point's
neighbours.

Data: a clustered fixture of documents, the demo inbox
(datasets/inbox/labelled.csv, invented; 404 tickets in 7 queues), mapped
(a) from its TF-IDF bag of words (--pool bow) and (b) from tfidf-pooled
vectors learned from datasets/inbox/unlabelled.csv.  The features t-SNE sees
are exported with `vecsift features` (same featurizer, fitted on every row),
our map's coordinates with `map --coords`; scikit-learn maps the exported
features.

Rules (from the task): on (b) our trustworthiness is at least 0.9 and no
more than 0.02 below scikit-learn's (Barnes-Hut, its default).  On (a), 4669
sparse TF-IDF columns, no 2-D map keeps the neighbours that well (measured:
scikit-learn exact 0.814, Barnes-Hut 0.839 and 0.848 for two seeds; ours,
exact below 1000 points, 0.795-0.817 over seeds 1-3), so (a) is held only
to "no more than 0.02 below scikit-learn's exact method", the method ours
uses at this size.  Also: the SVG parses as XML (xml.etree) with one
point element per row and a caption that warns about far distances; the same
seed gives the same file byte for byte; `vectors map` writes a parseable
SVG with one <text> label per word.

Usage: map_vs_sklearn.py (environment: VECSIFT, SRCDIR)
"""
import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import csv  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import xml.etree.ElementTree as ET  # noqa: E402

import numpy as np  # noqa: E402
from sklearn.manifold import TSNE, trustworthiness  # noqa: E402

MIN_TRUST = 0.9
MAX_BELOW = 0.02
SVG = "{http://www.w3.org/2000/svg}"
FAILED = []


def check(ok, what):
    print(("ok    " if ok else "FAIL  ") + what)
    if not ok:
        FAILED.append(what)


def vecsift(*args):
    r = subprocess.run([os.environ["VECSIFT"], *args, "--quiet"], capture_output=True, text=True)
    if r.returncode != 0:
        sys.exit(f"FAIL: vecsift {' '.join(args)} exited {r.returncode}: {r.stderr.strip()}")


def read_features(path):
    with open(path, newline="", encoding="utf-8") as fp:
        rows = list(csv.reader(fp))
    first = rows[0].index("x1")
    return np.array([[float(v) for v in r[first:]] for r in rows[1:]])


def read_coords(path):
    with open(path, newline="", encoding="utf-8") as fp:
        return np.array([[float(r["x"]), float(r["y"])] for r in csv.DictReader(fp)])


def check_svg(path, n, what):
    root = ET.parse(path).getroot()
    check(root.tag == SVG + "svg", f"{what}: the SVG parses as XML with an <svg> root")
    points = [el for el in root.iter() if el.tag in (SVG + "circle", SVG + "rect", SVG + "polygon")
              and el.find(SVG + "title") is not None]
    check(len(points) == n, f"{what}: {len(points)} points with a tooltip, {n} rows")
    desc = root.find(SVG + "desc")
    check(desc is not None and "far apart" in desc.text, f"{what}: the caption warns about far-apart groups")
    return root


def main():
    srcdir = os.environ.get("SRCDIR", ".")
    demo = os.path.join(srcdir, "datasets", "inbox")
    data = os.path.join(demo, "labelled.csv")
    cols = ["--text-col", "subject", "--text-col", "body", "--label-col", "queue"]
    with tempfile.TemporaryDirectory() as tmp:
        vecs = os.path.join(tmp, "inbox.vecs")
        vecsift("vectors", "learn", os.path.join(demo, "unlabelled.csv"), "--text-col", "subject",
                "--text-col", "body", "-o", vecs, "--threads", "1")
        for what, extra, method, floor in (
                ("learned vectors, tfidf", ["--vectors", vecs, "--pool", "tfidf"], "barnes_hut", MIN_TRUST),
                ("bag of words", ["--pool", "bow"], "exact", 0.0)):
            feats, svg, coords = (os.path.join(tmp, f) for f in ("f.csv", "map.svg", "xy.csv"))
            vecsift("features", data, *cols, *extra, "-o", feats)
            vecsift("map", data, *cols, *extra, "-o", svg, "--coords", coords)
            X, ours = read_features(feats), read_coords(coords)
            check(X.shape[0] == ours.shape[0] == 404, f"{what}: 404 feature rows and 404 map points")
            ref = TSNE(n_components=2, perplexity=30, init="pca", learning_rate="auto", method=method,
                       random_state=0).fit_transform(X)
            t_ours = trustworthiness(X, ours, n_neighbors=10)
            t_ref = trustworthiness(X, ref, n_neighbors=10)
            print(f"{what}: {X.shape[1]} features; trustworthiness ours {t_ours:.4f}, "
                  f"scikit-learn ({method}) {t_ref:.4f}")
            if floor:
                check(t_ours >= floor, f"{what}: trustworthiness {t_ours:.4f} >= {floor}")
            check(t_ours >= t_ref - MAX_BELOW, f"{what}: {t_ours:.4f} is at most {MAX_BELOW} below {t_ref:.4f}")
            check_svg(svg, 404, what)
            again = os.path.join(tmp, "again.svg")
            vecsift("map", data, *cols, *extra, "-o", again)
            with open(svg, "rb") as a, open(again, "rb") as b:
                check(a.read() == b.read(), f"{what}: same seed, same SVG byte for byte")

        words = ["kettle", "refund", "parcel", "password", "invoice"]
        svg, coords = os.path.join(tmp, "words.svg"), os.path.join(tmp, "words.csv")
        vecsift("vectors", "map", vecs, *words, "--neighbours", "5", "-o", svg, "--coords", coords)
        with open(coords, newline="", encoding="utf-8") as fp:
            mapped = [r["word"] for r in csv.DictReader(fp)]
        check(all(w in mapped for w in words) and len(mapped) == len(set(mapped)),
              f"vectors map: {len(mapped)} distinct words, the 5 asked for among them")
        root = ET.parse(svg).getroot()
        labels = [el.text for el in root.iter(SVG + "text") if el.text in mapped]
        check(sorted(labels) == sorted(mapped), "vectors map: one text label per word")
    print(f"{len(FAILED)} failed" if FAILED else "all passed")
    return 1 if FAILED else 0


if __name__ == "__main__":
    sys.exit(main())
