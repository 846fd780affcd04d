#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Crash safety: `study` and `train` are killed with SIGKILL at random points
# (10 times each, seeded), each time rerun (train with --resume once a
# checkpoint exists); the final results equal an uninterrupted run's:
# results.csv row for row (without the time column), the model's parameters
# bit for bit. After every kill the study folder holds no case twice and no
# temporary file survives the rerun. The train part needs the learn module
# (not in a build without libtorch, where `train` refuses; learn_train.py
# checks that refusal).
import csv
import os
import random
import shutil
import signal
import subprocess
import sys
import tempfile
import time

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
os.environ["OMP_WAIT_POLICY"] = "PASSIVE"
KILLS = 10
failures = []

STUDY = """
name = "crash-check"
size = 32
repetitions = 2
seed = 9
[[phantom]]
family = "ellipses"
count = 1
[mri]
accel = [2, 4]
noise = 0.01
[ct]
views = [16, 24]
photons = 1e5
[[method]]
method = "zero-filled"
[[method]]
method = "fbp"
[[method]]
name = "fista-wavelet"
method = "fista"
prior = "wavelet"
levels = 2
lambda = 0.01
iters = 30
"""

TRAIN = """
[data]
modality = "mri"
size = 32
accel = 4.0
noise = 0.01
[model]
iterations = 2
depth = 3
width = 8
cg_iterations = 3
[train]
steps = 48
batch = 2
validation_count = 2
validation_every = 8
checkpoint_every = 2
max_minutes = 0
seed = 3
"""


def check(ok, what):
    print(("ok   " if ok else "FAIL ") + what)
    if not ok:
        failures.append(what)


def rows_without_time(path):
    with open(path, newline="") as f:
        out = list(csv.DictReader(f))
    for r in out:
        r["time"] = ""
    return out


def temporaries(folder):
    found = []
    for root, _, files in os.walk(folder):
        found += [os.path.join(root, n) for n in files if ".tmp-" in n]
    return found


def timed(args, cwd):
    t0 = time.time()
    r = subprocess.run(args, cwd=cwd, capture_output=True, text=True)
    return r, time.time() - t0


def kill_at(args, cwd, delay):
    p = subprocess.Popen(args, cwd=cwd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        p.wait(timeout=delay)
        return False  # finished before the kill
    except subprocess.TimeoutExpired:
        p.send_signal(signal.SIGKILL)
        p.wait()
        return True


def study_part(tmp, rng):
    base = [EXE, "--quiet", "--threads", "1", "study", "--config", "study.toml", "--jobs", "2"]
    ref, seconds = timed(base + ["--out", "ref"], tmp)
    check(ref.returncode == 0, f"uninterrupted study ({seconds:.1f} s)")
    killed = 0
    for i in range(KILLS):
        delay = rng.uniform(0.05, max(0.1, 0.9 * seconds))
        killed += kill_at(base + ["--out", "killed"], tmp, delay)
        res = os.path.join(tmp, "killed", "results.csv")
        if os.path.exists(res):
            with open(res, newline="") as f:
                keys = [line.split(",", 1)[0] for line in f.read().split("\n")[1:] if line]
            check(len(keys) == len(set(keys)), f"study kill {i + 1} after {delay:.2f} s: no case twice ({len(keys)} rows)")
    r = subprocess.run(base + ["--out", "killed"], cwd=tmp, capture_output=True, text=True)
    check(killed >= KILLS // 2, f"{killed} of {KILLS} study runs were killed before finishing")
    check(r.returncode == 0, f"study rerun after {KILLS} kills completes: {r.stderr.strip()}")
    check(rows_without_time(os.path.join(tmp, "killed", "results.csv")) == rows_without_time(
        os.path.join(tmp, "ref", "results.csv")), "killed + rerun study results.csv equals the uninterrupted run's")
    check(os.path.exists(os.path.join(tmp, "killed", "report.html")), "report written after the kills")
    check(not temporaries(os.path.join(tmp, "killed")), f"no temporary files left: {temporaries(os.path.join(tmp, 'killed'))}")
    check(not os.path.exists(os.path.join(tmp, "killed", "study.lock")), "no lock left after the rerun")


def parameters(path):
    import h5py
    out = {}
    with h5py.File(path, "r") as f:
        f["/model/parameters"].visititems(lambda n, d: out.__setitem__(n, d[()].tobytes()) if hasattr(d, "shape") else None)
    return out


def train_part(tmp, rng):
    if os.environ.get("RECOFOLD_TEST_LEARN") == "0":  # set by src/cli/CMakeLists.txt
        print("train part not applicable: this build has no learn module (RECOFOLD_WITH_LIBTORCH=OFF)")
        return
    base = [EXE, "--quiet", "--threads", "1", "train", "--config", "train.toml"]
    ref, seconds = timed(base + ["--out", "ref.h5"], tmp)
    check(ref.returncode == 0, f"uninterrupted training ({seconds:.1f} s): {ref.stderr.strip()}")
    killed = 0
    ckpt = os.path.join(tmp, "killed.checkpoint.h5")
    out = os.path.join(tmp, "killed.h5")
    for attempt in range(4 * KILLS):
        if killed >= KILLS:
            break
        if os.path.exists(out):
            os.remove(out)  # finished before the kill: start again from scratch
        delay = rng.uniform(0.3, max(0.4, 0.95 * seconds))
        args = base + ["--out", "killed.h5"] + (["--resume"] if os.path.exists(ckpt) else [])
        killed += kill_at(args, tmp, delay)
    if not os.path.exists(out):
        args = base + ["--out", "killed.h5"] + (["--resume"] if os.path.exists(ckpt) else [])
        r = subprocess.run(args, cwd=tmp, capture_output=True, text=True)
        check(r.returncode == 0, f"training rerun after the kills completes: {r.stderr.strip()}")
    check(killed >= KILLS, f"{killed} training runs were killed before finishing (at least {KILLS})")
    a, b = parameters(os.path.join(tmp, "ref.h5")), parameters(os.path.join(tmp, "killed.h5"))
    check(len(a) > 0 and a == b, f"killed + resumed model parameters equal the uninterrupted run's bit for bit ({len(a)} tensors)")
    check(not os.path.exists(ckpt), "no checkpoint left after the finished training")
    check(not temporaries(tmp), f"no temporary files left: {temporaries(tmp)}")


def main():
    rng = random.Random(20261202)
    tmp = tempfile.mkdtemp(prefix="recofold-crash-")
    try:
        with open(os.path.join(tmp, "study.toml"), "w") as f:
            f.write(STUDY)
        with open(os.path.join(tmp, "train.toml"), "w") as f:
            f.write(TRAIN)
        study_part(tmp, rng)
        train_part(tmp, rng)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    if failures:
        print(f"{len(failures)} check(s) failed")
        return 1
    print("crash-safety checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
