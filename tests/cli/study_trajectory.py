#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Studies on non-Cartesian acquisitions (issue 16, item 5): one study at 48², 2 coils, with a Cartesian
# protocol (lines-vd, R = 4: 576 samples per coil) and a golden-angle radial one of the same sample count
# (12 spokes x 48 samples = 576), plus a [[measurement]] file on a radial trajectory (from `trajectory` and
# `simulate --trajectory`, run as measured); methods zero-filled (= gridding on trajectories) and TV-ADMM
# with lambda by the discrepancy rule.
# Checks: the rows (objects x acquisitions x methods), the trajectory / readouts / samples / accel columns
# (accel = 48² / samples, the same 4 for both protocols), Cartesian and radial rows in one table, every
# case succeeds, TV beats gridding on the radial case, the report names the trajectory and the sample count,
# and bad [mri] keys (spokes 0, trajectory "zigzag", spokes with Cartesian patterns only, interleaves
# without a spiral, radial without spokes; a Cartesian [[measurement]] with trajectories only) exit 2
# naming the file and the key, writing nothing.
#
# Margin (measured when this test was written, shepp-logan-modified, sigma 0.003): see the printed PSNRs;
# the test asks for TV > gridding + 3 dB on the radial case.
import csv
import os
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import _harness  # noqa: E402  (shared checks and bad-input rule)

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
SRC = os.environ.get("RECOFOLD_SOURCE_DIR", os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", ".."))
check = _harness.Checks()
N = 48
PHANTOM = os.path.join(SRC, "phantoms", "shepp-logan-modified.toml")

STUDY = f"""
name = "traj"
size = {N}
seed = 2
[[phantom]]
table = "{PHANTOM}"
[[measurement]]
file = "radial.h5"
name = "scan"
[mri]
pattern = "lines-vd"
accel = 4
coils = 2
noise = 0.003
trajectory = "radial-golden"
spokes = 12
readout = {N}
[[method]]
method = "zero-filled"
[[method]]
method = "admm"
prior = "tv"
lambda = "auto"
"""


def run(args, cwd):
    return _harness.recofold(EXE, args, cwd)


def make_measurement(tmp):
    _harness.must_succeed(EXE, ["phantom", "--table", PHANTOM, "--size", str(N), "--out", "ph.h5"], tmp, check)
    _harness.must_succeed(EXE, ["trajectory", "--kind", "radial", "--size", str(N), "--spokes", "16", "--readout",
                                str(N), "--out", "tr.h5"], tmp, check)
    _harness.must_succeed(EXE, ["simulate", "--phantom", "ph.h5", "--modality", "mri", "--coils", "2", "--trajectory",
                                "tr.h5", "--noise", "0.003", "--out", "radial.h5"], tmp, check)


def study(tmp):
    with open(os.path.join(tmp, "traj.toml"), "w") as f:
        f.write(STUDY)
    out = _harness.must_succeed(EXE, ["study", "--config", "traj.toml", "--out", "st", "--jobs", "1"], tmp, check)
    if out.returncode != 0:
        return
    with open(os.path.join(tmp, "st", "results.csv")) as f:
        rows = list(csv.DictReader(f))
    # Phantom: Cartesian + radial-golden; the measured file: its own radial trajectory. Two methods each.
    check(len(rows) == 6, f"(2 phantom acquisitions + 1 measured) x 2 methods = 6 rows ({len(rows)})")
    check(all(r["error"] == "" for r in rows), "every case succeeds: " + "; ".join(r["error"] for r in rows if r["error"]))
    ph = [r for r in rows if r["phantom"] == "shepp-logan-modified"]
    cart = [r for r in ph if r["pattern"] == "lines-vd"]
    rad = [r for r in ph if r["trajectory"] == "radial-golden"]
    scan = [r for r in rows if r["phantom"] == "scan"]
    check(len(cart) == 2 and all(r["trajectory"] == r["readouts"] == r["samples"] == "" for r in cart),
          "Cartesian rows: pattern set, trajectory / readouts / samples blank")
    check(len(rad) == 2 and all(r["pattern"] == "" and r["readouts"] == "12" and r["samples"] == str(12 * N)
                                for r in rad), "radial rows name the trajectory, 12 readouts and 576 samples")
    check(all(r["accel"] == "4" for r in cart + rad), "accel 4 for both protocols (48² / 576 samples for radial)")
    check(len(scan) == 2 and all(r["trajectory"] == "radial" and r["samples"] == str(16 * N) and r["coils"] == "2"
                                 for r in scan), "the measured file runs on its own 16-spoke radial trajectory")
    check(all(r["modality"] == "mri" for r in rows), "Cartesian and radial rows sit in one MRI table")

    def psnr(rs, method):
        return float(next(r for r in rs if r["method"] == method)["psnr"])
    for name, rs in (("Cartesian lines-vd", cart), ("radial-golden", rad), ("measured radial", scan)):
        print(f"{name}: gridding/zero-filled {psnr(rs, 'zero-filled'):.2f} dB, TV-ADMM auto {psnr(rs, 'admm-tv'):.2f} dB")
    check(psnr(rad, "admm-tv") >= psnr(rad, "zero-filled") + 3.0, "TV-ADMM beats gridding by >= 3 dB on the radial case")
    check(psnr(scan, "admm-tv") > psnr(scan, "zero-filled"), "TV-ADMM beats gridding on the measured radial file")
    with open(os.path.join(tmp, "st", "report.html")) as f:
        report = f.read()
    check("trajectory radial-golden" in report and "samples 576" in report,
          "the report's condition names the trajectory and the sample count")


def bad_inputs(tmp):
    head = f'size = {N}\n[[phantom]]\ntable = "{PHANTOM}"\n[mri]\n'
    tail = '[[method]]\nmethod = "zero-filled"\n'
    cases = [
        ("spokes 0", 'trajectory = "radial"\nspokes = [8, 0]\n', ["bad.toml", "mri.spokes", "1..100000"]),
        ("unknown trajectory", 'trajectory = "zigzag"\nspokes = 8\n',
         ["bad.toml", "mri.trajectory", "zigzag", "radial, radial-golden, spiral"]),
        ("spokes with a Cartesian pattern only", 'pattern = "lines-vd"\nspokes = 8\n',
         ["bad.toml", "mri.spokes", "Cartesian patterns only"]),
        ("interleaves without a spiral", 'trajectory = "radial"\nspokes = 8\ninterleaves = 4\n',
         ["bad.toml", "mri.interleaves", "spiral"]),
        ("radial without spokes", 'trajectory = "radial-golden"\n', ["bad.toml", "mri.spokes", "missing"]),
    ]
    _harness.must_succeed(EXE, ["simulate", "--phantom", "ph.h5", "--modality", "mri", "--coils", "2", "--out",
                                "full.h5"], tmp, check)
    cases.append(("Cartesian measurement with trajectories only", 'trajectory = "radial"\nspokes = 8\n',
                  ["bad.toml", "measurement[0].file", "full.h5", "trajectories only"]))
    for name, body, words in cases:
        with open(os.path.join(tmp, "bad.toml"), "w") as f:
            f.write((head if "measurement" not in name else head.replace("[mri]", '[[measurement]]\nfile = "full.h5"\n[mri]'))
                    + body + tail)
        _harness.bad_input_case(name, lambda: run(["study", "--config", "bad.toml", "--out", "o"], tmp), words, tmp,
                                check.failures, one_line=True)


def main():
    with tempfile.TemporaryDirectory(prefix="recofold_study_traj_") as tmp:
        make_measurement(tmp)
        study(tmp)
        bad_inputs(tmp)
    return check.summary()


if __name__ == "__main__":
    sys.exit(main())
