#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# A study's CT method with lambda = "auto" uses the held-out-views rule shared
# with `recofold recon` (exact line integrals make a plain discrepancy target
# unreachable): the case must succeed, record the chosen weight, and beat FBP
# clearly on a 45-view, 1e5-photon QC-disk acquisition at 64^2.
import csv
import os
import subprocess
import sys
import tempfile

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
SRC = os.environ.get("RECOFOLD_SOURCE_DIR", ".")

CONFIG = f"""
name = "ct-auto"
size = 64
seed = 2
[[phantom]]
table = "{SRC}/phantoms/qc-disk.toml"
[ct]
views = [45]
photons = 1e5
[[method]]
method = "fbp"
[[method]]
name = "pdhg-tv"
method = "pdhg"
prior = "tv"
lambda = "auto"
iters = 150
modality = "ct"
"""


def main():
    with tempfile.TemporaryDirectory() as tmp:
        with open(os.path.join(tmp, "study.toml"), "w") as f:
            f.write(CONFIG)
        r = subprocess.run([EXE, "--quiet", "study", "--config", "study.toml", "--out", "st", "--jobs", "1"],
                           capture_output=True, text=True, cwd=tmp)
        if r.returncode != 0:
            print("FAIL  study exit", r.returncode, r.stderr, file=sys.stderr)
            sys.exit(1)
        with open(os.path.join(tmp, "st", "results.csv")) as f:
            rows = {row["method"]: row for row in csv.DictReader(f)}
        fbp, tv = rows["fbp"], rows["pdhg-tv"]
        lam = float(tv["lambda"]) if tv["lambda"] else float("nan")
        gain = float(tv["psnr"]) - float(fbp["psnr"])
        print(f"fbp {float(fbp['psnr']):.2f} dB, pdhg-tv auto {float(tv['psnr']):.2f} dB (lambda {lam:.3g}), "
              f"gain {gain:+.2f} dB")
        ok = tv["error"] == "" and lam > 0 and gain >= 3.0
        print(("ok    " if ok else "FAIL  ") + "CT lambda auto in a study: chosen, recorded and better than FBP by >= 3 dB")
        if not ok:
            sys.exit(1)


if __name__ == "__main__":
    main()
