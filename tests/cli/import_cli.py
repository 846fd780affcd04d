#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# `recofold import` end to end: a small raw file (written with libismrmrd by
# tests/tools/io_ismrmrd_tool) with noise scans, navigators, three slices and
# readout oversampling; the summary lines and the file it writes; and bad
# input (no header, inconsistent encoding limits, zero acquisitions, mixed
# coil counts, a slice out of range, non-Cartesian data, bad flags): exit 2,
# a message naming the problem, no output left. Plus `convert` to ISMRMRD.
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import _harness  # noqa: E402  (shared bad-input rule)

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
BIN = os.environ.get("RECOFOLD_BINARY_DIR", ".")
TOOL = os.path.join(BIN, "tests", "io_ismrmrd_tool")
failures = []


def run(args, cwd):
    return subprocess.run([EXE] + args, capture_output=True, text=True, cwd=cwd)


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def make(kind, path):
    out = subprocess.run([TOOL, kind, path], capture_output=True, text=True)
    if out.returncode != 0:
        raise SystemExit(f"io_ismrmrd_tool {kind} failed: {out.stderr}")


def bad_case(name, args, must_mention, workdir):
    return _harness.bad_input_case(name, lambda: run(["--quiet"] + args, workdir), must_mention, workdir, failures,
                                   one_line=True)


def good_import(tmp):
    make("good", os.path.join(tmp, "raw.h5"))
    out = run(["import", "raw.h5", "--out", "meas.h5", "--slice", "1", "--maps", "lowres"], tmp)
    check(out.returncode == 0, f"import exits 0 ({out.stderr.strip()})")
    lines = out.stdout.splitlines()
    check(any("4 coils, 16 x 16 (readout oversampling 2 removed)" in ln for ln in lines),
          "summary states coils, grid and the removed oversampling")
    check(any("pre-whitened" in ln for ln in lines), "summary says the noise scans whitened the channels")
    check(any("navigator 6" in ln and "other slice 32" in ln for ln in lines),
          "summary counts the skipped navigator lines and other slices")
    with h5py.File(os.path.join(tmp, "meas.h5"), "r") as f:
        check(f.attrs["research_use_only"] == 1, "measurement carries research_use_only = 1")
        check(f["mri/kspace"].shape == (4, 16, 16), "k-space is [coils, ny, nx] without oversampling")
        check(f["mri/mask"][()].all(), "every line is marked sampled")
        check(f["mri"].attrs["coil_maps_source"] == "estimated", "coil maps source recorded")
        p = f["provenance"].attrs
        check(p["source"] == "raw.h5" and len(p["source_checksum_fnv1a64"]) == 16, "provenance names the source and its checksum")
        check("slice 1" in p["selection"], "provenance states the selection")
        check(p["raw.system_vendor"] == "test vendor", "provenance keeps the raw header's system information")
        check("<ismrmrdHeader" in p["raw.xml_header"], "provenance keeps the XML header")
        spacing = f.attrs["pixel_spacing_mm"]
        check(np.allclose(spacing, [2.0, 2.0]), f"pixel spacing from the field of view ({spacing})")
    out = run(["import", "raw.h5", "--out", "meas2.h5", "--slice", "2"], tmp)
    check(out.returncode == 0 and "ESPIRiT" in out.stdout, "ESPIRiT is the default map estimate")

    # Export back to ISMRMRD.
    out = run(["convert", "meas.h5", "again.ismrmrd.h5"], tmp)
    check(out.returncode == 0 and "ISMRMRD raw data" in out.stdout, "convert writes ISMRMRD raw data")
    out = run(["import", "again.ismrmrd.h5", "--out", "again.h5", "--maps", "lowres"], tmp)
    check(out.returncode == 0, "the exported file imports again")
    with h5py.File(os.path.join(tmp, "meas.h5"), "r") as a, h5py.File(os.path.join(tmp, "again.h5"), "r") as b:
        check(np.array_equal(a["mri/kspace"][()], b["mri/kspace"][()]), "round trip keeps the k-space")


def bad_inputs(tmp):
    for kind in ["noheader", "empty", "badlimits", "mixedcoils", "radial"]:
        make(kind, os.path.join(tmp, kind + ".h5"))
    with open(os.path.join(tmp, "text.h5"), "w") as f:
        f.write("not hdf5\n")
    bad_case("no header", ["import", "noheader.h5", "--out", "o.h5"], ["noheader.h5", "no ISMRMRD header"], tmp)
    bad_case("zero acquisitions", ["import", "empty.h5", "--out", "o.h5"], ["empty.h5", "no acquisitions"], tmp)
    bad_case("inconsistent limits", ["import", "badlimits.h5", "--out", "o.h5"],
             ["badlimits.h5", "inconsistent encoding limits"], tmp)
    bad_case("mixed coils", ["import", "mixedcoils.h5", "--out", "o.h5"], ["mixedcoils.h5", "mixed coil counts"], tmp)
    bad_case("non-Cartesian", ["import", "radial.h5", "--out", "o.h5"], ["radial.h5", "non-Cartesian", "radial"], tmp)
    bad_case("slice out of range", ["import", "raw.h5", "--out", "o.h5", "--slice", "5"],
             ["raw.h5", "--slice", "out of range", "0..2"], tmp)
    bad_case("average out of range", ["import", "raw.h5", "--out", "o.h5", "--average", "3"],
             ["--average", "out of range"], tmp)
    bad_case("average not a number", ["import", "raw.h5", "--out", "o.h5", "--average", "all"],
             ["--average", "'all'"], tmp)
    bad_case("maps file missing", ["import", "raw.h5", "--out", "o.h5", "--maps", "file"], ["--maps", "--maps-file"], tmp)
    bad_case("unknown maps", ["import", "raw.h5", "--out", "o.h5", "--maps", "guess"], ["--maps", "guess"], tmp)
    bad_case("missing raw", ["import", "nothing.h5", "--out", "o.h5"], ["nothing.h5", "not found"], tmp)
    bad_case("not HDF5", ["import", "text.h5", "--out", "o.h5"], ["text.h5"], tmp)
    bad_case("bad output extension", ["import", "raw.h5", "--out", "o.nii"], ["--out", ".nii"], tmp)
    bad_case("bad espirit option", ["import", "raw.h5", "--out", "o.h5", "--espirit-crop", "1.5"],
             ["--espirit-crop", "espirit.crop_threshold"], tmp)
    # A point mask cannot become Cartesian readout lines.
    run(["--quiet", "phantom", "--table", os.path.join(os.environ.get("RECOFOLD_SOURCE_DIR", "../.."), "phantoms",
                                                       "shepp-logan-modified.toml"), "--size", "32", "--out", "ph.h5"], tmp)
    run(["--quiet", "mask", "--pattern", "points-vd", "--size", "32", "--accel", "3", "--out", "pm.h5"], tmp)
    out = run(["--quiet", "simulate", "--phantom", "ph.h5", "--modality", "mri", "--mask", "pm.h5", "--coils", "2",
               "--out", "pts.h5"], tmp)
    check(out.returncode == 0, "a point-mask measurement simulates")
    bad_case("point mask export", ["convert", "pts.h5", "pts.ismrmrd.h5"], ["/mri/mask", "whole readout lines"], tmp)


def main():
    with tempfile.TemporaryDirectory(prefix="recofold_import_") as tmp:
        good_import(tmp)
        bad_inputs(tmp)
        out = run(["--help"], tmp)
        check("import" in out.stdout, "recofold --help lists import")
    print(f"{len(failures)} failed" if failures else "all checks passed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
