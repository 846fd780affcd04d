#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# A build without MPI (RECOFOLD_WITH_MPI=OFF; registered only there) started
# as one of several MPI processes (the launcher's environment variables, as
# mpirun or srun set them) refuses with exit 2 instead of running the whole
# command once per process into one folder; started as the only process it
# runs the study as usual.
import os
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import _harness  # noqa: E402  (shared checks and environment)

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
SRC = os.environ.get("RECOFOLD_SOURCE_DIR", ".")
check = _harness.Checks()

CONFIG = f"""
name = "no-mpi"
size = 32
seed = 1
[[phantom]]
table = "{SRC}/phantoms/qc-disk.toml"
[mri]
accel = [2]
[[method]]
method = "zero-filled"
"""


def run(env_extra, out, work):
    return _harness.recofold(EXE, ["study", "--config", "study.toml", "--out", out], work,
                             _harness.launcher_free_env(env_extra))


def main():
    with tempfile.TemporaryDirectory(prefix="study-no-mpi-") as work:
        return checks_in(work)


def checks_in(work):
    open(f"{work}/study.toml", "w").write(CONFIG)
    for name, env in (("Open MPI", {"OMPI_COMM_WORLD_SIZE": "3"}), ("PMI", {"PMI_SIZE": "2"})):
        out = run(env, "refused", work)
        check(out.returncode == 2, f"{name} launch of 3/2 processes: exit 2 (got {out.returncode})")
        check("this build has no MPI support" in out.stderr, f"{name}: says the build has no MPI ({out.stderr.strip()})")
        check(not os.path.exists(f"{work}/refused"), f"{name}: no output folder")
    out = run({"OMPI_COMM_WORLD_SIZE": "3", "OMPI_COMM_WORLD_RANK": "1"}, "refused", work)
    check(out.returncode == 2 and out.stderr == "", "rank 1 of 3 exits 2 without a message (rank 0 prints it)")
    out = run({"OMPI_COMM_WORLD_SIZE": "1"}, "single", work)
    check(out.returncode == 0 and os.path.isfile(f"{work}/single/summary.csv"),
          f"one MPI process: the study runs ({out.stderr.strip()})")
    return check.summary()


if __name__ == "__main__":
    sys.exit(main())
