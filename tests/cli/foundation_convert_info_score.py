#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# convert, info and score working end to end on small files made with h5py:
# every export format and back, info on HDF5 and ITK files, score --json keys,
# and a measurement file's ground truth as the score reference.
import json
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def run(*args, cwd):
    return subprocess.run([EXE] + list(args), capture_output=True, text=True, cwd=cwd)


def main():
    rng = np.random.default_rng(3)
    with tempfile.TemporaryDirectory() as tmp:
        img = rng.random((20, 28)).astype(np.float32)
        with h5py.File(os.path.join(tmp, "a.h5"), "w") as f:
            f["image"] = img
            f["image"].attrs["pixel_spacing_mm"] = [0.5, 0.75]
        for ext in (".nii.gz", ".mha", ".nrrd"):
            r = run("convert", "a.h5", "a" + ext, cwd=tmp)
            check(r.returncode == 0, f"convert a.h5 -> a{ext}")
            r = run("convert", "a" + ext, "back" + ext.replace(".", "_") + ".h5", cwd=tmp)
            check(r.returncode == 0, f"convert a{ext} -> .h5")
            with h5py.File(os.path.join(tmp, "back" + ext.replace(".", "_") + ".h5"), "r") as f:
                check(np.array_equal(f["image"][()], img), f"{ext}: values survive the round trip")
                check(np.allclose(f["image"].attrs["pixel_spacing_mm"], [0.5, 0.75]), f"{ext}: spacing survives")
                check(int(f.attrs["research_use_only"]) == 1, f"{ext}: research_use_only = 1 on the .h5")
        r = run("convert", "a.h5", "a.png", "--bits", "16", "--window-lo", "0", "--window-hi", "1", cwd=tmp)
        check(r.returncode == 0, "convert a.h5 -> a.png (16 bit, window 0..1)")
        r = run("convert", "a.png", "png.h5", cwd=tmp)
        with h5py.File(os.path.join(tmp, "png.h5"), "r") as f:
            check(np.array_equal(f["image"][()], np.round(img.astype(np.float64) * 65535).astype(np.float32)),
                  "png: grey levels = round(value * 65535) with row 0 on top")

        r = run("info", "a.h5", cwd=tmp)
        check(r.returncode == 0 and "/image  float32 [20, 28]" in r.stdout, "info a.h5 shows /image float32 [20, 28]")
        r = run("info", "back_nii_gz.h5", cwd=tmp)
        check(r.returncode == 0 and "@research_use_only = 1" in r.stdout and "/provenance/" in r.stdout
              and "@command" in r.stdout, "info shows attributes and provenance")
        long_text = "first line " + "x" * 300 + "\nsecond line end"
        with h5py.File(os.path.join(tmp, "long.h5"), "w") as f:
            f["image"] = img
            f["image"].attrs["config"] = long_text
        r = run("info", "long.h5", cwd=tmp)
        check(r.returncode == 0 and "..." in r.stdout and "second line end" not in r.stdout,
              "info cuts a long attribute to one line")
        r = run("info", "--full", "long.h5", cwd=tmp)
        check(r.returncode == 0 and "x" * 300 in r.stdout and "\n      second line end" in r.stdout,
              "info --full prints it whole, continuation lines indented")
        # A table dataset (columns attribute) prints as rows under its column names, not as one range.
        hist = np.column_stack([np.arange(1, 21), np.linspace(5.0, 1.0, 20), np.full(20, 1e-3)])
        with h5py.File(os.path.join(tmp, "hist.h5"), "w") as f:
            f["recon/history"] = hist
            f["recon/history"].attrs["columns"] = "iteration,objective,data_residual"
        r = run("info", "hist.h5", cwd=tmp)
        lines = r.stdout.splitlines()
        header = [i for i, l in enumerate(lines) if l.split() == ["iteration", "objective", "data_residual"]]
        check(r.returncode == 0 and "table, 3 columns" in r.stdout and "range [" not in r.stdout.split("history")[1]
              and len(header) == 1, "info prints a history as a table under its column names")
        rows = lines[header[0] + 1:] if header else []
        check(len(rows) == 11 and rows[0].split() == ["1", "5", "0.001"] and "10 more rows" in rows[5]
              and rows[-1].split() == ["20", "1", "0.001"], "first and last five rows, the rest counted")
        r = run("info", "--full", "hist.h5", cwd=tmp)
        check(r.returncode == 0 and "more rows" not in r.stdout and " 13 " in r.stdout, "info --full prints every row")
        r = run("info", "a.mha", cwd=tmp)
        check(r.returncode == 0 and "[20, 28]" in r.stdout and "(0.5, 0.75)" in r.stdout,
              "info a.mha shows shape and spacing")

        noisy = (img + 0.05 * rng.standard_normal(img.shape)).astype(np.float32)
        with h5py.File(os.path.join(tmp, "b.h5"), "w") as f:
            f["image"] = noisy
        r = run("score", "--reference", "a.h5", "--image", "b.h5", "--json", cwd=tmp)
        check(r.returncode == 0, "score --json exits 0")
        s = json.loads(r.stdout) if r.returncode == 0 else {}
        check(all(k in s for k in ("psnr", "ssim", "nrmse", "hfen")), "score --json has psnr, ssim, nrmse, hfen")
        check(15 < s.get("psnr", 0) < 40 and 0 < s.get("ssim", 0) < 1, f"score values plausible: {s}")
        r = run("score", "--reference", "a.h5", "--image", "a.nii.gz", "--json", cwd=tmp)
        s = json.loads(r.stdout) if r.returncode == 0 else {}
        check(s.get("psnr", 0) is None and s.get("ssim") == 1.0 and s.get("nrmse") == 0.0,
              "identical images: psnr null (infinite), ssim 1, nrmse 0")
        r = run("score", "--reference", "a.h5", "--image", "b.h5", cwd=tmp)
        check(r.returncode == 0 and "For research use only" in r.stdout and "psnr" in r.stdout,
              "score text report carries the research-use line")

        # A measurement file as reference: its /truth/image is used.
        with h5py.File(os.path.join(tmp, "meas.h5"), "w") as f:
            f.attrs["modality"] = "mri"
            f.attrs["image_shape"] = np.array([20, 28], dtype=np.int64)
            f["mri/kspace"] = np.zeros((1, 20, 28), np.complex64)
            f["mri/mask"] = np.ones((20, 28), np.uint8)
            f["mri/coil_maps"] = np.ones((1, 20, 28), np.complex64)
            f["mri"].attrs["noise_sigma"] = 0.0
            f["truth/image"] = img
        r = run("score", "--reference", "meas.h5", "--image", "b.h5", "--json", cwd=tmp)
        s2 = json.loads(r.stdout) if r.returncode == 0 else {}
        check(r.returncode == 0, "score accepts a measurement file as reference")
        r3 = run("score", "--reference", "a.h5", "--image", "b.h5", "--json", cwd=tmp)
        s3 = json.loads(r3.stdout) if r3.returncode == 0 else {}
        check(s2 == {**s3, "reference": "meas.h5"}, "measurement truth scores the same as the image itself")

    if failures:
        print(f"{len(failures)} check(s) failed")
        return 1
    print("convert, info and score checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
