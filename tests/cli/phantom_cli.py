#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# `recofold phantom` end to end: tables and families to .h5 and other formats,
# reproducibility of families, and bad input (exit 2, message naming the file,
# line, key or flag, no output left behind).
#
# Reproducibility: HDF5 files carry a creation time in /provenance and HDF5's
# own object timestamps, so for .h5 outputs the /image and
# /phantom/components datasets are compared byte for byte; .mha outputs (no
# timestamps) are compared as whole files.
import filecmp
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
TABLES = os.path.join(SRC, "phantoms")
failures = []


def check(ok, what):
    print(("ok    " if ok else "FAIL  ") + what)
    if not ok:
        failures.append(what)


def run(args, cwd):
    return subprocess.run([EXE, "--quiet", "phantom"] + args, capture_output=True, text=True, cwd=cwd)


def bad_case(name, args, must_mention, workdir):
    return _harness.bad_input_case(name, lambda: run(args, workdir), must_mention, workdir, failures)


def datasets(path):
    with h5py.File(path, "r") as f:
        return f["image"][()].tobytes(), f["phantom/components"][()].tobytes()


def main():
    with tempfile.TemporaryDirectory() as tmp:
        # Happy path: a table.
        out = run(["--table", os.path.join(TABLES, "shepp-logan-modified.toml"), "--size", "64", "--out", "sl.h5",
                   "--png", "sl.png"], tmp)
        check(out.returncode == 0, f"table to .h5 exits 0 ({out.stderr.strip()})")
        with h5py.File(os.path.join(tmp, "sl.h5"), "r") as f:
            img = f["image"][()]
            comp = f["phantom/components"]
            check(img.shape == (64, 64) and img.dtype == np.float32, "image is float32 [64, 64]")
            check(comp.shape == (10, 9), "component table holds the 10 ellipses x 9 columns")
            check(abs(comp.attrs["fov_mm"] - 256.0) < 1e-12, "component table carries fov_mm")
            check(np.allclose(f["image"].attrs["pixel_spacing_mm"], [4.0, 4.0]), "pixel spacing = fov / size")
            check(abs(img[32, 32] - 0.2) < 1e-6, "centre pixel is the brain value 1 - 0.8 = 0.2")
            # The 0.1 ellipse at y = +0.35 must show in the upper half (row 20), not at y = -0.35 (row 43).
            check(img[1, 32] == 0.0 and img[20, 32] > img[43, 32] + 0.05, "row 0 is the top (y up in the table)")
        check(os.path.getsize(os.path.join(tmp, "sl.png")) > 0, "--png writes a quick look")

        out = run(["--table", os.path.join(TABLES, "qc-disk.toml"), "--size", "40", "--size-x", "60", "--fov", "300",
                   "--out", "qc.h5"], tmp)
        check(out.returncode == 0, "--size-x and --fov accepted")
        with h5py.File(os.path.join(tmp, "qc.h5"), "r") as f:
            check(f["image"].shape == (40, 60), "--size-x gives [40, 60]")
            check(np.allclose(f["image"].attrs["pixel_spacing_mm"], [300 / 40, 300 / 60]), "--fov sets the spacing")
            qc = f["image"][...]
        out = run(["--table", os.path.join(TABLES, "qc-disk.toml"), "--size", "40x60", "--fov", "300", "--out", "qc2.h5"],
                  tmp)
        check(out.returncode == 0, "--size NYxNX accepted (the syntax of mask and trajectory)")
        with h5py.File(os.path.join(tmp, "qc2.h5"), "r") as f:
            check(np.array_equal(f["image"][...], qc), "--size 40x60 equals --size 40 --size-x 60")

        for ext in (".nii.gz", ".mha", ".png"):
            out = run(["--table", os.path.join(TABLES, "organ-section.toml"), "--size", "32", "--out", "organ" + ext], tmp)
            check(out.returncode == 0 and os.path.exists(os.path.join(tmp, "organ" + ext)), f"writes {ext}")

        # Families: stack, reproducibility, seeds.
        fam = ["--family", "textured", "--count", "3", "--size", "32"]
        for name, seed in (("a.h5", "5"), ("b.h5", "5"), ("c.h5", "6")):
            out = run(fam + ["--seed", seed, "--out", name], tmp)
            check(out.returncode == 0, f"family run {name} exits 0 ({out.stderr.strip()})")
        with h5py.File(os.path.join(tmp, "a.h5"), "r") as f:
            check(f["image"].shape == (3, 32, 32), "family gives a stack [3, 32, 32]")
            objects = f["phantom/components"][:, 0]
            check(sorted(set(objects.tolist())) == [0.0, 1.0, 2.0], "component table has an object column 0..2")
        a, b, c = (datasets(os.path.join(tmp, n)) for n in ("a.h5", "b.h5", "c.h5"))
        check(a == b, "same seed: /image and /phantom/components byte-identical")
        check(a[0] != c[0] and a[1] != c[1], "different seeds differ")
        for name in ("a.mha", "b.mha"):
            run(fam + ["--seed", "5", "--out", name], tmp)
        check(filecmp.cmp(os.path.join(tmp, "a.mha"), os.path.join(tmp, "b.mha"), shallow=False),
              "same seed: .mha files byte-identical")
        out = run(["--family", "ellipses", "--count", "2", "--size", "24", "--texture", "on", "--components", "4",
                   "--intensity-min", "0.2", "--intensity-max", "0.5", "--out", "e.h5"], tmp)
        check(out.returncode == 0, "family controls accepted")

        # Bad input.
        bad = os.path.join(tmp, "bad")
        os.mkdir(bad)

        def write(name, text):
            with open(os.path.join(bad, name), "w") as fh:
                fh.write(text)

        write("unknown.toml", "name = \"u\"\n[[ellipse]]\nintensity = 1\na = 0.5\nb = 0.5\n[[triangle]]\nintensity = 1\n")
        write("negative.toml", "[[ellipse]]\nintensity = 1\na = 0.5\nb = 0.5\n\n[[blob]]\nintensity = 1\na = -0.1\nb = 0.1\n")
        write("nointensity.toml", "name = \"n\"\n[[ellipse]]\na = 0.5\nb = 0.5\n")
        write("empty.toml", "name = \"empty\"\nfov_mm = 200\n")
        out_h5 = ["--out", "x.h5"]
        sl = os.path.join(TABLES, "shepp-logan.toml")
        bad_case("size 0", ["--table", sl, "--size", "0"] + out_h5, ["--size"], bad)
        bad_case("size too large", ["--table", sl, "--size", "16385"] + out_h5, ["--size", "16384"], bad)
        bad_case("size not a size", ["--table", sl, "--size", "8y8"] + out_h5, ["--size", "NYxNX"], bad)
        bad_case("size NYxNX with size-x", ["--table", sl, "--size", "8x8", "--size-x", "8"] + out_h5, ["--size-x"], bad)
        bad_case("size-x 0", ["--table", sl, "--size", "8", "--size-x", "0"] + out_h5, ["--size-x"], bad)
        bad_case("unknown component type", ["--table", "unknown.toml", "--size", "16"] + out_h5,
                 ["unknown.toml:6", "triangle"], bad)
        bad_case("negative axis", ["--table", "negative.toml", "--size", "16"] + out_h5,
                 ["negative.toml:8", "blob[0].a"], bad)
        bad_case("missing intensity", ["--table", "nointensity.toml", "--size", "16"] + out_h5,
                 ["nointensity.toml:2", "ellipse[0].intensity"], bad)
        bad_case("no components", ["--table", "empty.toml", "--size", "16"] + out_h5,
                 ["empty.toml:1", "no components"], bad)
        bad_case("missing table file", ["--table", "absent.toml", "--size", "16"] + out_h5, ["absent.toml"], bad)
        bad_case("unknown family", ["--family", "spheres", "--size", "16"] + out_h5, ["--family", "spheres"], bad)
        bad_case("count 0", ["--family", "textured", "--count", "0", "--size", "16"] + out_h5, ["--count"], bad)
        bad_case("bad family size range", ["--family", "ellipses", "--size-max", "0.9", "--size", "16"] + out_h5,
                 ["--size-min", "size_max"], bad)
        bad_case("table and family", ["--table", sl, "--family", "textured", "--size", "16"] + out_h5, ["--table"], bad)
        bad_case("family flag with a table", ["--table", sl, "--seed", "3", "--size", "16"] + out_h5, ["--seed"], bad)
        bad_case("unsupported output", ["--table", sl, "--size", "16", "--out", "x.txt"], ["--out", ".txt"], bad)
        bad_case("missing output folder", ["--table", sl, "--size", "16", "--out", "nowhere/x.h5"], ["--out", "nowhere"],
                 bad)
        bad_case("negative fov", ["--table", sl, "--size", "16", "--fov", "-5"] + out_h5, ["--fov"], bad)

    if failures:
        print(f"{len(failures)} check(s) failed", file=sys.stderr)
        sys.exit(1)


if __name__ == "__main__":
    main()
