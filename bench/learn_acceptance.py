#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Acceptance run of the learned MRI model: train the ready config, then score it against zero-filled and tuned classical priors.
"""Trains configs/train-mri-small.toml (at most ~10 minutes on 2 cores) with
the recofold executable and scores the model on the trainer's validation set
next to zero-filled, FISTA-wavelet and TV-ADMM, each with lambda tuned on that
same set (tests/tools/learn_compare_classical). Targets (issue 7): learned
beats zero-filled by >= 8 dB, tuned FISTA-wavelet by >= 3 dB, tuned TV by >= 1 dB.

Usage (from the build folder):
  /usr/bin/python3 ../bench/learn_acceptance.py [--config ../configs/train-mri-small.toml] [--out DIR]
"""
import argparse
import os
import re
import subprocess
import sys
import time


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    ap = argparse.ArgumentParser()
    ap.add_argument("--config", default=os.path.join(here, "..", "configs", "train-mri-small.toml"))
    ap.add_argument("--out", default="learn-acceptance")
    ap.add_argument("--exe", default="./recofold")
    ap.add_argument("--tool", default="./tests/learn_compare_classical")
    args = ap.parse_args()
    os.makedirs(args.out, exist_ok=True)
    model = os.path.join(args.out, "model.h5")
    t0 = time.time()
    subprocess.run([args.exe, "train", "--config", args.config, "--out", model], check=True)
    print(f"training wall time {time.time() - t0:.0f} s")
    out = subprocess.run([args.tool, "--config", args.config, "--model", model], check=True,
                         capture_output=True, text=True).stdout
    print(out)
    vals = {m.group(1): float(m.group(2)) for m in re.finditer(r"RESULT\|[^|]*\|[^|]*\|([^|]*)\|([-0-9.]+)\|dB", out)}
    learned = vals["learned psnr"]
    checks = [("zero-filled", vals["A^H y psnr"], 8.0), ("FISTA-wavelet (tuned)", vals["fista-wavelet tuned psnr"], 3.0),
              ("TV-ADMM (tuned)", vals["admm-tv tuned psnr"], 1.0)]
    ok = True
    for name, v, margin in checks:
        good = learned >= v + margin
        ok = ok and good
        print(f"{'ok  ' if good else 'MISS'} learned {learned:.2f} dB vs {name} {v:.2f} dB: "
              f"{learned - v:+.2f} dB (target +{margin:.0f})")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
