"""svdvec.py -- word vectors for checks and examples, made with numpy/scipy
(Debian's python3-numpy, python3-scipy), written in the text vector form that
`vecsift vectors pack` reads.

  meaningful: a truncated SVD of the positive pointwise mutual information
      (PPMI) matrix of word co-occurrences within a +-WINDOW word window over
      the given texts, rows U_d * sqrt(S_d): the count-based method of
      Levy and Goldberg (2014), "Neural Word Embedding as Implicit Matrix
      Factorization" (NIPS), in the tradition of latent semantic analysis
      (Deerwester, Dumais, Furnas, Landauer and Harshman 1990, "Indexing by
      Latent Semantic Analysis", JASIS 41(6)); PPMI as in Bullinaria and Levy
      (2007), "Extracting semantic representations from word co-occurrence
      statistics", Behavior Research Methods 39(3).
  random: seeded standard normal numbers for the same words and size, which
      carry no meaning.

Tokens: lower-cased runs of letters and digits (re \\w+ without '_'), a
simplification of vecsift's tokeniser; words it splits differently simply
have no vector.

As a module: texts_from_csv, tokens, ppmi_svd, random_like, write_text.
As a script:
  svdvec.py OUT.txt CSV TEXTCOL[,TEXTCOL...] [--dim D] [--window W]
            [--min-count M] [--random SEED]
  svdvec.py --random-like LIKE.txt SEED OUT.txt   random vectors for the
            words and size of the text vector file LIKE.txt
"""
import csv
import re
import sys

import numpy as np
from scipy import sparse
from scipy.sparse import linalg

WORD = re.compile(r"[^\W_]+", re.UNICODE)


def tokens(text):
    return WORD.findall(text.lower())


def texts_from_csv(path, cols):
    with open(path, newline="", encoding="utf-8") as f:
        return [" ".join(row[c] for c in cols) for row in csv.DictReader(f)]


def ppmi_svd(texts, dim=50, window=4, min_count=3, max_words=20000):
    """Vocabulary (list) and vectors (len(vocab), dim) float32."""
    docs = [tokens(t) for t in texts]
    counts = {}
    for d in docs:
        for w in d:
            counts[w] = counts.get(w, 0) + 1
    vocab = sorted((w for w, c in counts.items() if c >= min_count), key=lambda w: (-counts[w], w))[:max_words]
    index = {w: i for i, w in enumerate(vocab)}
    rows, cols = [], []
    for d in docs:
        ids = [index.get(w, -1) for w in d]
        for i, a in enumerate(ids):
            if a < 0:
                continue
            for j in range(max(0, i - window), min(len(ids), i + window + 1)):
                if j != i and ids[j] >= 0:
                    rows.append(a)
                    cols.append(ids[j])
    V = len(vocab)
    M = sparse.coo_matrix((np.ones(len(rows)), (rows, cols)), shape=(V, V)).tocsr()
    M.sum_duplicates()
    total = M.sum()
    rs = np.asarray(M.sum(axis=1)).ravel()
    cs = np.asarray(M.sum(axis=0)).ravel()
    M = M.tocoo()
    pmi = np.log(M.data * total / (rs[M.row] * cs[M.col]))
    keep = pmi > 0
    P = sparse.csr_matrix((pmi[keep], (M.row[keep], M.col[keep])), shape=(V, V))
    k = min(dim, V - 2)
    U, S, _ = linalg.svds(P, k=k, random_state=0)
    order = np.argsort(-S)
    U, S = U[:, order], S[order]
    # svds' signs are arbitrary: fix each column's sign so runs agree
    U *= np.where(U[np.abs(U).argmax(axis=0), range(k)] < 0, -1.0, 1.0)
    return vocab, (U * np.sqrt(S)).astype(np.float32)


def random_like(vocab, dim, seed):
    return np.random.default_rng(seed).standard_normal((len(vocab), dim)).astype(np.float32)


def write_text(path, vocab, vecs):
    with open(path, "w", encoding="utf-8") as f:
        f.write(f"{len(vocab)} {vecs.shape[1]}\n")
        for w, v in zip(vocab, vecs):
            f.write(w + " " + " ".join(f"{x:.6g}" for x in v) + "\n")


def main(argv):
    if argv[0] == "--random-like":
        with open(argv[1], encoding="utf-8") as f:
            count, dim = map(int, f.readline().split())
            vocab = [line.split(" ", 1)[0] for line in f]
        write_text(argv[3], vocab, random_like(vocab, dim, int(argv[2])))
        return
    out, path, cols = argv[0], argv[1], argv[2].split(",")
    opts = dict(zip(argv[3::2], argv[4::2]))
    dim = int(opts.get("--dim", 50))
    vocab, vecs = ppmi_svd(texts_from_csv(path, cols), dim=dim, window=int(opts.get("--window", 4)),
                           min_count=int(opts.get("--min-count", 3)))
    if "--random" in opts:
        vecs = random_like(vocab, vecs.shape[1], int(opts["--random"]))
    write_text(out, vocab, vecs)
    print(f"{out}: {len(vocab)} words x {vecs.shape[1]}", file=sys.stderr)


if __name__ == "__main__":
    main(sys.argv[1:])
