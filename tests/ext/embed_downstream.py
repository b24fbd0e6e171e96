#!/usr/bin/python3
"""embed_downstream.py -- do learned vectors help the classifier?

Data: the bundled, invented support inbox (datasets/inbox/: unlabelled.csv
to learn from, labelled.csv to classify; see its README).  Learn vectors
with `vecsift vectors learn` on the unlabelled tickets, then cross-validate
`vecsift evaluate --pool tfidf` with them, against a control: the same
vocabulary and dimensions but a learning rate of 1e-9, i.e. the random
starting vectors (common practice for an ablation: only the learning
differs).  Check: learned macro-F1 exceeds the control's by at least 0.1.
Also prints the sparse bag of words (--pool bow) for context.  Figures
measured when written: learned 0.81, control 0.61, bow 0.75 (--repeats 1).
"""
import json
import os
import subprocess
import sys
import tempfile

MARGIN = 0.1


def main():
    vecsift = os.environ["VECSIFT"]
    srcdir = os.environ.get("SRCDIR", ".")
    inbox = os.path.join(srcdir, "datasets", "inbox")
    text = ["--text-col", "subject", "--text-col", "body"]
    scores = {}
    with tempfile.TemporaryDirectory() as tmp:
        for name, extra in (("learned", []), ("control", ["--learning-rate", "1e-9", "--epochs", "1"])):
            vecs = os.path.join(tmp, name + ".vecs")
            subprocess.run([vecsift, "vectors", "learn", os.path.join(inbox, "unlabelled.csv"), *text,
                            "-o", vecs, "--threads", "1", "--seed", "1", "--quiet", *extra], check=True)
            scores[name] = evaluate(vecsift, inbox, text, tmp, ["--vectors", vecs, "--pool", "tfidf"])
        scores["bow"] = evaluate(vecsift, inbox, text, tmp, ["--pool", "bow"])
    print("inbox (invented data), logreg, 5 folds x 1 repeat, macro-F1 of pooled out-of-fold predictions:")
    for k, label in (("learned", "tfidf-weighted learned vectors"),
                     ("control", "tfidf-weighted untrained vectors (control)"),
                     ("bow", "sparse tf-idf bag of words")):
        print(f"  {label:44s} {scores[k]:.3f}")
    if scores["learned"] - scores["control"] >= MARGIN:
        print("1 passed, 0 failed")
        return 0
    print(f"FAIL: learned vectors beat the control by less than {MARGIN}")
    print("0 passed, 1 failed")
    return 1


def evaluate(vecsift, inbox, text, tmp, extra):
    out = os.path.join(tmp, "ev.json")
    subprocess.run([vecsift, "evaluate", os.path.join(inbox, "labelled.csv"), *text,
                    "--label-col", "queue", "--repeats", "1", "--seed", "1", "--quiet",
                    "--json", out, *extra], check=True, stdout=subprocess.DEVNULL)
    with open(out, encoding="utf-8") as fp:
        return json.load(fp)["pooled"]["macro_f1"]


if __name__ == "__main__":
    sys.exit(main())
