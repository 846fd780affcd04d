#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Retrospective undersampling of imported raw data, end to end:
#   ismrmrd_generate_cartesian_shepp_logan (Debian's ismrmrd-tools: an
#   independent 8-coil Cartesian dataset with readout oversampling and noise)
#   -> recofold import (ESPIRiT maps, the default for real data)
#   -> recofold simulate --from full.h5 --mask (mask file or sampling spec .toml)
#   -> recofold recon zero-filled and ADMM-TV with lambda auto.
# Checks: the kept samples equal the fully sampled data and the rest are zero;
# the truth is the fully sampled sensitivity-weighted coil combination, stated
# as kind "fully sampled"; a sampling spec is drawn on the data grid and says
# so; at R = 4 TV with auto lambda beats zero-filled by >= 5 dB PSNR against
# the fully sampled image (issue 17). PSNR here: 20 log10(max|truth| / RMSE)
# of magnitudes (common practice). Bad input: exit 2, one line naming the
# flag or file, nothing written.
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
SRC = os.path.abspath(os.environ.get("RECOFOLD_SOURCE_DIR", os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..")))
N = 96
failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def run(args, cwd):
    return subprocess.run([EXE, "--quiet"] + args, capture_output=True, text=True, cwd=cwd)


def loud(args, cwd):
    return subprocess.run([EXE] + args, capture_output=True, text=True, cwd=cwd)


def cplx(a):
    return a["real"] + 1j * a["imag"] if a.dtype.names else a


def bad_case(name, args, must_mention, workdir):
    return _harness.bad_input_case(name, lambda: run(args, workdir), must_mention, workdir, failures, one_line=True)


def psnr(truth, img):
    t, i = np.abs(truth), np.abs(img)
    return 20 * np.log10(t.max() / np.sqrt(np.mean((t - i) ** 2)))


def image(path):
    with h5py.File(path, "r") as f:
        return cplx(f["image"][()])


def prepare(tmp):
    out = subprocess.run(["ismrmrd_generate_cartesian_shepp_logan", "-o", "raw.h5", "-m", str(N), "-c", "8", "-O", "2",
                          "-n", "0.02"], capture_output=True, text=True, cwd=tmp)
    check(out.returncode == 0, "ismrmrd-tools generate a fully sampled 8-coil dataset")
    out = run(["import", "raw.h5", "--out", "full.h5"], tmp)
    check(out.returncode == 0, f"import exits 0 ({out.stderr.strip()})")
    with h5py.File(os.path.join(tmp, "full.h5"), "r") as f:
        check(f["mri"].attrs["coil_maps_source"] == "espirit", "import estimates ESPIRiT maps by default")
    out = run(["mask", "--pattern", "lines-vd", "--size", str(N), "--accel", "4", "--center", "0.08", "--seed", "1",
               "--out", "m4.h5"], tmp)
    check(out.returncode == 0, "an R = 4 variable-density lines mask")


def undersample(tmp):
    out = loud(["simulate", "--from", "full.h5", "--mask", "m4.h5", "--noise", "0.001", "--seed", "3",
                "--out", "r4.h5"], tmp)
    check(out.returncode == 0, f"simulate --from exits 0 ({out.stderr.strip()})")
    check("truth fully sampled" in out.stdout and "from full.h5" in out.stdout, f"summary: {out.stdout.strip()}")
    with h5py.File(os.path.join(tmp, "full.h5"), "r") as a, h5py.File(os.path.join(tmp, "r4.h5"), "r") as b, \
            h5py.File(os.path.join(tmp, "m4.h5"), "r") as m:
        mask = m["mask"][()].astype(bool)
        full, part = cplx(a["mri/kspace"][()]), cplx(b["mri/kspace"][()])
        maps = cplx(a["mri/coil_maps"][()])
        check(np.array_equal(b["mri/mask"][()].astype(bool), mask), "the new mask is the given one")
        check(np.all(part[:, ~mask] == 0), "samples off the mask are zero")
        added = part[:, mask] - full[:, mask]
        sd = np.sqrt(np.mean(np.abs(added) ** 2) / 2)
        check(abs(sd / 0.001 - 1) < 0.05, f"kept samples = data + the added noise (std {sd:.3g}, asked 0.001)")
        sigma = b["mri"].attrs["noise_sigma"]
        want = np.hypot(a["mri"].attrs["noise_sigma"], 0.001)
        check(abs(sigma - want) < 1e-9 * want, f"noise level {sigma:.4g} = hypot(data's, added) {want:.4g}")
        check(b["truth"].attrs["kind"] == "fully sampled", "truth kind 'fully sampled'")
        truth = cplx(b["truth/image"][()])
        # Independent numpy check of the truth: sensitivity-weighted combination
        # of the centred orthonormal inverse DFT of the fully sampled coils.
        coil = np.fft.fftshift(np.fft.ifft2(np.fft.ifftshift(full, axes=(-2, -1)), norm="ortho"), axes=(-2, -1))
        den = np.sum(np.abs(maps) ** 2, axis=0)
        want_truth = np.where(den > 0, np.sum(np.conj(maps) * coil, axis=0) / np.where(den > 0, den, 1), 0)
        err = np.linalg.norm(truth - want_truth) / np.linalg.norm(want_truth)
        check(err < 1e-5, f"truth = sum conj(S) F^-1 y / sum |S|^2 of the full data (numpy, relative error {err:.1e})")
        p = b["provenance"].attrs
        check(p["from_file"] == "full.h5" and p["from.source"] == "raw.h5", "provenance names the data and the raw file")
        check(b.attrs["research_use_only"] == 1, "the file carries research_use_only = 1")

    # A sampling spec is drawn on the data grid, and says so.
    spec = os.path.join(SRC, "sampling-masks", "lines-4x-256.toml")
    out = loud(["simulate", "--from", "full.h5", "--mask", spec, "--out", "spec4.h5"], tmp)
    check(out.returncode == 0, f"simulate --from with a sampling spec exits 0 ({out.stderr.strip()})")
    check("replaced by the data grid 96x96" in out.stdout, "the summary says the spec's size was replaced")
    with h5py.File(os.path.join(tmp, "spec4.h5"), "r") as f:
        r = f["mri"].attrs["acceleration"]
        check(f["mri/mask"].shape == (N, N) and abs(r - 4) < 0.3, f"spec mask on the data grid, R {r:.3f}")
        check("lines-vd" in f["provenance"].attrs["mask_spec_text"], "provenance keeps the spec text")


def reconstruct(tmp):
    with h5py.File(os.path.join(tmp, "r4.h5"), "r") as f:
        truth = cplx(f["truth/image"][()])
    out = run(["recon", "--meas", "r4.h5", "--method", "zero-filled", "--combine", "sense", "--out", "zf.h5"], tmp)
    check(out.returncode == 0, f"zero-filled recon exits 0 ({out.stderr.strip()})")
    out = run(["recon", "--meas", "r4.h5", "--method", "admm", "--prior", "tv", "--lambda", "auto", "--out", "tv.h5"],
              tmp)
    check(out.returncode == 0, f"ADMM-TV lambda auto exits 0 ({out.stderr.strip()})")
    if out.returncode != 0:
        return
    zf, tv = psnr(truth, image(os.path.join(tmp, "zf.h5"))), psnr(truth, image(os.path.join(tmp, "tv.h5")))
    print(f"R = 4 on the imported dataset, against the fully sampled image: zero-filled {zf:.2f} dB, TV auto {tv:.2f} dB")
    check(tv >= zf + 5.0, f"TV auto {tv:.2f} dB >= zero-filled {zf:.2f} dB + 5 dB")


def bad_inputs(tmp):
    run(["phantom", "--table", os.path.join(SRC, "phantoms", "shepp-logan-modified.toml"), "--size", "32", "--out",
         "ph.h5"], tmp)
    run(["simulate", "--phantom", "ph.h5", "--modality", "ct", "--out", "ct.h5"], tmp)
    run(["mask", "--pattern", "lines-vd", "--size", "32", "--accel", "2", "--out", "m32.h5"], tmp)
    bad_case("simulated flag with --from", ["simulate", "--from", "full.h5", "--mask", "m4.h5", "--coils", "4",
                                            "--out", "o.h5"], ["--coils", "--from"], tmp)
    bad_case("--phantom with --from", ["simulate", "--from", "full.h5", "--phantom", "ph.h5", "--mask", "m4.h5",
                                       "--out", "o.h5"], ["--phantom", "--from"], tmp)
    bad_case("--modality ct with --from", ["simulate", "--from", "full.h5", "--modality", "ct", "--mask", "m4.h5",
                                           "--out", "o.h5"], ["--modality", "'ct'"], tmp)
    bad_case("no mask", ["simulate", "--from", "full.h5", "--out", "o.h5"], ["--mask"], tmp)
    bad_case("missing source", ["simulate", "--from", "none.h5", "--mask", "m4.h5", "--out", "o.h5"],
             ["none.h5", "not found"], tmp)
    bad_case("undersampled source", ["simulate", "--from", "r4.h5", "--mask", "m4.h5", "--out", "o.h5"],
             ["r4.h5", "/mri/mask", "fully sampled"], tmp)
    bad_case("mask of another grid", ["simulate", "--from", "full.h5", "--mask", "m32.h5", "--out", "o.h5"],
             ["m32.h5", "--mask", "[32, 32]", "[96, 96]"], tmp)
    bad_case("CT source", ["simulate", "--from", "ct.h5", "--mask", "m32.h5", "--out", "o.h5"],
             ["ct.h5", "--from", "ct measurement"], tmp)
    bad_case("negative noise", ["simulate", "--from", "full.h5", "--mask", "m4.h5", "--noise", "-1", "--out", "o.h5"],
             ["--noise"], tmp)
    with open(os.path.join(tmp, "bad.toml"), "w") as f:
        f.write('kind = "mri-mask"\npattern = "lines-vd"\naccel = 100.0\n')
    bad_case("bad spec", ["simulate", "--from", "full.h5", "--mask", "bad.toml", "--out", "o.h5"],
             ["bad.toml", "accel"], tmp)
    bad_case("out equals source", ["simulate", "--from", "full.h5", "--mask", "m4.h5", "--out", "full.h5"],
             ["--out"], tmp)
    bad_case("neither --phantom nor --from", ["simulate", "--modality", "mri", "--out", "o.h5"],
             ["--phantom", "--from"], tmp)


def main():
    if not shutil.which("ismrmrd_generate_cartesian_shepp_logan"):
        print("FAIL ismrmrd-tools are not installed (scripts/install-deps.sh installs them)")
        return 1
    with tempfile.TemporaryDirectory(prefix="recofold_retro_") as tmp:
        prepare(tmp)
        undersample(tmp)
        reconstruct(tmp)
        bad_inputs(tmp)
    print(f"{len(failures)} failed" if failures else "all checks passed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
