#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Studies as MPI jobs: 1 -> 2 ranks on a reconstruction-bound study, rank 0's
# cost per case, and the projected parallel efficiency at 8, 64 and 1000 ranks.
#
#   /usr/bin/python3 bench/mpi_scaling.py build/recofold [--iters 3000] [--results DIR/results.csv ...]
#
# Timing is refused unless the 1-minute load average is below 1.0 (the
# machine's 2 cores must be idle); --wait S waits up to S seconds for that.
#
# Measured (median of --repeats runs):
#   1 rank:  `recofold --threads 1 study --jobs 1` (one process, no MPI)
#   2 ranks: `mpirun -np 2 recofold --threads 1 study` (rank 0 serves the
#            queue on its main thread and runs cases on a second thread; rank 1
#            runs cases)
#   speed-up = study wall (1 rank) / study wall (2 ranks), from the closing
#            line "wall W s"; also the process wall (adds mpirun's start-up)
#   rank 0 cost per case = the time rank 0's main thread spent handling
#            messages ("rank 0 handled M messages in U us") per case run by
#            the other rank; its share of the job = U / (ranks x wall)
# Projected: the study's cases as tasks (one per measurement, its cases' times
# from results.csv; --results adds the case times of other studies, e.g. a
# run of configs/demo.toml or configs/robustness-mri.toml) are handed out by a
# simulated rank 0 that handles one request at a time (cost per task = rank 0
# cost per message x (1 request + its rows)), to N ranks, for studies of 10
# and 100 tasks per rank drawn from the measured tasks; efficiency = sum of
# task times / (N x makespan). Rank 0 becomes the bottleneck when it cannot
# answer requests as fast as N ranks finish tasks: N* = mean task time /
# rank 0 cost per task.
import argparse
import csv
import heapq
import os
import random
import re
import statistics
import subprocess
import sys
import tempfile
import time

CONFIG = """
name = "mpi-scaling"
size = 64
repetitions = 2
seed = 11
[[phantom]]
table = "{src}/phantoms/qc-disk.toml"
[mri]
accel = [2, 4, 6]
noise = [0.005, 0.01]
[[method]]
method = "zero-filled"
[[method]]
name = "fista-wavelet"
method = "fista"
prior = "wavelet"
levels = 3
lambda = 0.005
iters = {iters}
[[method]]
name = "cg"
method = "cg"
iters = 30
"""


def wait_idle(limit_s):
    t0 = time.time()
    while os.getloadavg()[0] >= 1.0:
        if time.time() - t0 > limit_s:
            sys.exit(f"load average {os.getloadavg()[0]:.2f} >= 1.0: not timing (the cores are not idle); "
                     f"try again later or give --wait")
        time.sleep(5)
    return os.getloadavg()[0]


def run(cmd, cwd):
    t0 = time.time()
    r = subprocess.run(cmd, capture_output=True, text=True, cwd=cwd)
    process = time.time() - t0
    if r.returncode != 0:
        sys.exit(f"failed: {' '.join(cmd)}: {r.stderr.strip()[-500:]}")
    wall = float(re.search(r"wall ([0-9.]+) s", r.stdout).group(1))
    m = re.search(r"rank 0 handled (\d+) messages in (\d+) us", r.stdout)
    return dict(wall=wall, process=process, messages=int(m.group(1)) if m else 0,
                dispatch_s=int(m.group(2)) * 1e-6 if m else 0.0)


def task_times(path):
    """Task (measurement) durations of a results.csv: its cases' times summed."""
    tasks = {}
    for row in csv.DictReader(open(path, newline="")):
        parts = row["case"].split("|")
        key = (parts[0], parts[1], parts[-1]) if len(parts) >= 4 else row["case"]
        tasks.setdefault(key, [0.0, 0])
        tasks[key][0] += float(row["time"] or 0.0)
        tasks[key][1] += 1
    return list(tasks.values())


def simulate(tasks, ranks, cost_per_message):
    """Makespan of a dynamic queue: rank 0 serves one request at a time."""
    free = [(0.0, k) for k in range(ranks)]  # rank 0's local thread is worker 0
    heapq.heapify(free)
    server = 0.0
    end = 0.0
    for seconds, rows in tasks:
        t, k = heapq.heappop(free)
        if k != 0:  # remote: the request waits for rank 0, which then also records the rows
            start = max(t, server)
            server = start + cost_per_message * (1 + rows)
            t = start + cost_per_message
        done = t + seconds
        end = max(end, done)
        heapq.heappush(free, (done, k))
    return end


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("exe", nargs="?", default="build/recofold")
    ap.add_argument("--iters", type=int, default=3000, help="fista iterations (case length)")
    ap.add_argument("--repeats", type=int, default=1)
    ap.add_argument("--wait", type=float, default=0.0, help="seconds to wait for an idle machine")
    ap.add_argument("--results", nargs="*", default=[], help="results.csv of other studies (case times)")
    a = ap.parse_args()
    exe = os.path.abspath(a.exe)
    src = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    mpirun = ["mpirun", "--oversubscribe", "--allow-run-as-root", "-np", "2"]
    with tempfile.TemporaryDirectory() as tmp:
        open(f"{tmp}/study.toml", "w").write(CONFIG.format(src=src, iters=a.iters))
        one, two, loads = [], [], []
        for k in range(a.repeats):
            loads.append(wait_idle(a.wait))
            one.append(run([exe, "--quiet", "--threads", "1", "study", "--config", "study.toml", "--out", f"one{k}",
                            "--jobs", "1"], tmp))
            loads.append(wait_idle(a.wait))
            two.append(run(mpirun + [exe, "--quiet", "--threads", "1", "study", "--config", "study.toml", "--out",
                                     f"two{k}"], tmp))
        tasks = task_times(f"{tmp}/one0/results.csv")
        extra = [t for p in a.results for t in task_times(p)]
    cases = sum(r for _, r in tasks)
    med = lambda runs, key: statistics.median(r[key] for r in runs)
    w1, w2 = med(one, "wall"), med(two, "wall")
    p1, p2 = med(one, "process"), med(two, "process")
    disp, msgs = med(two, "dispatch_s"), med(two, "messages")
    per_msg = disp / max(1, msgs)
    print(f"study: {cases} cases in {len(tasks)} tasks (64x64 MRI, fista {a.iters} iterations); load average before "
          f"the runs {', '.join(f'{x:.2f}' for x in loads)} on {os.cpu_count()} cores")
    print(f"1 rank : study wall {w1:.2f} s, process {p1:.2f} s")
    print(f"2 ranks: study wall {w2:.2f} s, process {p2:.2f} s (mpirun start-up included)")
    print(f"speed-up 1 -> 2 ranks: {w1 / w2:.2f}x study wall, {p1 / p2:.2f}x process wall")
    print(f"rank 0: {msgs} messages in {disp * 1e3:.2f} ms = {per_msg * 1e6:.1f} us per message; "
          f"{100 * disp / (2 * w2):.3f} % of the 2-rank job (2 x wall)")
    pool = tasks + extra
    times = sorted(s for s, _ in pool)
    mean_t = statistics.mean(times)
    print(f"task times ({len(pool)} tasks{', with --results' if extra else ''}): mean {mean_t:.3f} s, "
          f"median {statistics.median(times):.3f} s, max {times[-1]:.3f} s")
    rows = statistics.mean(r for _, r in pool)
    cost_task = per_msg * (1 + rows)
    print(f"rank 0 cost per task {cost_task * 1e6:.1f} us ({rows:.1f} rows per task): rank 0 saturates at about "
          f"N* = {mean_t / cost_task:,.0f} ranks")
    rng = random.Random(5)
    for per_rank in (10, 100):
        line = []
        for n in (8, 64, 1000):
            sample = [rng.choice(pool) for _ in range(per_rank * n)]
            work = sum(s for s, _ in sample)
            line.append(f"{n} ranks {100 * work / (n * simulate(sample, n, per_msg)):.1f} %")
        print(f"projected efficiency, {per_rank} tasks per rank: " + ", ".join(line))


if __name__ == "__main__":
    main()
