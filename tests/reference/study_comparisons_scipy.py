#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# A real 8-repetition study: summary.csv intervals and comparisons.csv
# p-values/intervals recomputed with scipy from the study's own results.csv;
# TV against zero-filled excludes 0; a method against an identical copy of
# itself gives p = 1 and an interval containing 0; oracle-tuned rows are
# labelled in results.csv, summary.csv, comparisons.csv, the report and the
# figures.
#
# Sources of the checks (Debian's scipy 1.10):
#   t interval   scipy.stats.t.interval(0.95, n-1, loc=mean, scale=scipy.stats.sem(x)), numpy std(ddof=1)
#   Wilcoxon     scipy.stats.wilcoxon(a, b) with default options; scipy refuses an
#                all-zero difference (ValueError), where recofold reports p = 1
#                ("all-zero"), checked separately.
# Agreement: 1e-6 relative (the CSV files carry 8 significant digits).
import csv
import math
import os
import subprocess
import sys
import tempfile
import warnings

import numpy as np
import scipy.stats as st

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
ORACLE = "oracle (uses the ground truth)"

CONFIG = """
name = "paired"
size = 32
repetitions = 8
seed = 11
[[phantom]]
family = "ellipses"
count = 1
[mri]
accel = [3, 5]
noise = 0.02
[[method]]
method = "zero-filled"
[[method]]
name = "admm-tv"
method = "admm"
prior = "tv"
lambda = 0.01
iters = 30
[[method]]
name = "admm-tv-copy"
method = "admm"
prior = "tv"
lambda = 0.01
iters = 30
[[method]]
name = "fista-wavelet-oracle"
method = "fista"
prior = "wavelet"
levels = 2
lambda = [0.001, 0.01]
iters = 20
"""

failures = []


def check(ok, what):
    print(("ok    " if ok else "FAIL  ") + what)
    if not ok:
        failures.append(what)


def close(a, b, tol=1e-6):
    if math.isnan(a) and math.isnan(b):
        return True
    return abs(a - b) <= tol * max(1.0, abs(b))


def num(s):
    return float(s) if s != "" else float("nan")


def main():
    with tempfile.TemporaryDirectory() as tmp:
        with open(os.path.join(tmp, "study.toml"), "w") as f:
            f.write(CONFIG)
        r = subprocess.run([EXE, "--quiet", "study", "--config", "study.toml", "--out", "st", "--jobs", "2"],
                           capture_output=True, text=True, cwd=tmp)
        if r.returncode != 0:
            print("FAIL  study exit", r.returncode, r.stderr, file=sys.stderr)
            sys.exit(1)
        d = os.path.join(tmp, "st")
        with open(os.path.join(d, "results.csv")) as f:
            results = list(csv.DictReader(f))
        with open(os.path.join(d, "summary.csv")) as f:
            summary = list(csv.DictReader(f))
        with open(os.path.join(d, "comparisons.csv")) as f:
            comparisons = list(csv.DictReader(f))
        report = open(os.path.join(d, "report.html"), encoding="utf-8").read()

        # Values per (condition, method) keyed by (phantom, repetition), from results.csv.
        values = {}
        for row in results:
            if row["error"]:
                continue
            values.setdefault((row["accel"], row["method"]), {})[(row["phantom"], row["repetition"])] = row
        check(len(results) == 2 * 4 * 8, f"{len(results)} cases (2 accelerations x 4 methods x 8 repetitions)")
        rules = {row["method"]: row["lambda_rule"] for row in results}
        check(rules == {"zero-filled": "none", "admm-tv": "fixed", "admm-tv-copy": "fixed",
                        "fista-wavelet-oracle": "oracle"}, f"results.csv lambda_rule column {rules}")

        # summary.csv against numpy/scipy.
        ok = True
        for s in summary:
            rows = values[(s["accel"], s["method"])]
            for metric in ["psnr", "ssim", "nrmse", "hfen"]:
                x = np.array([float(v[metric]) for v in rows.values()])
                m, sd = float(np.mean(x)), float(np.std(x, ddof=1))
                lo, hi = st.t.interval(0.95, len(x) - 1, loc=m, scale=st.sem(x))
                got = [num(s[f"{metric}_mean"]), num(s[f"{metric}_std"]), num(s[f"{metric}_ci95_low"]),
                       num(s[f"{metric}_ci95_high"])]
                if int(s["n"]) != len(x) or not all(close(g, e, 1e-5 if i != 1 else 1e-3)
                                                    for i, (g, e) in enumerate(zip(got, [m, sd, lo, hi]))):
                    ok = False
                    print(f"       summary {s['method']} accel {s['accel']} {metric}: {got} vs {[m, sd, lo, hi]}")
        check(ok and len(summary) == 8, f"summary.csv n, mean, std, 95 % interval match numpy/scipy ({len(summary)} rows)")
        check(all(s["lambda_rule"] == ORACLE for s in summary if s["method"] == "fista-wavelet-oracle"),
              "summary.csv marks the oracle row")

        # comparisons.csv against scipy.
        ok, checked, zero_rows = True, 0, 0
        for c in comparisons:
            accel = c["condition"].split("accel=")[1].split()[0]
            a, b = values[(accel, c["method_a"])], values[(accel, c["method_b"])]
            keys = sorted(set(a) & set(b))
            va = np.array([float(a[k][c["metric"]]) for k in keys])
            vb = np.array([float(b[k][c["metric"]]) for k in keys])
            diff = va - vb
            lo, hi = st.t.interval(0.95, len(diff) - 1, loc=float(np.mean(diff)), scale=st.sem(diff)) \
                if np.any(diff != diff[0]) else (float(np.mean(diff)), float(np.mean(diff)))
            if np.all(diff == 0):
                zero_rows += 1
                p = 1.0
                good = c["test"] == "all-zero"
            else:
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")
                    p = float(st.wilcoxon(va, vb).pvalue)
                good = True
            good = good and int(c["n"]) == len(keys) and close(num(c["mean_diff"]), float(np.mean(diff))) and \
                close(num(c["ci95_low"]), lo, 1e-5) and close(num(c["ci95_high"]), hi, 1e-5) and \
                close(num(c["p_value"]), p)
            if not good:
                ok = False
                print(f"       {c}: expected n {len(keys)} mean {np.mean(diff)} ci [{lo}, {hi}] p {p}")
            checked += 1
        check(ok and checked > 0, f"comparisons.csv: {checked} rows match scipy (t interval, wilcoxon)")

        def find(kind, a, b, metric, accel):
            for c in comparisons:
                if c["kind"] == kind and c["method_a"] == a and c["method_b"] == b and c["metric"] == metric and \
                        f"accel={accel}" in c["condition"]:
                    return c
            return None

        for accel in ["3", "5"]:
            best = find("best", "admm-tv", "zero-filled", "psnr", accel)
            check(best is not None and num(best["ci95_low"]) > 0,
                  f"accel {accel}: TV is best and its PSNR interval against zero-filled excludes 0 "
                  f"({best and best['ci95_low']}, {best and best['ci95_high']})")
            same = find("best", "admm-tv", "admm-tv-copy", "psnr", accel) or \
                find("best", "admm-tv-copy", "admm-tv", "psnr", accel)
            check(same is not None and num(same["p_value"]) == 1.0 and num(same["ci95_low"]) <= 0 <= num(same["ci95_high"]),
                  f"accel {accel}: a method against itself gives p = 1 and an interval containing 0")
        check(any(c["lambda_rule_b"] == ORACLE for c in comparisons), "comparisons.csv marks the oracle row")
        check(all(not (c["kind"] == "best" and c["method_a"] == "fista-wavelet-oracle") for c in comparisons),
              "an oracle row is never named best")

        # The report and the figures say which row used the truth.
        check('<section id="findings">' in report and report.index('<section id="findings">') < report.index("<table>"),
              "report opens with its findings section")
        findings = report[report.index('<section id="findings">'):report.index("</section>")]
        check("no significant difference" in findings and "admm-tv-copy" in findings,
              "findings call the identical copy of the best method no significant difference")
        check(report.count("[" + ORACLE + "]") >= 3, "report tables and findings mark the oracle row")
        svg = open(os.path.join(d, "figures", "mri-psnr-vs-accel.svg"), encoding="utf-8").read()
        check("fista-wavelet-oracle [" + ORACLE + "]" in svg, "the PSNR figure's legend marks the oracle row")
    if failures:
        print(f"{len(failures)} failure(s)")
        sys.exit(1)
    print("study comparisons checks passed")


if __name__ == "__main__":
    main()
