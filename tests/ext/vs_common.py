"""vs_common.py -- what features_vs_sklearn.py and classifiers_vs_sklearn.py
share: where the binaries are, running them, reading a features CSV, and
the pass/fail tally that ends with "N passed, N failed"."""
import csv
import os
import subprocess

import numpy as np

VECSIFT = os.environ.get("VECSIFT", "build/vecsift")
BUILD = os.environ.get("BUILDDIR", "build")
SRC = os.environ.get("SRCDIR", ".")


def tool(name):
    return os.path.join(BUILD, "tests", name)


def run(*args):
    return subprocess.run(list(args), check=True, capture_output=True, text=True).stdout


def read_features(path):
    """Columns after row and label, the labels, and the numbers (N x D)."""
    with open(path, newline="", encoding="utf-8") as fp:
        r = csv.reader(fp)
        head = next(r)
        labels, rows = [], []
        for row in r:
            labels.append(row[1])
            rows.append([float(x) for x in row[2:]])
    return head[2:], labels, np.array(rows)


def identity(x):
    return x


class Tally:
    def __init__(self):
        self.passed = self.failed = 0

    def check(self, name, ok, detail):
        if ok:
            self.passed += 1
            print(f"ok   {name}: {detail}")
        else:
            self.failed += 1
            print(f"FAIL {name}: {detail}")

    def finish(self):
        print(f"{self.passed} passed, {self.failed} failed")
        return 1 if self.failed else 0
