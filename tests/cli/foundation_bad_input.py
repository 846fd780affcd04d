#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Bad input through the real executable: each case exits 2, prints one short
# message naming the file / dataset / flag / sub-command, and leaves no output
# file (nor temporary file) behind. Commands exercised: convert, score, info.
import concurrent.futures
import os
import shutil
import subprocess
import sys
import tempfile

import h5py
import numpy as np

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
failures = []


def case(name, args, must_mention, src_dir, inputs):
    # Each case runs in its own copy of the inputs, so cases can run side by side
    # (the program's start-up dominates the run time).
    workdir = tempfile.mkdtemp(dir=src_dir, prefix="case-")
    for n in inputs:
        shutil.copy(os.path.join(src_dir, n), workdir)
    out = subprocess.run([EXE] + args, capture_output=True, text=True, cwd=workdir)
    err_lines = [l for l in out.stderr.splitlines() if l.strip()]
    leftovers = sorted(set(os.listdir(workdir)) - set(inputs))
    problems = []
    if out.returncode != 2:
        problems.append(f"exit {out.returncode}, expected 2")
    for word in must_mention:
        if word not in out.stderr:
            problems.append(f"message does not name '{word}'")
    if not 1 <= len(err_lines) <= 2:
        problems.append(f"{len(err_lines)} message lines, expected one")
    if out.stdout.strip():
        problems.append("printed to stdout")
    if leftovers:
        problems.append(f"left files behind: {leftovers}")
    status = "ok  " if not problems else "FAIL"
    return name, status, out.stderr.strip(), problems


def main():
    with tempfile.TemporaryDirectory() as tmp:
        good = np.linspace(0, 1, 16 * 16, dtype=np.float32).reshape(16, 16)
        with h5py.File(os.path.join(tmp, "good.h5"), "w") as f:
            f["image"] = good
        with open(os.path.join(tmp, "text.h5"), "w") as f:
            f.write("this is a text file, not HDF5\n")
        with h5py.File(os.path.join(tmp, "noimage.h5"), "w") as f:
            f["pixels"] = good
        with h5py.File(os.path.join(tmp, "rank1.h5"), "w") as f:
            f["image"] = good.ravel()
        with h5py.File(os.path.join(tmp, "nan.h5"), "w") as f:
            bad = good.copy()
            bad[3, 5] = np.nan
            f["image"] = bad
        with h5py.File(os.path.join(tmp, "strings.h5"), "w") as f:
            f["image"] = np.array([[b"a", b"b"], [b"c", b"d"]], dtype="S1")
        with h5py.File(os.path.join(tmp, "small.h5"), "w") as f:
            f["image"] = good[:8, :12]
        inputs = set(os.listdir(tmp))

        cases = [
            ("convert: missing file", ["convert", "missing.h5", "out.nii.gz"], ["missing.h5", "not found"]),
            ("convert: not an HDF5 file", ["convert", "text.h5", "out.nii.gz"], ["text.h5", "not an HDF5"]),
            ("convert: HDF5 without /image", ["convert", "noimage.h5", "out.png"], ["noimage.h5", "/image"]),
            ("convert: wrong rank", ["convert", "rank1.h5", "out.mha"], ["rank1.h5", "/image", "rank 1"]),
            ("convert: NaN values", ["convert", "nan.h5", "out.h5"], ["nan.h5", "/image", "non-finite"]),
            ("convert: wrong dtype", ["convert", "strings.h5", "out.nrrd"], ["strings.h5", "/image", "string"]),
            ("convert: unknown flag", ["convert", "good.h5", "out.h5", "--bogus"], ["--bogus"]),
            ("convert: unsupported output", ["convert", "good.h5", "out.tiff"], ["out.tiff", ".tiff"]),
            ("convert: missing output folder", ["convert", "good.h5", "nodir/out.h5"], ["nodir"]),
            ("convert: lone --window-lo", ["convert", "good.h5", "out.png", "--window-lo", "0"], ["--window-hi"]),
            ("convert: empty window", ["convert", "good.h5", "out.png", "--window-lo", "1", "--window-hi", "1"],
             ["--window-hi"]),
            ("convert: bad --bits", ["convert", "good.h5", "out.png", "--bits", "12"], ["--bits"]),
            ("convert: --index out of range", ["convert", "good.h5", "out.h5", "--index", "3"], ["--index"]),
            ("score: missing reference", ["score", "--reference", "missing.h5", "--image", "good.h5"],
             ["missing.h5"]),
            ("score: not-HDF5 image", ["score", "--reference", "good.h5", "--image", "text.h5", "--json"],
             ["text.h5", "not an HDF5"]),
            ("score: NaN image", ["score", "--reference", "good.h5", "--image", "nan.h5"], ["nan.h5", "/image"]),
            ("score: shape mismatch", ["score", "--reference", "good.h5", "--image", "small.h5"],
             ["small.h5", "[8, 12]", "[16, 16]"]),
            ("score: missing --image", ["score", "--reference", "good.h5"], ["--image"]),
            ("score: unknown flag", ["score", "--reference", "good.h5", "--image", "good.h5", "--psnr-only"],
             ["--psnr-only"]),
            ("score: negative --data-range", ["score", "--reference", "good.h5", "--image", "good.h5",
                                              "--data-range", "-1"], ["--data-range"]),
            ("info: missing file", ["info", "missing.h5"], ["missing.h5"]),
            ("info: not an HDF5 file", ["info", "text.h5"], ["text.h5", "not an HDF5"]),
            ("unknown sub-command", ["frobnicate", "good.h5"], ["frobnicate"]),
            ("unknown global flag", ["--colour", "info", "good.h5"], ["--colour"]),
        ]
        with concurrent.futures.ThreadPoolExecutor(max_workers=4) as pool:
            results = list(pool.map(lambda c: case(c[0], c[1], c[2], tmp, inputs), cases))
        for name, status, message, problems in results:
            print(f"{status} {name}: {message}")
            for p in problems:
                print(f"       {p}")
                failures.append(f"{name}: {p}")

    if failures:
        print(f"{len(failures)} problem(s)")
        return 1
    print(f"all {len(cases)} bad-input cases exit 2 with a message naming the problem and leave no file")
    return 0


if __name__ == "__main__":
    sys.exit(main())
