#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# recofold's study statistics (include/recofold/study/statistics.h) against scipy on the same numbers.
#
# Sources of the checks (Debian's scipy 1.10):
#   Student's t        scipy.stats.t.cdf / scipy.stats.t.ppf
#   t interval         scipy.stats.t.interval(0.95, n-1, loc=mean, scale=scipy.stats.sem(x))
#                      and numpy mean / std(ddof=1)
#   Wilcoxon           scipy.stats.wilcoxon(a, b) with default options
#                      (zero_method="wilcox", correction=False, method="auto"):
#                      exact for n <= 50 without zeros (ties included, as scipy
#                      does), normal approximation otherwise. scipy refuses an
#                      all-zero difference (ValueError); recofold then reports
#                      p = 1, which is checked separately.
# Agreement required: 1e-9 relative for cdfs and p-values, exact statistics.
# scipy 1.10's t.ppf is itself accurate to only about 1e-9 (scipy's own cdf at
# its ppf(0.9, 3) is 0.90000000036), while recofold bisects the cdf to full
# precision; so quantiles must satisfy scipy's cdf(q) = p within 1e-13 and
# agree with t.ppf within 1e-8 relative, and t intervals within 1e-8 too.
import math
import os
import subprocess
import sys
import warnings

import numpy as np
import scipy.stats as st

BIN = os.environ.get("RECOFOLD_BINARY_DIR", ".")
TOOL = os.path.join(BIN, "tests", "study_statistics_tool")
TOL = 1e-9
Q_TOL = 1e-8
failures = []


def close(a, b, what, tol=TOL):
    if (math.isnan(a) and math.isnan(b)) or a == b:
        return
    if not abs(a - b) <= tol * max(1.0, abs(b)):
        failures.append(f"{what}: recofold {a!r} vs scipy {b!r}")


def fmt(values):
    return " ".join(repr(float(v)) for v in values)


requests, expected = [], []

# Student's t: cdf and quantiles over the degrees of freedom studies use.
for dof in [1, 2, 3, 4, 7, 9, 19, 49, 199]:
    for t in [-7.5, -2.1, -0.3, 0.0, 0.8, 2.26, 12.0]:
        requests.append(f"tcdf {t!r} {dof!r}")
        expected.append(("tcdf", st.t.cdf(t, dof)))
    for p in [0.5, 0.6, 0.9, 0.975, 0.995, 0.025]:
        requests.append(f"tq {p!r} {dof!r}")
        expected.append(("tq", (st.t.ppf(p, dof), p, dof)))

rng = np.random.default_rng(1313)
# Samples and their t intervals.
for n in [2, 3, 5, 8, 20, 100]:
    x = rng.normal(30.0, 2.0, n)
    requests.append("summary 0.95 " + fmt(x))
    m = float(np.mean(x))
    s = float(np.std(x, ddof=1))
    lo, hi = st.t.interval(0.95, n - 1, loc=m, scale=st.sem(x))
    expected.append(("summary", (n, m, s, lo, hi)))


def wilcoxon_case(d):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        res = st.wilcoxon(d)
    return float(res.statistic), float(res.pvalue)


cases = []
for n in [1, 2, 3, 5, 6, 8, 10, 15, 25, 50, 51, 80]:
    cases.append(rng.normal(0.3, 1.0, n))                           # continuous, no ties
cases.append(np.array([6, 8, 14, 16, 23, 24, 28, 29, 41, -48, 49, 56, 60, -67, 75], float))  # scipy's doc example
cases.append(np.round(rng.normal(0.2, 1.0, 12), 1))                 # ties, maybe zeros
cases.append(np.array([0.0, 1.5, -0.5, 2.0, 0.0, 1.0, 3.0, -1.0]))  # zeros: normal approximation
cases.append(np.array([1.0, 1.0, 2.0, -2.0, 3.0, 3.0, 3.0, 0.5]))   # ties, no zeros: exact with r+ truncated
cases.append(np.round(rng.normal(0.1, 1.0, 70), 0))                 # many ties and zeros, n > 50
cases.append(np.full(8, 0.7))                                        # all equal: r+ at the top
cases.append(np.array([1.0, -2.0, 3.0, -4.0, 5.0, -6.0, 7.0, -8.0, 9.0]))
for d in cases:
    requests.append("wilcoxon " + fmt(d))
    expected.append(("wilcoxon", wilcoxon_case(d)))

# Paired comparisons (PSNR-like numbers): a - b computed in double as numpy does.
for n in [5, 8, 12]:
    a = np.round(rng.normal(30.0, 1.0, n), 4)
    b = np.round(a - rng.normal(0.5, 0.4, n), 4)
    requests.append(f"paired {n} " + fmt(a) + " " + fmt(b))
    d = a - b
    stat, p = wilcoxon_case(d)
    lo, hi = st.t.interval(0.95, n - 1, loc=float(np.mean(d)), scale=st.sem(d))
    expected.append(("paired", (n, float(np.mean(d)), lo, hi, p)))

# A method compared with itself: scipy refuses; recofold reports p = 1 and an interval [0, 0].
same = np.round(rng.normal(30.0, 1.0, 8), 4)
requests.append("paired 8 " + fmt(same) + " " + fmt(same))
expected.append(("self", None))

out = subprocess.run([TOOL], input="\n".join(requests) + "\n", capture_output=True, text=True)
if out.returncode != 0:
    print(out.stderr)
    sys.exit(1)
lines = out.stdout.strip().split("\n")
if len(lines) != len(requests):
    print(f"tool answered {len(lines)} of {len(requests)} requests")
    sys.exit(1)

for req, line, (kind, exp) in zip(requests, lines, expected):
    f = line.split()
    what = req[:60]
    if kind == "tcdf":
        close(float(f[0]), float(exp), what)
    elif kind == "tq":
        q_ref, p, dof = exp
        close(float(f[0]), q_ref, what, Q_TOL)
        close(float(st.t.cdf(float(f[0]), dof)), p, what + " (scipy cdf at recofold's quantile)", 1e-13)
    elif kind == "summary":
        n, m, s, lo, hi = exp
        if int(f[0]) != n:
            failures.append(f"{what}: n {f[0]} vs {n}")
        for got, ref, name in zip(map(float, f[1:5]), (m, s, lo, hi), ("mean", "std", "ci_low", "ci_high")):
            close(got, ref, what + " " + name, Q_TOL)
    elif kind == "wilcoxon":
        stat, p = exp
        if float(f[0]) != stat:
            failures.append(f"{what}: statistic {f[0]} vs scipy {stat}")
        close(float(f[1]), p, what + " p")
    elif kind == "paired":
        n, m, lo, hi, p = exp
        if int(f[0]) != n:
            failures.append(f"{what}: n {f[0]} vs {n}")
        for got, ref, name in zip(map(float, f[1:5]), (m, lo, hi, p), ("mean_diff", "ci_low", "ci_high", "p")):
            close(got, ref, what + " " + name, TOL if name == "p" else Q_TOL)
    elif kind == "self":
        n, m, lo, hi, p = int(f[0]), float(f[1]), float(f[2]), float(f[3]), float(f[4])
        if not (m == 0.0 and lo <= 0.0 <= hi and p == 1.0 and f[5] == "all-zero"):
            failures.append(f"self comparison: {line}")

if failures:
    print("\n".join(failures))
    sys.exit(1)
print(f"statistics agree with scipy on {len(requests)} requests")
