#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Study folder safety end to end: a folder held by another run is refused
# (exit 2, one line naming the holder, nothing written) and two real runs
# into one folder never both run; a lock file left by a dead process is taken
# over; on a full disk (a small tmpfs, root only; skipped with a message
# otherwise) results.csv never ends mid-row, and a rerun with space again
# runs the cases whose outputs failed, ending equal to an uninterrupted run.
import csv
import fcntl
import os
import shutil
import subprocess
import sys
import tempfile
import time

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
failures = []


def check(ok, what):
    print(("ok   " if ok else "FAIL ") + what)
    if not ok:
        failures.append(what)


def config(size, reps, iters):
    return f"""
name = "lock-check"
size = {size}
repetitions = {reps}
seed = 2
[[phantom]]
family = "ellipses"
count = 1
[mri]
accel = [2, 4]
noise = 0.01
[ct]
views = [16, 24]
photons = 0
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
iters = {iters}
"""


def study(args, cwd, **kw):
    return subprocess.run([EXE, "--quiet", "study"] + args, cwd=cwd, capture_output=True, text=True, **kw)


def rows(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def rows_without_time(path):
    out = []
    for r in rows(path):
        r["time"] = ""
        out.append(r)
    return out


def held_and_stale(tmp):
    # Held: another process holds the lock (here this script, with flock(2) like recofold).
    out = os.path.join(tmp, "held")
    os.mkdir(out)
    lock = os.path.join(out, "study.lock")
    fd = os.open(lock, os.O_RDWR | os.O_CREAT)
    os.write(fd, b"process 4242 on testhost since 2026-01-01T00:00:00Z: recofold study --out held\n")
    fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    r = study(["--config", "small.toml", "--out", "held"], tmp)
    lines = r.stderr.strip().splitlines()
    check(r.returncode == 2, f"run into a held folder: exit {r.returncode} (expected 2)")
    check(len(lines) == 1 and "study.lock" in lines[0] and "process 4242 on testhost" in lines[0],
          "one line naming the lock and its holder: " + r.stderr.strip())
    check(sorted(os.listdir(out)) == ["study.lock"], f"nothing written into the held folder: {sorted(os.listdir(out))}")
    os.close(fd)

    # Stale: the same file, its process gone (no lock held) -> taken over.
    r = study(["--config", "small.toml", "--out", "held"], tmp)
    check(r.returncode == 0, f"lock file of a dead process taken over: exit {r.returncode} {r.stderr.strip()}")
    check(not os.path.exists(lock), "the lock file is removed at the end of the run")


def concurrent(tmp):
    # Two real runs into one folder: the second is refused naming the first.
    first = subprocess.Popen([EXE, "--quiet", "study", "--config", "slow.toml", "--out", "both", "--jobs", "1"],
                             cwd=tmp, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    lock = os.path.join(tmp, "both", "study.lock")
    t0 = time.time()
    while not os.path.exists(lock) and time.time() - t0 < 120 and first.poll() is None:
        time.sleep(0.01)
    r = study(["--config", "slow.toml", "--out", "both", "--jobs", "1"], tmp)
    still_running = first.poll() is None
    out, err = first.communicate(timeout=600)
    check(still_running, "the first run was still running when the second started (test set-up)")
    check(r.returncode == 2 and f"process {first.pid}" in r.stderr,
          f"second run refused naming process {first.pid}: exit {r.returncode}: {r.stderr.strip()}")
    check(first.returncode == 0, f"first run completes: exit {first.returncode} {err.strip()}")
    keys = [x["case"] for x in rows(os.path.join(tmp, "both", "results.csv"))]
    check(len(keys) == len(set(keys)) and len(keys) > 0, f"each case once in results.csv ({len(keys)} rows)")


def full_disk(tmp):
    if os.geteuid() != 0:
        print("skipped the full-disk study case: it needs root to mount a small tmpfs")
        return
    ref = study(["--config", "small.toml", "--out", "ref"], tmp)
    check(ref.returncode == 0, "uninterrupted reference run")
    mnt = os.path.join(tmp, "FULL")
    os.mkdir(mnt)
    try:
        subprocess.run(["mount", "-t", "tmpfs", "-o", "size=96k", "tmpfs", mnt], check=True)
    except (subprocess.CalledProcessError, FileNotFoundError):
        print("skipped the full-disk study case: mounting a tmpfs failed")
        return
    try:
        r = study(["--config", "small.toml", "--out", "FULL/s"], tmp)
        res = os.path.join(mnt, "s", "results.csv")
        check(r.returncode == 1, f"study on a full disk: exit {r.returncode} (expected 1): {r.stderr.strip()}")
        check(len(r.stderr.strip().splitlines()) == 1, "one line: " + r.stderr.strip())
        if os.path.exists(res):
            with open(res, "rb") as f:
                text = f.read()
            check(text.endswith(b"\n"), "results.csv does not end mid-row on a full disk")
            hurt = [x for x in rows(res) if x["error"].startswith("output failed: ")]
            print(f"     {len(rows(res))} rows, {len(hurt)} with output failures")
        subprocess.run(["mount", "-o", "remount,size=64m", mnt], check=True)
        r = study(["--config", "small.toml", "--out", "FULL/s"], tmp)
        check(r.returncode == 0, f"rerun with space: exit {r.returncode} {r.stderr.strip()}")
        check(rows_without_time(res) == rows_without_time(os.path.join(tmp, "ref", "results.csv")),
              "after the rerun results.csv equals the uninterrupted run's (output failures run again)")
        ref_failed = sum(1 for x in rows(os.path.join(tmp, "ref", "results.csv")) if x["error"])
        check(f", {ref_failed} failed" in r.stdout, f"the rerun counts {ref_failed} failed: {r.stdout.splitlines()[:1]}")
    finally:
        subprocess.run(["umount", mnt])


def main():
    tmp = tempfile.mkdtemp(prefix="recofold-lock-")
    try:
        with open(os.path.join(tmp, "small.toml"), "w") as f:
            f.write(config(32, 1, 5))
        with open(os.path.join(tmp, "slow.toml"), "w") as f:
            f.write(config(64, 3, 60))
        held_and_stale(tmp)
        concurrent(tmp)
        full_disk(tmp)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    if failures:
        print(f"{len(failures)} check(s) failed")
        return 1
    print("study folder safety checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
