#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Whole-process CG-SENSE through the command line, radial vs Cartesian with the same sample count
# (not part of `make check`). Both measurements are simulated first (not timed); then
# `recofold recon --method cg --iters 20 --tol 0` is timed on each, alternating, and the ratio of the
# medians is the row (issue target: radial <= 3x Cartesian). Radial: golden-angle spokes of 2N samples;
# Cartesian: variable-density lines at R = N^2 / M, the same M samples per coil.
# The load average (`uptime`) is recorded before and after next to the timings.
# Usage (from a build folder):
#   /usr/bin/python3 ../bench/trajectory_recon_bench.py [--size 256] [--coils 8] [--spokes 64] [--repeats 3]
#                                                       [--json out.json]
import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time


def exe():
    return os.environ.get("RECOFOLD_EXE", os.path.join(os.environ.get("RECOFOLD_BINARY_DIR", "."), "recofold"))


def source_dir():
    return os.environ.get("RECOFOLD_SOURCE_DIR", os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))


def rf(args, cwd):
    out = subprocess.run([exe(), "--quiet"] + [str(a) for a in args], cwd=cwd, capture_output=True, text=True)
    if out.returncode != 0:
        sys.exit(f"recofold {' '.join(map(str, args[:3]))} failed: {out.stderr.strip()}")


def uptime():
    return subprocess.run(["uptime"], capture_output=True, text=True).stdout.strip()


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--size", type=int, default=256)
    ap.add_argument("--coils", type=int, default=8)
    ap.add_argument("--spokes", type=int, default=64)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--json", default="")
    a = ap.parse_args()
    n, readout = a.size, 2 * a.size
    m = a.spokes * readout
    accel = n * n / m
    with tempfile.TemporaryDirectory() as tmp:
        rf(["phantom", "--table", os.path.join(source_dir(), "phantoms", "shepp-logan-modified.toml"), "--size", n,
            "--out", "ph.h5"], tmp)
        rf(["trajectory", "--kind", "radial-golden", "--size", n, "--spokes", a.spokes, "--readout", readout,
            "--out", "tr.h5"], tmp)
        sim = ["simulate", "--phantom", "ph.h5", "--modality", "mri", "--coils", a.coils, "--noise", 0.003]
        rf(sim + ["--trajectory", "tr.h5", "--out", "radial.h5"], tmp)
        if accel >= 1.0:
            rf(["mask", "--pattern", "lines-vd", "--size", n, "--accel", accel, "--out", "mask.h5"], tmp)
            rf(sim + ["--mask", "mask.h5", "--out", "cart.h5"], tmp)
        else:
            rf(sim + ["--out", "cart.h5"], tmp)  # more points than the grid: fully sampled Cartesian
        times = {"radial": [], "cartesian": []}
        load_before = uptime()
        for _ in range(a.repeats):
            for name, meas in [("radial", "radial.h5"), ("cartesian", "cart.h5")]:
                t0 = time.perf_counter()
                rf(["recon", "--meas", meas, "--method", "cg", "--iters", 20, "--tol", 0, "--out", f"r_{name}.h5"], tmp)
                times[name].append(time.perf_counter() - t0)
        load_after = uptime()
    med = {k: statistics.median(v) for k, v in times.items()}
    row = {"work": f"recon --method cg, {n}^2, {a.coils} coils, 20 iterations, whole process",
           "radial_points": m, "cartesian_R": accel, "radial_s": med["radial"], "cartesian_s": med["cartesian"],
           "ratio": med["radial"] / med["cartesian"], "target": "<= 3", "all_s": times,
           "uptime_before": load_before, "uptime_after": load_after}
    print(f"uptime before: {load_before}")
    print(f"| {row['work']} | radial {m} points {med['radial']:.2f} s | Cartesian R {accel:.2f} "
          f"{med['cartesian']:.2f} s | ratio {row['ratio']:.2f} (target <= 3) |")
    print(f"uptime after:  {load_after}")
    if a.json:
        with open(a.json, "w") as f:
            json.dump(row, f, indent=1)
    return 0


if __name__ == "__main__":
    sys.exit(main())
