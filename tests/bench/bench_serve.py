"""bench_serve.py -- helpers of tests/bench/bench_serve.sh (run on demand,
never in CI).

  bench_serve.py bodies OUT N      N single-ticket request bodies, one JSON
                                   object a line, from the invented demo
                                   inbox (datasets/inbox/unlabelled.csv)
  bench_serve.py reference PORT    the reference service on 127.0.0.1:PORT

The reference is the same job written the plain way with Python's standard
library and scikit-learn: http.server's ThreadingHTTPServer (HTTP/1.1, so
connections are kept alive as with vecsift), POST /route with a JSON
ticket {"subject", "body"}, answered with {"predicted", "confidence",
"route"}.  Its model reproduces the features of the vecsift model
bench_serve.sh trains (--pool bow: tf-idf over unigrams and bigrams with
smoothed idf, each row scaled to unit length, then multinomial logistic
regression with C = 1), fitted on datasets/inbox/labelled.csv with
scikit-learn's TfidfVectorizer and LogisticRegression.  Fitting is not
timed; the service prints "ready" when it listens.
"""
import csv
import json
import os
import sys
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

INBOX = os.path.join(os.environ.get("SRCDIR", "."), "datasets", "inbox")


def bodies(out, n):
    rows = list(csv.DictReader(open(os.path.join(INBOX, "unlabelled.csv"), newline="", encoding="utf-8")))
    with open(out, "w", encoding="utf-8") as fp:
        for i in range(n):
            r = rows[i % len(rows)]
            fp.write(json.dumps({"id": r["ticket_id"], "subject": r["subject"], "body": r["body"]}) + "\n")


def reference(port):
    from sklearn.feature_extraction.text import TfidfVectorizer
    from sklearn.linear_model import LogisticRegression
    lab = list(csv.DictReader(open(os.path.join(INBOX, "labelled.csv"), newline="", encoding="utf-8")))
    vec = TfidfVectorizer(ngram_range=(1, 2), smooth_idf=True, norm="l2")
    X = vec.fit_transform([r["subject"] + " " + r["body"] for r in lab])
    clf = LogisticRegression(C=1.0, max_iter=1000).fit(X, [r["queue"] for r in lab])
    labels = clf.classes_

    class Handler(BaseHTTPRequestHandler):
        protocol_version = "HTTP/1.1"
        # Headers and body go out in two writes; with Nagle's algorithm on,
        # the second waits for the client's delayed ACK (about 40 ms on
        # Linux), which would measure TCP rather than the service.
        disable_nagle_algorithm = True

        def do_POST(self):
            n = int(self.headers.get("Content-Length", 0))
            t = json.loads(self.rfile.read(n))
            p = clf.predict_proba(vec.transform([t["subject"] + " " + t["body"]]))[0]
            k = int(p.argmax())
            out = json.dumps({"predicted": labels[k], "confidence": round(float(p[k]), 4),
                              "route": labels[k]}).encode()
            self.send_response(200)
            self.send_header("Content-Type", "application/json")
            self.send_header("Content-Length", str(len(out)))
            self.end_headers()
            self.wfile.write(out)

        def log_message(self, *args):
            pass

    srv = ThreadingHTTPServer(("127.0.0.1", port), Handler)
    print("ready", flush=True)
    try:
        srv.serve_forever()
    except KeyboardInterrupt:
        pass
    srv.server_close()


if __name__ == "__main__":
    if sys.argv[1] == "bodies":
        bodies(sys.argv[2], int(sys.argv[3]))
    else:
        reference(int(sys.argv[2]))
