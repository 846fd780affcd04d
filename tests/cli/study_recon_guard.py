#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# One reconstruction path, checked through the real executable: a one-object
# study with keep = "all" over MRI, CT, denoise and inpaint and every
# classical method x prior it accepts; then `recofold recon` with the same
# spec given as flags on each kept measurement must write exactly the kept
# image (pixel arrays equal bit for bit). Unrolled needs a trained model and
# is covered by the learned tests.
import csv
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
failures = []

# name, study keys, recon flags (the same spec both ways)
METHODS = [
    ("zf", {"method": "zero-filled"}, ["--method", "zero-filled"]),
    ("fbp", {"method": "fbp"}, ["--method", "fbp"]),
    ("cg", {"method": "cg", "prior": "none", "iters": 6}, ["--method", "cg", "--prior", "none", "--iters", "6"]),
    ("cg-l2", {"method": "cg", "prior": "l2", "lambda": 0.01, "iters": 6},
     ["--method", "cg", "--prior", "l2", "--lambda", "0.01", "--iters", "6"]),
    ("ista-wavelet", {"method": "ista", "prior": "wavelet", "lambda": 0.005, "iters": 6, "levels": 2},
     ["--method", "ista", "--prior", "wavelet", "--lambda", "0.005", "--iters", "6", "--levels", "2"]),
    ("fista-wavelet", {"method": "fista", "prior": "wavelet", "lambda": 0.005, "iters": 6, "levels": 2},
     ["--method", "fista", "--prior", "wavelet", "--lambda", "0.005", "--iters", "6", "--levels", "2"]),
    ("fista-tv", {"method": "fista", "prior": "tv", "lambda": 0.01, "iters": 6},
     ["--method", "fista", "--prior", "tv", "--lambda", "0.01", "--iters", "6"]),
    ("fista-tv-auto", {"method": "fista", "prior": "tv", "lambda": "auto", "iters": 6, "lambda_solves": 4},
     ["--method", "fista", "--prior", "tv", "--lambda", "auto", "--iters", "6", "--lambda-solves", "4"]),
    ("admm-tv", {"method": "admm", "prior": "tv", "lambda": 0.01, "iters": 5},
     ["--method", "admm", "--prior", "tv", "--lambda", "0.01", "--iters", "5"]),
    ("admm-l1", {"method": "admm", "prior": "wavelet", "lambda": 0.005, "iters": 5, "levels": 2},
     ["--method", "admm", "--prior", "wavelet", "--lambda", "0.005", "--iters", "5", "--levels", "2"]),
    ("pdhg-tv", {"method": "pdhg", "prior": "tv", "lambda": 0.01, "iters": 8},
     ["--method", "pdhg", "--prior", "tv", "--lambda", "0.01", "--iters", "8"]),
    ("pdhg-tv-aniso", {"method": "pdhg", "prior": "tv-aniso", "lambda": 0.01, "iters": 8},
     ["--method", "pdhg", "--prior", "tv-aniso", "--lambda", "0.01", "--iters", "8"]),
    ("pdhg-oracle", {"method": "pdhg", "prior": "tv", "lambda": [0.003, 0.03], "iters": 8},
     ["--method", "pdhg", "--prior", "tv", "--lambda", "0.003,0.03", "--iters", "8"]),
]


def toml_value(v):
    if isinstance(v, str):
        return '"' + v + '"'
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    return repr(v)


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def main():
    tmp = tempfile.mkdtemp(prefix="recofold-guard-")
    cfg = ['keep = "all"', "size = 32", "seed = 4", "[[phantom]]", 'family = "ellipses"', "count = 1",
           "[mri]", "accel = 2", "coils = 2", "noise = 0.01", "[ct]", "views = 24", "photons = 1e5",
           "[denoise]", "noise = 0.05", "[inpaint]", 'pattern = "random"', "keep = 0.5", "noise = 0.01"]
    for name, keys, _ in METHODS:
        cfg += ["[[method]]", f'name = "{name}"'] + [f"{k} = {toml_value(v)}" for k, v in keys.items()]
    path = os.path.join(tmp, "guard.toml")
    with open(path, "w") as f:
        f.write("\n".join(cfg) + "\n")
    out = subprocess.run([EXE, "--quiet", "study", "--config", path, "--out", os.path.join(tmp, "s")],
                         capture_output=True, text=True)
    check(out.returncode == 0, f"study exits 0 ({out.stderr.strip()})")
    if out.returncode != 0:
        return
    rows = list(csv.DictReader(open(os.path.join(tmp, "s", "results.csv"))))
    flags = {name: f for name, _, f in METHODS}
    seen = set()
    for r in rows:
        if r["error"]:
            check(False, f"{r['case']} ran without error ({r['error']})")
            continue
        seen.add((r["modality"], r["method"]))
        img = os.path.join(tmp, "r.h5")
        res = subprocess.run([EXE, "--quiet", "recon", "--meas", os.path.join(tmp, "s", r["measurement_file"]),
                              "--out", img] + flags[r["method"]], capture_output=True, text=True)
        if res.returncode != 0:
            check(False, f"recon of {r['case']} exits 0 ({res.stderr.strip()})")
            continue
        a = h5py.File(os.path.join(tmp, "s", r["image_file"]), "r")["image"][()]
        b = h5py.File(img, "r")["image"][()]
        same = a.shape == b.shape and a.dtype == b.dtype and np.array_equal(a.view(np.uint8), b.view(np.uint8))
        check(same, f"{r['modality']:8s} {r['method']:14s} recon (flags) == study (keep = all), bit for bit")
    # Every modality ran every method that applies there.
    for mod in ("mri", "ct", "denoise", "inpaint"):
        ran = {m for (md, m) in seen if md == mod}
        expect = {n for n, _, _ in METHODS} - ({"zf"} if mod == "ct" else {"fbp"})
        check(ran == expect, f"{mod}: all {len(expect)} methods ran (missing {sorted(expect - ran)})")


main()
if failures:
    print(f"{len(failures)} failure(s)")
    sys.exit(1)
print("all checks passed")
