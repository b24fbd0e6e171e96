"""serve_check.py -- `vecsift serve` over HTTP on a loopback port: its
answers equal `vecsift predict`'s rows, bad requests get the documented 4xx
and JSON error, SIGHUP swaps models under load and refuses a damaged one,
and no ticket text reaches the log.

Outside references: HTTP/1.1 status codes and the Allow header as RFC 9110
defines them (sections 15.5.5 404, 15.5.6 405 with Allow, 15.5.14 413,
15.5.16 415, 15.5.21 422, 15.5.1 400); JSON as RFC 8259 defines it, read
with Python's json module; the model fingerprint is FNV-1a 64 (Fowler, Noll
and Vo; offset basis 0xcbf29ce484222325, prime 0x100000001b3, as in
draft-eastlake-fnv) of the file's bytes, computed here independently.
Data: the invented demo inbox (datasets/inbox): every ticket of
incoming.csv.  Every loop is bounded; the service runs on 127.0.0.1 only and
is always stopped (SIGTERM, then SIGKILL after a deadline).
"""
import csv
import http.client
import json
import os
import re
import signal
import socket
import subprocess
import sys
import tempfile
import threading
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from tally import check, finish  # noqa: E402

VECSIFT = os.environ.get("VECSIFT", "build/vecsift")
INBOX = "datasets/inbox"
TXT = ["--text-col", "subject", "--text-col", "body", "--label-col", "queue"]
OPTS = ["--top", "3", "--explain", "3"]
# a word no ticket holds, sent in every request: must never reach the log
MARKER = "zqxmarkerwordzq"


def sh(*args):
    r = subprocess.run([VECSIFT, *args], capture_output=True, text=True)
    if r.returncode != 0:
        sys.exit("setup failed: %s\n%s" % (" ".join(args), r.stderr))
    return r


def fnv1a64(path):
    h = 0xcbf29ce484222325
    for b in open(path, "rb").read():
        h = ((h ^ b) * 0x100000001b3) & 0xFFFFFFFFFFFFFFFF
    return "%016x" % h


def free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def predict_rows(model, d):
    out = os.path.join(d, "pred.csv")
    sh("predict", model, INBOX + "/incoming.csv", *OPTS, "-o", out, "-q")
    return list(csv.DictReader(open(out, newline="", encoding="utf-8")))


class Service:
    """A running `vecsift serve`; stop() always ends it."""

    def __init__(self, model, d, *extra):
        self.port = free_port()
        self.errpath = os.path.join(d, "serve-%d.err" % self.port)
        self.err = open(self.errpath, "w")
        self.p = subprocess.Popen([VECSIFT, "serve", model, "--listen", "127.0.0.1:%d" % self.port,
                                   "--threads", "2", *OPTS, *extra], stdout=subprocess.DEVNULL, stderr=self.err)
        deadline = time.time() + 60
        while time.time() < deadline and self.p.poll() is None:
            if "listening on" in self.log():
                break
            time.sleep(0.05)
        if "listening on" not in self.log():
            self.stop()
            sys.exit("the service did not start:\n" + self.log())

    def log(self):
        return open(self.errpath, encoding="utf-8", errors="replace").read()

    def request(self, method, path, body=None, headers=None, timeout=30):
        c = http.client.HTTPConnection("127.0.0.1", self.port, timeout=timeout)
        try:
            c.request(method, path, body=body, headers=headers or {})
            r = c.getresponse()
            return r.status, dict(r.getheaders()), r.read()
        finally:
            c.close()

    def post(self, obj):
        return self.request("POST", "/route", json.dumps(obj).encode(), {"Content-Type": "application/json"})

    def health(self):
        st, _, b = self.request("GET", "/health")
        return json.loads(b) if st == 200 else None

    def stop(self):
        if self.p.poll() is None:
            self.p.send_signal(signal.SIGTERM)
            try:
                self.p.wait(timeout=60)
            except subprocess.TimeoutExpired:
                self.p.kill()
                self.p.wait()
        self.err.close()
        return self.p.returncode


def ticket(row, tid=None):
    t = {"subject": row["subject"], "body": row["body"]}
    if tid is not None:
        t["id"] = tid
    return t


def answer_matches(ans, row):
    """Every predict column equal as text: numbers compared as the digits
    the service sent (json parse_float=str keeps them)."""
    want = {k: row[k] for k in ("predicted", "confidence", "route", "label_2", "confidence_2",
                                "label_3", "confidence_3", "evidence")}
    got = {k: ans.get(k) for k in want}
    return got == want, got, want


def routing_equals_predict(d, model, rows):
    s = Service(model, d, "--log-requests")
    try:
        h = s.health()
        check(h is not None and h["model"]["fingerprint"] == fnv1a64(model),
              "health: fingerprint is FNV-1a 64 of the model file (%s)" % (h and h["model"]["fingerprint"]))
        labels = json.load(open(model))["labels"]
        check(h["model"]["labels"] == labels, "health: the model's labels %s" % h["model"]["labels"])
        check(h["model"]["text_fields"] == ["subject", "body"], "health: the text fields subject, body")
        bad = 0
        for i, row in enumerate(rows):
            st, _, b = s.post(ticket(row, row["ticket_id"]))
            ans = json.loads(b, parse_float=str) if st == 200 else {}
            same, got, want = answer_matches(ans, row)
            if st != 200 or not same or ans.get("id") != row["ticket_id"]:
                if bad < 3:
                    print("  ticket %s: status %d, got %s, predict %s" % (row["ticket_id"], st, got, want))
                bad += 1
        check(bad == 0, "one ticket a request: %d tickets, %d differ from predict's rows" % (len(rows), bad))
        bad = 0
        for k in range(0, len(rows), 50):
            part = rows[k:k + 50]
            st, _, b = s.post({"tickets": [ticket(r, i + k) for i, r in enumerate(part)]})
            res = json.loads(b, parse_float=str)["results"] if st == 200 else []
            bad += len(part) - sum(1 for i, (a, r) in enumerate(zip(res, part))
                                   if answer_matches(a, r)[0] and a.get("id") == i + k)
        check(bad == 0, "batches of 50: %d differ from predict's rows" % bad)
        st, _, b = s.post(ticket({"subject": MARKER, "body": MARKER + " refund"}))
        check(st == 200, "a ticket of unknown words is answered (%d)" % st)
    finally:
        rc = s.stop()
    log = s.log()
    check(rc == 0, "SIGTERM stops the service with status 0 (%s)" % rc)
    check(MARKER not in log and rows[0]["body"][:30] not in log,
          "the log (with --log-requests) holds no ticket text")
    check(len(re.findall(r"POST /route 200", log)) == len(rows) + (len(rows) + 49) // 50 + 1,
          "--log-requests: one line per request")


def catalogue(d, model):
    s = Service(model, d, "--max-body", "4096", "--max-batch", "5")
    J = {"Content-Type": "application/json"}
    good = {"subject": "Refund", "body": "where is my refund"}
    deep = ("[" * 2000 + "]" * 2000).encode()  # cJSON refuses nesting past 1000
    cases = [
        # name, method, path, headers, body, status, message pattern
        ("unknown path", "GET", "/nope", {}, None, 404, r"no such endpoint"),
        ("GET on /route", "GET", "/route", {}, None, 405, r"takes POST"),
        ("POST on /health", "POST", "/health", J, b"{}", 405, r"takes GET"),
        ("no content type", "POST", "/route", {}, json.dumps(good).encode(), 415, r"application/json"),
        ("text/plain", "POST", "/route", {"Content-Type": "text/plain"}, b"hello", 415, r"application/json"),
        ("application/jsonx", "POST", "/route", {"Content-Type": "application/jsonx"}, b"{}", 415, r"json"),
        ("empty body", "POST", "/route", J, b"", 400, r"not valid JSON"),
        ("malformed JSON", "POST", "/route", J, b'{"subject": "a",\n "body": ', 400, r"not valid JSON \(line 2\)"),
        ("trailing bytes", "POST", "/route", J, json.dumps(good).encode() + b" x", 400, r"not valid JSON"),
        ("NUL byte", "POST", "/route", J, b'{"subject": "a\x00", "body": "b"}', 400, r"not valid JSON"),
        ("nesting 2000 deep", "POST", "/route", J, deep, 400, r"not valid JSON"),
        ("an array", "POST", "/route", J, b"[1, 2]", 422, r"not a JSON object"),
        ("a string", "POST", "/route", J, b'"refund"', 422, r"not a JSON object"),
        ("missing field", "POST", "/route", J, b'{"subject": "a"}', 422, r"lacks the field 'body'"),
        ("unknown field", "POST", "/route", J, b'{"subject": "a", "body": "b", "queue": "x"}', 422,
         r"unknown field 'queue'"),
        ("number as text", "POST", "/route", J, b'{"subject": "a", "body": 3}', 422, r"'body' that is not a string"),
        ("id an object", "POST", "/route", J, b'{"id": {}, "subject": "a", "body": "b"}', 422, r"'id'"),
        ("invalid UTF-8", "POST", "/route", J, b'{"subject": "a\xff", "body": "b"}', 422, r"not valid UTF-8"),
        ("empty batch", "POST", "/route", J, b'{"tickets": []}', 422, r"'tickets' is empty"),
        ("batch with more", "POST", "/route", J, b'{"tickets": [{"subject": "a", "body": "b"}], "x": 1}', 422,
         r"only the field 'tickets'"),
        ("bad ticket in batch", "POST", "/route", J,
         json.dumps({"tickets": [good, good, {"subject": "a"}]}).encode(), 422, r"ticket 3 lacks the field 'body'"),
        ("batch over --max-batch", "POST", "/route", J, json.dumps({"tickets": [good] * 6}).encode(), 413,
         r"6 tickets, more than the limit of 5"),
        ("body over --max-body", "POST", "/route", J,
         json.dumps({"subject": "a", "body": "b" * 5000}).encode(), 413, r"more than the limit of 4096"),
    ]
    try:
        for name, method, path, headers, body, status, pat in cases:
            try:
                st, hd, b = s.request(method, path, body, headers)
                e = json.loads(b)["error"]
                ok = st == status and e["status"] == status and re.search(pat, e["message"]) is not None
                if status == 405:
                    ok = ok and "Allow" in hd
                ok = ok and hd.get("Content-Type") == "application/json"
                msg = e["message"]
            except (OSError, ValueError, KeyError, TypeError, http.client.HTTPException) as x:
                ok, st, msg = False, -1, repr(x)
            check(ok, "%-24s -> %d %s" % (name, st, msg))
        # a body sent in chunks, without a declared length, over the limit
        c = socket.create_connection(("127.0.0.1", s.port), timeout=30)
        chunk = b"b" * 1000
        req = (b"POST /route HTTP/1.1\r\nHost: x\r\nContent-Type: application/json\r\n"
               b"Transfer-Encoding: chunked\r\nConnection: close\r\n\r\n"
               + (b"%x\r\n" % len(chunk) + chunk + b"\r\n") * 6 + b"0\r\n\r\n")
        c.sendall(req)
        data = b""
        while True:
            got = c.recv(65536)
            if not got:
                break
            data += got
        c.close()
        check(data.startswith(b"HTTP/1.1 413") and b"--max-body" in data, "chunked body over --max-body -> 413")
        st, _, b = s.post(good)
        check(st == 200, "after the catalogue a good ticket is still answered (%d)" % st)
        h = s.health()
        check(h is not None and h["answered"]["refused"] == len(cases) + 1,
              "health counts %s refused requests" % (h and h["answered"]["refused"]))
    finally:
        rc = s.stop()
    check(rc == 0, "the service never crashed and stopped cleanly (%s)" % rc)


def reload_under_load(d, model_a, model_b, rows_a, rows_b):
    live = os.path.join(d, "live.json")
    open(live, "wb").write(open(model_a, "rb").read())
    s = Service(live, d)
    fp_a, fp_b = fnv1a64(model_a), fnv1a64(model_b)
    stop = threading.Event()
    results = []   # (index, answer or None)
    batches = []   # (indices, answers or None)
    lock = threading.Lock()

    def load(k):
        n = 0
        while not stop.is_set() and n < 20000:
            i = (k * 7919 + n) % len(rows_a)
            n += 1
            try:
                if n % 10 == 0:
                    # a batch of 40: one model answers all of it
                    idx = [(i + q) % len(rows_a) for q in range(40)]
                    st, _, b = s.post({"tickets": [ticket(rows_a[q]) for q in idx]})
                    res = json.loads(b, parse_float=str)["results"] if st == 200 else None
                    with lock:
                        batches.append((idx, res))
                    continue
                st, _, b = s.post(ticket(rows_a[i]))
                ans = json.loads(b, parse_float=str) if st == 200 else None
            except (OSError, ValueError, KeyError, http.client.HTTPException):
                ans = None
            with lock:
                results.append((i, ans))
    th = [threading.Thread(target=load, args=(k,)) for k in range(2)]
    try:
        for t in th:
            t.start()
        time.sleep(0.5)
        tmp = live + ".new"
        open(tmp, "wb").write(open(model_b, "rb").read())
        os.rename(tmp, live)
        with lock:
            before = len(results)
        s.p.send_signal(signal.SIGHUP)
        deadline, h = time.time() + 60, None
        while time.time() < deadline:
            h = s.health()
            if h and h["model"]["fingerprint"] == fp_b:
                break
            time.sleep(0.05)
        check(h and h["model"]["fingerprint"] == fp_b and h["reloads"]["done"] == 1,
              "SIGHUP under load: the new model's fingerprint %s is served" % fp_b)
        with lock:
            mark = len(results)
        time.sleep(0.5)
        # a damaged file: the first half of model B
        raw = open(model_b, "rb").read()
        open(tmp, "wb").write(raw[: len(raw) // 2])
        os.rename(tmp, live)
        s.p.send_signal(signal.SIGHUP)
        deadline = time.time() + 60
        while time.time() < deadline:
            h = s.health()
            if h and h["reloads"]["refused"] == 1:
                break
            time.sleep(0.05)
        check(h and h["reloads"]["refused"] == 1 and h["model"]["fingerprint"] == fp_b,
              "a damaged model file is refused; fingerprint %s still served" % (h and h["model"]["fingerprint"]))
        time.sleep(0.5)
    finally:
        stop.set()
        for t in th:
            t.join(timeout=120)
        rc = s.stop()
    failed = sum(1 for _, a in results if a is None)
    check(len(results) > 50 and failed == 0,
          "%d requests during two reloads, %d failed" % (len(results), failed))
    odd = sum(1 for i, a in results if a is not None
              and not answer_matches(a, rows_a[i])[0] and not answer_matches(a, rows_b[i])[0])
    check(odd == 0, "every answer is model A's or model B's predict row (%d are neither)" % odd)
    late = sum(1 for i, a in results[mark:] if a is not None and not answer_matches(a, rows_b[i])[0])
    check(late == 0, "%d answers after the swap was seen, all model B's (%d differ)" % (len(results) - mark, late))
    early = sum(1 for i, a in results[:before] if a is not None and not answer_matches(a, rows_a[i])[0])
    check(early == 0, "%d answers before SIGHUP, all model A's (%d differ)" % (before, early))
    whole = sum(1 for idx, res in batches if res is not None and len(res) == len(idx)
                and (all(answer_matches(a, rows_a[q])[0] for a, q in zip(res, idx))
                     or all(answer_matches(a, rows_b[q])[0] for a, q in zip(res, idx))))
    check(len(batches) > 5 and whole == len(batches),
          "%d batches of 40 during the reloads: %d answered whole by one model" % (len(batches), whole))
    log = s.log()
    check(re.search(r"reload refused: .*live\.json", log) is not None and "still serving fingerprint " + fp_b in log,
          "the refusal is logged with the file and the fingerprint still served")
    check(rc == 0, "stopped cleanly after the reloads (%s)" % rc)


def usage_errors(d, model):
    for args, pat in [((), r"one model file"), ((model, "--listen", "127.0.0.1"), r"HOST:PORT"),
                      ((model, "--listen", "localhost:80"), r"numeric"),
                      ((model, "--listen", "127.0.0.1:70000"), r"port"),
                      ((model, "--max-batch", "0"), r"max-batch")]:
        r = subprocess.run([VECSIFT, "serve", *args], capture_output=True, text=True, timeout=60)
        check(r.returncode == 2 and re.search(pat, r.stderr), "serve %s -> 2, %s" % (" ".join(args[1:]),
                                                                                   r.stderr.strip()[:80]))
    bad = os.path.join(d, "bad.json")
    open(bad, "w").write("{\n")
    r = subprocess.run([VECSIFT, "serve", bad, "--listen", "127.0.0.1:0"], capture_output=True, text=True,
                       timeout=60)
    check(r.returncode == 2 and re.search(r"bad\.json:\d+: ", r.stderr) and "listening" not in r.stderr,
          "a damaged model at start: 2, %s" % r.stderr.strip().splitlines()[0])


def main():
    with tempfile.TemporaryDirectory() as d:
        model_a = os.path.join(d, "a.json")
        sh("train", INBOX + "/labelled.csv", *TXT, "--pool", "bow", "-o", model_a, "-q")
        # model B: tf-idf pooled vectors, 16 seeded random numbers per word
        # (nothing learned; only the answers must differ from model A's)
        words = set()
        for r in csv.DictReader(open(INBOX + "/labelled.csv", newline="", encoding="utf-8")):
            words.update(re.findall(r"[a-z]+", (r["subject"] + " " + r["body"]).lower()))
        rng = np.random.default_rng(15)
        with open(os.path.join(d, "v.txt"), "w") as fp:
            for w in sorted(words):
                fp.write(w + " " + " ".join("%.3f" % x for x in rng.uniform(-1, 1, 16)) + "\n")
        sh("vectors", "pack", os.path.join(d, "v.txt"), "-o", os.path.join(d, "v.vecs"), "-q")
        model_b = os.path.join(d, "b.json")
        sh("train", INBOX + "/labelled.csv", *TXT, "--vectors", os.path.join(d, "v.vecs"), "--pool", "tfidf",
           "-o", model_b, "-q")
        rows_a, rows_b = predict_rows(model_a, d), predict_rows(model_b, d)
        differ = sum(1 for a, b in zip(rows_a, rows_b) if answer_matches(dict(a), b)[0] is False)
        check(differ > 0, "models A and B answer %d of %d tickets differently" % (differ, len(rows_a)))
        routing_equals_predict(d, model_a, rows_a)
        routing_equals_predict(d, model_b, rows_b)
        catalogue(d, model_a)
        reload_under_load(d, model_a, model_b, rows_a, rows_b)
        usage_errors(d, model_a)
    return finish()


if __name__ == "__main__":
    sys.exit(main())
