#!/usr/bin/env python3
# tests/ext/demo_data_check.py -- checks the invented demo inbox in
# datasets/inbox/ against its generator and against outside references.
#
# What is compared, and the source of each expectation:
#   - regenerating into a temporary directory gives byte-identical files, so
#     generate.py stays the single source of truth (common practice);
#   - every file parses with Python's standard csv module (the reference
#     reader here) with one field count per file, CRLF row ends and quoted
#     fields as RFC 4180 (sections 2.1-2.7) describes;
#   - e-mail addresses and URLs use only the RFC 2606 example domains;
#   - counts, queue imbalance, unique and continuing ticket ids, repeat
#     customers, and the wrong-label answer file (the task's specification);
#   - README.md's per-queue table agrees with labelled.csv;
#   - optionally, when scikit-learn (Debian python3-sklearn) is importable:
#     TF-IDF + logistic regression, 5-fold stratified cross-validation, gives
#     a macro-F1 above 0.6 and below 0.97 (the data must be learnable but not
#     trivially separable; the bounds are the task's, scikit-learn is the
#     reference implementation).
# Prints each check; ends with "N passed, N failed"; exits 1 on any failure.

import collections
import csv
import filecmp
import os
import re
import subprocess
import sys
import tempfile

SRC = os.environ.get('SRCDIR', os.getcwd())
INBOX = os.path.join(SRC, 'datasets', 'inbox')
FILES = ['labelled.csv', 'wrong_labels.csv', 'unlabelled.csv', 'incoming.csv']
HEAD = ['ticket_id', 'customer', 'subject', 'body']
HEADERS = {
    'labelled.csv': HEAD + ['queue'],
    'wrong_labels.csv': ['ticket_id', 'given_queue', 'true_queue'],
    'unlabelled.csv': HEAD,
    'incoming.csv': HEAD,
}

passed = 0
failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
        print('ok    ' + what)
    else:
        failed += 1
        print('FAIL  ' + what)
    return ok


def read_rows(path):
    with open(path, encoding='utf-8', newline='') as f:
        return list(csv.reader(f, strict=True))


def main():
    # 1. The generator reproduces every committed file byte for byte, also
    #    under a different hash seed (no dependence on set/dict order).
    with tempfile.TemporaryDirectory() as tmp:
        env = dict(os.environ, PYTHONHASHSEED='12345')
        r = subprocess.run([sys.executable,
                            os.path.join(INBOX, 'generate.py'), '--out', tmp],
                           env=env, capture_output=True, text=True)
        check(r.returncode == 0, 'generate.py runs (exit %d)' % r.returncode)
        for name in FILES:
            a = os.path.join(INBOX, name)
            b = os.path.join(tmp, name)
            check(os.path.exists(b) and filecmp.cmp(a, b, shallow=False),
                  '%s is byte-identical to a fresh regeneration' % name)

    # 2. RFC 4180 shape, read with the standard csv module.
    data = {}
    for name in FILES:
        path = os.path.join(INBOX, name)
        rows = read_rows(path)
        data[name] = rows
        check(rows and rows[0] == HEADERS[name],
              '%s header is %s' % (name, ','.join(HEADERS[name])))
        widths = sorted(set(len(r) for r in rows))
        check(widths == [len(HEADERS[name])],
              '%s: every row has %d fields (found %s)'
              % (name, len(HEADERS[name]), widths))
        with open(path, 'rb') as f:
            raw = f.read()
        first = raw.split(b'\n', 1)[0]
        check(first.endswith(b'\r') and raw.endswith(b'\r\n'),
              '%s rows end with CRLF (RFC 4180 2.1)' % name)

    # Later checks look only at rows of the right width (bad ones failed above).
    def body(name):
        return [r for r in data[name][1:] if len(r) == len(HEADERS[name])]
    lab = body('labelled.csv')
    unl = body('unlabelled.csv')
    inc = body('incoming.csv')
    wrong = body('wrong_labels.csv')
    texts = [c for r in lab + unl + inc for c in (r[2], r[3])]

    # Quoting is exercised: fields holding comma, quote and line break.
    for ch, label in ((',', 'comma'), ('"', 'double quote'),
                      ('\n', 'line break')):
        n = sum(1 for t in texts if ch in t)
        check(n > 0, 'some fields hold a %s (%d), so RFC 4180 quoting '
              'is needed' % (label, n))
    n = sum(1 for t in texts if any(ord(c) > 127 for c in t))
    check(n > 0, 'some fields hold non-ASCII text (%d)' % n)

    # 3. Only RFC 2606 example domains in addresses and URLs.
    domains = []
    for t in texts:
        domains += re.findall(r'[\w.+-]+@([\w.-]+\w)', t)
        domains += re.findall(r'https?://([\w.-]+\w)', t)
    bad = sorted(set(d for d in domains
                     if not re.fullmatch(r'([\w-]+\.)*example\.(com|org|net)',
                                         d.lower())))
    check(len(domains) > 50 and not bad,
          '%d e-mail/URL domains, all RFC 2606 example domains%s'
          % (len(domains), (' (bad: %s)' % bad[:5]) if bad else ''))

    # 4. Counts and imbalance.
    check(350 <= len(lab) <= 450, 'labelled.csv has %d tickets (350-450)'
          % len(lab))
    check(len(unl) == 5000, 'unlabelled.csv has %d tickets (5000)' % len(unl))
    check(len(inc) == 500, 'incoming.csv has %d tickets (500)' % len(inc))
    counts = collections.Counter(r[4] for r in lab)
    sizes = sorted(counts.values())
    check(len(counts) == 7, '7 queues (%s)' % ', '.join(sorted(counts)))
    check(15 <= sizes[0] <= 30, 'smallest queue has %d tickets (15-30)'
          % sizes[0])
    check(90 <= sizes[-1] <= 130, 'largest queue has %d tickets (90-130)'
          % sizes[-1])
    check(all(re.fullmatch(r'[a-z]+(-[a-z]+)*', q) for q in counts),
          'queue names are short lowercase words')

    ids = [r[0] for r in lab + unl + inc]
    check(len(set(ids)) == len(ids), 'ticket ids are unique over all files')
    nums = [int(re.sub(r'\D', '', i)) for i in ids]
    check(nums == list(range(nums[0], nums[0] + len(nums))),
          'ticket numbering runs on from labelled to unlabelled to incoming')
    per_cust = collections.Counter(r[1] for r in lab)
    multi = sum(1 for c in per_cust.values() if c > 1)
    check(multi >= 20 and max(per_cust.values()) <= 20,
          '%d customers have several labelled tickets (most: %d)'
          % (multi, max(per_cust.values())))

    # 5. The wrong-label answer file.
    by_id = {r[0]: r[4] for r in lab}
    check(8 <= len(wrong) <= 12, 'wrong_labels.csv lists %d tickets (8-12)'
          % len(wrong))
    ok = all(w[0] in by_id and by_id[w[0]] == w[1] and w[1] != w[2]
             and w[2] in counts for w in wrong)
    check(ok, 'each wrong label exists in labelled.csv with the given queue, '
          'and its true queue is another known queue')

    # 6. README table agrees with the data.
    with open(os.path.join(INBOX, 'README.md'), encoding='utf-8') as f:
        readme = f.read()
    table = dict((m.group(1), int(m.group(2))) for m in re.finditer(
        r'^\| *`?([a-z-]+)`? *\| *(\d+) *\|', readme, re.M))
    check(all(table.get(q) == n for q, n in counts.items()),
          'README.md per-queue counts match labelled.csv')
    check('INVENTED' in readme, 'README.md carries the INVENTED notice')

    # 7. Optional: reference classifier from scikit-learn.
    try:
        from sklearn.feature_extraction.text import TfidfVectorizer
        from sklearn.linear_model import LogisticRegression
        from sklearn.metrics import f1_score
        from sklearn.model_selection import (StratifiedKFold,
                                             cross_val_predict)
        from sklearn.pipeline import make_pipeline
    except ImportError:
        print('skip  scikit-learn not importable: macro-F1 bounds not checked')
    else:
        x = [r[2] + ' ' + r[3] for r in lab]
        y = [r[4] for r in lab]
        pipe = make_pipeline(TfidfVectorizer(sublinear_tf=True),
                             LogisticRegression(max_iter=2000))
        pred = cross_val_predict(pipe, x, y, cv=StratifiedKFold(
            5, shuffle=True, random_state=0))
        f1 = f1_score(y, pred, average='macro')
        check(0.6 < f1 < 0.97, 'scikit-learn TF-IDF + logistic regression, '
              '5-fold stratified macro-F1 = %.3f (0.6 < F1 < 0.97)' % f1)

    print('%d passed, %d failed' % (passed, failed))
    return 1 if failed else 0


if __name__ == '__main__':
    sys.exit(main())
