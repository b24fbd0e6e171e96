"""stats_vs_scipy.py -- vecsift's stats module against scipy (Debian's
python3-scipy), through the test-only tool $BUILDDIR/tests/stats_dump.

  * the Nadeau and Bengio (2003) corrected resampled t statistic and its
    p-values, computed in Python from the same formula with scipy.stats.t:
    equal within 1e-10;
  * the regularized incomplete beta and Student's t CDF against
    scipy.special.betainc and scipy.stats.t.cdf: within 1e-10;
  * the inverse power law fit on synthetic (seeded, invented) learning-curve
    points against scipy.optimize.curve_fit: a, b, c within 1e-4 relative.

Ends with "N passed, N failed".
"""
import json
import os
import subprocess
import sys

import numpy as np
from scipy import optimize, special, stats

TOOL = os.path.join(os.environ.get("BUILDDIR", "build"), "tests", "stats_dump")
passed = failed = 0
maxabs = {"ttest": 0.0, "betainc/tcdf": 0.0, "powerlaw(rel)": 0.0}


def run(*args):
    out = subprocess.run([TOOL, *[repr(float(a)) if not isinstance(a, str) else a for a in args]],
                         check=True, capture_output=True, text=True).stdout
    return json.loads(out)


def check(kind, name, got, want, tol, rel=False):
    global passed, failed
    d = abs(got - want) / (abs(want) if rel else 1.0)
    maxabs[kind] = max(maxabs[kind], d)
    if d <= tol:
        passed += 1
    else:
        failed += 1
        print(f"FAIL {name}: got {got!r} want {want!r} (diff {d:g})")


# Corrected resampled t-test on invented fold differences (5x2, 10x1, 3x5 folds).
rng = np.random.default_rng(20)
cases = [
    (rng.normal(0.01, 0.02, 10), 30, 270),      # 10-fold, 300 rows
    (rng.normal(-0.03, 0.01, 25), 60, 240),     # 5-fold x 5 repeats
    (rng.normal(0.0, 0.05, 6), 100, 200),       # 3-fold x 2 repeats
    (np.array([0.01, 0.02, 0.03, 0.00, 0.04]), 20, 80),
]
for i, (d, nte, ntr) in enumerate(cases):
    got = run("ttest", nte, ntr, *d)
    J = len(d)
    t = d.mean() / np.sqrt((1 / J + nte / ntr) * d.var(ddof=1))
    df = J - 1
    check("ttest", f"case {i} t", got["t"], t, 1e-10)
    check("ttest", f"case {i} df", got["df"], df, 0)
    check("ttest", f"case {i} p two-sided", got["p_two_sided"], 2 * stats.t.sf(abs(t), df), 1e-10)
    check("ttest", f"case {i} p greater", got["p_greater"], stats.t.sf(t, df), 1e-10)
    check("ttest", f"case {i} p less", got["p_less"], stats.t.cdf(t, df), 1e-10)

# Incomplete beta and t CDF on a spread of arguments.
for a, b, x in [(0.5, 0.5, 0.3), (2, 3, 0.4), (10, 0.5, 0.9), (0.5, 12, 0.01),
                (50, 60, 0.45), (1.5, 200, 0.002), (3, 3, 0.999)]:
    got = float(subprocess.run([TOOL, "betainc", str(a), str(b), str(x)],
                               check=True, capture_output=True, text=True).stdout)
    check("betainc/tcdf", f"betainc({a},{b},{x})", got, special.betainc(a, b, x), 1e-10)
for t, df in [(-3.1, 4), (0.7, 9), (2.2, 29), (-0.05, 2.5), (12, 3), (1.96, 1000)]:
    got = float(subprocess.run([TOOL, "tcdf", str(t), str(df)],
                               check=True, capture_output=True, text=True).stdout)
    check("betainc/tcdf", f"tcdf({t},{df})", got, stats.t.cdf(t, df), 1e-10)


# Power law fits on invented learning curves with small noise.
def law(n, a, b, c):
    return a * n ** (-b) + c


for i, (a, b, c, sizes, noise) in enumerate([
        (2.0, 0.5, 0.05, [40, 80, 120, 160, 240, 320, 480, 640], 0.003),
        (0.9, 0.35, 0.12, [20, 50, 100, 150, 200, 300, 400], 0.002),
        (5.0, 0.8, 0.02, [30, 60, 90, 120, 180, 240, 360, 480, 600, 720], 0.001)]):
    n = np.array(sizes, dtype=float)
    y = law(n, a, b, c) + np.random.default_rng(100 + i).normal(0, noise, len(n))
    args = []
    for u, v in zip(n, y):
        args += [u, v]
    got = run("powerlaw", *args)
    popt, _ = optimize.curve_fit(law, n, y, p0=[a, b, c], maxfev=20000,
                                 ftol=1e-14, xtol=1e-14, gtol=1e-14)
    for k, name in enumerate("abc"):
        check("powerlaw(rel)", f"fit {i} {name}", got[name], popt[k], 1e-4, rel=True)
    check("powerlaw(rel)", f"fit {i} at 2n", got["at_2n"], law(2 * n.max(), *popt), 1e-4, rel=True)

for k, v in maxabs.items():
    print(f"max difference {k}: {v:.3g}")
print(f"{passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
