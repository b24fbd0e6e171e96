#!/usr/bin/python3
# gen_vectors.py ROWS DIM OUT [SEED] -- write an invented text vector file
# for the benchmarks: a "ROWS DIM" header line, then tokens w000000 ... with
# DIM numbers each, drawn from a normal distribution (sd 0.4) with a fixed
# seed.  Every number is 9 characters: "-0.dddddd" or "0.ddddddd", like the
# six- and seven-decimal values common vector files carry.  Built with numpy
# (Debian python3-numpy) byte arrays, so 600 MB take seconds, not minutes.
import sys

import numpy as np

rows, dim, out = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3]
seed = int(sys.argv[4]) if len(sys.argv) > 4 else 1
rng = np.random.default_rng(seed)
width = 7 + dim * 10 + 1  # token, (space + 9-character number) * dim, newline
with open(out, "wb") as f:
    f.write(b"%d %d\n" % (rows, dim))
    block = 10000
    for start in range(0, rows, block):
        n = min(block, rows - start)
        x = np.clip(rng.normal(0, 0.4, (n, dim)), -0.999999, 0.9999999)
        neg = x < 0
        # digits: 6 after the point for negatives, 7 for positives
        mag = np.where(neg, np.rint(-x * 1e6) * 10, np.rint(x * 1e7)).astype(np.int64)
        mag = np.minimum(mag, 9999999)
        buf = np.empty((n, width), dtype=np.uint8)
        ids = np.arange(start, start + n)
        buf[:, 0] = ord("w")
        for k in range(6):
            buf[:, 6 - k] = ord("0") + (ids // 10 ** k) % 10
        cols = 7 + np.arange(dim) * 10
        buf[:, cols] = ord(" ")
        buf[:, cols + 1] = np.where(neg, ord("-"), ord("0"))
        buf[:, cols + 2] = np.where(neg, ord("0"), ord("."))
        buf[:, cols + 3] = np.where(neg, ord("."), ord("0") + mag // 10 ** 6 % 10)
        # the last six characters: all six decimals of a negative, the
        # decimals after the first of a positive
        last = np.where(neg, mag // 10, mag % 10 ** 6)
        for k in range(6):
            buf[:, cols + 4 + k] = ord("0") + last // 10 ** (5 - k) % 10
        buf[:, -1] = ord("\n")
        f.write(buf.tobytes())
