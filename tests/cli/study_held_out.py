#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Held-out objects end to end: a study whose family objects a model trained on exits 2 before any case
# runs, naming the study's [[phantom]] range and the model's range; other seeds run; a model the study
# trains itself gets a training seed none of its family tables uses, even when the training config's
# seed equals the study's family seed.
import csv
import json
import os
import sys
import tempfile

import h5py

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from _harness import Checks, recofold, must_succeed, tiny_unrolled_training  # noqa: E402

EXE = os.path.abspath(os.environ.get("RECOFOLD_EXE", "./recofold"))
os.environ["OMP_WAIT_POLICY"] = "PASSIVE"  # idle OpenMP threads sleep (see src/learn/CMakeLists.txt)

TRAIN = tiny_unrolled_training('seed = 5')

STUDY = """
size = 32
seed = 3
[[phantom]]
table = "{qc}"
[[phantom]]
family = "textured"
count = {count}
seed = {seed}
[mri]
accel = 2
noise = 0.01
[[method]]
method = "zero-filled"
[[method]]
name = "net"
method = "unrolled"
modality = "mri"
{model}
"""


def seeds_of(path):
    with h5py.File(path, "r") as f:
        raw = f["model"].attrs["trained_on"]
    return json.loads(raw if isinstance(raw, str) else raw.decode())["seeds"]


def main():
    check = Checks()
    qc = os.path.join(os.environ.get("RECOFOLD_SOURCE_DIR", "."), "phantoms", "qc-disk.toml")
    qc = os.path.abspath(qc)
    with tempfile.TemporaryDirectory() as tmp:
        def write(name, text):
            with open(os.path.join(tmp, name), "w") as f:
                f.write(text)

        write("train.toml", TRAIN)
        out = recofold(EXE, ["train", "--config", "train.toml", "--out", "m.h5"], tmp)
        if out.returncode != 0 and "learn" in out.stderr:
            print("skipped: this build has no learn module (" + out.stderr.strip() + ")")
            return 0
        check(out.returncode == 0, f"tiny model trains (exit {out.returncode}: {out.stderr.strip()})")
        check([s["seed"] for s in seeds_of(os.path.join(tmp, "m.h5")) if s["use"] == "train"] == [5],
              "the model records its training seed 5")
        # Training objects: textured seed 5, objects 0..3 (2 steps x batch 2).
        write("overlap.toml", STUDY.format(qc=qc, count=2, seed=5, model='model = "m.h5"'))
        out = recofold(EXE, ["study", "--config", "overlap.toml", "--out", "o1"], tmp)
        msg = out.stderr.strip()
        check(out.returncode == 2, f"overlapping study exits 2 (got {out.returncode}: {msg})")
        for word in ["overlap.toml:9", "phantom[1].seed", "family textured, seed 5, objects 0..1", "m.h5",
                     "train: textured, seed 5, objects 0..3", "held out"]:
            check(word in msg, f"message names '{word}'")
        check(not os.path.exists(os.path.join(tmp, "o1")), "no case ran: no output folder")
        # The same objects with another family seed are held out.
        write("apart.toml", STUDY.format(qc=qc, count=2, seed=6, model='model = "m.h5"'))
        must_succeed(EXE, ["study", "--config", "apart.toml", "--out", "o2"], tmp, check)
        check(os.path.exists(os.path.join(tmp, "o2", "results.csv")), "a held-out study runs")
        # The study trains its own model: the training config's seed (5) equals the family seed, but the
        # study gives the training another seed.
        write("own.toml", STUDY.format(qc=qc, count=2, seed=5, model='train = "train.toml"\ntrain_steps = 2'))
        must_succeed(EXE, ["study", "--config", "own.toml", "--out", "o3"], tmp, check)
        model = os.path.join(tmp, "o3", "models", "net.h5")
        if check(os.path.exists(model), "the study trained its model"):
            seeds = seeds_of(model)
            check(all(s["seed"] != 5 for s in seeds), f"its training and validation seeds avoid 5: {seeds}")
        # "Inside training conditions" also compares the object family: the model trained on textured
        # objects at this acquisition is inside on the textured objects only, not on the phantom table.
        with open(os.path.join(tmp, "o3", "results.csv"), newline="") as f:
            inside = {r["phantom"]: r["in_training_conditions"] for r in csv.DictReader(f) if r["case"].split("|")[2] == "net"}
        check(inside == {"qc-disk": "no", "textured-5-0": "yes", "textured-5-1": "yes"},
              f"in_training_conditions by object family: {inside}")
        # A rerun of the same folder reuses (and checks) the model and finds nothing to do.
        must_succeed(EXE, ["study", "--config", "own.toml", "--out", "o3"], tmp, check)
    return check.summary()


if __name__ == "__main__":
    sys.exit(main())
