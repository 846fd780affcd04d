#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# `recon --prior flow --model FLOW`: the likelihood of a trained flow as the
# prior of ISTA/FISTA (gradient steps on lambda * -log p). A tiny flow (16x16,
# 2 scales, width 8) trained briefly on the textured family must denoise
# held-out objects of that family (other seeds) better than the noisy
# observation, with a given lambda and with lambda auto (discrepancy rule),
# and the output file must name the prior and its model. Bad input: prior flow
# with a solver that has no gradient form, without --model, with a model that
# is no flow or has another grid -> exit 2 naming the flag or file.
import csv
import os
import sys
import tempfile

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from _harness import Checks, bad_input_case, denoise_study_toml, must_succeed, recofold, tiny_flow_training  # noqa: E402

EXE = os.environ["RECOFOLD_EXE"]
SRC = os.environ["RECOFOLD_SOURCE_DIR"]
if os.environ.get("RECOFOLD_TEST_LEARN") == "0":  # set by src/cli/CMakeLists.txt
    print("no learn module in this build: skipped")
    sys.exit(0)
check = Checks()


def psnr(ref, img):
    return 10 * np.log10((ref.max() - ref.min()) ** 2 / np.mean((ref - img) ** 2))


def image(path):
    with h5py.File(path, "r") as f:
        return np.real(f["/image"][()]), dict(f["/image"].attrs)


with tempfile.TemporaryDirectory() as d:
    cfg = tiny_flow_training(SRC, steps=150)
    open(os.path.join(d, "flow.toml"), "w").write(cfg)
    must_succeed(EXE, ["--threads", "2", "train", "--config", "flow.toml", "--out", "flow.h5"], d, check)
    # Held-out objects of the training family (training drew seed 1; these come from seed 900).
    must_succeed(EXE, ["phantom", "--family", "textured", "--count", "3", "--seed", "900", "--size", "16",
                       "--out", "fam.h5"], d, check)
    with h5py.File(os.path.join(d, "fam.h5"), "r") as f:
        truths = np.real(f["/image"][()])
    gains = {"given": [], "auto": []}
    for i in range(3):
        must_succeed(EXE, ["simulate", "--phantom", "fam.h5", "--index", str(i), "--modality", "denoise",
                           "--noise", "0.08", "--seed", str(20 + i), "--out", f"d{i}.h5"], d, check)
        with h5py.File(os.path.join(d, f"d{i}.h5"), "r") as f:
            noisy = f["/observed/image"][()]
        for mode, lam in (("given", "0.002"), ("auto", "auto")):
            solves = ["--lambda-solves", "6"] if mode == "auto" else []  # a bounded sweep from sigma^2
            must_succeed(EXE, ["recon", "--meas", f"d{i}.h5", "--method", "fista", "--prior", "flow", "--model",
                               "flow.h5", "--lambda", lam, "--iters", "30", "--out", f"r{i}{mode}.h5"] + solves,
                         d, check)
            if not os.path.exists(os.path.join(d, f"r{i}{mode}.h5")):
                continue
            rec, attrs = image(os.path.join(d, f"r{i}{mode}.h5"))
            gains[mode].append(psnr(truths[i], rec) - psnr(truths[i], noisy))
            if i == 0:
                check(attrs.get("prior") in ("flow", b"flow") and attrs.get("prior_model") in ("flow.h5", b"flow.h5"),
                      f"output names prior flow and its model ({mode}): {attrs.get('prior')} {attrs.get('prior_model')}")
    for mode, g in gains.items():
        print(f"PSNR gain over the noisy image, lambda {mode}: " + " ".join(f"{x:+.2f}" for x in g) + " dB")
        check(len(g) == 3 and min(g) > 1.0, f"prior flow (lambda {mode}) beats the noisy image by > 1 dB on 3 "
                                            f"held-out objects: {['%.2f' % x for x in g]}")

    # In a study: a [[method]] with prior = "flow" and model = the flow, beside zero-filled and TV.
    study = denoise_study_toml(16, 900, [0.08], '''
name = "fista-flow"
method = "fista"
prior = "flow"
model = "flow.h5"
lambda = 0.002
iters = 30
''')
    open(os.path.join(d, "study.toml"), "w").write(study)
    must_succeed(EXE, ["study", "--config", "study.toml", "--out", "st"], d, check)
    res = os.path.join(d, "st", "results.csv")
    rows = list(csv.DictReader(open(res))) if os.path.exists(res) else []
    flow_rows = [r for r in rows if r["method"] == "fista-flow"]
    zf = {r["phantom"]: float(r["psnr"]) for r in rows if r["method"] == "zero-filled"}
    check(len(rows) == 6 and len(flow_rows) == 2 and all(r["error"] == "" and r["prior"] == "flow" for r in flow_rows),
          f"study: 2 fista-flow rows with prior flow and no error among 6 ({[(r['method'], r['error']) for r in rows]})")
    check(all(float(r["psnr"]) > zf[r["phantom"]] + 1.0 for r in flow_rows),
          "study: fista-flow beats the noisy image by > 1 dB on both objects")
    for name, text, words in (
        ("study: model is no flow", study.replace('model = "flow.h5"', 'model = "fam.h5"'), ["model", "fam.h5"]),
        ("study: prior flow without model", study.replace('model = "flow.h5"\n', ""), ["model", "flow model"]),
    ):
        open(os.path.join(d, "bad.toml"), "w").write(text)
        bad_input_case(name, lambda: recofold(EXE, ["study", "--config", "bad.toml", "--out", "bad_st"], d), words, d,
                       check.failures)

    # Bad input.
    must_succeed(EXE, ["phantom", "--family", "textured", "--size", "24", "--out", "big.h5"], d, check)
    must_succeed(EXE, ["simulate", "--phantom", "big.h5", "--modality", "denoise", "--noise", "0.05", "--out",
                       "big_d.h5"], d, check)
    base = ["recon", "--meas", "d0.h5", "--out", "bad.h5", "--prior", "flow"]
    for name, args, words in (
        ("admm has no gradient form", base + ["--method", "admm", "--model", "flow.h5"], ["--prior", "ista or fista"]),
        ("no model", base + ["--method", "fista"], ["--model", "flow model"]),
        ("model is no flow", base + ["--method", "fista", "--model", "fam.h5"], ["fam.h5"]),
        ("flow of another grid", ["recon", "--meas", "big_d.h5", "--out", "bad.h5", "--prior", "flow", "--method",
                                  "ista", "--model", "flow.h5"], ["flow.h5", "16x16", "24x24"]),
    ):
        bad_input_case(name, lambda a=args: recofold(EXE, a, d), words, d, check.failures)
    check(not os.path.exists(os.path.join(d, "bad.h5")), "no output left by the refused runs")

sys.exit(check.summary())
