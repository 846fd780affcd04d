#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# End-to-end `recofold trajectory`: radial, golden-angle, tiny golden angle and
# spiral designs with report and picture, the trajectory file read back with
# h5py (schema of include/recofold/io/trajectory_file.h), user points from an
# HDF5 file and from text, and bad input (exit 2, a message naming the file,
# dataset or flag, no output left).
import json
import math
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import _harness  # noqa: E402  (shared bad-input rule)

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
failures = []


def run(args, cwd):
    return subprocess.run([EXE, "--quiet"] + args, capture_output=True, text=True, cwd=cwd)


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def must_succeed(args, cwd):
    out = run(args, cwd)
    check(out.returncode == 0, " ".join(args[:3]) + f" exits 0 (got {out.returncode}: {out.stderr.strip()})")
    return out


def bad_case(name, args, must_mention, workdir):
    return _harness.bad_input_case(name, lambda: run(args, workdir), must_mention, workdir, failures, one_line=True)


def designs(tmp):
    out = must_succeed(["trajectory", "--kind", "radial-golden", "--size", "64", "--spokes", "24", "--readout", "128",
                        "--out", "rg.h5", "--report", "rg.json", "--png", "rg.png"], tmp)
    check("24 readouts x 128 samples" in out.stdout, "summary line names readouts and samples")
    rep = json.load(open(os.path.join(tmp, "rg.json")))
    check(rep["research_use_only"] is True and rep["kind"] == "radial-golden", "report: kind and research-use mark")
    check(abs(rep["design"]["angle_step_deg"] - 111.246) < 1e-3, "report: golden-angle step 111.246 deg")
    a = rep["analysis"]
    for key in ["psf_sidelobe_ratio", "psf_sidelobe_db", "main_lobe_radius_px", "psf_fwhm_px", "density_profile",
                "cartesian_acceleration", "dcf_area"]:
        check(key in a, f"report has analysis.{key}")
    check(0 < a["psf_sidelobe_ratio"] < 1, "PSF side-lobe ratio in (0, 1)")
    check(abs(a["cartesian_acceleration"] - 64 * 64 / (24 * 128)) < 1e-6, "Cartesian-equivalent R = N^2 / M")
    prof = a["density_profile"]
    check(prof["samples_per_cell"][0] > prof["samples_per_cell"][-1] * 5, "radial density falls with radius")
    with open(os.path.join(tmp, "rg.png"), "rb") as f:
        check(f.read(8) == b"\x89PNG\r\n\x1a\n", "picture is a PNG")
    with h5py.File(os.path.join(tmp, "rg.h5"), "r") as f:
        check(f.attrs["research_use_only"] == 1, "file carries research_use_only = 1")
        k = f["trajectory/k"][...]
        check(k.dtype == np.float32 and k.shape == (24 * 128, 2), "/trajectory/k is float32 [M, 2]")
        check(f["trajectory/dcf"].shape == (24 * 128,), "/trajectory/dcf is [M]")
        g = f["trajectory"]
        check(g.attrs["kind"] in (b"radial-golden", "radial-golden"), "kind attribute")
        check(list(g.attrs["image_shape"]) == [64, 64], "image_shape attribute")
        ang = f["trajectory/readout_angles_rad"][...]
        check(abs(math.degrees((ang[1] - ang[0]) % (2 * math.pi)) - 111.246) < 1e-3, "spoke angles step by 111.246 deg")
        check(np.max(np.abs(k)) <= 32.0, "points inside +-N/2 (0.5 cycles per pixel)")
        # ramp weights of spoke 0: |r| dr dtheta, largest at the ends
        w = f["trajectory/dcf"][:128]
        check(w[0] > 10 * w[70], "ramp weights grow with radius")

    must_succeed(["trajectory", "--kind", "radial-golden", "--tiny-golden", "5", "--size", "48", "--spokes", "8",
                  "--out", "tg.h5", "--report", "tg.json"], tmp)
    rep = json.load(open(os.path.join(tmp, "tg.json")))
    check(abs(rep["design"]["angle_step_deg"] - 180 / ((1 + 5 ** 0.5) / 2 + 4)) < 1e-6, "tiny golden angle (N = 5)")

    out = must_succeed(["trajectory", "--kind", "spiral", "--size", "96", "--interleaves", "6", "--fov-mm", "200",
                        "--gmax", "35", "--smax", "140", "--vd-edge", "2", "--out", "sp.h5", "--report", "sp.json",
                        "--png", "sp.png"], tmp)
    check("peak" in out.stdout and "mT/m" in out.stdout, "spiral summary states its peak gradient and slew")
    with h5py.File(os.path.join(tmp, "sp.h5"), "r") as f:
        gw = f["trajectory/gradient_mT_per_m"][...].astype(np.float64)
        raster = f["trajectory"].attrs["raster_us"] * 1e-6
        slew = np.hypot(*np.diff(np.vstack([[0, 0], gw]), axis=0).T) * 1e-3 / raster
        check(np.max(np.hypot(gw[:, 0], gw[:, 1])) <= 35 * (1 + 1e-5), "spiral gradient within 35 mT/m (from the file)")
        check(np.max(slew) <= 140 * (1 + 1e-5), "spiral slew within 140 T/m/s (finite differences of the file)")
        k = f["trajectory/k"][...]
        check(np.max(np.hypot(k[:, 0], k[:, 1])) > 47.5, "spiral reaches k-max = 48")
        check(f["trajectory"].attrs["dcf_method"] in (b"pipe-menon", "pipe-menon"), "spiral weights by Pipe-Menon")


def user_points(tmp):
    rng = np.random.default_rng(3)
    k = rng.uniform(-16, 16, (500, 2)).astype(np.float32)
    with h5py.File(os.path.join(tmp, "user.h5"), "w") as f:
        f["trajectory/k"] = k
    must_succeed(["trajectory", "--from", "user.h5", "--size", "32", "--out", "u.h5", "--report", "u.json"], tmp)
    with h5py.File(os.path.join(tmp, "u.h5"), "r") as f:
        check(f["trajectory/dcf"].shape == (500,), "user trajectory gets Pipe-Menon weights")
        check(np.array_equal(f["trajectory/k"][...], k), "user points kept as given")
    np.savetxt(os.path.join(tmp, "pts.txt"), np.column_stack([k, np.ones(500)]), header="kx ky dcf")
    must_succeed(["trajectory", "--from", "pts.txt", "--size", "32", "--out", "t.h5"], tmp)
    with h5py.File(os.path.join(tmp, "t.h5"), "r") as f:
        check(np.allclose(f["trajectory/dcf"][...], 1.0), "text weights kept")

    # Bad user files.
    bad = k.copy()
    bad[7] = [16.5, 0.0]
    with h5py.File(os.path.join(tmp, "outside.h5"), "w") as f:
        f["trajectory/k"] = bad
    bad_case("point outside +-0.5 cycles/pixel", ["trajectory", "--from", "outside.h5", "--size", "32", "--out", "x.h5"],
             ["outside.h5", "/trajectory/k", "point 7", "0.5 cycles per pixel"], tmp)
    bad[7] = [np.nan, 0.0]
    with h5py.File(os.path.join(tmp, "nan.h5"), "w") as f:
        f["trajectory/k"] = bad
    bad_case("NaN coordinate", ["trajectory", "--from", "nan.h5", "--size", "32", "--out", "x.h5"],
             ["nan.h5", "/trajectory/k", "non-finite"], tmp)
    with h5py.File(os.path.join(tmp, "dcf.h5"), "w") as f:
        f["trajectory/k"] = k
        f["trajectory/dcf"] = np.ones(499, np.float32)
    bad_case("DCF of another length", ["trajectory", "--from", "dcf.h5", "--size", "32", "--out", "x.h5"],
             ["dcf.h5", "/trajectory/dcf", "[500]"], tmp)
    with h5py.File(os.path.join(tmp, "shape.h5"), "w") as f:
        f["trajectory/k"] = np.zeros((10, 3), np.float32)
    bad_case("k of shape [M, 3]", ["trajectory", "--from", "shape.h5", "--size", "32", "--out", "x.h5"],
             ["shape.h5", "/trajectory/k", "[M, 2]"], tmp)
    with open(os.path.join(tmp, "bad.txt"), "w") as f:
        f.write("1 2\n3 four\n")
    bad_case("text point that is not a number", ["trajectory", "--from", "bad.txt", "--size", "32", "--out", "x.h5"],
             ["bad.txt", "line 2", "four"], tmp)
    bad_case("missing size for a user file without image_shape", ["trajectory", "--from", "user.h5", "--out", "x.h5"],
             ["user.h5", "image_shape"], tmp)


def bad_flags(tmp):
    bad_case("unknown kind", ["trajectory", "--kind", "rosette", "--out", "x.h5"], ["--kind", "rosette", "radial"], tmp)
    bad_case("spokes out of range", ["trajectory", "--kind", "radial", "--size", "32", "--spokes", "-3", "--out", "x.h5"],
             ["--spokes", "-3"], tmp)
    bad_case("slew limit <= 0", ["trajectory", "--kind", "spiral", "--size", "32", "--smax", "0", "--out", "x.h5"],
             ["--smax"], tmp)
    bad_case("spiral flag on radial", ["trajectory", "--kind", "radial", "--gmax", "30", "--out", "x.h5"],
             ["--interleaves", "spiral"], tmp)
    bad_case("ramp weights on a spiral", ["trajectory", "--kind", "spiral", "--size", "32", "--dcf", "ramp", "--out", "x.h5"],
             ["--dcf", "radial"], tmp)
    bad_case("wrong output extension", ["trajectory", "--kind", "radial", "--out", "x.png"], ["--out", ".h5"], tmp)
    bad_case("both --kind and --from", ["trajectory", "--kind", "radial", "--from", "a.h5", "--out", "x.h5"],
             ["--kind", "--from"], tmp)


def main():
    with tempfile.TemporaryDirectory() as tmp:
        designs(tmp)
        user_points(tmp)
        bad_flags(tmp)
    if failures:
        print(f"{len(failures)} FAILED:\n  " + "\n  ".join(failures))
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
