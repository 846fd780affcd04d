#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# CT end to end: phantom -> simulate --modality ct -> recon --method fbp -> score, and CT bad input.
#
# Checks the exit codes, the measurement layout (/ct/sinogram [views,
# detectors], angles), that every FBP filter runs and scores sensibly, that a
# full noiseless acquisition beats a 60-view low-dose one, fan beam and view
# protocols, and that bad CT flags exit with 2, name the flag and write nothing.
import json
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import _harness  # noqa: E402  (shared bad-input rule)

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
SRC = os.environ.get("RECOFOLD_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
failures = []


def check(ok, what):
    print(("ok    " if ok else "FAIL  ") + what)
    if not ok:
        failures.append(what)


def run(args, cwd):
    return subprocess.run([EXE, "--quiet"] + args, capture_output=True, text=True, cwd=cwd)


def must_succeed(args, cwd):
    out = run(args, cwd)
    check(out.returncode == 0, " ".join(args[:1] + args[1:6]) + f" ... exit {out.returncode} {out.stderr.strip()}")
    return out


def score(ref, img, cwd):
    out = must_succeed(["score", "--reference", ref, "--image", img, "--json"], cwd)
    try:
        return json.loads(out.stdout)
    except json.JSONDecodeError:
        check(False, f"score --json printed JSON: {out.stdout!r}")
        return {"psnr": float("nan"), "ssim": float("nan")}


def bad_case(name, args, must_mention, workdir):
    return _harness.bad_input_case(name, lambda: run(args, workdir), must_mention, workdir, failures)


def main():
    table = os.path.join(SRC, "phantoms", "shepp-logan-modified.toml")
    with tempfile.TemporaryDirectory() as tmp:
        must_succeed(["phantom", "--table", table, "--size", "64", "--out", "p.h5"], tmp)

        # 60-view low-dose parallel beam.
        must_succeed(["simulate", "--phantom", "p.h5", "--modality", "ct", "--views", "60", "--photons", "1e4",
                      "--seed", "1", "--out", "m60.h5"], tmp)
        # The summary line states geometry, views, detectors and dose.
        line = subprocess.run([EXE, "simulate", "--phantom", "p.h5", "--modality", "ct", "--views", "60", "--photons",
                               "1e4", "--geometry", "fan", "--out", "summary.h5"], capture_output=True, text=True,
                              cwd=tmp).stdout
        for words in ("fan beam", "60 views over 360 deg", "detectors x", "1e+04 photons/ray", "source "):
            check(words in line, f"simulate's CT summary names '{words}': {line.strip()}")
        with h5py.File(os.path.join(tmp, "m60.h5"), "r") as f:
            sino = f["ct/sinogram"][()]
            angles = f["ct/angles_rad"][()]
            check(sino.shape == (60, 91), f"/ct/sinogram shape {sino.shape} == (60, 91)")
            check(np.allclose(np.diff(angles), np.pi / 60), "60 angles equally spaced over 180 degrees")
            largest = float(sino.max())
            check(3.0 < largest < 5.5, f"largest noisy line integral {largest:.2f} in the usual 3-5 range")

        psnrs = {}
        for name in ["ram-lak", "shepp-logan", "cosine", "hamming", "hann"]:
            must_succeed(["recon", "--meas", "m60.h5", "--method", "fbp", "--filter", name, "--out", f"r_{name}.h5"],
                         tmp)
            psnrs[name] = score("p.h5", f"r_{name}.h5", tmp)["psnr"]
        print("        PSNR by filter (60 views, I0 = 1e4):",
              ", ".join(f"{k} {v:.2f} dB" for k, v in psnrs.items()))
        check(all(p > 12.0 for p in psnrs.values()), "every filter reconstructs (PSNR > 12 dB)")

        # Very low dose (I0 = 1e3): noise lowers the score, and the Hann window
        # trades edge sharpness for noise (higher SSIM than Ram-Lak).
        # (At 64^2 and I0 = 1e4 edges, not noise, dominate: Ram-Lak scores best.)
        must_succeed(["simulate", "--phantom", "p.h5", "--modality", "ct", "--views", "60", "--photons", "1e3",
                      "--seed", "1", "--out", "mlow.h5"], tmp)
        low = {}
        for name in ["ram-lak", "hann"]:
            must_succeed(["recon", "--meas", "mlow.h5", "--method", "fbp", "--filter", name, "--out", f"l_{name}.h5"],
                         tmp)
            low[name] = score("p.h5", f"l_{name}.h5", tmp)
        check(low["hann"]["ssim"] > low["ram-lak"]["ssim"] + 0.03,
              f"I0 = 1e3: Hann SSIM {low['hann']['ssim']:.3f} > Ram-Lak {low['ram-lak']['ssim']:.3f}")
        check(psnrs["ram-lak"] > low["ram-lak"]["psnr"] + 0.5,
              f"I0 = 1e4 {psnrs['ram-lak']:.2f} dB beats I0 = 1e3 {low['ram-lak']['psnr']:.2f} dB (60 views, Ram-Lak)")

        must_succeed(["simulate", "--phantom", "p.h5", "--modality", "ct", "--views", "180", "--golden", "--truth",
                      "discrete", "--out", "m180.h5"], tmp)
        must_succeed(["recon", "--meas", "m180.h5", "--method", "fbp", "--out", "r180.h5"], tmp)
        p_full = score("p.h5", "r180.h5", tmp)["psnr"]
        must_succeed(["simulate", "--phantom", "p.h5", "--modality", "ct", "--geometry", "fan", "--views", "360",
                      "--truth", "discrete", "--out", "mfan.h5"], tmp)
        must_succeed(["recon", "--meas", "mfan.h5", "--method", "fbp", "--out", "rfan.h5"], tmp)
        p_fan = score("p.h5", "rfan.h5", tmp)["psnr"]
        check(abs(p_fan - p_full) < 1.5, f"fan-beam FBP {p_fan:.2f} dB close to parallel {p_full:.2f} dB")

        spec = os.path.join(SRC, "sampling-masks", "ct-limited-120.toml")
        must_succeed(["simulate", "--phantom", "p.h5", "--modality", "ct", "--view-spec", spec, "--out", "mlim.h5"],
                     tmp)
        with h5py.File(os.path.join(tmp, "mlim.h5"), "r") as f:
            a = f["ct/angles_rad"][()]
            check(len(a) == 120 and a.max() < np.deg2rad(120.0), "limited-arc protocol: 120 views inside 120 degrees")

        sim = ["simulate", "--phantom", "p.h5", "--modality", "ct"]
        bad_case("zero views", sim + ["--views", "0", "--out", "b.h5"], ["--views"], tmp)
        bad_case("detector count 0", sim + ["--detectors", "0", "--out", "b.h5"], ["--detectors"], tmp)
        bad_case("arc over 360", sim + ["--arc", "400", "--out", "b.h5"], ["--arc"], tmp)
        bad_case("negative photons", sim + ["--photons", "-5", "--out", "b.h5"], ["--photons"], tmp)
        bad_case("fan source inside the object circle", sim + ["--geometry", "fan", "--sid", "20", "--out", "b.h5"],
                 ["--sid", "circle"], tmp)
        bad_case("unknown filter", ["recon", "--meas", "m60.h5", "--method", "fbp", "--filter", "ramlak", "--out",
                                    "b.h5"], ["--filter", "ram-lak"], tmp)
        # "ramp", the common name, is the unwindowed ram-lak filter.
        must_succeed(["recon", "--meas", "m60.h5", "--method", "fbp", "--filter", "ramp", "--out", "ramp.h5"], tmp)
        must_succeed(["recon", "--meas", "m60.h5", "--method", "fbp", "--filter", "ram-lak", "--out", "ramlak.h5"], tmp)
        with h5py.File(os.path.join(tmp, "ramp.h5"), "r") as a, h5py.File(os.path.join(tmp, "ramlak.h5"), "r") as b:
            check(np.array_equal(a["image"][...], b["image"][...]), "--filter ramp gives the ram-lak image")

    if failures:
        print(f"{len(failures)} check(s) failed")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
