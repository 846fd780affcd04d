# SPDX-License-Identifier: Apache-2.0
# Times recofold's Joseph projector pair and FBP side by side with scikit-image radon/iradon.
#
# Usage (from a build folder, after `cmake --build . --target recon_ct_tool`):
#   OMP_NUM_THREADS=2 /usr/bin/python3 ../bench/ct_vs_skimage.py [--repeats R] [--json FILE]
# Cases: 256x256 with 180 views and 512x512 with 360 views, parallel beam,
# n detectors (skimage's circle=True layout). Times are the best of R runs
# (wall clock). skimage has no separate back-projector; iradon(filter_name=None)
# (unfiltered back-projection) stands in for it. Both sides run in this one
# process tree with the same thread limit, so a busy machine slows both; the
# CPU-time speed-up (process CPU seconds, all threads) is also printed, as it
# varies less with the machine's load.
import argparse
import json
import os
import subprocess
import sys
import time

import numpy as np
from skimage.transform import iradon, radon

CASES = [(256, 180), (512, 360)]


def best_of(fn, repeats):
    """Best wall-clock time of `repeats` runs and the CPU time of that run."""
    best, cpu = float("inf"), float("inf")
    for _ in range(repeats):
        c0, t0 = time.process_time(), time.perf_counter()
        fn()
        t, c = time.perf_counter() - t0, time.process_time() - c0
        if t < best:
            best, cpu = t, c
    return best, cpu


def main():
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--json", default="")
    ap.add_argument("--tool", default=os.path.join(os.environ.get("RECOFOLD_BINARY_DIR", "."), "tests",
                                                    "recon_ct_tool"))
    args = ap.parse_args()
    threads = os.environ.get("OMP_NUM_THREADS", "(unset)")
    rows = []
    for n, views in CASES:
        out = subprocess.run([args.tool, "bench", str(n), str(views), str(args.repeats)], check=True,
                             capture_output=True, text=True).stdout
        ours = json.loads(out)
        rng = np.random.default_rng(1)
        yy, xx = np.mgrid[:n, :n] - n // 2
        img = (rng.random((n, n)) * ((yy ** 2 + xx ** 2) < (n // 2) ** 2)).astype(np.float64)
        theta = np.arange(views) * 180.0 / views
        sino = radon(img, theta=theta, circle=True)
        sk_fp, sk_fp_cpu = best_of(lambda: radon(img, theta=theta, circle=True), args.repeats)
        sk_bp, sk_bp_cpu = best_of(lambda: iradon(sino, theta=theta, filter_name=None, circle=True), args.repeats)
        sk_fbp, sk_fbp_cpu = best_of(lambda: iradon(sino, theta=theta, filter_name="ramp", circle=True),
                                     args.repeats)
        rows.append({"n": n, "views": views, "threads": threads, "load_average": os.getloadavg()[0],
                     "recofold_project_s": ours["project_s"], "skimage_radon_s": sk_fp,
                     "recofold_backproject_s": ours["backproject_s"], "skimage_backproject_s": sk_bp,
                     "recofold_fbp_s": ours["fbp_s"], "skimage_iradon_s": sk_fbp,
                     "speedup_project": sk_fp / ours["project_s"],
                     "speedup_backproject": sk_bp / ours["backproject_s"],
                     "speedup_fbp": sk_fbp / ours["fbp_s"],
                     "cpu_speedup_project": sk_fp_cpu / ours["project_cpu_s"],
                     "cpu_speedup_backproject": sk_bp_cpu / ours["backproject_cpu_s"],
                     "cpu_speedup_fbp": sk_fbp_cpu / ours["fbp_cpu_s"]})
    print(f"threads (OMP_NUM_THREADS) = {threads}, load average {os.getloadavg()[0]:.1f} on "
          f"{os.cpu_count()} cores; wall-clock time and speed-up (skimage / recofold), "
          "then the speed-up in CPU time (all threads)")
    print(f"{'case':>12} {'project':>22} {'back-project':>22} {'FBP':>22}")
    for r in rows:
        print(f"{r['n']:>5}^2 x{r['views']:>4} "
              f"{r['recofold_project_s']*1e3:7.1f} ms {r['speedup_project']:6.1f}x   "
              f"{r['recofold_backproject_s']*1e3:7.1f} ms {r['speedup_backproject']:6.1f}x   "
              f"{r['recofold_fbp_s']*1e3:7.1f} ms {r['speedup_fbp']:6.1f}x   | cpu "
              f"{r['cpu_speedup_project']:5.1f}x {r['cpu_speedup_backproject']:5.1f}x {r['cpu_speedup_fbp']:5.1f}x")
    if len(rows) == 2:
        a, b = rows
        for key in ("project", "backproject", "fbp"):
            print(f"growth 256^2x180 -> 512^2x360, {key}: recofold "
                  f"{b['recofold_' + key + '_s'] / a['recofold_' + key + '_s']:.1f}x")
    if args.json:
        with open(args.json, "w") as f:
            json.dump(rows, f, indent=2)
    return 0


if __name__ == "__main__":
    sys.exit(main())
