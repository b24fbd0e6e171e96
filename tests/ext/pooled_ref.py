"""pooled_ref.py -- the pooled word-vector rows of features.h rebuilt with
numpy and scikit-learn, for the checks that compare vecsift's features with
them (features_vs_sklearn.py, combined_vs_sklearn.py).

  mean   average of the vectors of the token occurrences that have one
  tfidf  sum_w tfidf(w) v_w / sum_w tfidf(w) over distinct words with a
         vector, tfidf = tf * idf from TfidfVectorizer(norm=None, unigrams,
         smooth_idf=True)
  sif    Arora, Liang and Ma (2017): tf * a/(a + p(w)) weights over the
         occurrences, then the first singular vector of the rows removed
         (numpy.linalg.svd)
"""
import os

import numpy as np
from sklearn.feature_extraction.text import TfidfVectorizer

from vs_common import VECSIFT, identity, run


def pack_random_vectors(toks, tmp, seed, dim):
    """Seeded random vectors for about 85% of the words of 'toks', each a
    multiple of 1/1024 (exact in float32 and in a short decimal, so the
    packed store and numpy hold the same numbers), packed with `vecsift
    vectors pack` into tmp/v.vecs.  Returns ({word: vector}, path)."""
    words = sorted({t for doc in toks for t in doc})
    rng = np.random.default_rng(seed)
    has = rng.random(len(words)) < 0.85
    V = rng.integers(-2048, 2048, size=(len(words), dim)) / 1024.0
    vec = {}
    txt = os.path.join(tmp, "v.txt")
    with open(txt, "w", encoding="utf-8") as fp:
        for w, h, v in zip(words, has, V):
            if h:
                vec[w] = v
                fp.write(w + " " + " ".join(repr(float(x)) for x in v) + "\n")
    vecs = os.path.join(tmp, "v.vecs")
    run(VECSIFT, "vectors", "pack", txt, "-o", vecs, "-q")
    return vec, vecs


def pooled_rows(toks, vec, dim, a=1e-3):
    """{"mean", "tfidf", "sif"}: (N, dim) unscaled pooled rows of 'toks'
    (every row a training row); a is SIF's a (features.h default 1e-3)."""
    tv = TfidfVectorizer(tokenizer=identity, preprocessor=identity, token_pattern=None, lowercase=False,
                         smooth_idf=True, norm=None)
    tv.fit(toks)
    idf = dict(zip(tv.get_feature_names_out(), tv.idf_))
    total = sum(len(d) for d in toks)
    count = {}
    for d in toks:
        for t in d:
            count[t] = count.get(t, 0) + 1
    n = len(toks)
    want = {p: np.zeros((n, dim)) for p in ("mean", "tfidf", "sif")}
    for i, d in enumerate(toks):
        tf = {}
        for t in d:
            tf[t] = tf.get(t, 0) + 1
        kept = [t for t in tf if t in vec]
        if not kept:
            continue
        occ = sum(tf[t] for t in kept)
        want["mean"][i] = sum(tf[t] * vec[t] for t in kept) / occ
        wt = {t: tf[t] * idf[t] for t in kept}
        want["tfidf"][i] = sum(wt[t] * vec[t] for t in kept) / sum(wt.values())
        want["sif"][i] = sum(tf[t] * a / (a + count[t] / total) * vec[t] for t in kept) / occ
    u = np.linalg.svd(want["sif"], full_matrices=False)[2][0]
    want["sif"] = want["sif"] - np.outer(want["sif"] @ u, u)
    return want
