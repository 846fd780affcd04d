# SPDX-License-Identifier: Apache-2.0
# Benchmarks of the non-Cartesian MRI path (NUFFT, Toeplitz normal operator, CG-SENSE), not part of
# `make check`. Every speed figure is a ratio against a reference timed in the same run:
#  1. NUFFT forward + adjoint, N x N image, M golden-angle radial points, eps = 1e-4, sigma = 2,
#     against two FFTW transforms of the 2N x 2N grid (target: <= 4x at 256^2, M = 64 x 512);
#  2. the Toeplitz normal operator A^H A against the same two FFTs (target: <= 1.5x);
#  3. CG-SENSE, 8 coils, 20 iterations, radial vs Cartesian with the same number of samples, whole
#     process after the data exist (plan, Toeplitz set-up, A^H y, iterations; target: <= 3x);
#  4. growth 128^2 -> 256^2 -> 512^2 (M = N/4 spokes x 2N samples) and M x 4 at 256^2, next to the
#     model O(N^2 log N + M w^2) (FFT of the oversampled grid + w^2 kernel taps per point), each
#     column normalised to the 256^2, M = 64 x 512 case;
#  5. with --quality: PSNR of gridding, CG-SENSE and TV-ADMM (lambda by the discrepancy principle)
#     at 256^2, 8 coils, 64 x 512 golden-angle spokes, sigma = 0.003, exact k-space of the head
#     phantom (issue target: TV-ADMM >= gridding + 8 dB; CG-SENSE > gridding).
# Usage (from a build folder, under `heavy --all` with `uptime` load < 1 for quotable timings):
#   /usr/bin/python3 ../bench/nufft_bench.py [--threads T] [--quality] [--json out.json]
# Needs tests/ops_nufft_tool and tests/acquire_nufft_bench (built with the tests).
import argparse
import json
import math
import os
import subprocess
import sys


def here():
    return os.environ.get("RECOFOLD_BINARY_DIR", ".")


def source_dir():
    return os.environ.get("RECOFOLD_SOURCE_DIR", os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))


def run(tool, args, threads):
    env = dict(os.environ, RECOFOLD_FFT_THREADS=str(threads), OMP_NUM_THREADS=str(threads))
    out = subprocess.run([os.path.join(here(), "tests", tool)] + [str(a) for a in args], check=True,
                         capture_output=True, text=True, env=env)
    values = {}
    for line in out.stdout.splitlines():
        parts = line.split()
        if len(parts) == 2:
            values[parts[0]] = float(parts[1])
    return values


def nufft_case(n, spokes, readout, threads, repeats):
    return run("ops_nufft_tool", ["bench", n, spokes, readout, 1e-4, 2.0, repeats], threads)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--threads", type=int, default=1)
    ap.add_argument("--repeats", type=int, default=10)
    ap.add_argument("--quality", action="store_true", help="also run the 256^2 reconstruction-quality case")
    ap.add_argument("--json", help="write every number to this file")
    a = ap.parse_args()
    with open("/proc/loadavg") as f:
        load = float(f.read().split()[0])
    print(f"# threads {a.threads}, load average at start {load:.2f}" +
          ("" if load < 1.0 else "  (machine busy: ratios are indicative only)"))
    report = {"research_use_only": 1, "threads": a.threads, "load_at_start": load, "cases": []}

    print("\n## NUFFT and Toeplitz at eps 1e-4, sigma 2 (ratios to two FFTs of the 2N grid)")
    print(f"{'N':>5} {'M':>8} {'w':>3} {'fwd+adj ms':>11} {'ratio':>6} {'toeplitz ms':>12} {'ratio':>6} "
          f"{'2 FFT(2N) ms':>13} {'plan ms':>8} {'model':>6} {'time':>6}")
    cases = [(128, 32, 256), (256, 64, 512), (512, 128, 1024), (256, 256, 512)]
    rows = []
    for n, s, r in cases:
        v = nufft_case(n, s, r, a.threads, max(2, a.repeats * 256 * 256 // (n * n)))
        two = 2.0 * v["fft2x_ms"]
        g = v["grid"]
        model = g * g * math.log2(g * g) + v["points"] * v["width"] ** 2
        rows.append((n, s * r, v, two, model))
        report["cases"].append({"n": n, "spokes": s, "readout": r, **v})
    ref = next(row for row in rows if row[0] == 256 and row[1] == 64 * 512)
    for n, m, v, two, model in rows:
        print(f"{n:>5} {m:>8} {int(v['width']):>3} {v['fwd_adj_ms']:>11.2f} {v['fwd_adj_ms'] / two:>6.2f} "
              f"{v['toeplitz_ms']:>12.2f} {v['toeplitz_ms'] / two:>6.2f} {two:>13.2f} {v['plan_ms']:>8.1f} "
              f"{model / ref[4]:>6.2f} {v['fwd_adj_ms'] / ref[2]['fwd_adj_ms']:>6.2f}")
    print("(model, time: O(N^2 log N + M w^2) and the measured fwd+adj, both relative to 256^2, M = 32768)")
    t = ref[2]
    report["targets"] = {"fwd_adj_over_2fft": t["fwd_adj_ms"] / ref[3], "toeplitz_over_2fft": t["toeplitz_ms"] / ref[3]}

    print("\n## CG-SENSE, 8 coils, 20 iterations, 256^2: radial 64 x 512 vs Cartesian, same sample count")
    c = run("acquire_nufft_bench", ["cgsense", source_dir(), 256, 64, 512, 8, 20], a.threads)
    print(f"radial {c['radial_ms']:.1f} ms (plan {c['radial_plan_ms']:.1f}, Toeplitz set-up "
          f"{c['radial_toeplitz_setup_ms']:.1f}), Cartesian {c['cartesian_ms']:.1f} ms, ratio {c['ratio']:.2f} "
          f"({int(c['samples_radial'])} vs {int(c['samples_cartesian'])} samples)")
    report["cgsense"] = c
    report["targets"]["cgsense_radial_over_cartesian"] = c["ratio"]

    if a.quality:
        print("\n## Quality, 256^2, 8 coils, golden-angle 64 x 512, sigma 0.003, head phantom (exact k-space)")
        q = run("acquire_nufft_bench", ["quality", source_dir(), 256, 64, 512, 8, 0.003], a.threads)
        print(f"PSNR gridding {q['psnr_gridding']:.2f} dB, CG-SENSE {q['psnr_cgsense']:.2f} dB, "
              f"TV-ADMM (auto lambda {q['lambda']:.3g}) {q['psnr_tv_admm']:.2f} dB: "
              f"TV-ADMM - gridding = {q['psnr_tv_admm'] - q['psnr_gridding']:.2f} dB")
        report["quality"] = q

    tg = report["targets"]
    print("\n## Targets")
    print(f"NUFFT fwd+adj / 2 FFT(2N)   {tg['fwd_adj_over_2fft']:.2f}  (target <= 4)")
    print(f"Toeplitz / 2 FFT(2N)        {tg['toeplitz_over_2fft']:.2f}  (target <= 1.5)")
    print(f"CG-SENSE radial / Cartesian {tg['cgsense_radial_over_cartesian']:.2f}  (target <= 3)")
    if a.json:
        tmp = a.json + ".tmp"
        with open(tmp, "w") as f:
            json.dump(report, f, indent=1)
        os.replace(tmp, a.json)
    return 0


if __name__ == "__main__":
    sys.exit(main())
