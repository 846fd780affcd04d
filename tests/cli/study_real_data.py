#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# A study of masks x methods on real data, in one config (issue 17):
#   [[measurement]] a fully sampled 8-coil dataset from Debian's ismrmrd-tools
#                   (ismrmrd_generate_cartesian_shepp_logan), imported with
#                   ESPIRiT maps; every MRI case undersamples it retrospectively;
#   [[object]]      a DICOM image shipped by a Debian package (pydicom's
#                   MR_small.dcm, 64x64) simulated from its pixels.
# Checks: the measured object runs with its own coil count (the coils axis is
# for simulated objects), every case succeeds, TV with auto lambda beats
# zero-filled on the measured data at R = 4, the report states the truth of
# each object ("fully sampled"; "no analytic truth: inverse crime possible"),
# and bad objects (not fully sampled, wrong grid, CT data, slice out of range,
# DICOM without pixel data, missing file, no [mri] protocol) exit 2 naming
# the config file and key, writing nothing.
import copy
import csv
import os
import shutil
import subprocess
import sys
import tempfile

import h5py
import pydicom
from pydicom.data import get_testdata_file

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import _harness  # noqa: E402  (shared bad-input rule)

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
SRC = os.path.abspath(os.environ.get("RECOFOLD_SOURCE_DIR", os.path.join(os.path.dirname(os.path.abspath(__file__)),
                                                                         "..", "..")))
MR = get_testdata_file("MR_small.dcm")
CT = get_testdata_file("CT_small.dcm")
failures = []

STUDY = f"""
name = "real-data"
size = 64
seed = 3
[[measurement]]
file = "full.h5"
name = "scan"
[[object]]
file = "{MR}"
[mri]
pattern = ["lines-vd"]
accel = [2, 4]
coils = [1]
noise = [0.001]
[[method]]
method = "zero-filled"
[[method]]
method = "admm"
prior = "tv"
lambda = "auto"
"""


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def run(args, cwd):
    return subprocess.run([EXE, "--quiet"] + args, capture_output=True, text=True, cwd=cwd)


def prepare(tmp):
    out = subprocess.run(["ismrmrd_generate_cartesian_shepp_logan", "-o", "raw.h5", "-m", "64", "-c", "8", "-O", "2",
                          "-n", "0.02"], capture_output=True, text=True, cwd=tmp)
    check(out.returncode == 0, "ismrmrd-tools generate a fully sampled 8-coil dataset")
    out = run(["import", "raw.h5", "--out", "full.h5"], tmp)
    check(out.returncode == 0, f"import (ESPIRiT maps) exits 0 ({out.stderr.strip()})")


def study(tmp):
    with open(os.path.join(tmp, "real.toml"), "w") as f:
        f.write(STUDY)
    out = run(["study", "--config", "real.toml", "--out", "st", "--jobs", "1"], tmp)
    check(out.returncode == 0, f"the study exits 0 ({out.stderr.strip()})")
    if out.returncode != 0:
        return
    with open(os.path.join(tmp, "st", "results.csv")) as f:
        rows = list(csv.DictReader(f))
    check(len(rows) == 8, f"2 objects x 2 accelerations x 2 methods = 8 rows ({len(rows)})")
    check(all(r["error"] == "" for r in rows), "every case succeeds: " + "; ".join(r["error"] for r in rows if r["error"]))
    scan = [r for r in rows if r["phantom"] == "scan"]
    mr = [r for r in rows if r["phantom"] == "MR_small-s0"]
    check(len(scan) == 4 and all(r["coils"] == "8" for r in scan), "the measured object runs with its 8 coils")
    check(len(mr) == 4 and all(r["coils"] == "1" for r in mr), "the DICOM object runs on the coils axis (1)")

    def psnr(rows_, method, accel):
        return float(next(r for r in rows_ if r["method"] == method and r["accel"] == accel)["psnr"])
    zf, tv = psnr(scan, "zero-filled", "4"), psnr(scan, "admm-tv", "4")
    print(f"study on the imported dataset, R = 4: zero-filled {zf:.2f} dB, ADMM-TV auto {tv:.2f} dB")
    check(tv >= zf + 3.0, f"TV auto {tv:.2f} dB beats zero-filled {zf:.2f} dB by >= 3 dB in the study")
    check(psnr(scan, "admm-tv", "2") > psnr(scan, "admm-tv", "4"), "R = 2 scores above R = 4")
    with open(os.path.join(tmp, "st", "report.html")) as f:
        report = f.read()
    check("truth = fully sampled" in report, "the report states the measured object's fully sampled truth")
    check("no analytic truth: inverse crime possible" in report, "the report states the image object's discrete truth")


def bad_case(name, config_text, must_mention, tmp):
    with open(os.path.join(tmp, "bad.toml"), "w") as f:
        f.write(config_text)
    _harness.bad_input_case(name, lambda: run(["study", "--config", "bad.toml", "--out", "o"], tmp), must_mention, tmp,
                            failures, one_line=True)


def bad_inputs(tmp):
    tail = '[mri]\naccel = 4\nnoise = 0.001\n[[method]]\nmethod = "zero-filled"\n'
    run(["mask", "--pattern", "lines-vd", "--size", "64", "--accel", "4", "--out", "m4.h5"], tmp)
    run(["simulate", "--from", "full.h5", "--mask", "m4.h5", "--out", "r4.h5"], tmp)
    run(["phantom", "--table", os.path.join(SRC, "phantoms", "shepp-logan-modified.toml"), "--size", "64", "--out",
         "ph.h5"], tmp)
    run(["simulate", "--phantom", "ph.h5", "--modality", "ct", "--out", "ct.h5"], tmp)
    run(["trajectory", "--kind", "radial", "--size", "64", "--spokes", "16", "--out", "tr.h5"], tmp)
    run(["simulate", "--phantom", "ph.h5", "--modality", "mri", "--coils", "2", "--trajectory", "tr.h5", "--out",
         "radial.h5"], tmp)
    ds = pydicom.dcmread(MR)
    nopix = copy.deepcopy(ds)
    del nopix.PixelData
    nopix.save_as(os.path.join(tmp, "nopixels.dcm"))
    shutil.copy(MR, os.path.join(tmp, "mr.dcm"))
    before = 'size = 64\n'
    bad_case("undersampled measurement", before + '[[measurement]]\nfile = "r4.h5"\n' + tail,
             ["bad.toml", "file", "r4.h5", "fully sampled"], tmp)
    bad_case("measurement on another grid", 'size = 32\n[[measurement]]\nfile = "full.h5"\n' + tail,
             ["bad.toml", "full.h5", "size = [64, 64]"], tmp)
    bad_case("CT data as a measurement", before + '[[measurement]]\nfile = "ct.h5"\n' + tail,
             ["bad.toml", "ct.h5", "a CT measurement"], tmp)
    with h5py.File(os.path.join(tmp, "radial.h5"), "r") as src, h5py.File(os.path.join(tmp, "radial-nt.h5"), "w") as dst:
        for key in src:  # a non-Cartesian file without its truth
            if key != "truth":
                src.copy(key, dst)
        dst.attrs.update(src.attrs)
    bad_case("non-Cartesian measurement without truth", before + '[[measurement]]\nfile = "radial-nt.h5"\n' + tail,
             ["bad.toml", "radial-nt.h5", "non-Cartesian", "/truth"], tmp)
    bad_case("missing measurement file", before + '[[measurement]]\nfile = "none.h5"\n' + tail,
             ["bad.toml", "none.h5", "not found"], tmp)
    bad_case("measurement without [mri]", before + '[[measurement]]\nfile = "full.h5"\n[ct]\nviews = 30\n'
             '[[method]]\nmethod = "fbp"\n', ["bad.toml", "[mri]"], tmp)
    bad_case("unknown key", before + '[[measurement]]\nfile = "full.h5"\nslice = 2\n' + tail, ["bad.toml", "slice"], tmp)
    bad_case("slice out of range", before + '[[object]]\nfile = "mr.dcm"\nslice = 40\n' + tail,
             ["bad.toml", "slice", "out of range", "0..0"], tmp)
    bad_case("image of another size", before + f'[[object]]\nfile = "{CT}"\n' + tail,
             ["bad.toml", "CT_small.dcm", "size = [128, 128]"], tmp)
    bad_case("DICOM without pixel data", before + '[[object]]\nfile = "nopixels.dcm"\n' + tail,
             ["bad.toml", "nopixels.dcm", "pixel data"], tmp)
    bad_case("missing image", before + '[[object]]\nfile = "none.dcm"\n' + tail, ["bad.toml", "none.dcm"], tmp)
    bad_case("twice the same label", before + '[[object]]\nfile = "mr.dcm"\n[[object]]\nfile = "mr.dcm"\n' + tail,
             ["bad.toml", "listed twice"], tmp)


def main():
    if not shutil.which("ismrmrd_generate_cartesian_shepp_logan"):
        print("FAIL ismrmrd-tools are not installed (scripts/install-deps.sh installs them)")
        return 1
    with tempfile.TemporaryDirectory(prefix="recofold_study_real_") as tmp:
        prepare(tmp)
        study(tmp)
        bad_inputs(tmp)
    print(f"{len(failures)} failed" if failures else "all checks passed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
