#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# The non-Cartesian end-to-end check at full size: 256², 8 coils, 64
# golden-angle spokes of 512 samples, sigma 0.003, exact samples of the
# modified Shepp-Logan head phantom. TV-ADMM with lambda auto (discrepancy
# rule) must beat gridding by >= 8 dB PSNR and CG-SENSE must beat gridding.
# (The acceptance numbers; about a minute on two cores.)
import json
import os
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from _harness import Checks, must_succeed  # noqa: E402

EXE = os.environ["RECOFOLD_EXE"]
SRC = os.environ["RECOFOLD_SOURCE_DIR"]
check = Checks()

with tempfile.TemporaryDirectory() as d:
    table = os.path.join(SRC, "phantoms", "shepp-logan-modified.toml")
    must_succeed(EXE, ["phantom", "--table", table, "--size", "256", "--out", "p.h5"], d, check)
    must_succeed(EXE, ["trajectory", "--kind", "radial-golden", "--size", "256", "--spokes", "64", "--readout", "512",
                       "--out", "tr.h5"], d, check)
    must_succeed(EXE, ["simulate", "--phantom", "p.h5", "--modality", "mri", "--trajectory", "tr.h5", "--coils", "8",
                       "--noise", "0.003", "--seed", "1", "--out", "m.h5"], d, check)
    psnr = {}
    for name, args in (("gridding", ["--method", "zero-filled"]), ("cg-sense", ["--method", "cg"]),
                       ("tv-admm", ["--method", "admm", "--prior", "tv", "--lambda", "auto"])):
        must_succeed(EXE, ["recon", "--meas", "m.h5", "--out", f"{name}.h5"] + args, d, check)
        out = must_succeed(EXE, ["score", "--reference", "p.h5", "--image", f"{name}.h5", "--json"], d, check)
        psnr[name] = json.loads(out.stdout)["psnr"] if out.returncode == 0 else float("nan")
    print("PSNR: " + ", ".join(f"{k} {v:.2f} dB" for k, v in psnr.items()))
    check(psnr["tv-admm"] >= psnr["gridding"] + 8.0,
          f"TV-ADMM (lambda auto) beats gridding by >= 8 dB ({psnr['tv-admm'] - psnr['gridding']:+.2f} dB)")
    check(psnr["cg-sense"] > psnr["gridding"],
          f"CG-SENSE beats gridding ({psnr['cg-sense'] - psnr['gridding']:+.2f} dB)")

sys.exit(check.summary())
