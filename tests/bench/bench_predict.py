"""bench_predict.py -- data for tests/bench/bench_predict.sh and the
scikit-learn reference it is compared with.  Run on demand, never in CI.

  bench_predict.py make DIR ROWS        DIR/rows.csv (ROWS tickets), DIR/vecs.txt
  bench_predict.py reference DIR ROWS.csv OUT.csv   prints wall and CPU seconds, rows

Rows: tickets of the invented demo inbox (datasets/inbox/unlabelled.csv),
subject and body drawn independently with a seeded numpy generator, so
100,000 rows are ticket-like without repeating whole tickets much.
Vectors: 50,000 words x 300 dimensions, seeded random (nothing learned):
every word of the inbox, then invented filler words.

The reference does the same job as `vecsift predict` with a model trained
on datasets/inbox/labelled.csv (tfidf pooling + logistic regression), the
way one would write it with numpy/scipy/scikit-learn: read the CSV (csv
module), tokenise with a regular expression (CountVectorizer over the
vector vocabulary), tf-idf weights (idf from the training rows; a word seen
only in the vectors gets ln(1+N)+1 as in features.h), weighted mean of the
word vectors (one sparse-dense product), StandardScaler,
LogisticRegression.predict_proba, and write every input column plus
predicted, confidence and route with the csv module.  Fitting the reference
and loading the vectors into memory are not timed; reading, featurizing,
predicting and writing are.
"""
import csv
import os
import sys
import time

import numpy as np

DIM = 300
NWORDS = 50000
TOKEN = r"(?u)\b\w[\w'-]*\w\b|\b\w\b"


def make(out, rows):
    src = os.path.join(os.environ.get("SRCDIR", "."), "datasets", "inbox")
    tickets = list(csv.DictReader(open(os.path.join(src, "unlabelled.csv"), newline="", encoding="utf-8")))
    rng = np.random.default_rng(20261201)
    s = rng.integers(0, len(tickets), size=rows)
    b = rng.integers(0, len(tickets), size=rows)
    with open(os.path.join(out, "rows.csv"), "w", newline="", encoding="utf-8") as fp:
        w = csv.writer(fp, lineterminator="\r\n")
        w.writerow(["ticket_id", "subject", "body"])
        for i in range(rows):
            w.writerow([f"B{i + 1:07d}", tickets[s[i]]["subject"], tickets[b[i]]["body"]])
    import re
    words = set()
    for name in ("labelled.csv", "unlabelled.csv"):
        for t in csv.DictReader(open(os.path.join(src, name), newline="", encoding="utf-8")):
            words.update(re.findall(TOKEN, (t["subject"] + " " + t["body"]).lower()))
    words = sorted(words)
    letters = np.array(list("abcdefghijklmnopqrstuvwxyz"))
    seen = set(words)
    while len(words) < NWORDS:
        w = "".join(letters[rng.integers(0, 26, size=int(rng.integers(4, 10)))])
        if w not in seen:
            seen.add(w)
            words.append(w)
    V = rng.integers(-999, 1000, size=(len(words), DIM)) / 1000.0
    with open(os.path.join(out, "vecs.txt"), "w", encoding="utf-8") as fp:
        fp.write(f"{len(words)} {DIM}\n")
        for w, v in zip(words, V):
            fp.write(w + " " + " ".join("%.3f" % x for x in v) + "\n")


def reference(out, rows_csv, out_csv):
    from sklearn.feature_extraction.text import CountVectorizer
    from sklearn.linear_model import LogisticRegression
    from sklearn.preprocessing import StandardScaler
    # untimed: vectors into memory, the reference fitted on the labelled rows
    words, rows = [], []
    with open(os.path.join(out, "vecs.txt"), encoding="utf-8") as fp:
        next(fp)
        for line in fp:
            p = line.split(" ")
            words.append(p[0])
            rows.append(np.array(p[1:], dtype=float))
    E = np.vstack(rows)
    cv = CountVectorizer(token_pattern=TOKEN, lowercase=True, vocabulary={w: i for i, w in enumerate(words)})
    src = os.path.join(os.environ.get("SRCDIR", "."), "datasets", "inbox", "labelled.csv")
    lab = list(csv.DictReader(open(src, newline="", encoding="utf-8")))
    C = cv.transform([r["subject"] + " " + r["body"] for r in lab])
    n = C.shape[0]
    df = np.asarray((C > 0).sum(axis=0)).ravel()
    idf = np.log((1 + n) / (1 + df)) + 1   # unseen words: ln(1+N)+1, as features.h

    def pool(counts):
        Wt = counts.multiply(idf).tocsr()
        tot = np.asarray(Wt.sum(axis=1)).ravel()
        X = Wt @ E
        nz = tot > 0
        X[nz] /= tot[nz, None]
        return X
    scaler = StandardScaler().fit(pool(C))
    y = [r["queue"] for r in lab]
    clf = LogisticRegression(C=1.0, max_iter=1000).fit(scaler.transform(pool(C)), y)
    labels = clf.classes_
    # timed: the prediction job
    t0, c0 = time.perf_counter(), time.process_time()
    with open(rows_csv, newline="", encoding="utf-8") as fp:
        r = csv.reader(fp)
        head = next(r)
        data = list(r)
    P = clf.predict_proba(scaler.transform(pool(cv.transform([d[1] + " " + d[2] for d in data]))))
    best = P.argmax(axis=1)
    with open(out_csv, "w", newline="", encoding="utf-8") as fp:
        w = csv.writer(fp, lineterminator="\r\n")
        w.writerow(head + ["predicted", "confidence", "route"])
        for d, k, p in zip(data, best, P):
            w.writerow(d + [labels[k], "%.4f" % p[k], labels[k]])
    print(f"{time.perf_counter() - t0:.3f} {time.process_time() - c0:.3f} {len(data)}")


if __name__ == "__main__":
    if sys.argv[1] == "make":
        make(sys.argv[2], int(sys.argv[3]))
    else:
        reference(sys.argv[2], sys.argv[3], sys.argv[4])
