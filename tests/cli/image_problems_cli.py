#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Denoising and inpainting through the real executable: phantom -> simulate
# (--modality denoise | inpaint, random / blocks / a pixel-mask file) ->
# recon (zero-filled = the observed image; TV with lambda auto) -> score;
# plus bad input (exit 2, one line naming the flag, nothing written).
import json
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
    check(out.returncode == 0, " ".join(args[:2]) + f" exits 0 (got {out.returncode}: {out.stderr.strip()})")
    return out


def psnr(ref, img):
    return 10 * np.log10((ref.max() - ref.min()) ** 2 / np.mean((ref - img) ** 2))


work = tempfile.mkdtemp(prefix="recofold_imgprob_")
try:
    table = os.path.join(SRC, "phantoms", "shepp-logan-modified.toml")
    must_succeed(["phantom", "--table", table, "--size", "64", "--out", "p.h5"], work)
    must_succeed(["simulate", "--phantom", "p.h5", "--modality", "denoise", "--noise", "0.1", "--seed", "3",
                  "--out", "d.h5"], work)
    with h5py.File(os.path.join(work, "d.h5"), "r") as f:
        check(f.attrs["modality"] in (b"denoise", "denoise"), "denoise file says modality denoise")
        obs = f["/observed/image"][()]
        truth = f["/truth/image"][()]
        check(np.all(f["/observed/pixel_mask"][()] == 1), "denoise observes every pixel")
        sd = np.std(obs - truth)
        check(abs(sd - 0.1) < 0.01, f"denoise noise std {sd:.4f} is 0.1 within 10 %")
        check(int(f.attrs["research_use_only"]) == 1, "research-use mark on the measurement")
    must_succeed(["recon", "--meas", "d.h5", "--method", "zero-filled", "--out", "dz.h5"], work)
    must_succeed(["recon", "--meas", "d.h5", "--method", "pdhg", "--prior", "tv", "--lambda", "auto", "--out", "dt.h5"],
                 work)
    with h5py.File(os.path.join(work, "dz.h5"), "r") as f:
        z = np.real(f["/image"][()])
    with h5py.File(os.path.join(work, "dt.h5"), "r") as f:
        t = np.real(f["/image"][()])
    check(np.array_equal(z.astype(np.float32), obs.astype(np.float32)), "zero-filled of denoise is the observed image")
    check(psnr(truth, t) > psnr(truth, z) + 3, f"denoise TV {psnr(truth, t):.2f} dB > noisy {psnr(truth, z):.2f} + 3 dB")

    for pattern in ("random", "blocks"):
        must_succeed(["simulate", "--phantom", "p.h5", "--modality", "inpaint", "--keep", "0.5", "--pattern", pattern,
                      "--noise", "0.01", "--out", f"i_{pattern}.h5"], work)
        with h5py.File(os.path.join(work, f"i_{pattern}.h5"), "r") as f:
            mask = f["/observed/pixel_mask"][()]
            obs = f["/observed/image"][()]
            check(abs(mask.mean() - 0.5) < 0.05, f"inpaint {pattern}: kept fraction {mask.mean():.3f} ~ 0.5")
            check(np.all(obs[mask == 0] == 0), f"inpaint {pattern}: unobserved pixels are 0")
    must_succeed(["recon", "--meas", "i_random.h5", "--method", "zero-filled", "--out", "iz.h5"], work)
    must_succeed(["recon", "--meas", "i_random.h5", "--method", "fista", "--out", "it.h5"], work)
    got = {}
    for name in ("iz", "it"):
        out = must_succeed(["score", "--reference", "i_random.h5", "--image", name + ".h5", "--json"], work)
        got[name] = json.loads(out.stdout)["psnr"]
    check(got["it"] > got["iz"] + 3, f"score: inpaint FISTA-TV {got['it']:.2f} dB > observed {got['iz']:.2f} + 3 dB")
    # A pixel-mask file: a mask from `recofold mask --from` of a PNG would do; write one as the mask file layout.
    must_succeed(["mask", "--pattern", "lines-uniform", "--size", "64", "--accel", "2", "--out", "m64.h5"], work)
    must_succeed(["simulate", "--phantom", "p.h5", "--modality", "inpaint", "--pixel-mask", "m64.h5", "--out", "if.h5"],
                 work)
    with h5py.File(os.path.join(work, "if.h5"), "r") as f, h5py.File(os.path.join(work, "m64.h5"), "r") as g:
        check(np.array_equal(f["/observed/pixel_mask"][()], (g["/mask"][()] != 0).astype(np.uint8)),
              "inpaint --pixel-mask keeps exactly the mask file's pixels")
        check(f["/observed"].attrs["pattern"] in (b"file", "file"), "pattern 'file' for a pixel-mask file")

    # Bad input: exit 2, one line naming the flag, nothing written.
    must_succeed(["mask", "--pattern", "lines-uniform", "--size", "32", "--accel", "2", "--out", "m32.h5"], work)
    bad = [
        ("keep above 1", ["--modality", "inpaint", "--keep", "1.5"], ["--keep", "(0, 1]"]),
        ("keep 0", ["--modality", "inpaint", "--keep", "0"], ["--keep"]),
        ("negative noise", ["--modality", "denoise", "--noise", "-0.1"], ["--noise", ">= 0"]),
        ("pixel mask of another shape", ["--modality", "inpaint", "--pixel-mask", "m32.h5"], ["--pixel-mask", "m32.h5"]),
        ("missing pixel mask", ["--modality", "inpaint", "--pixel-mask", "nope.h5"], ["--pixel-mask", "nope.h5"]),
        ("unknown pattern", ["--modality", "inpaint", "--pattern", "stripes"], ["--pattern", "stripes"]),
        ("keep with denoise", ["--modality", "denoise", "--keep", "0.5"], ["--keep", "denoise"]),
        ("analytic truth", ["--modality", "denoise", "--truth", "analytic"], ["--truth"]),
    ]
    for name, extra, words in bad:
        _harness.bad_input_case(f"simulate {name}",
                                lambda extra=extra: run(["simulate", "--phantom", "p.h5", "--out", "bad.h5"] + extra, work),
                                words, work, failures, one_line=True)
    _harness.bad_input_case("recon inpaint with fbp",
                            lambda: run(["recon", "--meas", "i_random.h5", "--method", "fbp", "--out", "bad.h5"], work),
                            ["--method", "fbp", "inpaint"], work, failures, one_line=True)
finally:
    shutil.rmtree(work, ignore_errors=True)

if failures:
    print(f"{len(failures)} failure(s)")
    sys.exit(1)
print("all image-problem CLI checks passed")
