#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# `recofold train` end to end: bad configs exit 2 naming the key and write nothing; a tiny run writes a model
# file readable with h5py; SIGINT writes a checkpoint and --resume finishes the run. In a build without the
# learn module (RECOFOLD_TEST_LEARN=0, set by src/cli/CMakeLists.txt) `train` must refuse instead.
import json
import os
import signal
import subprocess
import sys
import tempfile
import time

import h5py

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
# Idle OpenMP threads sleep instead of spinning (see src/learn/CMakeLists.txt).
os.environ["OMP_WAIT_POLICY"] = "PASSIVE"
failures = []

TINY = """
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
steps = {steps}
batch = 2
validation_count = 2
validation_every = 2
checkpoint_every = 1000
max_minutes = {minutes}
"""


def check(name, cond, detail=""):
    print(("ok   " if cond else "FAIL ") + name + (": " + detail if detail else ""))
    if not cond:
        failures.append(name)


def bad_case(name, args, words, workdir):
    before = set(os.listdir(workdir))
    out = subprocess.run([EXE, "--quiet"] + args, capture_output=True, text=True, cwd=workdir)
    left = set(os.listdir(workdir)) - before
    ok = out.returncode == 2 and all(w in out.stderr for w in words) and not left
    check(name, ok, f"exit {out.returncode}, stderr {out.stderr.strip()!r}, new files {sorted(left)}")


def refusal_without_learn():
    """A build without the learn module (RECOFOLD_TEST_LEARN=0) refuses `train` with exit 2, one line naming
    the missing learn module, and writes nothing."""
    with tempfile.TemporaryDirectory() as tmp:
        with open(os.path.join(tmp, "tiny.toml"), "w") as f:
            f.write(TINY.format(steps=4, minutes=0))
        bad_case("train refused without the learn module", ["train", "--config", "tiny.toml", "--out", "m.h5"],
                 ["train", "no learn module", "RECOFOLD_WITH_LIBTORCH"], tmp)
        out = subprocess.run([EXE, "--quiet", "train", "--config", "tiny.toml", "--out", "m.h5"],
                             capture_output=True, text=True, cwd=tmp)
        check("the refusal is one line", len(out.stderr.strip().splitlines()) == 1, out.stderr.strip())
    if failures:
        print("FAILED:", ", ".join(failures))
        return 1
    print("this build has no learn module: only the refusal of `train` is checked")
    return 0


def main():
    if os.environ.get("RECOFOLD_TEST_LEARN") == "0":
        return refusal_without_learn()
    with tempfile.TemporaryDirectory() as tmp:
        def write(name, text):
            with open(os.path.join(tmp, name), "w") as f:
                f.write(text)
        write("tiny.toml", TINY.format(steps=4, minutes=0))
        write("unknown_key.toml", TINY.format(steps=4, minutes=0).replace("depth = 3", "depth = 3\nlayers = 4"))
        write("no_data.toml", "[model]\niterations = 2\n")
        write("bad_dc.toml", TINY.format(steps=4, minutes=0).replace("cg_iterations = 3", 'dc = "newton"'))

        bad_case("unknown architecture key", ["train", "--config", "unknown_key.toml", "--out", "m.h5"],
                 ["unknown_key.toml", "layers"], tmp)
        bad_case("missing [data] table", ["train", "--config", "no_data.toml", "--out", "m.h5"],
                 ["no_data.toml", "data"], tmp)
        bad_case("unknown dc mode", ["train", "--config", "bad_dc.toml", "--out", "m.h5"], ["dc", "newton"], tmp)
        bad_case("resume without checkpoint", ["train", "--config", "tiny.toml", "--out", "m.h5", "--resume"],
                 ["--resume", "checkpoint"], tmp)
        bad_case("output extension", ["train", "--config", "tiny.toml", "--out", "m.txt"], ["--out"], tmp)
        bad_case("missing config", ["train", "--config", "nothere.toml", "--out", "m.h5"], ["nothere.toml"], tmp)

        out = subprocess.run([EXE, "--quiet", "train", "--config", "tiny.toml", "--out", "m.h5"],
                             capture_output=True, text=True, cwd=tmp)
        check("tiny run exits 0", out.returncode == 0, out.stderr.strip())
        path = os.path.join(tmp, "m.h5")
        if os.path.exists(path):
            with h5py.File(path, "r") as f:
                arch = json.loads(f["model"].attrs["architecture"])
                trained = json.loads(f["model"].attrs["trained_on"])
                metrics = json.loads(f["model"].attrs["metrics"])
                names = list(f["model/parameters"].keys())
                check("architecture JSON", arch["iterations"] == 2 and arch["depth"] == 3 and arch["ny"] == 32,
                      str(arch))
                check("trained_on JSON", trained["modality"] == "mri" and trained["accel"] == [4.0, 4.0],
                      str(trained))
                check("metrics", metrics.get("steps") == 4 and "val_psnr_db" in metrics, str(metrics))
                check("parameter tensors", "cnn0.0.weight" in names and "dc_log_mu" in names and
                      f["model/parameters/cnn0.0.weight"].shape == (8, 2, 3, 3), str(names))
                check("research-use flag", int(f.attrs.get("research_use_only", 0)) == 1)
        check("no checkpoint left after success", not os.path.exists(os.path.join(tmp, "m.checkpoint.h5")))

        # SIGINT: checkpoint, exit 1, no model; --resume finishes (time-limited run).
        write("long.toml", TINY.format(steps=100000, minutes=0.2))
        proc = subprocess.Popen([EXE, "--quiet", "train", "--config", "long.toml", "--out", "long.h5"],
                                cwd=tmp, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
        first = proc.stdout.readline()  # printed once the signal handlers are in place
        time.sleep(1.0)
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=120)
        check("SIGINT exits 1 with a checkpoint", proc.returncode == 1 and
              os.path.exists(os.path.join(tmp, "long.checkpoint.h5")) and not os.path.exists(os.path.join(tmp, "long.h5")),
              f"exit {proc.returncode}: {first.strip()} / {err.strip()}")
        out = subprocess.run([EXE, "--quiet", "train", "--config", "long.toml", "--out", "long.h5", "--resume"],
                             capture_output=True, text=True, cwd=tmp)
        check("--resume finishes", out.returncode == 0 and os.path.exists(os.path.join(tmp, "long.h5")),
              out.stderr.strip())
    if failures:
        print("FAILED:", ", ".join(failures))
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
