#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Side-by-side time of one training step of the fixed reference unrolled network: recofold (libtorch) vs PyTorch.
"""Runs, in the same benchmark run, recofold's learn_train_step_bench tool and
the PyTorch reference script ref_torch_unrolled.py (Debian's python3-torch),
each with 1 and 2 threads in its own process, repeated `--rounds` times in
alternating order, and reports median step times and the ratio
recofold / PyTorch (target <= 1.1).

Usage (from the build folder):
  /usr/bin/python3 ../bench/learn_train_step.py [--tool tests/learn_train_step_bench]
      --reference PATH/ref_torch_unrolled.py [--rounds 3]
The PyTorch reference script is not part of recofold: give its path with
--reference or the environment variable RECOFOLD_TORCH_REFERENCE.
Output: a table plus RESULT|<bench>|<case>|<metric>|<value>|<unit> lines.
"""
import argparse
import os
import statistics
import subprocess
import sys


def child_line(cmd, env=None):
    out = subprocess.run(cmd, env=env, check=True, capture_output=True, text=True).stdout
    line = [ln for ln in out.splitlines() if ln.startswith("CHILD|")][-1]
    f = line.split("|")
    return {"threads": int(f[2]), "median_ms": float(f[3]), "min_ms": float(f[4]), "kept": float(f[5]),
            "loss0": float(f[6]), "loss1": float(f[7]), "minflt": float(f[8])}


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--tool", default=os.path.join(os.environ.get("RECOFOLD_BINARY_DIR", "."), "tests",
                                                   "learn_train_step_bench"))
    ap.add_argument("--reference", default=os.environ.get("RECOFOLD_TORCH_REFERENCE", ""))
    ap.add_argument("--rounds", type=int, default=3)
    args = ap.parse_args()
    if not args.reference or not os.path.isfile(args.reference):
        sys.exit("learn_train_step.py: give the PyTorch reference script with --reference or "
                 "RECOFOLD_TORCH_REFERENCE (got '%s')" % args.reference)
    import torch  # only for the version line
    rows = {}
    for rnd in range(args.rounds):
        for th in (1, 2):
            order = ("recofold", "pytorch") if rnd % 2 == 0 else ("pytorch", "recofold")
            for who in order:
                if who == "recofold":
                    r = child_line([args.tool, "--threads", str(th)])
                else:
                    r = child_line([sys.executable, args.reference, "--threads", str(th)])
                rows.setdefault((who, th), []).append(r)
    print(f"torch {torch.__version__}; mkldnn available {torch.backends.mkldnn.is_available()}; "
          f"{args.rounds} rounds, alternating order; each value: median of 20 steps after 3 warm-up")
    print(f"{'threads':>7} {'recofold ms':>12} {'pytorch ms':>11} {'ratio':>6} {'loss1 rf':>9} {'loss1 pt':>9}")
    bench = "unrolled train step (8x1x64x64, 5 it)"
    for th in (1, 2):
        rf = statistics.median(r["median_ms"] for r in rows[("recofold", th)])
        pt = statistics.median(r["median_ms"] for r in rows[("pytorch", th)])
        l_rf = rows[("recofold", th)][0]["loss0"]
        l_pt = rows[("pytorch", th)][0]["loss0"]
        print(f"{th:>7} {rf:>12.2f} {pt:>11.2f} {rf / pt:>6.3f} {l_rf:>9.5f} {l_pt:>9.5f}")
        print(f"RESULT|{bench}|{th} thread(s)|recofold median ms/step|{rf:.2f}|ms")
        print(f"RESULT|{bench}|{th} thread(s)|pytorch median ms/step|{pt:.2f}|ms")
        print(f"RESULT|{bench}|{th} thread(s)|ratio recofold/pytorch (target <= 1.1)|{rf / pt:.3f}|-")
    return 0


if __name__ == "__main__":
    sys.exit(main())
