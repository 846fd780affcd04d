#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# `recofold study` as an MPI job and as job-array tasks (registered only in
# builds with RECOFOLD_WITH_MPI):
# - mpirun -np 3 gives the results.csv of the one-process run (same rows, same
#   metric values; the time column differs), the other outputs, and rank 0
#   alone prints;
# - a worker rank killed (kill -9) mid-study stops the job; the same command
#   again completes it, equal to the uninterrupted run, without duplicate rows;
# - --jobs 2 under mpirun is refused naming --jobs, once, and so is (naming
#   --out) an output folder whose probe file the other ranks do not see;
# - a command other than study under a launcher's environment is refused;
# - --shard auto from Slurm's array variables equals --shard I/N, three tasks
#   merged equal the one-process run, and no array variables is refused
#   naming --shard;
# - a study that trains its own model: rank 0 trains it once into models/
#   before handing out cases, and the 3-rank results equal the one-process run.
import csv
import os
import shutil
import signal
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import _harness  # noqa: E402  (shared checks and environment)

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
SRC = os.environ.get("RECOFOLD_SOURCE_DIR", ".")
MPIRUN = shutil.which("mpirun")
check = _harness.Checks()

# 24 cases; fista's 3000 iterations make a case last long enough (~0.1-1 s)
# to kill a rank in the middle of the study.
CONFIG = f"""
name = "mpi-check"
size = 32
repetitions = 2
seed = 3
[[phantom]]
table = "{SRC}/phantoms/qc-disk.toml"
[mri]
accel = [2, 4]
noise = [0.005, 0.01]
[[method]]
method = "zero-filled"
[[method]]
name = "fista-wavelet"
method = "fista"
prior = "wavelet"
levels = 2
lambda = 0.005
iters = 3000
[[method]]
name = "cg"
method = "cg"
iters = 20
"""
CASES = 24


def rows_without_time(path):
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    t = rows[0].index("time")
    for r in rows:
        r[t] = ""
    return rows


def study(args, cwd, env=None):
    return _harness.recofold(EXE, ["study", "--config", "study.toml"] + args, cwd, env)


def mpi_cmd(n, args):
    return [MPIRUN, "--oversubscribe", "--allow-run-as-root", "-np", str(n), EXE, "--quiet", "study",
            "--config", "study.toml"] + args


def clean_env():
    return _harness.launcher_free_env()


def rank_pid(rank, out_dir):
    """The process id of MPI rank `rank` running into `out_dir`, or None."""
    for pid in filter(str.isdigit, os.listdir("/proc")):
        try:
            cmd = open(f"/proc/{pid}/cmdline", "rb").read().split(b"\0")
            env = open(f"/proc/{pid}/environ", "rb").read().split(b"\0")
        except OSError:
            continue
        if out_dir.encode() in cmd and f"OMPI_COMM_WORLD_RANK={rank}".encode() in env:
            return int(pid)
    return None


def data_rows(path):
    try:
        return max(0, len(open(path).read().splitlines()) - 1)
    except OSError:
        return 0


def mpi_equal_and_kill(work, reference):
    # 3 ranks, uninterrupted.
    out = subprocess.run(mpi_cmd(3, ["--out", "three"]), capture_output=True, text=True, cwd=work, timeout=120)
    check(out.returncode == 0, f"mpirun -np 3 study exits 0 (got {out.returncode}: {out.stderr.strip()[-300:]})")
    if out.returncode == 0:
        check(rows_without_time(f"{work}/three/results.csv") == reference,
              "3 ranks: results.csv equals the one-process run (rows, order, metric values)")
        for name in ("summary.csv", "comparisons.csv", "report.html"):
            check(os.path.isfile(f"{work}/three/{name}"), f"3 ranks: {name} written")
        check(out.stdout.count("results: ") == 1, "3 ranks: the closing lines are printed once (rank 0)")
        check("over 3 MPI ranks" in out.stdout, "3 ranks: the summary line names the 3 ranks")
        check(not any(n.startswith(".rank0-probe") for n in os.listdir(f"{work}/three")), "3 ranks: probe file removed")

    # Kill rank 1 with SIGKILL after a few rows; the job stops; a rerun completes it.
    job = subprocess.Popen(mpi_cmd(3, ["--out", "killed"]), stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                           text=True, cwd=work)
    killed = False
    deadline = time.time() + 60
    while time.time() < deadline and job.poll() is None:
        if data_rows(f"{work}/killed/results.csv") >= 3:
            pid = rank_pid(1, "killed")
            if pid:
                os.kill(pid, signal.SIGKILL)
                killed = True
                break
        time.sleep(0.02)
    try:
        job.communicate(timeout=60)
    except subprocess.TimeoutExpired:
        job.kill()
        job.communicate()
    rows_after_kill = data_rows(f"{work}/killed/results.csv")
    check(killed, "a worker rank was found and killed mid-study")
    check(job.returncode != 0, f"the job with a killed rank fails (exit {job.returncode})")
    check(rows_after_kill < CASES, f"the killed job stopped early ({rows_after_kill} of {CASES} rows)")
    out = subprocess.run(mpi_cmd(3, ["--out", "killed"]), capture_output=True, text=True, cwd=work, timeout=120)
    check(out.returncode == 0, f"rerun after the kill exits 0 (got {out.returncode}: {out.stderr.strip()[-300:]})")
    if out.returncode == 0:
        rows = rows_without_time(f"{work}/killed/results.csv")
        check(rows == reference, "rerun after the kill: results.csv equals the uninterrupted run")
        keys = [r[0] for r in rows[1:]]
        check(len(keys) == len(set(keys)) == CASES, f"rerun after the kill: {CASES} rows, no duplicates")
        check(f"{rows_after_kill} already done" in out.stdout,
              f"rerun skips the {rows_after_kill} cases already done")


TRAIN = _harness.tiny_unrolled_training('threads = 1')

LEARNED = f"""
name = "mpi-learned"
size = 32
repetitions = 1
seed = 4
[[phantom]]
table = "{SRC}/phantoms/qc-disk.toml"
[mri]
accel = [2, 3]
noise = [0.01]
[[method]]
method = "zero-filled"
[[method]]
name = "net"
method = "unrolled"
modality = "mri"
train = "train.toml"
train_steps = 3
"""


def mpi_learned(work):
    """A model the study trains: rank 0 trains it once into models/, every rank reconstructs with it."""
    if os.environ.get("RECOFOLD_TEST_LEARN") == "0":  # set by src/cli/CMakeLists.txt
        print("learned part not applicable: this build has no learn module")
        return
    open(f"{work}/train.toml", "w").write(TRAIN)
    open(f"{work}/learned.toml", "w").write(LEARNED)
    base = ["study", "--config", "learned.toml"]
    one = _harness.recofold(EXE, base + ["--out", "l1", "--jobs", "1"], work, clean_env())
    check(one.returncode == 0, f"one-process study with a study-trained model exits 0 ({one.stderr.strip()[-300:]})")
    out = subprocess.run([MPIRUN, "--oversubscribe", "--allow-run-as-root", "-np", "3", EXE, "--quiet"] + base +
                         ["--out", "l3"], capture_output=True, text=True, cwd=work, timeout=300)
    check(out.returncode == 0, f"mpirun -np 3 study with a study-trained model exits 0 ({out.stderr.strip()[-300:]})")
    if one.returncode != 0 or out.returncode != 0:
        return
    rows = rows_without_time(f"{work}/l3/results.csv")
    check(rows == rows_without_time(f"{work}/l1/results.csv"),
          "study-trained model, 3 ranks: results.csv equals the one-process run")
    method = rows[0].index("method")
    learned = [r for r in rows[1:] if r[method] == "net"]
    error = rows[0].index("error")
    check(len(learned) == 2 and all(r[error] == "" for r in learned),
          f"3 ranks: both learned cases ran without error ({[r[error] for r in learned]})")
    check(sorted(os.listdir(f"{work}/l3/models")) == ["net.h5"],
          f"3 ranks: one model file in models/, no checkpoint or temporary ({os.listdir(f'{work}/l3/models')})")
    a, b = model_parameters(f"{work}/l1/models/net.h5"), model_parameters(f"{work}/l3/models/net.h5")
    check(len(a) > 0 and a == b, f"3 ranks: the model's {len(a)} tensors equal the one-process run's bit for bit")


def model_parameters(path):
    import h5py
    out = {}
    with h5py.File(path, "r") as f:
        f["/model/parameters"].visititems(lambda n, d: out.__setitem__(n, d[()].tobytes()) if hasattr(d, "shape") else None)
    return out


def mpi_refusals(work):
    out = subprocess.run(mpi_cmd(3, ["--out", "jobs", "--jobs", "2"]), capture_output=True, text=True, cwd=work,
                         timeout=120)
    check(out.returncode == 2, f"mpirun with --jobs 2 exits 2 (got {out.returncode})")
    check(out.stderr.count("recofold: error:") == 1 and "--jobs" in out.stderr,
          f"--jobs under MPI: one message naming --jobs ({out.stderr.strip()[:300]})")
    check(not os.path.exists(f"{work}/jobs"), "--jobs under MPI: no folder made")
    # A folder not shared: rank 0 and the other ranks resolve the relative
    # --out in different working folders, so the others do not see its probe file.
    for d in ("rank0", "others"):
        os.makedirs(f"{work}/{d}")
    args = [EXE, "--quiet", "study", "--config", f"{work}/study.toml", "--out", "unshared"]
    out = subprocess.run([MPIRUN, "--oversubscribe", "--allow-run-as-root", "-np", "1", "--wdir", f"{work}/rank0"] +
                         args + [":", "-np", "2", "--wdir", f"{work}/others"] + args, capture_output=True, text=True,
                         cwd=work, timeout=120)
    check(out.returncode == 2, f"a folder the ranks do not share: exit 2 (got {out.returncode})")
    check(out.stderr.count("recofold: error:") == 1 and "--out" in out.stderr and "every rank shares" in out.stderr,
          f"a folder not shared: one message naming --out ({out.stderr.strip()[:250]})")
    check(os.listdir(f"{work}/rank0") == [] and os.listdir(f"{work}/others") == [],
          "a folder not shared: no folder left behind")
    env = clean_env()
    env["OMPI_COMM_WORLD_SIZE"] = "3"
    out = subprocess.run([EXE, "phantom", "--help"], capture_output=True, text=True, cwd=work, env=env)
    check(out.returncode == 2 and "only 'study' runs as an MPI job" in out.stderr,
          f"another command under a 3-process launch is refused (exit {out.returncode}: {out.stderr.strip()})")


def shard_auto(work, reference):
    for task in (1, 2, 3):
        env = clean_env()
        env.update(SLURM_ARRAY_TASK_ID=str(task + 4), SLURM_ARRAY_TASK_MIN="5", SLURM_ARRAY_TASK_COUNT="3")
        out = study(["--out", f"auto{task}", "--shard", "auto"], work, env)
        check(out.returncode == 0, f"--shard auto, Slurm task {task} of 3, exits 0 ({out.stderr.strip()})")
    out = study(["--out", "explicit2", "--shard", "2/3"], work, clean_env())
    check(out.returncode == 0, "--shard 2/3 exits 0")
    check(rows_without_time(f"{work}/auto2/results.csv") == rows_without_time(f"{work}/explicit2/results.csv"),
          "--shard auto (SLURM_ARRAY_TASK_ID=6, MIN=5, COUNT=3) equals --shard 2/3")
    out = subprocess.run([EXE, "--quiet", "study", "--merge", "auto1", "auto2", "auto3", "--out", "merged"],
                         capture_output=True, text=True, cwd=work, env=clean_env())
    check(out.returncode == 0, f"merge of the 3 array tasks exits 0 ({out.stderr.strip()})")
    if out.returncode == 0:
        check(rows_without_time(f"{work}/merged/results.csv") == reference,
              "3 array tasks merged equal the one-process run")
    env = clean_env()
    env.update(SGE_TASK_ID="3", SGE_TASK_FIRST="1", SGE_TASK_LAST="5", SGE_TASK_STEPSIZE="2")
    out = study(["--out", "sge", "--shard", "auto"], work, env)
    check(out.returncode == 0 and "in shard 2/3" in out.stdout,
          f"--shard auto from Grid Engine (task 3 of 1-5 step 2) is shard 2/3 ({out.stdout.strip()[:120]})")
    out = study(["--out", "none", "--shard", "auto"], work, clean_env())
    check(out.returncode == 2 and "--shard" in out.stderr and not os.path.exists(f"{work}/none"),
          f"--shard auto without array variables: exit 2 naming --shard ({out.stderr.strip()[:200]})")
    env = clean_env()
    env["PBS_ARRAY_INDEX"] = "2"
    out = study(["--out", "pbs", "--shard", "auto"], work, env)
    check(out.returncode == 2 and "RECOFOLD_SHARD_COUNT" in out.stderr,
          "--shard auto with PBS_ARRAY_INDEX but no count: exit 2 naming RECOFOLD_SHARD_COUNT")


def main():
    if not MPIRUN:
        print("FAIL mpirun not found (install openmpi-bin: scripts/install-deps.sh)")
        return 1
    work = tempfile.mkdtemp(prefix="study-mpi-")
    try:
        open(f"{work}/study.toml", "w").write(CONFIG)
        out = study(["--out", "one", "--jobs", "1"], work, clean_env())
        check(out.returncode == 0, f"one-process study exits 0 ({out.stderr.strip()})")
        if out.returncode != 0:
            return 1
        reference = rows_without_time(f"{work}/one/results.csv")
        check(len(reference) == CASES + 1 and all(r[reference[0].index("error")] == "" for r in reference[1:]),
              f"one-process study: {CASES} rows without errors")
        mpi_equal_and_kill(work, reference)
        mpi_refusals(work)
        shard_auto(work, reference)
        mpi_learned(work)
    finally:
        shutil.rmtree(work, ignore_errors=True)
    return check.summary()


if __name__ == "__main__":
    sys.exit(main())
