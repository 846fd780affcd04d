#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# End-to-end MRI path through the real executable (the newcomer's four
# commands): phantom -> mask (JSON report + PNG) -> simulate 8 coils with
# noise -> zero-filled recon -> score; plus spec files, coil-combination
# variants, and bad input (exit 2, a message naming the problem, no output left).
import json
import math
import os
import shutil
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


def run(args, cwd):
    return subprocess.run([EXE, "--quiet"] + args, capture_output=True, text=True, cwd=cwd)


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def must_succeed(args, cwd):
    out = run(args, cwd)
    check(out.returncode == 0, " ".join(args[:1]) + f" exits 0 (got {out.returncode}: {out.stderr.strip()})")
    return out


def bad_case(name, args, must_mention, workdir):
    return _harness.bad_input_case(name, lambda: run(args, workdir), must_mention, workdir, failures)


def newcomer_flow(tmp):
    table = os.path.join(SRC, "phantoms", "shepp-logan-modified.toml")
    must_succeed(["phantom", "--table", table, "--size", "64", "--out", "ph.h5"], tmp)
    out = must_succeed(["mask", "--pattern", "lines-vd", "--size", "64", "--accel", "4", "--center", "0.1",
                        "--seed", "1", "--out", "m4.h5", "--report", "m4.json", "--png", "m4.png"], tmp)
    check("R 4.000" in out.stdout, "mask prints the achieved R")
    rep = json.load(open(os.path.join(tmp, "m4.json")))
    check(abs(rep["achieved_acceleration"] - 4.0) < 0.04, "report: achieved R within 1% of 4")
    a = rep["analysis"]
    for key in ["samples", "calibration", "psf_sidelobe_ratio", "tpsf_sidelobe_ratio", "psf_peak"]:
        check(key in a, f"report has analysis.{key}")
    check(a["calibration"]["rows"] >= 6, "report: calibration rows found")
    check(0 < a["psf_sidelobe_ratio"] < 1, "report: PSF side-lobe ratio in (0, 1)")
    # The summary line gives both side-lobes in dB of their peak, one decimal.
    for name, ratio in (("PSF", a["psf_sidelobe_ratio"]), ("TPSF", a["tpsf_sidelobe_ratio"])):
        check(f"{name} side-lobe {20 * math.log10(ratio):.1f} dB" in out.stdout, f"mask prints the {name} side-lobe in dB")
    with open(os.path.join(tmp, "m4.png"), "rb") as f:
        check(f.read(8) == b"\x89PNG\r\n\x1a\n", "mask picture is a PNG")
    with h5py.File(os.path.join(tmp, "m4.h5"), "r") as f:
        check(f["mask"].shape == (64, 64) and f["mask"].dtype == np.uint8, "mask file: /mask uint8 [64, 64]")
        check(f["mask"].attrs["pattern"] in ("lines-vd", b"lines-vd"), "mask file: pattern attribute")

    must_succeed(["simulate", "--phantom", "ph.h5", "--modality", "mri", "--mask", "m4.h5", "--coils", "8",
                  "--noise", "0.003", "--seed", "2", "--out", "meas.h5"], tmp)
    with h5py.File(os.path.join(tmp, "meas.h5"), "r") as f:
        k = f["mri/kspace"][()]
        m = f["mri/mask"][()]
        check(k.shape == (8, 64, 64), "measurement: /mri/kspace [8, 64, 64]")
        check(f["mri/coil_maps"].shape == (8, 64, 64), "measurement: /mri/coil_maps [8, 64, 64]")
        check(abs(f["mri"].attrs["noise_sigma"] - 0.003) < 1e-12, "measurement: noise_sigma = 0.003")
        check(np.all(k[:, m == 0] == 0), "measurement: unsampled k-space is zero")
        check("truth" in f and f["truth/image"].shape == (64, 64), "measurement: /truth/image")
        check("provenance" in f, "measurement: /provenance")
        maps = f["mri/coil_maps"][()]
        check(np.allclose(np.sum(np.abs(maps) ** 2, axis=0), 1.0, atol=1e-4), "coil maps: sum |S|^2 = 1")

    must_succeed(["simulate", "--phantom", "ph.h5", "--modality", "mri", "--mask", "m4.h5", "--coils", "8",
                  "--noise", "0.003", "--seed", "2", "--out", "again.h5"], tmp)
    with h5py.File(os.path.join(tmp, "meas.h5"), "r") as f, h5py.File(os.path.join(tmp, "again.h5"), "r") as g:
        check(np.array_equal(f["mri/kspace"][()], g["mri/kspace"][()]), "same seed, same k-space bytes")
    os.remove(os.path.join(tmp, "again.h5"))

    must_succeed(["recon", "--meas", "meas.h5", "--method", "zero-filled", "--out", "zf.h5", "--png", "zf.png"], tmp)
    out = must_succeed(["score", "--reference", "ph.h5", "--image", "zf.h5", "--json"], tmp)
    s = json.loads(out.stdout)
    print(f"     zero-filled sos at 64^2, R 4, 8 coils: PSNR {s['psnr']:.2f} dB, SSIM {s['ssim']:.3f}")
    check(s["psnr"] > 15, "zero-filled PSNR above 15 dB")
    for combine in [["--combine", "sense"], ["--combine", "sense", "--maps", "estimated"],
                    ["--combine", "sense", "--maps", "espirit"], ["--method", "cg", "--maps", "lowres"]]:
        method = [] if "--method" in combine else ["--method", "zero-filled"]
        must_succeed(["recon", "--meas", "meas.h5", "--out", "zs.h5"] + method + combine, tmp)
        out = must_succeed(["score", "--reference", "ph.h5", "--image", "zs.h5", "--json"], tmp)
        check(json.loads(out.stdout)["psnr"] > 15, " ".join(method + combine) + " PSNR above 15 dB")

    # ESPIRiT options as flags: they reach the estimate (its summary names the kernel) and change the maps;
    # out of range or without --maps espirit -> exit 2 naming the flag.
    must_succeed(["recon", "--meas", "meas.h5", "--method", "zero-filled", "--maps", "espirit", "--espirit-kernel",
                  "4", "--espirit-calib", "16", "--espirit-threshold", "0.05", "--espirit-crop", "0.8",
                  "--out", "e4.h5"], tmp)
    must_succeed(["recon", "--meas", "meas.h5", "--method", "zero-filled", "--maps", "espirit", "--out", "e6.h5"], tmp)
    with h5py.File(os.path.join(tmp, "e4.h5"), "r") as f4, h5py.File(os.path.join(tmp, "e6.h5"), "r") as f6:
        s4 = f4["/image"].attrs["coil_maps_estimate"]
        s6 = f6["/image"].attrs["coil_maps_estimate"]
        s4, s6 = (x.decode() if isinstance(x, bytes) else x for x in (s4, s6))
        check("4x4 kernel" in s4 and "6x6 kernel" in s6, f"ESPIRiT flags reach the estimate: '{s4}' / '{s6}'")
        check(not np.array_equal(f4["/image"][()], f6["/image"][()]), "other ESPIRiT options give another image")
    out = must_succeed(["score", "--reference", "ph.h5", "--image", "e4.h5", "--json"], tmp)
    check(json.loads(out.stdout)["psnr"] > 15, "ESPIRiT 4x4 kernel, 16 calibration: PSNR above 15 dB")
    for args, flag in ((["--maps", "espirit", "--espirit-kernel", "1"], "--espirit-kernel"),
                       (["--maps", "espirit", "--espirit-kernel", "8", "--espirit-calib", "6"], "--espirit-calib"),
                       (["--maps", "espirit", "--espirit-crop", "1.5"], "--espirit-crop"),
                       (["--maps", "lowres", "--espirit-threshold", "0.1"], "--espirit-threshold")):
        out = run(["recon", "--meas", "meas.h5", "--method", "zero-filled", "--out", "bad.h5"] + args, tmp)
        check(out.returncode == 2 and flag in out.stderr and not os.path.exists(os.path.join(tmp, "bad.h5")),
              f"{' '.join(args)}: exit 2 naming {flag} (got {out.returncode}: {out.stderr.strip()})")

    # Fully sampled, noiseless, single coil: the zero-filled image is the object.
    must_succeed(["simulate", "--phantom", "ph.h5", "--modality", "mri", "--out", "full.h5"], tmp)
    must_succeed(["recon", "--meas", "full.h5", "--method", "zero-filled", "--combine", "sense", "--out", "f.h5"], tmp)
    out = must_succeed(["score", "--reference", "ph.h5", "--image", "f.h5", "--json"], tmp)
    check(json.loads(out.stdout)["psnr"] > 20, "fully sampled exact k-space reconstructs (PSNR > 20 dB, Gibbs aside)")


def spec_files(tmp):
    for spec in ["lines-4x-256", "lines-8x-256", "lines-uniform-4x-256", "poisson-6x-256", "radial-golden-32"]:
        path = os.path.join(SRC, "sampling-masks", spec + ".toml")
        out = run(["mask", "--spec", path, "--out", spec + ".h5"], tmp)
        check(out.returncode == 0, f"mask --spec {spec} exits 0 ({out.stderr.strip()})")
    with h5py.File(os.path.join(tmp, "radial-golden-32.h5"), "r") as f:
        check(f["spoke_angles_rad"].shape == (32,), "golden-angle mask file stores 32 spoke angles")
    # simulate --mask SPEC.toml: the spec drawn on the phantom's 64x64 grid equals
    # `mask --spec` with the size replaced (same seed, same pattern).
    spec = os.path.join(SRC, "sampling-masks", "lines-4x-256.toml")
    must_succeed(["simulate", "--phantom", "ph.h5", "--modality", "mri", "--mask", spec, "--out", "sp.h5"], tmp)
    text = open(spec).read()
    import re
    text64 = re.sub(r"(?m)^size\s*=.*$", "size = 64", text)
    with open(os.path.join(tmp, "spec64.toml"), "w") as f:
        f.write(text64)
    must_succeed(["mask", "--spec", "spec64.toml", "--out", "spec64.h5"], tmp)
    with h5py.File(os.path.join(tmp, "sp.h5"), "r") as a, h5py.File(os.path.join(tmp, "spec64.h5"), "r") as b:
        check(np.array_equal(a["mri/mask"][()], b["mask"][()]),
              "simulate --mask SPEC.toml samples what mask --spec draws on the same grid")


def mask_from_png(tmp):
    # A pattern made elsewhere, as an 8-bit PNG (255 = sampled); written with
    # scikit-image's imsave.
    from skimage import io as skio
    m = np.zeros((64, 64), np.uint8)
    m[::2, :] = 255
    m[28:36, :] = 255
    skio.imsave(os.path.join(tmp, "ext.png"), m, check_contrast=False)
    out = must_succeed(["mask", "--from", "ext.png", "--out", "ext.h5", "--report", "ext.json"], tmp)
    rep = json.load(open(os.path.join(tmp, "ext.json")))
    check(rep["pattern"] == "file" and rep["analysis"]["samples"] == int(np.count_nonzero(m)),
          "mask --from PNG keeps every sampled point")
    must_succeed(["simulate", "--phantom", "ph.h5", "--modality", "mri", "--mask", "ext.png", "--out", "pm.h5"], tmp)
    with h5py.File(os.path.join(tmp, "pm.h5"), "r") as f:
        check(np.array_equal(f["mri/mask"][()], (m > 0).astype(np.uint8)), "simulate --mask PNG uses the PNG's pattern")


def bad_inputs(tmp):
    work = os.path.join(tmp, "bad")
    os.mkdir(work)
    for name in ["ph.h5", "meas.h5", "m4.h5"]:
        shutil.copy(os.path.join(tmp, name), work)
    run(["mask", "--pattern", "lines-uniform", "--size", "32", "--accel", "2", "--out", "m32.h5"], work)
    with h5py.File(os.path.join(work, "sparse.h5"), "w") as f:
        m = np.zeros((64, 64), np.uint8)
        m[32, 32] = 1
        f["mask"] = m
    shutil.copy(os.path.join(work, "meas.h5"), os.path.join(work, "nan.h5"))
    with h5py.File(os.path.join(work, "nan.h5"), "r+") as f:
        k = f["mri/kspace"][()]
        k[0, 32, 32] = np.nan
        del f["mri/kspace"]
        f["mri/kspace"] = k
    sim = ["simulate", "--phantom", "ph.h5", "--modality", "mri", "--out", "o.h5"]
    bad_case("mask shape differs from image", sim + ["--mask", "m32.h5"], ["--mask", "[32, 32]"], work)
    bad_case("mask R above 64", sim + ["--mask", "sparse.h5"], ["--mask", "64"], work)
    bad_case("R below 1", ["mask", "--pattern", "lines-vd", "--accel", "0.5", "--out", "x.h5"], ["--accel"], work)
    bad_case("R above 64", ["mask", "--pattern", "points-vd", "--accel", "65", "--out", "x.h5"], ["--accel"], work)
    bad_case("unknown pattern", ["mask", "--pattern", "spiral", "--out", "x.h5"], ["--pattern", "poisson-disc"], work)
    bad_case("zero coils", sim + ["--coils", "0"], ["--coils"], work)
    bad_case("negative sigma", sim + ["--noise", "-0.1"], ["--noise"], work)
    bad_case("CT flag with MRI", sim + ["--views", "60"], ["--views"], work)
    bad_case("NaN in k-space", ["recon", "--meas", "nan.h5", "--method", "zero-filled", "--out", "r.h5"],
             ["nan.h5", "/mri/kspace"], work)
    bad_case("unknown method", ["recon", "--meas", "meas.h5", "--method", "magic", "--out", "r.h5"],
             ["--method", "zero-filled"], work)
    bad_case("fbp on MRI data", ["recon", "--meas", "meas.h5", "--method", "fbp", "--out", "r.h5"],
             ["meas.h5", "ct"], work)
    bad_case("bad combine", ["recon", "--meas", "meas.h5", "--method", "zero-filled", "--combine", "max",
                             "--out", "r.h5"], ["--combine"], work)


def pictures(tmp):
    """convert --dataset: k-space in dB and coil maps as a montage, checked against numpy."""
    with h5py.File(os.path.join(tmp, "meas.h5"), "r") as f:
        k = f["mri/kspace"][()]
        maps = f["mri/coil_maps"][()]
    must_succeed(["convert", "meas.h5", "kdb.h5", "--dataset", "/mri/kspace", "--log", "--log-floor", "-60",
                  "--index", "3"], tmp)
    with h5py.File(os.path.join(tmp, "kdb.h5"), "r") as f:
        got = f["image"][()]
    a = np.abs(k[3])
    with np.errstate(divide="ignore"):
        want = np.maximum(20 * np.log10(a / a.max()), -60.0)
    check(got.shape == (64, 64) and np.allclose(got, want, atol=1e-3), "--log: 20 log10(|k|/max), floor -60 dB")
    must_succeed(["convert", "meas.h5", "maps.h5", "--dataset", "mri/coil_maps", "--montage"], tmp)
    with h5py.File(os.path.join(tmp, "maps.h5"), "r") as f:
        got = f["image"][()]
    check(got.shape == (3 * 64 + 2 * 2, 3 * 64 + 2 * 2), "--montage of 8 coils: 3 x 3 tiles with 2-pixel gaps")
    check(np.allclose(got[66:130, 132:196], np.abs(maps[5]), atol=1e-6) and np.all(got[132:, 132:] == got.min()),
          "tile 5 holds coil 5's magnitude; the unused tile is the background")
    must_succeed(["convert", "meas.h5", "k.png", "--dataset", "/mri/kspace", "--log", "--montage"], tmp)
    bad_case("--dataset that does not exist", ["convert", "meas.h5", "x.png", "--dataset", "/nope"],
             ["/nope", "no such dataset"], tmp)
    bad_case("--montage of one image", ["convert", "meas.h5", "x.png", "--dataset", "/mri/mask", "--montage"],
             ["--montage", "stack"], tmp)
    bad_case("--log-floor without --log", ["convert", "meas.h5", "x.png", "--dataset", "/mri/mask", "--log-floor",
                                           "-40"], ["--log-floor"], tmp)


def main():
    with tempfile.TemporaryDirectory() as tmp:
        newcomer_flow(tmp)
        pictures(tmp)
        spec_files(tmp)
        mask_from_png(tmp)
        bad_inputs(tmp)
    if failures:
        print(f"{len(failures)} failure(s)")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
