#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Study overhead and parallel speed-up on a study config (default configs/demo.toml).
#
#   /usr/bin/python3 bench/study_overhead.py build/recofold [configs/demo.toml] [repeats]
#
# Runs the study into fresh folders with --jobs 1 and --jobs 2 (one thread per
# job: --threads equals --jobs, so the speed-up measures case-level
# parallelism alone) and reports, from the study's own closing line
#   wall W s, reconstruction R s over J job(s)
#   overhead = (W - R) / W                     (jobs 1: everything that is not a
#              case's reconstruction: simulation, scoring, files, report)
#   speed-up = W(jobs 1) / W(jobs 2)
# and the process wall time (adds program start-up, e.g. loading libtorch).
# The median of `repeats` runs (default 3) is reported, with the load average.
import os
import re
import statistics
import subprocess
import sys
import tempfile
import time


def run(exe, config, out, jobs):
    t0 = time.time()
    r = subprocess.run([exe, "--quiet", "--threads", str(jobs), "study", "--config", config, "--out", out, "--jobs",
                        str(jobs)], capture_output=True, text=True)
    process = time.time() - t0
    if r.returncode != 0:
        sys.exit(f"study failed: {r.stderr}")
    m = re.search(r"wall ([0-9.]+) s(?: \(learned models ([0-9.]+) s\))?, reconstruction ([0-9.]+) s", r.stdout)
    cases = re.search(r": (\d+) cases", r.stdout)
    training = float(m.group(2) or 0.0)
    # Model loading/training is not study overhead: it is left out of the wall time.
    return float(m.group(1)) - training, float(m.group(3)), process, int(cases.group(1))


def main():
    exe = sys.argv[1] if len(sys.argv) > 1 else "build/recofold"
    config = sys.argv[2] if len(sys.argv) > 2 else "configs/demo.toml"
    repeats = int(sys.argv[3]) if len(sys.argv) > 3 else 3
    results = {1: [], 2: []}
    with tempfile.TemporaryDirectory() as tmp:
        for k in range(repeats):
            for jobs in (1, 2):
                results[jobs].append(run(exe, config, os.path.join(tmp, f"j{jobs}-{k}"), jobs))
    n = results[1][0][3]
    print(f"config {config}: {n} cases, median of {repeats} runs, load average {os.getloadavg()[0]:.1f} "
          f"on {os.cpu_count()} cores")
    med = {}
    for jobs in (1, 2):
        w = statistics.median(r[0] for r in results[jobs])
        c = statistics.median(r[1] for r in results[jobs])
        p = statistics.median(r[2] for r in results[jobs])
        med[jobs] = (w, p)
        busy = c / (jobs * w)
        print(f"jobs {jobs}: study wall {w:.2f} s, reconstruction {c:.2f} s (summed over jobs), "
              f"overhead {100 * (1 - busy):.1f} % of {jobs} x wall; process wall {p:.2f} s")
    print(f"speed-up 1 -> 2 jobs: study wall {med[1][0] / med[2][0]:.2f}x, process wall {med[1][1] / med[2][1]:.2f}x")


if __name__ == "__main__":
    main()
