#!/usr/bin/python3
"""csv_vs_python.py -- our CSV reader and writer against Python's csv module.

Reference: Python's standard-library csv module, csv.reader with the default
("excel") dialect, reading text opened with newline='' as its documentation
asks.  For every file in tests/data/csv/ (plus a generated very long field)
the fields our reader hands out (through the test tool csvdump) must equal
Python's, field for field.  Then our writer's output (csvdump --rewrite) is
read back by Python and must give the same fields again.

Deliberate, documented differences (see src/csv.c) are checked separately:
  - an empty line is not a row for us; Python yields [] for it, so [] rows
    are dropped from Python's parse before comparing (csv.DictReader does
    the same);
  - text after a closing quote ("ab"c) and a quote left open at end of file
    are errors for us naming the line; Python (non-strict) accepts both.

Windows-1252: every byte 0x80-0xFF read with --encoding windows-1252 must
decode as Python's cp1252 codec decodes it (built from the Unicode
Consortium's CP1252.TXT); the five bytes that codec leaves undefined must be
errors for us.  Invalid UTF-8 with --replace must give the same text as
bytes.decode('utf-8', 'replace').

Prints one line per comparison and ends with "N passed, N failed".
"""
import csv
import io
import json
import os
import subprocess
import sys
import tempfile

SRC = os.environ.get("SRCDIR", ".")
BUILD = os.environ.get("BUILDDIR", "build")
TOOL = os.path.join(BUILD, "tests", "csvdump")
DATA = os.path.join(SRC, "tests", "data", "csv")

passed = failed = 0
csv.field_size_limit(sys.maxsize)  # Python caps fields at 128 KiB by default


def check(ok, what, detail=""):
    global passed, failed
    if ok:
        passed += 1
        print("ok   " + what)
    else:
        failed += 1
        print("FAIL " + what + (": " + detail if detail else ""))


def python_rows(data, encoding="utf-8"):
    text = data.decode(encoding)
    if text.startswith("\ufeff"):
        text = text[1:]
    return [row for row in csv.reader(io.StringIO(text, newline="")) if row != []]


def ours(path, *opts):
    p = subprocess.run([TOOL, *opts, path], capture_output=True)
    return p.returncode, p.stdout, p.stderr.decode("utf-8", "replace")


def json_lines(out):
    # split on "\n" only: str.splitlines() would also split at U+0085, U+2028
    return [json.loads(line) for line in out.decode("utf-8", "replace").split("\n") if line]


def our_rows(path, *opts):
    rc, out, err = ours(path, *opts)
    if rc != 0:
        return None, err.strip()
    return json_lines(out), ""


def first_diff(a, b):
    for i, (x, y) in enumerate(zip(a, b)):
        if x != y:
            return "row %d: ours %r, python %r" % (i + 1, x, y)
    return "ours %d rows, python %d rows" % (len(a), len(b))


def compare_file(path, label):
    with open(path, "rb") as f:
        data = f.read()
    want = python_rows(data)
    got, err = our_rows(path)
    if got is None:
        check(False, label + ": read", err)
        return
    nfields = sum(len(r) for r in want)
    check(got == want, "%s: %d rows, %d fields equal to csv.reader" % (label, len(want), nfields),
          first_diff(got, want))
    # round trip: our writer, read back by Python
    rc, out, err = ours(path, "--rewrite")
    if rc != 0:
        check(False, label + ": rewrite", err)
        return
    back = python_rows(out)
    check(back == want, label + ": our writer's output read back by csv.reader", first_diff(back, want))


def main():
    if not os.access(TOOL, os.X_OK):
        print("csvdump not found at " + TOOL)
        return 1
    names = sorted(n for n in os.listdir(DATA) if n.endswith(".csv"))
    for n in names:
        compare_file(os.path.join(DATA, n), n)

    # standard input ("-") reads the same as the file
    path = os.path.join(DATA, "04_embedded_crlf.csv")
    with open(path, "rb") as f:
        data = f.read()
    p = subprocess.run([TOOL, "-"], input=data, capture_output=True)
    check(p.returncode == 0 and json_lines(p.stdout) == python_rows(data),
          "04_embedded_crlf.csv through standard input equal to csv.reader", p.stderr.decode())

    with tempfile.TemporaryDirectory() as tmp:
        # a very long field: 3 MB with quotes, commas and line breaks inside
        chunk = 'word, "quoted" and\r\nmore\n'
        big = chunk * (3 * 1024 * 1024 // len(chunk))
        path = os.path.join(tmp, "long.csv")
        with open(path, "w", newline="") as f:
            csv.writer(f).writerows([["text", "queue"], [big, "billing"], ["short", "access"]])
        compare_file(path, "generated 3 MB field (written by csv.writer)")

        # windows-1252: every high byte against Python's cp1252 codec
        same = 0
        undefined_ok = 0
        for b in range(0x80, 0x100):
            p = os.path.join(tmp, "b%02x.csv" % b)
            with open(p, "wb") as f:
                f.write(b"t\nx" + bytes([b]) + b"y\n")
            got, err = our_rows(p, "--encoding", "windows-1252")
            try:
                want = "x" + bytes([b]).decode("cp1252") + "y"
            except UnicodeDecodeError:
                want = None
            if want is None:
                undefined_ok += got is None and ":2:" in err
            elif got is not None and got[1] == [want]:
                same += 1
            else:
                print("     byte 0x%02x: ours %r, cp1252 %r" % (b, got and got[1], want))
        check(same == 123, "windows-1252: %d of 123 defined bytes 0x80-0xFF equal to Python's cp1252" % same)
        check(undefined_ok == 5, "windows-1252: %d of 5 undefined bytes are errors naming line 2" % undefined_ok)

        # latin-1: every high byte against Python's latin-1 codec
        data = b"t\n" + bytes(range(0x80, 0x100)) + b"\n"
        p = os.path.join(tmp, "latin1.csv")
        with open(p, "wb") as f:
            f.write(data)
        got, err = our_rows(p, "--encoding", "latin-1")
        check(got == python_rows(data, "latin-1"), "latin-1: bytes 0x80-0xFF equal to Python's latin-1 codec", err)

        # replacement of invalid UTF-8, against bytes.decode(errors='replace')
        samples = [b"caf\xe9", b"\xe2\x82", b"\xc0\xaf", b"\xed\xa0\x80", b"\xf4\x90\x80\x80",
                   b"ok\xf0\x9f\x9a", b"\xff\xfe", b"\xe0\x80\x80", b"\xf0\x80\x80\x80a"]
        for s in samples:
            p = os.path.join(tmp, "bad.csv")
            with open(p, "wb") as f:
                f.write(b"t\n" + s + b"\n")
            rc, out, err = ours(p, "--replace")
            want = s.decode("utf-8", "replace")
            got = json_lines(out)[1][0] if rc == 0 else None
            check(got == want and ("replaced %d" % want.count("\ufffd")) in err,
                  "--replace on %r equals decode('utf-8','replace') (%d U+FFFD)" % (s, want.count("\ufffd")),
                  "ours %r" % got)
            rc, out, err = ours(p)
            check(rc == 2 and ":2: invalid UTF-8" in err, "strict UTF-8 refuses %r naming line 2" % s, err)

        # documented differences: errors for us, accepted by Python
        for name, text, line in [("text after closing quote", 'a,b\n1,"ab"c\n', 2),
                                 ("quote open at end of file", 'a,b\n1,2\n3,"open\nmore\n', 3)]:
            p = os.path.join(tmp, "diff.csv")
            with open(p, "w", newline="") as f:
                f.write(text)
            rc, out, err = ours(p)
            py = python_rows(text.encode())
            check(rc == 2 and (":%d:" % line) in err,
                  "%s: ours an error at line %d (Python non-strict accepts it as %r)" % (name, line, py[-1]), err)

    print("%d passed, %d failed" % (passed, failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
