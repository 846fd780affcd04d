#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Learned denoisers: `train` with [data] modality = "denoise" (and "inpaint")
# draws family objects plus white Gaussian noise on the fly and trains the
# unrolled scheme with the exact data consistency of these problems. A tiny
# model (32x32, one iteration of a 4-layer CNN, 150 steps) must beat the noisy
# image on held-out objects of its family at its training sigma; its file must
# record the conditions (trained_on: modality, noise), `recon` on a noisier
# measurement must say it lies outside them, and a study must run it beside
# TV with the outside_training column filled only away from the training
# sigma. Bad input: keys of another modality, truth = "analytic", a denoise
# model on an MRI measurement -> exit 2 naming the key or the modality.
import csv
import json
import os
import sys
import tempfile

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from _harness import Checks, bad_input_case, denoise_study_toml, must_succeed, recofold  # noqa: E402

EXE = os.environ["RECOFOLD_EXE"]
if os.environ.get("RECOFOLD_TEST_LEARN") == "0":  # set by src/cli/CMakeLists.txt
    print("no learn module in this build: skipped")
    sys.exit(0)
check = Checks()

TINY = """
[data]
modality = "denoise"
size = 32
families = ["textured"]
noise = 0.1
[model]
iterations = 1
depth = 4
width = 16
cg_iterations = 1
init_mu = 0.5
[train]
steps = 150
batch = 4
learning_rate = 2e-3
validation_count = 4
validation_every = 50
checkpoint_every = 1000
"""


def psnr(ref, img):
    return 10 * np.log10((ref.max() - ref.min()) ** 2 / np.mean((ref - img) ** 2))


with tempfile.TemporaryDirectory() as d:
    open(os.path.join(d, "dn.toml"), "w").write(TINY)
    must_succeed(EXE, ["--threads", "2", "train", "--config", "dn.toml", "--out", "dn.h5"], d, check)
    with h5py.File(os.path.join(d, "dn.h5"), "r") as f:
        attrs = dict(f["/model"].attrs)
    trained_on = json.loads(attrs.get("trained_on", "{}"))
    check(trained_on.get("modality") == "denoise" and trained_on.get("noise") == [0.1, 0.1]
          and "views" not in trained_on and "accel" not in trained_on,
          f"trained_on records modality denoise and noise [0.1, 0.1] only: {trained_on}")

    # Held-out objects of the training family (training drew seed 1; these come from seed 700).
    must_succeed(EXE, ["phantom", "--family", "textured", "--count", "3", "--seed", "700", "--size", "32",
                       "--out", "fam.h5"], d, check)
    with h5py.File(os.path.join(d, "fam.h5"), "r") as f:
        truths = np.real(f["/image"][()])
    gains = []
    for i in range(3):
        must_succeed(EXE, ["simulate", "--phantom", "fam.h5", "--index", str(i), "--modality", "denoise",
                           "--noise", "0.1", "--seed", str(40 + i), "--out", f"d{i}.h5"], d, check)
        must_succeed(EXE, ["recon", "--meas", f"d{i}.h5", "--method", "unrolled", "--model", "dn.h5",
                           "--out", f"r{i}.h5"], d, check)
        if not os.path.exists(os.path.join(d, f"r{i}.h5")):
            continue
        with h5py.File(os.path.join(d, f"d{i}.h5"), "r") as f:
            noisy = f["/observed/image"][()]
        with h5py.File(os.path.join(d, f"r{i}.h5"), "r") as f:
            rec = np.real(f["/image"][()])
        gains.append(psnr(truths[i], rec) - psnr(truths[i], noisy))
    print("PSNR gain of the learned denoiser over the noisy image: " + " ".join(f"{g:+.2f}" for g in gains) + " dB")
    check(len(gains) == 3 and min(gains) > 2.0, f"learned denoiser beats the noisy image by > 2 dB on 3 held-out "
                                                f"objects: {['%.2f' % g for g in gains]}")

    # A noisier measurement lies outside the training conditions: recon says so.
    must_succeed(EXE, ["simulate", "--phantom", "fam.h5", "--modality", "denoise", "--noise", "0.2", "--seed", "9",
                       "--out", "loud.h5"], d, check)
    out = recofold(EXE, ["recon", "--meas", "loud.h5", "--method", "unrolled", "--model", "dn.h5", "--out",
                         "rl.h5"], d)
    check(out.returncode == 0 and "noise sigma 0.2 outside [0.1, 0.1]" in out.stderr,
          f"recon names the noise shift: {out.stderr.strip()!r}")

    # Inpainting trains the same way (pixel mask data consistency).
    inp = TINY.replace('modality = "denoise"', 'modality = "inpaint"').replace("noise = 0.1", "noise = 0.01\n"
                                                                                "keep = [0.5, 0.7]")
    inp = inp.replace("steps = 150", "steps = 4")
    open(os.path.join(d, "inp.toml"), "w").write(inp)
    must_succeed(EXE, ["train", "--config", "inp.toml", "--out", "inp.h5"], d, check)
    if os.path.exists(os.path.join(d, "inp.h5")):
        with h5py.File(os.path.join(d, "inp.h5"), "r") as f:
            t = json.loads(dict(f["/model"].attrs).get("trained_on", "{}"))
        check(t.get("modality") == "inpaint" and t.get("keep") == [0.5, 0.7] and t.get("patterns") == ["random"],
              f"inpaint trained_on records keep and patterns: {t}")

    # In a study: the learned denoiser beside TV over three noise levels.
    study = denoise_study_toml(32, 700, [0.05, 0.1, 0.2], '''
name = "learned"
method = "unrolled"
modality = "denoise"
model = "dn.h5"
''')
    open(os.path.join(d, "study.toml"), "w").write(study)
    must_succeed(EXE, ["study", "--config", "study.toml", "--out", "st"], d, check)
    res = os.path.join(d, "st", "results.csv")
    rows = list(csv.DictReader(open(res))) if os.path.exists(res) else []
    learned = [r for r in rows if r["method"] == "learned"]
    check(len(rows) == 18 and len(learned) == 6 and all(r["error"] == "" for r in rows),
          f"study: 18 rows, 6 learned, no error ({[(r['method'], r['error']) for r in rows]})")
    at = [r for r in learned if abs(float(r["noise"]) - 0.1) < 1e-9]
    off = [r for r in learned if abs(float(r["noise"]) - 0.2) < 1e-9]
    check(len(at) == 2 and all(r["outside_training"] == "" and r["in_training_conditions"] == "yes" for r in at),
          f"study: at sigma 0.1 the learned rows are inside ({[(r['outside_training'], r['in_training_conditions']) for r in at]})")
    check(len(off) == 2 and all("noise sigma 0.2" in r["outside_training"] for r in off),
          f"study: at sigma 0.2 they name the noise shift ({[r['outside_training'] for r in off]})")

    # The report's robustness lines: a shift to less noise raises both scores (a gain to compare), more
    # noise lowers them (a loss to compare).
    rep = open(os.path.join(d, "st", "report.html")).read() if os.path.exists(os.path.join(d, "st", "report.html")) else ""
    lines = [ln for ln in rep.splitlines() if ln.startswith("<li>") and "noise 0.1 &rarr; " in ln]
    down = [ln for ln in lines if "&rarr; 0.05:" in ln]
    up = [ln for ln in lines if "&rarr; 0.2:" in ln]
    check(len(down) == 1 and " gains " in down[0] and "degrades" not in down[0],
          f"report: the 0.1 -> 0.05 line compares gains: {down}")
    check(len(up) == 1 and " degrades " in up[0] and "gains" not in up[0],
          f"report: the 0.1 -> 0.2 line compares losses: {up}")

    # Bad input.
    for name, text, words in (
        ("accel with denoise", TINY.replace("noise = 0.1", "noise = 0.1\naccel = 4"), ["accel", "denoise"]),
        ("views with denoise", TINY.replace("noise = 0.1", "noise = 0.1\nviews = 30"), ["views", "denoise"]),
        ("analytic truth", TINY.replace("noise = 0.1", 'noise = 0.1\ntruth = "analytic"'), ["truth", "discrete"]),
        ("keep with denoise", TINY.replace("noise = 0.1", "noise = 0.1\nkeep = 0.5"), ["keep", "denoise"]),
        ("inpaint keep 0", inp.replace("keep = [0.5, 0.7]", "keep = 0"), ["keep", "(0, 1]"]),
        ("inpaint pattern", inp.replace("keep = [0.5, 0.7]", 'keep = 0.5\npatterns = ["lines"]'),
         ["patterns", "random or blocks"]),
    ):
        open(os.path.join(d, "bad.toml"), "w").write(text)
        bad_input_case("train: " + name, lambda: recofold(EXE, ["train", "--config", "bad.toml", "--out", "bad.h5"], d),
                       words, d, check.failures)
    must_succeed(EXE, ["simulate", "--phantom", "fam.h5", "--modality", "mri", "--out", "mri.h5"],
                 d, check)
    bad_input_case("recon: denoise model on an MRI measurement",
                   lambda: recofold(EXE, ["recon", "--meas", "mri.h5", "--method", "unrolled", "--model", "dn.h5",
                                          "--out", "bad.h5"], d), ["denoise", "mri"], d, check.failures)

sys.exit(check.summary())
